"""`soaklog demo`: the simulated lab, the logger against it, accelerated; no hardware, no config.

The scenario is ``configs/demo.toml`` (shipped inside the package as
``daq/data/demo.toml``, kept identical by a test), with the simulators'
actual addresses and the chosen database put in before it is validated and
recorded as the run's configuration.

Two minutes into the run (chamber time) the chamber's controller fails with
its heater stuck at full power. The high alarm trips, the high-high alarm's
interlock switches the simulated heater supply off over SCPI, and the chamber
cools down again; the demo prints each step as the logger records it.
"""

from __future__ import annotations

import logging
import re
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any

from soaklog.clock import AcceleratedClock
from soaklog.config import StationConfig, parse_config
from soaklog.errors import StorageError
from soaklog.service import Service

if TYPE_CHECKING:
    from soaklog.store import EventRow

__all__ = ["demo_config_text", "build_demo_config", "run_demo", "DEFAULT_SPEED", "RUNAWAY_AT_S", "SAFETY_LINES"]

#: chamber seconds per wall second: a 10 K/min ramp takes 10 s of your time per 100 K
DEFAULT_SPEED = 60.0

#: chamber time at which the demo's controller fails (heater stuck at full power)
RUNAWAY_AT_S = 120.0

#: the trip rule of the demo scenario and the high alarm that must clear for the chamber to count as recovered
TRIP_RULE = "air-over-temperature-trip"
HIGH_RULE = "air-over-temperature"

SAFETY_LINES = (
    "SAFETY: software alarms and interlock actions are not a safety device. Every chamber needs its own",
    "        independent over-temperature protection (IEC 61010-2-010 for laboratory heating equipment),",
    "        set and tested per its maker's manual; local codes and qualified people decide.",
)

_SUPPLY_LINE = re.compile(r'(?m)^resource = ".*?"(\s*# the simulated heater supply.*)$')


def demo_config_text() -> str:
    """The demo station file as shipped."""
    return resources.files("soaklog").joinpath("data/demo.toml").read_text(encoding="utf-8")


def build_demo_config(meter_resource: str, board_port: str, database: str, *, where: str,
                      supply_resource: str | None = None) -> StationConfig:
    """The demo station file with the simulators' addresses and the database filled in."""
    text = demo_config_text()
    text = re.sub(r'(?m)^resource = ".*"$', f'resource = "{meter_resource}"', text, count=1)
    text = re.sub(r'(?m)^port = ".*"$', f'port = "{board_port}"', text, count=1)
    if supply_resource is not None:
        text = _SUPPLY_LINE.sub(lambda m: f'resource = "{supply_resource}"{m.group(1)}', text, count=1)
    db = Path(database).resolve().as_posix()
    text = re.sub(r'(?m)^database = ".*?"(.*)$', f'database = "{db}"', text, count=1)
    return parse_config(text, where)


def _fmt_clock(seconds: float) -> str:
    s = int(max(0.0, seconds))
    return f"{s // 3600:d}:{s % 3600 // 60:02d}:{s % 60:02d}"


class _Story:
    """Follows the run's events in the store and tells them as they happen."""

    _TOLD = {
        "alarm_raised": "ALARM ",
        "alarm_cleared": "clear ",
        "alarm_acknowledged": "ack   ",
        "alarm_shelved": "shelve",
        "alarm_unshelved": "shelf ",
        "action_done": "ACTION",
        "action_failed": "ACTION",
        "action_timed_out": "ACTION",
        "instrument_lost": "lost  ",
        "instrument_recovered": "back  ",
        "operator_request": "asked ",
    }

    def __init__(self, database: str, run_id: int, epoch_utc_s: float, out: Callable[[str], None]) -> None:
        self.database, self.run_id, self.epoch, self.out = database, run_id, epoch_utc_s, out
        self.after_id = 0
        self.events: list[EventRow] = []

    def poll(self) -> list[EventRow]:
        from soaklog.store import StoreReader

        try:
            with StoreReader.open(self.database) as store:
                new = store.events(self.run_id, after_id=self.after_id)
        except StorageError:
            return []
        for e in new:
            self.after_id = max(self.after_id, e.id)
            label = self._TOLD.get(e.kind)
            if label is None:
                continue
            when = _fmt_clock(e.t_ms / 1000.0 - self.epoch)
            sev = f" [{e.severity}]" if e.kind == "alarm_raised" else ""
            self.out(f"  {when}  {label}{sev} {e.message}")
        self.events.extend(new)
        return new


