"""Profile conformance from the data: cycles, dwells and ramps detected and measured, deviations listed.

Definitions (what the report calls what):

- *Reference*: at each bucket, the mean of the sample channels' bucket means.
  Cycles are found on it; every measurement is also made per sample channel.
- *Cycle detection*: a hysteresis on the reference at 10 % and 90 % of the
  span between the two extremes. The reference is on the high side from the
  moment it reaches the 90 % level until it falls to the 10 % level, and on the
  low side the other way round. Cycle *k* is the *k*-th stay on the high side
  and the low-side stay after it. The 10 %/90 % points are where JEDEC
  JESD22-A104 measures a ramp (from memory of its definition of ramp rate on
  "the linear portion of the profile"), and they keep noise and overshoot at an
  extreme from ever counting as a new cycle.
- *Ramp rate*: 0.8 × span divided by the time between the 10 % and the 90 %
  crossings (each found by linear interpolation between bucket means), in
  K/min, per sample channel and on the reference.
- *Rate of change over a window*: the change of a channel's mean over the
  trailing ``rate_window`` divided by it (IEC 60068-2-2 and IEC 60068-2-14 limit
  the rate "averaged over a period of not more than 5 min"; from memory).
- *Within tolerance*: a bucket whose lowest and highest reading both lie in
  the band. A dwell's *time within tolerance* is the total time every sample
  channel was within tolerance at once (JESD22-A104's soak time is "the total
  time the sample temperature is within a specified range of each extreme";
  from memory), counted in whole buckets, so it is never overstated.
- *Transition time*: from the last bucket with every sample channel in one
  extreme's band to the first with every one in the other's (the transfer
  time of IEC 60068-2-14 test Na).
- *Complete cycle*: its high dwell and its low dwell both ended (the
  reference left the band, or the required dwell was reached).
- *Deviation*: an excursion out of the band after a channel had entered it
  in a dwell or soak, a dwell or soak shorter than required, a gap in a sample
  channel during one, a ramp rate outside its tolerance, a rate of change over
  the window above its limit, a transition slower than allowed.

Pure: numpy in, frozen records out; times are seconds (UTC epoch).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from soaklog.profile import Band, Profile
from soaklog.kinds.profiles.cycle import CycleProfile
from soaklog.kinds.profiles.soak import SoakProfile
from soaklog.report.series import (
    FloatArray,
    Series,
    crossing_time,
    nan_mean_rows,
    true_runs,
)

__all__ = [
    "MAX_DEVIATIONS",
    "Conformance",
    "CycleRow",
    "Deviation",
    "Dwell",
    "Ramp",
    "analyse",
    "analyse_cycles",
    "analyse_soak",
    "deviation_summary",
    "side_states",
    "window_rates",
]

#: deviations kept in full; more are counted, not listed (a broken sensor can make thousands)
MAX_DEVIATIONS = 20_000


@dataclass(frozen=True)
class Ramp:
    """One ramp between the extremes (or from the starting temperature to the first one)."""

    cycle: int
    direction: str  # "up" | "down"
    from_start: bool
    level_start_c: float
    level_end_c: float
    t_start_s: float | None
    t_end_s: float | None
    rate_k_per_min: float | None
    channel_rate_k_per_min: tuple[float, ...]
    max_window_rate_k_per_min: float | None
    transition_s: float | None = None


@dataclass(frozen=True)
class Dwell:
    """One stay at an extreme (or the soak), measured on the sample channels."""

    cycle: int
    level: str  # "high" | "low" | "soak"
    band: Band
    start_s: float
    end_s: float
    entry_s: float | None
    exit_s: float | None
    in_tolerance_s: float
    required_s: float
    finished: bool
    channel_in_tolerance_s: tuple[float, ...]
    channel_min_c: tuple[float, ...]
    channel_max_c: tuple[float, ...]
    i_start: int
    i_end: int


@dataclass(frozen=True)
class CycleRow:
    cycle: int
    start_s: float
    end_s: float
    ramp_up_k_per_min: float | None
    dwell_high_s: float | None
    ramp_down_k_per_min: float | None
    dwell_low_s: float | None
    complete: bool
    deviations: int


@dataclass(frozen=True)
class Deviation:
    """A place where the data departs from the profile."""

    kind: str
    start_s: float
    end_s: float | None
    channel: str
    cycle: int | None
    phase: str
    value: float | None
    limit: float | None
    unit: str
    resolution_s: float
    message: str
    band: Band | None = None


@dataclass(frozen=True)
class Conformance:
    """The profile against the data: what was found and where it departed."""

    profile: Profile
    sample_channels: tuple[str, ...]
    resolution_s: float
    ramps: tuple[Ramp, ...]
    dwells: tuple[Dwell, ...]
    cycles: tuple[CycleRow, ...]
    deviations: tuple[Deviation, ...]
    deviations_total: int
    complete_cycles: int
    planned_cycles: int
    verdict: str  # "met" | "not_met" | "incomplete"
    summary: str
    notes: tuple[str, ...] = field(default=())


# ---------------------------------------------------------------- building blocks


def side_states(ref: npt.ArrayLike, lower_c: float, upper_c: float) -> npt.NDArray[np.int8]:
    """Hysteresis side of each sample: +1 from reaching ``upper_c`` until falling to ``lower_c``, −1 the other way.

    0 before the first decision (the start lies between the levels). NaN samples
    keep the side they are on.
    """
    r = np.asarray(ref, dtype=np.float64)
    s = np.zeros(r.size, dtype=np.int8)
    with np.errstate(invalid="ignore"):
        s[r >= upper_c] = 1
        s[r <= lower_c] = -1
    idx = np.where(s != 0, np.arange(r.size), -1)
    last = np.maximum.accumulate(idx) if r.size else idx
    out = np.where(last >= 0, s[np.maximum(last, 0)], 0).astype(np.int8)
    return out


def window_rates(mean: FloatArray, m: int, width_s: float) -> FloatArray:
    """Rate of change in K/min over the trailing ``m`` buckets, per channel (NaN where unknown)."""
    out = np.full(mean.shape, np.nan, dtype=np.float64)
    if m < 1 or mean.shape[0] <= m:
        return out
    out[m:] = (mean[m:] - mean[:-m]) / (m * width_s / 60.0)
    return out


def _in_band(series: Series, band: Band) -> npt.NDArray[np.bool_]:
    with np.errstate(invalid="ignore"):
        return (series.lo >= band.lo_c) & (series.hi <= band.hi_c)


def _ramp_crossings(
    t_mid: FloatArray, y: FloatArray, a: int, b: int, lv_start: float, lv_end: float, rising: bool
) -> tuple[float, float] | None:
    """Times ``y`` leaves ``lv_start`` and reaches ``lv_end`` within ``[a, b)`` (interpolated)."""
    seg = y[a:b]
    with np.errstate(invalid="ignore"):
        reached = seg >= lv_end if rising else seg <= lv_end
    hits = np.flatnonzero(reached)
    if hits.size == 0 or hits[0] == 0:
        return None
    j_end = a + int(hits[0])
    before = y[a:j_end]
    with np.errstate(invalid="ignore"):
        at_start = before <= lv_start if rising else before >= lv_start
    starts = np.flatnonzero(at_start)
    if starts.size == 0:
        return None
    j_start = a + int(starts[-1])
    return crossing_time(t_mid, y, lv_start, j_start), crossing_time(t_mid, y, lv_end, j_end - 1)


def _rate(levels: tuple[float, float], times: tuple[float, float] | None) -> float:
    if times is None or not times[1] > times[0]:
        return float("nan")
    return abs(levels[1] - levels[0]) / (times[1] - times[0]) * 60.0


def _measure_ramp(
    series: Series, ref: FloatArray, rates: FloatArray, a: int, b: int, *, rising: bool,
    lv_start: float, lv_end: float, cycle: int, from_start: bool,
) -> Ramp:
    t_mid = series.t_mid()
    ref_times = _ramp_crossings(t_mid, ref, a, b, lv_start, lv_end, rising)
    ch_rates = []
    for c in range(len(series.names)):
        times = _ramp_crossings(t_mid, series.mean[:, c], a, b, lv_start, lv_end, rising)
        ch_rates.append(_rate((lv_start, lv_end), times))
    max_rate: float | None = None
    if ref_times is not None:
        lo = series.index_of(ref_times[0])
        hi = series.index_of(ref_times[1]) + 1
        # the window rate at i looks back m buckets: include the buckets just after the ramp
        m_extra = max(1, int(round((hi - lo) * 0.1)))
        window = np.abs(rates[lo:min(series.n, hi + m_extra)])
        if window.size and np.isfinite(window).any():
            max_rate = float(np.nanmax(window))
    return Ramp(
        cycle=cycle, direction="up" if rising else "down", from_start=from_start,
        level_start_c=lv_start, level_end_c=lv_end,
        t_start_s=None if ref_times is None else ref_times[0],
        t_end_s=None if ref_times is None else ref_times[1],
        rate_k_per_min=None if ref_times is None else _none_if_nan(_rate((lv_start, lv_end), ref_times)),
        channel_rate_k_per_min=tuple(ch_rates), max_window_rate_k_per_min=max_rate,
    )


def _none_if_nan(x: float) -> float | None:
    return None if not np.isfinite(x) else float(x)


def _measure_dwell(
    series: Series, inb: npt.NDArray[np.bool_], ref: FloatArray, band: Band, i0: int, i1: int, *,
    level: str, cycle: int, required_s: float, closed: bool,
) -> Dwell:
    """Time within tolerance in the window ``[i0, i1)``; ``closed`` when a later stay follows."""
    w = series.width_s
    seg = inb[i0:i1]
    all_in = seg.all(axis=1) if seg.shape[1] else np.zeros(seg.shape[0], dtype=bool)
    hits = np.flatnonzero(all_in)
    entry = exit_ = None
    if hits.size:
        entry = series.t0_s + (i0 + int(hits[0])) * w
        exit_ = series.t0_s + (i0 + int(hits[-1]) + 1) * w
    in_tol = float(all_in.sum()) * w
    ch_in = tuple(float(x) * w for x in seg.sum(axis=0))
    mins, maxs = [], []
    for c in range(len(series.names)):
        h = np.flatnonzero(seg[:, c])
        if h.size == 0:
            mins.append(float("nan"))
            maxs.append(float("nan"))
            continue
        a, b = i0 + int(h[0]), i0 + int(h[-1]) + 1
        lo, hi = series.lo[a:b, c], series.hi[a:b, c]
        mins.append(float(np.nanmin(lo)) if np.isfinite(lo).any() else float("nan"))
        maxs.append(float(np.nanmax(hi)) if np.isfinite(hi).any() else float("nan"))
    finished = closed or in_tol >= required_s
    if not finished and hits.size:
        # the data ended in this stay: it is over if the reference left the band for good
        valid = np.flatnonzero(np.isfinite(ref[i0:i1]))
        finished = bool(valid.size) and int(valid[-1]) > int(hits[-1]) + 1
    return Dwell(
        cycle=cycle, level=level, band=band, start_s=series.t0_s + i0 * w, end_s=series.t0_s + i1 * w,
        entry_s=entry, exit_s=exit_, in_tolerance_s=in_tol, required_s=required_s, finished=finished,
        channel_in_tolerance_s=ch_in, channel_min_c=tuple(mins), channel_max_c=tuple(maxs), i_start=i0, i_end=i1,
    )


def _fmt_min(s: float) -> str:
    return f"{s / 60:.1f} min" if s < 7200 else f"{s / 3600:.2f} h"


class _Collector:
    def __init__(self) -> None:
        self.items: list[Deviation] = []
        self.total = 0

    def add(self, d: Deviation) -> None:
        self.total += 1
        if len(self.items) < MAX_DEVIATIONS:
            self.items.append(d)


def _dwell_deviations(
    series: Series, inb: npt.NDArray[np.bool_], dwell: Dwell, phase: str, out: _Collector,
    far_side: str | None = None,
) -> None:
    """Excursions and gaps of each sample channel in a stay, and a short dwell.

    An excursion is a stretch out of the band after the channel was first
    wholly within it, or — at any time in the stay — beyond the band's far
    side (``far_side`` "above" at the high extreme, "below" at the low one):
    an overshoot is a deviation even before the channel settles.
    """
    w = series.width_s
    i_s, i_e = dwell.i_start, dwell.i_end
    seg = inb[i_s:i_e]
    band = dwell.band
    for c, name in enumerate(series.names):
        spans: list[tuple[int, int]] = []
        h = np.flatnonzero(seg[:, c])
        if h.size:
            a, b = int(h[0]), int(h[-1]) + 1
            starts, ends = true_runs(~seg[a:b, c])
            spans = [(a + s0, a + e0) for s0, e0 in zip(starts.tolist(), ends.tolist(), strict=True)]
            # after the last bucket wholly in the band the channel leaves for good (the ramp away), unless
            # its mean comes back into the band first: then it left and returned, and that is an excursion
            tail = series.mean[i_s + b:i_e, c]
            with np.errstate(invalid="ignore"):
                inside = (tail >= band.lo_c) & (tail <= band.hi_c)
                outside = (tail < band.lo_c) | (tail > band.hi_c)
            back = np.flatnonzero(inside)
            if back.size and outside[: int(back[-1])].any():
                spans.append((b, b + int(back[-1]) + 1))
        if far_side is not None:
            with np.errstate(invalid="ignore"):
                beyond = (series.hi[i_s:i_e, c] > band.hi_c) if far_side == "above" else \
                    (series.lo[i_s:i_e, c] < band.lo_c)
            starts, ends = true_runs(beyond)
            for s0, e0 in zip(starts.tolist(), ends.tolist(), strict=True):
                if not any(s0 < e1 and s1 < e0 for s1, e1 in spans):
                    spans.append((s0, e0))
        for s0, e0 in sorted(spans):
            i0, i1 = i_s + s0, i_s + e0
            lo, hi = series.lo[i0:i1, c], series.hi[i0:i1, c]
            valid = np.isfinite(lo)
            t0 = series.t0_s + i0 * w
            t1 = series.t0_s + i1 * w
            if not valid.any():
                out.add(Deviation(
                    "no_data", t0, t1, name, dwell.cycle or None, phase, None, None, "", w,
                    f"{phase}: no reading from {name} for {_fmt_min(t1 - t0)} while it was at temperature",
                    dwell.band,
                ))
                continue
            worst_hi = float(np.nanmax(hi)) - dwell.band.hi_c
            worst_lo = dwell.band.lo_c - float(np.nanmin(lo))
            if worst_hi >= worst_lo:
                value, limit, side = float(np.nanmax(hi)), dwell.band.hi_c, "above"
            else:
                value, limit, side = float(np.nanmin(lo)), dwell.band.lo_c, "below"
            out.add(Deviation(
                "excursion", t0, t1, name, dwell.cycle or None, phase, value, limit, "°C", w,
                f"{phase}: {name} was outside {dwell.band.describe()} for {_fmt_min(t1 - t0)}, "
                f"reaching {value:.2f} °C ({side} {limit:g} °C)",
                dwell.band,
            ))
    if dwell.finished and dwell.in_tolerance_s + 1e-9 < dwell.required_s:
        shortest = int(np.argmin(dwell.channel_in_tolerance_s)) if dwell.channel_in_tolerance_s else 0
        who = series.names[shortest] if series.names else ""
        t = dwell.entry_s if dwell.entry_s is not None else dwell.start_s
        out.add(Deviation(
            "dwell_short", t, dwell.exit_s if dwell.exit_s is not None else dwell.end_s, who,
            dwell.cycle or None, phase, dwell.in_tolerance_s / 60.0, dwell.required_s / 60.0, "min", w,
            f"{phase}: {_fmt_min(dwell.in_tolerance_s)} with every sample channel within {dwell.band.describe()}, "
            f"{_fmt_min(dwell.required_s)} required (least: {who}, "
            f"{_fmt_min(dwell.channel_in_tolerance_s[shortest] if dwell.channel_in_tolerance_s else 0.0)})",
            dwell.band,
        ))


def _ramp_deviations(series: Series, ramp: Ramp, profile: CycleProfile, phase: str, out: _Collector) -> None:
    # the first ramp starts from wherever the chamber was (often the lab) and is reported, not judged
    judged = not ramp.from_start and ramp.t_start_s is not None
    if profile.ramp_k_per_min is not None and profile.ramp_tolerance_k_per_min is not None and judged:
        lo = profile.ramp_k_per_min - profile.ramp_tolerance_k_per_min
        hi = profile.ramp_k_per_min + profile.ramp_tolerance_k_per_min
        for name, rate in zip(series.names, ramp.channel_rate_k_per_min, strict=True):
            if np.isfinite(rate) and not lo - 1e-9 <= rate <= hi + 1e-9:
                out.add(Deviation(
                    "ramp_rate", ramp.t_start_s, ramp.t_end_s, name, ramp.cycle, phase, rate,
                    hi if rate > hi else lo, "K/min", series.width_s,
                    f"{phase}: {name} ramped at {rate:.2f} K/min between {ramp.level_start_c:g} and "
                    f"{ramp.level_end_c:g} °C; {profile.ramp_k_per_min:g} ± {profile.ramp_tolerance_k_per_min:g} "
                    "K/min allowed",
                ))
    if profile.transition_max_s is not None and ramp.transition_s is not None and ramp.transition_s > profile.transition_max_s:
        out.add(Deviation(
            "transition_slow", ramp.t_start_s or 0.0, ramp.t_end_s, "", ramp.cycle, phase, ramp.transition_s / 60.0,
            profile.transition_max_s / 60.0, "min", series.width_s,
            f"{phase}: {_fmt_min(ramp.transition_s)} from one extreme's band to the other's, "
            f"at most {_fmt_min(profile.transition_max_s)} allowed",
        ))


def _rate_limit_deviations(
    series: Series, rates: FloatArray, limit: float, window_s: float, phase_at: Callable[[float], tuple[int | None, str]], out: _Collector
) -> None:
    """Every stretch where a sample channel's rate over the window exceeds ``limit``."""
    w = series.width_s
    with np.errstate(invalid="ignore"):
        over = np.abs(rates) > limit + 1e-9
    for c, name in enumerate(series.names):
        starts, ends = true_runs(over[:, c])
        for s, e in zip(starts.tolist(), ends.tolist(), strict=True):
            peak = float(np.nanmax(np.abs(rates[s:e, c])))
            t0 = series.t0_s + s * w
            cycle, phase = phase_at(t0)
            out.add(Deviation(
                "rate_of_change", t0, series.t0_s + e * w, name, cycle, phase, peak, limit, "K/min", w,
                f"{phase}: {name} changed at up to {peak:.2f} K/min averaged over {_fmt_min(window_s)}; "
                f"at most {limit:g} K/min allowed",
            ))


