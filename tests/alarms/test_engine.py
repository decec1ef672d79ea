"""The alarm engine as tables of cases and Hypothesis properties, on a fake time line (time is passed in).

Expected states and transitions are those of the ANSI/ISA-18.2 / IEC 62682
alarm state model (from memory of both): an alarm is raised into
"unacknowledged", an acknowledgement moves an active alarm to "acknowledged"
and a returned one to "normal", a latched alarm waits for a reset, a shelved
one is silent until its shelf ends. Values and limits are plain arithmetic
on the test's own numbers.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.alarms import (
    ACTIVE_STATES,
    KIND_DEFAULTS,
    MAX_SHELVE_S,
    STATES,
    AlarmEngine,
    AlarmState,
    Rule,
    Sample,
)

NAN = math.nan


def run(rule: Rule, steps, channels=("a", "b", "c"), instruments=("m",)):
    """Feed ``steps`` to a one-rule engine; the events as (t, kind, state after) and the engine.

    A step is (t, {channel: value or (value, status)}) or (t, None, {instrument: connected}).
    """
    eng = AlarmEngine([rule], channels, instruments)
    got = []
    for step in steps:
        t, values = step[0], step[1]
        connected = step[2] if len(step) > 2 else None
        samples = []
        for ch, v in (values or {}).items():
            value, status = v if isinstance(v, tuple) else (v, "ok")
            samples.append(Sample(ch, float(t), float(value), status))
        for e in eng.step(samples, float(t), connected):
            got.append((e.t_s, e.kind, e.after))
    return got, eng


def hi(**kw) -> Rule:
    base = {"limit": 130.0, "deadband": 2.0, "on_delay_s": 0.0, "off_delay_s": 0.0}
    base.update(kw)
    return Rule.of_kind("hot", "high", ["a"], **base)


def series(*pairs):
    return [(t, {"a": v}) for t, v in pairs]


CASES = [
    # name, rule, steps, expected events (t, kind, state after)
    ("high raises above its limit", hi(), series((0, 129.0), (1, 130.5)),
     [(1, "alarm_raised", "unacknowledged")]),
    ("a value at the limit is not above it", hi(), series((0, 130.0), (1, 130.0)), []),
    ("inside the deadband a raised alarm stays", hi(), series((0, 131.0), (1, 129.0), (2, 128.0), (3, 129.9)),
     [(0, "alarm_raised", "unacknowledged")]),
    ("below limit - deadband it returns", hi(), series((0, 131.0), (1, 127.9)),
     [(0, "alarm_raised", "unacknowledged"), (1, "alarm_cleared", "returned_unacknowledged")]),
    ("a latched alarm is held when its condition returns", hi(latch=True), series((0, 131.0), (1, 120.0)),
     [(0, "alarm_raised", "unacknowledged"), (1, "alarm_cleared", "latched")]),
    ("a latched alarm raised again is unacknowledged again", hi(latch=True),
     series((0, 131.0), (1, 120.0), (2, 131.0)),
     [(0, "alarm_raised", "unacknowledged"), (1, "alarm_cleared", "latched"), (2, "alarm_raised", "unacknowledged")]),
    ("a returned alarm raised again is unacknowledged", hi(), series((0, 131.0), (1, 120.0), (2, 131.0)),
     [(0, "alarm_raised", "unacknowledged"), (1, "alarm_cleared", "returned_unacknowledged"),
      (2, "alarm_raised", "unacknowledged")]),
    ("on-delay: a spike shorter than the delay is ignored", hi(on_delay_s=20.0),
     series((0, 135.0), (10, 135.0), (20, 129.0), (30, 125.0)), []),
    ("on-delay: a condition that lasts the delay raises", hi(on_delay_s=20.0),
     series((0, 135.0), (10, 135.0), (20, 135.0)), [(20, "alarm_raised", "unacknowledged")]),
    ("on-delay restarts after a dip into the deadband", hi(on_delay_s=20.0),
     series((0, 135.0), (10, 129.0), (20, 135.0), (30, 135.0), (40, 135.0)), [(40, "alarm_raised", "unacknowledged")]),
    ("off-delay: the return must last the delay", hi(off_delay_s=25.0),
     series((0, 131.0), (10, 127.0), (20, 127.0), (30, 127.0), (40, 127.0)),
     [(0, "alarm_raised", "unacknowledged"), (40, "alarm_cleared", "returned_unacknowledged")]),
    ("off-delay restarts when the value comes back into the deadband", hi(off_delay_s=25.0),
     series((0, 131.0), (10, 127.0), (30, 129.0), (40, 127.0), (60, 127.0), (70, 127.0)),
     [(0, "alarm_raised", "unacknowledged"), (70, "alarm_cleared", "returned_unacknowledged")]),
    ("no good value, no evaluation", hi(), [(0, {"a": (NAN, "open")}), (1, {"a": (NAN, "lost")})], []),
    ("low raises below its limit and returns above limit + deadband",
     Rule.of_kind("cold", "low", ["a"], limit=-40.0, deadband=1.0, on_delay_s=0.0, off_delay_s=0.0),
     series((0, -39.0), (1, -40.5), (2, -39.5), (3, -38.9)),
     [(1, "alarm_raised", "unacknowledged"), (3, "alarm_cleared", "returned_unacknowledged")]),
    ("high-high: no on-delay, 60 s off-delay and a latch by default",
     Rule.of_kind("trip", "high_high", ["a"], limit=140.0), series((0, 141.0), (100, 120.0), (159, 120.0), (160, 120.0)),
     [(0, "alarm_raised", "unacknowledged"), (160, "alarm_cleared", "latched")]),
    # 2 K per 10 s is 12 K/min; the window needs three points over at least half its length
    ("rate: 12 K/min rising beyond 10 K/min",
     Rule.of_kind("fast", "rate", ["a"], limit=10.0, window_s=60.0, on_delay_s=0.0, off_delay_s=0.0),
     series((0, 20.0), (10, 22.0), (20, 24.0), (30, 26.0)), [(30, "alarm_raised", "unacknowledged")]),
    ("rate: 6 K/min is within 10 K/min",
     Rule.of_kind("fast", "rate", ["a"], limit=10.0, window_s=60.0, on_delay_s=0.0, off_delay_s=0.0),
     series((0, 20.0), (10, 21.0), (20, 22.0), (30, 23.0), (40, 24.0)), []),
    ("rate: a fall watched for rises only is ignored",
     Rule.of_kind("fast", "rate", ["a"], limit=10.0, window_s=60.0, direction="rise", on_delay_s=0.0),
     series((0, 26.0), (10, 24.0), (20, 22.0), (30, 20.0)), []),
    ("deviation from a set point: 3.5 K beyond 3 K",
     Rule.of_kind("dev", "deviation", ["a"], limit=3.0, deadband=0.5, setpoint_c=125.0, on_delay_s=0.0, off_delay_s=0.0),
     series((0, 126.0), (1, 128.5), (2, 127.8), (3, 127.4)),
     [(1, "alarm_raised", "unacknowledged"), (3, "alarm_cleared", "returned_unacknowledged")]),
    ("deviation from another channel: 4 K beyond 3 K",
     Rule.of_kind("dev", "deviation", ["a"], limit=3.0, reference="b", on_delay_s=0.0),
     [(0, {"a": 100.0, "b": 99.0}), (10, {"a": 100.0, "b": 96.0})], [(10, "alarm_raised", "unacknowledged")]),
    ("deviation: a reference older than max_age is not used",
     Rule.of_kind("dev", "deviation", ["a"], limit=3.0, reference="b", max_age_s=30.0, on_delay_s=0.0),
     [(0, {"b": 90.0}), (100, {"a": 100.0})], []),
    ("spread of a group: 2.2 K beyond 2 K",
     Rule.of_kind("uniform", "spread", ["a", "b", "c"], limit=2.0, on_delay_s=0.0),
     [(0, {"a": 100.0, "b": 100.5, "c": 101.0}), (10, {"a": 100.0, "b": 100.5, "c": 102.2})],
     [(10, "alarm_raised", "unacknowledged")]),
    ("sensor fault on an open sensor, back when it reads",
     Rule.of_kind("bad", "sensor_fault", ["a"], off_delay_s=0.0),
     [(0, {"a": 20.0}), (1, {"a": (NAN, "open")}), (2, {"a": 20.0})],
     [(1, "alarm_raised", "unacknowledged"), (2, "alarm_cleared", "returned_unacknowledged")]),
    ("a link failure is not a sensor fault",
     Rule.of_kind("bad", "sensor_fault", ["a"]), [(0, {"a": (NAN, "timeout")}), (1, {"a": (NAN, "checksum")})], []),
    ("stale after 60 s without a good reading",
     Rule.of_kind("quiet", "stale", ["a"], stale_after_s=60.0),
     [(0, {"a": 20.0}), (30, {"a": (NAN, "timeout")}), (60, None), (61, None), (62, {"a": 20.0})],
     [(61, "alarm_raised", "unacknowledged"), (62, "alarm_cleared", "returned_unacknowledged")]),
    ("instrument lost and back",
     Rule.of_kind("gone", "instrument_lost"), [(0, None, {"m": True}), (5, None, {"m": False}), (9, None, {"m": True})],
     [(5, "alarm_raised", "unacknowledged"), (9, "alarm_cleared", "returned_unacknowledged")]),
    ("an out-of-service rule follows its condition silently",
     hi(in_service=False), series((0, 131.0), (1, 120.0)), []),
]


@pytest.mark.parametrize(("rule", "steps", "expected"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_rule_tables(rule, steps, expected):
    got, _ = run(rule, steps)
    assert got == expected


def test_an_unsorted_batch_is_taken_in_time_order():
    """A batch that arrives out of order gives the events the ordered one gives."""
    rule = hi(on_delay_s=20.0)
    eng = AlarmEngine([rule], ["a"])
    samples = [Sample("a", 20.0, 135.0), Sample("a", 0.0, 135.0), Sample("a", 10.0, 135.0)]
    events = eng.step(samples, 30.0)
    assert [(e.t_s, e.kind) for e in events] == [(20.0, "alarm_raised")]


# ---------------------------------------------------------------- operators


def engine_in(state: str) -> tuple[AlarmEngine, float]:
    """A high alarm on channel a brought into ``state`` by samples and operations; returns it and the time."""
    eng = AlarmEngine([hi(latch=state == "latched")], ["a"])
    t = 0.0
    if state in ("unacknowledged", "acknowledged", "returned_unacknowledged", "latched"):
        eng.step([Sample("a", t, 131.0)], t)
    if state == "acknowledged":
        eng.acknowledge("*", t)
    if state in ("returned_unacknowledged", "latched"):
        t += 1
        eng.step([Sample("a", t, 120.0)], t)
    assert eng.get("hot:a").state == state
    return eng, t


ACK_CASES = [
    # state before, state after, events
    ("unacknowledged", "acknowledged", 1),  # ack never clears an active condition
    ("returned_unacknowledged", "normal", 1),
    ("latched", "normal", 1),  # an acknowledgement resets a latched alarm whose condition has gone
    ("acknowledged", "acknowledged", 0),
    ("normal", "normal", 0),
]


@pytest.mark.parametrize(("before", "after", "n"), ACK_CASES)
def test_acknowledge(before, after, n):
    eng, t = engine_in(before)
    res = eng.acknowledge("hot:a", t + 1, note="checked the door", actor="ana")
    assert eng.get("hot:a").state == after
    assert len(res.events) == n
    if n:
        e = res.events[0]
        assert (e.kind, e.before, e.after, e.note, e.actor) == ("alarm_acknowledged", before, after, "checked the door", "ana")
    else:
        assert "nothing to acknowledge" in res.outcome


def test_targets_name_an_alarm_a_rule_or_all():
    eng = AlarmEngine([hi(), Rule.of_kind("cold", "low", ["a", "b"], limit=0.0)], ["a", "b"])
    assert eng.match("*") == ["hot:a", "cold:a", "cold:b"]
    assert eng.match("cold") == ["cold:a", "cold:b"]
    assert eng.match("cold:b") == ["cold:b"]
    res = eng.acknowledge("warm", 0.0)
    assert not res.matched and "no alarm 'warm'" in res.outcome and "hot:a" in res.outcome


def test_shelve_silences_until_the_expiry_then_the_alarm_returns_in_its_conditions_state():
    eng, _t = engine_in("unacknowledged")
    res = eng.shelve("hot:a", 10.0, 110.0, note="door work")
    assert [e.kind for e in res.events] == ["alarm_shelved"]
    p = eng.get("hot:a")
    assert (p.state, p.shelved_until_s) == ("shelved", 110.0)
    # the condition comes and goes while shelved: no event
    assert eng.step([Sample("a", 20.0, 120.0)], 20.0) == []
    assert eng.step([Sample("a", 30.0, 131.0)], 30.0) == []
    # at the expiry the condition is active: annunciated again, unacknowledged
    events = eng.step([], 110.0)
    assert [(e.kind, e.before, e.after, e.trigger) for e in events] == [
        ("alarm_unshelved", "shelved", "unacknowledged", "raised")]


def test_unshelve_with_the_condition_gone_is_normal():
    eng, _t = engine_in("unacknowledged")
    eng.shelve("*", 1.0, 1000.0)
    eng.step([Sample("a", 2.0, 120.0)], 2.0)
    res = eng.unshelve("*", 3.0)
    assert [(e.before, e.after) for e in res.events] == [("shelved", "normal")]


@pytest.mark.parametrize(
    ("rule", "until_s", "why"),
    [
        (Rule.of_kind("trip", "high_high", ["a"], limit=140.0), 100.0, "may not be shelved"),
        (hi(), MAX_SHELVE_S + 1.0, "at most 24 h"),
        (hi(), 0.0, "in the future"),
    ],
)
def test_shelving_is_refused_for_highly_managed_alarms_and_unbounded_shelves(rule, until_s, why):
    eng = AlarmEngine([rule], ["a"])
    res = eng.shelve("*", 0.0, until_s)
    assert res.events == () and why in res.outcome
    assert eng.get(f"{rule.name}:a").state == "normal"


def test_out_of_service_and_back_with_the_condition_active():
    eng, _t = engine_in("acknowledged")
    res = eng.remove_from_service("*", 5.0, note="sensor replaced")
    assert [e.after for e in res.events] == ["out_of_service"]
    assert eng.step([Sample("a", 6.0, 120.0)], 6.0) == []
    assert eng.step([Sample("a", 7.0, 135.0)], 7.0) == []
    res = eng.return_to_service("*", 8.0)
    assert [(e.before, e.after) for e in res.events] == [("out_of_service", "unacknowledged")]


def test_a_note_is_an_event_without_a_state_change():
    eng, _t = engine_in("acknowledged")
    res = eng.note("hot", 3.0, "operator checked the door seal", actor="ana")
    assert [(e.kind, e.before, e.after, e.note) for e in res.events] == [
        ("alarm_note", "acknowledged", "acknowledged", "operator checked the door seal")]
    assert eng.get("hot:a").state == "acknowledged"


@pytest.mark.parametrize(
    ("kind", "duration_s", "state"),
    [("acknowledge", None, "acknowledged"), ("shelve", 60.0, "shelved"), ("out_of_service", None, "out_of_service")],
)
def test_apply_dispatches_requests_by_name(kind, duration_s, state):
    eng, _t = engine_in("unacknowledged")
    res = eng.apply(kind, "hot:a", 1.0, duration_s=duration_s)
    assert res.matched and eng.get("hot:a").state == state


def test_apply_refuses_an_unknown_request_and_a_shelf_without_duration():
    eng, _t = engine_in("unacknowledged")
    assert not eng.apply("silence", "*", 1.0).matched
    assert not eng.apply("shelve", "*", 1.0).matched
    assert eng.get("hot:a").state == "unacknowledged"


def test_a_restarted_engine_keeps_latched_and_shelved_alarms():
    eng, _t = engine_in("latched")
    saved = eng.alarms()
    again = AlarmEngine([hi(latch=True)], ["a"], restore=saved)
    assert again.get("hot:a").state == "latched"
    assert again.step([Sample("a", 50.0, 120.0)], 50.0) == []
    assert again.get("hot:a").state == "latched"
    assert [e.after for e in again.acknowledge("*", 51.0).events] == ["normal"]


def test_changed_reports_each_point_once_per_change():
    eng = AlarmEngine([hi()], ["a"])
    assert [p.id for p in eng.changed()] == ["hot:a"]  # new points are saved once
    assert eng.changed() == []
    eng.step([Sample("a", 0.0, 120.0)], 0.0)
    assert eng.changed() == []
    eng.step([Sample("a", 1.0, 131.0)], 1.0)
    assert [p.state for p in eng.changed()] == ["unacknowledged"]


# ---------------------------------------------------------------- defaults


def test_temperature_defaults_follow_the_alarm_management_guidance():
    # ISA-18.2 guidance for temperature (from memory of ANSI/ISA-18.2 and its alarm philosophy
    # report): deadband about 1 % of span, on- and off-delay about 60 s; 1 K is 1 % of 100 K
    d = KIND_DEFAULTS["high"]
    assert (d.deadband, d.on_delay_s, d.off_delay_s) == (1.0, 60.0, 60.0)
    assert KIND_DEFAULTS["low"] == d
    # high-high / low-low: no on-delay, latched, never shelved (common practice, no published source)
    for kind in ("high_high", "low_low"):
        dd = KIND_DEFAULTS[kind]
        assert (dd.on_delay_s, dd.latch, dd.shelvable, dd.severity) == (0.0, True, False, "critical")
    # the built-in kinds, each one module of soaklog/kinds/alarms/
    assert set(KIND_DEFAULTS) == {
        "high", "high_high", "low", "low_low", "rate", "deviation", "spread", "sensor_fault", "stale", "instrument_lost",
        "flatline"}


# ---------------------------------------------------------------- properties

LIMIT = 130.0
DEADBAND = 2.0


@settings(max_examples=200, deadline=None)
@given(noise=st.lists(st.floats(min_value=LIMIT - DEADBAND, max_value=LIMIT + 10.0), min_size=1, max_size=80),
       on_delay_s=st.sampled_from([0.0, 5.0, 20.0]), off_delay_s=st.sampled_from([0.0, 5.0, 60.0]))
def test_a_noisy_signal_inside_the_deadband_never_chatters(noise, on_delay_s, off_delay_s):
    """Once raised above the limit, noise that stays above limit - deadband never clears it."""
    eng = AlarmEngine([hi(on_delay_s=on_delay_s, off_delay_s=off_delay_s)], ["a"])
    events = []
    t = 0.0
    for v in [LIMIT + 5.0] * 30 + noise:  # held above the limit long enough to raise with any delay here
        events += eng.step([Sample("a", t, v)], t)
        t += 1.0
    kinds = [e.kind for e in events]
    assert kinds == ["alarm_raised"]


@settings(max_examples=200, deadline=None)
@given(noise=st.lists(st.floats(min_value=LIMIT - 5.0, max_value=LIMIT + 1.0 - 1e-9), min_size=1, max_size=80))
def test_noise_around_the_limit_raises_at_most_once_with_a_deadband_wider_than_the_noise(noise):
    """A signal whose noise (6 K peak to peak) is narrower than the deadband plus the gap can toggle once at most."""
    eng = AlarmEngine([hi(deadband=6.0)], ["a"])
    events = []
    for i, v in enumerate(noise):
        events += eng.step([Sample("a", float(i), v)], float(i))
    assert [e.kind for e in events] in ([], ["alarm_raised"])


@settings(max_examples=200, deadline=None)
@given(n_high=st.integers(1, 10), dt_s=st.sampled_from([1.0, 5.0, 10.0]), on_delay_s=st.sampled_from([10.0, 30.0, 60.0]),
       spike=st.floats(min_value=LIMIT + 0.1, max_value=LIMIT + 500.0))
def test_on_delay_ignores_a_spike_shorter_than_the_delay(n_high, dt_s, on_delay_s, spike):
    eng = AlarmEngine([hi(on_delay_s=on_delay_s)], ["a"])
    values = [120.0] * 3 + [spike] * n_high + [120.0] * 10
    events = []
    for i, v in enumerate(values):
        events += eng.step([Sample("a", i * dt_s, v)], i * dt_s)
    spike_lasts_s = (n_high - 1) * dt_s  # first to last sample above the limit
    if spike_lasts_s < on_delay_s:
        assert events == []
    else:
        assert [e.kind for e in events][:1] == ["alarm_raised"]


OPS = st.one_of(
    st.tuples(st.just("sample"), st.floats(0.0, 30.0), st.floats(-60.0, 200.0),
              st.sampled_from(["ok", "ok", "ok", "open", "timeout"])),
    st.tuples(st.just("tick"), st.floats(0.0, 120.0)),
    st.tuples(st.just("link"), st.booleans()),
    st.tuples(st.just("ack"), st.sampled_from(["*", "hot", "trip:a", "gone:m"])),
    st.tuples(st.just("shelve"), st.floats(1.0, 600.0)),
    st.tuples(st.just("unshelve"),),
    st.tuples(st.just("oos"),),
    st.tuples(st.just("ins"),),
)

PROPERTY_RULES = [
    hi(on_delay_s=10.0, off_delay_s=10.0),
    Rule.of_kind("trip", "high_high", ["a"], limit=150.0),
    Rule.of_kind("cold", "low", ["a"], limit=-40.0, on_delay_s=0.0),
    Rule.of_kind("fast", "rate", ["a"], limit=20.0, window_s=60.0, on_delay_s=0.0),
    Rule.of_kind("bad", "sensor_fault", ["a"]),
    Rule.of_kind("quiet", "stale", ["a"], stale_after_s=45.0),
    Rule.of_kind("gone", "instrument_lost"),
    Rule.of_kind("stuck", "flatline", ["a"], for_s=60.0, band_k=5.0),
]


def check_invariants(p: AlarmState) -> None:
    """The state definitions of ISA-18.2: what each state says about the condition and the acknowledgement."""
    assert p.state in STATES
    if p.state in ("unacknowledged", "acknowledged"):
        assert p.condition, p
    if p.state in ("returned_unacknowledged", "latched", "normal"):
        assert not p.condition, p
    if p.state in ("unacknowledged", "returned_unacknowledged"):
        assert not p.acked
    if p.state in ("acknowledged", "normal"):
        assert p.acked
    assert (p.state == "shelved") == (p.shelved_until_s is not None)
    assert p.active == (p.state in ACTIVE_STATES)


@settings(max_examples=300, deadline=None)
@given(ops=st.lists(OPS, max_size=60))
def test_state_machine_invariants_and_no_event_without_a_state_change(ops):
    eng = AlarmEngine(PROPERTY_RULES, ["a"], ["m"])
    t = 0.0
    for op in ops:
        before = {p.id: p for p in eng.alarms()}
        if op[0] == "sample":
            t += op[1]
            status = op[3]
            events = eng.step([Sample("a", t, op[2] if status == "ok" else NAN, status)], t)
        elif op[0] == "tick":
            t += op[1]
            events = eng.step([], t)
        elif op[0] == "link":
            events = eng.step([], t, {"m": op[1]})
        elif op[0] == "ack":
            events = list(eng.acknowledge(op[1], t).events)
            # an acknowledgement never clears an active condition
            for p in eng.alarms():
                if p.condition and before[p.id].state not in ("shelved", "out_of_service"):
                    assert p.state == "acknowledged" or before[p.id].state == p.state
        elif op[0] == "shelve":
            events = list(eng.shelve("*", t, t + op[1]).events)
        elif op[0] == "unshelve":
            events = list(eng.unshelve("*", t).events)
        elif op[0] == "oos":
            events = list(eng.remove_from_service("hot", t).events)
        else:
            events = list(eng.return_to_service("*", t).events)
        # every event is a state change, and the last one of a point says where it now stands
        last: dict[str, str] = {}
        for e in events:
            assert e.before != e.after, e
            assert e.before == last.get(e.alarm, before[e.alarm].state)
            last[e.alarm] = e.after
        for pid, state in last.items():
            assert eng.get(pid).state == state
        # and no state changed without an event
        for p in eng.alarms():
            if p.id not in last:
                assert p.state == before[p.id].state, (op, p)
            check_invariants(p)
        assert [e.t_s for e in events] == sorted(e.t_s for e in events)
