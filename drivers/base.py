"""The one small interface every driver offers, and the raw reading it produces.

A driver turns an instrument into ``RawReading``s and nothing else: it knows
SCPI, VISA resources, serial framing, checksums and reconnecting; it knows
nothing of temperature. Instrument trouble never escapes ``read_scan`` as an
exception: it becomes a status on the readings and a line in ``health()``.
"""

from __future__ import annotations

import math
import threading
import time
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from typing import Literal, Protocol, get_args, overload

import numpy as np
import numpy.typing as npt

__all__ = [
    "Clock",
    "SystemClock",
    "Status",
    "STATUSES",
    "STATUS_INDEX",
    "RawReading",
    "RawScan",
    "Health",
    "Driver",
    "failed_scan",
]

#: every status a reading can carry; ``ok`` is the only one with a value. The one
#: definition of the statuses: the store's codes, the alarm configuration and the
#: README's list derive from it. A status's position is its code in every store
#: file ever written, so append new ones at the end and never reorder.
Status = Literal[
    "ok",  # a value
    "open",  # sensor open (overload on the lowest range, or the board's open code)
    "short",  # sensor shorted (a resistance no RTD of its R0 can have)
    "overload",  # the instrument says over range (SCPI +9.9E37)
    "out_of_range",  # a number the instrument should not have sent for this input
    "timeout",  # no answer in time
    "lost",  # no connection to the instrument (reconnecting)
    "garbage",  # an answer that does not parse
    "checksum",  # a frame whose checksum is wrong
    "error",  # the instrument reported an error for this reading
    "invalid",  # a value the metrology cannot convert honestly (set by the pipeline)
]

STATUSES: tuple[str, ...] = get_args(Status)

#: position of each status in STATUSES, for columnar scans
STATUS_INDEX: dict[str, int] = {s: i for i, s in enumerate(STATUSES)}


@dataclass(frozen=True)
class RawReading:
    """One value from one instrument input, before any metrology.

    Attributes:
        channel: the instrument's own name for the input (``"101"``, ``"2"``).
        t_utc_s: when it was taken, UTC, seconds since the epoch (from the
            clock the driver was given).
        value: the number in ``unit``; NaN unless ``status`` is ``ok``.
        unit: ``ohm`` (or ``V``, ``counts`` for boards that report those).
        status: one of ``STATUSES``.
        reason: a short human explanation when not ``ok``.
        current_a: the measuring current the instrument drove, when known
            (the pipeline corrects self-heating with it).
        wiring: 2, 3 or 4 when the instrument measured in that mode.
    """

    channel: str
    t_utc_s: float
    value: float
    unit: str = "ohm"
    status: str = "ok"
    reason: str = ""
    current_a: float | None = None
    wiring: int | None = None

    def __post_init__(self) -> None:
        if self.status not in STATUSES:
            raise ValueError(f"unknown reading status {self.status!r}; known: {', '.join(STATUSES)}")
        if self.status != "ok" and not math.isnan(self.value):
            raise ValueError(f"a reading with status {self.status!r} carries no value, got {self.value!r}")
        if self.status == "ok" and not math.isfinite(self.value):
            raise ValueError(f"an ok reading needs a finite value, got {self.value!r}")

    @property
    def ok(self) -> bool:
        return self.status == "ok"


