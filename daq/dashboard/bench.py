"""Figures for the dashboard: its CPU share at a 1 Hz refresh on 32 channels, and opening a 1000-hour trend.

Run ``python -m soaklog.dashboard.bench`` (or call the functions); these are
measurements to report, not tests. The CPU figure runs the real app in a child
process on a pseudo-terminal of the given size (Textual's own terminal driver
drawing real output), while this process writes 32 readings a second into the
store, as the logger would.
"""

from __future__ import annotations

import asyncio
import json
import os
import select
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

import numpy as np

from soaklog.store import SampleBatch, StoreWriter

__all__ = ["bench_dashboard_cpu", "bench_trend_open", "build_long_run", "main"]

_CONFIG = """\
[station]
name = "bench"
database = "bench.db"

[run]
name = "dashboard bench"
planned_duration = "1000h"

[profile]
kind = "soak"
temperature_c = 72.5
duration = "1000h"

[[instrument]]
name = "meter"
driver = "scpi"
interval = "1s"

[[alarm]]
name = "over"
kind = "high"
channels = ["*"]
limit_c = 130.0
"""


def _batch(ids: list[int], t_ms: np.ndarray, temp: np.ndarray) -> SampleBatch:
    ch = np.tile(np.asarray(ids, dtype=np.int64), t_ms.size)
    t = np.repeat(t_ms.astype(np.int64), len(ids))
    n = t.size
    return SampleBatch(ch, t, np.full(n, 130.0), temp.reshape(-1) if temp.size == n else np.resize(temp, n),
                       np.full(n, 0.4), np.zeros(n, np.int64), np.zeros(n, np.int64))


def build_long_run(path: str | Path, *, hours: float = 1000.0, n_channels: int = 32, end_ms: int | None = None,
                   seed: int = 11) -> tuple[int, list[int], int, int]:
    """A run of ``hours`` as ``daq.bench.bench_trend`` builds it: one reading a minute per channel, then 1 Hz
    for the last hour (the rollups hold exactly what a 1 Hz run gives them). Returns (run, channel ids, start, end)."""
    rng = np.random.default_rng(seed)
    end = int(end_ms if end_ms is not None else time.time() * 1000) // 1000 * 1000
    t0 = end - int(hours * 3_600_000)
    store = StoreWriter.open(path)
    info = store.begin_run(_CONFIG, now_ms=t0, station="bench", name="dashboard bench")
    ids = list(store.ensure_channels(info.run_id, [(f"ch{i:02d}", f"Channel {i:02d}", "meter", "ohm")
                                                    for i in range(n_channels)]).values())
    minutes = int(hours * 60) - 60
    for m0 in range(0, minutes, 6000):
        m = np.arange(m0, min(m0 + 6000, minutes))
        t = t0 + m * 60_000
        temp = 72.5 + 52.5 * np.sin(2 * np.pi * np.repeat(t, n_channels) / 7.2e6) + rng.normal(0, 0.02, t.size * n_channels)
        store.write(info.run_id, _batch(ids, t, temp))
    t_last0 = t0 + minutes * 60_000
    for s0 in range(0, 3600, 600):
        t = t_last0 + np.arange(s0, s0 + 600) * 1000
        temp = 72.5 + rng.normal(0, 0.02, t.size * n_channels)
        store.write(info.run_id, _batch(ids, t, temp))
    store.add_event(info.run_id, t0, "service_start", "logger started (bench)")
    store.close()
    return info.run_id, ids, t0, t_last0 + 3600 * 1000 - 1000


# ---------------------------------------------------------------- CPU share


def _child(db: str, seconds: float, warm_s: float, view: str, out: str) -> None:
    """In the child: run the app on this terminal, measure CPU from ``warm_s`` to the end."""
    from soaklog.dashboard.app import DashboardApp

    app = DashboardApp(db, start_view=view, refresh_s=1.0)
    if view == "graph":
        app.graph_channels = ("ch00", "ch01", "ch02", "ch03")
    marks: dict[str, float] = {}

    def mark(name: str) -> None:
        t = os.times()
        marks[name + "_cpu"] = t.user + t.system
        marks[name + "_wall"] = time.monotonic()

    def started() -> None:
        app.set_timer(warm_s, lambda: mark("from"))
        app.set_timer(warm_s + seconds, lambda: (mark("to"), app.exit()))

    app.call_later(started)
    app.run()
    marks["reads"] = app.reads
    Path(out).write_text(json.dumps(marks))


