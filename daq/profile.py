"""Test profiles a run is judged against — the one parser of ``[profile]`` (pure).

A profile is declared as a ``[profile]`` table in the station file (stored
with each run, validated by ``soaklog check``) or in a separate TOML file
given to ``soaklog report --profile``; the dashboard draws the plan from the
same parsed object. Each kind is a module of ``soaklog.kinds.profiles``
(``soak``, ``cycle``) that reads its own keys; this module reads the common
ones and keeps the shared pieces (``Band``, the problems collector). The keys
of the built-in kinds:

common
    ``kind`` ("soak" or "cycle"), ``name`` (free text), ``sample_channels``
    (the channels that carry the specimens; default all), ``chamber_channels``
    (the points used for chamber performance; default all), ``tolerance_k``,
    ``stable_band_k`` and ``stable_window`` (the stability finding),
    ``rate_window`` and ``ramp_max_k_per_min`` (a limit on the rate of change
    averaged over ``rate_window``).
soak
    ``temperature_c``, ``duration`` (the time the samples must spend within
    tolerance), ``tolerance_k`` or ``tolerance_below_k`` / ``tolerance_above_k``.
cycle
    ``low_c``, ``high_c``, ``cycles``, ``dwell`` (or ``dwell_high`` and
    ``dwell_low``: the time the samples must spend within tolerance at each
    extreme), ``ramp_k_per_min`` with ``ramp_tolerance_k_per_min`` (the
    10 %…90 % ramp rate and how far it may stray), ``transition_max`` (the
    longest time from leaving one extreme's band to entering the other's),
    ``tolerance_k`` or ``high_tolerance_k = [below, above]`` and
    ``low_tolerance_k = [below, above]``.

That covers, for example, JEDEC JESD22-A104 temperature cycling (condition G
is −40/+125 °C with the extremes allowed to overshoot by up to 10 K and not to
fall short: ``high_tolerance_k = [0, 10]``, ``low_tolerance_k = [10, 0]``; its
soak modes are the dwell), IEC 60068-2-14 test Nb (a specified rate of change
with a tolerance) and test Na (``transition_max``), and IEC 60068-2-2 dry heat
(a soak with ±2 K and a gradual change of at most 1 K/min averaged over
5 min). The figures in this paragraph are from memory of those standards;
check them against your copy.

Pure: no I/O. Problems raise ``InputError`` naming the key.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.kinds import PROFILES
from soaklog.kinds.keys import parse_duration

__all__ = [
    "COMMON_KEYS", "Band", "ProfileBase", "Profile", "ProfileProblems", "parse_profile", "read_profile",
    "profile_channels", "planned_setpoint", "PlannedProfile",
]

#: the stability finding's defaults: within ±0.5 K over 5 min (common practice,
#: no published source; set stable_band_k / stable_window for your test plan)
DEFAULT_STABLE_BAND_K = 0.5
DEFAULT_STABLE_WINDOW_S = 300.0
#: the rate of change is also averaged over 5 min, as IEC 60068-2-2 and
#: IEC 60068-2-14 average it (from memory: "over a period of not more than 5 min")
DEFAULT_RATE_WINDOW_S = 300.0

#: keys every profile kind takes
COMMON_KEYS = frozenset({
    "kind", "name", "sample_channels", "chamber_channels", "tolerance_k", "stable_band_k",
    "stable_window", "rate_window", "ramp_max_k_per_min",
})


@dataclass(frozen=True)
class Band:
    """The range allowed around a nominal temperature: ``nominal − below_k`` … ``nominal + above_k``."""

    nominal_c: float
    below_k: float
    above_k: float

    @property
    def lo_c(self) -> float:
        return self.nominal_c - self.below_k

    @property
    def hi_c(self) -> float:
        return self.nominal_c + self.above_k

    def describe(self) -> str:
        if self.below_k == self.above_k:
            return f"{self.nominal_c:g} °C ± {self.below_k:g} K"
        return f"{self.nominal_c:g} °C (−{self.below_k:g} / +{self.above_k:g} K)"


@dataclass(frozen=True)
class ProfileBase:
    """What every profile has; a kind's profile adds its own fields, ``kind`` and ``describe()``."""

    name: str
    sample_channels: tuple[str, ...] | None
    chamber_channels: tuple[str, ...] | None
    stable_band_k: float
    stable_window_s: float
    rate_window_s: float
    ramp_max_k_per_min: float | None
    where: str

    # each kind's dataclass adds ``kind``, its registered name, as its last field

    @property
    def setpoints_c(self) -> tuple[float, ...]:
        """The temperatures the plan holds (where a channel's uncertainty is worth quoting)."""
        return ()

    def describe(self) -> str:
        return str(getattr(self, "kind", "profile"))