class RawScan(Sequence[RawReading]):
    """One scan of several inputs, columnar: the fast form of ``list[RawReading]``.

    It is a sequence of ``RawReading`` (built on access) for code that wants
    records, and exposes its arrays for the pipeline, so that converting a
    scan costs numpy operations rather than one Python object per reading.

    Attributes:
        channels: input names, one per value.
        t_utc_s: the scan's time stamp (all inputs).
        values: ohms (NaN where the status is not ok).
        status: indexes into ``STATUSES``.
        reasons: one reason per input ("" when ok).
    """

    __slots__ = ("channels", "t_utc_s", "values", "status", "reasons", "unit", "current_a", "wiring")

    def __init__(
        self,
        channels: Sequence[str],
        t_utc_s: float,
        values: npt.NDArray[np.float64],
        status: npt.NDArray[np.int8],
        reasons: Sequence[str] | None = None,
        *,
        unit: str = "ohm",
        current_a: Sequence[float | None] | float | None = None,
        wiring: Sequence[int | None] | int | None = None,
        checked: bool = False,
    ) -> None:
        n = len(channels)
        if values.shape != (n,) or status.shape != (n,):
            raise ValueError(f"a scan of {n} inputs needs {n} values and {n} statuses")
        if not checked:  # a parser that has just verified every value may skip this
            ok = status == 0
            if np.any(ok & ~np.isfinite(values)) or np.any(~ok & ~np.isnan(values)):
                raise ValueError("an ok value must be finite and a value that is not ok must be NaN")
        self.channels = tuple(channels)
        self.t_utc_s = float(t_utc_s)
        self.values = values
        self.status = status
        self.reasons = tuple(reasons) if reasons is not None else ("",) * n
        self.unit = unit
        self.current_a = current_a
        self.wiring = wiring

    def __len__(self) -> int:
        return len(self.channels)

    @overload
    def __getitem__(self, i: int) -> RawReading: ...
    @overload
    def __getitem__(self, i: slice) -> list[RawReading]: ...
    def __getitem__(self, i: int | slice) -> RawReading | list[RawReading]:
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        if i < 0:
            i += len(self)
        cur = self.current_a[i] if isinstance(self.current_a, (list, tuple)) else self.current_a
        wir = self.wiring[i] if isinstance(self.wiring, (list, tuple)) else self.wiring
        return RawReading(
            self.channels[i], self.t_utc_s, float(self.values[i]), self.unit,
            STATUSES[int(self.status[i])], self.reasons[i], cur, wir,
        )

    def __iter__(self) -> Iterator[RawReading]:
        for i in range(len(self)):
            yield self[i]


@dataclass
class Health:
    """What a driver knows about its instrument's condition (mutable, owned by the driver)."""

    connected: bool = False
    identity: str = ""
    last_error: str = ""
    last_error_utc_s: float | None = None
    last_ok_utc_s: float | None = None
    reads: int = 0
    errors: int = 0
    timeouts: int = 0
    reconnects: int = 0
    bad_frames: int = 0
    next_retry_utc_s: float | None = None
    counters: dict[str, int] = field(default_factory=dict)

    def snapshot(self) -> dict[str, object]:
        """A plain dict copy, safe to hand to another thread."""
        return {
            "connected": self.connected,
            "identity": self.identity,
            "last_error": self.last_error,
            "last_error_utc_s": self.last_error_utc_s,
            "last_ok_utc_s": self.last_ok_utc_s,
            "reads": self.reads,
            "errors": self.errors,
            "timeouts": self.timeouts,
            "reconnects": self.reconnects,
            "bad_frames": self.bad_frames,
            "next_retry_utc_s": self.next_retry_utc_s,
            **dict(self.counters),
        }


class Driver(Protocol):
    """What the service needs from any instrument."""

    name: str

    def open(self) -> None:
        """Connect and configure; raises ``InstrumentError`` if that cannot be done now."""
        ...

    def close(self) -> None:
        """Release the instrument; never raises."""
        ...

    def read_scan(self) -> list[RawReading]:
        """One reading per configured channel; instrument trouble becomes statuses, never raises."""
        ...

    def health(self) -> dict[str, object]:
        """A snapshot of ``Health``."""
        ...


def failed_scan(
    channels: Sequence[str], t_utc_s: float, status: str, reason: str
) -> list[RawReading]:
    """A scan in which every channel failed the same way."""
    return [RawReading(ch, t_utc_s, math.nan, "ohm", status, reason) for ch in channels]


class Clock(Protocol):
    """What a driver needs of time: UTC for stamps, a monotonic line for its back-off."""

    def utc_s(self) -> float:
        """UTC now, seconds since the epoch, never decreasing."""
        ...

    def monotonic_s(self) -> float:
        """The scheduling time line, seconds."""
        ...


class SystemClock:
    """Real time: monotonic scheduling, UTC stamps anchored once at start (so a wall-clock step cannot reorder readings)."""

    def __init__(self) -> None:
        self._utc0 = time.time()
        self._mono0 = time.monotonic()

    def utc_s(self) -> float:
        return self._utc0 + (time.monotonic() - self._mono0)

    def monotonic_s(self) -> float:
        return time.monotonic()

    def wait_until(self, t_s: float, stop: threading.Event) -> bool:
        """Wait until ``monotonic_s()`` reaches ``t_s``; False if ``stop`` was set first."""
        while True:
            left = t_s - time.monotonic()
            if left <= 0:
                return not stop.is_set()
            if stop.wait(min(left, 1.0)):
                return False
