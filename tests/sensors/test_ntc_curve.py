"""A thermistor as a channel's curve: its valid range, its slope, and its data-sheet tolerance as a bound."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from soaklog.errors import InputError
from soaklog.sensors.flags import flag_names
from soaklog.sensors.measurement import MeasurementChain, SensorSpec
from soaklog.sensors.ntc import BetaNtc, NtcCurve, NtcTolerance, SteinhartHart

BETA_10K = NtcCurve(BetaNtc(r0_ohm=10_000.0, beta_k=3950.0), -40.0, 125.0)
# Steinhart–Hart coefficients of the 10 kΩ "10K3A1" curve (from memory of thermistor makers'
# application notes, as in test_ntc.py)
SH_10K = NtcCurve(SteinhartHart(a=1.129241e-3, b=2.341077e-4, c=8.775468e-8), -40.0, 150.0)


@pytest.mark.parametrize("r_ohm", [1e300, 1e30, 5e6, 300.0, 1.0])
def test_outside_its_range_a_thermistor_reads_nothing(r_ohm) -> None:
    # the bare β equation turns 1e300 ohm into about −267 °C; a channel's curve refuses it
    t, f = BETA_10K.temperature(r_ohm)
    assert math.isnan(float(t)) and flag_names(int(f)) == ["out_of_range"]


@pytest.mark.parametrize(("r_ohm", "t_c"), [
    # R = 10 kΩ·exp(3950 K·(1/T − 1/298.15 K)) at the range's ends, worked by hand to 11 digits
    # (the ends are inclusive within 1 nK: 1e-9 K × 8 ohm/K at 125 °C is 8e-9 ohm):
    # −40 °C: 1/233.15 − 1/298.15 = 9.35093e-4 /K, × 3950 = 3.693617, exp → 401 859.72462 ohm
    # 125 °C: 1/398.15 − 1/298.15 = −8.42387e-4 /K, × 3950 = −3.327428, exp → 358.83387724 ohm
    (401859.72462, -40.0), (358.83387724, 125.0),
])
def test_the_ends_of_its_range_are_inside(r_ohm, t_c) -> None:
    t, f = BETA_10K.temperature(r_ohm)
    assert int(f) == 0 and float(t) == pytest.approx(t_c, abs=1e-6)


@pytest.mark.parametrize("t_c", [-40.0, -10.0, 25.0, 60.0, 125.0])
def test_beta_slope_is_minus_beta_r_over_t_squared(t_c) -> None:
    # differentiating R = R0·exp(β(1/T − 1/T0)): dR/dT = −β·R/T² (by hand)
    t_k = t_c + 273.15
    r = float(BETA_10K.resistance(t_c))
    assert float(BETA_10K.slope(t_c)) == pytest.approx(-3950.0 * r / t_k**2, rel=1e-12)


@pytest.mark.parametrize("t_c", [-30.0, 0.0, 25.0, 100.0, 140.0])
def test_steinhart_hart_slope_matches_a_central_difference_of_the_published_equation(t_c) -> None:
    a, b, c = 1.129241e-3, 2.341077e-4, 8.775468e-8

    def temp_c(r: float) -> float:  # Steinhart & Hart (1968), written out here
        y = math.log(r)
        return 1.0 / (a + b * y + c * y**3) - 273.15

    r = float(SH_10K.resistance(t_c))
    h = r * 1e-6
    d_t_d_r = (temp_c(r + h) - temp_c(r - h)) / (2 * h)
    assert float(SH_10K.slope(t_c)) == pytest.approx(1.0 / d_t_d_r, rel=1e-7)


def test_data_sheet_tolerance_becomes_a_temperature_bound_worked_by_hand() -> None:
    # 10 kΩ ±1 % at 25 °C, β = 3950 K ±1 %, at 0 °C (hand arithmetic):
    #   ln(R(0 °C)/R25) = 3950·(1/273.15 − 1/298.15) = 1.2125540 (test_ntc.py's hand value)
    #   ΔR/R = 0.01 + 0.01·1.2125540 = 0.02212554
    #   |d ln R/dT| = β/T² = 3950/273.15² = 0.05294131 /K
    #   ΔT = 0.02212554/0.05294131 = 0.417926 K
    tol = NtcTolerance(BETA_10K, 1.0, 1.0)
    assert float(tol.bound_c(0.0)) == pytest.approx(0.417926, abs=2e-6)
    # at 25 °C only the R25 part: 0.01/(3950/298.15²) = 0.225049 K
    assert float(tol.bound_c(25.0)) == pytest.approx(0.01 / (3950.0 / 298.15**2), rel=1e-12)
    assert bool(tol.in_range(125.0)) and not bool(tol.in_range(125.001))


def test_in_a_chain_the_tolerance_is_rectangular_and_the_reading_converts() -> None:
    chain = MeasurementChain(SensorSpec(curve=BETA_10K, tolerance=NtcTolerance(BETA_10K, 1.0, 1.0)))
    # R(0 °C) = 10 kΩ·exp(1.2125540) = 33 620.60 ohm (test_ntc.py, worked by hand)
    conv = chain.convert([33620.60, 1e300])
    assert float(conv.temperature_c[0]) == pytest.approx(0.0, abs=2e-5)
    assert float(conv.expanded_uncertainty_c[0]) == pytest.approx(2 * 0.417926 / math.sqrt(3), rel=1e-4)
    assert math.isnan(conv.temperature_c[1]) and flag_names(int(conv.flags[1])) == ["out_of_range"]
    assert "thermistor tolerance" in conv.budget.contributions[0].description


def test_a_range_the_equation_cannot_serve_is_refused() -> None:
    with pytest.raises(InputError, match="low < high"):
        NtcCurve(BetaNtc(r0_ohm=10_000.0, beta_k=3950.0), 50.0, 20.0)
    with pytest.raises(InputError, match="above −273.15"):
        NtcCurve(BetaNtc(r0_ohm=10_000.0, beta_k=3950.0), -300.0, 20.0)


@given(st.floats(min_value=-40.0, max_value=125.0))
def test_round_trip_inside_the_range(t_c: float) -> None:
    t, f = BETA_10K.temperature(BETA_10K.resistance(t_c))
    assert int(f) == 0 and float(t) == pytest.approx(t_c, abs=1e-9)


@given(st.floats(allow_nan=True, allow_infinity=True))
def test_any_resistance_gives_a_value_in_range_or_a_flag(r: float) -> None:
    t, f = SH_10K.temperature(np.asarray([r]))
    if int(f[0]):
        assert math.isnan(t[0])
    else:
        assert -40.0 <= t[0] <= 150.0
