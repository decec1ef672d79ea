"""Tests of the Callendar–Van Dusen coefficient fit (daq.sensors.calibration)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.polynomial import polynomial as P
from scipy.optimize import least_squares

from soaklog.errors import CalibrationError, InputError
from soaklog.sensors.calibration import CalibrationFit, fit_cvd
from soaklog.sensors.cvd import resistance, temperature
from soaklog.sensors.flags import Flag

# IEC 60751:2008, 4.2: the standard coefficients
IEC_A, IEC_B, IEC_C = 3.9083e-3, -5.775e-7, -4.183e-12


def cvd_r(t_c, r0, a, b, c):
    """The Callendar–Van Dusen equation written out here (IEC 60751:2008, 4.2), not the project's."""
    t = np.asarray(t_c, dtype=np.float64)
    return r0 * (1.0 + a * t + b * t**2 + np.where(t < 0.0, c * (t - 100.0) * t**3, 0.0))


WIDE_C = np.array([-200, -150, -100, -50, -20, 0, 50, 100, 200, 300, 420, 550, 700, 850], dtype=np.float64)


@pytest.mark.parametrize("r0", [100.0, 500.0, 1000.0])
def test_fit_of_exact_standard_points_recovers_iec_60751_coefficients(r0: float) -> None:
    fit = fit_cvd(WIDE_C, cvd_r(WIDE_C, r0, IEC_A, IEC_B, IEC_C))
    assert fit.fitted_c
    assert fit.curve.r0_ohm == pytest.approx(r0, rel=1e-12)
    assert fit.curve.a == pytest.approx(IEC_A, rel=1e-10)
    assert fit.curve.b == pytest.approx(IEC_B, rel=1e-8)
    assert fit.curve.c == pytest.approx(IEC_C, rel=1e-6)
    assert fit.rms_residual_ohm < 1e-9 * r0
    assert fit.dof == WIDE_C.size - 4
    assert fit.warnings == ()


def test_fit_of_points_from_project_curve_recovers_its_coefficients() -> None:
    # the existing conversion module as the source of the points
    fit = fit_cvd(WIDE_C, resistance(WIDE_C))
    assert (fit.curve.a, fit.curve.b) == (pytest.approx(IEC_A, rel=1e-10), pytest.approx(IEC_B, rel=1e-8))
    assert fit.curve.c == pytest.approx(IEC_C, rel=1e-6)


# IEC 60751:2008 table 1 (Pt100), printed to 0.01 ohm; from memory of the
# standard's table
PRINTED_TABLE = [
    (-200.0, 18.52),
    (-100.0, 60.26),
    (0.0, 100.00),
    (100.0, 138.51),
    (200.0, 175.86),
    (300.0, 212.05),
    (400.0, 247.09),
    (500.0, 280.98),
    (600.0, 313.71),
    (700.0, 345.28),
    (800.0, 375.70),
    (850.0, 390.48),
]


def test_fit_of_printed_table_reproduces_standard_curve_within_rounding() -> None:
    t, r = (np.array(col, dtype=np.float64) for col in zip(*PRINTED_TABLE))
    fit = fit_cvd(t, r)
    # rounding to 0.01 ohm is a rectangular error of ±0.005 ohm (rms 0.0029
    # ohm, JCGM 100:2008, 4.3.7); a least-squares curve through such points
    # stays within that half-width of the curve they were printed from
    assert fit.rms_residual_ohm < 0.005
    grid = np.linspace(-200.0, 850.0, 1051)
    assert np.max(np.abs(resistance(grid, fit.curve) - cvd_r(grid, 100.0, IEC_A, IEC_B, IEC_C))) < 0.005
    assert fit.curve.a == pytest.approx(IEC_A, rel=1e-4)


def test_fit_recovers_a_non_standard_sensor() -> None:
    # a made-up sensor: R0 off by +0.05 ohm and A, B, C away from the standard
    r0, a, b, c = 100.05, 3.9120e-3, -6.02e-7, -3.1e-12
    t = np.array([-196.0, -80.0, -38.0, 0.01, 156.6, 231.9, 419.5, 660.3], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, r0, a, b, c), name="sensor 17")
    assert fit.curve.name == "sensor 17"
    assert fit.curve.r0_ohm == pytest.approx(r0, rel=1e-12)
    assert fit.curve.a == pytest.approx(a, rel=1e-10)
    assert fit.curve.b == pytest.approx(b, rel=1e-8)
    assert fit.curve.c == pytest.approx(c, rel=1e-6)
    assert (fit.t_min_c, fit.t_max_c) == (-196.0, 660.3)


