"""Cycle detection, dwell and ramp measurement, deviations — on series drawn by hand with known answers.

The hand-drawn cycle: 0 °C ↔ 100 °C, ramps of exactly 10 K/min, 20 min at each
extreme, two cycles, one reading per minute in the middle of each minute:

    0–20 min at 0 °C | ramp up 20–30 | 100 °C 30–50 | ramp down 50–60 | 0 °C 60–80 |
    ramp up 80–90 | 100 °C 90–110 | ramp down 110–120 | 0 °C 120–140

With a ±2 K band, a reading taken at minute m + 0.5 is within it from 30.5 to
49.5 (the ramp is at 95 °C at 29.5 and 50.5): 20 readings, 20 min, per stay.
The 10 %/90 % points (10 °C and 90 °C) fall 1 min after a ramp starts and
1 min before it ends: 8 min for 80 K, 10 K/min.
"""

from __future__ import annotations

import numpy as np
import pytest
from testkit.report import grid, piecewise

from soaklog.report.conformance import analyse, side_states, window_rates
from soaklog.profile import parse_profile

MID = np.arange(140) + 0.5  # minutes: the middle of each one-minute bucket
CORNERS = [(0, 0), (20, 0), (30, 100), (50, 100), (60, 0), (80, 0), (90, 100), (110, 100), (120, 0), (140, 0)]
TRAPEZOID = piecewise(CORNERS, MID)


def cycle_profile(**kw: object):  # noqa: ANN201
    keys = {"kind": "cycle", "low_c": 0.0, "high_c": 100.0, "ramp_k_per_min": 10.0, "dwell": "10min",
            "cycles": 2, "tolerance_k": 2.0}
    keys.update(kw)
    return parse_profile(keys)


def two_channels(b_offsets: dict[int, float] | None = None):  # noqa: ANN201
    b = TRAPEZOID.copy()
    for i, dv in (b_offsets or {}).items():
        b[i] += dv
    return grid({"a": TRAPEZOID, "b": b})


def test_side_states_hysteresis_by_hand() -> None:
    # levels 10 and 90: 50 is undecided at first, 95 decides "high", 50 keeps it, 5 decides "low"
    assert side_states([50, 95, 50, np.nan, 5, 50, 91], 10.0, 90.0).tolist() == [0, 1, 1, 1, -1, -1, 1]


def test_two_complete_cycles_met() -> None:
    c = analyse(two_channels(), cycle_profile())
    assert c.verdict == "met", c.summary
    assert c.complete_cycles == 2 and c.planned_cycles == 2
    assert [r.cycle for r in c.cycles] == [1, 2]
    assert c.deviations == ()
    # four stays (the 0 °C stretch before the first ramp up is not a cycle's)
    assert [(d.cycle, d.level) for d in c.dwells] == [(1, "high"), (1, "low"), (2, "high"), (2, "low")]
    for d in c.dwells:
        assert d.in_tolerance_s == pytest.approx(20 * 60.0)  # 30.5 … 49.5 min: 20 readings of 1 min
        assert d.channel_in_tolerance_s == pytest.approx((1200.0, 1200.0))
    high1 = c.dwells[0]
    assert high1.entry_s == pytest.approx(30 * 60.0) and high1.exit_s == pytest.approx(50 * 60.0)


def test_ramp_rate_is_exactly_the_drawn_slope() -> None:
    c = analyse(two_channels(), cycle_profile())
    assert [(r.cycle, r.direction) for r in c.ramps] == [(1, "up"), (1, "down"), (2, "up"), (2, "down")]
    for r in c.ramps:
        assert r.rate_k_per_min == pytest.approx(10.0)  # 80 K between 10 and 90 °C in 8 min
        assert r.channel_rate_k_per_min == pytest.approx((10.0, 10.0))
    up1 = c.ramps[0]
    assert up1.t_start_s == pytest.approx(21 * 60.0) and up1.t_end_s == pytest.approx(29 * 60.0)
    # from leaving the high band (50 min) to entering the low band (60.5 → bucket 60, at 60 min): 10 min
    assert c.ramps[1].transition_s == pytest.approx(10 * 60.0)


