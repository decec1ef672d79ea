"""The alarm engine: samples and the current time in, alarm state changes and events out (pure).

States follow the alarm state model of ANSI/ISA-18.2 and IEC 62682 (from
memory of both): ``normal``; ``unacknowledged`` (condition active, not yet
acknowledged); ``acknowledged`` (active, acknowledged); ``returned_unacknowledged``
(condition gone, never acknowledged); ``latched`` (condition gone, held until
an operator resets it with an acknowledgement); ``shelved`` (suppressed by an
operator until an expiry); ``out_of_service`` (taken out by configuration or
maintenance). Shelved and out-of-service alarms keep following their condition,
so they come back in the state the process is in.

Each alarm point (one rule on one channel, one group, or one instrument) goes
through three stages on every evaluation:

1. the rule's kind judges it (``soaklog.kinds.alarms``, one module per kind:
   the quantity from the samples and the time, and its test with the
   **deadband** applied on the way back — a high alarm raised above
   ``limit`` clears only below ``limit - deadband``); the engine never asks
   which kind a rule is;
2. the **on-delay** and **off-delay**: the tested condition must hold without
   a break for that long (in sample time) before the alarm's condition changes;
3. the state machine (``soaklog.alarmpoint``), which changes state only when
   the delayed condition changes, or an operator acts, or a shelf expires.

So chattering is suppressed by construction: noise smaller than the deadband
cannot clear a raised alarm, and a spike shorter than the on-delay cannot raise
one. Every event is a state change (an operator's note is the one event that
is not, and it comes only from ``note``).

No clock, no I/O, no sleeping: time is the samples' stamps and ``now_s``,
seconds on one time line (the service uses UTC seconds).
"""

from __future__ import annotations

import math
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any

from soaklog.alarmpoint import (
    ACTIVE_STATES,
    MAX_SHELVE_S,
    STATES,
    AlarmEvent,
    AlarmState,
    OperatorResult,
    State,
    acknowledge,
    evaluate,
    remove_from_service,
    return_to_service,
    shelve,
    unshelve,
)
from soaklog.alarmpoint import note as note_event
from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import FAULT_STATUSES, AlarmRuleKind, KindDefaults, Moment, Signals

if TYPE_CHECKING:
    from soaklog.config import AlarmConfig, StationConfig

__all__ = [
    "STATES",
    "ACTIVE_STATES",
    "KIND_DEFAULTS",
    "FAULT_STATUSES",
    "MAX_SHELVE_S",
    "KindDefaults",
    "Sample",
    "Rule",
    "AlarmState",
    "AlarmEvent",
    "OperatorResult",
    "AlarmEngine",
    "evaluate",
    "acknowledge",
    "shelve",
    "unshelve",
    "remove_from_service",
    "return_to_service",
]

class _KindDefaultsView(Mapping[str, KindDefaults]):
    """Each registered alarm rule kind's defaults, by kind (a live view of soaklog.kinds.ALARM_RULES)."""

    def __getitem__(self, kind: str) -> KindDefaults:
        k = ALARM_RULES.get(kind)
        if k is None:
            raise KeyError(kind)
        return k.defaults

    def __iter__(self) -> Iterator[str]:
        return iter(ALARM_RULES.names())

    def __len__(self) -> int:
        return len(ALARM_RULES.names())


#: what a rule of each kind does when the station file leaves a setting out (each kind's module declares its own)
KIND_DEFAULTS: Mapping[str, KindDefaults] = _KindDefaultsView()

_RULE_FIELDS = frozenset({
    "severity", "limit", "deadband", "on_delay_s", "off_delay_s", "latch", "shelvable", "in_service", "instruments",
})


# ---------------------------------------------------------------- records


@dataclass(frozen=True)
class Sample:
    """One reading as the engine sees it: channel, time (s), temperature (°C, NaN if none), status."""

    channel: str
    t_s: float
    temperature_c: float
    status: str = "ok"


