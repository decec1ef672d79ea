"""The records the dashboard's reader hands to its widgets (data, never connections)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal

import numpy as np
import numpy.typing as npt

from soaklog.dashboard.plan import RunPlan

if TYPE_CHECKING:
    from soaklog.store import AlarmRow as StoredAlarm

__all__ = [
    "ALARM_STATE_ORDER",
    "NEEDS_ACK",
    "SEVERITY_ORDER",
    "WINDOWS",
    "WINDOW_S",
    "WINDOW_TITLE",
    "ActionRow",
    "AlarmRow",
    "ChannelRow",
    "EventRow",
    "InstrumentRow",
    "RunView",
    "Snapshot",
    "TrendRequest",
    "TrendSeries",
    "WindowName",
    "order_alarms",
]

WindowName = Literal["10min", "1h", "24h", "run"]
WINDOWS: tuple[WindowName, ...] = ("10min", "1h", "24h", "run")
WINDOW_S: dict[WindowName, float | None] = {"10min": 600.0, "1h": 3600.0, "24h": 86400.0, "run": None}
WINDOW_TITLE: dict[WindowName, str] = {"10min": "last 10 min", "1h": "last hour", "24h": "last 24 h", "run": "whole run"}

#: how the alarm list is ordered: what needs the operator first (ANSI/ISA-18.2 state names)
ALARM_STATE_ORDER: dict[str, int] = {
    "unacknowledged": 0, "returned_unacknowledged": 1, "latched": 2, "acknowledged": 3,
    "shelved": 4, "out_of_service": 5, "normal": 6,
}
SEVERITY_ORDER: dict[str, int] = {"critical": 0, "high": 1, "medium": 2, "low": 3}
NEEDS_ACK = frozenset({"unacknowledged", "returned_unacknowledged", "latched"})


@dataclass(frozen=True)
class RunView:
    """The run being shown: its row in ``runs`` and the plan in its configuration."""

    run_id: int
    station: str
    name: str
    started_ms: int | None
    ended_ms: int | None
    database: str
    plan: RunPlan = field(default_factory=RunPlan)


@dataclass(frozen=True)
class ChannelRow:
    name: str
    label: str
    instrument: str
    temperature_c: float | None
    uncertainty_c: float | None
    status: str
    t_ms: int | None
    last_ok_ms: int | None
    min_c: float | None
    max_c: float | None
    rate_k_per_min: float | None
    raw: float | None = None
    raw_unit: str = ""
    ch: int = 0


@dataclass(frozen=True)
class InstrumentRow:
    name: str
    connected: bool
    identity: str
    updated_ms: int | None
    last_ok_ms: int | None
    reads: int | None
    errors: int | None
    timeouts: int | None
    reconnects: int | None
    bad_frames: int | None
    last_error: str
    last_error_ms: int | None


@dataclass(frozen=True)
class AlarmRow:
    id: str
    rule: str
    channel: str
    state: str
    severity: str
    message: str
    since_utc: str
    acked: bool
    shelved_until_utc: str

    @property
    def needs_ack(self) -> bool:
        return self.state in NEEDS_ACK

    @property
    def active(self) -> bool:
        return self.state != "normal"

    @classmethod
    def from_store(cls, a: StoredAlarm) -> AlarmRow:
        return cls(
            id=a.id, rule=a.rule or "", channel=a.channel or "", state=a.state or "", severity=a.severity or "",
            message=a.message or "", since_utc=a.since_utc or "", acked=a.acked,
            shelved_until_utc=a.shelved_until_utc or "",
        )


def order_alarms(rows: list[AlarmRow]) -> list[AlarmRow]:
    """What needs the operator first: by state, then severity, then newest first."""
    newest_first = sorted(rows, key=lambda a: a.since_utc, reverse=True)  # ISO 8601 stamps sort as text
    return sorted(newest_first, key=lambda a: (ALARM_STATE_ORDER.get(a.state, 9), SEVERITY_ORDER.get(a.severity, 9)))


@dataclass(frozen=True)
class EventRow:
    id: int
    t_ms: int
    kind: str
    channel: str
    severity: str
    message: str


@dataclass(frozen=True)
class ActionRow:
    """An operator request and what the logger did with it (``applied_ms`` None: not yet)."""

    id: int
    t_ms: int
    kind: str
    target: str
    note: str
    actor: str
    until_ms: int | None
    applied_ms: int | None
    outcome: str | None


@dataclass(frozen=True)
class TrendRequest:
    """What a view wants plotted: channels (by name) over a window."""

    channels: tuple[str, ...]
    window: WindowName


@dataclass(frozen=True, eq=False)
class TrendSeries:
    """One channel's trend over a window: bucket times and mean/min/max (°C, NaN where none)."""

    channel: str
    label: str
    t_ms: npt.NDArray[np.int64]
    mean_c: npt.NDArray[np.float64]
    min_c: npt.NDArray[np.float64]
    max_c: npt.NDArray[np.float64]
    source: str


@dataclass(frozen=True, eq=False)
class Snapshot:
    """What one refresh read.

    ``events`` and ``actions`` hold only what is new (or changed) since the
    previous snapshot; everything else is the whole current picture.
    ``now_ms`` is the reference time for ages and windows: the clock, or the
    newest reading when the file's clock runs ahead (an accelerated demo), or
    the run's end when it has ended. ``reset`` is True on the first snapshot
    and when a new run is shown: views drop what they accumulated.
    """

    seq: int
    now_ms: int
    run: RunView
    live: bool
    channels: tuple[ChannelRow, ...]
    instruments: tuple[InstrumentRow, ...]
    alarms: tuple[AlarmRow, ...]
    events: tuple[EventRow, ...]
    actions: tuple[ActionRow, ...]
    trend_request: TrendRequest | None = None
    trends: tuple[TrendSeries, ...] = ()
    trend_from_ms: int | None = None
    trend_to_ms: int | None = None
    reset: bool = False
    problem: str = ""
