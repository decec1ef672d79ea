"""Callendar–Van Dusen (IEC 60751) against outside references.

References used here:
- the IEC 60751:2008 reference table (Pt100, ITS-90) at its printed resolution;
- the equation and coefficients of IEC 60751:2008, 4.2, written out below in
  plain Python floats (``cvd_ohm``) independently of the code under test;
- scipy.optimize.brentq on that polynomial as the reference inverse.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from soaklog.sensors.cvd import IEC_60751, CvdCurve, resistance, slope, temperature
from soaklog.sensors.flags import FLAG_DTYPE, Flag, flag_names

# IEC 60751:2008, 4.2: A = 3.9083e-3 /°C, B = -5.775e-7 /°C², C = -4.183e-12 /°C⁴,
# C acting below 0 °C only, range -200…850 °C
A_IEC = 3.9083e-3
B_IEC = -5.775e-7
C_IEC = -4.183e-12
T_MIN_C = -200.0
T_MAX_C = 850.0

# issue requirement: the inverse is exact to 0.1 mK over the whole range
INVERSE_TOL_C = 1e-4

SLOW_OK = settings(deadline=None, suppress_health_check=[HealthCheck.too_slow])


def cvd_ohm(t_c: float, r0: float = 100.0, a: float = A_IEC, b: float = B_IEC, c: float = C_IEC) -> float:
    """Reference R(t) written out from IEC 60751:2008, 4.2, one value at a time."""
    w = 1.0 + a * t_c + b * t_c * t_c
    if t_c < 0.0:
        w += c * (t_c - 100.0) * t_c**3
    return r0 * w


def brentq_c(
    r_ohm: float,
    r0: float = 100.0,
    a: float = A_IEC,
    b: float = B_IEC,
    c: float = C_IEC,
    lo: float = T_MIN_C,
    hi: float = T_MAX_C,
) -> float:
    """Reference inverse: scipy's bracketing root finder on the reference polynomial."""
    return brentq(lambda t: cvd_ohm(t, r0, a, b, c) - r_ohm, lo, hi, xtol=1e-12, rtol=1e-15, maxiter=500)


# ---------------------------------------------------------------------------
# The reference table
# ---------------------------------------------------------------------------

# IEC 60751:2008 table 1 (Pt100, ITS-90), 2 decimals. Values -200…600 °C in 10 °C
# steps as printed in the Sensor Scientific Inc. "Reference Table for Pt RTD
# Elements" (which agrees with IEC 60751:2008 table 1 at every entry except
# -160 °C, misprinted there as 35.34; 35.54 is from memory of IEC 60751:2008
# table 1). -196 °C and 650…850 °C from memory of IEC 60751:2008 table 1.
PT100_TABLE_OHM = {
    -200: 18.52, -196: 20.25, -190: 22.83, -180: 27.10, -170: 31.34, -160: 35.54,
    -150: 39.72, -140: 43.88, -130: 48.00, -120: 52.11, -110: 56.19, -100: 60.26,
    -90: 64.30, -80: 68.33, -70: 72.33, -60: 76.33, -50: 80.31, -40: 84.27,
    -30: 88.22, -20: 92.16, -10: 96.09, 0: 100.00, 10: 103.90, 20: 107.79,
    30: 111.67, 40: 115.54, 50: 119.40, 60: 123.24, 70: 127.08, 80: 130.90,
    90: 134.71, 100: 138.51, 110: 142.29, 120: 146.07, 130: 149.83, 140: 153.58,
    150: 157.33, 160: 161.05, 170: 164.77, 180: 168.48, 190: 172.17, 200: 175.86,
    210: 179.53, 220: 183.19, 230: 186.84, 240: 190.47, 250: 194.10, 260: 197.71,
    270: 201.31, 280: 204.90, 290: 208.48, 300: 212.05, 310: 215.61, 320: 219.15,
    330: 222.68, 340: 226.21, 350: 229.72, 360: 233.21, 370: 236.70, 380: 240.18,
    390: 243.64, 400: 247.09, 410: 250.53, 420: 253.96, 430: 257.38, 440: 260.78,
    450: 264.18, 460: 267.56, 470: 270.93, 480: 274.29, 490: 277.64, 500: 280.98,
    510: 284.30, 520: 287.62, 530: 290.92, 540: 294.21, 550: 297.49, 560: 300.75,
    570: 304.01, 580: 307.25, 590: 310.49, 600: 313.71,
    650: 329.64, 700: 345.28, 750: 360.64, 800: 375.70, 850: 390.48,
}  # fmt: skip

