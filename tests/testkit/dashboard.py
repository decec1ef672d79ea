"""Helpers for the dashboard tests: a store with known readings written through the real writer,
its frozen "now", and the screen as text (the lab run is ``testkit.lab.LabRun``)."""

from __future__ import annotations

import io
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
from rich.console import Console
from textual.app import App

from testkit.clocks import frozen_clock as _frozen_clock

from soaklog.store import SampleBatch, StoreWriter, status_code
from soaklog.store import AlarmRow as StoredAlarm

#: 2027-01-15T08:00:00Z, the fixture run's start
START_MS = 1_800_000_000_000
RUN_S = 3 * 3600
#: the frozen "now" of the fixture: three hours into the run
NOW_MS = START_MS + RUN_S * 1000

FIXTURE_CONFIG = """\
[station]
name = "fixture-bench"
database = "x.db"

[run]
name = "fixture cycling run"
planned_duration = "100h"

[profile]
kind = "cycle"
low_c = -40.0
high_c = 125.0
ramp_k_per_min = 10.0
dwell = "15min"
cycles = 10
tolerance_k = 3.0

[[instrument]]
name = "meter"
driver = "scpi"
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
interval = "10s"

[[instrument]]
name = "board"
driver = "serial-adc"
port = "/dev/ttyUSB0"
interval = "5s"

[[sensor]]
name = "pt100"
class = "A"

[[channel]]
name = "air"
label = "Air supply"
instrument = "meter"
input = "101"
sensor = "pt100"

[[channel]]
name = "shelf"
label = "Shelf 1 front"
instrument = "meter"
input = "102"
sensor = "pt100"

[[channel]]
name = "door"
label = "Door corner"
instrument = "board"
input = "0"
sensor = "pt100"
wiring = 4

[[channel]]
name = "plate"
label = "Fixture plate"
instrument = "board"
input = "1"
sensor = "pt100"
wiring = 4

[[alarm]]
name = "air-high"
kind = "high"
channels = ["air"]
limit_c = 130.0
severity = "critical"
"""

#: the fixture's channels: (name, label, instrument)
CHANNELS = [
    ("air", "Air supply", "meter"),
    ("shelf", "Shelf 1 front", "meter"),
    ("door", "Door corner", "board"),
    ("plate", "Fixture plate", "board"),
]

#: air rises at a known rate: 0.5 K/min from 23 °C
AIR_RATE_K_PER_MIN = 0.5
SHELF_C = 25.0
U_C = 0.12
#: the plate's last reading is this long before NOW_MS (its board scans every 5 s: stale)
PLATE_SILENT_S = 600


def air_c(t_ms: np.ndarray) -> np.ndarray:
    return 23.0 + AIR_RATE_K_PER_MIN * (t_ms - START_MS) / 60_000.0


