"""Pure records shared by the pipeline and the store: the columnar sample batch and the stored status codes.

No I/O here: the pipeline builds these without importing the store (and so
without ``sqlite3``); the store re-exports them.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.drivers.base import STATUSES
from soaklog.errors import StorageError

__all__ = ["BATCH_FIELDS", "STATUS_CODES", "SampleBatch", "status_code", "status_name"]

#: reading statuses as stored: a status's code is its position in ``drivers.base.STATUSES``
#: (0 = ok takes no space in a SQLite record)
STATUS_CODES: dict[str, int] = {name: code for code, name in enumerate(STATUSES)}


def status_code(name: str) -> int:
    try:
        return STATUS_CODES[name]
    except KeyError:
        raise StorageError(f"unknown reading status {name!r}; known: {', '.join(STATUS_CODES)}") from None


def status_name(code: int) -> str:
    """The status stored as ``code`` (``status_<code>`` for a code this soaklog does not know)."""
    c = int(code)
    return STATUSES[c] if 0 <= c < len(STATUSES) else f"status_{c}"


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
