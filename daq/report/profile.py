"""Test profiles a run is judged against: a soak at one temperature, or cycling between two extremes.

A profile is declared as a ``[profile]`` table in the station file (stored
with each run) or in a separate TOML file given to ``soaklog report
--profile``. The keys are the same in both places:

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
from typing import Any, Literal

from soaklog.config import parse_duration
from soaklog.errors import InputError

__all__ = ["PROFILE_KEYS", "Band", "CycleProfile", "Profile", "SoakProfile", "parse_profile", "profile_channels"]

#: the ramp-rate tolerance when only a nominal rate is given: ±20 % of it, as
#: IEC 60068-2-14 test Nb allows (1 ± 0.2, 3 ± 0.6, 5 ± 1 K/min; from memory)
DEFAULT_RAMP_TOLERANCE_FRACTION = 0.2
#: the stability finding's defaults: within ±0.5 K over 5 min (common practice,
#: no published source; set stable_band_k / stable_window for your test plan)
DEFAULT_STABLE_BAND_K = 0.5
DEFAULT_STABLE_WINDOW_S = 300.0
#: the rate of change is also averaged over 5 min, as IEC 60068-2-2 and
#: IEC 60068-2-14 average it (from memory: "over a period of not more than 5 min")
DEFAULT_RATE_WINDOW_S = 300.0

_COMMON = {
    "kind", "name", "sample_channels", "chamber_channels", "tolerance_k", "stable_band_k",
    "stable_window", "rate_window", "ramp_max_k_per_min",
}
_SOAK = _COMMON | {"temperature_c", "duration", "tolerance_below_k", "tolerance_above_k"}
_CYCLE = _COMMON | {
    "low_c", "high_c", "cycles", "dwell", "dwell_high", "dwell_low", "ramp_k_per_min",
    "ramp_tolerance_k_per_min", "transition_max", "high_tolerance_k", "low_tolerance_k",
}
PROFILE_KEYS: dict[str, frozenset[str]] = {"soak": frozenset(_SOAK), "cycle": frozenset(_CYCLE)}


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
class _Common:
    name: str
    sample_channels: tuple[str, ...] | None
    chamber_channels: tuple[str, ...] | None
    stable_band_k: float
    stable_window_s: float
    rate_window_s: float
    ramp_max_k_per_min: float | None
    where: str


@dataclass(frozen=True)
class SoakProfile(_Common):
    """Hold ``band.nominal_c``: the samples within the band for at least ``duration_s``."""

    band: Band
    duration_s: float
    kind: Literal["soak"] = "soak"

    def describe(self) -> str:
        return f"soak at {self.band.describe()} for {_fmt_s(self.duration_s)}"


@dataclass(frozen=True)
class CycleProfile(_Common):
    """Cycle between ``low`` and ``high`` ``cycles`` times, dwelling within tolerance at each."""

    low: Band
    high: Band
    cycles: int
    dwell_high_s: float
    dwell_low_s: float
    ramp_k_per_min: float | None
    ramp_tolerance_k_per_min: float | None
    transition_max_s: float | None
    kind: Literal["cycle"] = "cycle"

    @property
    def span_k(self) -> float:
        return self.high.nominal_c - self.low.nominal_c

    def describe(self) -> str:
        ramp = f", ramps {self.ramp_k_per_min:g} K/min" if self.ramp_k_per_min is not None else ""
        if self.dwell_high_s == self.dwell_low_s:
            dwell = f"dwell {_fmt_s(self.dwell_high_s)}"
        else:
            dwell = f"dwell {_fmt_s(self.dwell_high_s)} high, {_fmt_s(self.dwell_low_s)} low"
        return (f"{self.cycles} cycles between {self.low.describe()} and {self.high.describe()}, "
                f"{dwell}{ramp}")


Profile = SoakProfile | CycleProfile


def _fmt_s(s: float) -> str:
    if s >= 3600 and s % 3600 == 0:
        return f"{s / 3600:g} h"
    if s >= 60 and s % 60 == 0:
        return f"{s / 60:g} min"
    return f"{s:g} s"


class _Problems:
    def __init__(self, where: str) -> None:
        self.where = where
        self.items: list[str] = []

    def bad(self, key: str, msg: str) -> None:
        self.items.append(f"{key}: {msg}")

    def raise_if_any(self) -> None:
        if self.items:
            n = len(self.items)
            raise InputError(
                f"{n} problem{'s' if n != 1 else ''} in the profile ({self.where}): " + "; ".join(self.items)
                + ". See the report section of the README for the profile keys."
            )


def _number(p: _Problems, d: Mapping[str, Any], key: str, *, required: bool = False,
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


def _duration(p: _Problems, d: Mapping[str, Any], key: str, *, required: bool = False,
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


def _names(p: _Problems, d: Mapping[str, Any], key: str) -> tuple[str, ...] | None:
    if key not in d:
        return None
    v = d[key]
    if isinstance(v, str):
        v = [v]
    if not isinstance(v, list) or not v or not all(isinstance(x, str) and x for x in v):
        p.bad(key, f"must be a non-empty list of channel names, got {v!r}")
        return None
    return tuple(v)


def _pair(p: _Problems, d: Mapping[str, Any], key: str) -> tuple[float, float] | None:
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
            problem is listed, each by its key.
    """
    p = _Problems(where)
    if not isinstance(data, Mapping):
        raise InputError(f"the profile ({where}) must be a table of keys, got {type(data).__name__}")
    kind = data.get("kind")
    if not isinstance(kind, str) or kind not in PROFILE_KEYS:
        raise InputError(
            f"the profile ({where}) needs kind = \"soak\" or kind = \"cycle\", got {kind!r}"
        )
    allowed = PROFILE_KEYS[kind]
    for k in data:
        if k not in allowed:
            close = difflib.get_close_matches(k, sorted(allowed), n=1, cutoff=0.7)
            hint = f"did you mean {close[0]!r}?" if close else f"a {kind} profile takes {', '.join(sorted(allowed))}"
            p.bad(k, f"unknown key; {hint}")
    name = data.get("name", "")
    if not isinstance(name, str):
        p.bad("name", f"must be text, got {name!r}")
        name = ""
    common = dict(
        name=name,
        sample_channels=_names(p, data, "sample_channels"),
        chamber_channels=_names(p, data, "chamber_channels"),
        stable_band_k=_number(p, data, "stable_band_k", default=DEFAULT_STABLE_BAND_K, positive=True)
        or DEFAULT_STABLE_BAND_K,
        stable_window_s=_duration(p, data, "stable_window", default=DEFAULT_STABLE_WINDOW_S) or DEFAULT_STABLE_WINDOW_S,
        rate_window_s=_duration(p, data, "rate_window", default=DEFAULT_RATE_WINDOW_S) or DEFAULT_RATE_WINDOW_S,
        ramp_max_k_per_min=_number(p, data, "ramp_max_k_per_min", positive=True),
        where=where,
    )
    tol = _number(p, data, "tolerance_k", positive=True)
    if kind == "soak":
        t = _number(p, data, "temperature_c", required=True)
        dur = _duration(p, data, "duration", required=True)
        below = _number(p, data, "tolerance_below_k", minimum=0.0)
        above = _number(p, data, "tolerance_above_k", minimum=0.0)
        below = tol if below is None else below
        above = tol if above is None else above
        if below is None or above is None:
            p.bad("tolerance_k", "is required (or both tolerance_below_k and tolerance_above_k)")
        p.raise_if_any()
        assert t is not None and dur is not None and below is not None and above is not None
        return SoakProfile(band=Band(t, below, above), duration_s=dur, **common)  # type: ignore[arg-type]

    low = _number(p, data, "low_c", required=True)
    high = _number(p, data, "high_c", required=True)
    cycles = data.get("cycles")
    if cycles is None:
        p.bad("cycles", "is required (the number of cycles planned)")
    elif isinstance(cycles, bool) or not isinstance(cycles, int) or cycles < 1:
        p.bad("cycles", f"must be a whole number ≥ 1, got {cycles!r}")
        cycles = None
    dwell = _duration(p, data, "dwell", allow_zero=True)
    dwell_high = _duration(p, data, "dwell_high", default=dwell, allow_zero=True)
    dwell_low = _duration(p, data, "dwell_low", default=dwell, allow_zero=True)
    if dwell_high is None or dwell_low is None:
        p.bad("dwell", "is required (or both dwell_high and dwell_low)")
    ramp = _number(p, data, "ramp_k_per_min", positive=True)
    ramp_tol = _number(p, data, "ramp_tolerance_k_per_min", minimum=0.0)
    if ramp_tol is not None and ramp is None:
        p.bad("ramp_tolerance_k_per_min", "needs ramp_k_per_min, the nominal rate it is a tolerance of")
    if ramp is not None and ramp_tol is None:
        ramp_tol = DEFAULT_RAMP_TOLERANCE_FRACTION * ramp
    transition = _duration(p, data, "transition_max")
    hi_pair = _pair(p, data, "high_tolerance_k")
    lo_pair = _pair(p, data, "low_tolerance_k")
    if tol is None and (hi_pair is None or lo_pair is None):
        p.bad("tolerance_k", "is required (or both high_tolerance_k and low_tolerance_k)")
    if low is not None and high is not None and not low < high:
        p.bad("low_c", f"must be below high_c ({high:g} °C), got {low:g} °C")
    p.raise_if_any()
    assert low is not None and high is not None and isinstance(cycles, int)
    assert dwell_high is not None and dwell_low is not None
    hb = hi_pair if hi_pair is not None else (tol, tol)
    lb = lo_pair if lo_pair is not None else (tol, tol)
    high_band = Band(high, float(hb[0]), float(hb[1]))  # type: ignore[arg-type]
    low_band = Band(low, float(lb[0]), float(lb[1]))  # type: ignore[arg-type]
    if high_band.lo_c <= low_band.hi_c:
        raise InputError(
            f"the profile ({where}): the high band {high_band.describe()} overlaps the low band "
            f"{low_band.describe()}; narrow the tolerances"
        )
    return CycleProfile(
        low=low_band, high=high_band, cycles=cycles, dwell_high_s=dwell_high, dwell_low_s=dwell_low,
        ramp_k_per_min=ramp, ramp_tolerance_k_per_min=ramp_tol, transition_max_s=transition,
        **common,  # type: ignore[arg-type]
    )


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
