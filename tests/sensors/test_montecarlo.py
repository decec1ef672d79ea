"""Tests of the Monte Carlo and GUM tolerance bands (daq.sensors.montecarlo)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq
from uncertainties import ufloat, umath

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751
from soaklog.sensors.montecarlo import (
    DEFAULT_DRAWS,
    DeviationHalfWidths,
    class_half_widths,
    gum_error_band,
    mc_error_band,
)
from soaklog.sensors.tolerance import tolerance_class

# IEC 60751:2008, 4.2: the standard coefficients
A, B, C = 3.9083e-3, -5.775e-7, -4.183e-12
R0 = 100.0


def w(t: float) -> float:
    """R/R0 of the standard curve, written out here (IEC 60751:2008, 4.2)."""
    return 1.0 + A * t + B * t * t + (C * (t - 100.0) * t**3 if t < 0.0 else 0.0)


def w_prime(t: float) -> float:
    return A + 2.0 * B * t + (C * (4.0 * t**3 - 300.0 * t * t) if t < 0.0 else 0.0)


def read_nominal(r_ohm: float) -> float:
    """The nominal curve inverted by scipy's bracketed root finder, not the project's."""
    return brentq(lambda t: R0 * w(t) - r_ohm, -260.0, 900.0, xtol=1e-13, rtol=1e-15)


CLASS_B = class_half_widths(tolerance_class("B", "film"))


def test_default_draws_follow_jcgm_101_for_95_percent() -> None:
    # JCGM 101:2008, 7.2.2: M = 10⁴/(1 − p) for p = 0.95 (from memory of the Supplement)
    assert DEFAULT_DRAWS == 200_000


@pytest.mark.parametrize(("name", "ohm_at_0c"), [("A", 0.06), ("B", 0.12)])
def test_r0_half_width_is_the_class_tolerance_in_ohm_at_0c(name: str, ohm_at_0c: float) -> None:
    hw = class_half_widths(tolerance_class(name, "film"))
    # IEC 60751:2008, tolerance table in ohm for a Pt100 at 0 °C: class A
    # ±0.06 ohm, class B ±0.12 ohm, printed to 0.01 ohm (from memory of the table)
    assert round(hw.r0_ohm, 2) == ohm_at_0c
    # exactly: the resistance step from 0 °C to +a on the standard curve
    a = tolerance_class(name, "film").a_c
    assert hw.r0_ohm == pytest.approx(R0 * (w(a) - 1.0), rel=1e-12)


@pytest.mark.parametrize(("name", "element"), [("A", "film"), ("B", "film"), ("B", "wire"), ("C", "wire")])
def test_class_half_widths_put_the_worst_case_sensor_on_the_class_bound(name: str, element: str) -> None:
    tol = tolerance_class(name, element)
    hw = class_half_widths(tol)
    ratios = []
    for t in np.linspace(tol.t_min_c, tol.t_max_c, 45):
        bound = tol.a_c + tol.b_per_c * abs(t)  # IEC 60751:2008, 5.1.3: ±(a + b·|t|)
        for s0 in (-1.0, 1.0):
            for sa in (-1.0, 1.0):
                r = (R0 + s0 * hw.r0_ohm) * (w(t) + sa * hw.a_per_c * t)
                ratios.append(abs(read_nominal(r) - t) / bound)
    # within the class everywhere, and touching it (at 0 °C, where only R0 acts)
    assert max(ratios) <= 1.0 + 1e-9
    assert max(ratios) >= 1.0 - 1e-9


def gum_u_independent(t: float, hw: DeviationHalfWidths) -> float:
    """Linear propagation by the ``uncertainties`` package through the closed-form inverse (t ≥ 0)."""
    d_r0 = ufloat(0.0, hw.r0_ohm / math.sqrt(3.0))  # JCGM 100:2008, 4.3.7: a/√3
    d_a = ufloat(0.0, hw.a_per_c / math.sqrt(3.0))
    r = (R0 + d_r0) * (w(t) + d_a * t)
    # IEC 60751 above 0 °C: t = (−A + √(A² − 4B(1 − R/R0)))/(2B)
    t_read = (-A + umath.sqrt(A * A - 4.0 * B * (1.0 - r / R0))) / (2.0 * B)
    return (t_read - t).std_dev


@pytest.mark.parametrize("t", [0.0, 50.0, 200.0, 420.0, 800.0])
def test_gum_band_matches_uncertainties_linear_propagation(t: float) -> None:
    band = gum_error_band(t, CLASS_B)
    assert float(band.u_c[0]) == pytest.approx(gum_u_independent(t, CLASS_B), rel=1e-9)


def test_gum_sensitivities_below_zero_match_a_numerical_derivative() -> None:
    t = -120.0
    band = gum_error_band(t, CLASS_B)
    h = 1e-4
    # central differences through the brentq inverse (common practice, no published source)
    c_r0 = (read_nominal((R0 + h) * w(t)) - read_nominal((R0 - h) * w(t))) / (2 * h)
    ha = 1e-7
    c_a = (read_nominal(R0 * (w(t) + ha * t)) - read_nominal(R0 * (w(t) - ha * t))) / (2 * ha)
    assert float(band.sensitivity_r0_c_per_ohm[0]) == pytest.approx(c_r0, rel=1e-6)
    assert float(band.sensitivity_a_c2[0]) == pytest.approx(c_a, rel=1e-6)


GRID = np.array([-150.0, -50.0, 0.0, 100.0, 250.0, 500.0, 800.0], dtype=np.float64)


def test_mc_standard_deviation_agrees_with_gum() -> None:
    mc = mc_error_band(GRID, CLASS_B, np.random.default_rng(60751))
    gum = gum_error_band(GRID, CLASS_B)
    # The relative standard error of a sample standard deviation is
    # √((κ − 1)/(4M)) for kurtosis κ (common practice, no published source);
    # κ ≤ 1.8 for a sum of rectangular terms, so at M = 2·10⁵ it is ≤ 0.1 %.
    # The model's second-order terms are of order δR0/R0 and δA·t/W, ~0.1 %.
    # 1 % is over five times both together.
    np.testing.assert_allclose(mc.std_c, gum.u_c, rtol=0.01)


def trapezoid_quantile(alpha: float, beta: float, p: float) -> float:
    """Upper end of the symmetric 100p % interval of U(−α, α) + U(−β, β).

    By basic probability (the convolution of two rectangular densities, the
    trapezoid of JCGM 100:2008, 4.3.9), with α ≥ β: the density is 1/(2α)
    on |x| ≤ α − β and falls linearly to 0 at α + β, so
        P(X > x) = (α − x)/(2α)              for |x| ≤ α − β,
        P(X > x) = (α + β − x)²/(8αβ)        for α − β ≤ x ≤ α + β.
    The tail beyond α − β holds β/(2α). Setting P(X > x) = (1 − p)/2:
        x = α·p                              if β/(2α) < (1 − p)/2,
        x = α + β − √(4αβ(1 − p))            otherwise.
    """
    alpha, beta = max(alpha, beta), min(alpha, beta)
    tail = (1.0 - p) / 2.0
    if beta == 0.0 or beta / (2.0 * alpha) < tail:
        return alpha * p
    return alpha + beta - math.sqrt(4.0 * alpha * beta * (1.0 - p))


@pytest.mark.parametrize(
    ("t", "h_r0_ohm", "h_a_per_c"),
    [
        (0.0, 0.10, 1.0e-5),  # only R0 acts at 0 °C: a rectangle, x = 0.95·α
        (20.0, 0.10, 1.0e-6),  # β/(2α) < 0.025: the quantile in the flat part
        (100.0, 0.10, 1.0e-5),
        (300.0, 0.05, 2.0e-5),
        (-100.0, 0.12, 1.5e-5),
        (500.0, CLASS_B.r0_ohm, CLASS_B.a_per_c),
    ],
)
def test_mc_95_interval_matches_the_exact_trapezoid(t: float, h_r0_ohm: float, h_a_per_c: float) -> None:
    hw = DeviationHalfWidths(r0_ohm=h_r0_ohm, a_per_c=h_a_per_c)
    mc = mc_error_band(t, hw, np.random.default_rng(1968))
    # first-order model e = c_R0·δR0 + c_A·δA with sensitivities from the
    # curve written out here: c_R0 = W/(R0·W'), c_A = t/W'
    alpha = abs(w(t) / (R0 * w_prime(t))) * h_r0_ohm
    beta = abs(t / w_prime(t)) * h_a_per_c
    x = trapezoid_quantile(alpha, beta, 0.95)
    # The MC standard error of a 97.5 % quantile, √(p(1−p)/M)/f(x) with f the
    # trapezoid's density at x, is at most 0.2 % of x for these cases (at
    # 500 °C: 3.5e-4/0.084 K⁻¹ = 4.2 mK of 2.2 K); 1 % is five of them, and
    # still tells the trapezoid from a normal approximation (1.96·u is 6 %
    # wider at 500 °C, 19 % at 0 °C).
    assert float(mc.high_c[0]) == pytest.approx(x, rel=0.01)
    assert float(mc.low_c[0]) == pytest.approx(-x, rel=0.01)
    assert mc.coverage == 0.95


def test_mc_envelope_of_class_b_stays_within_and_reaches_the_class_bound() -> None:
    tol = tolerance_class("B", "film")
    t = np.arange(tol.t_min_c, tol.t_max_c + 1.0, 25.0, dtype=np.float64)
    mc = mc_error_band(t, CLASS_B, np.random.default_rng(2008))
    bound = 0.3 + 0.005 * np.abs(t)  # IEC 60751:2008, 5.1.3: class B ±(0.3 + 0.005·|t|)
    assert np.all(mc.envelope_c <= bound + 1e-9)
    # At 0 °C the envelope is the largest |δR0| of 2·10⁵ draws: short of the
    # bound by more than 0.01 % with probability (1 − 1e-4)^M = e^−20.
    assert mc.envelope_c[t == 0.0][0] >= 0.9999 * 0.3
    # At 500 °C both deviations must be near their limits at once; for a sum
    # of two rectangles the envelope falls short by about √(8αβ/M) ≈ 0.3 %.
    assert mc.envelope_c[-1] >= 0.99 * bound[-1]
    # and the envelope is wider than the 95 % interval, which is inside it
    assert np.all(mc.high_c <= mc.envelope_c) and np.all(-mc.low_c <= mc.envelope_c)


def test_mc_band_is_reproducible_with_a_seed() -> None:
    one = mc_error_band(GRID, CLASS_B, np.random.default_rng(42), n_draws=20_000)
    two = mc_error_band(GRID, CLASS_B, np.random.default_rng(42), n_draws=20_000)
    other = mc_error_band(GRID, CLASS_B, np.random.default_rng(43), n_draws=20_000)
    for field in ("mean_c", "std_c", "low_c", "high_c", "envelope_c"):
        np.testing.assert_array_equal(getattr(one, field), getattr(two, field))
        assert not np.array_equal(getattr(one, field), getattr(other, field))
    assert one.n_draws == 20_000


def test_symmetric_interval_uses_jcgm_101_order_statistics() -> None:
    # with no slope deviation the error at 0 °C is a monotone function of δR0,
    # so the interval ends are the draws of ranks r and r + q of JCGM 101:2008,
    # 7.7.2 (from memory): M = 1000, p = 0.95 -> q = 950, r = 25
    hw = DeviationHalfWidths(r0_ohm=0.1, a_per_c=0.0)
    mc = mc_error_band(0.0, hw, np.random.default_rng(5), n_draws=1000)
    d = np.sort(np.random.default_rng(5).uniform(-0.1, 0.1, 1000))
    low = read_nominal(R0 + d[24])
    high = read_nominal(R0 + d[974])
    assert float(mc.low_c[0]) == pytest.approx(low, abs=1e-9)
    assert float(mc.high_c[0]) == pytest.approx(high, abs=1e-9)


def test_grid_ends_convert_although_readings_leave_the_nominal_range() -> None:
    mc = mc_error_band([-200.0, 850.0], CLASS_B, np.random.default_rng(0), n_draws=10_000)
    assert np.all(np.isfinite(mc.envelope_c))
    gum = gum_error_band([-200.0, 850.0], CLASS_B)
    np.testing.assert_allclose(mc.std_c, gum.u_c, rtol=0.05)  # M = 10⁴: ~1 % noise


def test_zero_half_widths_give_zero_error() -> None:
    mc = mc_error_band(GRID, DeviationHalfWidths(0.0, 0.0), np.random.default_rng(0), n_draws=1000)
    assert np.all(np.abs(mc.envelope_c) < 1e-9)
    assert np.all(gum_error_band(GRID, DeviationHalfWidths(0.0, 0.0)).u_c == 0.0)


def test_pt1000_scales_the_r0_half_width_and_keeps_the_kelvin_band() -> None:
    pt1000 = IEC_60751.with_r0(1000.0)
    hw = class_half_widths(tolerance_class("B", "film"), pt1000)
    assert hw.r0_ohm == pytest.approx(10.0 * CLASS_B.r0_ohm, rel=1e-12)
    assert hw.a_per_c == pytest.approx(CLASS_B.a_per_c, rel=1e-12)
    np.testing.assert_allclose(
        gum_error_band(GRID, hw, curve=pt1000).u_c, gum_error_band(GRID, CLASS_B).u_c, rtol=1e-12
    )


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"t_true_c": [900.0]}, "outside the curve's range"),
        ({"t_true_c": [np.nan]}, "finite"),
        ({"t_true_c": [[0.0, 1.0]]}, "1-D"),
        ({"coverage": 1.0}, "coverage"),
        ({"coverage": 0.0}, "coverage"),
        ({"n_draws": 1}, "n_draws"),
        ({"n_draws": 10}, "too few"),
        ({"rng": np.random.RandomState(0)}, "Generator"),
        ({"half_widths": DeviationHalfWidths(r0_ohm=100.0, a_per_c=0.0)}, "zero resistance"),
    ],
)
def test_mc_refuses_unusable_arguments(kwargs, message) -> None:
    args = {"t_true_c": [0.0, 100.0], "half_widths": CLASS_B, "rng": np.random.default_rng(0)}
    args.update(kwargs)
    with pytest.raises(InputError, match=message):
        mc_error_band(**args)


@pytest.mark.parametrize(("r0", "a"), [(-0.1, 1e-5), (0.1, np.nan), (0.1, -1e-6)])
def test_half_widths_must_be_finite_and_not_negative(r0: float, a: float) -> None:
    with pytest.raises(InputError, match="half-width"):
        DeviationHalfWidths(r0_ohm=r0, a_per_c=a)