#: a parsed profile of any registered kind (``SoakProfile``, ``CycleProfile``, …)
Profile = ProfileBase


def fmt_s(s: float) -> str:
    if s >= 3600 and s % 3600 == 0:
        return f"{s / 3600:g} h"
    if s >= 60 and s % 60 == 0:
        return f"{s / 60:g} min"
    return f"{s:g} s"


class ProfileProblems(InputError):
    """Every problem of one profile table; ``problems`` are (key, message) pairs."""

    def __init__(self, where: str, problems: list[tuple[str, str]]) -> None:
        self.where = where
        self.problems = problems
        n = len(problems)
        super().__init__(
            f"{n} problem{'s' if n != 1 else ''} in the profile ({where}): "
            + "; ".join(f"{k}: {m}" if k else m for k, m in problems)
            + ". See the report section of the README for the profile keys."
        )


class _Problems:
    def __init__(self, where: str) -> None:
        self.where = where
        self.items: list[tuple[str, str]] = []

    def bad(self, key: str, msg: str) -> None:
        self.items.append((key, msg))

    def raise_if_any(self) -> None:
        if self.items:
            raise ProfileProblems(self.where, self.items)


def number(p: _Problems, d: Mapping[str, Any], key: str, *, required: bool = False,
            default: float | None = None, minimum: float | None = None, positive: bool = False) -> float | None:
    if key not in d:
        if required:
            p.bad(key, "is required")
        return default
    v = d[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(float(v)):
        p.bad(key, f"must be a finite number, got {v!r}")
        return default
    v = float(v)
    if positive and v <= 0:
        p.bad(key, f"must be positive, got {v:g}")
        return default
    if minimum is not None and v < minimum:
        p.bad(key, f"must be at least {minimum:g}, got {v:g}")
        return default
    return v


def duration(p: _Problems, d: Mapping[str, Any], key: str, *, required: bool = False,
              default: float | None = None, allow_zero: bool = False) -> float | None:
    if key not in d:
        if required:
            p.bad(key, "is required (a duration with a unit, like \"15min\")")
        return default
    try:
        s = parse_duration(d[key])
    except InputError as exc:
        p.bad(key, str(exc))
        return default
    if s < 0 or (s == 0 and not allow_zero):
        p.bad(key, f"must be longer than 0 s, got {d[key]!r}")
        return default
    return s


def names(p: _Problems, d: Mapping[str, Any], key: str) -> tuple[str, ...] | None:
    if key not in d:
        return None
    v = d[key]
    if isinstance(v, str):
        v = [v]
    if not isinstance(v, list) or not v or not all(isinstance(x, str) and x for x in v):
        p.bad(key, f"must be a non-empty list of channel names, got {v!r}")
        return None
    return tuple(v)


def pair(p: _Problems, d: Mapping[str, Any], key: str) -> tuple[float, float] | None:
    if key not in d:
        return None
    v = d[key]
    ok = (isinstance(v, list) and len(v) == 2
          and all(not isinstance(x, bool) and isinstance(x, (int, float)) and math.isfinite(float(x)) and x >= 0
                  for x in v))
    if not ok:
        p.bad(key, f"must be [below, above] in kelvin, two numbers ≥ 0 (like [0, 10]), got {v!r}")
        return None
    return float(v[0]), float(v[1])


def parse_profile(data: Mapping[str, Any], *, where: str = "profile") -> Profile:
    """A profile from a ``[profile]`` table (already parsed TOML).

    Args:
        data: the table's keys and values.
        where: names the source in messages (a file, or "run 3 configuration").

    Raises:
        InputError: an unknown kind or key, a missing or malformed value; every
            problem is listed, each by its key (``ProfileProblems``).
    """
    if not isinstance(data, Mapping):
        raise InputError(f"the profile ({where}) must be a table of keys, got {type(data).__name__}")
    kind_name = data.get("kind")
    kind = PROFILES.get(kind_name) if isinstance(kind_name, str) else None
    if kind is None:
        raise InputError(
            f"the profile ({where}) needs kind = {' or '.join(repr(n) for n in PROFILES.names())}, got {kind_name!r}"
        )
    profile, problems = read_profile(data, where=where)
    if problems or profile is None:
        raise ProfileProblems(where, problems)
    return profile


def read_profile(data: Mapping[str, Any], *, where: str = "profile") -> tuple[Profile | None, list[tuple[str, str]]]:
    """A profile and every problem found, each as (key, message): the station file's walker reports them by key."""
    p = _Problems(where)
    if not isinstance(data, Mapping):
        return None, [("", f"must be a table of keys, got {type(data).__name__}")]
    kind_name = data.get("kind")
    kind = PROFILES.get(kind_name) if isinstance(kind_name, str) else None
    if kind is None:
        known = ", ".join(PROFILES.names())
        return None, [("kind", "is required: " + known if "kind" not in data else f"must be one of {known}, got {kind_name!r}")]
    allowed = COMMON_KEYS | kind.keys
    for k in data:
        if k not in allowed:
            close = difflib.get_close_matches(k, sorted(allowed), n=1, cutoff=0.7)
            hint = f"did you mean {close[0]!r}?" if close else f"a {kind_name} profile takes {', '.join(sorted(allowed))}"
            p.bad(k, f"unknown key; {hint}")
    name = data.get("name", "")
    if not isinstance(name, str):
        p.bad("name", f"must be text, got {name!r}")
        name = ""
    common = dict(
        name=name,
        sample_channels=names(p, data, "sample_channels"),
        chamber_channels=names(p, data, "chamber_channels"),
        stable_band_k=number(p, data, "stable_band_k", default=DEFAULT_STABLE_BAND_K, positive=True)
        or DEFAULT_STABLE_BAND_K,
        stable_window_s=duration(p, data, "stable_window", default=DEFAULT_STABLE_WINDOW_S) or DEFAULT_STABLE_WINDOW_S,
        rate_window_s=duration(p, data, "rate_window", default=DEFAULT_RATE_WINDOW_S) or DEFAULT_RATE_WINDOW_S,
        ramp_max_k_per_min=number(p, data, "ramp_max_k_per_min", positive=True),
        where=where,
    )
    tol = number(p, data, "tolerance_k", positive=True)
    try:
        profile = kind.read(p, data, common, tol)
    except InputError as exc:  # a problem that needs the values read so far (overlapping bands)
        p.bad("", str(exc))
        profile = None
    if p.items:
        return None, p.items
    return profile, []


def profile_channels(profile: Profile, available: Sequence[str]) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The sample and chamber channels a profile names, checked against the run's channels.

    Raises:
        InputError: a named channel the run does not have.
    """
    names = tuple(available)
    out = []
    for key, chosen in (("sample_channels", profile.sample_channels), ("chamber_channels", profile.chamber_channels)):
        if chosen is None:
            out.append(names)
            continue
        missing = [c for c in chosen if c not in names]
        if missing:
            raise InputError(
                f"the profile ({profile.where}) {key} names {', '.join(repr(m) for m in missing)}, "
                f"which the run does not have; its channels are {', '.join(names)}"
            )
        out.append(tuple(chosen))
    return out[0], out[1]


FloatArray = npt.NDArray[np.float64]


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


def planned_setpoint(profile: Profile, *, ambient_c: float = 23.0) -> PlannedProfile:
    """The planned set point over the run, from the profile's kind (the chamber starts at ``ambient_c``)."""
    return PROFILES[profile.kind].planned(profile, ambient_c=ambient_c)