@dataclass(frozen=True)
class Rule:
    """One alarm rule with every setting resolved.

    ``limit`` and ``deadband`` are in the kind's unit (°C for high and low
    kinds, K for deviation and spread, K/min for rate). ``channels`` are
    names ("*" expanded by the engine); ``instruments`` for the kinds that
    watch instruments. ``settings`` are the kind's own (``window_s`` of a
    rate rule, …), its defaults filled in.
    """

    name: str
    kind: str
    channels: tuple[str, ...] = ()
    severity: str = "high"
    limit: float = math.nan
    deadband: float = 0.0
    on_delay_s: float = 0.0
    off_delay_s: float = 0.0
    latch: bool = False
    shelvable: bool = True
    in_service: bool = True
    instruments: tuple[str, ...] = ()
    settings: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        k = ALARM_RULES.get(self.kind)
        if k is None:
            raise ValueError(f"alarm {self.name}: unknown kind {self.kind!r}; known: {', '.join(ALARM_RULES.names())}")
        if k.defaults.limit_key is not None and not math.isfinite(self.limit):
            raise ValueError(f"alarm {self.name}: a {self.kind} rule needs a finite limit, got {self.limit!r}")
        if self.deadband < 0 or self.on_delay_s < 0 or self.off_delay_s < 0:
            raise ValueError(f"alarm {self.name}: deadband and delays must not be negative")
        unknown = set(self.settings) - set(k.settings)
        if unknown:
            raise ValueError(f"alarm {self.name}: a {self.kind} rule has no setting {sorted(unknown)[0]!r}; "
                             f"its settings: {', '.join(k.settings) or 'none'}")
        object.__setattr__(self, "settings", {**k.settings, **self.settings})

    @property
    def kind_of(self) -> AlarmRuleKind:
        """The rule's kind (soaklog.kinds.ALARM_RULES)."""
        return ALARM_RULES[self.kind]

    @classmethod
    def of_kind(cls, name: str, kind: str, channels: Sequence[str] = (), **settings: Any) -> Rule:
        """A rule with the kind's defaults for every setting not given (the kind's own settings by name too)."""
        k = ALARM_RULES[kind]
        d = k.defaults
        base: dict[str, Any] = {
            "severity": d.severity, "on_delay_s": d.on_delay_s, "off_delay_s": d.off_delay_s,
            "latch": d.latch, "shelvable": d.shelvable,
        }
        own = {key: v for key, v in settings.items() if key not in _RULE_FIELDS}
        base.update({key: v for key, v in settings.items() if key in _RULE_FIELDS})
        if "deadband" not in settings:
            limit = settings.get("limit")
            base["deadband"] = k.default_deadband(None if limit is None else float(limit))
        return cls(name, kind, tuple(channels), settings=own, **base)

    @classmethod
    def from_config(cls, a: AlarmConfig) -> Rule:
        """The rule an ``[[alarm]]`` of a validated station file describes (defaults already filled in)."""
        p = a.params
        k = ALARM_RULES[a.kind]
        d = k.defaults
        kw: dict[str, Any] = {
            "severity": a.severity,
            "on_delay_s": float(p.get("on_delay_s", d.on_delay_s)),
            "off_delay_s": float(p.get("off_delay_s", d.off_delay_s)),
            "latch": bool(p.get("latch", d.latch)),
            "shelvable": bool(p.get("shelvable", d.shelvable)),
            "in_service": bool(p.get("in_service", True)),
        }
        if d.limit_key is not None:
            kw["limit"] = float(p[d.limit_key])
            kw["deadband"] = float(p.get(k.deadband_key, k.default_deadband(kw["limit"])) if k.deadband_key
                                   else k.default_deadband(kw["limit"]))
        if "instruments" in p:
            kw["instruments"] = tuple(p["instruments"])
        own = {key: p[key] for key in k.settings if key in p}
        return cls(a.name, a.kind, tuple(a.channels), settings=own, **kw)

    def test(self, value: float, active: bool) -> bool:
        """The rule's test on a value, with the deadband on the way back (``active``: the delayed condition)."""
        return self.kind_of.test(self, value, active)


# ---------------------------------------------------------------- the engine


