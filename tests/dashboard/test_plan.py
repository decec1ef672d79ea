"""The plan read from a run's configuration: planned set point and phase, limits, intervals."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.dashboard.plan import planned_profile, run_plan
from soaklog.demo import demo_config_text
from soaklog.simulators.profiles import Cycle

DEMO_PROFILE = {"kind": "cycle", "low_c": -40.0, "high_c": 125.0, "ramp_k_per_min": 10.0, "dwell": "15min",
                "cycles": 1000, "tolerance_k": 3.0}

# Arithmetic from the profile's definition (ramp-and-dwell, as IEC 60068-2-14 test Nb describes a
# change of temperature at a specified rate): from 23 °C, 102 K at 10 K/min take 612 s; a dwell is
# 900 s; a ramp between -40 and 125 °C (165 K) takes 990 s.
#   cycle 1: ramp up 0…612, dwell high 612…1512, ramp down 1512…2502, dwell low 2502…3402
#   cycle 2 onwards: 990 + 900 + 990 + 900 = 3780 s each
PHASE_TABLE = [
    (0.0, 23.0, "ramp up", 1),
    (306.0, 74.0, "ramp up", 1),  # half way: 23 + 51
    (612.0, 125.0, "dwell high", 1),
    (1000.0, 125.0, "dwell high", 1),
    (1512.0 + 495.0, 42.5, "ramp down", 1),  # half way: 125 - 82.5
    (2502.0, -40.0, "dwell low", 1),
    (3402.0, -40.0, "ramp up", 2),
    (3402.0 + 495.0, 42.5, "ramp up", 2),
    (3402.0 + 3780.0 + 990.0 + 100.0, 125.0, "dwell high", 3),
]


@pytest.mark.parametrize(("t_s", "setpoint_c", "phase", "cycle"), PHASE_TABLE)
def test_planned_setpoint_and_phase_follow_the_cycle(t_s, setpoint_c, phase, cycle):
    prof = planned_profile(DEMO_PROFILE, ambient_c=23.0)
    assert prof is not None
    assert float(prof.setpoint_c(t_s)) == pytest.approx(setpoint_c, abs=1e-9)
    assert prof.phase(t_s) == (phase, cycle)


def test_after_the_last_cycle_the_plan_is_done_and_low():
    prof = planned_profile({**DEMO_PROFILE, "cycles": 2}, ambient_c=23.0)
    assert prof is not None
    end = 3402.0 + 3780.0  # arithmetic as above
    assert prof.duration_s == pytest.approx(end)
    assert prof.phase(end + 1.0) == ("done", 2)
    assert float(prof.setpoint_c(end + 1e6)) == -40.0


@settings(max_examples=60, deadline=None)
@given(
    low=st.floats(-80, 20), span=st.floats(5, 200), rate=st.floats(0.5, 30), dwell_s=st.integers(0, 3600),
    cycles=st.integers(1, 6), start=st.floats(-20, 40),
    frac=st.lists(st.floats(-0.1, 1.1), min_size=1, max_size=30),
)
def test_planned_setpoint_agrees_with_the_simulated_chamber_programme(low, span, rate, dwell_s, cycles, start, frac):
    """The dashboard's plan and the chamber simulator's programme are written apart; they must agree."""
    high = low + span
    prof = planned_profile({"kind": "cycle", "low_c": low, "high_c": high, "ramp_k_per_min": rate,
                            "dwell": f"{dwell_s}s", "cycles": cycles, "tolerance_k": 1.0},
                           ambient_c=start)
    assert prof is not None
    sim = Cycle(low, high, rate, dwell_s, dwell_s, cycles, start_c=start)
    t = np.asarray(frac, dtype=np.float64) * sim.duration_s
    assert prof.duration_s == pytest.approx(sim.duration_s, rel=1e-12, abs=1e-9)
    np.testing.assert_allclose(prof.setpoint_c(t), sim.setpoint_c(t), atol=1e-6)
    for ti in t.tolist():
        if 0 <= ti < sim.duration_s:
            p = sim.phase(ti)
            # a boundary instant may fall either side by rounding: compare just inside it
            if all(abs(ti - s.start_s) > 1e-6 for s in sim.segments):
                assert prof.phase(ti) == (p.label, p.cycle)


def test_a_soak_holds_its_temperature():
    prof = planned_profile({"kind": "soak", "temperature_c": 85.0, "duration": "1000h", "tolerance_k": 2.0})
    assert prof is not None
    assert prof.duration_s == 1000 * 3600.0
    assert float(prof.setpoint_c(3600.0)) == 85.0
    assert prof.phase(3600.0) == ("soak", 0)
    assert prof.phase(1000 * 3600.0) == ("done", 0)


@pytest.mark.parametrize("profile", [{}, {"kind": "ramp"}, {"kind": "cycle", "low_c": 10.0, "high_c": 5.0}])
def test_an_unknown_or_incomplete_profile_is_not_drawn(profile):
    assert planned_profile(profile) is None


def test_the_demo_station_file_gives_duration_profile_limits_and_intervals():
    plan = run_plan(demo_config_text())
    assert plan.problem == ""
    assert plan.planned_duration_s == 1050 * 3600.0  # configs/demo.toml: planned_duration = "1050h"
    assert plan.profile is not None and plan.profile.cycles == 1000
    # configs/demo.toml: [[alarm]] air-over-temperature, limit_c = 130.0, on air-supply and air-return
    assert ("air-over-temperature", 130.0) in [(lim.alarm, lim.limit_c) for lim in plan.limits]
    assert plan.limits_for("air-return") and not plan.limits_for("door-corner")
    assert plan.intervals_s == {"meter": 10.0, "board": 5.0}


@pytest.mark.parametrize("text", ["not toml [", "", "[profile]\nkind = 'cycle'\ncycles = 'many'\nlow_c = 1.0\nhigh_c = 2.0"])
def test_a_configuration_that_cannot_be_read_gives_an_empty_plan(text):
    plan = run_plan(text)
    assert plan.profile is None
    assert plan.limits == ()
