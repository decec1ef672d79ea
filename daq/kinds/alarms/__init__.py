"""Alarm rule kinds: what an ``[[alarm]]`` of each kind may say, and the condition it judges (see soaklog.kinds).

An alarm rule kind is one module of this folder. It declares its keys and
its ``KindDefaults`` (severity, delays, latching, shelving, the limit's key
and unit, the deadband), reads and validates its keys by file and key, and
gives the engine (``soaklog.alarms``) its condition as pure functions:

- ``scope``: one alarm point per channel, one for a group of channels, or
  one per instrument;
- ``when``: judged on every sample of its channel, once per scan of its
  group, or on every step with the time (for conditions of absence);
- ``judge``: from the sample, the engine's memory of the signals and the
  point's own memory, the quantity it computes and the tested condition
  (``test`` applies the deadband on the way back);
- ``describe``: the one-line message of what it saw.

The engine keeps the states (ISA-18.2), the delays and the operators'
requests; it never asks which kind a rule is. No clock, no I/O here: time
is the samples' stamps and the ``now_s`` the engine is given.
"""

from __future__ import annotations

import math
from collections import deque
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, ClassVar, Literal

from soaklog.drivers.base import STATUSES
from soaklog.kinds.keys import DURATION, Checker, Key, non_negative, positive

if TYPE_CHECKING:
    from soaklog.alarms import Rule, Sample

__all__ = [
    "AlarmRuleKind",
    "AlarmContext",
    "KindDefaults",
    "Moment",
    "Signals",
    "COMMON_KEYS",
    "FAULT_STATUSES",
    "READING_STATUSES",
    "SEVERITIES",
    "good",
    "NOTHING",
    "DEFAULT_MAX_AGE_S",
]

Scope = Literal["channel", "group", "instrument"]
When = Literal["sample", "scan", "tick"]

#: alarm severities, lowest first
SEVERITIES: tuple[str, ...] = ("low", "medium", "high", "critical")

#: every status a reading can have (their one definition is the driver layer's)
READING_STATUSES = frozenset(STATUSES)

#: reading statuses that mean the sensor itself is bad (not the link to it)
FAULT_STATUSES = frozenset({"open", "short", "out_of_range", "overload", "invalid"})

#: deviation from a reference channel, spread: readings older than this are left out
DEFAULT_MAX_AGE_S = 60.0

#: keys every alarm has, whatever its kind
COMMON_KEYS: Mapping[str, Key] = {
    "name": Key(str, "the rule's name, in alarm ids and messages", required=True),
    "kind": Key(str, "the rule's kind", required=True),
    "channel": Key(str, "the channel it watches"),
    "channels": Key(list, "the channels it watches (\"*\" for all)"),
    "severity": Key(str, "low, medium, high or critical (default: the kind's)"),
    "actions": Key(list, "what to do when it changes state"),
    "on_delay": Key(DURATION, "how long the condition must hold before it is raised (default: the kind's)"),
    "off_delay": Key(DURATION, "how long the return must hold before it clears (default: the kind's)"),
    "latch": Key(bool, "held until an operator resets it (default: the kind's)"),
    "shelvable": Key(bool, "whether an operator may shelve it (default: the kind's)"),
    "in_service": Key(bool, "false takes it out of service", default=True),
    "description": Key(str, "what it is for, in words", default=""),
}


@dataclass(frozen=True)
class KindDefaults:
    """What a rule of one kind does when the station file leaves a setting out.

    Attributes:
        limit_key: the station file key of the limit (None: the kind has no limit).
        unit: the limit's unit as shown in messages.
        deadband: in the limit's unit (a kind may make it a fraction of the limit: ``rate``).
        on_delay_s, off_delay_s: the delays.
        latch: whether the alarm stays latched until reset.
        shelvable: whether an operator may shelve it.
        severity: low, medium, high or critical.
    """

    limit_key: str | None
    unit: str
    deadband: float
    on_delay_s: float
    off_delay_s: float
    latch: bool
    shelvable: bool
    severity: str


@dataclass(frozen=True)
class AlarmContext:
    """What an ``[[alarm]]`` table is read against: the station's channels and instruments.

    Attributes:
        channel_names: every channel of the station.
        named: the channels the table names, as written (``"*"`` included).
        watched: the channels it watches, ``"*"`` expanded.
        intervals_s: each instrument's scan interval.
        instrument_of: each channel's instrument.
    """

    channel_names: frozenset[str]
    named: tuple[str, ...]
    watched: tuple[str, ...]
    intervals_s: Mapping[str, float] = field(default_factory=dict)
    instrument_of: Mapping[str, str] = field(default_factory=dict)


