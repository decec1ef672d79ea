"""Alarms of a run from its events: each alarm's duration, acknowledgement and actions; rates against EEMUA 191.

The alarm engine records events (``alarm_raised``, ``alarm_cleared``,
``alarm_acknowledged``, ``action_done`` …) naming the alarm point in
``data["alarm"]`` (and its rule in ``data["rule"]``) and the channel. An
*episode* runs from a raise to the next clear of the same point;
acknowledgements and actions in between (or after it, until the next raise)
belong to it. A run without alarm events gives no episodes.

Benchmarks (from memory of EEMUA 191, "Alarm systems: a guide to design,
management and procurement", for one operator in steady operation):

- average rate: under 1 alarm per 10 min very likely acceptable; up to 1 per
  5 min manageable; up to 1 per minute likely over-demanding; more than
  1 per minute very likely unacceptable;
- after an upset, alarms in the first 10 min: under 10 manageable; 10–100
  hard to cope with; more than 100 excessive.

ANSI/ISA-18.2 (from memory) calls more than 10 alarms in 10 min a flood and
an alarm raised 3 or more times in a minute chattering.

Pure: event dicts in, records out.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from soaklog.store import EventRow


def iso_time(t_s: float) -> str:
    """UTC date and time to the second, for an action's line."""
    return datetime.fromtimestamp(t_s, tz=UTC).strftime("%Y-%m-%dT%H:%M:%SZ")

__all__ = ["ALARM_KINDS", "AlarmRates", "Episode", "alarm_episodes", "alarm_rates", "peak_rating", "rate_rating"]

RAISED = frozenset({"alarm_raised", "alarm_active", "alarm"})
CLEARED = frozenset({"alarm_cleared", "alarm_returned", "alarm_normal", "alarm_rtn"})
ACKED = frozenset({"alarm_acknowledged", "alarm_ack", "acknowledged"})
ACTIONS = frozenset({"action_done", "action_failed", "action_timed_out", "action"})
OTHER = frozenset({
    "alarm_shelved", "alarm_unshelved", "alarm_note", "alarm_out_of_service", "alarm_in_service", "alarm_latched",
})
ALARM_KINDS = RAISED | CLEARED | ACKED | ACTIONS | OTHER

#: ANSI/ISA-18.2 (from memory): a flood is more than 10 alarms in 10 min; chattering 3 or more in 1 min
FLOOD_PER_10_MIN = 10
CHATTER_COUNT = 3
CHATTER_WINDOW_S = 60.0


@dataclass(frozen=True)
class Episode:
    """One alarm from raise to clear, with what was done about it."""

    rule: str
    channel: str
    severity: str
    message: str
    raised_s: float
    cleared_s: float | None
    acknowledged_s: float | None
    acknowledged_by: str
    actions: tuple[str, ...]
    notes: tuple[str, ...] = field(default=())

    def duration_s(self, end_s: float) -> float:
        """Raise to clear, or to ``end_s`` (the end of the data) if still active."""
        return (self.cleared_s if self.cleared_s is not None else end_s) - self.raised_s

    @property
    def ack_delay_s(self) -> float | None:
        return None if self.acknowledged_s is None else self.acknowledged_s - self.raised_s


@dataclass(frozen=True)
class AlarmRates:
    """Alarm counts and rates of a run against the benchmarks."""

    alarms: int
    hours: float
    per_hour: float | None
    per_10_min: float | None
    rate_rating: str
    peak_10_min: int
    peak_at_s: float | None
    peak_rating: str
    flood_periods: int
    periods: int
    flood_share: float | None
    chattering: tuple[str, ...]
    by_severity: Mapping[str, int]


def _key(ev: EventRow) -> tuple[str, str]:
    """The alarm point an event is about: its id (``data["alarm"]``, else the rule) and channel."""
    data = ev.data or {}
    point = data.get("alarm") or data.get("rule") or data.get("name") or ""
    channel = ev.channel or data.get("channel") or ""
    return str(point), str(channel)