# ---------------------------------------------------------------- cycles


def analyse_cycles(series: Series, profile: CycleProfile) -> Conformance:
    """Detect and measure the cycles of ``series`` (the sample channels) against ``profile``."""
    w = series.width_s
    n = series.n
    ref = nan_mean_rows(series.mean)
    span = profile.span_k
    l10 = profile.low.nominal_c + 0.1 * span
    l90 = profile.low.nominal_c + 0.9 * span
    states = side_states(ref, l10, l90)
    change = np.flatnonzero(np.diff(states.astype(np.int16)) != 0) + 1 if n > 1 else np.empty(0, dtype=np.intp)
    starts = [int(i) for i in change if states[i] != 0]
    if n and states[0] != 0:
        starts = [0] + starts
    visits = [(s, starts[k + 1] if k + 1 < len(starts) else n, int(states[s])) for k, s in enumerate(starts)]
    m_rate = max(1, int(round(profile.rate_window_s / w)))
    rates = window_rates(series.mean, m_rate, w)
    inb_high = _in_band(series, profile.high)
    inb_low = _in_band(series, profile.low)
    out = _Collector()
    ramps: list[Ramp] = []
    dwells: list[Dwell] = []
    cycle = 0
    prev_start = 0
    first_valid = int(np.flatnonzero(np.isfinite(ref))[0]) if np.isfinite(ref).any() else 0
    for k, (i0, i1, side) in enumerate(visits):
        closed = k + 1 < len(visits)
        if side > 0:
            cycle += 1
            target, inb, level, req = profile.high, inb_high, "high", profile.dwell_high_s
        else:
            target, inb, level, req = profile.low, inb_low, "low", profile.dwell_low_s
        pre_cycle = side < 0 and cycle == 0
        # the ramp into this stay
        if k == 0 and (i0 == 0 or i0 <= first_valid):
            ramp = None
        elif k == 0:
            v0 = float(ref[first_valid])
            full = target.nominal_c - v0
            ramp = None
            if abs(full) >= 0.2 * span:
                ramp = _measure_ramp(series, ref, rates, first_valid, i1, rising=full > 0,
                                     lv_start=v0 + 0.1 * full, lv_end=v0 + 0.9 * full,
                                     cycle=max(cycle, 1), from_start=True)
        else:
            rising = side > 0
            ramp = _measure_ramp(series, ref, rates, prev_start, i1, rising=rising,
                                 lv_start=l10 if rising else l90, lv_end=l90 if rising else l10,
                                 cycle=cycle, from_start=False)
        dwell = _measure_dwell(series, inb, ref, target, i0, i1, level=level, cycle=cycle,
                               required_s=req, closed=closed)
        if ramp is not None and dwells and dwells[-1].exit_s is not None and dwell.entry_s is not None:
            ramp = _with_transition(ramp, dwell.entry_s - dwells[-1].exit_s)
        if not pre_cycle:
            phase = f"dwell {level}, cycle {cycle}"
            if ramp is not None:
                ramps.append(ramp)
                _ramp_deviations(series, ramp, profile, f"ramp {ramp.direction}, cycle {ramp.cycle}", out)
            dwells.append(dwell)
            _dwell_deviations(series, inb, dwell, phase, out, far_side="above" if side > 0 else "below")
        prev_start = i0

    phase_at = _phase_lookup(ramps, dwells)

    if profile.ramp_max_k_per_min is not None:
        _rate_limit_deviations(series, rates, profile.ramp_max_k_per_min, profile.rate_window_s, phase_at, out)

    rows = _cycle_rows(ramps, dwells, out.items)
    complete = sum(1 for r in rows if r.complete)
    return _finish(profile, series, ramps, dwells, rows, out, complete, profile.cycles)


