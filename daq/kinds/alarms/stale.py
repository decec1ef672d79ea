"""``kind = "stale"``: a channel without a good reading for too long — and the one definition of "stale".

``stale_after_s`` is what every part of soaklog means by a stale channel:
the alarm's default and the dashboard's marker both use it.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import AlarmContext, AlarmRuleKind, KindDefaults, Moment, Signals
from soaklog.kinds.keys import DURATION, Checker, Key

if TYPE_CHECKING:
    from soaklog.alarms import Rule

__all__ = ["DEFAULT_STALE_AFTER_S", "STALE_SCANS", "stale_after_s"]

#: no good reading for this long is stale, however fast the instrument scans
#: (common practice, no published source)
DEFAULT_STALE_AFTER_S = 60.0
#: and never fewer missed scans than this, so one late scan never counts
#: (common practice, no published source)
STALE_SCANS = 3


def stale_after_s(interval_s: float | None) -> float:
    """How old a channel's last good reading may get before the channel is stale.

    At least ``STALE_SCANS`` scans of its instrument and never less than
    ``DEFAULT_STALE_AFTER_S``; an unknown interval gives the floor.
    """
    if interval_s is None:
        return DEFAULT_STALE_AFTER_S
    return max(DEFAULT_STALE_AFTER_S, STALE_SCANS * float(interval_s))


@ALARM_RULES.register("stale")
class Stale(AlarmRuleKind):
    name = "stale"
    # stale_after is itself the delay
    defaults = KindDefaults(None, "", 0.0, 0.0, 0.0, False, True, "high")
    keys: Mapping[str, Key] = {
        "stale_after": Key(DURATION, "how long without a good reading (default: three scans of the slowest "
                                     "instrument, at least 60 s)"),
    }
    settings: Mapping[str, Any] = {"stale_after_s": DEFAULT_STALE_AFTER_S}
    when = "tick"

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        slowest = max((ctx.intervals_s[ctx.instrument_of[c]] for c in ctx.watched
                       if c in ctx.instrument_of and ctx.instrument_of[c] in ctx.intervals_s), default=0.0)
        after = ck.duration(d, key, "stale_after", default=None)
        if after is not None and after <= slowest:
            ck.bad(f"{key}.stale_after", f"must be longer than the slowest scan interval of its channels "
                                         f"({slowest:g} s), got {after:g} s")
        p["stale_after_s"] = after if after is not None else stale_after_s(slowest or None)

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        since = signals.started_s if signals.started_s is not None else m.t_s
        last = signals.last_good_t.get(m.source, since)
        age = max(0.0, m.t_s - last)
        return age > float(rule.settings["stale_after_s"]), age

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        if active:
            return f"{source}: no good reading for {value:.0f} s (limit {rule.settings['stale_after_s']:g} s)"
        return f"{source}: good readings again"
