"""Shared values and helpers of the driver tests (imported by conftest and the test modules)."""

from __future__ import annotations

import time
from collections.abc import Callable

from soaklog.drivers.scpi_meter import Backoff

#: one conductor's resistance; the plant adds it twice in 2-wire mode
LEAD_OHM = 0.25
#: twenty distinct values in a Pt100's span, so a shifted reply cannot pass for a right one
SCAN_VALUES = {f"pt{i:02d}": 100.0 + 2.5 * i for i in range(20)}
SCAN_MAP = {101 + i: f"pt{i:02d}" for i in range(20)}
CHANNELS = tuple(str(n) for n in SCAN_MAP)
#: short timeouts and back-off keep the fault tests fast
TIMEOUT_S = 0.3
BACKOFF = Backoff(initial_s=0.05, factor=2.0, max_s=0.2)


class ManualClock:
    """A clock that moves only when told: back-off waits become one call."""

    def __init__(self, utc0_s: float = 1_800_000_000.0) -> None:
        self._utc0_s = utc0_s
        self.t_s = 0.0

    def utc_s(self) -> float:
        return self._utc0_s + self.t_s

    def monotonic_s(self) -> float:
        return self.t_s

    def advance(self, dt_s: float) -> None:
        self.t_s += dt_s


def wait_for(condition: Callable[[], bool], timeout_s: float = 3.0) -> None:
    """Poll ``condition`` until it holds; fail at the deadline."""
    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError("condition not met before the deadline")
        time.sleep(0.005)
