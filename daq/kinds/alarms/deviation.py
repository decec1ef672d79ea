"""``kind = "deviation"``: a channel too far from a fixed set point or from another channel, in K."""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import TYPE_CHECKING, Any

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import DEFAULT_MAX_AGE_S, NOTHING, AlarmContext, AlarmRuleKind, KindDefaults, Moment, Signals, good
from soaklog.kinds.keys import DURATION, Checker, Key

if TYPE_CHECKING:
    from soaklog.alarms import Rule

@ALARM_RULES.register("deviation")
class Deviation(AlarmRuleKind):
    name = "deviation"
    defaults = KindDefaults("limit_k", "K", 1.0, 60.0, 60.0, False, True, "high")
    keys: Mapping[str, Key] = {
        "limit_k": Key(float, "the largest allowed difference, K", required=True),
        "deadband_k": Key(float, "how far below the limit it must come to clear, K", default=1.0),
        "setpoint_c": Key(float, "a fixed set point to compare with, °C (or reference)"),
        "reference": Key(str, "a channel to compare with (or setpoint_c)"),
        "max_age": Key(DURATION, "a reference reading older than this is not used", default="60s"),
    }
    settings: Mapping[str, Any] = {"setpoint_c": None, "reference": None, "max_age_s": DEFAULT_MAX_AGE_S}
    deadband_key = "deadband_k"
    limit_positive = True

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        p["max_age_s"] = ck.duration(d, key, "max_age", default=None) or DEFAULT_MAX_AGE_S
        has_sp, has_ref = "setpoint_c" in d, "reference" in d
        if has_sp == has_ref:
            ck.bad(key, "a deviation alarm needs setpoint_c (a fixed set point) or reference (a channel), one of them")
        elif has_sp:
            sp = ck.get(d, key, "setpoint_c", float)
            if sp is not None:
                p["setpoint_c"] = sp
        else:
            ref = ck.get(d, key, "reference", str)
            if ref is not None and ref not in ctx.channel_names:
                ck.bad(f"{key}.reference", f"no channel named {ref!r}")
            elif ref is not None and ref in ctx.watched:
                ck.bad(f"{key}.reference", f"{ref!r} is one of the channels it watches; compare with another channel")
            elif ref is not None:
                p["reference"] = ref

    def extra_channels(self, rule: Rule) -> Iterable[str]:
        ref = rule.settings["reference"]
        return () if ref is None else (ref,)

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        s = m.sample
        if s is None or not good(s):
            return NOTHING
        ref_name, sp = rule.settings["reference"], rule.settings["setpoint_c"]
        if ref_name is not None:
            ref = signals.last.get(ref_name)
            if ref is None or s.t_s - ref[0] > float(rule.settings["max_age_s"]):
                return NOTHING
            v = abs(s.temperature_c - ref[1])
        else:
            v = abs(s.temperature_c - (sp if sp is not None else math.nan))
            if not math.isfinite(v):
                return NOTHING
        return self.test(rule, v, m.active), v

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        ref_name = rule.settings["reference"]
        ref = f"set point {rule.settings['setpoint_c']:g} °C" if ref_name is None else ref_name
        if active:
            return f"{source} {value:.2f} K from {ref}, more than {rule.limit:g} K"
        return f"{source} {value:.2f} K from {ref}, back within {rule.limit - rule.deadband:g} K"
