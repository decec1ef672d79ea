"""`soaklog demo`: the simulated lab, the logger against it, accelerated; no hardware, no config.

The scenario is ``configs/demo.toml`` (shipped inside the package as
``daq/data/demo.toml``, kept identical by a test), with the simulators'
actual addresses and the chosen database put in before it is validated and
recorded as the run's configuration.
"""

from __future__ import annotations

import re
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from importlib import resources
from pathlib import Path
from typing import Any

from daq.clock import AcceleratedClock
from daq.config import StationConfig, parse_config
from daq.service import Service

__all__ = ["demo_config_text", "build_demo_config", "run_demo", "DEFAULT_SPEED"]

#: chamber seconds per wall second: a 10 K/min ramp takes 10 s of your time per 100 K
DEFAULT_SPEED = 60.0


def demo_config_text() -> str:
    """The demo station file as shipped."""
    return resources.files("daq").joinpath("data/demo.toml").read_text(encoding="utf-8")


def build_demo_config(meter_resource: str, board_port: str, database: str, *, where: str) -> StationConfig:
    """The demo station file with the simulators' addresses and the database filled in."""
    text = demo_config_text()
    text = re.sub(r'(?m)^resource = ".*"$', f'resource = "{meter_resource}"', text, count=1)
    text = re.sub(r'(?m)^port = ".*"$', f'port = "{board_port}"', text, count=1)
    db = Path(database).resolve().as_posix()
    text = re.sub(r'(?m)^database = ".*?"(.*)$', f'database = "{db}"', text, count=1)
    return parse_config(text, where)


def _fmt_clock(seconds: float) -> str:
    s = int(seconds)
    return f"{s // 3600:d}:{s % 3600 // 60:02d}:{s % 60:02d}"


def run_demo(
    *,
    database: str,
    duration_s: float | None,
    speed: float = DEFAULT_SPEED,
    seed: int = 20261201,
    out: Callable[[str], None] = print,
    stop: threading.Event | None = None,
    progress_every_s: float = 5.0,
) -> dict[str, Any]:
    """Run the demo for ``duration_s`` wall seconds (None: until ``stop`` or Ctrl-C); returns a summary."""
    from simulators.lab import Lab

    stop = stop or threading.Event()
    with tempfile.TemporaryDirectory(prefix="soaklog-demo-") as tmp:
        link = str(Path(tmp) / "board")
        with Lab(seed=seed, speed=speed, board_link=link, control_port=0) as lab:
            addr = lab.addresses()
            cfg = build_demo_config(addr.meter_resource or "", link, database, where=str(Path(tmp) / "demo.toml"))
            clock = AcceleratedClock(lab.world.clock, speed=speed, epoch_utc_s=time.time())
            service = Service(cfg, clock=clock, new_run=True)
            run_id = service.start()
            out(f"soaklog demo: simulated chamber at {speed:g}× real time (a 10 K/min ramp moves "
                f"{10 * speed / 60:g} K per second of your time)")
            out(f"  meter  {addr.meter_resource}")
            out(f"  board  {addr.board_device}")
            if addr.control:
                out(f"  faults nc {addr.control[0]} {addr.control[1]}   (try: fault runaway, meter fault drop, board fault badsum)")
            out(f"  data   {cfg.database} (run {run_id})")
            out("  software alarms are not a safety device: a real chamber needs its own independent "
                "over-temperature protection")
            start = time.monotonic()
            next_line = start + progress_every_s
            try:
                while not stop.is_set():
                    if duration_s is not None and time.monotonic() - start >= duration_s:
                        break
                    if stop.wait(0.2):
                        break
                    if time.monotonic() >= next_line:
                        next_line += progress_every_s
                        st = lab.world.status()
                        out(f"  chamber {_fmt_clock(float(st.get('t_s', 0.0)))}  set {float(st.get('setpoint_c', 0.0)):7.2f} °C  "
                            f"air {float(st.get('air_c', 0.0)):7.2f} °C  {st.get('phase', '')}, cycle {st.get('cycle', '')}  "
                            f"stored {service.stats.stored}")
            except KeyboardInterrupt:
                pass
            finally:
                service.stop()
            summary = {
                "database": cfg.database, "run_id": run_id, "readings": service.stats.readings,
                "stored": service.stats.stored, "chamber_seconds": lab.world.now_s(),
            }
    db = summary["database"]
    out("")
    out(f"soaklog demo: stopped. {summary['stored']} readings of run {run_id} are in {db}")
    out("next:")
    out(f"  soaklog status --db {db}")
    out(f"  soaklog export --db {db} --format csv --out demo.csv")
    out(f"  sqlite3 {db} \"SELECT channel, t_utc, temperature_c, uncertainty_c, status FROM readings_v LIMIT 10\"")
    return summary


def main_demo(database: str, duration_s: float | None, speed: float, headless: bool) -> int:
    """The CLI's entry: headless is the only view until the dashboard exists."""
    if not headless:
        print("soaklog demo: the dashboard is not built yet; running headless", file=sys.stderr)
    run_demo(database=database, duration_s=duration_s, speed=speed)
    return 0
