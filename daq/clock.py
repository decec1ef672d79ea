"""Time for the service: UTC stamps that never step back, and waiting that can be sped up.

Scans are scheduled on a monotonic time line and stamped in UTC derived from
it (UTC at start + monotonic time since), so a wall-clock step (NTP, a manual
change) cannot reorder readings; ``time.monotonic`` is rate-disciplined by NTP
on Linux, so the stamps stay true to UTC in rate.

``AcceleratedClock`` runs the same service against simulated chamber time, so
a 1000-hour run can be logged in minutes: it reads a simulator clock (seconds
since that simulation started) and waits 1/speed of each interval.
"""

from __future__ import annotations

import threading
import time
from typing import TYPE_CHECKING, Protocol

from soaklog.drivers.base import Clock, SystemClock

if TYPE_CHECKING:
    from soaklog.simulators.clock import SimTime

__all__ = ["ServiceClock", "SystemClock", "AcceleratedClock"]


class ServiceClock(Clock, Protocol):
    """A driver's clock that the service can also wait on (service time, not wall time when accelerated)."""

    def wait_until(self, t_s: float, stop: threading.Event) -> bool:
        """Wait until ``monotonic_s()`` reaches ``t_s``; False if ``stop`` was set first."""
        ...


class AcceleratedClock:
    """Service time taken from a simulation clock running ``speed`` times faster than real time.

    Args:
        sim: the simulation's clock (seconds since the simulation started).
        speed: simulated seconds per wall-clock second (as the simulation runs).
        epoch_utc_s: the UTC stamp of simulated second 0.
    """

    def __init__(self, sim: SimTime, *, speed: float, epoch_utc_s: float | None = None) -> None:
        if not speed > 0:
            raise ValueError(f"speed must be positive, got {speed!r}")
        self._sim = sim
        self._speed = float(speed)
        self._epoch = time.time() if epoch_utc_s is None else float(epoch_utc_s)

    def utc_s(self) -> float:
        return self._epoch + self._sim.now_s()

    def monotonic_s(self) -> float:
        return self._sim.now_s()

    def wait_until(self, t_s: float, stop: threading.Event) -> bool:
        while True:
            left = (t_s - self._sim.now_s()) / self._speed
            if left <= 0:
                return not stop.is_set()
            if stop.wait(min(left, 0.5)):
                return False
