"""Records the store takes and gives."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass

from soaklog.records import BATCH_FIELDS, SampleBatch

__all__ = ["RunInfo", "ChannelInfo", "SampleBatch", "config_digest", "BATCH_FIELDS"]



@dataclass(frozen=True)
class RunInfo:
    """The run a service writes into, and how it got it."""

    run_id: int
    continued: bool
    last_t_ms: int | None
    config_sha256: str


@dataclass(frozen=True)
class ChannelInfo:
    id: int
    run_id: int
    name: str
    label: str
    instrument: str
    raw_unit: str


def config_digest(config_text: str) -> str:
    return hashlib.sha256(config_text.encode("utf-8")).hexdigest()
