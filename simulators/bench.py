"""Benchmark of the chamber model: how long a 1000-hour run at 1 s resolution takes here.

A benchmark, not a test: it reports what it measured and whether that meets
the target (1000 h of chamber time in under a minute of wall time), and
leaves the judgement to whoever reads it.
"""

from __future__ import annotations

import time

from soaklog.simulators.chamber import ChamberModel, ChamberParams, Position
from soaklog.simulators.profiles import Cycle

__all__ = ["bench_chamber", "TARGET_WALL_S"]

#: the target: a 1000-hour run stepped in under a minute
TARGET_WALL_S = 60.0


def bench_chamber(hours: float = 1000.0, *, seed: int = 20261201) -> dict[str, float | int | bool]:
    """Step a thermal-cycling chamber with eight positions through ``hours`` at 1 s steps.

    The run is the demo's kind of work: −40/+125 °C cycling, 10 K/min ramps,
    15 min dwells, eight sensor positions whose noise is generated for the
    whole run (asked for once at the end, which draws every block before it).

    Returns:
        ``hours``, ``steps``, ``wall_s``, ``steps_per_s``,
        ``sim_hours_per_wall_s``, ``projected_1000h_s`` (the wall time a
        1000-hour run would take at this rate) and ``meets_target`` (that
        projection below ``TARGET_WALL_S``).
    """
    profile = Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, max(1, int(hours * 3600 / 3780) + 1))
    positions = [Position(f"p{i}", air_weight=1.0 - i / 8.0, gradient=0.001 * (i - 4)) for i in range(8)]
    model = ChamberModel(ChamberParams(), profile, positions, seed=seed)
    end_s = hours * 3600.0
    t0 = time.perf_counter()
    model.advance_to(end_s)
    model.positions_c()
    wall = time.perf_counter() - t0
    steps = model.steps
    rate = steps / wall if wall > 0 else float("inf")
    projected = 3_600_000 / rate
    return {
        "hours": float(hours),
        "steps": int(steps),
        "wall_s": wall,
        "steps_per_s": rate,
        "sim_hours_per_wall_s": hours / wall if wall > 0 else float("inf"),
        "projected_1000h_s": projected,
        "meets_target": projected < TARGET_WALL_S,
    }


if __name__ == "__main__":  # pragma: no cover - a manual run
    import json

    print(json.dumps(bench_chamber(), indent=2))