class AlarmEngine:
    """Every alarm point of a station: ``step`` with samples and the time, operators' requests by function.

    Args:
        rules: the rules.
        channels: every channel name ("*" in a rule means all of them).
        instruments: every instrument name (an ``instrument_lost`` rule with
            none named watches them all).
        restore: states saved by an earlier run of the same station (a
            restarted service continues, latched and shelved alarms included).
    """

    def __init__(self, rules: Sequence[Rule], channels: Sequence[str] = (), instruments: Sequence[str] = (),
                 *, restore: Iterable[AlarmState] = ()) -> None:
        self._rules: dict[str, Rule] = {}
        self._points: dict[str, AlarmState] = {}
        self._point_rule: dict[str, Rule] = {}
        self._memo: dict[str, dict[str, Any]] = {}  # each point's own memory, for its kind
        self._by_channel: dict[str, list[str]] = {}  # judged on each sample of a channel
        self._groups: list[tuple[Rule, str]] = []  # judged once per scan of their channels
        self._timed: list[tuple[Rule, str]] = []  # judged on every step, with the time
        self._watched: set[str] = set()
        self._history_s: dict[str, float] = {}
        self._mem = Signals()
        self._dirty: set[str] = set()
        names = tuple(channels)
        for r in rules:
            kind = r.kind_of
            chans = names if "*" in r.channels else tuple(dict.fromkeys(r.channels))
            r = replace(r, channels=chans)
            if kind.scope == "instrument" and not r.instruments:
                r = replace(r, instruments=tuple(instruments))
            if r.name in self._rules:
                raise ValueError(f"two alarm rules are named {r.name!r}")
            self._rules[r.name] = r
            if kind.scope == "channel":
                points = [(f"{r.name}:{c}", c, c) for c in r.channels]
            elif kind.scope == "group":
                points = [(r.name, "+".join(r.channels), None)]
            else:
                points = [(f"{r.name}:{inst}", inst, None) for inst in r.instruments]
            for pid, source, channel in points:
                self._add(r, pid, source, channel)
                if kind.when == "sample" and channel is not None:
                    self._by_channel.setdefault(channel, []).append(pid)
                elif kind.when == "scan":
                    self._groups.append((r, pid))
                else:
                    self._timed.append((r, pid))
            if kind.scope != "instrument":
                self._watched.update(r.channels)
            self._watched.update(kind.extra_channels(r))
            h = kind.history_s(r)
            if h > 0:
                for c in r.channels:
                    self._history_s[c] = max(self._history_s.get(c, 0.0), h)
        for saved in restore:
            mine = self._points.get(saved.id)
            if mine is not None and saved.rule == mine.rule:
                self._points[saved.id] = replace(mine, state=saved.state, condition=saved.condition,
                                                 raw=saved.condition, raw_since_s=None, acked=saved.acked,
                                                 since_s=saved.since_s, shelved_until_s=saved.shelved_until_s,
                                                 value=saved.value, message=saved.message)

    def _add(self, rule: Rule, pid: str, source: str, channel: str | None) -> None:
        state: State = "normal" if rule.in_service else "out_of_service"
        self._points[pid] = AlarmState(pid, rule.name, rule.kind, source, channel, rule.severity, state=state)
        self._point_rule[pid] = rule
        self._memo[pid] = {}
        self._dirty.add(pid)

    @classmethod
    def from_config(cls, cfg: StationConfig, *, restore: Iterable[AlarmState] = (),
                    builtin: bool = True) -> AlarmEngine:
        """The engine a station file describes.

        With ``builtin``, a station whose file has no ``instrument_lost`` rule
        gets one, ``BUILTIN_INSTRUMENT_LOST``, on every instrument: a lost
        instrument always raises an alarm.
        """
        rules = [Rule.from_config(a) for a in cfg.alarms]
        if builtin:
            names = {r.name for r in rules}
            for kname, kind in ALARM_RULES.items():
                if kind.builtin and kind.builtin not in names and not any(r.kind == kname for r in rules):
                    rules.append(Rule.of_kind(kind.builtin, kname))
        return cls(rules, [c.name for c in cfg.channels], [i.name for i in cfg.instruments], restore=restore)

    @property
    def watched_channels(self) -> frozenset[str]:
        """Channels whose samples some rule needs (the others need not be given to ``step``)."""
        return frozenset(self._watched)

    # ------------------------------------------------------------ reading

    @property
    def rules(self) -> dict[str, Rule]:
        return dict(self._rules)

    def alarms(self) -> list[AlarmState]:
        """Every alarm point, in the order the rules define them."""
        return list(self._points.values())

    def get(self, alarm_id: str) -> AlarmState:
        return self._points[alarm_id]

    def rule_of(self, alarm_id: str) -> Rule:
        return self._point_rule[alarm_id]

    def changed(self) -> list[AlarmState]:
        """The points that changed since the last call (for a store to save), in definition order."""
        out = [p for pid, p in self._points.items() if pid in self._dirty]
        self._dirty.clear()
        return out

    # ------------------------------------------------------------ samples and time

    def _apply(self, pid: str, raw: bool | None, t_s: float, value: float | None, out: list[AlarmEvent]) -> None:
        before = self._points[pid]
        after, events = evaluate(before, self._point_rule[pid], raw, t_s, value)
        if after is not before:
            self._points[pid] = after
            if after.state != before.state or after.condition != before.condition or after.acked != before.acked:
                self._dirty.add(pid)
        out.extend(events)

    def step(self, samples: Iterable[Sample], now_s: float,
             connected: Mapping[str, bool] | None = None) -> list[AlarmEvent]:
        """Take a batch of samples (any order) and the time now; the events, in time order.

        ``connected`` gives each instrument's link state as last seen (for
        ``instrument_lost`` rules); instruments left out keep their state.
        """
        mem = self._mem
        if mem.started_s is None:
            mem.started_s = now_s
        out: list[AlarmEvent] = []
        batch = sorted(samples, key=lambda s: s.t_s)
        i = 0
        while i < len(batch):
            t = batch[i].t_s
            j = i
            while j < len(batch) and batch[j].t_s == t:
                j += 1
            same_time = batch[i:j]
            i = j
            # every channel's value at t first, so a group or a reference sees the whole scan
            for s in same_time:
                if s.status == "ok" and math.isfinite(s.temperature_c):
                    mem.last[s.channel] = (t, s.temperature_c)
                    mem.last_good_t[s.channel] = t
                    w = self._history_s.get(s.channel)
                    if w is not None:
                        dq = mem.windows.setdefault(s.channel, deque())
                        dq.append((t, s.temperature_c))
                        while dq and dq[0][0] < t - w:
                            dq.popleft()
            touched: set[str] = set()
            for s in same_time:
                touched.add(s.channel)
                for pid in self._by_channel.get(s.channel, ()):
                    self._judge(pid, t, s, out)
            for rule, pid in self._groups:
                if touched.intersection(rule.channels):
                    self._judge(pid, t, None, out)
        mem.connected = connected or {}
        for _rule, pid in self._timed:
            self._judge(pid, now_s, None, out)
        mem.connected = {}
        for pid, p in list(self._points.items()):
            if p.state == "shelved" and p.shelved_until_s is not None and now_s >= p.shelved_until_s:
                new, events = unshelve(p, self._point_rule[pid], now_s, expired=True)
                self._points[pid] = new
                self._dirty.add(pid)
                out.extend(events)
        out.sort(key=lambda e: e.t_s)
        return out

    def _judge(self, pid: str, t_s: float, sample: Sample | None, out: list[AlarmEvent]) -> None:
        """One judgement of a point by its kind, then through the delays and the states."""
        rule = self._point_rule[pid]
        p = self._points[pid]
        raw, value = rule.kind_of.judge(rule, Moment(t_s, p.source, p.condition, self._memo[pid], sample), self._mem)
        self._apply(pid, raw, t_s, value, out)

    # ------------------------------------------------------------ operators

    def match(self, target: str) -> list[str]:
        """Alarm ids a target names: ``*`` (or empty) for all, an alarm id, or a rule name (all its points)."""
        t = target.strip()
        if t in ("", "*"):
            return list(self._points)
        if t in self._points:
            return [t]
        if t in self._rules:
            return [pid for pid, p in self._points.items() if p.rule == t]
        return []

    def _unknown(self, target: str) -> OperatorResult:
        known = ", ".join(list(self._points)[:8]) + (" …" if len(self._points) > 8 else "")
        return OperatorResult((), f"no alarm {target!r}; known: {known or 'none'}", matched=False)

    def _each(self, target: str, fn: Callable[[AlarmState, Rule], tuple[AlarmState, list[AlarmEvent]]],
              verb: str, nothing: str) -> OperatorResult:
        ids = self.match(target)
        if not ids:
            return self._unknown(target)
        events: list[AlarmEvent] = []
        done: list[str] = []
        for pid in ids:
            p = self._points[pid]
            new, evs = fn(p, self._point_rule[pid])
            if evs:
                self._points[pid] = new
                self._dirty.add(pid)
                events.extend(evs)
                done.append(f"{pid} ({p.state.replace('_', ' ')} → {new.state.replace('_', ' ')})")
        if not done:
            return OperatorResult((), nothing)
        return OperatorResult(tuple(events), f"{verb} {len(done)}: " + ", ".join(done))

    def acknowledge(self, target: str, now_s: float, *, note: str = "", actor: str = "") -> OperatorResult:
        """Acknowledge every alarm ``target`` names that waits for it (latched ones are reset)."""
        return self._each(target, lambda p, r: acknowledge(p, r, now_s, note=note, actor=actor),
                          "acknowledged", f"nothing to acknowledge in {target or '*'}")

    def shelve(self, target: str, now_s: float, until_s: float, *, note: str = "", actor: str = "") -> OperatorResult:
        """Shelve every alarm ``target`` names until ``until_s``; refusals are named in the outcome."""
        ids = self.match(target)
        if not ids:
            return self._unknown(target)
        events: list[AlarmEvent] = []
        done: list[str] = []
        refused: list[str] = []
        for pid in ids:
            new, evs, why = shelve(self._points[pid], self._point_rule[pid], now_s, until_s, note=note, actor=actor)
            if why:
                refused.append(why)
            elif evs:
                self._points[pid] = new
                self._dirty.add(pid)
                events.extend(evs)
                done.append(pid)
        parts = []
        if done:
            parts.append(f"shelved {len(done)} until t = {until_s:.0f} s: " + ", ".join(done))
        if refused:
            parts.append("refused: " + "; ".join(refused))
        return OperatorResult(tuple(events), "; ".join(parts) or "nothing shelved")

    def unshelve(self, target: str, now_s: float, *, note: str = "", actor: str = "") -> OperatorResult:
        return self._each(target, lambda p, r: unshelve(p, r, now_s, note=note, actor=actor),
                          "unshelved", f"nothing shelved in {target or '*'}")

    def remove_from_service(self, target: str, now_s: float, *, note: str = "", actor: str = "") -> OperatorResult:
        return self._each(target, lambda p, r: remove_from_service(p, r, now_s, note=note, actor=actor),
                          "out of service", "already out of service")

    def return_to_service(self, target: str, now_s: float, *, note: str = "", actor: str = "") -> OperatorResult:
        return self._each(target, lambda p, r: return_to_service(p, r, now_s, note=note, actor=actor),
                          "back in service", "nothing out of service")

    def note(self, target: str, now_s: float, text: str, *, actor: str = "") -> OperatorResult:
        """An operator's note on an alarm (or on the run, with an empty target): an event, no state change."""
        if target.strip() in ("", "*"):
            e = AlarmEvent("alarm_note", "", "", "", None, now_s, "", "", "info", f"note: {text}", note=text, actor=actor)
            return OperatorResult((e,), "noted")
        ids = self.match(target)
        if not ids:
            return self._unknown(target)
        events = []
        for pid in ids:
            p = self._points[pid]
            events.append(note_event(p, now_s, text, actor=actor))
        return OperatorResult(tuple(events), f"noted on {len(ids)}: " + ", ".join(ids))

    def apply(self, kind: str, target: str, now_s: float, *, note: str = "", actor: str = "",
              duration_s: float | None = None) -> OperatorResult:
        """An operator's request by name: acknowledge, shelve (for ``duration_s``), unshelve, note,
        out_of_service, in_service."""
        k = kind.strip().lower()
        if k in ("acknowledge", "ack"):
            return self.acknowledge(target, now_s, note=note, actor=actor)
        if k == "shelve":
            if duration_s is None or not duration_s > 0:
                return OperatorResult((), "refused: a shelf needs a duration", matched=False)
            return self.shelve(target, now_s, now_s + duration_s, note=note, actor=actor)
        if k == "unshelve":
            return self.unshelve(target, now_s, note=note, actor=actor)
        if k == "note":
            return self.note(target, now_s, note, actor=actor)
        if k == "out_of_service":
            return self.remove_from_service(target, now_s, note=note, actor=actor)
        if k == "in_service":
            return self.return_to_service(target, now_s, note=note, actor=actor)
        return OperatorResult((), f"refused: unknown request {kind!r}; known: acknowledge, shelve, unshelve, note, "
                                  "out_of_service, in_service", matched=False)
