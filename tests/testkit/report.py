"""Helpers for the report tests: hand-made series, and a simulated cycling run in a real store."""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from soaklog.demo import demo_config_text
from soaklog.report.series import Series
from soaklog.store import SampleBatch, StoreWriter
from soaklog.simulators.chamber import ChamberModel, ChamberParams
from soaklog.simulators.profiles import Cycle
from soaklog.simulators.world import _DEMO_POSITIONS

T0_MS = 1_800_000_000_000  # 2027-01-15T08:00:00Z


def grid(values: dict[str, Sequence[float]], width_s: float = 60.0, t0_s: float = 0.0) -> Series:
    """A Series with one reading per bucket: mean = lowest = highest = the value given."""
    names = tuple(values)
    v = np.column_stack([np.asarray(values[n], dtype=np.float64) for n in names])
    return Series(t0_s, width_s, names, v.copy(), v.copy(), v.copy(), "raw")


def piecewise(points: Sequence[tuple[float, float]], t: np.ndarray) -> np.ndarray:
    """Linear interpolation through (time, value) corners: a profile drawn by hand."""
    xs, ys = zip(*points, strict=True)
    return np.interp(t, np.asarray(xs, dtype=np.float64), np.asarray(ys, dtype=np.float64))


@dataclass(frozen=True)
class SimRun:
    """A simulated cycling run written through the real store writer."""

    db: Path
    door_s: float | None
    cycles: int
    every_s: float


#: the simulated profile: the demo's cycle (−40/+125 °C, 10 K/min, 15 min dwells), three cycles, back to 23 °C
SIM_CYCLES = 3
SIM_PROFILE = Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, SIM_CYCLES, end_c=23.0)
#: the door is opened for 2 min at this chamber time: inside the high dwell of cycle 2
#: (cycle 2 reaches 125 °C at 612 + 900 + 990 + 900 + 990 = 4392 s and holds until 5292 s)
DOOR_S = 5000.0


def build_sim_store(db: Path, *, door_s: float | None = DOOR_S, every_s: float = 10.0, seed: int = 1) -> SimRun:
    """Run the chamber model through ``SIM_PROFILE`` and store every position every ``every_s``."""
    model = ChamberModel(ChamberParams(cutout_c=155.0), SIM_PROFILE, _DEMO_POSITIONS, seed=seed)
    end_s = SIM_PROFILE.duration_s + 1200.0
    if door_s is None:
        tr = model.trace(end_s, every_s=every_s)
    else:
        first = model.trace(door_s, every_s=every_s)
        model.open_door(120.0)
        rest = model.trace(end_s, every_s=every_s)
        tr = {k: np.concatenate([first[k][:-1], rest[k]]) for k in first}
    text = re.sub(r"(?m)^cycles = \d+", f"cycles = {SIM_CYCLES}", demo_config_text())
    names = [p.name for p in _DEMO_POSITIONS]
    with StoreWriter.open(db) as st:
        info = st.begin_run(text, now_ms=T0_MS, station="qual-lab-demo", name="simulated cycling")
        ids = st.ensure_channels(info.run_id, [(n, n, "meter", "ohm") for n in names])
        t = T0_MS + np.round(tr["t_s"] * 1000).astype(np.int64)
        chan = np.asarray([ids[n] for n in names], dtype=np.int64)
        for s0 in range(0, t.size, 360):
            sl = slice(s0, s0 + 360)
            tt = np.repeat(t[sl], len(names))
            temp = np.column_stack([tr["pos:" + n][sl] for n in names]).ravel()
            st.write(info.run_id, SampleBatch(
                np.tile(chan, t[sl].size), tt, np.full(tt.size, np.nan), temp, np.full(tt.size, 0.3),
                np.zeros(tt.size, np.int64), np.zeros(tt.size, np.int64)))
        st.add_event(info.run_id, T0_MS, "service_start", "logger started (simulated)")
        st.end_run(info.run_id, now_ms=int(t[-1]))
    return SimRun(db, door_s, SIM_CYCLES, every_s)
