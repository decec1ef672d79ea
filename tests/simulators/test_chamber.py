"""The chamber model checked against its physics worked by hand, numpy/scipy references and trade practice."""

from __future__ import annotations

import math
import threading

import numpy as np
import pytest
import scipy.linalg

from soaklog.errors import InputError
from soaklog.simulators.chamber import ChamberModel, ChamberParams, Position, transition_matrix
from soaklog.simulators.clock import ManualClock, SimClock
from soaklog.simulators.profiles import Cycle, Soak, Steps

# The default parameters, worked by hand (ChamberParams docstring):
#   C_air = 15 000 J/K, C_load = 4 000 J/K, G_al = 20 W/K, G_wall = 5 W/K
#   a11 = −(20 + 5)/15 000 = −1.666 667e-3   a12 = 20/15 000 = 1.333 333e-3
#   a21 = 20/4 000 = 5.0e-3                  a22 = −20/4 000 = −5.0e-3
#   tr = −6.666 667e-3, det = 8.333 333e-6 − 6.666 667e-6 = 1.666 667e-6
#   tr² − 4·det = 4.444 444e-5 − 6.666 667e-6 = 3.777 778e-5, √ = 6.146 363e-3
#   λ1 = (−6.666 667e-3 + 6.146 363e-3)/2 = −2.601 52e-4 /s  -> τ1 = 3843.9 s
#   λ2 = (−6.666 667e-3 − 6.146 363e-3)/2 = −6.406 515e-3 /s -> τ2 = 156.09 s
#   check: λ1·λ2 = 1.666 67e-6 = det
HAND_TAU_SLOW_S = 3843.9
HAND_TAU_FAST_S = 156.09
AMBIENT_C = 23.0


def hand_matrix(c_air: float, c_load: float, g_al: float, g_loss: float) -> np.ndarray:
    """A assembled here from the energy balances, independently of the model's own code."""
    return np.array(
        [[-(g_al + g_loss) / c_air, g_al / c_air], [g_al / c_load, -g_al / c_load]],
        dtype=np.float64,
    )


# ---------------------------------------------------------------- eigenvalues and discretisation


def test_time_constants_match_the_hand_derivation_and_numpy_eig() -> None:
    params = ChamberParams()
    slow, fast = params.time_constants_s()
    assert slow == pytest.approx(HAND_TAU_SLOW_S, abs=0.1)  # worked by hand above
    assert fast == pytest.approx(HAND_TAU_FAST_S, abs=0.01)
    ref = np.sort(np.linalg.eigvals(hand_matrix(15_000.0, 4_000.0, 20.0, 5.0)).real)
    # numpy.linalg.eig as the independent reference: fast (more negative) first after sorting
    assert params.eigenvalues() == pytest.approx((ref[1], ref[0]), rel=1e-12)


def test_slow_mode_is_the_whole_heat_capacity_over_the_wall_conductance() -> None:
    # For a weak wall (G_wall ≪ G_al) the slow mode tends to (C_air + C_load)/G_wall:
    # the two masses move together and lose heat through the wall only. By hand:
    # (15 000 + 4 000)/5 = 3800 s, within 2 % of τ1 = 3843.9 s.
    slow, _ = ChamberParams().time_constants_s()
    assert slow == pytest.approx(19_000.0 / 5.0, rel=0.02)


@pytest.mark.parametrize("door_open", [False, True])
@pytest.mark.parametrize("step_s", [0.5, 1.0, 10.0, 600.0])
def test_transition_matrix_equals_scipy_expm(door_open: bool, step_s: float) -> None:
    params = ChamberParams(step_s=step_s)
    g = 5.0 + (120.0 if door_open else 0.0)
    # scipy.linalg.expm (Padé approximation) as the reference for exp(A·h)
    ref = scipy.linalg.expm(hand_matrix(15_000.0, 4_000.0, 20.0, g) * step_s)
    np.testing.assert_allclose(transition_matrix(params, door_open), ref, rtol=1e-10, atol=1e-14)


