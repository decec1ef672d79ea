"""What the run's configuration says should happen: the planned set point, phase and alarm limits.

The dashboard reads the configuration text stored with the run (``runs.config``)
and draws from it what is known: the ``[profile]`` (a soak or a ramp-and-dwell
cycle), ``[run] planned_duration``, the ``[[alarm]]`` entries that carry a
``limit_c``, and each instrument's scan interval (to tell a stale channel). The
plan is counted from the run's start; the logger does not record where the
chamber's own programme stands, so the phase shown is the planned one.
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

from soaklog.config import parse_duration
from soaklog.errors import InputError

__all__ = ["Limit", "PlannedProfile", "RunPlan", "planned_profile", "run_plan"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True)
class Limit:
    """An alarm limit to draw on a trend: one ``[[alarm]]`` entry with a ``limit_c``."""

    alarm: str
    kind: str
    limit_c: float
    channels: tuple[str, ...]
    severity: str

    def applies_to(self, channel: str) -> bool:
        return "*" in self.channels or channel in self.channels


@dataclass(frozen=True)
class PlannedProfile:
    """A piecewise-linear planned set point, counted in seconds from the run's start.

    ``kind`` "soak": ``high_c`` held for ``dwell_high_s`` (the set point steps
    there at once). ``kind`` "cycle": from ``start_c`` ramp to ``high_c``, dwell,
    ramp to ``low_c``, dwell, ``cycles`` times; after the last cycle the set point
    stays at ``low_c``. A ramp rate of None is a step change.
    """

    kind: str
    start_c: float
    low_c: float
    high_c: float
    ramp_k_per_min: float | None
    dwell_low_s: float
    dwell_high_s: float
    cycles: int
    tolerance_k: float | None = None

    def _ramp_s(self, delta_k: float) -> float:
        if self.ramp_k_per_min is None:
            return 0.0
        return abs(delta_k) / self.ramp_k_per_min * 60.0

    @property
    def first_cycle_s(self) -> float:
        return (self._ramp_s(self.high_c - self.start_c) + self.dwell_high_s
                + self._ramp_s(self.high_c - self.low_c) + self.dwell_low_s)

    @property
    def cycle_s(self) -> float:
        """Length of every cycle after the first (whose first ramp starts from ``start_c``)."""
        return 2 * self._ramp_s(self.high_c - self.low_c) + self.dwell_high_s + self.dwell_low_s

    @property
    def duration_s(self) -> float:
        if self.kind == "soak":
            return self.dwell_high_s
        return self.first_cycle_s + (self.cycles - 1) * self.cycle_s

    def _locate(self, t: FloatArray) -> tuple[FloatArray, npt.NDArray[np.int64], FloatArray]:
        """For each time: seconds into its cycle, the 1-based cycle, and the first ramp's length there."""
        first = self.first_cycle_s
        period = self.cycle_s
        t = np.clip(t, 0.0, self.duration_s)
        in_first = t < first
        if period > 0:
            k = np.where(in_first, 0.0, np.floor((t - first) / period))
            k = np.minimum(k, max(self.cycles - 2, 0))
        else:
            k = np.zeros_like(t)
        offset = np.where(in_first, t, t - first - k * period)
        cycle = np.where(in_first, 1, k + 2).astype(np.int64)
        ramp_up = np.where(in_first, self._ramp_s(self.high_c - self.start_c), self._ramp_s(self.high_c - self.low_c))
        return offset, cycle, ramp_up

    def setpoint_c(self, t_s: npt.ArrayLike) -> FloatArray:
        """The planned set point (°C) at ``t_s`` seconds since the run's start (scalar or array)."""
        t = np.asarray(t_s, dtype=np.float64)
        if self.kind == "soak":
            return np.full_like(t, self.high_c, dtype=np.float64)
        offset, cycle, up = self._locate(t)
        start = np.where(cycle == 1, self.start_c, self.low_c)
        down = self._ramp_s(self.high_c - self.low_c)
        e1 = up
        e2 = e1 + self.dwell_high_s
        e3 = e2 + down
        with np.errstate(invalid="ignore", divide="ignore"):
            frac_up = np.where(up > 0, offset / np.where(up > 0, up, 1.0), 1.0)
        rising = start + (self.high_c - start) * np.clip(frac_up, 0.0, 1.0)
        frac_down = (offset - e2) / down if down > 0 else np.ones_like(offset)
        falling = self.high_c + (self.low_c - self.high_c) * np.clip(frac_down, 0.0, 1.0)
        sp = np.where(offset < e1, rising,
                      np.where(offset < e2, self.high_c, np.where(offset < e3, falling, self.low_c)))
        # after the last cycle the set point stays low
        sp = np.where(t >= self.duration_s, self.low_c, sp)
        return np.asarray(sp, dtype=np.float64)

    def phase(self, t_s: float) -> tuple[str, int]:
        """The planned phase ("ramp up", "dwell high", "ramp down", "dwell low", "soak", "done") and cycle."""
        t = float(t_s)
        if self.kind == "soak":
            return ("done", 0) if t >= self.duration_s else ("soak", 0)
        if t >= self.duration_s:
            return "done", self.cycles
        off_a, cyc_a, up_a = self._locate(np.asarray([max(t, 0.0)], dtype=np.float64))
        offset, cycle, up = float(off_a[0]), int(cyc_a[0]), float(up_a[0])
        e1 = up
        e2 = e1 + self.dwell_high_s
        e3 = e2 + self._ramp_s(self.high_c - self.low_c)
        if offset < e1:
            start = self.start_c if cycle == 1 else self.low_c
            label = "ramp up" if self.high_c >= start else "ramp down"
        elif offset < e2:
            label = "dwell high"
        elif offset < e3:
            label = "ramp down"
        else:
            label = "dwell low"
        return label, cycle