def test_a_ramp_outside_its_tolerance_is_a_deviation_per_channel() -> None:
    c = analyse(two_channels(), cycle_profile(ramp_k_per_min=5.0, ramp_tolerance_k_per_min=1.0))
    kinds = {(d.kind, d.channel) for d in c.deviations}
    assert kinds == {("ramp_rate", "a"), ("ramp_rate", "b")}
    assert len(c.deviations) == 8  # 4 ramps × 2 channels, each at 10 K/min against 5 ± 1
    assert all(d.value == pytest.approx(10.0) and d.limit == pytest.approx(6.0) for d in c.deviations)


def test_an_injected_excursion_is_reported_with_its_time() -> None:
    # channel b is 5 K high for minutes 95, 96, 97 (inside the high dwell of cycle 2)
    c = analyse(two_channels({95: 5.0, 96: 5.0, 97: 5.0}), cycle_profile())
    assert c.verdict == "not_met"
    (d,) = c.deviations
    assert (d.kind, d.channel, d.cycle, d.phase) == ("excursion", "b", 2, "dwell high, cycle 2")
    assert d.start_s == pytest.approx(95 * 60.0) and d.end_s == pytest.approx(98 * 60.0)
    assert d.value == pytest.approx(105.0) and d.limit == pytest.approx(102.0)
    # the dwell's time with every channel in tolerance loses those 3 minutes: 17 min, still ≥ 10
    assert c.dwells[2].in_tolerance_s == pytest.approx(17 * 60.0)


def test_a_missing_channel_during_a_dwell_is_a_deviation() -> None:
    s = two_channels()
    s.mean[40:43, 1] = np.nan
    s.lo[40:43, 1] = np.nan
    s.hi[40:43, 1] = np.nan
    c = analyse(s, cycle_profile())
    (d,) = c.deviations
    assert (d.kind, d.channel, d.cycle) == ("no_data", "b", 1)
    assert d.start_s == pytest.approx(40 * 60.0) and d.end_s == pytest.approx(43 * 60.0)


def test_short_dwells_and_a_dwell_cut_by_the_end_of_the_data() -> None:
    # 25 min required, 20 min held: the first three stays are short; the last one ends with the data
    # while still in tolerance, so it is unfinished (not a deviation) and cycle 2 is not complete
    c = analyse(two_channels(), cycle_profile(dwell="25min"))
    short = [d for d in c.deviations if d.kind == "dwell_short"]
    assert [(d.cycle, d.phase) for d in short] == [(1, "dwell high, cycle 1"), (1, "dwell low, cycle 1"),
                                                    (2, "dwell high, cycle 2")]
    assert all(d.value == pytest.approx(20.0) and d.limit == pytest.approx(25.0) for d in short)
    assert c.complete_cycles == 1
    assert c.dwells[-1].finished is False


def test_fewer_cycles_than_planned_is_incomplete_not_failed() -> None:
    c = analyse(two_channels(), cycle_profile(cycles=5))
    assert c.verdict == "incomplete" and c.complete_cycles == 2 and c.planned_cycles == 5


def test_rate_limit_over_a_window() -> None:
    # over 5 min the ramps change 50 K: 10 K/min, above a limit of 8 K/min, once per ramp per channel
    c = analyse(two_channels(), cycle_profile(ramp_max_k_per_min=8.0, rate_window="5min"))
    rate = [d for d in c.deviations if d.kind == "rate_of_change"]
    assert len(rate) == 8
    assert all(d.value == pytest.approx(10.0) for d in rate)
    # the reading at 24.5 min (45 °C) less the one 5 min before (19.5 min, 0 °C) is 45 K > 40 K, at 23.5 min
    # only 35 K:
    # each run starts 4 min into its ramp and lasts 7 buckets (24 … 30 for the first)
    assert {d.phase for d in rate} == {"ramp up, cycle 1", "ramp down, cycle 1", "ramp up, cycle 2",
                                       "ramp down, cycle 2"}
    first = min(rate, key=lambda d: d.start_s)
    assert first.start_s == pytest.approx(24 * 60.0) and first.end_s == pytest.approx(31 * 60.0)