def test_uncoupled_air_relaxes_with_tau_c_over_g() -> None:
    # one node: with no air-load coupling, τ = C_air/G_wall = 15 000/5 = 3000 s (by hand)
    params = ChamberParams(g_air_load_w_per_k=0.0)
    model = ChamberModel(params, None, air_c=80.0)
    tr = model.trace(9000.0, every_s=1000.0)
    expected = AMBIENT_C + (80.0 - AMBIENT_C) * np.exp(-tr["t_s"] / 3000.0)
    np.testing.assert_allclose(tr["air_c"], expected, rtol=1e-10)
    # the log of the excess is a straight line of slope −1/τ
    slope = np.polyfit(tr["t_s"], np.log(tr["air_c"] - AMBIENT_C), 1)[0]
    assert -1.0 / slope == pytest.approx(3000.0, rel=1e-8)


def test_two_node_relaxation_follows_the_eigen_decomposition() -> None:
    # heater off from air 80 °C, load 40 °C: x(t) = V·exp(Λt)·V⁻¹·x0 with numpy's eig
    model = ChamberModel(ChamberParams(), None, air_c=80.0, load_c=40.0)
    tr = model.trace(20_000.0, every_s=500.0)
    lam, vec = np.linalg.eig(hand_matrix(15_000.0, 4_000.0, 20.0, 5.0))
    x0 = np.array([80.0 - AMBIENT_C, 40.0 - AMBIENT_C])
    coef = np.linalg.solve(vec, x0)
    modal = (vec @ (coef[:, None] * np.exp(np.outer(lam, tr["t_s"])))).real
    np.testing.assert_allclose(tr["air_c"] - AMBIENT_C, modal[0], rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(tr["load_c"] - AMBIENT_C, modal[1], rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize(
    ("power_w", "door_open", "expected_c"),
    [
        # ambient + P/G, worked by hand: 23 + 1000/5 = 223 °C
        (1000.0, False, 223.0),
        # 23 + 250/5 = 73 °C
        (250.0, False, 73.0),
        # cooling: 23 − 300/5 = −37 °C
        (-300.0, False, -37.0),
        # door open: G = 5 + 120 = 125 W/K, 23 + 1000/125 = 31 °C
        (1000.0, True, 31.0),
    ],
)
def test_steady_state_under_constant_power_is_ambient_plus_p_over_g(
    power_w: float, door_open: bool, expected_c: float
) -> None:
    model = ChamberModel(ChamberParams(), None)
    model.set_manual_power(power_w)
    if door_open:
        model.open_door(80_000.0)
    model.advance_to(80_000.0)  # about 21 slow time constants: residual e^-21 of the step
    state = model.state()
    assert state.air_c == pytest.approx(expected_c, abs=1e-6)
    assert state.load_c == pytest.approx(expected_c, abs=1e-6)


def test_manual_power_is_limited_to_the_heater_and_cooler_ratings() -> None:
    model = ChamberModel(ChamberParams(), None)
    model.set_manual_power(1e6)
    model.step()
    assert model.state().heater_w == 5000.0
    model.set_manual_power(-1e6)
    model.step()
    assert model.state().cooler_w == 4500.0


# ---------------------------------------------------------------- profile tracking


def test_soak_holds_within_half_a_kelvin_after_settling() -> None:
    model = ChamberModel(ChamberParams(), Soak(125.0, 7200.0))
    tr = model.trace(7200.0)
    settled = tr["t_s"] >= 1800.0
    # common practice, no published source: a chamber's fluctuation about its
    # set point is specified as about ±0.3…±0.5 K; IEC 60068-2-2 allows ±2 K
    # for dry heat (from memory of IEC 60068-2-2)
    assert np.max(np.abs(tr["air_c"][settled] - 125.0)) <= 0.5
    assert np.max(np.abs(tr["load_c"][tr["t_s"] >= 3600.0] - 125.0)) <= 0.5


def test_cycling_reaches_both_extremes_dwells_and_ramps_at_the_set_rate() -> None:
    # JESD22-A104 condition G is −40 °C / +125 °C (from memory of JESD22-A104)
    profile = Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, 2)
    model = ChamberModel(ChamberParams(), profile)
    tr = model.trace(profile.duration_s)
    t, air, load = tr["t_s"], tr["air_c"], tr["load_c"]
    for seg in profile.segments:
        inside = (t >= seg.start_s) & (t <= seg.end_s)
        if seg.label.startswith("dwell"):
            # the last third of every dwell: air within ±0.5 K (common practice,
            # no published source), load within 1 K at the end of the dwell
            late = (t >= seg.end_s - seg.duration_s / 3) & inside
            assert np.max(np.abs(air[late] - seg.end_c)) <= 0.5, seg
            at_end = int(np.searchsorted(t, seg.end_s))
            assert abs(load[at_end] - seg.end_c) <= 1.0, seg
        else:
            # the middle half of a ramp: the air climbs at 10 K/min = 1/6 K/s
            mid = (t >= seg.start_s + seg.duration_s / 4) & (t <= seg.end_s - seg.duration_s / 4)
            rate_k_per_min = np.polyfit(t[mid], air[mid], 1)[0] * 60.0
            assert abs(rate_k_per_min) == pytest.approx(10.0, rel=0.02), seg
    assert air.max() >= 125.0 and air.min() <= -40.0


def test_load_lags_the_air_during_a_ramp_by_its_time_constant() -> None:
    # A first-order load behind air ramping at r lags it by r·τ_load once the
    # transient has died away; τ_load = C_load/G_al = 4000/20 = 200 s, r = 1/6 K/s,
    # so 33.3 K (by hand). The ramp's first 2·τ2 carry a transient: take the lag at the end.
    profile = Steps([(0.0, -40.0, None), (3600.0, -40.0, None), (900.0, 125.0, 10.0)])
    model = ChamberModel(ChamberParams(), profile, air_c=-40.0, load_c=-40.0)
    tr = model.trace(3600.0 + 985.0)
    lag = tr["air_c"][-1] - tr["load_c"][-1]
    assert lag == pytest.approx(200.0 / 6.0, rel=0.05)


def test_a_step_change_overshoots_visibly_but_boundedly() -> None:
    profile = Steps([(3600.0, 60.0), (3600.0, 70.0)])
    model = ChamberModel(ChamberParams(), profile, air_c=60.0, load_c=60.0)
    tr = model.trace(7200.0)
    after = tr["t_s"] > 3600.0
    overshoot = tr["air_c"][after].max() - 70.0
    # common practice, no published source: a PI-controlled chamber overshoots a
    # 10 K step by a few tenths of a kelvin up to 1–2 K
    assert 0.1 <= overshoot <= 2.0
    assert tr["air_c"][-1] == pytest.approx(70.0, abs=0.05)


def test_the_end_of_a_ramp_overshoots_by_at_most_two_kelvin() -> None:
    profile = Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, 1)
    tr = ChamberModel(ChamberParams(), profile).trace(profile.duration_s)
    # common practice, no published source: up to ~2 K at the end of a fast ramp
    assert 0.1 <= tr["air_c"].max() - 125.0 <= 2.0
    assert 0.1 <= -40.0 - tr["air_c"].min() <= 2.0


