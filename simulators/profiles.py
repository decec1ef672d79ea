"""Set-point profiles for the simulated chamber: pure, piecewise-linear functions of time.

A profile is a list of segments, each a straight line from one set point to
the next (a ramp) or a constant (a dwell or soak). ``setpoint_c(t)`` takes
scalars or numpy arrays of seconds since the start of the profile; before the
start it gives the first value, after the end the last one, with the phase
"done". Three kinds are provided:

- ``Soak``: one temperature held for a duration (a dry-heat or
  high-temperature storage test).
- ``Cycle``: ramp-and-dwell thermal cycling between two extremes.
- ``Steps``: a custom list of (hold, target, ramp rate) steps.

A step change (no ramp) is a jump of the set point; the chamber's controller
then moves the air as fast as its heater or cooler allow.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError

__all__ = [
    "LAB_AMBIENT_C",
    "Phase",
    "Segment",
    "Profile",
    "Soak",
    "Cycle",
    "Steps",
    "Hold",
]

FloatArray = npt.NDArray[np.float64]

#: the laboratory temperature the simulations start from; 23 °C lies inside the
#: standard atmospheric conditions for measurements and tests, 15…35 °C (from
#: memory of IEC 60068-1)
LAB_AMBIENT_C = 23.0

# The chamber range the simulator accepts for a set point: wider than any
# real chamber, narrower than the RTD equation (IEC 60751: −200…850 °C).
_SETPOINT_MIN_C = -190.0
_SETPOINT_MAX_C = 600.0


@dataclass(frozen=True)
class Phase:
    """Where a profile is at one moment.

    Attributes:
        label: "ramp up", "ramp down", "dwell high", "dwell low", "dwell",
            "soak" or "done".
        cycle: 1-based cycle number for ``Cycle`` (0 before the first and for
            profiles that do not cycle); after the end, the last cycle.
        segment: 0-based index of the segment in ``Profile.segments``
            (``len(segments)`` when done).
    """

    label: str
    cycle: int
    segment: int


@dataclass(frozen=True)
class Segment:
    """One straight piece of a profile: from ``start_c`` to ``end_c`` over ``duration_s``."""

    start_s: float
    duration_s: float
    start_c: float
    end_c: float
    label: str
    cycle: int = 0

    @property
    def end_s(self) -> float:
        return self.start_s + self.duration_s


def _number(value: object, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise InputError(f"{what} must be a number, got {value!r}")
    v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{what} must be finite, got {value!r}")
    return v


def _temperature(value: object, what: str) -> float:
    t = _number(value, what)
    if not _SETPOINT_MIN_C <= t <= _SETPOINT_MAX_C:
        raise InputError(
            f"{what} {t:g} °C is outside the simulated chamber's range "
            f"{_SETPOINT_MIN_C:g}…{_SETPOINT_MAX_C:g} °C; check the unit (°C expected)"
        )
    return t


def _duration(value: object, what: str) -> float:
    d = _number(value, what)
    if d < 0:
        raise InputError(f"{what} must be ≥ 0 s, got {value!r}")
    return d


def _ramp_s(from_c: float, to_c: float, ramp_k_per_min: float | None, what: str) -> float:
    """Seconds a ramp takes at ``ramp_k_per_min``; 0 for a step (None or infinite rate)."""
    if ramp_k_per_min is None:
        return 0.0
    if isinstance(ramp_k_per_min, bool) or not isinstance(
        ramp_k_per_min, (int, float, np.integer, np.floating)
    ):
        raise InputError(f"{what} must be a rate in K/min or None for a step, got {ramp_k_per_min!r}")
    rate = float(ramp_k_per_min)
    if math.isnan(rate) or rate <= 0:
        raise InputError(
            f"{what} must be > 0 K/min (or None / inf for a step change), got {ramp_k_per_min!r}"
        )
    if math.isinf(rate):
        return 0.0
    return abs(to_c - from_c) / rate * 60.0


@dataclass(frozen=True)
class Profile:
    """A piecewise-linear set-point profile built from ``segments`` (see the module docstring)."""

    segments: tuple[Segment, ...]
    #: set point before the first segment and the value ramps start from
    start_c: float = LAB_AMBIENT_C
    _starts: FloatArray = field(init=False, repr=False, compare=False)
    _t0: FloatArray = field(init=False, repr=False, compare=False)
    _v0: FloatArray = field(init=False, repr=False, compare=False)
    _v1: FloatArray = field(init=False, repr=False, compare=False)
    _slope: FloatArray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        segs = self.segments
        # index 0 is "before the start", the last entry "done": both constant
        t0 = [-math.inf] + [s.start_s for s in segs] + [segs[-1].end_s if segs else 0.0]
        first = segs[0].start_c if segs else self.start_c
        last = segs[-1].end_c if segs else self.start_c
        v0 = [first] + [s.start_c for s in segs] + [last]
        v1 = [first] + [s.end_c for s in segs] + [last]
        slope = [0.0] + [
            (s.end_c - s.start_c) / s.duration_s if s.duration_s > 0 else 0.0 for s in segs
        ] + [0.0]
        object.__setattr__(self, "_starts", np.asarray(t0[1:], dtype=np.float64))
        object.__setattr__(self, "_t0", np.asarray(t0, dtype=np.float64))
        object.__setattr__(self, "_v0", np.asarray(v0, dtype=np.float64))
        object.__setattr__(self, "_v1", np.asarray(v1, dtype=np.float64))
        object.__setattr__(self, "_slope", np.asarray(slope, dtype=np.float64))

    @property
    def duration_s(self) -> float:
        """Total length of the profile in seconds."""
        return self.segments[-1].end_s if self.segments else 0.0

    def _index(self, t: FloatArray) -> npt.NDArray[np.intp]:
        # 0 before the start, i + 1 inside segment i, len + 1 when done; a
        # zero-length segment is skipped because the next one starts at the same time
        return np.searchsorted(self._starts, t, side="right")

    def setpoint_c(self, t_s: npt.ArrayLike) -> FloatArray:
        """Set point in °C at ``t_s`` seconds since the start (scalar or array)."""
        t = np.asarray(t_s, dtype=np.float64)
        if np.any(np.isnan(t)):
            raise InputError("profile time must not be NaN")
        i = self._index(t)
        with np.errstate(invalid="ignore"):
            # before the start (t0 = −inf) the slope is 0: keep the inf out of the product
            dt = np.where(i == 0, 0.0, t - self._t0[i])
        v = self._v0[i] + self._slope[i] * dt
        # keep a ramp's end exact: never past the segment's end value
        lo = np.minimum(self._v0[i], self._v1[i])
        hi = np.maximum(self._v0[i], self._v1[i])
        return np.asarray(np.clip(v, lo, hi), dtype=np.float64)

    def phase(self, t_s: float) -> Phase:
        """Phase label, cycle number and segment index at ``t_s`` seconds."""
        t = _number(t_s, "profile time t_s")
        i = int(self._index(np.asarray(t, dtype=np.float64)))
        n = len(self.segments)
        if i == 0:
            return Phase(self.segments[0].label if n else "done", 0, 0)
        if i > n:
            return Phase("done", self.segments[-1].cycle if n else 0, n)
        seg = self.segments[i - 1]
        return Phase(seg.label, seg.cycle, i - 1)

    def phases(self, t_s: npt.ArrayLike) -> tuple[npt.NDArray[np.str_], npt.NDArray[np.int64]]:
        """Vectorised ``phase``: (labels, cycle numbers), shaped like ``t_s``."""
        t = np.asarray(t_s, dtype=np.float64)
        i = self._index(t)
        n = len(self.segments)
        labels = np.asarray(
            [self.segments[0].label if n else "done"] + [s.label for s in self.segments] + ["done"]
        )
        cycles = np.asarray(
            [0] + [s.cycle for s in self.segments] + [self.segments[-1].cycle if n else 0],
            dtype=np.int64,
        )
        return labels[i], cycles[i]


class _Builder:
    """Appends ramps and holds one after another."""

    def __init__(self, start_c: float) -> None:
        self.t_s = 0.0
        self.value_c = start_c
        self.segments: list[Segment] = []

    def ramp(self, to_c: float, ramp_k_per_min: float | None, what: str, cycle: int) -> None:
        d = _ramp_s(self.value_c, to_c, ramp_k_per_min, what)
        if d > 0:
            label = "ramp up" if to_c > self.value_c else "ramp down"
            self.segments.append(Segment(self.t_s, d, self.value_c, to_c, label, cycle))
            self.t_s += d
        self.value_c = to_c

    def hold(self, duration_s: float, label: str, cycle: int) -> None:
        # a zero-length hold still marks the new set point (a step with no dwell)
        self.segments.append(Segment(self.t_s, duration_s, self.value_c, self.value_c, label, cycle))
        self.t_s += duration_s


def Soak(temperature_c: float, duration_s: float) -> Profile:  # noqa: N802 - reads as a type
    """Hold ``temperature_c`` for ``duration_s`` from t = 0 (the set point steps there at once).

    Raises:
        InputError: a temperature outside the simulated range or a negative duration.
    """
    t = _temperature(temperature_c, "soak temperature_c")
    d = _duration(duration_s, "soak duration_s")
    return Profile((Segment(0.0, d, t, t, "soak", 0),), start_c=t)


def Cycle(  # noqa: N802 - reads as a type
    low_c: float,
    high_c: float,
    ramp_k_per_min: float | None,
    dwell_low_s: float,
    dwell_high_s: float,
    cycles: int,
    start_c: float = LAB_AMBIENT_C,
    end_c: float | None = None,
) -> Profile:
    """Ramp-and-dwell thermal cycling between ``low_c`` and ``high_c``, ``cycles`` times.

    One cycle is: ramp up to ``high_c``, dwell high, ramp down to ``low_c``,
    dwell low; cycle 1's ramp up starts from ``start_c``. With ``end_c`` the
    set point ramps there after the last cycle (labelled cycle ``cycles``);
    otherwise it stays at ``low_c``. ``ramp_k_per_min`` None is a step change.

    Raises:
        InputError: low not below high, temperatures out of range, negative
            dwells, a rate that is not positive, or fewer than one cycle.
    """
    low = _temperature(low_c, "cycle low_c")
    high = _temperature(high_c, "cycle high_c")
    if not low < high:
        raise InputError(f"cycle low_c ({low:g} °C) must be below high_c ({high:g} °C)")
    d_low = _duration(dwell_low_s, "cycle dwell_low_s")
    d_high = _duration(dwell_high_s, "cycle dwell_high_s")
    if isinstance(cycles, bool) or not isinstance(cycles, (int, np.integer)) or cycles < 1:
        raise InputError(f"cycles must be a whole number ≥ 1, got {cycles!r}")
    start = _temperature(start_c, "cycle start_c")
    b = _Builder(start)
    for k in range(1, int(cycles) + 1):
        b.ramp(high, ramp_k_per_min, "cycle ramp_k_per_min", k)
        b.hold(d_high, "dwell high", k)
        b.ramp(low, ramp_k_per_min, "cycle ramp_k_per_min", k)
        b.hold(d_low, "dwell low", k)
    if end_c is not None:
        end = _temperature(end_c, "cycle end_c")
        n_before = len(b.segments)
        b.ramp(end, ramp_k_per_min, "cycle ramp_k_per_min", int(cycles))
        if len(b.segments) == n_before:
            # a step back: a zero-length piece carries the final set point
            b.hold(0.0, "done", int(cycles))
    return Profile(tuple(b.segments), start_c=start)


@dataclass(frozen=True)
class Hold:
    """One entry of ``Steps``: ramp to ``target_c`` at ``ramp_k_per_min``, then hold ``duration_s``."""

    duration_s: float
    target_c: float
    ramp_k_per_min: float | None = None


def Steps(  # noqa: N802 - reads as a type
    steps: Sequence[Hold | tuple[float, float, float | None] | tuple[float, float]],
    start_c: float = LAB_AMBIENT_C,
) -> Profile:
    """A custom list of steps ``(duration_s, target_c, ramp_k_per_min)``.

    Each step ramps from the previous target (``start_c`` for the first) to
    ``target_c`` at ``ramp_k_per_min`` (None or omitted: a step change), then
    holds it for ``duration_s`` — the hold follows the ramp, as a dwell
    follows a ramp in ``Cycle``. Holds are labelled "dwell"; ``Phase.cycle``
    is 0 and ``Phase.segment`` locates the step.

    Raises:
        InputError: an empty list, a malformed entry, a temperature out of
            range, a negative hold or a rate that is not positive.
    """
    if isinstance(steps, (str, bytes)) or not isinstance(steps, Sequence) or len(steps) == 0:
        raise InputError("steps must be a non-empty list of (duration_s, target_c, ramp_k_per_min)")
    start = _temperature(start_c, "steps start_c")
    b = _Builder(start)
    for n, entry in enumerate(steps, start=1):
        if isinstance(entry, Hold):
            hold = entry
        elif isinstance(entry, (tuple, list)) and len(entry) in (2, 3):
            hold = Hold(*entry)
        else:
            raise InputError(
                f"step {n} must be (duration_s, target_c) or (duration_s, target_c, "
                f"ramp_k_per_min), got {entry!r}"
            )
        target = _temperature(hold.target_c, f"step {n} target_c")
        b.ramp(target, hold.ramp_k_per_min, f"step {n} ramp_k_per_min", 0)
        b.hold(_duration(hold.duration_s, f"step {n} duration_s"), "dwell", 0)
    return Profile(tuple(b.segments), start_c=start)
