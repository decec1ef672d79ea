"""IEC 60068-3-5 quantities and the stability finding on series worked by hand.

Definitions from memory of IEC 60068-3-5:2001: deviation = a point's mean
minus the set temperature; fluctuation = a point's highest minus lowest
reading over the stable period; spatial variation ("gradient") = the largest
difference between two points' means.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from testkit.report import grid

from soaklog.report.performance import chamber_performance, stable_mask, stable_period

# three points, ten one-minute readings at a set temperature of 125 °C:
#   A alternates 125.0 / 125.4  → mean 125.2, fluctuation 0.4 K, deviation +0.2 K
#   B holds 124.6               → mean 124.6, fluctuation 0,     deviation −0.4 K
#   C alternates 125.5 / 125.9  → mean 125.7, fluctuation 0.4 K, deviation +0.7 K
A = [125.0, 125.4] * 5
B = [124.6] * 10
C = [125.5, 125.9] * 5


def _perf(measuring_u_k: float | None = None):  # noqa: ANN202
    s = grid({"A": A, "B": B, "C": C})
    period = stable_period(s, np.ones(s.n, dtype=bool), 0, s.n, 60.0)
    return chamber_performance(s, period, 125.0, "soak", measuring_u_k=measuring_u_k)


def test_per_point_quantities_by_hand() -> None:
    p = _perf()
    assert p.mean_c == pytest.approx((125.2, 124.6, 125.7))
    assert p.deviation_k == pytest.approx((0.2, -0.4, 0.7))
    assert p.fluctuation_k == pytest.approx((0.4, 0.0, 0.4))
    assert p.min_c == pytest.approx((125.0, 124.6, 125.5)) and p.max_c == pytest.approx((125.4, 124.6, 125.9))


def test_chamber_quantities_by_hand() -> None:
    p = _perf()
    # mean of all points: (125.2 + 124.6 + 125.7) / 3 = 125.1667 → +0.1667 K
    assert p.chamber_deviation_k == pytest.approx((125.2 + 124.6 + 125.7) / 3 - 125.0)
    assert p.worst_deviation_k == pytest.approx(0.7) and p.worst_deviation_channel == "C"
    assert p.spatial_variation_k == pytest.approx(125.7 - 124.6)  # 1.1 K
    # at one moment the spread is largest when A and C are high together: 125.9 − 124.6 = 1.3 K
    assert p.max_spread_k == pytest.approx(1.3)
    assert p.max_fluctuation_k == pytest.approx(0.4)


def test_drift_is_the_least_squares_slope() -> None:
    p = _perf()
    # B is flat; A alternates ±0.2 K about its mean starting low: Σ(x − x̄)(y − ȳ) = 1.0 K·min and
    # Σ(x − x̄)² = 82.5 min² over x = 0 … 9 min, so the slope is 1/82.5 K/min (worked by hand)
    assert p.drift_k_per_min[1] == pytest.approx(0.0, abs=1e-12)
    assert p.drift_k_per_min[0] == pytest.approx(1.0 / 82.5)


def test_uncertainty_of_the_condition() -> None:
    # IEC 60068-3-11 approach (from memory): u² = (U_meas/2)² + (fluct/2)²/3 + (spatial/2)²/3, U = 2u
    #   = 0.1² + 0.2²/3 + 0.55²/3 = 0.01 + 0.013333 + 0.100833 = 0.124167 → U = 2 × 0.352372 = 0.704745 K
    assert _perf(measuring_u_k=0.2).expanded_uncertainty_k == pytest.approx(2 * math.sqrt(0.124167), rel=1e-5)


def test_no_stable_period_gives_no_figures() -> None:
    s = grid({"A": A})
    p = chamber_performance(s, None, 125.0, "soak")
    assert p.stable is None and p.chamber_deviation_k is None and p.spatial_variation_k is None


def test_stability_finding_by_hand() -> None:
    # drift 1 K/min from 130 °C for 10 min, then 120 °C; readings mid-minute: 129.5, 128.5, … 120.5, 120, …
    # band ±0.5 K over 5 min: the window ending at minute 13 holds 120.5, 120 ×4 (0.5 K: stable); the one
    # ending at 12 holds 121.5 … 120 (1.5 K: not). Stable from the start of that window (minute 9),
    # confirmed at the end of minute 13 (14 min).
    y = [130.0 - (i + 0.5) for i in range(10)] + [120.0] * 20
    s = grid({"A": y})
    mask = stable_mask(s, 300.0, 0.5)
    assert mask[:13].tolist() == [False] * 13 and mask[13:].all()
    st = stable_period(s, mask, 0, s.n, 300.0)
    assert st is not None
    assert st.start_s == pytest.approx(9 * 60.0) and st.confirmed_s == pytest.approx(14 * 60.0)
    assert st.end_s == pytest.approx(30 * 60.0)


def test_stability_needs_every_point() -> None:
    # one point settled, the other still moving 1 K per minute: never stable with ±0.5 K over 5 min
    s = grid({"A": [120.0] * 20, "B": [100.0 + i for i in range(20)]})
    assert not stable_mask(s, 300.0, 0.5).any()


def test_the_longest_stable_period_is_used() -> None:
    # stable 0–8 min, a 3 K step, stable again 12–30 min: the second is longer
    y = [120.0] * 8 + [123.0] * 22
    s = grid({"A": y})
    st = stable_period(s, stable_mask(s, 180.0, 0.5), 0, s.n, 180.0)
    assert st is not None and st.start_s == pytest.approx(8 * 60.0) and st.end_s == pytest.approx(30 * 60.0)