def _phase_lookup(ramps: Sequence[Ramp], dwells: Sequence[Dwell]) -> Callable[[float], tuple[int | None, str]]:
    """A function from a time to (cycle, phase label): a ramp if inside one, else the dwell window holding it."""
    r_ok = [r for r in ramps if r.t_start_s is not None and r.t_end_s is not None]
    r_start = np.asarray([r.t_start_s for r in r_ok], dtype=np.float64)
    r_end = np.asarray([r.t_end_s for r in r_ok], dtype=np.float64)
    d_start = np.asarray([d.start_s for d in dwells], dtype=np.float64)
    d_end = np.asarray([d.end_s for d in dwells], dtype=np.float64)

    def phase_at(t: float) -> tuple[int | None, str]:
        i = int(np.searchsorted(r_start, t, side="right")) - 1
        if 0 <= i < len(r_ok) and t <= r_end[i]:
            r = r_ok[i]
            return r.cycle, f"ramp {r.direction}, cycle {r.cycle}"
        j = int(np.searchsorted(d_start, t, side="right")) - 1
        if 0 <= j < len(dwells) and t < d_end[j]:
            d = dwells[j]
            return d.cycle, f"dwell {d.level}, cycle {d.cycle}"
        return None, "before the first cycle"

    return phase_at