@dataclass(frozen=True)
class RunPlan:
    """Everything the dashboard takes from a run's configuration text (all optional)."""

    planned_duration_s: float | None = None
    profile: PlannedProfile | None = None
    limits: tuple[Limit, ...] = ()
    intervals_s: Mapping[str, float] = field(default_factory=dict)
    problem: str = ""

    def limits_for(self, channel: str) -> tuple[Limit, ...]:
        return tuple(lim for lim in self.limits if lim.applies_to(channel))


def _number(d: Mapping[str, Any], key: str, default: float | None = None) -> float | None:
    v = d.get(key, default)
    if v is None:
        return None
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(float(v)):
        raise InputError(f"[profile] {key} must be a number, got {v!r}")
    return float(v)


def _seconds(d: Mapping[str, Any], key: str, default: float | None = None) -> float | None:
    if key not in d:
        return default
    return parse_duration(d[key])


def planned_profile(profile: Mapping[str, Any], *, ambient_c: float = 23.0) -> PlannedProfile | None:
    """The planned set point from a ``[profile]`` table, or None when it is absent or of an unknown kind.

    Raises:
        InputError: a known kind with a malformed value.
    """
    kind = profile.get("kind")
    if kind == "soak":
        temp = _number(profile, "temperature_c")
        if temp is None:
            temp = _number(profile, "high_c")
        dur = _seconds(profile, "duration")
        if temp is None or dur is None:
            return None
        return PlannedProfile("soak", temp, temp, temp, None, 0.0, dur, 1, _number(profile, "tolerance_k"))
    if kind == "cycle":
        low = _number(profile, "low_c")
        high = _number(profile, "high_c")
        if low is None or high is None or not low < high:
            return None
        rate = _number(profile, "ramp_k_per_min")
        if rate is not None and (rate <= 0 or math.isinf(rate)):
            rate = None
        dwell = _seconds(profile, "dwell", 0.0) or 0.0
        d_low = _seconds(profile, "dwell_low", dwell) or 0.0
        d_high = _seconds(profile, "dwell_high", dwell) or 0.0
        cycles = profile.get("cycles", 1)
        if isinstance(cycles, bool) or not isinstance(cycles, int) or cycles < 1:
            raise InputError(f"[profile] cycles must be a whole number ≥ 1, got {cycles!r}")
        start = _number(profile, "start_c", ambient_c)
        assert start is not None
        return PlannedProfile("cycle", start, low, high, rate, d_low, d_high, cycles, _number(profile, "tolerance_k"))
    return None


def run_plan(config_text: str) -> RunPlan:
    """The plan in a run's stored configuration; an empty plan (with ``problem`` set) if it cannot be read."""
    try:
        data = tomllib.loads(config_text)
    except tomllib.TOMLDecodeError as exc:
        return RunPlan(problem=f"the run's configuration is not TOML: {exc}")
    problem = ""
    planned = None
    run = data.get("run", {})
    if isinstance(run, dict) and "planned_duration" in run:
        try:
            planned = parse_duration(run["planned_duration"])
        except InputError as exc:
            problem = f"[run] planned_duration: {exc}"
    station = data.get("station", {})
    ambient = station.get("ambient_c", 23.0) if isinstance(station, dict) else 23.0
    if isinstance(ambient, bool) or not isinstance(ambient, (int, float)):
        ambient = 23.0
    prof = None
    raw_profile = data.get("profile")
    if isinstance(raw_profile, dict):
        try:
            prof = planned_profile(raw_profile, ambient_c=float(ambient))
        except InputError as exc:
            problem = problem or str(exc)
    limits: list[Limit] = []
    for a in data.get("alarm", []) if isinstance(data.get("alarm"), list) else []:
        if not isinstance(a, dict):
            continue
        lim = a.get("limit_c")
        if isinstance(lim, bool) or not isinstance(lim, (int, float)) or not math.isfinite(float(lim)):
            continue
        chans: list[str] = []
        if isinstance(a.get("channel"), str):
            chans.append(a["channel"])
        if isinstance(a.get("channels"), list):
            chans += [c for c in a["channels"] if isinstance(c, str)]
        limits.append(Limit(str(a.get("name", "")), str(a.get("kind", "")), float(lim), tuple(chans),
                            str(a.get("severity", ""))))
    intervals: dict[str, float] = {}
    for inst in data.get("instrument", []) if isinstance(data.get("instrument"), list) else []:
        if isinstance(inst, dict) and isinstance(inst.get("name"), str) and "interval" in inst:
            try:
                intervals[inst["name"]] = parse_duration(inst["interval"])
            except InputError:
                pass
    return RunPlan(planned, prof, tuple(limits), intervals, problem)
