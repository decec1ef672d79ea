"""The flatline alarm kind: a channel whose reading has not moved beyond its noise band for a set time.

A stuck sensor reads ``ok`` and plausible forever; this rule is what notices
it. The cases are plain arithmetic on the test's own numbers against the
ISA-18.2 / IEC 62682 state model (from memory of both): raised into
"unacknowledged", back to "returned_unacknowledged" when the condition goes.
"""

from __future__ import annotations

import math

import pytest
from testkit import wait_for

from soaklog.alarms import AlarmEngine, Rule, Sample
from soaklog.config import ConfigProblems, parse_config

NAN = math.nan
FOR_S = 600.0
BAND_K = 0.01


def stuck(**kw) -> Rule:
    base = {"for_s": FOR_S, "band_k": BAND_K}
    base.update(kw)
    return Rule.of_kind("stuck", "flatline", ["a"], **base)


def run(rule: Rule, steps):
    """Feed (t, value or (value, status)) steps to a one-rule engine; the events as (t, kind, state after)."""
    eng = AlarmEngine([rule], ["a"])
    got = []
    for t, v in steps:
        value, status = v if isinstance(v, tuple) else (v, "ok")
        got += [(e.t_s, e.kind, e.after) for e in eng.step([Sample("a", float(t), float(value), status)], float(t))]
    return got, eng


def every_minute(values, start_s: float = 0.0):
    return [(start_s + 60.0 * i, v) for i, v in enumerate(values)]


# a reading held to ±0.009 K: inside the 0.01 K band around its first value
STILL = [20.0, 20.004, 19.996, 20.009, 19.991, 20.0, 20.006, 19.994, 20.002, 19.998, 20.0, 20.001, 19.999]

CASES = [
    ("raised once the reading has been flat for the whole time", stuck(), every_minute(STILL[:11]),
     [(600.0, "alarm_raised", "unacknowledged")]),
    ("not raised a minute before the time", stuck(), every_minute(STILL[:10]), []),
    ("cleared when the reading moves beyond the band", stuck(), every_minute(STILL[:11] + [20.5]),
     [(600.0, "alarm_raised", "unacknowledged"), (660.0, "alarm_cleared", "returned_unacknowledged")]),
    ("noise inside the band does not clear it", stuck(), every_minute(STILL[:11] + [20.009, 19.991, 20.0, 19.992]),
     [(600.0, "alarm_raised", "unacknowledged")]),
    ("a reading that moves by more than the band each minute is never flat", stuck(),
     every_minute([20.0 + 0.02 * i for i in range(20)]), []),
    ("a fault status restarts the time", stuck(),
     every_minute(STILL[:5] + [(NAN, "open")] + STILL[:11]),
     [(360.0 + 600.0, "alarm_raised", "unacknowledged")]),
    ("a fault while raised changes nothing until the next good reading starts afresh", stuck(),
     every_minute(STILL[:11] + [(NAN, "open"), 20.0]),
     [(600.0, "alarm_raised", "unacknowledged"), (720.0, "alarm_cleared", "returned_unacknowledged")]),
    ("a link failure restarts it too", stuck(), every_minute(STILL[:5] + [(NAN, "timeout")] + STILL[:10]), []),
    ("a wider band holds a noisier reading", stuck(band_k=0.1),
     every_minute([20.0, 20.05, 19.95, 20.08, 19.93, 20.0, 20.09, 19.91, 20.0, 20.05, 19.95]),
     [(600.0, "alarm_raised", "unacknowledged")]),
]


@pytest.mark.parametrize(("rule", "steps", "expected"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_flatline_table(rule, steps, expected):
    got, _ = run(rule, steps)
    assert got == expected


def test_the_alarm_says_how_long_the_reading_was_flat():
    got, eng = run(stuck(), every_minute(STILL[:11]))
    p = eng.get("stuck:a")
    assert p.value == 600.0 and "flat within ±0.01 K for 600 s" in p.message


def test_flatline_defaults_are_a_hundredth_of_a_kelvin_for_half_an_hour():
    rule = Rule.of_kind("stuck", "flatline", ["a"])
    # common practice, no published source: the kind's documented defaults
    assert (rule.settings["band_k"], rule.settings["for_s"]) == (0.01, 1800.0)
    assert (rule.on_delay_s, rule.severity) == (0.0, "medium")


# ---------------------------------------------------------------- the station file

STATION = (
    '[station]\nname = "lab"\n'
    '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\n'
    '[[sensor]]\nname = "pt100"\nclass = "B"\n'
    '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n'
)
PATH = "/lab/station.toml"


def test_a_flatline_alarm_reads_its_keys_with_defaults():
    cfg = parse_config(STATION + '[[alarm]]\nname = "stuck"\nkind = "flatline"\nchannels = ["*"]\n', PATH)
    (a,) = cfg.alarms
    assert (a.params["band_k"], a.params["for_s"], a.severity) == (0.01, 1800.0, "medium")
    cfg = parse_config(STATION + '[[alarm]]\nname = "stuck"\nkind = "flatline"\nchannel = "air"\n'
                       'band_k = 0.05\nfor = "2h"\n', PATH)
    rule = Rule.from_config(cfg.alarms[0])
    assert (rule.settings["band_k"], rule.settings["for_s"]) == (0.05, 7200.0)


@pytest.mark.parametrize(("text", "key", "fragment"), [
    ('band_k = -0.01\n', "alarm[1].band_k", "must be positive"),
    ('band_k = "small"\n', "alarm[1].band_k", "must be a number"),
    ('for = 30\n', "alarm[1].for", "duration"),
    ('for = "soon"\n', "alarm[1].for", "not a duration"),
    ('band = 0.1\n', "alarm[1].band", "did you mean 'band_k'"),
    ('limit_c = 20.0\n', "alarm[1].limit_c", "unknown key"),
])
def test_a_bad_flatline_key_is_named_by_file_and_key(text, key, fragment):
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION + '[[alarm]]\nname = "stuck"\nkind = "flatline"\nchannel = "air"\n' + text, PATH)
    assert [k for k, _ in info.value.problems] == [key]
    assert fragment in info.value.problems[0][1] and f"{PATH}: {key}" in str(info.value)


# ---------------------------------------------------------------- through the real service

FLATLINE = '\n[[alarm]]\nname = "stuck"\nkind = "flatline"\nchannels = ["*"]\nfor = "10min"\n'


def test_a_stuck_sensor_in_the_simulated_lab_raises_the_flatline_alarm(alarm_lab):
    run = alarm_lab(speed=120.0, extra=FLATLINE)
    # the chamber's own fault: the shelf-2-rear sensor keeps the reading of this moment
    assert run.lab.world.commands().execute("fault stuck shelf-2-rear") == "ok stuck shelf-2-rear"
    wait_for(lambda: getattr(run.alarms().get("stuck:shelf-2-rear"), "state", None) == "unacknowledged", 60,
             "the flatline alarm on the stuck sensor")
    raised = [e for e in run.events("alarm_raised") if (e.data or {}).get("rule") == "stuck"]
    assert [e.channel for e in raised] == ["shelf-2-rear"]  # the live sensors keep moving
    assert "flat within ±0.01 K" in raised[0].message
    # the sensor comes back: its reading follows the chamber again and the alarm returns
    run.lab.world.commands().execute("clear")
    wait_for(lambda: run.alarms()["stuck:shelf-2-rear"].state == "returned_unacknowledged", 60,
             "the flatline alarm to return")