def _with_transition(r: Ramp, transition_s: float) -> Ramp:
    return Ramp(r.cycle, r.direction, r.from_start, r.level_start_c, r.level_end_c, r.t_start_s, r.t_end_s,
                r.rate_k_per_min, r.channel_rate_k_per_min, r.max_window_rate_k_per_min, transition_s)


def _cycle_rows(ramps: Sequence[Ramp], dwells: Sequence[Dwell], deviations: Sequence[Deviation]) -> list[CycleRow]:
    by_cycle: dict[int, dict[str, object]] = {}
    for r in ramps:
        by_cycle.setdefault(r.cycle, {})[f"ramp_{r.direction}"] = r
    for d in dwells:
        if d.level in ("high", "low"):
            by_cycle.setdefault(d.cycle, {})[f"dwell_{d.level}"] = d
    counts: dict[int, int] = {}
    for dev in deviations:
        if dev.cycle is not None:
            counts[dev.cycle] = counts.get(dev.cycle, 0) + 1
    rows = []
    for c in sorted(by_cycle):
        parts = by_cycle[c]
        up = parts.get("ramp_up")
        down = parts.get("ramp_down")
        hi = parts.get("dwell_high")
        lo = parts.get("dwell_low")
        assert up is None or isinstance(up, Ramp)
        assert down is None or isinstance(down, Ramp)
        assert hi is None or isinstance(hi, Dwell)
        assert lo is None or isinstance(lo, Dwell)
        start = (up.t_start_s if up is not None and up.t_start_s is not None else
                 hi.start_s if hi is not None else lo.start_s if lo is not None else 0.0)
        end = lo.end_s if lo is not None else hi.end_s if hi is not None else start
        rows.append(CycleRow(
            cycle=c, start_s=float(start), end_s=float(end),
            ramp_up_k_per_min=None if up is None else up.rate_k_per_min,
            dwell_high_s=None if hi is None else hi.in_tolerance_s,
            ramp_down_k_per_min=None if down is None else down.rate_k_per_min,
            dwell_low_s=None if lo is None else lo.in_tolerance_s,
            complete=hi is not None and lo is not None and hi.finished and lo.finished,
            deviations=counts.get(c, 0),
        ))
    # a cycle ends where the next begins (its ramp up leaves the low extreme)
    for k in range(len(rows) - 1):
        if rows[k + 1].start_s > rows[k].start_s:
            rows[k] = dataclasses.replace(rows[k], end_s=rows[k + 1].start_s)
    return rows


