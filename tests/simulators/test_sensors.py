"""Simulated RTDs against IEC 60751, IEC 60028 copper worked by hand, and a scipy root for self-heating."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751, CvdCurve, resistance, temperature
from soaklog.sensors.leads import Conductor
from soaklog.simulators.plant import OPEN_OHM
from soaklog.simulators.sensors import SHORT_OHM, Fault, FaultState, SimSensor

# IEC 60028: annealed copper 1/58 ohm·mm²/m at 20 °C, α20 = 0.00393 /K.
# 0.5 mm² worked by hand: R' = 1/(58 · 0.5) = 0.034 482 76 ohm/m at 20 °C.
R_PER_M_05MM2 = 1.0 / 29.0
ALPHA_CU = 0.00393


def copper_by_hand(length_m: float, t_c: float) -> float:
    """IEC 60028 for 0.5 mm² copper, written out here independently of daq.sensors.leads."""
    return R_PER_M_05MM2 * length_m * (1.0 + ALPHA_CU * (t_c - 20.0))


LEADS = Conductor(area_mm2=0.5, inside_length_m=3.0, outside_length_m=5.0)


def lead_by_hand(chamber_c: float, ambient_c: float) -> float:
    return copper_by_hand(3.0, chamber_c) + copper_by_hand(5.0, ambient_c)


# ---------------------------------------------------------------- the element


@pytest.mark.parametrize(
    ("t_c", "table_ohm"),
    [
        # IEC 60751:2008 table 1 (Pt100), printed to 0.01 ohm
        (-40.0, 84.27),  # IEC 60751:2008 table 1: −40 °C -> 84.27 ohm
        (0.0, 100.00),  # IEC 60751:2008 table 1: 0 °C -> 100.00 ohm
        (20.0, 107.79),  # IEC 60751:2008 table 1: 20 °C -> 107.79 ohm
        (100.0, 138.51),  # IEC 60751:2008 table 1: 100 °C -> 138.51 ohm
        (120.0, 146.07),  # IEC 60751:2008 table 1: 120 °C -> 146.07 ohm
        (130.0, 149.83),  # IEC 60751:2008 table 1: 130 °C -> 149.83 ohm
    ],
)
def test_a_nominal_4_wire_sensor_reads_the_iec_table(t_c: float, table_ohm: float) -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=4, leads=LEADS)
    got = sensor.terminal_ohm(t_c, t_c, 23.0, wiring=4, current_a=0.0)
    assert abs(got - table_ohm) <= 0.005  # half a printed digit
    # a Pt1000 is the same curve with R0 = 1000 ohm (IEC 60751:2008, 4.2): ten times the table
    pt1000 = SimSensor("s", "p", IEC_60751.with_r0(1000.0), wiring=4)
    assert abs(pt1000.terminal_ohm(t_c, t_c, 23.0, wiring=4, current_a=0.0) - 10 * table_ohm) <= 0.05


def test_4_wire_without_current_is_exactly_its_own_curve() -> None:
    own = CvdCurve(r0_ohm=100.04, a=3.9090e-3, b=-5.775e-7, c=-4.183e-12, name="own")
    sensor = SimSensor("s", "p", own, wiring=4, leads=LEADS)
    for t in (-40.0, 0.0, 25.0, 125.0):
        assert sensor.terminal_ohm(t, t, 23.0, wiring=4, current_a=0.0) == float(resistance(t, own))
        # the nominal curve then reads it off by its deviation: R0 0.04 ohm high is
        # 0.04/0.390 83 ≈ 0.10 K high at 0 °C (by hand, dR/dT = R0·A at 0 °C)
    reading_0c = float(temperature(sensor.terminal_ohm(0.0, 0.0, 23.0, wiring=4, current_a=0.0))[0])
    assert reading_0c == pytest.approx(0.04 / 0.39083, abs=1e-4)


# ---------------------------------------------------------------- leads


@pytest.mark.parametrize(("chamber_c", "ambient_c"), [(125.0, 23.0), (-40.0, 23.0), (23.0, 23.0)])
def test_2_wire_adds_both_conductors_by_iec_60028(chamber_c: float, ambient_c: float) -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=2, leads=LEADS)
    got = sensor.terminal_ohm(chamber_c, chamber_c, ambient_c, wiring=2, current_a=0.0)
    expected = float(resistance(chamber_c)) + 2.0 * lead_by_hand(chamber_c, ambient_c)
    assert got == pytest.approx(expected, rel=1e-12)


def test_2_wire_lead_resistance_worked_by_hand_at_125_c() -> None:
    # 3 m at 125 °C: 3/29 · (1 + 0.00393·105) = 0.103 448 · 1.412 65 = 0.146 136 ohm
    # 5 m at 23 °C:  5/29 · (1 + 0.00393·3)   = 0.172 414 · 1.011 79 = 0.174 447 ohm
    # one conductor 0.320 583 ohm, two 0.641 166 ohm, about 1.64 K on a Pt100
    sensor = SimSensor("s", "p", IEC_60751, wiring=4, leads=LEADS)
    assert sensor.lead_ohm(125.0, 23.0, wiring=2) == pytest.approx(0.641166, abs=2e-6)


def test_3_wire_reads_the_imbalance_c1_minus_c3() -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=3, leads=LEADS, lead_mismatch=(0.02, 0.0, -0.01, 0.0))
    # R_c1 − R_c3 = R_c·(0.02 − (−0.01)) = 0.03·R_c (daq.sensors.leads docstring)
    expected = float(resistance(125.0)) + 0.03 * lead_by_hand(125.0, 23.0)
    got = sensor.terminal_ohm(125.0, 125.0, 23.0, wiring=3, current_a=0.0)
    assert got == pytest.approx(expected, rel=1e-12)
    # matched conductors cancel exactly
    matched = SimSensor("s", "p", IEC_60751, wiring=3, leads=LEADS)
    assert matched.terminal_ohm(125.0, 125.0, 23.0, wiring=3, current_a=0.0) == float(resistance(125.0))


@pytest.mark.parametrize(
    ("installed", "mode", "conductors"),
    [
        # which conductors stay in the reading (module docstring): weights of c1, c2, c3
        (4, 4, (0, 0, 0)),
        (4, 3, (1, 0, -1)),
        (4, 2, (1, 1, 0)),
        (3, 4, (1, 0, 0)),  # 4-wire meter on a 3-wire sensor: c1 stays in the loop
        (3, 3, (1, 0, -1)),
        (3, 2, (1, 1, 0)),
        (2, 4, (1, 1, 0)),
        (2, 3, (1, 1, 0)),
        (2, 2, (1, 1, 0)),
    ],
)
def test_every_instrument_mode_on_every_hook_up(
    installed: int, mode: int, conductors: tuple[int, int, int]
) -> None:
    mismatch = (0.03, -0.02, 0.01, 0.0)
    sensor = SimSensor("s", "p", IEC_60751, wiring=installed, leads=LEADS, lead_mismatch=mismatch)  # type: ignore[arg-type]
    rc = lead_by_hand(60.0, 23.0)
    expected = sum(w * rc * (1.0 + m) for w, m in zip(conductors, mismatch))
    assert sensor.lead_ohm(60.0, 23.0, wiring=mode) == pytest.approx(expected, abs=1e-15)


def test_leads_beyond_the_copper_law_range_are_taken_at_its_end() -> None:
    # a runaway chamber can pass 850 °C; the sensor keeps answering
    sensor = SimSensor("s", "p", IEC_60751, wiring=2, leads=LEADS)
    assert sensor.lead_ohm(900.0, 23.0, wiring=2) == pytest.approx(2 * lead_by_hand(850.0, 23.0))


# ---------------------------------------------------------------- self-heating


def test_self_heating_worked_by_hand_for_a_pt1000_at_1_ma() -> None:
    # P = I²R, ΔT = P/δ (IEC 60751:2008 self-heating): at 0 °C with R = R0(1 + A·ΔT)
    # ΔT = (I²R0/δ) / (1 − I²R0·A/δ) = 0.5 / (1 − 0.5·0.003 9083) = 0.500 979 K
    # (B·ΔT² is 1e-7 of that), for I = 1 mA, R0 = 1000 ohm, δ = 2 mW/K
    sensor = SimSensor("s", "p", IEC_60751.with_r0(1000.0), dissipation_w_per_k=0.002)
    assert sensor.element_c(0.0, 1e-3) == pytest.approx(0.500979, abs=1e-6)


@pytest.mark.parametrize(
    ("r0_ohm", "current_a", "delta_w_per_k", "true_c"),
    [
        (100.0, 1e-3, 0.008, 125.0),
        (100.0, 1e-3, 0.008, -40.0),
        (1000.0, 1e-3, 0.005, 125.0),
        (1000.0, 1e-3, 0.005, -40.0),
        (1000.0, 5e-3, 0.002, 20.0),  # an abusive current: 13 K of self-heating
    ],
)
def test_self_heating_is_i2r_over_delta_and_agrees_with_brentq(
    r0_ohm: float, current_a: float, delta_w_per_k: float, true_c: float
) -> None:
    curve = IEC_60751.with_r0(r0_ohm)
    sensor = SimSensor("s", "p", curve, dissipation_w_per_k=delta_w_per_k)
    te = sensor.element_c(true_c, current_a)
    r_e = float(resistance(te, curve))
    # the definition: the rise equals I²R(T_e)/δ within the fixed-point tolerance
    assert te - true_c == pytest.approx(current_a**2 * r_e / delta_w_per_k, abs=1e-9)

    # scipy's brentq on T − T_true − I²R(T)/δ = 0, with R written out from IEC 60751:2008, 4.2
    def cvd(t: float) -> float:
        w = 1.0 + 3.9083e-3 * t - 5.775e-7 * t * t
        if t < 0:
            w += -4.183e-12 * (t - 100.0) * t**3
        return r0_ohm * w

    ref = brentq(
        lambda t: t - true_c - current_a**2 * cvd(t) / delta_w_per_k, true_c, true_c + 50.0, xtol=1e-13
    )
    assert te == pytest.approx(ref, abs=1e-9)
    reading = sensor.read(true_c, true_c, 23.0, wiring=4, current_a=current_a)
    assert reading.element_ohm == pytest.approx(cvd(ref), rel=1e-12)


def test_self_heating_does_not_depend_on_the_sign_of_the_current() -> None:
    sensor = SimSensor("s", "p", IEC_60751, dissipation_w_per_k=0.004)
    assert sensor.element_c(50.0, -1e-3) == sensor.element_c(50.0, 1e-3)


def test_a_runaway_current_is_refused() -> None:
    sensor = SimSensor("s", "p", IEC_60751.with_r0(1000.0), dissipation_w_per_k=0.001)
    with pytest.raises(InputError):
        sensor.element_c(20.0, 0.5)  # 0.25·1000·A/0.001 ≫ 1: no fixed point to converge to


# ---------------------------------------------------------------- faults


def test_open_reads_open_in_every_mode() -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=4, leads=LEADS)
    fault = FaultState(Fault.OPEN)
    for mode in (2, 3, 4):
        assert sensor.terminal_ohm(50.0, 50.0, 23.0, wiring=mode, current_a=1e-3, fault=fault) == OPEN_OHM
    assert math.isinf(OPEN_OHM)


def test_short_reads_only_the_leads() -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=4, leads=LEADS)
    fault = FaultState(Fault.SHORT)
    assert sensor.terminal_ohm(50.0, 50.0, 23.0, wiring=4, current_a=1e-3, fault=fault) == SHORT_OHM
    two = sensor.terminal_ohm(50.0, 50.0, 23.0, wiring=2, current_a=1e-3, fault=fault)
    assert two == pytest.approx(SHORT_OHM + 2 * lead_by_hand(50.0, 23.0), rel=1e-12)
    # near zero: far below the lowest Pt100 value (IEC 60751:2008 table 1: −200 °C -> 18.52 ohm)
    assert two < 2.0


def test_stuck_keeps_the_conditions_of_its_moment() -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=2, leads=LEADS)
    stuck = FaultState(Fault.STUCK, since_s=100.0, true_c=80.0, chamber_c=81.0)
    frozen = sensor.terminal_ohm(80.0, 81.0, 23.0, wiring=2, current_a=1e-3)
    for t in (-40.0, 20.0, 125.0):
        assert sensor.terminal_ohm(t, t, 23.0, wiring=2, current_a=1e-3, t_s=500.0, fault=stuck) == frozen


def test_drift_moves_the_reading_at_its_rate() -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=4)
    drift = FaultState(Fault.DRIFT, since_s=3600.0, drift_k_per_h=0.1)
    # 10 h after it began at 0.1 K/h the element reads as if 1 K warmer
    got = sensor.terminal_ohm(100.0, 100.0, 23.0, wiring=4, current_a=0.0, t_s=11 * 3600.0, fault=drift)
    assert got == pytest.approx(float(resistance(101.0)), rel=1e-12)
    before = sensor.terminal_ohm(100.0, 100.0, 23.0, wiring=4, current_a=0.0, t_s=0.0, fault=drift)
    assert before == float(resistance(100.0))


# ---------------------------------------------------------------- sensors drawn within a class


@pytest.mark.parametrize(
    ("cls", "element", "r0", "a_c", "b_per_c", "t_lo", "t_hi"),
    [
        # IEC 60751:2008 table: class A ±(0.15 + 0.002·|t|), class B ±(0.3 + 0.005·|t|);
        # validity from memory of IEC 60751:2008: A wire-wound −100…450 °C, B film −50…500 °C
        ("A", "wire", 100.0, 0.15, 0.002, -100.0, 450.0),
        ("B", "film", 1000.0, 0.30, 0.005, -50.0, 500.0),
        ("B", "film", 100.0, 0.30, 0.005, -50.0, 500.0),
    ],
)
def test_drawn_sensors_stay_inside_their_tolerance_class(
    cls: str, element: str, r0: float, a_c: float, b_per_c: float, t_lo: float, t_hi: float
) -> None:
    rng = np.random.default_rng(2026)
    grid = np.linspace(t_lo, t_hi, 111)
    nominal = IEC_60751.with_r0(r0)
    worst = 0.0
    for n in range(200):
        sensor = SimSensor.within_class(
            f"s{n}", "p", rng, r0_ohm=r0, tolerance_class_name=cls, element=element  # type: ignore[arg-type]
        )
        assert sensor.tolerance == cls
        read, _ = temperature(resistance(grid, sensor.curve), nominal)
        dev = np.abs(read - grid) / (a_c + b_per_c * np.abs(grid))
        worst = max(worst, float(dev.max()))
    assert worst <= 1.0
    assert worst > 0.4  # the draws do use the class, they are not all nominal


def test_drawing_is_reproducible_from_the_generator_state() -> None:
    def draw(seed: int) -> SimSensor:
        return SimSensor.within_class("s", "p", np.random.default_rng(seed), tolerance_class_name="A", element="wire")

    assert draw(1) == draw(1)
    assert draw(1).curve != draw(2).curve


# ---------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    "kwargs",
    [
        {"wiring": 5},
        {"dissipation_w_per_k": 0.0},
        {"dissipation_w_per_k": -0.001},
        {"lead_mismatch": (0.0, 0.0, 0.0)},
        {"name": ""},
    ],
)
def test_bad_sensors_are_refused(kwargs: dict[str, object]) -> None:
    args: dict[str, object] = {"name": "s", "position": "p"} | kwargs
    with pytest.raises(InputError):
        SimSensor(**args)  # type: ignore[arg-type]


@given(
    st.floats(min_value=-100.0, max_value=400.0),
    st.floats(min_value=0.0, max_value=2e-3),
    st.sampled_from([2, 3, 4]),
)
@settings(max_examples=60)
def test_terminal_resistance_is_finite_and_above_the_element_in_2_wire(t: float, i: float, mode: int) -> None:
    sensor = SimSensor("s", "p", IEC_60751, wiring=4, leads=LEADS, lead_mismatch=(0.01, -0.01, 0.0, 0.0))
    r = sensor.read(t, t, 23.0, wiring=mode, current_a=i)
    assert math.isfinite(r.terminal_ohm)
    assert r.element_c >= t
    if mode == 2:
        assert r.terminal_ohm > r.element_ohm


def test_a_bad_instrument_mode_is_refused() -> None:
    sensor = SimSensor("s", "p")
    with pytest.raises(InputError):
        sensor.terminal_ohm(20.0, 20.0, 23.0, wiring=1, current_a=1e-3)
