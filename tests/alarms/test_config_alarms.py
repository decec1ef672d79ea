"""[[alarm]] tables of a station file: defaults filled in, every bad key reported by file and key."""

from __future__ import annotations

import pytest

from soaklog.alarms import KIND_DEFAULTS, AlarmEngine, Rule
from soaklog.config import ConfigProblems, parse_config

STATION = (
    '[station]\nname = "lab"\n'
    '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\ninterval = "30s"\n'
    '[[sensor]]\nname = "pt100"\nclass = "B"\n'
    '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n'
    '[[channel]]\nname = "shelf"\ninstrument = "meter"\ninput = "102"\nsensor = "pt100"\n'
)
PATH = "/lab/station.toml"


def alarms_of(text: str):
    return parse_config(STATION + text, PATH).alarms


def problems_of(text: str) -> list[tuple[str, str]]:
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION + text, PATH)
    assert f"{PATH}: " in str(info.value)  # every problem is named by its file
    return info.value.problems


def test_a_high_alarm_gets_the_kind_defaults():
    (a,) = alarms_of('[[alarm]]\nname = "hot"\nkind = "high"\nchannel = "air"\nlimit_c = 130.0\n')
    d = KIND_DEFAULTS["high"]
    assert a.severity == d.severity
    assert a.params["deadband_k"] == d.deadband
    assert (a.params["on_delay_s"], a.params["off_delay_s"]) == (d.on_delay_s, d.off_delay_s)
    assert a.params["latch"] is False and a.params["shelvable"] is True
    rule = Rule.from_config(a)
    assert (rule.limit, rule.channels) == (130.0, ("air",))


def test_durations_with_units_and_zero_delays():
    (a,) = alarms_of('[[alarm]]\nname = "hot"\nkind = "high"\nchannels = ["*"]\nlimit_c = 130.0\n'
                     'on_delay = "0s"\noff_delay = "2min"\ndeadband_k = 0.5\nlatch = true\n')
    assert (a.params["on_delay_s"], a.params["off_delay_s"], a.params["deadband_k"], a.params["latch"]) == (0.0, 120.0, 0.5, True)
    eng = AlarmEngine.from_config(parse_config(STATION + '[[alarm]]\nname = "hot"\nkind = "high"\nchannels = ["*"]\nlimit_c = 130.0\n', PATH))
    # and a lost instrument always raises an alarm: a station without an instrument_lost rule gets one
    assert [p.id for p in eng.alarms()] == ["hot:air", "hot:shelf", "instrument-lost:meter"]


def test_stale_defaults_to_three_scans_of_the_slowest_instrument_or_a_minute():
    # the meter scans every 30 s: three scans are 90 s, more than the 60 s floor (common practice, no published source)
    (a,) = alarms_of('[[alarm]]\nname = "quiet"\nkind = "stale"\nchannels = ["*"]\n')
    assert a.params["stale_after_s"] == 90.0


def test_the_rate_deadband_defaults_to_a_tenth_of_the_limit():
    (a,) = alarms_of('[[alarm]]\nname = "fast"\nkind = "rate"\nchannel = "air"\nlimit_k_per_min = 15.0\nwindow = "2min"\n')
    assert a.params["deadband_k_per_min"] == pytest.approx(1.5)
    assert a.params["window_s"] == 120.0


def test_actions_of_every_kind():
    (a,) = alarms_of(
        '[[alarm]]\nname = "trip"\nkind = "high_high"\nchannel = "air"\nlimit_c = 140.0\n'
        '[[alarm.actions]]\nkind = "scpi"\nresource = "TCPIP0::127.0.0.1::5026::SOCKET"\ncommands = ["OUTP OFF"]\n'
        'verify = { query = "OUTP?", reply = "0" }\n'
        '[[alarm.actions]]\nkind = "program"\nargv = ["/usr/bin/logger", "-t", "soaklog"]\ntimeout = "5s"\non = ["raised", "cleared"]\n'
        '[[alarm.actions]]\nkind = "serial_line"\nport = "/dev/ttyUSB1"\nline = "RTS"\nstate = false\n'
        '[[alarm.actions]]\nkind = "log"\n'
    )
    kinds = [(x.kind, x.on) for x in a.actions]
    assert kinds == [("scpi", ("raised",)), ("program", ("raised", "cleared")), ("serial_line", ("raised",)), ("log", ("raised",))]
    scpi, prog, line, _ = a.actions
    assert scpi.params["verify"] == ("OUTP?", "0") and scpi.params["timeout_s"] == 5.0
    assert prog.params["argv"] == ("/usr/bin/logger", "-t", "soaklog") and prog.params["timeout_s"] == 5.0
    assert (line.params["line"], line.params["state"]) == ("rts", False)