def run_demo(
    *,
    database: str,
    duration_s: float | None,
    speed: float = DEFAULT_SPEED,
    seed: int = 20261201,
    out: Callable[[str], None] = print,
    stop: threading.Event | None = None,
    progress_every_s: float = 5.0,
    runaway_at_s: float | None = RUNAWAY_AT_S,
) -> dict[str, Any]:
    """Run the demo for ``duration_s`` wall seconds (None: until ``stop`` or Ctrl-C); returns a summary.

    ``runaway_at_s`` is the chamber time of the controller failure (None: no failure).
    """
    stop = stop or threading.Event()
    # the story below tells alarms and actions as they are stored; their log lines would say it twice
    quiet = [logging.getLogger(n) for n in ("soaklog.alarms", "soaklog.actions")]
    levels = [q.level for q in quiet]
    for q in quiet:
        q.setLevel(logging.ERROR)
    try:
        return _run(database=database, duration_s=duration_s, speed=speed, seed=seed, out=out, stop=stop,
                    progress_every_s=progress_every_s, runaway_at_s=runaway_at_s)
    finally:
        for q, lv in zip(quiet, levels, strict=True):
            q.setLevel(lv)


def _run(*, database: str, duration_s: float | None, speed: float, seed: int, out: Callable[[str], None],
         stop: threading.Event, progress_every_s: float, runaway_at_s: float | None) -> dict[str, Any]:
    from soaklog.simulators.lab import Lab

    tripped_at: float | None = None
    recovered_at: float | None = None
    peak_air_c = -1e9
    with tempfile.TemporaryDirectory(prefix="soaklog-demo-") as tmp:
        link = str(Path(tmp) / "board")
        with Lab(seed=seed, speed=speed, board_link=link, control_port=0) as lab:
            addr = lab.addresses()
            cfg = build_demo_config(addr.meter_resource or "", link, database, where=str(Path(tmp) / "demo.toml"),
                                    supply_resource=addr.supply_resource)
            epoch = time.time()
            clock = AcceleratedClock(lab.world.clock, speed=speed, epoch_utc_s=epoch)
            service = Service(cfg, clock=clock, new_run=True)
            run_id = service.start()
            story = _Story(cfg.database, run_id, epoch, out)
            out(f"soaklog demo: simulated chamber at {speed:g}× real time (a 10 K/min ramp moves "
                f"{10 * speed / 60:g} K per second of your time)")
            out(f"  meter  {addr.meter_resource}")
            out(f"  board  {addr.board_device}")
            out(f"  supply {addr.supply_resource}   (the heater's programmable supply; an interlock switches it off)")
            if addr.control:
                out(f"  faults nc {addr.control[0]} {addr.control[1]}   (try: fault runaway, meter fault drop, "
                    "board fault badsum, supply output on)")
            out(f"  data   {cfg.database} (run {run_id})")
            if runaway_at_s is not None:
                out(f"  scenario: at {_fmt_clock(runaway_at_s)} chamber time the controller fails with the heater "
                    "at full power; watch the alarms and the interlock")
            for line in SAFETY_LINES:
                out("  " + line)
            start = time.monotonic()
            next_line = start + progress_every_s
            runaway_done = runaway_at_s is None
            try:
                while not stop.is_set():
                    if duration_s is not None and time.monotonic() - start >= duration_s:
                        break
                    if stop.wait(0.1):
                        break
                    st = lab.world.status()
                    t_chamber = float(st.get("t_s", 0.0))
                    air = float(st.get("air_c", 0.0))
                    peak_air_c = max(peak_air_c, air)
                    if not runaway_done and t_chamber >= float(runaway_at_s or 0.0):
                        lab.world.set_runaway(True)
                        runaway_done = True
                        out(f"  {_fmt_clock(t_chamber)}  FAULT  the chamber's controller fails: heater stuck at full "
                            f"power (air {air:.1f} °C)")
                    for e in story.poll():
                        if tripped_at is None and e.kind == "action_done" and str(
                                (e.data or {}).get("alarm", "")).startswith(TRIP_RULE):
                            tripped_at = e.t_ms / 1000.0 - epoch
                            out(f"  {_fmt_clock(tripped_at)}  the interlock switched the heater supply off "
                                f"(supply output {'on' if lab.world.heater_supply_enabled else 'off'}); the chamber's own "
                                "cut-out is the real protection")
                    if tripped_at is not None and recovered_at is None and not st.get("heater_supply_enabled", True):
                        if _all_clear(cfg.database, run_id):
                            recovered_at = t_chamber
                            lab.world.set_runaway(False)
                            out(f"  {_fmt_clock(t_chamber)}  RECOVERED  air {air:.1f} °C, below the high alarm again; "
                                "the controller fault is cleared, the heater supply stays off until a person "
                                "switches it on")
                            out(f"           acknowledge the latched trip: soaklog ack --all --db {cfg.database}")
                    if time.monotonic() >= next_line:
                        next_line += progress_every_s
                        out(f"  chamber {_fmt_clock(t_chamber)}  set {float(st.get('setpoint_c') or 0.0):7.2f} °C  "
                            f"air {air:7.2f} °C  {st.get('phase', '')}, cycle {st.get('cycle', '')}  "
                            f"heater supply {'on' if st.get('heater_supply_enabled') else 'OFF'}  "
                            f"stored {service.stats.stored}")
            except KeyboardInterrupt:
                pass
            finally:
                service.stop()
            story.poll()
            summary = {
                "database": cfg.database, "run_id": run_id, "readings": service.stats.readings,
                "stored": service.stats.stored, "chamber_seconds": lab.world.now_s(),
                "tripped_at_s": tripped_at, "recovered_at_s": recovered_at, "peak_air_c": peak_air_c,
                "heater_supply_on": lab.world.heater_supply_enabled,
                "supply_received": lab.supply.received() if lab.supply is not None else [],
                "events": [(e.kind, e.message) for e in story.events],
            }
    db = summary["database"]
    out("")
    out(f"soaklog demo: stopped. {summary['stored']} readings of run {run_id} are in {db}")
    if tripped_at is not None:
        out(f"  the over-temperature trip at {_fmt_clock(tripped_at)} switched the heater supply off"
            + (f"; the chamber was below the high alarm again at {_fmt_clock(recovered_at)}" if recovered_at else ""))
    for line in SAFETY_LINES:
        out("  " + line)
    out("next:")
    out(f"  soaklog status --db {db}")
    out(f"  soaklog ack --all --db {db}        (while a logger runs on the file)")
    out(f"  soaklog export --db {db} --format csv --out demo.csv")
    out(f"  sqlite3 {db} \"SELECT t_utc, kind, channel, severity, message FROM events_v\"")
    out(f"  sqlite3 {db} \"SELECT channel, t_utc, temperature_c, uncertainty_c, status FROM readings_v LIMIT 10\"")
    return summary