def alarm_episodes(events: Iterable[EventRow]) -> list[Episode]:
    """Episodes from a run's events in time order (events of other kinds are ignored)."""
    open_: dict[tuple[str, str], dict[str, Any]] = {}
    done: list[dict[str, Any]] = []
    order: list[dict[str, Any]] = []
    for ev in sorted(events, key=lambda e: (e.t_ms or 0, e.id or 0)):
        kind = ev.kind
        if kind not in ALARM_KINDS:
            continue
        t = float(ev.t_ms or 0) / 1000.0
        key = _key(ev)
        data = ev.data or {}
        if kind in RAISED:
            if key in open_:
                continue  # a repeated raise while active is the same episode
            ep = {"key": key, "rule": str(data.get("rule") or key[0]), "channel": key[1], "severity": ev.severity or "",
                  "message": ev.message or "", "raised_s": t, "cleared_s": None,
                  "acknowledged_s": None, "acknowledged_by": "", "actions": [], "notes": []}
            open_[key] = ep
            order.append(ep)
            continue
        ep = open_.get(key)
        if ep is None and kind in ACTIONS | ACKED and not key[0]:
            # an action or acknowledgement that names no rule: the newest open alarm
            ep = order[-1] if order and order[-1]["cleared_s"] is None else None
        if ep is None and kind in ACKED | ACTIONS:
            # acknowledged or acted on after it cleared: the newest episode of that rule
            for cand in reversed(order):
                if cand["key"] == key or (key[0] and cand["key"][0] == key[0] and not key[1]):
                    ep = cand
                    break
        if ep is None:
            continue
        if kind in CLEARED:
            ep["cleared_s"] = t
            open_.pop(ep["key"], None)
            done.append(ep)
        elif kind in ACKED:
            if ep["acknowledged_s"] is None:
                ep["acknowledged_s"] = t
                ep["acknowledged_by"] = str(data.get("actor") or data.get("by") or "")
        elif kind in ACTIONS:
            what = str(data.get("action") or kind)
            outcome = str(data.get("outcome") or kind.removeprefix("action_")).replace("_", " ")
            at = iso_time(t)
            ep["actions"].append(f"{what}: {outcome} at {at}")
        else:
            ep["notes"].append(f"{kind.replace('_', ' ')}: {ev.message or ''}".strip())
    return [
        Episode(e["rule"], e["channel"], e["severity"], e["message"], e["raised_s"], e["cleared_s"],
                e["acknowledged_s"], e["acknowledged_by"], tuple(e["actions"]), tuple(e["notes"]))
        for e in order
    ]


def rate_rating(per_10_min: float | None) -> str:
    """The EEMUA 191 band of an average alarm rate (from memory; see the module docstring)."""
    if per_10_min is None:
        return "no data"
    if per_10_min < 1.0:
        return "very likely acceptable"
    if per_10_min <= 2.0:
        return "manageable"
    if per_10_min <= 10.0:
        return "likely over-demanding"
    return "very likely unacceptable"


def peak_rating(peak: int) -> str:
    """The EEMUA 191 band of the most alarms in any 10 min (from memory)."""
    if peak < 10:
        return "manageable"
    if peak <= 100:
        return "hard to cope with"
    return "excessive"


def alarm_rates(episodes: Sequence[Episode], start_s: float, end_s: float) -> AlarmRates:
    """Average and peak alarm rates over ``[start_s, end_s]``, floods and chattering alarms."""
    t = np.sort(np.asarray([e.raised_s for e in episodes], dtype=np.float64))
    hours = max(0.0, (end_s - start_s) / 3600.0)
    n = int(t.size)
    per_hour = n / hours if hours > 0 else None
    per_10 = None if per_hour is None else per_hour / 6.0
    peak, peak_at = 0, None
    if n:
        # the most raises in any 10-minute window that starts at a raise
        counts = np.searchsorted(t, t + 600.0, side="left") - np.arange(n)
        k = int(np.argmax(counts))
        peak, peak_at = int(counts[k]), float(t[k])
    periods = max(1, int(np.ceil((end_s - start_s) / 600.0))) if end_s > start_s else 0
    floods = 0
    if n and periods:
        bins = np.bincount(np.clip(((t - start_s) // 600.0).astype(np.int64), 0, periods - 1), minlength=periods)
        floods = int((bins > FLOOD_PER_10_MIN).sum())
    chatter: list[str] = []
    by_rule: dict[tuple[str, str], list[float]] = {}
    for e in episodes:
        by_rule.setdefault((e.rule, e.channel), []).append(e.raised_s)
    for (rule, ch), times in sorted(by_rule.items()):
        tt = np.sort(np.asarray(times, dtype=np.float64))
        if tt.size >= CHATTER_COUNT:
            within = np.searchsorted(tt, tt + CHATTER_WINDOW_S, side="right") - np.arange(tt.size)
            if int(within.max()) >= CHATTER_COUNT:
                chatter.append(f"{rule} on {ch}" if ch else rule)
    sev: dict[str, int] = {}
    for e in episodes:
        sev[e.severity or "unspecified"] = sev.get(e.severity or "unspecified", 0) + 1
    return AlarmRates(
        alarms=n, hours=hours, per_hour=per_hour, per_10_min=per_10, rate_rating=rate_rating(per_10),
        peak_10_min=peak, peak_at_s=peak_at, peak_rating=peak_rating(peak), flood_periods=floods,
        periods=periods, flood_share=(floods / periods) if periods else None, chattering=tuple(chatter),
        by_severity=dict(sorted(sev.items())),
    )
