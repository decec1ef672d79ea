"""``kind = "rate"``: a channel changing faster than a limit, in K/min, fitted over a window."""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import TYPE_CHECKING, Any

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import NOTHING, AlarmContext, AlarmRuleKind, KindDefaults, Moment, Signals, good
from soaklog.kinds.keys import DURATION, Checker, Key

if TYPE_CHECKING:
    from soaklog.alarms import Rule

#: the window the slope is fitted over (common practice, no published source)
DEFAULT_RATE_WINDOW_S = 120.0
_DIRECTIONS = ("rise", "fall", "both")


def slope_k_per_min(points: Iterable[tuple[float, float]]) -> float:
    """Least-squares slope of (t s, °C) points, in K/min."""
    pts = list(points)
    n = len(pts)
    t0 = pts[0][0]
    mt = sum(t - t0 for t, _ in pts) / n
    mv = sum(v for _, v in pts) / n
    sxx = sum((t - t0 - mt) ** 2 for t, _ in pts)
    if sxx <= 0:
        return math.nan
    sxy = sum((t - t0 - mt) * (v - mv) for t, v in pts)
    return 60.0 * sxy / sxx


@ALARM_RULES.register("rate")
class Rate(AlarmRuleKind):
    name = "rate"
    # deadband 10 % of the limit (common practice, no published source)
    defaults = KindDefaults("limit_k_per_min", "K/min", 0.1, 60.0, 60.0, False, True, "high")
    keys: Mapping[str, Key] = {
        "limit_k_per_min": Key(float, "the fastest allowed change, K/min", required=True),
        "deadband_k_per_min": Key(float, "how far below the limit it must come to clear (default 10 % of the limit)"),
        "window": Key(DURATION, "the time the slope is fitted over", default="2min"),
        "direction": Key(str, "rise, fall or both", default="both"),
    }
    settings: Mapping[str, Any] = {"window_s": DEFAULT_RATE_WINDOW_S, "direction": "both"}
    deadband_key = "deadband_k_per_min"
    limit_positive = True

    def default_deadband(self, limit: float | None) -> float:
        return self.defaults.deadband * abs(limit) if limit is not None and math.isfinite(limit) else self.defaults.deadband

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        p["window_s"] = ck.duration(d, key, "window", default=None) or DEFAULT_RATE_WINDOW_S
        direction = ck.get(d, key, "direction", str, default="both",
                           check=lambda v: None if v in _DIRECTIONS else f"must be rise, fall or both, got {v!r}")
        p["direction"] = direction or "both"

    def history_s(self, rule: Rule) -> float:
        return float(rule.settings["window_s"])

    def test(self, rule: Rule, value: float, active: bool) -> bool:
        direction = rule.settings["direction"]
        v = value if direction == "rise" else -value if direction == "fall" else abs(value)
        return super().test(rule, v, active)

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        s = m.sample
        if s is None or not good(s):
            return NOTHING
        window_s = float(rule.settings["window_s"])
        pts = signals.window(s.channel, s.t_s - window_s)
        # a slope needs three points spread over at least half the window
        if len(pts) < 3 or pts[-1][0] - pts[0][0] < window_s / 2:
            return NOTHING
        v = slope_k_per_min(pts)
        if not math.isfinite(v):
            return NOTHING
        return self.test(rule, v, m.active), v

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        if active:
            return (f"{source} changing {value:+.2f} K/min, beyond ±{rule.limit:g} K/min "
                    f"({rule.settings['direction']}, over {rule.settings['window_s']:g} s)")
        return f"{source} changing {value:+.2f} K/min, back within {rule.limit - rule.deadband:g} K/min"