# ---------------------------------------------------------------- positions and noise


POSITIONS = (
    Position("air", 1.0, 0.0, 0.05),
    Position("door", 0.9, -0.01, 0.05),
    Position("load", 0.0, 0.0, 0.0),
)


def test_position_is_the_blend_plus_the_gradient() -> None:
    model = ChamberModel(ChamberParams(), None, POSITIONS, air_c=123.0, load_c=103.0)
    # noiseless position on the load: exactly the load temperature
    assert model.position_c("load") == 103.0
    # door: 0.9·123 + 0.1·103 − 0.01·(123 − 23) = 110.7 + 10.3 − 1.0 = 120.0, plus noise
    # of standard deviation 0.05 K: within 5 σ
    assert model.position_c("door") == pytest.approx(120.0, abs=0.25)
    with pytest.raises(KeyError):
        model.position_c("nowhere")


def test_same_seed_same_series_other_seed_other_noise() -> None:
    def series(seed: int) -> np.ndarray:
        model = ChamberModel(ChamberParams(), Soak(60.0, 3600.0), POSITIONS, seed=seed)
        return model.trace(3600.0)["pos:air"]

    a, b, c = series(7), series(7), series(8)
    assert np.array_equal(a, b)
    assert not np.array_equal(a, c)
    assert np.max(np.abs(a - c)) < 1.0  # the noise differs, the chamber does not


