"""Records the store takes and gives."""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

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


@dataclass(frozen=True)
class SampleBatch:
    """Readings to store, columnar; every array has one entry per reading.

    ``temp_c`` and ``u_c`` are NaN where the reading has no temperature.
    ``u_c`` is the expanded uncertainty (k = 2).
    """

    ch: npt.NDArray[np.int64]
    t_ms: npt.NDArray[np.int64]
    raw: npt.NDArray[np.float64]
    temp_c: npt.NDArray[np.float64]
    u_c: npt.NDArray[np.float64]
    status: npt.NDArray[np.int64]
    flags: npt.NDArray[np.int64]

    def __len__(self) -> int:
        return int(self.ch.shape[0])

    @staticmethod
    def concat(batches: Sequence[SampleBatch]) -> SampleBatch:
        return SampleBatch(
            *(np.concatenate([getattr(b, f) for b in batches]) for f in BATCH_FIELDS)
        )


BATCH_FIELDS = ("ch", "t_ms", "raw", "temp_c", "u_c", "status", "flags")


def config_digest(config_text: str) -> str:
    return hashlib.sha256(config_text.encode("utf-8")).hexdigest()