ALARM = '[[alarm]]\nname = "x"\n'
BROKEN = [
    ("no limit", ALARM + 'kind = "high"\nchannel = "air"\n', [("alarm[1].limit_c", "is required")]),
    ("a limit as text", ALARM + 'kind = "low"\nchannel = "air"\nlimit_c = "cold"\n', [("alarm[1].limit_c", "must be a number")]),
    ("a negative deadband", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\ndeadband_k = -1.0\n',
     [("alarm[1].deadband_k", "must not be negative")]),
    ("a delay without unit", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\non_delay = 20\n',
     [("alarm[1].on_delay", "duration")]),
    ("a key of another kind", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\nwindow = "1min"\n',
     [("alarm[1].window", "unknown key")]),
    ("a misspelt key", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\ndeadbnd_k = 1.0\n',
     [("alarm[1].deadbnd_k", "did you mean 'deadband_k'")]),
    ("no channels", ALARM + 'kind = "high"\nlimit_c = 1.0\n', [("alarm[1].channels", "is required")]),
    ("a rate limit of zero", ALARM + 'kind = "rate"\nchannel = "air"\nlimit_k_per_min = 0.0\n',
     [("alarm[1].limit_k_per_min", "must be positive")]),
    ("a rate deadband as wide as its limit", ALARM + 'kind = "rate"\nchannel = "air"\nlimit_k_per_min = 5.0\ndeadband_k_per_min = 5.0\n',
     [("alarm[1].deadband_k_per_min", "smaller than the limit")]),
    ("a rate direction", ALARM + 'kind = "rate"\nchannel = "air"\nlimit_k_per_min = 5.0\ndirection = "up"\n',
     [("alarm[1].direction", "rise, fall or both")]),
    ("deviation from nothing", ALARM + 'kind = "deviation"\nchannel = "air"\nlimit_k = 3.0\n',
     [("alarm[1]", "setpoint_c")]),
    ("deviation from itself", ALARM + 'kind = "deviation"\nchannel = "air"\nlimit_k = 3.0\nreference = "air"\n',
     [("alarm[1].reference", "one of the channels it watches")]),
    ("deviation from an unknown channel", ALARM + 'kind = "deviation"\nchannel = "air"\nlimit_k = 3.0\nreference = "door"\n',
     [("alarm[1].reference", "no channel named 'door'")]),
    ("a spread of one", ALARM + 'kind = "spread"\nchannel = "air"\nlimit_k = 3.0\n',
     [("alarm[1].channels", "two channels or more")]),
    ("an unknown fault status", ALARM + 'kind = "sensor_fault"\nchannel = "air"\nstatuses = ["open", "melted"]\n',
     [("alarm[1].statuses", "unknown status 'melted'")]),
    ("stale within one scan", ALARM + 'kind = "stale"\nchannel = "air"\nstale_after = "20s"\n',
     [("alarm[1].stale_after", "longer than the slowest scan interval")]),
    ("an unknown instrument", ALARM + 'kind = "instrument_lost"\ninstrument = "board"\n',
     [("alarm[1].instruments", "no instrument named 'board'")]),
    ("instrument_lost on channels", ALARM + 'kind = "instrument_lost"\nchannel = "air"\n',
     [("alarm[1].channels", "watches instruments")]),
    ("a latch as text", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\nlatch = "yes"\n',
     [("alarm[1].latch", "true or false")]),
    ("an action of no known kind", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\nactions = [{ kind = "email" }]\n',
     [("alarm[1].actions[1].kind", "must be one of")]),
    ("a program as one string", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\n'
     'actions = [{ kind = "program", argv = "notify-send hot" }]\n', [("alarm[1].actions[1].argv", "without a shell")]),
    ("a program that may run an hour", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\n'
     'actions = [{ kind = "program", argv = ["true"], timeout = "1h" }]\n', [("alarm[1].actions[1].timeout", "at most 600 s")]),
    ("scpi without commands", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\n'
     'actions = [{ kind = "scpi", resource = "TCPIP0::127.0.0.1::5026::SOCKET" }]\n', [("alarm[1].actions[1].commands", "SCPI commands")]),
    ("scpi verify not a query", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\n'
     'actions = [{ kind = "scpi", resource = "R", commands = ["OUTP OFF"], verify = { query = "OUTP", reply = "0" } }]\n',
     [("alarm[1].actions[1].verify.query", "must be a query")]),
    ("a serial line that is not a control line", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\n'
     'actions = [{ kind = "serial_line", port = "/dev/ttyUSB0", line = "TX" }]\n', [("alarm[1].actions[1].line", "rts or dtr")]),
    ("a trigger of no known kind", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\n'
     'actions = [{ kind = "log", on = "shelved" }]\n', [("alarm[1].actions[1].on", "raised")]),
    ("an action with a stray key", ALARM + 'kind = "high"\nchannel = "air"\nlimit_c = 1.0\n'
     'actions = [{ kind = "log", command = "x" }]\n', [("alarm[1].actions[1].command", "unknown key")]),
]