@dataclass
class Signals:
    """What the engine remembers of the signals (not of the alarms), for the kinds to read.

    Attributes:
        last: each channel's newest good reading, (t s, °C).
        last_good_t: when each channel last read well.
        windows: each channel's recent good readings, as long as some kind asked (``history_s``).
        started_s: the time of the engine's first step.
        connected: each instrument's link state as given with the present step.
    """

    last: dict[str, tuple[float, float]] = field(default_factory=dict)
    last_good_t: dict[str, float] = field(default_factory=dict)
    windows: dict[str, deque[tuple[float, float]]] = field(default_factory=dict)
    started_s: float | None = None
    connected: Mapping[str, bool] = field(default_factory=dict)

    def window(self, channel: str, since_s: float) -> list[tuple[float, float]]:
        """The channel's good readings from ``since_s`` on, oldest first."""
        return [x for x in self.windows.get(channel, ()) if x[0] >= since_s]


@dataclass
class Moment:
    """One judgement of one alarm point.

    Attributes:
        t_s: the time it is judged at (a sample's stamp, a scan's, or now).
        source: the channel, the group's label or the instrument.
        active: the point's delayed condition now (for the deadband on the way back).
        memory: the point's own memory, kept by the engine for its kind (starts empty).
        sample: the sample being judged (``when = "sample"``), else None.
    """

    t_s: float
    source: str
    active: bool
    memory: dict[str, Any]
    sample: Sample | None = None


#: "cannot judge now": nothing changes
NOTHING: tuple[bool | None, float | None] = (None, None)


def good(s: Sample | None) -> bool:
    """Whether a sample carries a temperature (status ok and a finite value)."""
    return s is not None and s.status == "ok" and math.isfinite(s.temperature_c)


class AlarmRuleKind:
    """The base of every alarm rule kind: a rule above a limit, with its deadband, unless a kind says otherwise."""

    name: ClassVar[str] = ""
    defaults: ClassVar[KindDefaults]
    #: the kind's own keys (besides ``COMMON_KEYS``)
    keys: ClassVar[Mapping[str, Key]] = {}
    #: the settings its rules carry beside the common ones, with their defaults
    settings: ClassVar[Mapping[str, Any]] = {}
    scope: ClassVar[Scope] = "channel"
    when: ClassVar[When] = "sample"
    #: the station file key of the deadband (None: the kind has none)
    deadband_key: ClassVar[str | None] = None
    #: whether the limit must be positive (a magnitude: K, K/min)
    limit_positive: ClassVar[bool] = False
    #: the limit is an upper or lower bound of the temperature (drawn on trends and tables), or neither
    limit_line: ClassVar[Literal["upper", "lower"] | None] = None
    #: a rule of this kind every station gets when its file has none (its name), or None
    builtin: ClassVar[str | None] = None

    # ------------------------------------------------------------ the station file

    def read(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext) -> dict[str, Any]:
        """The kind's settings from its table (the common keys are read already); problems to ``ck``, by key."""
        p: dict[str, Any] = {}
        self.read_sources(ck, d, key, ctx, p)
        self.read_limit(ck, d, key, p)
        self.read_settings(ck, d, key, ctx, p)
        return p

    def read_sources(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        """What the rule watches: channels, unless the kind says otherwise."""
        if not ctx.named:
            ck.bad(f"{key}.channels", 'is required: the channels it watches (channels = ["*"] for all)')

    def read_limit(self, ck: Checker, d: Mapping[str, Any], key: str, p: dict[str, Any]) -> None:
        """The limit and its deadband (defaults filled in), when the kind has a limit."""
        lk, dk = self.defaults.limit_key, self.deadband_key
        if lk is None:
            return
        limit = ck.get(d, key, lk, float, required=True, check=positive if self.limit_positive else None)
        if limit is not None:
            p[lk] = limit
        if dk is None:
            return
        db = ck.get(d, key, dk, float, default=self.default_deadband(limit), check=non_negative)
        if db is not None:
            if self.limit_positive and limit is not None and db >= limit:
                ck.bad(f"{key}.{dk}", f"must be smaller than the limit ({limit:g}), got {db:g}")
            p[dk] = db

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        """The kind's other keys."""

    def default_deadband(self, limit: float | None) -> float:
        """The deadband when none is given (in the limit's unit)."""
        return self.defaults.deadband

    # ------------------------------------------------------------ the engine

    def extra_channels(self, rule: Rule) -> Iterable[str]:
        """Channels it reads besides the ones it watches (a reference channel)."""
        return ()

    def history_s(self, rule: Rule) -> float:
        """How much of its channels' recent readings it needs (``Signals.window``), in seconds."""
        return 0.0

    def test(self, rule: Rule, value: float, active: bool) -> bool:
        """The test on a value, with the deadband on the way back (``active``: the delayed condition)."""
        return value >= rule.limit - rule.deadband if active else value > rule.limit

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        """The tested condition and the quantity it computed; ``(None, None)`` when it cannot judge now."""
        raise NotImplementedError(f"{type(self).__name__} judges nothing")

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        """A one-line message of what it saw."""
        return f"{source} {value} {self.defaults.unit}"