def test_window_rates_by_hand() -> None:
    # 0, 2, 4, 6 °C one minute apart, over 2 min: 2 K/min from the third sample on
    r = window_rates(np.array([[0.0], [2.0], [4.0], [6.0]]), 2, 60.0)
    np.testing.assert_allclose(r[:, 0], [np.nan, np.nan, 2.0, 2.0])


def test_slow_transition_is_a_deviation() -> None:
    # the transition from one band to the other takes 10 min (see the ramp test); allow 5
    c = analyse(two_channels(), cycle_profile(transition_max="5min"))
    slow = [d for d in c.deviations if d.kind == "transition_slow"]
    assert len(slow) == 3  # ramp down 1, ramp up 2, ramp down 2 (the first ramp starts at no band)
    assert all(d.value == pytest.approx(10.0) for d in slow)


def test_asymmetric_band_as_jedec_writes_it() -> None:
    # JESD22-A104 (from memory): the extremes may be exceeded by up to 10 K, never fallen short of.
    # A chamber that stops at 99 °C and −1 … +1 °C: the high dwell never enters [100, 110].
    low_hi = piecewise([(0, 0), (20, 0), (30, 99), (50, 99), (60, 0), (80, 0), (90, 99), (110, 99), (120, 0),
                        (140, 0)], MID)
    s = grid({"a": low_hi})
    c = analyse(s, parse_profile({
        "kind": "cycle", "low_c": 0.0, "high_c": 100.0, "dwell": "10min", "cycles": 2,
        "high_tolerance_k": [0.0, 10.0], "low_tolerance_k": [10.0, 0.0]}))
    short = [d for d in c.deviations if d.kind == "dwell_short"]
    assert [d.phase for d in short] == ["dwell high, cycle 1", "dwell high, cycle 2"]
    assert all(d.value == 0.0 for d in short)


def test_soak_by_hand() -> None:
    # 25 °C rising 1 K/min to 125 °C (100 min), 90 min there, falling 1 K/min: readings at m + 0.5 min are
    # within 125 ± 2 K from 98.5 (123.5 °C) to 191.5 (123.5 °C on the way down): 94 readings, 94 min
    mid = np.arange(300) + 0.5
    y = piecewise([(0, 25), (100, 125), (190, 125), (290, 25), (300, 25)], mid)
    p = parse_profile({"kind": "soak", "temperature_c": 125.0, "duration": "1h", "tolerance_k": 2.0,
                       "ramp_max_k_per_min": 1.0})
    c = analyse(grid({"a": y}), p)
    assert c.verdict == "met", c.summary
    (d,) = c.dwells
    assert d.in_tolerance_s == pytest.approx(94 * 60.0)
    assert d.entry_s == pytest.approx(98 * 60.0) and d.exit_s == pytest.approx(192 * 60.0)
    (r,) = c.ramps
    assert r.rate_k_per_min == pytest.approx(1.0)  # the drawn slope
    # too long a soak asked for: short by 26 min
    c2 = analyse(grid({"a": y}), parse_profile({"kind": "soak", "temperature_c": 125.0, "duration": "2h",
                                                "tolerance_k": 2.0}))
    (short,) = c2.deviations
    assert short.kind == "dwell_short" and short.value == pytest.approx(94.0) and short.limit == pytest.approx(120.0)


