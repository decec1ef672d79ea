"""Simulated time for the chamber world: an accelerated wall clock, and a hand-driven one for tests.

Pure modules (profiles, the chamber model, the sensors) take time as an
argument; a clock only tells the world what time it is. Both clocks count
simulated seconds from the start of the run and are safe to read from several
threads at once (instrument servers each ask from their own thread).
"""

from __future__ import annotations

import math
import threading
import time
from collections.abc import Callable
from typing import Protocol

from soaklog.errors import InputError

__all__ = ["SimTime", "SimClock", "ManualClock"]


def _check_speed(speed: float) -> float:
    if isinstance(speed, bool) or not isinstance(speed, (int, float)) or not (
        math.isfinite(speed) and speed > 0
    ):
        raise InputError(
            f"clock speed must be a finite number > 0 (1 = real time, 60 = a minute per second), "
            f"got {speed!r}"
        )
    return float(speed)


def _check_seconds(value: float, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InputError(f"{what} must be a finite number of seconds, got {value!r}")
    return float(value)


class SimTime(Protocol):
    """Anything that tells simulated seconds since the start of the run."""

    def now_s(self) -> float:
        """Simulated seconds since the start (never decreasing)."""
        ...


class SimClock:
    """Simulated seconds = speed × (monotonic time since start) + manual offset.

    ``speed`` 3600 runs an hour of chamber time per second of wall time.
    ``advance`` jumps ahead by hand (a test or a user skipping a dwell);
    ``set_speed`` changes the rate from now on without a jump in time.

    Args:
        speed: simulated seconds per wall-clock second.
        start_s: simulated time at construction.
        monotonic: the wall-clock source (``time.monotonic``); replaceable so
            that the clock itself can be tested without waiting.
    """

    def __init__(
        self,
        speed: float = 1.0,
        *,
        start_s: float = 0.0,
        monotonic: Callable[[], float] = time.monotonic,
    ) -> None:
        self._speed = _check_speed(speed)
        self._monotonic = monotonic
        self._lock = threading.Lock()
        # simulated time at the anchor, and the wall-clock reading of the anchor
        self._anchor_sim_s = _check_seconds(start_s, "start_s")
        self._anchor_wall_s = monotonic()

    @property
    def speed(self) -> float:
        with self._lock:
            return self._speed

    def now_s(self) -> float:
        """Simulated seconds since the start."""
        with self._lock:
            return self._anchor_sim_s + self._speed * (self._monotonic() - self._anchor_wall_s)

    def advance(self, dt_s: float) -> float:
        """Jump ahead by ``dt_s`` simulated seconds; returns the new time.

        Raises:
            InputError: a negative or non-finite step (time never runs back).
        """
        dt = _check_seconds(dt_s, "dt_s")
        if dt < 0:
            raise InputError(f"the clock only runs forward; dt_s must be ≥ 0, got {dt_s!r}")
        with self._lock:
            self._anchor_sim_s += dt
            return self._anchor_sim_s + self._speed * (self._monotonic() - self._anchor_wall_s)

    def set_speed(self, speed: float) -> None:
        """Run at ``speed`` from now on; the simulated time does not jump."""
        new = _check_speed(speed)
        with self._lock:
            wall = self._monotonic()
            self._anchor_sim_s += self._speed * (wall - self._anchor_wall_s)
            self._anchor_wall_s = wall
            self._speed = new


class ManualClock:
    """A clock that moves only when told: tests run 1000 hours without sleeping."""

    def __init__(self, start_s: float = 0.0) -> None:
        self._t_s = _check_seconds(start_s, "start_s")
        self._lock = threading.Lock()

    def now_s(self) -> float:
        with self._lock:
            return self._t_s

    def advance(self, dt_s: float) -> float:
        """Move ahead by ``dt_s`` seconds; returns the new time.

        Raises:
            InputError: a negative or non-finite step.
        """
        dt = _check_seconds(dt_s, "dt_s")
        if dt < 0:
            raise InputError(f"the clock only runs forward; dt_s must be ≥ 0, got {dt_s!r}")
        with self._lock:
            self._t_s += dt
            return self._t_s

    def set(self, t_s: float) -> None:
        """Move to ``t_s`` seconds (not earlier than now).

        Raises:
            InputError: a time before the present or not finite.
        """
        t = _check_seconds(t_s, "t_s")
        with self._lock:
            if t < self._t_s:
                raise InputError(
                    f"the clock only runs forward; it is at {self._t_s:g} s, asked for {t_s!r} s"
                )
            self._t_s = t
