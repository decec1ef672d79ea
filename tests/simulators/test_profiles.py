"""Set-point profiles: segment times and set points worked by hand, and Hypothesis properties."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.errors import InputError
from soaklog.simulators.profiles import LAB_AMBIENT_C, Cycle, Hold, Phase, Soak, Steps

# JESD22-A104 condition G: −40 °C / +125 °C (from memory of JESD22-A104);
# 10 K/min ramps and 15 min dwells as in the demo scenario.
QUAL = Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, 2)


def test_lab_ambient_is_inside_the_standard_atmosphere() -> None:
    # IEC 60068-1 standard atmospheric conditions: 15…35 °C (from memory of IEC 60068-1)
    assert 15.0 <= LAB_AMBIENT_C <= 35.0


# ---------------------------------------------------------------- Soak


def test_soak_holds_then_is_done() -> None:
    soak = Soak(125.0, 3600.0)
    assert soak.duration_s == 3600.0
    t = np.array([0.0, 1.0, 3599.0, 3600.0, 1e7])
    np.testing.assert_array_equal(soak.setpoint_c(t), np.full(5, 125.0))
    assert soak.phase(10.0).label == "soak"
    assert soak.phase(3600.0) == Phase("done", 0, 1)


# ---------------------------------------------------------------- Cycle, worked by hand


# segment boundaries by hand: first ramp 23 → 125 °C = 102 K at 10 K/min = 612 s;
# dwell high to 1512 s; ramp 125 → −40 °C = 165 K = 990 s, to 2502 s; dwell low
# to 3402 s; cycle 2 ramps up 990 s to 4392 s, dwells to 5292 s, ramps down to
# 6282 s, dwells to 7182 s.
@pytest.mark.parametrize(
    ("t_s", "setpoint_c", "label", "cycle"),
    [
        (0.0, 23.0, "ramp up", 1),
        (306.0, 74.0, "ramp up", 1),  # 23 + 306 s · (1/6 K/s) = 74 °C
        (612.0, 125.0, "dwell high", 1),
        (1511.0, 125.0, "dwell high", 1),
        (1512.0 + 495.0, 42.5, "ramp down", 1),  # 125 − 495/6 = 42.5 °C
        (2502.0, -40.0, "dwell low", 1),
        (3401.0, -40.0, "dwell low", 1),
        (3402.0 + 60.0, -30.0, "ramp up", 2),  # −40 + 60/6 = −30 °C
        (4392.0, 125.0, "dwell high", 2),
        (6282.0, -40.0, "dwell low", 2),
        (7182.0, -40.0, "done", 2),
        (1e9, -40.0, "done", 2),
    ],
)
def test_cycle_set_points_and_phases_worked_by_hand(
    t_s: float, setpoint_c: float, label: str, cycle: int
) -> None:
    assert float(QUAL.setpoint_c(t_s)) == pytest.approx(setpoint_c, abs=1e-12)
    phase = QUAL.phase(t_s)
    assert (phase.label, phase.cycle) == (label, cycle)


def test_cycle_duration_worked_by_hand() -> None:
    # 612 + 900 + 990 + 900 + (990 + 900 + 990 + 900) = 7182 s
    assert QUAL.duration_s == 7182.0
    # one cycle after the first: 2·165 K / (10 K/min) + 2·15 min = 33 + 30 = 63 min
    assert Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, 3).duration_s - QUAL.duration_s == 63 * 60.0


@pytest.mark.parametrize(
    ("rate_k_per_min", "ramp_s"),
    [
        # IEC 60068-2-14 test Nb rates 1, 3 and 5 K/min (from memory of IEC 60068-2-14);
        # a 165 K ramp takes 165/rate minutes (by hand)
        (1.0, 9900.0),
        (3.0, 3300.0),
        (5.0, 1980.0),
        (10.0, 990.0),
        (15.0, 660.0),
    ],
)
def test_ramp_length_is_span_over_rate(rate_k_per_min: float, ramp_s: float) -> None:
    profile = Cycle(-40.0, 125.0, rate_k_per_min, 600.0, 600.0, 1, start_c=-40.0)
    up = profile.segments[0]
    assert up.label == "ramp up"
    assert up.duration_s == pytest.approx(ramp_s, rel=1e-12)
    down = profile.segments[2]
    assert (down.label, down.duration_s) == ("ramp down", pytest.approx(ramp_s, rel=1e-12))


def test_cycle_can_ramp_or_step_back_at_the_end() -> None:
    back = Cycle(-40.0, 125.0, 10.0, 60.0, 60.0, 1, end_c=23.0)
    # last ramp −40 → 23 °C = 63 K at 10 K/min = 378 s (by hand)
    assert back.segments[-1].duration_s == pytest.approx(378.0)
    assert float(back.setpoint_c(back.duration_s + 1.0)) == 23.0
    step_back = Cycle(-40.0, 125.0, None, 60.0, 60.0, 1, end_c=23.0)
    assert float(step_back.setpoint_c(step_back.duration_s)) == 23.0
    # steps only: the whole profile is the two dwells
    assert step_back.duration_s == 120.0


# ---------------------------------------------------------------- Steps


def test_steps_ramp_then_hold_and_step_changes_are_immediate() -> None:
    profile = Steps([(600.0, 85.0, 5.0), (300.0, 60.0), Hold(120.0, 70.0, None)], start_c=25.0)
    # 25 → 85 °C at 5 K/min = 12 min = 720 s, hold 600 s (to 1320 s), then a step
    # to 60 °C held 300 s (to 1620 s), a step to 70 °C held 120 s (to 1740 s)
    assert profile.duration_s == 1740.0
    cases = {0.0: 25.0, 360.0: 55.0, 720.0: 85.0, 1319.0: 85.0, 1320.0: 60.0, 1620.0: 70.0, 1e6: 70.0}
    got = profile.setpoint_c(np.array(list(cases)))
    np.testing.assert_allclose(got, list(cases.values()), rtol=0, atol=1e-12)
    assert profile.phase(100.0).label == "ramp up"
    assert profile.phase(1000.0) == Phase("dwell", 0, 1)
    assert profile.phase(1500.0) == Phase("dwell", 0, 2)
    assert profile.phase(1740.0).label == "done"


def test_steps_with_an_infinite_rate_step() -> None:
    profile = Steps([(10.0, 50.0, math.inf)])
    assert float(profile.setpoint_c(0.0)) == 50.0


# ---------------------------------------------------------------- properties


times = st.lists(
    st.floats(min_value=-100.0, max_value=9000.0, allow_nan=False), min_size=1, max_size=30
)


@given(times)
@settings(max_examples=60)
def test_vectorised_set_points_and_phases_equal_the_scalar_ones(ts: list[float]) -> None:
    arr = np.asarray(ts, dtype=np.float64)
    vec = QUAL.setpoint_c(arr)
    labels, cycles = QUAL.phases(arr)
    for i, t in enumerate(ts):
        assert vec[i] == float(QUAL.setpoint_c(t))
        phase = QUAL.phase(t)
        assert (labels[i], cycles[i]) == (phase.label, phase.cycle)


@given(st.floats(min_value=0.0, max_value=7200.0), st.floats(min_value=0.0, max_value=50.0))
@settings(max_examples=80)
def test_a_ramped_cycle_never_moves_faster_than_its_rate(t_s: float, dt_s: float) -> None:
    a, b = QUAL.setpoint_c(np.array([t_s, t_s + dt_s]))
    assert abs(b - a) <= 10.0 / 60.0 * dt_s + 1e-9
    assert -40.0 <= a <= 125.0


# ---------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    "make",
    [
        lambda: Cycle(125.0, -40.0, 10.0, 900.0, 900.0, 1),  # low above high
        lambda: Cycle(-40.0, 125.0, 0.0, 900.0, 900.0, 1),  # a rate of 0 never arrives
        lambda: Cycle(-40.0, 125.0, -5.0, 900.0, 900.0, 1),
        lambda: Cycle(-40.0, 125.0, 10.0, -1.0, 900.0, 1),
        lambda: Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, 0),
        lambda: Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, 1.5),
        lambda: Cycle(-40.0, 1250.0, 10.0, 900.0, 900.0, 1),  # °F or a typo
        lambda: Soak(math.nan, 10.0),
        lambda: Soak(100.0, -1.0),
        lambda: Steps([]),
        lambda: Steps([(10.0,)]),
        lambda: Steps([(10.0, 50.0, "fast")]),
    ],
)
def test_bad_profiles_are_refused_with_an_input_error(make: object) -> None:
    with pytest.raises(InputError):
        make()  # type: ignore[operator]


def test_nan_time_is_refused() -> None:
    with pytest.raises(InputError):
        QUAL.setpoint_c(np.array([0.0, math.nan]))