def bench_dashboard_cpu(*, n_channels: int = 32, seconds: float = 20.0, warm_s: float = 4.0,
                        size: tuple[int, int] = (160, 50), view: str = "probes") -> dict[str, Any]:
    """The dashboard's share of one core while a logger writes ``n_channels`` readings a second (1 Hz refresh)."""
    import fcntl
    import pty
    import struct
    import termios

    with tempfile.TemporaryDirectory(prefix="soaklog-dash-bench-") as tmp:
        db = str(Path(tmp) / "bench.db")
        now = int(time.time() * 1000) // 1000 * 1000
        _run_id, ids, _t0, _end = build_long_run(db, hours=2.0, n_channels=n_channels, end_ms=now)
        stop = threading.Event()

        def write() -> None:
            store = StoreWriter.open(db)
            rng = np.random.default_rng(1)
            k = 0
            next_t = time.monotonic()
            while not stop.is_set():
                t_ms = int(time.time() * 1000)
                store.write(1, _batch(ids, np.array([t_ms]), 72.5 + rng.normal(0, 0.02, len(ids))))
                k += 1
                next_t += 1.0
                stop.wait(max(0.0, next_t - time.monotonic()))
            store.close()

        writer = threading.Thread(target=write, name="bench-writer", daemon=True)
        writer.start()
        out = str(Path(tmp) / "child.json")
        master, slave = pty.openpty()
        fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", size[1], size[0], 0, 0))
        env = dict(os.environ, TERM="xterm-256color", COLUMNS=str(size[0]), LINES=str(size[1]))
        code = (f"from soaklog.dashboard.bench import _child; _child({db!r}, {seconds!r}, {warm_s!r}, {view!r}, "
                f"{out!r})")
        child = subprocess.Popen([sys.executable, "-c", code], stdin=slave, stdout=slave, stderr=slave, env=env,
                                 close_fds=True, start_new_session=True)
        os.close(slave)
        written = 0
        deadline = time.monotonic() + warm_s + seconds + 60
        try:
            while child.poll() is None and time.monotonic() < deadline:
                r, _w, _x = select.select([master], [], [], 0.2)
                if r:
                    try:
                        written += len(os.read(master, 65536))
                    except OSError:
                        break
        finally:
            if child.poll() is None:
                child.kill()
            child.wait(timeout=10)
            os.close(master)
            stop.set()
            writer.join(timeout=10)
        marks = json.loads(Path(out).read_text())
    cpu = marks["to_cpu"] - marks["from_cpu"]
    wall = marks["to_wall"] - marks["from_wall"]
    return {
        "dashboard_channels": n_channels, "dashboard_view": view, "dashboard_size": f"{size[0]}x{size[1]}",
        "dashboard_seconds": wall, "dashboard_cpu_share": cpu / wall, "dashboard_reads": marks["reads"],
        "dashboard_terminal_bytes_per_s": written / max(1e-9, warm_s + seconds),
    }


# ---------------------------------------------------------------- opening a long trend


def bench_trend_open(*, hours: float = 1000.0, n_channels: int = 32, size: tuple[int, int] = (160, 50),
                     repeats: int = 3) -> dict[str, Any]:
    """Opening a ``hours``-long run's whole-run trend: the reader's first read, and the app until it is drawn."""
    from soaklog.dashboard.app import DashboardApp
    from soaklog.dashboard.records import TrendRequest
    from soaklog.dashboard.source import StoreSource
    from soaklog.dashboard.widgets import TrendPanel

    with tempfile.TemporaryDirectory(prefix="soaklog-dash-bench-") as tmp:
        db = str(Path(tmp) / "long.db")
        t_build = time.perf_counter()
        _run_id, _ids, _t0, end = build_long_run(db, hours=hours, n_channels=n_channels)
        build_s = time.perf_counter() - t_build
        first_read = []
        for _ in range(repeats):
            a = time.perf_counter()
            src = StoreSource(db, clock=lambda: end / 1000.0)
            snap = src.poll(TrendRequest(("ch00",), "run"))
            first_read.append(time.perf_counter() - a)
            points = int(snap.trends[0].t_ms.size)
            src.close()

        async def open_in_app() -> tuple[float, float]:
            app = DashboardApp(db, clock=lambda: end / 1000.0, start_view="graph", refresh_s=1.0)
            app.graph_channels = ("ch00",)
            app.window = "run"
            a = time.perf_counter()
            async with app.run_test(size=size) as pilot:
                panel = app.screen.query_one("#trend", TrendPanel)
                while not (panel.t_from_ms is not None and panel.series and panel.series[0].t_ms.size):
                    await pilot.pause(0.005)
                    panel = app.screen.query_one("#trend", TrendPanel)
                await pilot.pause()
                drawn = time.perf_counter() - a
                b = time.perf_counter()
                panel._cache = None
                panel.lines(size[0] - 26, size[1] - 8)
                plot = time.perf_counter() - b
            return drawn, plot

        opened = [asyncio.run(open_in_app()) for _ in range(repeats)]
    return {
        "trend_open_hours": hours, "trend_open_build_s": build_s, "trend_open_points": points,
        "trend_open_first_read_ms": min(first_read) * 1e3,
        "trend_open_app_ms": min(o[0] for o in opened) * 1e3,
        "trend_open_plot_ms": min(o[1] for o in opened) * 1e3,
    }


def main(argv: list[str] | None = None) -> int:
    """``python -m soaklog.dashboard.bench [--quick]``: print the figures as JSON."""
    args = sys.argv[1:] if argv is None else argv
    quick = "--quick" in args
    result: dict[str, Any] = {}
    for view in ("probes", "graph"):
        r = bench_dashboard_cpu(seconds=5.0 if quick else 20.0, view=view)
        result[f"dashboard_cpu_share_{view}"] = r["dashboard_cpu_share"]
        result[f"dashboard_reads_{view}"] = r["dashboard_reads"]
        result["dashboard_size"] = r["dashboard_size"]
        result["dashboard_channels"] = r["dashboard_channels"]
    result.update(bench_trend_open(hours=50.0 if quick else 1000.0))
    print(json.dumps(result, indent=2))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
