"""An alarm rule kind added by one module — this one — and nothing else: the station file reads it, the engine runs it.

``Step`` flags a jump between two consecutive good readings of a channel
larger than ``jump_k`` (a loose connector, a relay of the scanner bouncing).
It lives only in this test module and is registered for the length of each
test with ``ALARM_RULES.added``: no other module of soaklog names it, so
passing here shows the configuration walker and the engine have no branch on
a kind's name.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pytest

from soaklog.alarms import KIND_DEFAULTS, AlarmEngine, Rule, Sample
from soaklog.config import ConfigProblems, parse_config
from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import NOTHING, AlarmContext, AlarmRuleKind, KindDefaults, Moment, Signals, good
from soaklog.kinds.keys import Checker, Key, positive


class Step(AlarmRuleKind):
    name = "step"
    defaults = KindDefaults(None, "K", 0.0, 0.0, 0.0, False, True, "low")
    keys: Mapping[str, Key] = {"jump_k": Key(float, "the largest change between two readings, K", default=5.0)}
    settings: Mapping[str, Any] = {"jump_k": 5.0}

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        p["jump_k"] = ck.get(d, key, "jump_k", float, default=5.0, check=positive) or 5.0

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        if not good(m.sample):
            return NOTHING
        assert m.sample is not None
        before = m.memory.get("last_c")
        m.memory["last_c"] = m.sample.temperature_c
        if before is None:
            return NOTHING
        jump = abs(m.sample.temperature_c - before)
        return jump > float(rule.settings["jump_k"]), jump

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        return f"{source} jumped {value:.2f} K" if active else f"{source} steady again"


STATION = (
    '[station]\nname = "lab"\n'
    '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\n'
    '[[sensor]]\nname = "pt100"\nclass = "B"\n'
    '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n'
    '[[channel]]\nname = "shelf"\ninstrument = "meter"\ninput = "102"\nsensor = "pt100"\n'
)
PATH = "/lab/station.toml"
JUMPY = '[[alarm]]\nname = "jumpy"\nkind = "step"\nchannels = ["*"]\njump_k = 2.0\n'


@pytest.fixture
def step_kind():
    with ALARM_RULES.added("step", Step) as kind:
        yield kind


def test_a_station_file_with_the_new_kind_validates_and_the_engine_runs_it(step_kind):
    cfg = parse_config(STATION + JUMPY, PATH)
    (a,) = cfg.alarms
    assert (a.kind, a.severity, a.params["jump_k"]) == ("step", "low", 2.0)
    assert KIND_DEFAULTS["step"] is Step.defaults
    eng = AlarmEngine.from_config(cfg)
    assert [p.id for p in eng.alarms()] == ["jumpy:air", "jumpy:shelf", "instrument-lost:meter"]
    events = []
    for t, air, shelf in [(0, 20.0, 20.0), (10, 21.0, 20.5), (20, 24.5, 20.9), (30, 24.6, 21.0)]:
        events += eng.step([Sample("air", t, air), Sample("shelf", t, shelf)], float(t))
    # 3.5 K between two readings of air is more than 2 K; shelf never jumps
    assert [(e.t_s, e.kind, e.alarm) for e in events] == [
        (20.0, "alarm_raised", "jumpy:air"), (30.0, "alarm_cleared", "jumpy:air")]
    assert events[0].message == "air jumped 3.50 K"


def test_its_keys_are_checked_by_file_and_key(step_kind):
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION + JUMPY.replace("jump_k = 2.0", "jump_k = -1.0\njump = 3.0"), PATH)
    assert sorted(info.value.problems) == [
        ("alarm[1].jump", "unknown key; did you mean 'jump_k'?"),
        ("alarm[1].jump_k", "must be positive, got -1.0"),
    ]


def test_without_its_module_the_kind_is_unknown():
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION + JUMPY, PATH)
    ((key, msg),) = info.value.problems
    assert key == "alarm[1].kind" and "must be one of" in msg and "flatline" in msg
    assert "step" not in KIND_DEFAULTS