def test_fit_above_zero_matches_numpy_polynomial_fit_on_noisy_points() -> None:
    rng = np.random.default_rng(20260115)
    t = np.linspace(0.0, 420.0, 15, dtype=np.float64)
    r = cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C) + rng.normal(0.0, 0.004, t.size)
    fit = fit_cvd(t, r)
    assert not fit.fitted_c
    # independent reference: numpy's least-squares polynomial R = c0 + c1·t + c2·t²
    c0, c1, c2 = P.polyfit(t, r, 2)
    assert fit.curve.r0_ohm == pytest.approx(c0, rel=1e-12)
    assert fit.curve.a == pytest.approx(c1 / c0, rel=1e-9)
    assert fit.curve.b == pytest.approx(c2 / c0, rel=1e-7)
    np.testing.assert_allclose(fit.residual_ohm, r - P.polyval(t, [c0, c1, c2]), atol=1e-10)
    assert fit.residual_std_ohm == pytest.approx(np.sqrt(np.sum(fit.residual_ohm**2) / (t.size - 3)))


def test_fit_with_c_matches_scipy_least_squares_on_noisy_points() -> None:
    rng = np.random.default_rng(7)
    t = np.array([-190, -150, -110, -70, -40, -10, 0, 30, 80, 150, 250, 400, 600, 800], dtype=np.float64)
    r = cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C) + rng.normal(0.0, 0.003, t.size)
    fit = fit_cvd(t, r)
    assert fit.fitted_c

    # independent reference: scipy's nonlinear least squares in (R0, A, B, C)
    # itself; the minimum is the same as the linear one in (R0, R0·A, R0·B, R0·C)
    scale = np.array([100.0, 1e-3, 1e-7, 1e-12])
    ref = least_squares(
        lambda p: cvd_r(t, *(p * scale)) - r,
        x0=np.array([1.0, 3.9, -5.8, -4.2]),
        xtol=1e-15,
        ftol=1e-15,
        gtol=1e-15,
    )
    assert ref.success
    r0, a, b, c = ref.x * scale
    assert fit.curve.r0_ohm == pytest.approx(r0, rel=1e-9)
    assert fit.curve.a == pytest.approx(a, rel=1e-7)
    assert fit.curve.b == pytest.approx(b, rel=1e-6)
    assert fit.curve.c == pytest.approx(c, rel=1e-5)
    np.testing.assert_allclose(fit.residual_ohm, -ref.fun, atol=1e-9)


def test_residual_in_kelvin_is_what_the_fitted_curve_reads_minus_the_reference() -> None:
    rng = np.random.default_rng(3)
    t = np.array([-100, -50, 0, 100, 200, 300, 400], dtype=np.float64)
    r = cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C) + rng.normal(0.0, 0.01, t.size)
    fit = fit_cvd(t, r)
    t_read, flags = temperature(r, fit.curve)
    assert not flags.any()
    # residual/slope is the first-order term; at 0.01 ohm the second-order
    # term is (B/A)·(0.03 °C)² ≈ 1e-7 °C
    np.testing.assert_allclose(fit.residual_c, t_read - t, atol=1e-6)
    assert fit.rms_residual_c == pytest.approx(np.sqrt(np.mean((t_read - t) ** 2)), rel=1e-3)


def test_c_is_held_at_the_standard_value_when_no_point_is_below_zero() -> None:
    t = np.array([0.0, 100.0, 200.0, 300.0], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C))
    assert not fit.fitted_c
    assert fit.n_coefficients == 3
    assert fit.curve.c == IEC_C  # IEC 60751:2008, 4.2
    assert fit.dof == 1


def test_c_is_held_when_too_few_points_lie_below_zero_and_says_so() -> None:
    t = np.array([-60.0, 0.0, 150.0], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C))
    assert not fit.fitted_c
    assert fit.curve.a == pytest.approx(IEC_A, rel=1e-10)
    assert any("C not fitted" in w for w in fit.warnings)


def test_c_fixed_is_used_for_points_below_zero() -> None:
    t = np.array([-150.0, -60.0, 0.0, 150.0, 300.0], dtype=np.float64)
    c_own = -3.5e-12
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, c_own), fit_c=False, c_fixed=c_own)
    assert fit.curve.c == c_own
    assert fit.rms_residual_ohm < 1e-10


def test_exactly_determined_fit_is_allowed_and_says_so() -> None:
    t = np.array([-100.0, 0.0, 100.0, 400.0], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C), fit_c=True)
    assert fit.dof == 0
    assert np.isnan(fit.residual_std_ohm)
    assert any("exactly determined" in w for w in fit.warnings)
    assert fit.curve.c == pytest.approx(IEC_C, rel=1e-6)


def test_clustered_points_warn_of_poor_conditioning() -> None:
    t = np.array([100.0, 100.01, 100.02, 100.03], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C))
    assert fit.condition_number > 1e6
    assert any("poorly conditioned" in w for w in fit.warnings)


def test_c_fitted_from_a_point_just_below_zero_warns_that_it_is_noise() -> None:
    t = np.array([-5.0, 0.0, 100.0, 200.0, 300.0], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C))
    assert fit.fitted_c
    assert any("barely acts" in w for w in fit.warnings)