def deviation_summary(total: int, first: Deviation) -> str:
    """The one-line verdict of a run with deviations."""
    return f"not met: {total} deviation{'s' if total != 1 else ''}; the first: {first.message}"


def _finish(
    profile: Profile, series: Series, ramps: Sequence[Ramp], dwells: Sequence[Dwell], rows: Sequence[CycleRow],
    out: _Collector, complete: int, planned: int,
) -> Conformance:
    items = sorted(out.items, key=lambda d: (d.start_s, d.channel, d.kind))
    notes: list[str] = []
    if out.total > len(items):
        notes.append(f"{out.total} deviations found; the first {len(items)} are listed")
    if out.total:
        verdict = "not_met"
        summary = deviation_summary(out.total, items[0])
    elif complete >= planned:
        verdict = "met"
        summary = "met: " + ("every cycle complete" if isinstance(profile, CycleProfile) else "soak complete") + \
            ", no deviation found"
    else:
        verdict = "incomplete"
        what = f"{complete} of {planned} cycles complete" if isinstance(profile, CycleProfile) else \
            "the soak has not reached its duration"
        summary = f"no deviation so far, but the profile is not finished: {what}"
    return Conformance(
        profile=profile, sample_channels=series.names, resolution_s=series.width_s, ramps=tuple(ramps),
        dwells=tuple(dwells), cycles=tuple(rows), deviations=tuple(items), deviations_total=out.total,
        complete_cycles=complete, planned_cycles=planned, verdict=verdict, summary=summary, notes=tuple(notes),
    )