@pytest.mark.parametrize(("text", "expected"), [b[1:] for b in BROKEN], ids=[b[0] for b in BROKEN])
def test_broken_alarms_are_reported_by_key(text, expected):
    got = problems_of(text)
    left = list(got)
    for key, fragment in expected:
        match = next((p for p in left if p[0] == key and fragment in p[1]), None)
        assert match is not None, f"no problem {key!r} containing {fragment!r} in {got!r}"
        left.remove(match)
    assert not left, f"unexpected extra problems: {left!r}"


def test_every_problem_of_several_alarms_at_once():
    got = problems_of(
        '[[alarm]]\nname = "a"\nkind = "high"\nchannel = "air"\n'
        '[[alarm]]\nname = "b"\nkind = "rate"\nchannel = "air"\nlimit_k_per_min = -1.0\n'
        '[[alarm]]\nname = "c"\nkind = "stale"\nchannel = "air"\nstale_after = "soon"\n'
    )
    assert {k for k, _ in got} == {"alarm[1].limit_c", "alarm[2].limit_k_per_min", "alarm[3].stale_after"}


def test_the_reading_statuses_known_to_alarms_are_the_ones_the_readme_documents():
    import re
    from pathlib import Path

    from soaklog.config import _READING_STATUSES
    from soaklog.store import STATUS_CODES

    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    para = readme[readme.index("`status` is `ok` or a short reason:"):]
    documented = set(re.findall(r"`([a-z_]+)`", para[:para.index(".")]))
    assert documented - {"status"} == set(_READING_STATUSES) == set(STATUS_CODES)


@pytest.mark.parametrize(("interval", "stale_s"), [("10s", 60.0), ("30s", 90.0), ("2s", 60.0)])
def test_the_dashboard_and_the_stale_alarm_mean_the_same_by_stale(interval, stale_s):
    """One definition: at least three scans, never under a minute (common practice, no published source)."""
    from soaklog.dashboard.derive import stale_after_s
    from soaklog.dashboard.plan import RunPlan

    text = STATION.replace('interval = "30s"', f'interval = "{interval}"')
    cfg = parse_config(text + '[[alarm]]\nname = "quiet"\nkind = "stale"\nchannels = ["*"]\n', PATH)
    assert cfg.alarms[0].params["stale_after_s"] == stale_s
    plan = RunPlan(intervals_s={i.name: i.interval_s for i in cfg.instruments})
    assert stale_after_s(plan, "meter") == stale_s