def test_noise_does_not_depend_on_how_often_it_is_asked_for() -> None:
    often = ChamberModel(ChamberParams(), Soak(60.0, 3600.0), POSITIONS, seed=3)
    seldom = ChamberModel(ChamberParams(), Soak(60.0, 3600.0), POSITIONS, seed=3)
    for t in range(0, 2000, 7):
        often.advance_to(float(t))
        often.positions_c()
    seldom.advance_to(2000.0)
    often.advance_to(2000.0)
    assert often.positions_c() == seldom.positions_c()


def test_noise_is_ar1_with_the_configured_sigma_and_correlation_time() -> None:
    params = ChamberParams(noise_tau_s=20.0)
    model = ChamberModel(params, None, (Position("p", 1.0, 0.0, 0.1),), seed=11)
    x = model.trace(200_000.0)["pos:p"] - AMBIENT_C
    # an AR(1) process x_k = φ·x_{k−1} + e_k has variance σ² and autocorrelation
    # φ^lag (Box & Jenkins, Time Series Analysis, the AR(1) model; from memory)
    assert x.std() == pytest.approx(0.1, rel=0.05)
    for lag in (1, 20, 40):
        r = np.corrcoef(x[:-lag], x[lag:])[0, 1]
        assert r == pytest.approx(math.exp(-lag / 20.0), abs=0.03)


# ---------------------------------------------------------------- disturbances and faults


def settled_soak(temperature_c: float, **kwargs: float) -> ChamberModel:
    model = ChamberModel(ChamberParams(**kwargs), Soak(temperature_c, 1e6))
    model.advance_to(3600.0)
    return model


def test_door_open_cools_the_chamber_and_it_recovers_after_closing() -> None:
    model = settled_soak(125.0)
    model.open_door(120.0)
    assert model.door_open
    tr = model.trace(3600.0 + 120.0)
    # the heater at full cannot hold 125 °C against 125 W/K: the floor would be
    # 23 + 5000/125 = 63 °C (by hand); after 2 min the air is well below the set point
    assert tr["air_c"][-1] < 115.0
    assert tr["heater_w"][-1] == 5000.0
    assert not model.door_open
    tr = model.trace(3600.0 + 120.0 + 1800.0)
    assert abs(tr["air_c"][-1] - 125.0) < 0.5


def test_runaway_overshoots_until_the_heater_supply_is_cut() -> None:
    model = settled_soak(125.0)
    model.set_runaway(True)
    tr = model.trace(3600.0 + 300.0)
    # the initial rise is (P_max − loss)/C_air = (5000 − 5·102)/15 000 = 0.30 K/s (by hand)
    rate = (tr["air_c"][5] - tr["air_c"][0]) / 5.0
    assert rate == pytest.approx(0.30, rel=0.05)
    assert tr["air_c"][-1] > 150.0
    assert tr["heater_w"][-1] == 5000.0 and tr["cooler_w"][-1] == 0.0
    model.heater_supply_enabled = False
    tr = model.trace(3600.0 + 900.0)
    assert tr["heater_w"][-1] == 0.0
    assert tr["air_c"][-1] < tr["air_c"][0]
    model.set_runaway(False)
    model.heater_supply_enabled = True
    tr = model.trace(3600.0 + 4 * 3600.0)
    assert abs(tr["air_c"][-1] - 125.0) < 0.5


def test_the_independent_cutout_latches_the_heater_off() -> None:
    # IEC 61010-2-010 asks for over-temperature protection independent of the
    # controller (from memory of IEC 61010-2-010)
    model = settled_soak(125.0, cutout_c=150.0)
    model.set_runaway(True)
    tr = model.trace(3600.0 + 1800.0)
    assert model.cutout_tripped
    assert 150.0 < tr["air_c"].max() < 152.0
    assert tr["heater_w"][-1] == 0.0
    model.clear_faults()
    assert not model.cutout_tripped and not model.runaway


def test_heater_supply_off_lets_the_air_fall_towards_ambient() -> None:
    model = settled_soak(125.0)
    model.heater_supply_enabled = False
    tr = model.trace(3600.0 + 3600.0)
    assert tr["heater_w"][-1] == 0.0
    assert tr["air_c"][-1] < 110.0


def test_cooler_failure_lets_a_cold_soak_warm_up() -> None:
    model = settled_soak(-40.0)
    model.set_cooler_failed(True)
    tr = model.trace(3600.0 + 600.0)
    assert tr["cooler_w"][-1] == 0.0
    assert tr["air_c"][-1] > -35.0


