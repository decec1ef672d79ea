"""``kind = "high"``, ``"high_high"``, ``"low"``, ``"low_low"``: a channel's temperature beyond a limit.

The four differ only in their side and their defaults. Defaults for
temperature: ISA-18.2 (and its technical report on alarm philosophy, with
EEMUA 191 in the same spirit) recommends, for temperature signals, a
deadband of about 1 % of the operating span and on/off delays of about 60 s
(from memory of those documents: flow 5 %/15 s, level 5 %/60 s, pressure
2 %/15 s, temperature 1 %/60 s). 1 K is 1 % of a 100 K span. The high-high
and low-low alarms are the last software line before the chamber's own
cut-out and usually carry an interlock: no on-delay, latched until a person
resets them, never shelvable ("highly managed" alarms in ISA-18.2 terms; the
choice is ours, common practice, no published source).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, ClassVar

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import NOTHING, AlarmRuleKind, KindDefaults, Moment, Signals, good
from soaklog.kinds.keys import Key

if TYPE_CHECKING:
    from soaklog.alarms import Rule

_KEYS: Mapping[str, Key] = {
    "limit_c": Key(float, "the limit, °C", required=True),
    "deadband_k": Key(float, "how far back past the limit it must come to clear, K", default=1.0),
}


class _Level(AlarmRuleKind):
    keys = _KEYS
    deadband_key = "deadband_k"
    #: True: above the limit is bad; False: below
    above: ClassVar[bool] = True
    word: ClassVar[str] = ""

    def test(self, rule: Rule, value: float, active: bool) -> bool:
        lim, db = rule.limit, rule.deadband
        if self.above:
            return value >= lim - db if active else value > lim
        return value <= lim + db if active else value < lim

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        s = m.sample
        if s is None or not good(s):
            return NOTHING
        v = s.temperature_c
        return self.test(rule, v, m.active), v

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        side = "above" if self.above else "below"
        if active:
            return f"{source} {value:.2f} °C {side} the {self.word} limit {rule.limit:.2f} °C"
        back = rule.limit - rule.deadband if self.above else rule.limit + rule.deadband
        return (f"{source} {value:.2f} °C, back {'below' if self.above else 'above'} {back:.2f} °C "
                f"(limit {rule.limit:.2f} °C, deadband {rule.deadband:g} K)")


_WARN = KindDefaults("limit_c", "°C", 1.0, 60.0, 60.0, False, True, "high")
_TRIP = KindDefaults("limit_c", "°C", 1.0, 0.0, 60.0, True, False, "critical")


@ALARM_RULES.register("high")
class High(_Level):
    name = "high"
    defaults = _WARN
    limit_line = "upper"
    word = "high"


@ALARM_RULES.register("high_high")
class HighHigh(_Level):
    name = "high_high"
    defaults = _TRIP
    limit_line = "upper"
    word = "high-high"


@ALARM_RULES.register("low")
class Low(_Level):
    name = "low"
    defaults = _WARN
    limit_line = "lower"
    above = False
    word = "low"


@ALARM_RULES.register("low_low")
class LowLow(_Level):
    name = "low_low"
    defaults = _TRIP
    limit_line = "lower"
    above = False
    word = "low-low"

