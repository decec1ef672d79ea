"""Chamber performance over a stable period: the quantities of IEC 60068-3-5, and the stability finding.

Definitions, from memory of IEC 60068-3-5:2001 (confirmation of the
performance of temperature chambers) — the names are the standard's, the
formulas how this report computes them:

- *deviation from the set point* at a point: the point's mean over the stable
  period minus the set temperature; the chamber's deviation is the mean over
  all points minus the set temperature, and the worst point is given too.
- *fluctuation* (variation in time) at a point: its highest minus its lowest
  reading over the stable period (often quoted as ± half of that).
- *spatial variation* (the standard's "gradient"): the largest difference
  between the mean values of two points over the stable period. The largest
  spread between points at any one moment is given beside it.
- *rate of change*: the ramp rates (see ``conformance``) and, over the stable
  period, each point's drift — the slope of a least-squares line, in K/min.

The *stability finding*: the chamber counts as stable at a moment when, over
the ``window`` before it, every point stayed within ± ``band_k`` (its highest
minus lowest reading at most 2·band_k). A stable period starts at the start of
the first such window and ends where the condition last holds; within a dwell
the longest one is used. (The band and window are the test plan's; the
defaults are common practice with no published source.)

The uncertainty of the condition follows the approach of IEC 60068-3-11
(from memory): the measuring uncertainty, the fluctuation and the spatial
variation combined in quadrature, the last two as rectangular distributions of
half-width (max − min)/2; expanded with k = 2.

Pure: numpy in, frozen records out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.report.series import FloatArray, Series, rolling_max, rolling_min, true_runs

__all__ = ["Performance", "StablePeriod", "chamber_performance", "stable_mask", "stable_period"]


@dataclass(frozen=True)
class StablePeriod:
    """Where the chamber counted as stable: ``start_s`` … ``end_s``, first confirmed at ``confirmed_s``."""

    start_s: float
    end_s: float
    confirmed_s: float
    i_start: int
    i_end: int

    @property
    def duration_s(self) -> float:
        return self.end_s - self.start_s


@dataclass(frozen=True)
class Performance:
    """IEC 60068-3-5 quantities of one stable period, per point and for the chamber."""

    label: str
    setpoint_c: float
    stable: StablePeriod | None
    channels: tuple[str, ...]
    mean_c: tuple[float, ...]
    min_c: tuple[float, ...]
    max_c: tuple[float, ...]
    deviation_k: tuple[float, ...]
    fluctuation_k: tuple[float, ...]
    drift_k_per_min: tuple[float, ...]
    chamber_deviation_k: float | None
    worst_deviation_k: float | None
    worst_deviation_channel: str
    max_fluctuation_k: float | None
    spatial_variation_k: float | None
    max_spread_k: float | None
    expanded_uncertainty_k: float | None


def stable_mask(series: Series, window_s: float, band_k: float) -> npt.NDArray[np.bool_]:
    """True at each bucket whose trailing window had every channel within ± ``band_k``."""
    m = max(1, int(round(window_s / series.width_s)))
    if not series.names:
        return np.zeros(series.n, dtype=bool)
    ok = np.ones(series.n, dtype=bool)
    # one channel at a time: a long run's temporaries stay the size of one column
    for c in range(len(series.names)):
        span = rolling_max(series.hi[:, c], m) - rolling_min(series.lo[:, c], m)
        with np.errstate(invalid="ignore"):
            ok &= span <= 2.0 * band_k + 1e-12
    return ok


def stable_period(series: Series, mask: npt.NDArray[np.bool_], i0: int, i1: int, window_s: float) -> StablePeriod | None:
    """The longest stable period within buckets ``[i0, i1)`` (None when there is none)."""
    m = max(1, int(round(window_s / series.width_s)))
    starts, ends = true_runs(mask[i0:i1])
    if starts.size == 0:
        return None
    k = int(np.argmax(ends - starts))
    first_ok = i0 + int(starts[k])
    a = max(i0, first_ok - m + 1)
    b = i0 + int(ends[k])
    w = series.width_s
    return StablePeriod(series.t0_s + a * w, series.t0_s + b * w, series.t0_s + (first_ok + 1) * w, a, b)


def _slope_per_min(t_s: FloatArray, y: FloatArray) -> float:
    ok = np.isfinite(y)
    if ok.sum() < 2:
        return float("nan")
    t = t_s[ok] - t_s[ok].mean()
    den = float(np.dot(t, t))
    if den == 0:
        return float("nan")
    return float(np.dot(t, y[ok] - y[ok].mean()) / den * 60.0)


def chamber_performance(
    series: Series, period: StablePeriod | None, setpoint_c: float, label: str, *,
    measuring_u_k: float | None = None,
) -> Performance:
    """The IEC 60068-3-5 quantities of ``series`` (the chamber points) over ``period``.

    Args:
        measuring_u_k: the expanded uncertainty (k = 2) of the measurements,
            for the uncertainty of the condition; None leaves that out.
    """
    names = series.names
    nan_t = tuple(float("nan") for _ in names)
    if period is None or period.i_end <= period.i_start:
        return Performance(label, setpoint_c, period, names, nan_t, nan_t, nan_t, nan_t, nan_t, nan_t,
                           None, None, "", None, None, None, None)
    a, b = period.i_start, period.i_end
    mean = series.mean[a:b]
    lo = series.lo[a:b]
    hi = series.hi[a:b]
    t = series.t_mid()[a:b]
    with np.errstate(invalid="ignore"), _quiet():
        p_mean = np.nanmean(mean, axis=0)
        p_min = np.nanmin(lo, axis=0)
        p_max = np.nanmax(hi, axis=0)
    dev = p_mean - setpoint_c
    fluct = p_max - p_min
    drift = np.asarray([_slope_per_min(t, mean[:, c]) for c in range(len(names))], dtype=np.float64)
    ok = np.isfinite(p_mean)
    chamber_dev = float(np.mean(p_mean[ok]) - setpoint_c) if ok.any() else None
    worst = worst_name = None
    if ok.any():
        k = int(np.nanargmax(np.where(ok, np.abs(dev), -np.inf)))
        worst, worst_name = float(dev[k]), names[k]
    spatial = float(np.max(p_mean[ok]) - np.min(p_mean[ok])) if ok.sum() >= 2 else None
    with np.errstate(invalid="ignore"), _quiet():
        spread_t = np.nanmax(mean, axis=1) - np.nanmin(mean, axis=1)
    spread = float(np.nanmax(spread_t)) if np.isfinite(spread_t).any() and len(names) >= 2 else None
    max_fluct = float(np.nanmax(fluct)) if np.isfinite(fluct).any() else None
    u = None
    if max_fluct is not None:
        # IEC 60068-3-11 approach (from memory): rectangular half-widths (max − min)/2 → /√3
        parts = [(max_fluct / 2.0) ** 2 / 3.0, ((spatial or 0.0) / 2.0) ** 2 / 3.0]
        if measuring_u_k is not None:
            parts.append((measuring_u_k / 2.0) ** 2)
        u = 2.0 * math.sqrt(sum(parts))
    as_t = lambda x: tuple(float(v) for v in x)
    return Performance(
        label=label, setpoint_c=setpoint_c, stable=period, channels=names, mean_c=as_t(p_mean),
        min_c=as_t(p_min), max_c=as_t(p_max), deviation_k=as_t(dev), fluctuation_k=as_t(fluct),
        drift_k_per_min=as_t(drift), chamber_deviation_k=chamber_dev, worst_deviation_k=worst,
        worst_deviation_channel=worst_name or "", max_fluctuation_k=max_fluct, spatial_variation_k=spatial,
        max_spread_k=spread, expanded_uncertainty_k=u,
    )


class _quiet:
    """Silence numpy's "all-NaN slice" warnings where a point had no reading (NaN is the answer)."""

    def __enter__(self) -> None:
        import warnings

        self._cm = warnings.catch_warnings()
        self._cm.__enter__()
        warnings.simplefilter("ignore", RuntimeWarning)

    def __exit__(self, *exc: object) -> None:
        self._cm.__exit__(*exc)
