"""`soaklog bench`: the project's benchmark, every figure against a baseline of the same run.

Figures are measured here, on this machine, now; a ratio against a baseline
measured in the same run is what carries over to another machine.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

import numpy as np

from daq.sensors.cvd import IEC_60751, resistance, temperature

__all__ = ["run_bench", "CONTRACT_KEYS"]

#: keys `bench --json` always prints (DESIGN.md); None until the part exists
CONTRACT_KEYS = (
    "convert_values_per_s",
    "convert_ratio_vs_numpy",
    "ingest_readings_per_s",
    "ingest_ratio_vs_executemany",
    "bytes_per_reading",
    "trend_query_ms",
    "memory_growth_mb",
)


def _best_of(fn: Callable[[], object], repeats: int) -> float:
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def bench_convert(n: int = 10_000_000, repeats: int = 5, seed: int = 20261201) -> dict[str, Any]:
    """Vectorised CVD inverse over the full range vs a bare numpy closed-form quadratic.

    The baseline is the textbook quadratic t = (−A + √(A² − 4B(1 − R/R0)))/(2B)
    on the same array: what a user would write by hand, exact only above 0 °C.
    soaklog's inverse is exact over −200…850 °C and range-checks every value.
    """
    rng = np.random.default_rng(seed)
    curve = IEC_60751
    r = resistance(rng.uniform(curve.t_min_c, curve.t_max_c, n), curve).astype(np.float64)
    a, b, r0 = curve.a, curve.b, curve.r0_ohm

    def bare() -> object:
        return (-a + np.sqrt(a * a - 4.0 * b * (1.0 - r / r0))) / (2.0 * b)

    def ours() -> object:
        return temperature(r, curve)

    bare(), ours()  # first touch of memory pages is not what we measure
    t_bare = _best_of(bare, repeats)
    t_ours = _best_of(ours, repeats)
    return {
        "convert_values": n,
        "convert_values_per_s": n / t_ours,
        "convert_numpy_values_per_s": n / t_bare,
        "convert_ratio_vs_numpy": t_bare / t_ours,
    }


def run_bench(*, quick: bool = False) -> dict[str, Any]:
    """Run every benchmark that exists so far; contract keys not yet measurable are None."""
    result: dict[str, Any] = {key: None for key in CONTRACT_KEYS}
    result.update(bench_convert(n=10_000_000, repeats=2 if quick else 5))
    result["not_measured"] = [k for k in CONTRACT_KEYS if result[k] is None]
    return result
