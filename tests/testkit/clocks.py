"""Clocks for tests: one epoch for simulated runs, a hand-driven clock, and a frozen "now"."""

from __future__ import annotations

from collections.abc import Callable

#: 2027-01-15T08:00:00Z: simulated second 0 of every lab run in the tests
EPOCH_UTC_S = 1_800_000_000.0
EPOCH_MS = int(EPOCH_UTC_S * 1000)


class ManualClock:
    """A driver or service clock that moves only when told: a back-off wait becomes one call.

    ``t_s`` is the monotonic time (settable directly); UTC is ``utc0_s + t_s``.
    """

    def __init__(self, utc0_s: float = EPOCH_UTC_S, start_s: float = 0.0) -> None:
        self._utc0_s = utc0_s
        self.t_s = start_s

    def utc_s(self) -> float:
        return self._utc0_s + self.t_s

    def monotonic_s(self) -> float:
        return self.t_s

    def advance(self, dt_s: float) -> None:
        self.t_s += dt_s


def frozen_clock(now_ms: int) -> Callable[[], float]:
    """A wall clock (seconds since the epoch) stopped at ``now_ms``."""
    return lambda: now_ms / 1000.0