# the table is printed to 0.01 ohm: a value is right if within half a digit
# (several entries are exact halves, e.g. 100 °C -> 138.5055 ohm printed 138.51)
TABLE_HALF_DIGIT_OHM = 0.005

TABLE_ITEMS = sorted(PT100_TABLE_OHM.items())


def test_table_covers_the_whole_range() -> None:
    # guards the table itself: both ends, -196 °C and at least every 50 °C
    temps = set(PT100_TABLE_OHM)
    assert {-200, -196, 0, 850} <= temps
    assert set(range(-200, 851, 50)) <= temps


@pytest.mark.parametrize(("t_c", "r_ohm"), TABLE_ITEMS)
def test_pt100_resistance_matches_iec_table(t_c: int, r_ohm: float) -> None:
    got = float(resistance(float(t_c)))
    assert abs(got - r_ohm) <= TABLE_HALF_DIGIT_OHM


def test_pt100_resistance_matches_iec_table_as_one_array() -> None:
    t = np.array([t for t, _ in TABLE_ITEMS], dtype=np.float64)
    expected = np.array([r for _, r in TABLE_ITEMS], dtype=np.float64)
    got = resistance(t)
    assert got.dtype == np.float64
    assert np.all(np.abs(got - expected) <= TABLE_HALF_DIGIT_OHM)


@pytest.mark.parametrize(("t_c", "r_ohm"), TABLE_ITEMS)
def test_pt1000_is_the_table_times_ten(t_c: int, r_ohm: float) -> None:
    # IEC 60751:2008, 4.2: R0 scales the whole table (Pt1000 = 10 × Pt100);
    # the printed resolution scales with it
    got = float(resistance(float(t_c), IEC_60751.with_r0(1000.0)))
    assert abs(got - 10.0 * r_ohm) <= 10.0 * TABLE_HALF_DIGIT_OHM


@pytest.mark.parametrize(("t_c", "r_ohm"), TABLE_ITEMS)
def test_pt500_is_the_table_times_five(t_c: int, r_ohm: float) -> None:
    got = float(resistance(float(t_c), IEC_60751.with_r0(500.0)))
    assert abs(got - 5.0 * r_ohm) <= 5.0 * TABLE_HALF_DIGIT_OHM


# the printed -200 °C value (18.52) lies below R(-200 °C) = 18.52008 ohm, i.e.
# 0.0002 K outside the range: it is tested on its own below
INVERSE_TABLE_ITEMS = [(t, r) for t, r in TABLE_ITEMS if t != -200]


@pytest.mark.parametrize(("t_c", "r_ohm"), INVERSE_TABLE_ITEMS)
def test_table_resistance_converts_back_within_printed_resolution(t_c: int, r_ohm: float) -> None:
    t, flags = temperature(r_ohm)
    # half a printed digit in ohm, expressed in kelvin through the local slope
    dr_dt = (cvd_ohm(t_c + 0.01) - cvd_ohm(t_c - 0.01)) / 0.02
    assert int(flags) == 0
    assert abs(float(t) - t_c) <= TABLE_HALF_DIGIT_OHM / dr_dt + INVERSE_TOL_C


def test_printed_minus_200_value_is_just_outside_and_refused() -> None:
    # IEC 60751:2008, 4.2: R(-200 °C) = 18.52008 ohm, so the rounded table value
    # 18.52 is 0.0002 K below the range: refused, never clamped or extrapolated
    assert cvd_ohm(-200.0) > 18.52
    t, flags = temperature(18.52)
    assert math.isnan(float(t))
    assert int(flags) == Flag.OUT_OF_RANGE


# ---------------------------------------------------------------------------
# Coefficients and alpha
# ---------------------------------------------------------------------------


