"""Tests of the NTC thermistor equations (daq.sensors.ntc)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy.optimize import brentq

from soaklog.errors import CalibrationError, InputError
from soaklog.sensors.flags import Flag
from soaklog.sensors.ntc import KELVIN_OFFSET, BetaNtc, SteinhartHart, fit_steinhart_hart

# Steinhart–Hart coefficients published for the 10 kΩ (25 °C) "10K3A1" /
# YSI 44006 thermistor curve; from memory of thermistor makers' application
# notes, which quote them to these seven digits
PUBLISHED = SteinhartHart(a=1.129241e-3, b=2.341077e-4, c=8.775468e-8)

INVALID = int(Flag.INVALID_INPUT)
OUT = int(Flag.OUT_OF_RANGE)


def sh_forward_c(r_ohm: float, a: float, b: float, c: float) -> float:
    """Steinhart & Hart (1968) written out here: t = 1/(a + b·ln R + c·ln³R) − 273.15."""
    ln_r = math.log(r_ohm)
    return 1.0 / (a + b * ln_r + c * ln_r**3) - 273.15


@pytest.mark.parametrize(
    ("r_ohm", "t_c"),
    [
        # from memory of the YSI 44006 (10K3A1) resistance–temperature table
        (32650.0, 0.0),
        (10000.0, 25.0),
        (3601.0, 50.0),
    ],
)
def test_published_coefficients_read_their_table(r_ohm: float, t_c: float) -> None:
    t, flags = PUBLISHED.temperature(r_ohm)
    # a three-term fit reproduces such a table to a few mK; the table's
    # resolution of 1 ohm is 7 mK at 50 °C (dlnR/dT ≈ β/T² ≈ 0.038 /K)
    assert float(t) == pytest.approx(t_c, abs=0.01)
    assert flags == 0


def test_forward_equation_is_steinhart_hart_as_published() -> None:
    r = np.array([150.0, 1.0e3, 4.7e3, 1.0e4, 3.3e4, 1.0e5, 1.0e6], dtype=np.float64)
    t, flags = PUBLISHED.temperature(r)
    expected = [sh_forward_c(v, PUBLISHED.a, PUBLISHED.b, PUBLISHED.c) for v in r]
    np.testing.assert_allclose(t, expected, rtol=0, atol=1e-10)
    assert not flags.any()


@pytest.mark.parametrize("t_c", [-40.0, -10.0, 0.0, 25.0, 37.0, 85.0, 150.0])
def test_inverse_matches_scipy_brentq(t_c: float) -> None:
    # independent inverse: bracketed root of the forward equation in ln R
    ln_r = brentq(
        lambda y: sh_forward_c(math.exp(y), PUBLISHED.a, PUBLISHED.b, PUBLISHED.c) - t_c,
        math.log(1.0),
        math.log(1e8),
        xtol=1e-14,
        rtol=1e-15,
    )
    r, flags = PUBLISHED.resistance(t_c)
    assert float(r) == pytest.approx(math.exp(ln_r), rel=1e-11)
    assert flags == 0


@pytest.mark.parametrize(
    ("t_c", "r_ohm"),
    [
        ([0.0, 25.0, 50.0], [32650.0, 10000.0, 3601.0]),
        ([-20.0, 40.0, 120.0], [97060.0, 5330.0, 386.0]),
        ([10.0, 11.0, 12.0], [19900.0, 19000.0, 18140.0]),
    ],
)
def test_three_point_fit_matches_divided_difference_solution(t_c, r_ohm) -> None:
    # The three-point solution in divided differences, as thermistor
    # application notes give it (from memory of such notes):
    #   γ2 = (Y2−Y1)/(L2−L1), γ3 = (Y3−Y1)/(L3−L1),
    #   C = (γ3−γ2)/((L3−L2)(L1+L2+L3)), B = γ2 − C(L1²+L1L2+L2²), A = Y1 − (B + C·L1²)·L1
    L1, L2, L3 = (math.log(v) for v in r_ohm)
    Y1, Y2, Y3 = (1.0 / (v + 273.15) for v in t_c)
    g2 = (Y2 - Y1) / (L2 - L1)
    g3 = (Y3 - Y1) / (L3 - L1)
    c = (g3 - g2) / ((L3 - L2) * (L1 + L2 + L3))
    b = g2 - c * (L1 * L1 + L1 * L2 + L2 * L2)
    a = Y1 - (b + c * L1 * L1) * L1
    fit = fit_steinhart_hart(t_c, r_ohm)
    assert fit.a == pytest.approx(a, rel=1e-9)
    assert fit.b == pytest.approx(b, rel=1e-9)
    assert fit.c == pytest.approx(c, rel=1e-6)
    # and the fitted curve goes through its points
    t_back, _ = fit.temperature(r_ohm)
    np.testing.assert_allclose(t_back, t_c, atol=1e-9)


def test_three_point_fit_recovers_the_published_coefficients() -> None:
    r = [30000.0, 8000.0, 1200.0]
    t = [sh_forward_c(v, PUBLISHED.a, PUBLISHED.b, PUBLISHED.c) for v in r]
    fit = fit_steinhart_hart(t, r)
    assert fit.a == pytest.approx(PUBLISHED.a, rel=1e-9)
    assert fit.b == pytest.approx(PUBLISHED.b, rel=1e-9)
    assert fit.c == pytest.approx(PUBLISHED.c, rel=1e-7)


def test_three_point_fit_of_a_beta_curve_gives_c_zero() -> None:
    beta = BetaNtc(r0_ohm=10_000.0, beta_k=3950.0)
    t = np.array([0.0, 40.0, 90.0], dtype=np.float64)
    r, _ = beta.resistance(t)
    fit = fit_steinhart_hart(t, r)
    # the β equation is Steinhart–Hart with a = 1/T0 − ln R0/β, b = 1/β, c = 0
    assert fit.b == pytest.approx(1.0 / 3950.0, rel=1e-9)
    assert fit.a == pytest.approx(1.0 / 298.15 - math.log(10_000.0) / 3950.0, rel=1e-9)
    assert abs(fit.c) < 1e-15


@pytest.mark.parametrize(
    ("t_c", "r_ohm", "message"),
    [
        ([0.0, 25.0], [32650.0, 10000.0], "exactly three points"),
        ([0.0, 25.0, 50.0, 75.0], [32650.0, 10000.0, 3601.0, 1480.0], "exactly three points"),
        ([0.0, 25.0, 25.0], [32650.0, 10000.0, 9990.0], "share a temperature"),
        ([0.0, 25.0, 50.0], [32650.0, 10000.0, 12000.0], "do not fall"),
        ([0.0, 25.0, 50.0], [3601.0, 10000.0, 32650.0], "do not fall"),
        ([0.0, 25.0, 50.0], [32650.0, 0.0, 3601.0], "positive"),
        ([0.0, np.nan, 50.0], [32650.0, 10000.0, 3601.0], "finite"),
        ([-300.0, 25.0, 50.0], [32650.0, 10000.0, 3601.0], "above −273.15"),
        # middle point far below the curve: the cubic bends the wrong way (c < 0)
        ([0.0, 25.0, 50.0], [32650.0, 6000.0, 3601.0], "c >= 0"),
    ],
)
def test_three_point_fit_refuses_points_it_cannot_use(t_c, r_ohm, message) -> None:
    with pytest.raises(CalibrationError, match=message):
        fit_steinhart_hart(t_c, r_ohm)


@pytest.mark.parametrize(
    ("t_c", "r_ohm"),
    [
        # Worked by hand, 10 kΩ at 25 °C, β = 3950 K:
        #   R = R0·exp(β·(1/T − 1/T0)), 1/T0 = 1/298.15 K = 0.0033540164 /K
        #   0 °C:  1/273.15 = 0.0036609921; difference 3.0697569e-4 /K;
        #          × 3950 K = 1.2125540; exp = 3.3620604  -> 33 620.60 ohm
        #   50 °C: 1/323.15 = 0.0030945381; difference −2.5947829e-4 /K;
        #          × 3950 K = −1.0249393; exp = 0.35881826 -> 3 588.18 ohm
        (0.0, 33620.60),
        (25.0, 10000.0),
        (50.0, 3588.18),
    ],
)
def test_beta_equation_worked_by_hand(t_c: float, r_ohm: float) -> None:
    ntc = BetaNtc(r0_ohm=10_000.0, t0_c=25.0, beta_k=3950.0)
    r, flags = ntc.resistance(t_c)
    assert float(r) == pytest.approx(r_ohm, abs=0.01)
    t, _ = ntc.temperature(r_ohm)
    # the hand values are rounded to 0.01 ohm: ±0.005 ohm is at most
    # 0.005/3588/(β/T²) = 3.7e-5 K, at 50 °C
    assert float(t) == pytest.approx(t_c, abs=5e-5)
    assert flags == 0


def test_beta_equation_is_steinhart_hart_with_c_zero() -> None:
    ntc = BetaNtc(r0_ohm=4700.0, t0_c=20.0, beta_k=3500.0)
    t0_k = 20.0 + 273.15
    sh = SteinhartHart(a=1.0 / t0_k - math.log(4700.0) / 3500.0, b=1.0 / 3500.0, c=0.0)
    r = np.geomspace(50.0, 5e6, 41, dtype=np.float64)
    np.testing.assert_allclose(ntc.temperature(r)[0], sh.temperature(r)[0], rtol=0, atol=1e-9)
    t = np.linspace(-50.0, 250.0, 31, dtype=np.float64)
    np.testing.assert_allclose(ntc.resistance(t)[0], sh.resistance(t)[0], rtol=1e-12)


def test_beta_inverse_matches_scipy_brentq() -> None:
    ntc = BetaNtc(r0_ohm=100_000.0, t0_c=25.0, beta_k=4250.0)
    for t_c in (-30.0, 60.0, 200.0):
        ln_r = brentq(lambda y: float(ntc.temperature(math.exp(y))[0]) - t_c, 0.0, math.log(1e9), xtol=1e-14)
        assert float(ntc.resistance(t_c)[0]) == pytest.approx(math.exp(ln_r), rel=1e-11)


@settings(max_examples=100, deadline=None)
@given(r=st.floats(1.0, 1e7))
def test_resistance_to_temperature_round_trip(r: float) -> None:
    t, flags = PUBLISHED.temperature(r)
    assert flags == 0
    r_back, flags_back = PUBLISHED.resistance(t)
    assert flags_back == 0
    assert float(r_back) == pytest.approx(r, rel=1e-11)


@settings(max_examples=100, deadline=None)
@given(
    t=st.floats(-80.0, 300.0),
    a=st.floats(0.6e-3, 1.6e-3),
    b=st.floats(1.8e-4, 3.2e-4),
    c=st.one_of(st.just(0.0), st.floats(1e-30, 1e-25), st.floats(1e-9, 3e-7)),
)
def test_temperature_to_resistance_round_trip_for_random_coefficients(t, a, b, c) -> None:
    sh = SteinhartHart(a, b, c)
    r, flags = sh.resistance(t)
    assert flags == 0
    t_back, flags_back = sh.temperature(r)
    assert flags_back == 0
    assert float(t_back) == pytest.approx(t, abs=1e-9)


@settings(max_examples=100, deadline=None)
@given(t=st.floats(-80.0, 300.0), beta=st.floats(2000.0, 6000.0), r0=st.floats(100.0, 1e6))
def test_beta_round_trip(t: float, beta: float, r0: float) -> None:
    ntc = BetaNtc(r0_ohm=r0, beta_k=beta)
    r, _ = ntc.resistance(t)
    assert float(ntc.temperature(r)[0]) == pytest.approx(t, abs=1e-9)


MODELS = [PUBLISHED, BetaNtc(r0_ohm=10_000.0, beta_k=3950.0)]


@pytest.mark.parametrize("model", MODELS)
@pytest.mark.parametrize("r_ohm", [0.0, -1.0, -0.0, np.nan, np.inf, -np.inf])
def test_unusable_resistance_gives_nan_and_invalid_input(model, r_ohm: float) -> None:
    t, flags = model.temperature(np.array([10_000.0, r_ohm], dtype=np.float64))
    assert np.isfinite(t[0]) and flags[0] == 0
    assert np.isnan(t[1]) and flags[1] == INVALID


@pytest.mark.parametrize("model", MODELS)
@pytest.mark.parametrize("t_c", [-273.15, -300.0, np.nan, np.inf, -np.inf])
def test_unusable_temperature_gives_nan_and_invalid_input(model, t_c: float) -> None:
    r, flags = model.resistance(np.array([25.0, t_c], dtype=np.float64))
    assert np.isfinite(r[0]) and flags[0] == 0
    assert np.isnan(r[1]) and flags[1] == INVALID


@pytest.mark.parametrize("model", MODELS)
def test_resistance_overflow_near_absolute_zero_is_out_of_range(model) -> None:
    r, flags = model.resistance(-273.1499)
    assert np.isnan(r) and flags == OUT


def test_resistance_with_no_positive_kelvin_temperature_is_out_of_range() -> None:
    # ln(1e-10) = −23.03: a + b·ln R + c·ln³R = 1.13e-3 − 5.39e-3 − 1.07e-3 < 0
    t, flags = PUBLISHED.temperature(1e-10)
    assert np.isnan(t) and flags == OUT


def test_shapes_and_dtypes_follow_the_input() -> None:
    r = np.full((2, 3), 10_000.0, dtype=np.float64)
    t, flags = PUBLISHED.temperature(r)
    assert t.shape == (2, 3) and t.dtype == np.float64 and flags.dtype == np.uint16
    r_back, f_back = PUBLISHED.resistance(t)
    assert r_back.shape == (2, 3) and r_back.dtype == np.float64 and f_back.shape == (2, 3)
    t0, f0 = PUBLISHED.temperature(10_000.0)
    assert t0.shape == () and f0.shape == ()
    assert KELVIN_OFFSET == 273.15  # SI Brochure, 9th ed., 2.3.1


@settings(max_examples=100, deadline=None)
@given(hnp.arrays(np.float64, st.integers(0, 20), elements=st.floats(allow_nan=True, allow_infinity=True)))
@pytest.mark.parametrize("model", MODELS)
def test_any_input_gives_values_or_flags_never_an_exception(model, values) -> None:
    for out, flags in (model.temperature(values), model.resistance(values)):
        assert out.shape == values.shape
        # NaN exactly where a flag withholds the value
        np.testing.assert_array_equal(np.isnan(out), flags != 0)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"a": 1e-3, "b": -2e-4, "c": 1e-7}, "b > 0"),
        ({"a": 1e-3, "b": 2e-4, "c": -1e-7}, "c >= 0"),
        ({"a": np.nan, "b": 2e-4, "c": 1e-7}, "finite"),
    ],
)
def test_steinhart_hart_refuses_coefficients_without_a_falling_curve(kwargs, message) -> None:
    with pytest.raises(InputError, match=message):
        SteinhartHart(**kwargs)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"r0_ohm": 0.0, "beta_k": 3950.0}, "R0"),
        ({"r0_ohm": 1e4, "beta_k": -3950.0}, "β must be positive"),
        ({"r0_ohm": 1e4, "beta_k": 3950.0, "t0_c": -274.0}, "absolute zero"),
    ],
)
def test_beta_refuses_unusable_parameters(kwargs, message) -> None:
    with pytest.raises(InputError, match=message):
        BetaNtc(**kwargs)