def _all_clear(database: str, run_id: int) -> bool:
    """Whether no high or high-high alarm of the demo has its condition active any more."""
    from soaklog.store import StoreReader

    try:
        with StoreReader.open(database) as store:
            rows = store.alarms(run_id)
    except StorageError:
        return False
    mine = [a for a in rows if a.rule in (TRIP_RULE, HIGH_RULE)]
    return bool(mine) and not any(a.condition for a in mine)


def main_demo(database: str, duration_s: float | None, speed: float, headless: bool) -> int:
    """The CLI's entry: the dashboard in front of the running demo, or progress lines with ``headless``."""
    if headless or not (sys.stdout.isatty() and sys.stdin.isatty()):
        if not headless:
            print("soaklog demo: not a terminal, so no dashboard; running headless", file=sys.stderr)
        run_demo(database=database, duration_s=duration_s, speed=speed)
        return 0
    from soaklog.dashboard.app import run_dashboard_live

    stop = threading.Event()
    lines: list[str] = []
    failure: list[BaseException] = []

    def demo() -> None:
        try:
            run_demo(database=database, duration_s=duration_s, speed=speed, out=lines.append, stop=stop)
        except BaseException as exc:  # noqa: BLE001 - shown after the dashboard closes
            failure.append(exc)
        finally:
            stop.set()

    worker = threading.Thread(target=demo, name="demo", daemon=True)
    worker.start()
    deadline = time.monotonic() + 30.0
    while not any(line.lstrip().startswith("data") for line in lines):
        if stop.is_set() or time.monotonic() > deadline:
            break
        time.sleep(0.05)
    code = 0
    if not stop.is_set():
        note = f"demo: simulated chamber at {speed:g}× real time; q quits and stops the demo"
        code = run_dashboard_live(database, stop_event=stop, header_note=note)
    stop.set()
    worker.join(timeout=60)
    for line in lines:
        print(line)
    if failure:
        raise failure[0]
    return code