def test_default_coefficients_are_iec_60751() -> None:
    # IEC 60751:2008, 4.2
    assert IEC_60751.r0_ohm == 100.0
    assert IEC_60751.a == A_IEC
    assert IEC_60751.b == B_IEC
    assert IEC_60751.c == C_IEC
    assert (IEC_60751.t_min_c, IEC_60751.t_max_c) == (T_MIN_C, T_MAX_C)


def test_default_coefficients_agree_with_alpha_delta_beta_form() -> None:
    # Fluke 2640A manual, appendix D: the ITS-90 (modified DIN 43760) curve is
    # alpha = 0.00385055, delta = 1.49978574, beta = 0.10863383; with
    # A = alpha(1 + delta/100), B = -alpha·delta/1e4, C = -alpha·beta/1e8
    alpha, delta, beta = 0.00385055, 1.49978574, 0.10863383
    assert IEC_60751.a == pytest.approx(alpha * (1 + delta / 100), rel=1e-4)
    assert IEC_60751.b == pytest.approx(-alpha * delta / 1e4, rel=1e-3)
    assert IEC_60751.c == pytest.approx(-alpha * beta / 1e8, rel=1e-3)


def test_alpha_of_iec_curve() -> None:
    # Fluke 2640A manual, appendix D: alpha = 0.00385055 for the ITS-90 curve
    # (IEC 60751:2008, 1 writes it conventionally as 3.851e-3)
    assert IEC_60751.alpha == pytest.approx(0.00385055, abs=1e-12)
    assert abs(IEC_60751.alpha - 3.851e-3) < 0.5e-6


def test_with_r0_keeps_coefficients_and_range() -> None:
    pt1000 = IEC_60751.with_r0(1000)
    assert pt1000.r0_ohm == 1000.0
    assert (pt1000.a, pt1000.b, pt1000.c) == (A_IEC, B_IEC, C_IEC)
    assert (pt1000.t_min_c, pt1000.t_max_c) == (T_MIN_C, T_MAX_C)
    assert pt1000.alpha == IEC_60751.alpha
    assert IEC_60751.r0_ohm == 100.0  # the original is untouched


def test_resistance_evaluates_the_polynomial_outside_the_range_too() -> None:
    # documented: resistance() does not range-check; the reference equation applies
    for t_c in (-210.0, 900.0):
        assert float(resistance(t_c)) == pytest.approx(cvd_ohm(t_c), rel=1e-14)


def test_resistance_of_a_negative_scalar_uses_the_c_term() -> None:
    # the C term below 0 °C must apply to 0-d input as well as to arrays
    for t_in in (-100.0, np.float64(-100.0), np.array(-100.0)):
        assert float(resistance(t_in)) == pytest.approx(cvd_ohm(-100.0), rel=1e-14)


# ---------------------------------------------------------------------------
# The inverse against scipy.optimize.brentq
# ---------------------------------------------------------------------------

# every 0.1 °C strictly inside the range, plus points hugging both ends
DENSE_T_C = np.concatenate(
    [
        [-199.999999, -199.9999, -199.99],
        np.linspace(-199.9, 849.9, 10501),
        [849.99, 849.9999, 849.999999],
    ]
)


def test_inverse_matches_brentq_on_a_dense_grid() -> None:
    r = np.array([cvd_ohm(t) for t in DENSE_T_C], dtype=np.float64)
    ref = np.array([brentq_c(x) for x in r], dtype=np.float64)
    t, flags = temperature(r)
    assert np.all(flags == 0)
    assert np.max(np.abs(t - ref)) <= INVERSE_TOL_C
    # and the reference itself recovers the grid (guards the reference)
    assert np.max(np.abs(ref - DENSE_T_C)) <= 1e-9


def test_inverse_below_zero_matches_brentq_finely() -> None:
    # the Newton branch: every 0.001 °C over the coldest and the warmest sub-zero decades
    t_grid = np.concatenate([np.linspace(-199.99, -190.0, 9991), np.linspace(-10.0, -1e-6, 10001)])
    r = np.array([cvd_ohm(x) for x in t_grid], dtype=np.float64)
    ref = np.array([brentq_c(x) for x in r], dtype=np.float64)
    t, flags = temperature(r)
    assert np.all(flags == 0)
    assert np.max(np.abs(t - ref)) <= INVERSE_TOL_C


