"""The records the store takes and gives: one frozen row type per kind of row.

Times are UTC milliseconds since the Unix epoch (``t_ms``); the ISO 8601
forms the public views show are properties (``t_utc``). A row the store
gives back is a snapshot: nothing in it reads the file again.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

from soaklog.records import BATCH_FIELDS, SampleBatch
from soaklog.store.schema import iso_utc

__all__ = [
    "BATCH_FIELDS",
    "AlarmRow",
    "ChannelInfo",
    "ChannelSummary",
    "EventRow",
    "InstrumentRow",
    "LatestRow",
    "OperatorAction",
    "ReadingChunk",
    "RawWindow",
    "RunInfo",
    "RunRow",
    "SampleBatch",
    "Trend",
    "config_digest",
]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True)
class RunInfo:
    """The run a service writes into, and how it got it."""

    run_id: int
    continued: bool
    last_t_ms: int | None
    config_sha256: str


@dataclass(frozen=True)
class RunRow:
    """One row of the public ``runs`` table: the configuration text in force and when the run went."""

    id: int
    started_utc: str
    ended_utc: str | None
    config: str
    config_sha256: str
    station: str
    name: str
    software: str
    config_path: str


@dataclass(frozen=True)
class ChannelInfo:
    """A channel of a run, with the id its readings are stored under."""

    id: int
    run_id: int
    name: str
    label: str
    instrument: str
    raw_unit: str


@dataclass(frozen=True)
class LatestRow:
    """A channel of a run with its newest reading and its newest good one (``no_data`` before any)."""

    ch: int  # the channel's id
    channel: str  # its name
    label: str
    instrument: str
    raw_unit: str
    t_ms: int | None
    raw: float | None
    temperature_c: float | None
    uncertainty_c: float | None  # expanded, k = 2
    status: str
    flags: int
    last_ok_ms: int | None
    last_ok_temperature_c: float | None
    min_c: float | None  # lowest and highest temperature since the run started
    max_c: float | None

    @property
    def t_utc(self) -> str | None:
        return iso_utc(self.t_ms)


@dataclass(frozen=True)
class EventRow:
    """One event: what the service records, and what a reader gets back.

    To record one, give the time, kind, message and optionally severity,
    channel id and data; ``id`` and ``channel`` (the channel's name) are
    filled in when the store reads it back.
    """

    t_ms: int
    kind: str
    message: str
    severity: str = "info"
    ch: int | None = None
    data: Mapping[str, Any] | None = None
    id: int = 0
    channel: str | None = None

    @property
    def t_utc(self) -> str | None:
        return iso_utc(self.t_ms)


@dataclass(frozen=True)
class AlarmRow:
    """One alarm point's state: what the service saves and restores, and what viewers read.

    ``channel`` (the channel's name) is filled in when the store reads it back.
    """

    id: str
    rule: str
    kind: str
    source: str
    ch: int | None
    state: str
    severity: str
    condition: bool
    acked: bool
    since_ms: int | None
    shelved_until_ms: int | None
    value: float | None
    message: str
    channel: str | None = None

    @property
    def since_utc(self) -> str | None:
        return iso_utc(self.since_ms)

    @property
    def shelved_until_utc(self) -> str | None:
        return iso_utc(self.shelved_until_ms)

    def as_json(self) -> dict[str, Any]:
        """The public form (``status --json``, the report's JSON): id, rule, channel, state, severity, message, …"""
        return {
            "id": self.id, "rule": self.rule, "channel": self.channel, "source": self.source, "kind": self.kind,
            "state": self.state, "severity": self.severity, "message": self.message, "since_utc": self.since_utc,
            "acked": self.acked, "shelved_until_utc": self.shelved_until_utc, "condition": self.condition,
            "value": self.value,
        }


@dataclass(frozen=True)
class InstrumentRow:
    """An instrument's connection and health as the service last recorded them."""

    name: str
    updated_ms: int
    connected: bool
    identity: str
    health: Mapping[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class OperatorAction:
    """An operator's request (acknowledge, shelve, unshelve, note) and what the service made of it."""

    id: int
    t_ms: int
    kind: str
    target: str
    note: str
    actor: str
    until_ms: int | None
    applied_ms: int | None = None
    outcome: str | None = None


@dataclass(frozen=True)
class ChannelSummary:
    """One channel over a whole run, from the writer's running totals."""

    channel: str
    readings: int
    without_temperature: int
    min_c: float | None
    max_c: float | None
    mean_c: float | None
    max_u_c: float | None


@dataclass(frozen=True)
class RawWindow:
    """One channel's readings in a time window: time (ms), temperature (°C, NaN if none), U (K, k = 2)."""

    t_ms: npt.NDArray[np.int64]
    temperature_c: FloatArray
    uncertainty_c: FloatArray


@dataclass(frozen=True)
class Trend:
    """A channel's trend over a window: bucket times (ms) with mean, min and max (°C).

    ``source`` is ``raw`` (each reading is a bucket) or ``rollup`` (minute rollups).
    """

    source: str
    t_ms: npt.NDArray[np.int64]
    mean_c: FloatArray
    min_c: FloatArray
    max_c: FloatArray


@dataclass(frozen=True)
class ReadingChunk:
    """A run's readings in time order, columnar (one entry per reading in each column)."""

    t_ms: list[int]
    channel: list[str]
    raw: list[float | None]
    raw_unit: list[str]
    temperature_c: list[float | None]
    uncertainty_c: list[float | None]
    status: list[str]
    #: each reading's flag names, as ``convert --json`` gives them (``[]`` when none)
    flags: list[list[str]]

    def __len__(self) -> int:
        return len(self.t_ms)


def config_digest(config_text: str) -> str:
    return hashlib.sha256(config_text.encode("utf-8")).hexdigest()
