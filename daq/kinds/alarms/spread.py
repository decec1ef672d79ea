"""``kind = "spread"``: the hottest and the coldest of a group of channels too far apart, in K (uniformity)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import DEFAULT_MAX_AGE_S, NOTHING, AlarmContext, AlarmRuleKind, KindDefaults, Moment, Signals
from soaklog.kinds.keys import DURATION, Checker, Key

if TYPE_CHECKING:
    from soaklog.alarms import Rule


@ALARM_RULES.register("spread")
class Spread(AlarmRuleKind):
    name = "spread"
    defaults = KindDefaults("limit_k", "K", 1.0, 60.0, 60.0, False, True, "medium")
    keys: Mapping[str, Key] = {
        "limit_k": Key(float, "the largest allowed spread, K", required=True),
        "deadband_k": Key(float, "how far below the limit it must come to clear, K", default=1.0),
        "max_age": Key(DURATION, "readings older than this are left out", default="60s"),
    }
    settings: Mapping[str, Any] = {"max_age_s": DEFAULT_MAX_AGE_S}
    scope = "group"
    when = "scan"
    deadband_key = "deadband_k"
    limit_positive = True

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        p["max_age_s"] = ck.duration(d, key, "max_age", default=None) or DEFAULT_MAX_AGE_S
        if ctx.named and len(set(ctx.watched)) < 2:
            ck.bad(f"{key}.channels", f"a spread needs two channels or more, got {list(ctx.watched)!r}")

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        max_age_s = float(rule.settings["max_age_s"])
        vals = [x[1] for c in rule.channels if (x := signals.last.get(c)) is not None and m.t_s - x[0] <= max_age_s]
        if len(vals) < 2:
            return NOTHING
        spread = max(vals) - min(vals)
        return self.test(rule, spread, m.active), spread

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        if active:
            return f"spread of {source} {value:.2f} K, more than {rule.limit:g} K"
        return f"spread of {source} {value:.2f} K, back within {rule.limit - rule.deadband:g} K"