R_MIN_OHM = cvd_ohm(T_MIN_C)
R_MAX_OHM = cvd_ohm(T_MAX_C)


@SLOW_OK
@given(st.floats(min_value=R_MIN_OHM * (1 + 1e-12), max_value=R_MAX_OHM * (1 - 1e-12)))
@example(100.0)
@example(100.0 - 1e-12)
@example(100.0 + 1e-12)
@example(138.5055)
def test_inverse_matches_brentq(r_ohm: float) -> None:
    t, flags = temperature(r_ohm)
    assert int(flags) == 0
    assert abs(float(t) - brentq_c(r_ohm)) <= INVERSE_TOL_C


@SLOW_OK
@given(st.floats(min_value=T_MIN_C, max_value=T_MAX_C))
def test_t_to_r_to_t_round_trip(t_c: float) -> None:
    t, flags = temperature(resistance(t_c))
    assert int(flags) == 0
    assert abs(float(t) - t_c) <= INVERSE_TOL_C


@SLOW_OK
@given(st.floats(min_value=R_MIN_OHM * (1 + 1e-12), max_value=R_MAX_OHM * (1 - 1e-12)))
def test_r_to_t_to_r_round_trip(r_ohm: float) -> None:
    t, flags = temperature(r_ohm)
    assert int(flags) == 0
    back = float(resistance(t))
    # 0.1 mK expressed in ohm through the local slope (at most 0.40 ohm/K for a Pt100)
    assert abs(back - r_ohm) <= INVERSE_TOL_C * 0.40


@SLOW_OK
@given(
    st.sampled_from([T_MIN_C, T_MAX_C]),
    st.floats(min_value=10.0, max_value=10_000.0),
)
# R0 values for which the range check once rounded R(t_min) or R(t_max) outside
@example(T_MIN_C, 99.987)
@example(T_MIN_C, 100.0123)
@example(T_MAX_C, 465.2368203282008)
def test_range_ends_are_inside_for_any_r0(t_limit_c: float, r0_ohm: float) -> None:
    # IEC 60751:2008, 4.2: the equation holds over -200…850 °C, ends included
    curve = IEC_60751.with_r0(r0_ohm)
    t, flags = temperature(resistance(t_limit_c, curve), curve)
    assert int(flags) == 0
    assert abs(float(t) - t_limit_c) <= INVERSE_TOL_C


@pytest.mark.parametrize("r0_ohm", [100.0, 500.0, 1000.0])
@pytest.mark.parametrize("t_limit_c", [T_MIN_C, T_MAX_C])
def test_range_ends_are_inside_for_nominal_r0(t_limit_c: float, r0_ohm: float) -> None:
    curve = IEC_60751.with_r0(r0_ohm)
    t, flags = temperature(resistance(t_limit_c, curve), curve)
    assert int(flags) == 0
    assert abs(float(t) - t_limit_c) <= INVERSE_TOL_C


# ---------------------------------------------------------------------------
# Monotonicity
# ---------------------------------------------------------------------------


def test_resistance_rises_strictly_over_the_range() -> None:
    t = np.linspace(T_MIN_C, T_MAX_C, 200_001)
    assert np.all(np.diff(resistance(t)) > 0)


def test_temperature_rises_strictly_over_the_range() -> None:
    r = np.linspace(R_MIN_OHM * (1 + 1e-12), R_MAX_OHM * (1 - 1e-12), 200_001)
    t, flags = temperature(r)
    assert np.all(flags == 0)
    assert np.all(np.diff(t) > 0)


def test_both_directions_rise_across_zero() -> None:
    # the branch change at 0 °C must not leave a step or a dip
    t_in = np.array([-1e-6, -1e-9, 0.0, 1e-9, 1e-6])
    assert np.all(np.diff(resistance(t_in)) > 0)
    r_in = np.array([100.0 - 1e-7, 100.0 - 1e-10, 100.0, 100.0 + 1e-10, 100.0 + 1e-7])
    t, flags = temperature(r_in)
    assert np.all(flags == 0)
    assert np.all(np.diff(t) > 0)
    assert float(temperature(100.0)[0]) == 0.0