# ---------------------------------------------------------------- time and clocks


def test_a_1000_hour_cycling_run_on_a_manual_clock_needs_no_sleeping() -> None:
    profile = Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, 1000)
    model = ChamberModel(ChamberParams(), profile, POSITIONS[:1])
    clock = ManualClock()
    for _ in range(1000):
        clock.advance(3600.0)
        model.advance_to(clock.now_s())
    assert model.t_s == 3_600_000.0
    assert model.steps == 3_600_000
    # by hand: cycle 1 is 612 + 900 + 990 + 900 = 3402 s, every later one
    # 990 + 900 + 990 + 900 = 3780 s; 3 600 000 s is in cycle
    # 2 + floor((3 600 000 − 3402)/3780) = 2 + 951 = 953, starting at
    # 3402 + 951·3780 = 3 598 182 s; 1818 s into it is 828 s into the high dwell
    phase = model.state().phase
    assert (phase.cycle, phase.label) == (953, "dwell high")
    assert model.state().setpoint_c == 125.0
    assert abs(model.state().air_c - model.state().setpoint_c) < 3.0
    assert math.isfinite(model.position_c("air"))


def test_advance_to_ignores_the_past_and_steps_whole_steps() -> None:
    model = ChamberModel(ChamberParams(), Soak(50.0, 100.0))
    assert model.advance_to(10.7) == 10
    assert model.t_s == 10.0
    assert model.advance_to(5.0) == 0
    assert model.step() == 1 and model.t_s == 11.0
    assert model.step(3.0) == 3 and model.t_s == 14.0


def test_sim_clock_runs_at_its_speed_and_changes_speed_without_a_jump() -> None:
    wall = [100.0]
    clock = SimClock(3600.0, monotonic=lambda: wall[0])
    assert clock.now_s() == 0.0
    wall[0] = 102.0
    assert clock.now_s() == 7200.0  # 2 s of wall time at 3600× (by hand)
    clock.set_speed(1.0)
    assert clock.now_s() == 7200.0
    wall[0] = 112.0
    assert clock.now_s() == 7210.0
    assert clock.advance(90.0) == 7300.0
    assert clock.speed == 1.0


@pytest.mark.parametrize("bad", [0.0, -1.0, math.nan, math.inf, True])
def test_sim_clock_refuses_a_speed_that_is_not_positive_and_finite(bad: float) -> None:
    with pytest.raises(InputError):
        SimClock(bad)


def test_manual_clock_only_runs_forward_and_is_thread_safe() -> None:
    clock = ManualClock(5.0)
    with pytest.raises(InputError):
        clock.advance(-1.0)
    with pytest.raises(InputError):
        clock.set(4.0)
    clock.set(10.0)

    def tick() -> None:
        for _ in range(1000):
            clock.advance(0.5)

    threads = [threading.Thread(target=tick) for _ in range(4)]
    for th in threads:
        th.start()
    for th in threads:
        th.join()
    assert clock.now_s() == 10.0 + 4 * 1000 * 0.5


# ---------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    "kwargs",
    [
        {"c_air_j_per_k": 0.0},
        {"g_wall_w_per_k": 0.0},
        {"g_air_load_w_per_k": -1.0},
        {"heater_max_w": math.nan},
        {"step_s": 0.0},
    ],
)
def test_bad_parameters_are_refused(kwargs: dict[str, float]) -> None:
    with pytest.raises(InputError):
        ChamberParams(**kwargs)


def test_bad_positions_are_refused() -> None:
    with pytest.raises(InputError):
        Position("p", air_weight=1.5)
    with pytest.raises(InputError):
        ChamberModel(ChamberParams(), None, (Position("p"), Position("p")))


def test_the_benchmark_runs_and_counts_its_steps() -> None:
    # a smoke run of the benchmark (its figures are not judged here): half an
    # hour at 1 s steps is 1800 steps (by hand)
    from soaklog.simulators.bench import bench_chamber

    result = bench_chamber(hours=0.5)
    assert result["steps"] == 1800
    assert set(result) >= {"wall_s", "steps_per_s", "projected_1000h_s", "meets_target"}
