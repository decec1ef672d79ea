"""One alarm point's state machine: its records and the pure functions that move it (ISA-18.2 states).

States follow the alarm state model of ANSI/ISA-18.2 and IEC 62682 (from
memory of both); see ``soaklog.alarms`` for the engine that keeps every
point of a station. Each function takes a point's state and its rule and
returns the new state with the events of the change: no clock, no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Literal

if TYPE_CHECKING:
    from soaklog.alarms import Rule

__all__ = [
    "STATES",
    "ACTIVE_STATES",
    "MAX_SHELVE_S",
    "State",
    "Trigger",
    "AlarmState",
    "AlarmEvent",
    "OperatorResult",
    "evaluate",
    "note",
    "acknowledge",
    "shelve",
    "unshelve",
    "remove_from_service",
    "return_to_service",
]

State = Literal[
    "normal", "unacknowledged", "acknowledged", "returned_unacknowledged", "latched", "shelved", "out_of_service"
]
STATES: tuple[str, ...] = (
    "normal", "unacknowledged", "acknowledged", "returned_unacknowledged", "latched", "shelved", "out_of_service",
)
#: states in which the alarm asks for the operator (condition active, or not yet seen, or held)
ACTIVE_STATES = frozenset({"unacknowledged", "acknowledged", "returned_unacknowledged", "latched"})

#: the longest an operator may shelve an alarm: one day (ISA-18.2 asks for a
#: time limit on shelving; the figure is common practice, no published source)
MAX_SHELVE_S = 24 * 3600.0


# ---------------------------------------------------------------- records


@dataclass(frozen=True)
class AlarmState:
    """Where one alarm point stands.

    Attributes:
        id: ``rule:channel``, ``rule:instrument``, or the rule's name for a group rule.
        source: the channel, instrument or group the point watches.
        channel: the channel, or None (group and instrument alarms).
        condition: the delayed condition (what the state machine follows).
        raw: the tested condition before the delays; ``raw_since_s`` when it last changed.
        acked: whether the present annunciation has been acknowledged.
        since_s: when the state last changed (None: never).
        value: the last evaluated quantity (°C, K, K/min, or seconds for stale).
    """

    id: str
    rule: str
    kind: str
    source: str
    channel: str | None
    severity: str
    state: State = "normal"
    condition: bool = False
    raw: bool = False
    raw_since_s: float | None = None
    acked: bool = True
    since_s: float | None = None
    shelved_until_s: float | None = None
    value: float | None = None
    message: str = ""

    @property
    def active(self) -> bool:
        return self.state in ACTIVE_STATES


Trigger = Literal["raised", "cleared", "acknowledged"]


@dataclass(frozen=True)
class AlarmEvent:
    """A state change of one alarm (or an operator's note on it).

    ``kind`` is the event kind stored in ``events``: alarm_raised,
    alarm_cleared, alarm_acknowledged, alarm_shelved, alarm_unshelved,
    alarm_out_of_service, alarm_in_service, alarm_note. ``trigger`` says which
    configured actions it fires (None: none).
    """

    kind: str
    alarm: str
    rule: str
    source: str
    channel: str | None
    t_s: float
    before: str
    after: str
    severity: str
    message: str
    value: float | None = None
    trigger: Trigger | None = None
    note: str = ""
    actor: str = ""

    def fields(self) -> dict[str, str]:
        """The event as text fields (for an action program's environment and the event's data)."""
        return {
            "event": self.kind, "alarm": self.alarm, "rule": self.rule, "source": self.source,
            "channel": self.channel or "", "t_s": f"{self.t_s:.3f}", "state_before": self.before,
            "state": self.after, "severity": self.severity, "message": self.message,
            "value": "" if self.value is None or not math.isfinite(self.value) else f"{self.value:.6g}",
            "note": self.note, "actor": self.actor,
        }


@dataclass(frozen=True)
class OperatorResult:
    """What an operator's request did: the events, a one-line outcome, and whether it matched anything."""

    events: tuple[AlarmEvent, ...]
    outcome: str
    matched: bool = True


# ---------------------------------------------------------------- the state machine of one point


def _event(p: AlarmState, kind: str, t_s: float, before: str, message: str, *, severity: str = "info",
           trigger: Trigger | None = None, note: str = "", actor: str = "") -> AlarmEvent:
    return AlarmEvent(kind, p.id, p.rule, p.source, p.channel, t_s, before, p.state, severity, message,
                      p.value, trigger, note, actor)


def _describe(rule: Rule, p: AlarmState, value: float | None, active: bool) -> str:
    """A one-line message of what the rule saw (its kind words it)."""
    return rule.kind_of.describe(rule, p.source, value, active)


def _on_condition(p: AlarmState, rule: Rule, active: bool, t_s: float, message: str) -> tuple[AlarmState, list[AlarmEvent]]:
    """The state machine's answer to a change of the delayed condition."""
    p = replace(p, condition=active, message=message)
    s = p.state
    if s in ("shelved", "out_of_service"):
        return p, []  # suppressed: the condition is followed, nothing is annunciated
    if active:
        if s in ("normal", "returned_unacknowledged", "latched"):
            p = replace(p, state="unacknowledged", acked=False, since_s=t_s)
            return p, [_event(p, "alarm_raised", t_s, s, message, severity=rule.severity, trigger="raised")]
        return p, []
    if s == "unacknowledged":
        new: State = "latched" if rule.latch else "returned_unacknowledged"
        p = replace(p, state=new, since_s=t_s)
        text = message + ("; latched until reset" if rule.latch else "; not yet acknowledged")
        return p, [_event(p, "alarm_cleared", t_s, s, text, trigger="cleared")]
    if s == "acknowledged":
        new = "latched" if rule.latch else "normal"
        p = replace(p, state=new, since_s=t_s)
        text = message + ("; latched until reset" if rule.latch else "")
        return p, [_event(p, "alarm_cleared", t_s, s, text, trigger="cleared")]
    return p, []


def evaluate(p: AlarmState, rule: Rule, raw: bool | None, t_s: float,
             value: float | None = None) -> tuple[AlarmState, list[AlarmEvent]]:
    """One evaluation of a point: the tested condition ``raw`` at ``t_s`` through the delays and the states.

    ``raw`` None means the point cannot be evaluated now (no good value): nothing changes.
    """
    if raw is None:
        return p, []
    if value is not None:
        p = replace(p, value=value)
    if raw != p.raw or p.raw_since_s is None:
        p = replace(p, raw=raw, raw_since_s=t_s)
    held = t_s - (p.raw_since_s if p.raw_since_s is not None else t_s)
    if raw and not p.condition and held >= rule.on_delay_s:
        return _on_condition(p, rule, True, t_s, _describe(rule, p, p.value, True))
    if not raw and p.condition and held >= rule.off_delay_s:
        return _on_condition(p, rule, False, t_s, _describe(rule, p, p.value, False))
    return p, []


def note(p: AlarmState, now_s: float, text: str, *, actor: str = "") -> AlarmEvent:
    """An operator's note on one alarm: an event, no state change."""
    return _event(p, "alarm_note", now_s, p.state, f"note on {p.id}: {text}", note=text, actor=actor)


def acknowledge(p: AlarmState, rule: Rule, now_s: float, *, note: str = "", actor: str = "") -> tuple[AlarmState, list[AlarmEvent]]:
    """Acknowledge (or reset, when latched) one alarm; never clears an active condition."""
    s = p.state
    extra = f": {note}" if note else ""
    if s == "unacknowledged":
        p = replace(p, state="acknowledged", acked=True, since_s=now_s)
        return p, [_event(p, "alarm_acknowledged", now_s, s, f"{p.id} acknowledged{extra}", note=note, actor=actor,
                          trigger="acknowledged")]
    if s in ("returned_unacknowledged", "latched"):
        if p.condition:  # cannot happen through the state machine; kept safe
            p = replace(p, state="acknowledged", acked=True, since_s=now_s)
        else:
            p = replace(p, state="normal", acked=True, since_s=now_s)
        what = "reset" if s == "latched" else "acknowledged"
        return p, [_event(p, "alarm_acknowledged", now_s, s, f"{p.id} {what}{extra}", note=note, actor=actor,
                          trigger="acknowledged")]
    return p, []


def shelve(p: AlarmState, rule: Rule, now_s: float, until_s: float, *, note: str = "",
           actor: str = "") -> tuple[AlarmState, list[AlarmEvent], str | None]:
    """Shelve one alarm until ``until_s``; returns (state, events, why refused or None)."""
    if not rule.shelvable:
        return p, [], f"{p.id} may not be shelved (a {rule.kind} alarm)"
    if p.state == "out_of_service":
        return p, [], f"{p.id} is out of service"
    if p.state == "shelved":
        return p, [], f"{p.id} is already shelved; unshelve it first to shelve it anew"
    if not until_s > now_s:
        return p, [], f"{p.id}: a shelf must end in the future"
    if until_s - now_s > MAX_SHELVE_S:
        return p, [], f"{p.id}: at most {MAX_SHELVE_S / 3600:g} h of shelving"
    s = p.state
    p = replace(p, state="shelved", shelved_until_s=until_s, since_s=now_s)
    extra = f": {note}" if note else ""
    return p, [_event(p, "alarm_shelved", now_s, s, f"{p.id} shelved for {until_s - now_s:.0f} s{extra}",
                      note=note, actor=actor)], None


def _back(p: AlarmState, now_s: float) -> AlarmState:
    if p.condition:
        return replace(p, state="unacknowledged", acked=False, since_s=now_s, shelved_until_s=None)
    return replace(p, state="normal", acked=True, since_s=now_s, shelved_until_s=None)


def unshelve(p: AlarmState, rule: Rule, now_s: float, *, note: str = "", actor: str = "",
             expired: bool = False) -> tuple[AlarmState, list[AlarmEvent]]:
    """End a shelf (on request or at its expiry): the alarm comes back in its condition's state."""
    if p.state != "shelved":
        return p, []
    s = p.state
    p = _back(p, now_s)
    why = "shelf expired" if expired else "unshelved"
    extra = f": {note}" if note else ""
    sev = rule.severity if p.state == "unacknowledged" else "info"
    return p, [_event(p, "alarm_unshelved", now_s, s, f"{p.id} {why}, {p.state.replace('_', ' ')}{extra}",
                      severity=sev, note=note, actor=actor,
                      trigger="raised" if p.state == "unacknowledged" else None)]


def remove_from_service(p: AlarmState, rule: Rule, now_s: float, *, note: str = "",
                        actor: str = "") -> tuple[AlarmState, list[AlarmEvent]]:
    """Take an alarm out of service (maintenance): nothing is annunciated until it returns."""
    if p.state == "out_of_service":
        return p, []
    s = p.state
    p = replace(p, state="out_of_service", shelved_until_s=None, since_s=now_s)
    extra = f": {note}" if note else ""
    return p, [_event(p, "alarm_out_of_service", now_s, s, f"{p.id} out of service{extra}", note=note, actor=actor)]


def return_to_service(p: AlarmState, rule: Rule, now_s: float, *, note: str = "",
                      actor: str = "") -> tuple[AlarmState, list[AlarmEvent]]:
    """Put an alarm back in service, in its condition's state."""
    if p.state != "out_of_service":
        return p, []
    s = p.state
    p = _back(p, now_s)
    extra = f": {note}" if note else ""
    sev = rule.severity if p.state == "unacknowledged" else "info"
    return p, [_event(p, "alarm_in_service", now_s, s, f"{p.id} back in service, {p.state.replace('_', ' ')}{extra}",
                      severity=sev, note=note, actor=actor,
                      trigger="raised" if p.state == "unacknowledged" else None)]