# ---------------------------------------------------------------------------
# Range and bad input
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("t_c", [-200.001, -200.1, -210.0, -220.0, 850.001, 850.1, 900.0, 1000.0])
def test_just_outside_the_range_is_nan_and_out_of_range(t_c: float) -> None:
    # IEC 60751:2008, 4.2: the equation is defined over -200…850 °C only
    t, flags = temperature(cvd_ohm(t_c))
    assert math.isnan(float(t))
    assert int(flags) == Flag.OUT_OF_RANGE
    assert flag_names(flags) == ["out_of_range"]


@pytest.mark.parametrize("r_ohm", [1e-300, 1.0, 10.0, 18.0, 391.0, 1e4, 1e6, 9.9e37])
def test_positive_resistance_far_outside_is_out_of_range(r_ohm: float) -> None:
    # 9.9e37 is the SCPI overload value (SCPI-1999); still a positive number
    t, flags = temperature(r_ohm)
    assert math.isnan(float(t))
    assert int(flags) == Flag.OUT_OF_RANGE


@pytest.mark.parametrize(
    "r_ohm",
    [
        -1e-12,
        -1.0,
        -100.0,
        -9.9e37,
        0.0,
        -0.0,
        math.nan,
        math.inf,
        -math.inf,
        -1e300,
        -1e156,
    ],
)
def test_invalid_resistance_is_nan_and_invalid_input(r_ohm: float) -> None:
    t, flags = temperature(r_ohm)
    assert math.isnan(float(t))
    assert int(flags) == Flag.INVALID_INPUT
    assert flag_names(flags) == ["invalid_input"]


def test_bad_values_do_not_spoil_good_neighbours() -> None:
    r = np.array([math.nan, 100.0, -5.0, 138.5055, math.inf, 0.0, 1e6, 80.31], dtype=np.float64)
    t, flags = temperature(r)
    expected_flags = [
        Flag.INVALID_INPUT, 0, Flag.INVALID_INPUT, 0, Flag.INVALID_INPUT, Flag.INVALID_INPUT,
        Flag.OUT_OF_RANGE, 0,
    ]  # fmt: skip
    assert flags.tolist() == [int(f) for f in expected_flags]
    good = flags == 0
    assert np.all(np.isnan(t[~good]))
    for ti, ri in zip(t[good], r[good], strict=True):
        assert abs(ti - brentq_c(ri)) <= INVERSE_TOL_C


def _check_flags_consistent(r: np.ndarray, t: np.ndarray, flags: np.ndarray) -> None:
    withheld = np.isnan(t)
    assert np.all((flags != 0) == withheld)
    finite_pos = np.isfinite(r) & (r > 0)
    assert np.all(flags[~finite_pos] == Flag.INVALID_INPUT)
    inside = finite_pos & (r >= R_MIN_OHM * (1 + 1e-12)) & (r <= R_MAX_OHM * (1 - 1e-12))
    assert np.all(flags[inside] == 0)
    outside = finite_pos & ((r < R_MIN_OHM * (1 - 1e-12)) | (r > R_MAX_OHM * (1 + 1e-12)))
    assert np.all(flags[outside] == Flag.OUT_OF_RANGE)


@SLOW_OK
@given(
    st.lists(
        st.one_of(
            st.floats(min_value=-1e100, max_value=1e100),
            st.floats(min_value=R_MIN_OHM, max_value=R_MAX_OHM),
            st.sampled_from([math.nan, math.inf, 0.0, -0.0]),
        ),
        max_size=40,
    )
)
def test_any_input_gives_a_value_or_a_flag(values: list[float]) -> None:
    # bad input becomes a flag, never an exception and never a plausible number
    r = np.array(values, dtype=np.float64)
    t, flags = temperature(r)
    assert t.shape == r.shape and flags.shape == r.shape
    _check_flags_consistent(r, t, flags)