def test_soak_rate_limit_by_hand() -> None:
    # IEC 60068-2-2 style gradual change (from memory: at most 1 K/min over 5 min); drawn at 2 K/min
    mid = np.arange(200) + 0.5
    y = piecewise([(0, 25), (50, 125), (200, 125)], mid)
    p = parse_profile({"kind": "soak", "temperature_c": 125.0, "duration": "1h", "tolerance_k": 2.0,
                       "ramp_max_k_per_min": 1.0, "rate_window": "5min"})
    c = analyse(grid({"a": y}), p)
    (d,) = [d for d in c.deviations if d.kind == "rate_of_change"]
    assert d.value == pytest.approx(2.0) and d.phase == "on the way to the soak"


def test_a_run_that_never_gets_there_is_not_met_once_it_leaves() -> None:
    mid = np.arange(120) + 0.5
    y = piecewise([(0, 25), (60, 115), (120, 25)], mid)
    c = analyse(grid({"a": y}), parse_profile({"kind": "soak", "temperature_c": 125.0, "duration": "1h",
                                               "tolerance_k": 2.0}))
    # never within 123…127 °C, and the data goes on: the soak was never reached, which is not yet a
    # "short" soak (it may still come): the verdict is incomplete
    assert c.verdict == "incomplete" and c.dwells[0].entry_s is None


def test_an_excursion_that_runs_into_the_end_of_a_dwell() -> None:
    # b drops 5 K at minutes 45 and 46 and is back only partly before the ramp away: minutes 47–49 have
    # their mean in the band (99 °C) but a reading below it (97.5 °C). It left and came back: an excursion
    # from 45 to 50 min, although b was never again wholly within the band in that dwell.
    s = two_channels({45: -5.0, 46: -5.0})
    s.mean[47:50, 1] = 99.0
    s.lo[47:50, 1] = 97.5
    s.hi[47:50, 1] = 100.0
    c = analyse(s, cycle_profile())
    (d,) = c.deviations
    assert (d.kind, d.channel, d.cycle) == ("excursion", "b", 1)
    assert d.start_s == pytest.approx(45 * 60.0) and d.end_s == pytest.approx(50 * 60.0)
    assert d.value == pytest.approx(95.0)


def test_leaving_a_dwell_for_the_next_ramp_is_not_an_excursion() -> None:
    # the same drop with no return before the ramp: b's dwell ends early (15 min instead of 20), and the
    # time with every channel in tolerance shows it; nothing came back, so nothing is listed
    c = analyse(two_channels({45: -5.0, 46: -5.0, 47: -5.0, 48: -5.0, 49: -5.0}), cycle_profile())
    assert c.deviations == ()
    assert c.dwells[0].channel_in_tolerance_s == pytest.approx((1200.0, 900.0))
    assert c.dwells[0].in_tolerance_s == pytest.approx(900.0)


def test_an_overshoot_counts_even_before_the_channel_settles() -> None:
    # b shoots through to 105 °C at minute 30 (band 100 ± 2 K) and only then settles: never wholly in the
    # band before, yet beyond its far side: an excursion from 30 to 31 min reaching 105 °C
    c = analyse(two_channels({30: 5.0}), cycle_profile())
    (d,) = c.deviations
    assert (d.kind, d.channel, d.cycle) == ("excursion", "b", 1)
    assert d.start_s == pytest.approx(30 * 60.0) and d.end_s == pytest.approx(31 * 60.0)
    assert d.value == pytest.approx(105.0) and d.limit == pytest.approx(102.0)


def test_undershoot_at_the_low_extreme() -> None:
    # the same below the low band: a reading of −3 °C at minute 60 (band 0 ± 2 K)
    c = analyse(two_channels({60: -3.0}), cycle_profile())
    (d,) = c.deviations
    assert (d.kind, d.channel, d.phase) == ("excursion", "b", "dwell low, cycle 1")
    assert d.value == pytest.approx(-3.0) and d.limit == pytest.approx(-2.0)