def write_fixture(path: Path) -> dict[str, int]:
    """The fixture store: 3 h of a 4-channel run with one open sensor and one stale one."""
    store = StoreWriter.open(path)
    info = store.begin_run(FIXTURE_CONFIG, now_ms=START_MS, station="fixture-bench", name="fixture cycling run",
                           software="test", config_path="fixture.toml")
    ids = store.ensure_channels(info.run_id, [(n, lab, inst, "ohm") for n, lab, inst in CHANNELS])
    store.add_event(info.run_id, START_MS, "service_start", "logger started (4 channels on 2 instruments)")
    t_meter = START_MS + np.arange(0, RUN_S + 1, 10, dtype=np.int64) * 1000
    t_board = START_MS + np.arange(0, RUN_S + 1, 5, dtype=np.int64) * 1000
    parts = []
    n = t_meter.size
    parts.append((np.full(n, ids["air"]), t_meter, air_c(t_meter), np.zeros(n, np.int64)))
    parts.append((np.full(n, ids["shelf"]), t_meter, np.full(n, SHELF_C), np.zeros(n, np.int64)))
    m = t_board.size
    door = np.full(m, 21.5)
    st_door = np.zeros(m, np.int64)
    door[-6:] = np.nan  # the last 30 s: the sensor reads open
    st_door[-6:] = status_code("open")
    parts.append((np.full(m, ids["door"]), t_board, door, st_door))
    keep = t_board <= NOW_MS - PLATE_SILENT_S * 1000
    parts.append((np.full(int(keep.sum()), ids["plate"]), t_board[keep], np.full(int(keep.sum()), 30.25),
                  np.zeros(int(keep.sum()), np.int64)))
    ch = np.concatenate([p[0] for p in parts]).astype(np.int64)
    t = np.concatenate([p[1] for p in parts]).astype(np.int64)
    temp = np.concatenate([p[2] for p in parts]).astype(np.float64)
    status = np.concatenate([p[3] for p in parts]).astype(np.int64)
    order = np.argsort(t, kind="stable")
    ch, t, temp, status = ch[order], t[order], temp[order], status[order]
    u = np.where(np.isfinite(temp), U_C, np.nan)
    raw = np.where(np.isfinite(temp), 100.0 + 0.385 * np.nan_to_num(temp), np.nan)
    # written in one-minute commits, as the logger writes one per interval
    minute = (t - START_MS) // 60_000
    for k in np.unique(minute):
        sel = minute == k
        store.write(info.run_id, SampleBatch(ch[sel], t[sel], raw[sel], temp[sel], u[sel], status[sel],
                                             np.zeros(int(sel.sum()), np.int64)))
    store.add_event(info.run_id, NOW_MS - 30_000, "sensor_fault", "door: open circuit", severity="high",
                    ch=ids["door"])
    store.set_instrument(info.run_id, "meter", now_ms=NOW_MS - 2000, connected=True, identity="FIXTURE,DMM,1,1.0",
                         health={"connected": True, "reads": 1081, "errors": 0, "timeouts": 0, "reconnects": 0,
                                 "bad_frames": 0, "last_error": "", "last_ok_utc_s": (NOW_MS - 2000) / 1000})
    store.set_instrument(info.run_id, "board", now_ms=NOW_MS - 2000, connected=False, identity="FIXTURE,ADC",
                         health={"connected": False, "reads": 2041, "errors": 3, "timeouts": 2, "reconnects": 1,
                                 "bad_frames": 5, "last_error": "no frame within 3.0 s",
                                 "last_error_utc_s": (NOW_MS - 4000) / 1000,
                                 "last_ok_utc_s": (NOW_MS - 31_000) / 1000})
    # alarm points as the alarm engine stores them (through the store's public writer)
    store.save_alarm_states(info.run_id, [
        StoredAlarm("air-high:air", "air-high", "high", "air", ids["air"], "unacknowledged", "critical", True, False,
                    NOW_MS - 120_000, None, 131.2, "air 131.2 °C above 130.0 °C"),
        StoredAlarm("door-fault:door", "door-fault", "sensor_fault", "door", ids["door"], "acknowledged", "high", True,
                    True, NOW_MS - 30_000, None, None, "door: open circuit"),
        StoredAlarm("plate-stale:plate", "plate-stale", "stale", "plate", ids["plate"], "normal", "medium", False, True,
                    START_MS + 4_200_000, None, None, "plate: no good reading for 60 s"),
    ], now_ms=NOW_MS)
    store.close()
    return ids


def frozen_clock(now_ms: int = NOW_MS) -> Callable[[], float]:
    """A wall clock stopped at the fixture's "now" (or at ``now_ms``)."""
    return _frozen_clock(now_ms)


def screen_text(app: App[Any]) -> str:
    """The screen as plain text, as a terminal would show it."""
    width, height = app.size
    console = Console(width=width, height=height, file=io.StringIO(), force_terminal=True, color_system=None,
                      record=True, legacy_windows=False, safe_box=False)
    console.print(app.screen._compositor.render_update(full=True))
    return console.export_text()
