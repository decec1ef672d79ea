"""Self-heating: power, temperature rise and the two-current extrapolation, against worked examples."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from soaklog.errors import CalibrationError, InputError
from soaklog.sensors import cvd
from soaklog.sensors.selfheating import (
    dissipation_from_two_currents,
    power_w,
    temperature_rise_k,
    zero_power_resistance,
)

# ---------------------------------------------------------------- power


@pytest.mark.parametrize(
    ("r_ohm", "current_a", "expected_w"),
    [
        # P = I²R worked by hand
        (138.5, 1e-3, 138.5e-6),  # 1 mA into a Pt100 near 100 °C: 138.5 µW
        (100.0, 1e-3, 100e-6),
        (1000.0, 1e-3, 1e-3),  # a Pt1000 on a 1 mA range: 1 mW
        (1000.0, 1e-4, 10e-6),  # 100 µA, as many DMMs use on 10 kΩ: 10 µW
        (100.0, -1e-3, 100e-6),  # the direction of the current does not matter
    ],
)
def test_power_of_a_current_source(r_ohm: float, current_a: float, expected_w: float) -> None:
    assert float(power_w(r_ohm, current_a=current_a)) == pytest.approx(expected_w, rel=1e-12)


@pytest.mark.parametrize(
    ("r_ohm", "voltage_v", "expected_w"),
    [
        # P = V²/R worked by hand
        (100.0, 0.1, 100e-6),  # 0.1 V across 100 ohm: 100 µW
        (1000.0, 0.5, 250e-6),  # 0.5 V across 1 kohm: 250 µW
        (138.5055, 0.1385055, 138.5055e-6),  # the same element as at 1 mA: the same power
    ],
)
def test_power_of_a_voltage_source(r_ohm: float, voltage_v: float, expected_w: float) -> None:
    assert float(power_w(r_ohm, voltage_v=voltage_v)) == pytest.approx(expected_w, rel=1e-12)


def test_power_is_vectorised_and_nan_for_open_or_shorted_channels() -> None:
    r = np.array([100.0, 0.0, -5.0, np.inf, np.nan, 200.0])
    p_i = power_w(r, current_a=1e-3)
    p_v = power_w(r, voltage_v=0.1)
    assert p_i.dtype == np.float64 and p_i.shape == r.shape
    assert p_i[[0, 5]] == pytest.approx([100e-6, 200e-6], rel=1e-12)
    assert p_v[[0, 5]] == pytest.approx([100e-6, 50e-6], rel=1e-12)
    assert np.isnan(p_i[1:5]).all() and np.isnan(p_v[1:5]).all()
    # a current per reading (an autoranging meter changes it)
    p = power_w(np.array([100.0, 100.0]), current_a=np.array([1e-3, 1e-4]))
    assert p == pytest.approx([100e-6, 1e-6], rel=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({}, "exactly one"),
        ({"current_a": 1e-3, "voltage_v": 0.1}, "exactly one"),
        ({"current_a": float("nan")}, "current_a"),
        ({"voltage_v": float("inf")}, "voltage_v"),
    ],
)
def test_power_refuses_a_bad_excitation(kwargs: dict[str, float], match: str) -> None:
    with pytest.raises(InputError, match=match):
        power_w(100.0, **kwargs)


# ---------------------------------------------------------------- temperature rise


@pytest.mark.parametrize(
    ("p_w", "delta_w_per_k", "rise_k"),
    [
        # ΔT = P/δ (IEC 60751 self-heating), worked by hand
        (138.5e-6, 2e-3, 0.06925),  # 138.5 µW into 2 mW/K: 0.069 K
        (1e-3, 2e-3, 0.5),  # a Pt1000 at 1 mA in still air: half a kelvin
        (10e-6, 5e-3, 0.002),  # 100 µA into a Pt1000 in a stirred bath
    ],
)
def test_temperature_rise_is_power_over_dissipation(p_w: float, delta_w_per_k: float, rise_k: float) -> None:
    assert float(temperature_rise_k(p_w, delta_w_per_k)) == pytest.approx(rise_k, rel=1e-12)


def test_temperature_rise_worked_through_from_the_current() -> None:
    # 1 mA into 138.5 ohm = 138.5 µW; δ = 2 mW/K gives 0.06925 K: the reading is high by that
    rise = temperature_rise_k(power_w(np.array([138.5, 100.0]), current_a=1e-3), 2e-3)
    assert rise == pytest.approx([0.06925, 0.05], rel=1e-12)


@pytest.mark.parametrize("bad", [0.0, -2e-3, float("nan"), float("inf")])
def test_temperature_rise_refuses_a_bad_dissipation_constant(bad: float) -> None:
    with pytest.raises(InputError, match="W/K"):
        temperature_rise_k(1e-4, bad)


def test_temperature_rise_passes_nan_power_through() -> None:
    rise = temperature_rise_k(np.array([1e-4, np.nan]), np.array([2e-3, 2e-3]))
    assert rise[0] == pytest.approx(0.05) and np.isnan(rise[1])


# ---------------------------------------------------------------- zero-power resistance


def test_root_two_currents_give_the_calibration_lab_form() -> None:
    # the common calibration-lab form for I2 = √2·I1 is R(0) = 2·R1 − R2 (from
    # memory of Nicholas & White, Traceable Temperatures): 2 · 100.010 − 100.020 = 100.000
    i1 = 1e-3
    r0 = zero_power_resistance(100.010, i1, 100.020, math.sqrt(2.0) * i1)
    assert float(r0) == pytest.approx(2 * 100.010 - 100.020, abs=1e-9)
    assert float(r0) == pytest.approx(100.000, abs=1e-9)


@given(
    r1=st.floats(10.0, 10_000.0),
    rise=st.floats(0.0, 1.0),
    i1=st.floats(1e-5, 1e-2),
)
def test_root_two_case_reduces_to_two_r1_minus_r2(r1: float, rise: float, i1: float) -> None:
    r2 = r1 + rise  # a larger current reads higher
    r0 = float(zero_power_resistance(r1, i1, r2, math.sqrt(2.0) * i1))
    # √2 squared is 2 only to a few ulp, so the two forms agree to about 1e-15 · R
    assert r0 == pytest.approx(2 * r1 - r2, abs=1e-12 * r1)


def test_general_currents_worked_by_hand() -> None:
    # R = 100 + 4000·I²: at 1 mA 100.004 ohm, at 3 mA 100.036 ohm;
    # R(0) = (9e-6 · 100.004 − 1e-6 · 100.036) / 8e-6 = (900.036 − 100.036) / 8 = 100.000
    assert float(zero_power_resistance(100.004, 1e-3, 100.036, 3e-3)) == pytest.approx(100.0, abs=1e-9)
    # the order of the two readings does not matter
    assert float(zero_power_resistance(100.036, 3e-3, 100.004, 1e-3)) == pytest.approx(100.0, abs=1e-9)


@given(
    r0=st.floats(10.0, 10_000.0),
    heating=st.floats(0.0, 0.01),  # self-heating up to 1 % of R0 at the larger current
    i1=st.floats(1e-5, 1e-2),
    ratio=st.floats(1.1, 10.0),
)
def test_two_current_extrapolation_recovers_r0(r0: float, heating: float, i1: float, ratio: float) -> None:
    i2 = ratio * i1
    k = heating * r0 / (i2 * i2)  # ohm/A²
    r1, r2 = r0 + k * i1 * i1, r0 + k * i2 * i2
    # rounding in r1, r2 (≈ 1e-16 · R) is amplified by I1²/(I2² − I1²) < 4.8
    assert float(zero_power_resistance(r1, i1, r2, i2)) == pytest.approx(r0, rel=1e-13)


def test_zero_power_resistance_is_vectorised() -> None:
    # two channels, R0 = 100 and 1000, k = 4000 and 40000 ohm/A², at 1 mA and 2 mA
    r1 = np.array([100.004, 1000.04])
    r2 = np.array([100.016, 1000.16])
    r0 = zero_power_resistance(r1, 1e-3, r2, 2e-3)
    assert r0.dtype == np.float64 and r0.shape == (2,)
    assert r0 == pytest.approx([100.0, 1000.0], abs=1e-9)


@pytest.mark.parametrize(
    ("i1", "i2", "match"),
    [
        (1e-3, 1e-3, "same current"),
        (1e-3, -1e-3, "same current"),  # the same power either way
        (float("nan"), 1e-3, "i1_a"),
        (1e-3, float("inf"), "i2_a"),
    ],
)
def test_zero_power_resistance_refuses_unusable_currents(i1: float, i2: float, match: str) -> None:
    with pytest.raises(InputError, match=match):
        zero_power_resistance(100.01, i1, 100.02, i2)


def test_equal_currents_in_one_element_of_an_array_are_refused() -> None:
    with pytest.raises(InputError, match="2e-03 A|0.002 A"):
        zero_power_resistance(np.array([100.01, 100.01]), np.array([1e-3, 2e-3]), 100.02, 2e-3)


# ---------------------------------------------------------------- dissipation constant


def test_dissipation_from_two_currents_worked_by_hand() -> None:
    # R = 100 + 4000·I² at 0 °C, slope dR/dT = R0·A = 0.39083 ohm/K (IEC 60751 A)
    # reading 1: 1 mA, 100.004 ohm; ΔT1 = 0.004 / 0.39083 = 0.0102346 K
    # δ = I1²·R1 / ΔT1 = 1e-6 · 100.004 / 0.0102346 = 9.7711e-3 W/K
    delta = dissipation_from_two_currents(100.004, 1e-3, 100.016, 2e-3, 0.39083)
    assert float(delta) == pytest.approx(1e-6 * 100.004 * 0.39083 / 0.004, rel=1e-9)
    assert float(delta) == pytest.approx(9.7711e-3, rel=1e-4)


@given(
    delta_w_per_k=st.floats(1e-4, 0.1),
    t_c=st.floats(-100.0, 500.0),
    i1=st.floats(1e-4, 3e-3),
    ratio=st.floats(1.2, 3.0),
)
def test_dissipation_is_recovered_from_a_physical_self_heating_model(
    delta_w_per_k: float, t_c: float, i1: float, ratio: float
) -> None:
    # physics, not the method's own assumption: the element sits ΔT = I²R/δ above
    # t, so R = R(t + ΔT); solved here by fixed-point iteration on the IEC 60751 curve
    def reading(i: float) -> float:
        r = float(cvd.resistance(t_c))
        for _ in range(50):
            r = float(cvd.resistance(t_c + i * i * r / delta_w_per_k))
        return r

    i2 = ratio * i1
    # rises under 1 K, as in practice (a Pt100 is below 300 ohm up to 500 °C)
    assume(i2 * i2 * 300.0 / delta_w_per_k < 1.0)
    r1, r2 = reading(i1), reading(i2)
    assume(r2 - r1 > 1e-9 * r1)  # a rise the readings resolve
    slope = float(cvd.slope(t_c))
    delta = float(dissipation_from_two_currents(r1, i1, r2, i2, slope))
    # the method takes R as linear in I²; with x = αΔT the estimate is off by
    # about x1 + x2 < 0.0039 · (1 + 1/1.44) < 0.7 % for rises under 1 K
    assert delta == pytest.approx(delta_w_per_k, rel=7e-3)
    # R = R0/(1 − x) with x = αΔT is not quite linear in x: the chord through
    # x1, x2 misses R0 by about x1·x2·R0, i.e. α·ΔT1·ΔT2 < 0.0039 · 1 · 1/1.44 K
    # = 2.7 mK for rises under 1 K
    r0 = float(zero_power_resistance(r1, i1, r2, i2))
    assert r0 == pytest.approx(float(cvd.resistance(t_c)), abs=3e-3 * slope)


def test_dissipation_is_vectorised() -> None:
    r1 = np.array([100.004, 100.002])
    r2 = np.array([100.016, 100.008])
    delta = dissipation_from_two_currents(r1, 1e-3, r2, 2e-3, np.array([0.39083, 0.39083]))
    # by hand as above: 1e-6 · R1 · 0.39083 / (R1 − 100)
    assert delta == pytest.approx([1e-6 * 100.004 * 0.39083 / 0.004, 1e-6 * 100.002 * 0.39083 / 0.002], rel=1e-9)


@pytest.mark.parametrize(
    ("r1", "i1", "r2", "i2"),
    [
        (100.0, 0.0, 100.016, 2e-3),  # no current, no rise
        (100.02, 1e-3, 100.01, 2e-3),  # the larger current reads lower: noise, not heating
    ],
)
def test_dissipation_refuses_readings_without_a_rise(r1: float, i1: float, r2: float, i2: float) -> None:
    with pytest.raises(CalibrationError, match="no self-heating"):
        dissipation_from_two_currents(r1, i1, r2, i2, 0.39083)


@pytest.mark.parametrize("bad_slope", [0.0, -0.39, float("nan")])
def test_dissipation_refuses_a_bad_slope(bad_slope: float) -> None:
    with pytest.raises(InputError, match="slope"):
        dissipation_from_two_currents(100.004, 1e-3, 100.016, 2e-3, bad_slope)