@pytest.mark.parametrize(
    ("t", "r", "kwargs", "message"),
    [
        ([0.0, 100.0], [100.0, 138.5], {}, "cannot determine 3 coefficients"),
        ([-50.0, 0.0, 100.0], [80.3, 100.0, 138.5], {"fit_c": True}, "cannot determine 4 coefficients"),
        ([100.0, 100.0, 100.0, 100.0], [138.50, 138.51, 138.49, 138.50], {}, "only 1 distinct"),
        ([0.0, 0.0, 100.0, 100.0], [100.0, 100.01, 138.5, 138.51], {}, "only 2 distinct"),
        ([-50.0, -50.0, 0.0, 100.0, 100.0], [80.3, 80.3, 100.0, 138.5, 138.5], {"fit_c": True}, "only 3 distinct"),
        ([0.0, 100.0, 200.0, 300.0], [100.0, 138.5, 175.9, 212.1], {"fit_c": True}, "no calibration point lies below 0"),
        ([0.0, 100.0, 900.0], [100.0, 138.5, 404.0], {}, "outside the Callendar"),
        ([0.0, 100.0, 200.0], [100.0, -138.5, 175.9], {}, "finite and positive"),
        ([0.0, 100.0, 200.0], [100.0, np.nan, 175.9], {}, "finite and positive"),
        ([0.0, np.inf, 200.0], [100.0, 138.5, 175.9], {}, "must be finite"),
        ([0.0, 100.0, 200.0], [100.0, 138.5], {}, "equal length"),
        # falling with temperature: not a platinum curve
        ([0.0, 100.0, 200.0], [100.0, 90.0, 80.0], {}, "not a platinum curve"),
    ],
)
def test_fit_refuses_points_that_cannot_determine_the_coefficients(t, r, kwargs, message) -> None:
    with pytest.raises(CalibrationError, match=message):
        fit_cvd(t, r, **kwargs)


def test_rank_deficient_design_is_refused() -> None:
    # Worked by hand: with C held at −1.5e-8 the R0 column at −100 °C is
    # 1 + C·(−200)·(−100)³ = −2, and (−2, 1, 1) = 0.015·(−100, 100, 200)
    # − 5e-5·(1e4, 1e4, 4e4): the three columns are dependent although the
    # three temperatures are distinct.
    with pytest.raises(CalibrationError, match="rank 2 < 3.*c_fixed"):
        fit_cvd([-100.0, 100.0, 200.0], [60.26, 138.51, 175.86], fit_c=False, c_fixed=-1.5e-8)


def test_refusals_are_input_errors_for_the_cli() -> None:
    with pytest.raises(InputError):
        fit_cvd([0.0], [100.0])


def test_span_and_extrapolation_flags() -> None:
    t = np.array([-40.0, 0.0, 80.0, 160.0, 240.0], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C))
    probe = np.array([-40.0, -40.1, 100.0, 240.0, 240.1, np.nan], dtype=np.float64)
    np.testing.assert_array_equal(fit.in_span(probe), [True, False, True, True, False, False])
    flags = fit.extrapolation_flags(probe)
    assert flags.dtype == np.uint16
    x = int(Flag.CALIBRATION_EXTRAPOLATED)
    np.testing.assert_array_equal(flags, [0, x, 0, 0, x, 0])


def test_fit_result_is_frozen_and_its_arrays_read_only() -> None:
    t = np.array([0.0, 100.0, 200.0, 300.0], dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, 100.0, IEC_A, IEC_B, IEC_C))
    assert isinstance(fit, CalibrationFit)
    with pytest.raises(AttributeError):
        fit.dof = 3  # type: ignore[misc]
    with pytest.raises(ValueError):
        fit.residual_ohm[0] = 1.0


# temperatures on a 25 °C grid, at least six, reaching −100 °C or below and
# 200 °C or above: a calibration that pins all four coefficients down
_GRID = [float(v) for v in range(-200, 851, 25)]
_points = st.lists(st.sampled_from(_GRID), min_size=6, max_size=14, unique=True).filter(
    lambda ts: min(ts) <= -100.0 and max(ts) >= 200.0
)


@settings(max_examples=60, deadline=None)
@given(
    ts=_points,
    r0=st.floats(50.0, 1100.0),
    a=st.floats(3.85e-3, 3.95e-3),
    b=st.floats(-6.3e-7, -5.3e-7),
    c=st.floats(-6e-12, -2.5e-12),
)
def test_fit_of_exact_points_recovers_random_plausible_coefficients(ts, r0, a, b, c) -> None:
    t = np.array(sorted(ts), dtype=np.float64)
    fit = fit_cvd(t, cvd_r(t, r0, a, b, c))
    assert fit.fitted_c
    assert fit.curve.r0_ohm == pytest.approx(r0, rel=1e-10)
    assert fit.curve.a == pytest.approx(a, rel=1e-8)
    assert fit.curve.b == pytest.approx(b, rel=1e-6)
    assert fit.curve.c == pytest.approx(c, rel=1e-5)
