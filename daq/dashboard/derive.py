"""What the screens conclude from a snapshot: a channel's condition, the run's state, the verdict.

Every conclusion carries a word and a marker, not only a colour, so it reads
on a monochrome terminal.
"""

from __future__ import annotations

from dataclasses import dataclass

from soaklog.dashboard.plan import RunPlan
from soaklog.dashboard.records import ChannelRow, Snapshot
from soaklog.dashboard.units import fmt_age
from soaklog.kinds.alarms.stale import stale_after_s as _stale_after_interval_s

__all__ = ["MARK", "Condition", "Verdict", "alarmed_channels", "channel_condition", "run_state", "stale_after_s", "verdict"]

#: the marker of a row that needs a look (two characters, so it is seen at a glance)
MARK = "!!"

@dataclass(frozen=True)
class Condition:
    abnormal: bool
    marker: str
    word: str


def stale_after_s(plan: RunPlan, instrument: str) -> float:
    """How old a channel's last good reading may get before it counts as stale.

    The one definition soaklog has (``soaklog.kinds.alarms.stale``), the same
    as the stale alarm's default: the dashboard marks a channel stale exactly
    when that alarm would see it so.
    """
    return _stale_after_interval_s(plan.intervals_s.get(instrument))


def channel_condition(row: ChannelRow, now_ms: int, plan: RunPlan, *, alarmed: bool = False) -> Condition:
    """ok, or why not: the reading's status, an active alarm on the channel, or a stale reading."""
    if row.status == "no_data":
        return Condition(True, MARK, "no data")
    if row.status != "ok":
        return Condition(True, MARK, row.status.replace("_", " "))
    if alarmed:
        return Condition(True, MARK, "ALARM")
    if row.last_ok_ms is not None and (now_ms - row.last_ok_ms) / 1000.0 > stale_after_s(plan, row.instrument):
        return Condition(True, MARK, "stale")
    return Condition(False, "", "ok")


def alarmed_channels(snap: Snapshot) -> set[str]:
    """Channels with an alarm that is not back to normal (shelved and out of service do not count)."""
    return {a.channel for a in snap.alarms
            if a.channel and a.state not in ("normal", "shelved", "out_of_service")}


def run_state(snap: Snapshot) -> tuple[str, str]:
    """A word for the run (LIVE, ENDED, WAITING, SILENT) and a short explanation."""
    if not snap.live:
        return "ENDED", "review of a finished run"
    newest = max((c.t_ms for c in snap.channels if c.t_ms is not None), default=None)
    if newest is None:
        return "WAITING", "no readings yet"
    limit = max((stale_after_s(snap.run.plan, c.instrument) for c in snap.channels), default=_stale_after_interval_s(None))
    age = (snap.now_ms - newest) / 1000.0
    if age > limit:
        return "SILENT", f"nothing new for {fmt_age(age)}: is the logger running?"
    return "LIVE", ""


@dataclass(frozen=True)
class Verdict:
    healthy: bool
    text: str


def verdict(snap: Snapshot) -> Verdict:
    """The two-second answer: is the run healthy, and if not, what needs a look."""
    alarmed = alarmed_channels(snap)
    bad_channels = sum(
        1 for c in snap.channels if channel_condition(c, snap.now_ms, snap.run.plan, alarmed=c.name in alarmed).abnormal
    )
    to_ack = sum(1 for a in snap.alarms if a.needs_ack)
    active = sum(1 for a in snap.alarms if a.state not in ("normal",))
    lost = sum(1 for i in snap.instruments if not i.connected)
    parts = []
    if to_ack:
        parts.append(f"{to_ack} alarm{'s' if to_ack != 1 else ''} to acknowledge (a)")
    elif active:
        parts.append(f"{active} alarm{'s' if active != 1 else ''} active (a)")
    if bad_channels:
        parts.append(f"{bad_channels} channel{'s' if bad_channels != 1 else ''} to check")
    if lost:
        parts.append(f"{lost} instrument{'s' if lost != 1 else ''} lost")
    state, _why = run_state(snap)
    if state == "SILENT" and snap.live:
        parts.append("no new data")
    if parts:
        return Verdict(False, " · ".join(parts))
    n = len(snap.channels)
    ni = len(snap.instruments)
    return Verdict(True, f"{n} channel{'s' if n != 1 else ''} ok, {ni} instrument{'s' if ni != 1 else ''} "
                         "connected, no active alarm")
