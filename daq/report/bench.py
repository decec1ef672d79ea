"""The report's scale figure: a 1000-hour, 32-channel run reported from its store, timed (not a test).

The store is built as ``soaklog.bench.bench_trend`` builds it, through the real
writer: one reading per channel per minute for the first 999 hours (which
gives the minute rollups exactly the rows a 1 Hz run has, and those are all a
run this long is analysed from) and 1 Hz for the last hour. The readings
follow the demo's cycle (−40/+125 °C, 10 K/min, 15 min at each extreme) with a
fixed offset per channel and noise, and a few injected excursions, so the
report has ~950 cycles, ~1900 dwells and ramps and some deviations to find.
"""

from __future__ import annotations

import tempfile
import time
import tracemalloc
from pathlib import Path
from typing import Any

import numpy as np

__all__ = ["bench_report", "cycle_signal"]

_LOW, _HIGH, _RATE_K_PER_S, _DWELL_S = -40.0, 125.0, 10.0 / 60.0, 900.0


def cycle_signal(t_s: np.ndarray) -> np.ndarray:
    """The demo's set-point cycle at ``t_s`` seconds from the start (starting at the low extreme)."""
    ramp = (_HIGH - _LOW) / _RATE_K_PER_S
    period = 2 * ramp + 2 * _DWELL_S
    u = np.mod(np.asarray(t_s, dtype=np.float64), period)
    return np.piecewise(
        u,
        [u < ramp, (u >= ramp) & (u < ramp + _DWELL_S), (u >= ramp + _DWELL_S) & (u < 2 * ramp + _DWELL_S)],
        [lambda x: _LOW + _RATE_K_PER_S * x, _HIGH,
         lambda x: _HIGH - _RATE_K_PER_S * (x - ramp - _DWELL_S), _LOW],
    )


def _profile_text() -> str:
    return (
        "\n[profile]\nkind = \"cycle\"\nname = \"bench: the demo cycle\"\nlow_c = -40.0\nhigh_c = 125.0\n"
        "ramp_k_per_min = 10.0\ndwell = \"14min\"\ncycles = 1000\ntolerance_k = 3.0\n"
    )


def _build(db: str, n_channels: int, hours: float, seed: int) -> tuple[int, int]:
    from soaklog.benchkit import station_text
    from soaklog.store import SampleBatch, StoreWriter

    rng = np.random.default_rng(seed)
    store = StoreWriter.open(db)
    text = station_text(n_channels, db) + _profile_text()
    t0 = 1_800_000_000_000
    info = store.begin_run(text, now_ms=t0, station="bench", name="1000 h report benchmark")
    ids = np.asarray(list(store.ensure_channels(
        info.run_id, [(f"ch{i + 1:02d}", "", "meter", "ohm") for i in range(n_channels)]).values()), dtype=np.int64)
    offsets = rng.uniform(-0.8, 0.8, n_channels)
    # a few channels leave the band for a while in some dwells (about 40 excursions in all)
    bumps = {(int(c), int(m)) for c, m in zip(rng.integers(0, n_channels, 40), rng.integers(0, int(hours * 60), 40),
                                             strict=True)}
    minutes = int(hours * 60) - 60
    chunk = 6000

    def write(t_ms: np.ndarray) -> None:
        t = np.repeat(t_ms, n_channels)
        ch = np.tile(ids, t_ms.size)
        base = cycle_signal((t_ms - t0) / 1000.0)
        temp = (base[:, None] + offsets[None, :] + rng.normal(0, 0.05, (t_ms.size, n_channels)))
        minute = ((t_ms - t0) // 60_000).astype(np.int64)
        for c, m in bumps:
            temp[minute == m, c] -= 6.0
        temp = temp.ravel()
        n = t.size
        store.write(info.run_id, SampleBatch(ch, t.astype(np.int64), np.full(n, np.nan), temp, np.full(n, 0.4),
                                             np.zeros(n, np.int64), np.zeros(n, np.int64)))

    for m0 in range(0, minutes, chunk):
        write(t0 + np.arange(m0, min(m0 + chunk, minutes), dtype=np.int64) * 60_000)
    t_last0 = t0 + minutes * 60_000
    for s0 in range(0, 3600, 600):
        write(t_last0 + np.arange(s0, s0 + 600, dtype=np.int64) * 1000)
    store.add_event(info.run_id, t0, "service_start", "logger started (benchmark)")
    store.end_run(info.run_id, now_ms=int(t_last0 + 3_599_000))
    readings = (minutes + 3600) * n_channels
    store.close()
    return info.run_id, readings


def bench_report(n_channels: int = 32, hours: float = 1000.0, seed: int = 5, *, memory: bool = True) -> dict[str, Any]:
    """Seconds to report a ``hours``-hour, ``n_channels``-channel run, and the peak memory it took.

    The run is analysed from the minute rollups, as a 1 Hz run of this length
    is (``source="rollup"``; a real 1 Hz run has 3600 raw readings per channel
    per hour where this store has 60, which the report reads only to time its
    first excursions again, a one-minute window each).
    """
    from soaklog.report import make_report

    with tempfile.TemporaryDirectory(prefix="soaklog-bench-report-") as tmp:
        db = str(Path(tmp) / "report.db")
        a = time.perf_counter()
        run_id, readings = _build(db, n_channels, hours, seed)
        build_s = time.perf_counter() - a
        a = time.perf_counter()
        result = make_report(db, run_id=run_id, out_dir=Path(tmp) / "out", source="rollup")
        report_s = time.perf_counter() - a
        peak_mb = None
        if memory:
            tracemalloc.start()
            make_report(db, run_id=run_id, out_dir=Path(tmp) / "out2", source="rollup")
            _cur, peak = tracemalloc.get_traced_memory()
            tracemalloc.stop()
            peak_mb = peak / 1e6
        v = result.summary["verdict"]
        return {
            "report_hours": hours,
            "report_channels": n_channels,
            "report_rollup_rows": int(hours * 60) * n_channels,
            "report_store_readings": readings,
            "report_build_store_s": build_s,
            "report_s": report_s,
            "report_peak_traced_mb": peak_mb,
            "report_cycles_found": len(result.summary["tables"]["cycles"]),
            "report_complete_cycles": v.get("complete_cycles"),
            "report_deviations": v.get("deviations"),
            "report_html_mb": result.html.stat().st_size / 1e6,
        }


if __name__ == "__main__":
    import json
    import sys

    hours = float(sys.argv[1]) if len(sys.argv) > 1 else 1000.0
    print(json.dumps(bench_report(hours=hours), indent=2))
