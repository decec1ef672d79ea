"""``kind = "instrument_lost"``: an instrument the service cannot reach (its driver reports the link down)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import NOTHING, AlarmContext, AlarmRuleKind, KindDefaults, Moment, Signals
from soaklog.kinds.keys import Checker, Key

if TYPE_CHECKING:
    from soaklog.alarms import Rule

#: the rule a station gets when its file has no instrument_lost rule: a lost instrument always raises an alarm
BUILTIN_INSTRUMENT_LOST = "instrument-lost"


@ALARM_RULES.register("instrument_lost")
class InstrumentLost(AlarmRuleKind):
    name = "instrument_lost"
    defaults = KindDefaults(None, "", 0.0, 0.0, 0.0, False, True, "high")
    keys: Mapping[str, Key] = {
        "instrument": Key(str, "the instrument it watches"),
        "instruments": Key(list, "the instruments it watches (default: all)"),
    }
    scope = "instrument"
    when = "tick"
    builtin = BUILTIN_INSTRUMENT_LOST

    def read_sources(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        if ctx.named:
            ck.bad(f"{key}.channels", "an instrument_lost alarm watches instruments: give instrument or instruments")
        names = ck.names(d, key, "instrument", "instruments", "instrument")
        for n in names:
            if n not in ctx.intervals_s:
                ck.bad(f"{key}.instruments", f"no instrument named {n!r}; known: {', '.join(ctx.intervals_s) or 'none'}")
        p["instruments"] = tuple(dict.fromkeys(names))

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        if m.source not in signals.connected:
            return NOTHING
        return not signals.connected[m.source], None

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        return f"instrument {source} lost" if active else f"instrument {source} back"