@SLOW_OK
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True), max_size=40))
@example([-math.inf])
# once raised "All-NaN slice encountered" from the Newton loop
@example([-1e300, 100.0])
@example([-1e156])
def test_any_float_at_all_gives_a_value_or_a_flag(values: list[float]) -> None:
    r = np.array(values, dtype=np.float64)
    t, flags = temperature(r)
    _check_flags_consistent(r, t, flags)


# ---------------------------------------------------------------------------
# Shapes, dtypes, size
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("r_in", [138.5055, np.float64(138.5055), np.array(138.5055), 100])
def test_scalar_in_gives_zero_d_arrays_out(r_in: object) -> None:
    t, flags = temperature(r_in)
    assert t.shape == () and flags.shape == ()
    assert t.dtype == np.float64 and flags.dtype == FLAG_DTYPE == np.uint16


def test_two_d_shape_is_kept() -> None:
    t_in = np.linspace(-150.0, 800.0, 12).reshape(3, 4)
    r = resistance(t_in)
    assert r.shape == (3, 4)
    t, flags = temperature(r)
    assert t.shape == (3, 4) and flags.shape == (3, 4)
    assert np.max(np.abs(t - t_in)) <= INVERSE_TOL_C
    assert slope(t_in).shape == (3, 4)


def test_nested_list_and_empty_input() -> None:
    t, flags = temperature([[100.0, 138.5055], [60.26, 313.71]])
    assert t.shape == (2, 2) and np.all(flags == 0)
    t, flags = temperature(np.array([], dtype=np.float64))
    assert t.shape == (0,) and flags.shape == (0,)
    assert t.dtype == np.float64 and flags.dtype == np.uint16


def test_a_million_values_convert_exactly() -> None:
    n = 1_000_000
    r = np.linspace(R_MIN_OHM * (1 + 1e-12), R_MAX_OHM * (1 - 1e-12), n)
    t, flags = temperature(r)
    assert t.shape == (n,) and t.dtype == np.float64
    assert not np.any(flags)
    # round trip over every value, and brentq on a sample spread over all chunks
    assert np.max(np.abs(resistance(t) - r)) <= INVERSE_TOL_C * 0.40
    idx = np.random.default_rng(60751).integers(0, n, 300)
    ref = np.array([brentq_c(r[i]) for i in idx])
    assert np.max(np.abs(t[idx] - ref)) <= INVERSE_TOL_C


def test_a_million_mixed_values_keep_flags_in_place() -> None:
    # bad values scattered through many chunks land at their own positions
    rng = np.random.default_rng(1)
    n = 1_000_000
    r = rng.uniform(R_MIN_OHM * 1.0001, R_MAX_OHM * 0.9999, n)
    bad = rng.choice(n, 1000, replace=False)
    r[bad[:500]] = -1.0
    r[bad[500:]] = 1e6
    t, flags = temperature(r)
    assert np.all(flags[bad[:500]] == Flag.INVALID_INPUT)
    assert np.all(flags[bad[500:]] == Flag.OUT_OF_RANGE)
    assert np.count_nonzero(flags) == 1000
    assert np.count_nonzero(np.isnan(t)) == 1000


# ---------------------------------------------------------------------------
# Calibrated (non-standard) coefficients
# ---------------------------------------------------------------------------


@SLOW_OK
@given(
    r0=st.floats(min_value=10.0, max_value=2000.0),
    a=st.floats(min_value=3.80e-3, max_value=4.00e-3),
    b=st.floats(min_value=-6.2e-7, max_value=-5.5e-7),
    c=st.one_of(st.just(0.0), st.floats(min_value=-8e-12, max_value=-1e-12)),
    t_c=st.floats(min_value=-199.99, max_value=849.99),
)
def test_calibrated_coefficients_invert_exactly(r0: float, a: float, b: float, c: float, t_c: float) -> None:
    curve = CvdCurve(r0_ohm=r0, a=a, b=b, c=c, name="calibrated")
    r = cvd_ohm(t_c, r0, a, b, c)
    t, flags = temperature(r, curve)
    assert int(flags) == 0
    assert abs(float(t) - brentq_c(r, r0, a, b, c)) <= INVERSE_TOL_C
    assert float(resistance(t_c, curve)) == pytest.approx(r, rel=1e-13)