# ---------------------------------------------------------------- soak


def analyse_soak(series: Series, profile: SoakProfile) -> Conformance:
    """Measure a soak: time every sample channel spent within the band, excursions, the ramp there."""
    w = series.width_s
    ref = nan_mean_rows(series.mean)
    band = profile.band
    inb = _in_band(series, band)
    m_rate = max(1, int(round(profile.rate_window_s / w)))
    rates = window_rates(series.mean, m_rate, w)
    out = _Collector()
    ramps: list[Ramp] = []
    finite = np.flatnonzero(np.isfinite(ref))
    if finite.size:
        v0 = float(ref[finite[0]])
        full = band.nominal_c - v0
        if v0 < band.lo_c or v0 > band.hi_c:
            r = _measure_ramp(series, ref, rates, int(finite[0]), series.n, rising=full > 0,
                              lv_start=v0 + 0.1 * full, lv_end=v0 + 0.9 * full, cycle=0, from_start=True)
            ramps.append(r)
    dwell = _measure_dwell(series, inb, ref, band, 0, series.n, level="soak", cycle=0,
                           required_s=profile.duration_s, closed=False)
    far = None if not ramps else ("above" if ramps[0].direction == "up" else "below")
    _dwell_deviations(series, inb, dwell, "soak", out, far_side=far)
    if profile.ramp_max_k_per_min is not None:
        def phase_at(t: float) -> tuple[int | None, str]:
            if dwell.entry_s is None or t < dwell.entry_s:
                return None, "on the way to the soak"
            return None, "soak"

        _rate_limit_deviations(series, rates, profile.ramp_max_k_per_min, profile.rate_window_s, phase_at, out)
    done = 1 if dwell.finished and dwell.in_tolerance_s + 1e-9 >= profile.duration_s else 0
    return _finish(profile, series, ramps, [dwell], [], out, done, 1)


def analyse(series: Series, profile: Profile) -> Conformance:
    """The conformance of ``series`` (its columns are the sample channels) to ``profile``."""
    if isinstance(profile, CycleProfile):
        return analyse_cycles(series, profile)
    return analyse_soak(series, profile)
