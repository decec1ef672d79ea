"""Alarm episodes from events, and alarm rates against EEMUA 191 / ANSI/ISA-18.2 benchmarks."""

from __future__ import annotations

import pytest

from soaklog.report.alarmlog import alarm_episodes, alarm_rates, peak_rating, rate_rating
from soaklog.store import EventRow

T0 = 1_800_000_000.0


def ev(t_s: float, kind: str, alarm: str = "air-high:air-supply", channel: str | None = "air-supply",
       **data: object) -> EventRow:
    """An event as the store reads it back."""
    return EventRow(t_ms=int((T0 + t_s) * 1000), kind=kind, message=f"{kind} {alarm}", severity="high",
                    data={"alarm": alarm, **data}, id=int(t_s * 10), channel=channel)


def test_an_episode_with_its_acknowledgement_and_action() -> None:
    events = [
        ev(0, "service_start", alarm=""),
        ev(10, "alarm_raised", rule="air-high"),
        # the service's action outcome names the alarm point, not the rule
        ev(11, "action_done", action="heater supply off", outcome="done"),
        ev(130, "alarm_acknowledged", actor="tech"),
        ev(310, "alarm_cleared"),
    ]
    (e,) = alarm_episodes(events)
    assert (e.rule, e.channel) == ("air-high", "air-supply")
    assert e.raised_s == T0 + 10 and e.cleared_s == T0 + 310
    assert e.duration_s(T0 + 1000) == pytest.approx(300.0)
    assert e.ack_delay_s == pytest.approx(120.0) and e.acknowledged_by == "tech"
    assert len(e.actions) == 1 and e.actions[0].startswith("heater supply off: done")


def test_still_active_at_the_end_of_the_data() -> None:
    (e,) = alarm_episodes([ev(100, "alarm_raised")])
    assert e.cleared_s is None and e.duration_s(T0 + 400) == pytest.approx(300.0)


def test_two_points_of_one_rule_are_separate_episodes() -> None:
    events = [ev(0, "alarm_raised", alarm="hi:a", channel="a"), ev(5, "alarm_raised", alarm="hi:b", channel="b"),
              ev(20, "alarm_cleared", alarm="hi:a", channel="a")]
    eps = alarm_episodes(events)
    assert [(e.channel, e.cleared_s) for e in eps] == [("a", T0 + 20), ("b", None)]


def test_acknowledged_after_clearing_belongs_to_the_last_episode() -> None:
    events = [ev(0, "alarm_raised"), ev(20, "alarm_cleared"), ev(50, "alarm_acknowledged", actor="night shift")]
    (e,) = alarm_episodes(events)
    assert e.acknowledged_s == T0 + 50 and e.acknowledged_by == "night shift"


def test_no_alarm_events_no_episodes() -> None:
    assert alarm_episodes([ev(0, "gap"), ev(1, "instrument_lost")]) == []


@pytest.mark.parametrize(
    ("per_10_min", "rating"),
    [
        # EEMUA 191 (from memory): < 1 per 10 min very likely acceptable; up to 1 per 5 min manageable;
        # up to 1 per minute likely over-demanding; more very likely unacceptable
        (0.0, "very likely acceptable"),
        (0.9, "very likely acceptable"),
        (1.0, "manageable"),
        (2.0, "manageable"),
        (5.0, "likely over-demanding"),
        (10.0, "likely over-demanding"),
        (10.5, "very likely unacceptable"),
    ],
)
def test_rate_bands(per_10_min: float, rating: str) -> None:
    assert rate_rating(per_10_min) == rating


@pytest.mark.parametrize(
    ("peak", "rating"),
    # EEMUA 191 (from memory): alarms in 10 min after an upset: under 10 manageable, up to 100 hard, more excessive
    [(0, "manageable"), (9, "manageable"), (10, "hard to cope with"), (100, "hard to cope with"), (101, "excessive")],
)
def test_peak_bands(peak: int, rating: str) -> None:
    assert peak_rating(peak) == rating


def test_rates_over_an_hour_by_hand() -> None:
    # 12 alarms evenly over one hour, one every 5 min: 12 per hour, 2 per 10 min: "manageable"
    eps = alarm_episodes([ev(300 * k + 1, "alarm_raised", alarm=f"a{k}") for k in range(12)])
    r = alarm_rates(eps, T0, T0 + 3600)
    assert r.alarms == 12 and r.per_hour == pytest.approx(12.0) and r.per_10_min == pytest.approx(2.0)
    assert r.rate_rating == "manageable"
    assert r.peak_10_min == 2 and r.flood_periods == 0 and r.periods == 6 and r.chattering == ()


def test_a_flood_and_chattering_by_hand() -> None:
    # 11 different alarms within the first 10 min: a flood (ANSI/ISA-18.2, from memory: > 10 in 10 min)
    flood = [ev(30 * k, "alarm_raised", alarm=f"f{k}") for k in range(11)]
    # one alarm raised, cleared and raised again three times within 50 s: chattering (3 or more in 1 min)
    chatter = []
    for k in range(3):
        chatter += [ev(1000 + 20 * k, "alarm_raised", alarm="door:x", channel="x"),
                    ev(1005 + 20 * k, "alarm_cleared", alarm="door:x", channel="x")]
    r = alarm_rates(alarm_episodes(flood + chatter), T0, T0 + 3600)
    assert r.alarms == 14
    assert r.peak_10_min == 11 and r.peak_at_s == T0 and r.peak_rating == "hard to cope with"
    assert r.flood_periods == 1 and r.flood_share == pytest.approx(1 / 6)
    assert r.chattering == ("door:x on x",)