def test_calibrated_curve_inverts_on_a_grid() -> None:
    # a certificate-like set (common practice, no published source): R0 and A, B, C
    # each slightly off nominal, as an individual calibration gives them
    r0, a, b, c = 100.0183, 3.91012e-3, -5.8113e-7, -4.07e-12
    curve = CvdCurve(r0_ohm=r0, a=a, b=b, c=c, name="certificate")
    t_grid = np.linspace(-199.5, 849.5, 2101)
    r = np.array([cvd_ohm(x, r0, a, b, c) for x in t_grid])
    t, flags = temperature(r, curve)
    ref = np.array([brentq_c(x, r0, a, b, c) for x in r])
    assert np.all(flags == 0)
    assert np.max(np.abs(t - ref)) <= INVERSE_TOL_C


@pytest.mark.parametrize(
    "kwargs",
    [
        {"b": -5e-6},  # dR/dt = A + 2Bt reaches zero near 390 °C
        {"b": -3e-6},  # ... near 650 °C
        {"c": 1e-9},  # falls again below about -90 °C
        {"a": 0.0},
        {"a": -3.9083e-3},
        {"a": math.nan},
        {"b": math.inf},
        {"r0_ohm": 0.0},
        {"r0_ohm": -100.0},
        {"r0_ohm": math.nan},
        {"t_min_c": 0.0},
        {"t_max_c": -10.0},
        {"b": math.nan},
        {"c": math.nan},
    ],
    ids=lambda kw: ",".join(f"{k}={v}" for k, v in kw.items()),
)
def test_unusable_coefficients_are_refused(kwargs: dict[str, float]) -> None:
    # the inverse is unique only where R(t) rises over the whole range
    with pytest.raises(ValueError):
        CvdCurve(**kwargs)


def test_refusal_message_names_the_coefficients() -> None:
    with pytest.raises(ValueError, match="-5e-06"):
        CvdCurve(b=-5e-6)


# ---------------------------------------------------------------------------
# slope()
# ---------------------------------------------------------------------------

SLOPE_T_C = [-199.0, -150.0, -100.0, -50.0, -10.0, -1.0, 1.0, 10.0, 100.0, 300.0, 600.0, 849.0]


@pytest.mark.parametrize("t_c", SLOPE_T_C)
@pytest.mark.parametrize("r0", [100.0, 1000.0])
def test_slope_matches_a_central_difference(t_c: float, r0: float) -> None:
    h = 1e-3
    numeric = (cvd_ohm(t_c + h, r0) - cvd_ohm(t_c - h, r0)) / (2 * h)
    got = float(slope(t_c, IEC_60751.with_r0(r0)))
    assert got == pytest.approx(numeric, rel=1e-7)


def test_slope_at_zero_is_r0_times_a() -> None:
    # IEC 60751:2008, 4.2: dR/dt at 0 °C is R0·A (the C term vanishes there)
    assert float(slope(0.0)) == pytest.approx(100.0 * A_IEC, rel=1e-15)
    assert float(slope(0.0, IEC_60751.with_r0(1000.0))) == pytest.approx(1000.0 * A_IEC, rel=1e-15)


def test_slope_is_continuous_across_zero() -> None:
    assert float(slope(-1e-9)) == pytest.approx(float(slope(1e-9)), rel=1e-9)


def test_slope_of_a_calibrated_curve_matches_a_central_difference() -> None:
    r0, a, b, c = 99.9712, 3.9124e-3, -5.9e-7, -3.6e-12
    curve = CvdCurve(r0_ohm=r0, a=a, b=b, c=c)
    h = 1e-3
    for t_c in (-180.0, -20.0, 20.0, 700.0):
        numeric = (cvd_ohm(t_c + h, r0, a, b, c) - cvd_ohm(t_c - h, r0, a, b, c)) / (2 * h)
        assert float(slope(t_c, curve)) == pytest.approx(numeric, rel=1e-7)


def test_mean_slope_zero_to_hundred_is_alpha() -> None:
    # IEC 60751:2008, 1: alpha = (R100 - R0) / (100 °C · R0)
    assert (float(resistance(100.0)) - 100.0) / (100.0 * 100.0) == pytest.approx(IEC_60751.alpha, rel=1e-12)
