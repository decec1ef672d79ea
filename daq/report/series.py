"""Channels on one regular time grid, and the array tools the analyses share (pure numpy).

The report never analyses readings one by one: each channel is reduced to
buckets of equal width on a common grid (the store's minute rollups for a long
run, buckets of a few scan intervals made from the raw readings for a short
one), each bucket holding the mean, the lowest and the highest valid
temperature in it, or NaN where the channel had none. Conformance is decided
on the bucket extremes — a bucket counts as within tolerance only if its lowest
*and* highest reading are — so a judgement made at bucket resolution never
passes something the raw readings would fail.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError

__all__ = [
    "Series",
    "bucketize",
    "crossing_time",
    "nan_mean_rows",
    "rolling_max",
    "rolling_min",
    "true_runs",
]

FloatArray = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]
IntArray = npt.NDArray[np.intp]


@dataclass(frozen=True)
class Series:
    """Channels on a regular grid: bucket ``i`` covers ``[t0_s + i·width_s, t0_s + (i+1)·width_s)``.

    ``mean``, ``lo`` and ``hi`` are shaped (buckets, channels), in °C, NaN
    where a channel had no valid reading in a bucket. ``source`` says where
    the buckets came from: "raw" readings or the store's minute "rollup".
    """

    t0_s: float
    width_s: float
    names: tuple[str, ...]
    mean: FloatArray
    lo: FloatArray
    hi: FloatArray
    source: str = "raw"

    def __post_init__(self) -> None:
        if not self.width_s > 0:
            raise InputError(f"bucket width must be positive, got {self.width_s!r} s")
        shape = (self.mean.shape[0], len(self.names))
        for name in ("mean", "lo", "hi"):
            arr = getattr(self, name)
            if arr.ndim != 2 or arr.shape != shape:
                raise InputError(f"Series.{name} must be shaped {shape}, got {arr.shape}")

    @property
    def n(self) -> int:
        return int(self.mean.shape[0])

    @property
    def end_s(self) -> float:
        return self.t0_s + self.n * self.width_s

    def t_mid(self) -> FloatArray:
        """Middle of every bucket (s): where a bucket mean sits on a steady ramp."""
        return self.t0_s + self.width_s * (np.arange(self.n, dtype=np.float64) + 0.5)

    def index_of(self, t_s: float) -> int:
        """The bucket holding ``t_s`` (clipped to the grid)."""
        return int(min(max(np.floor((t_s - self.t0_s) / self.width_s), 0), max(self.n - 1, 0)))

    def columns(self, names: Sequence[str]) -> Series:
        """The same grid with only ``names``, in that order (the same object when that is all of them)."""
        if tuple(names) == self.names:
            return self
        idx = [self.names.index(n) for n in names]
        return Series(self.t0_s, self.width_s, tuple(names), self.mean[:, idx], self.lo[:, idx],
                      self.hi[:, idx], self.source)


def bucketize(
    t_s: npt.ArrayLike, values: npt.ArrayLike, t0_s: float, width_s: float, n: int
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Mean, lowest and highest value per bucket of one channel's readings (NaN values ignored).

    Returns three arrays of length ``n``; NaN where a bucket has no finite value.
    Readings outside the grid are dropped.
    """
    t = np.asarray(t_s, dtype=np.float64)
    v = np.asarray(values, dtype=np.float64)
    idx = np.floor((t - t0_s) / width_s).astype(np.int64)
    keep = np.isfinite(v) & (idx >= 0) & (idx < n)
    idx, v = idx[keep], v[keep]
    count = np.bincount(idx, minlength=n).astype(np.float64)
    total = np.bincount(idx, weights=v, minlength=n)
    lo = np.full(n, np.inf, dtype=np.float64)
    hi = np.full(n, -np.inf, dtype=np.float64)
    np.minimum.at(lo, idx, v)
    np.maximum.at(hi, idx, v)
    empty = count == 0
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(empty, np.nan, total / np.where(empty, 1.0, count))
    lo[empty] = np.nan
    hi[empty] = np.nan
    return mean, lo, hi


def rolling_max(x: npt.ArrayLike, m: int) -> FloatArray:
    """Largest value of each trailing window of ``m`` samples, along axis 0.

    ``out[i] = max(x[i−m+1 … i])``; NaN for the first ``m − 1`` samples and for
    any window holding a NaN. O(n) for any ``m`` (van Herk / Gil–Werman: the
    maximum of a block suffix and the next block's prefix).
    """
    a = np.asarray(x, dtype=np.float64)
    if m < 1:
        raise InputError(f"a rolling window needs at least 1 sample, got {m}")
    one_d = a.ndim == 1
    if one_d:
        a = a[:, None]
    n = a.shape[0]
    out = np.full(a.shape, np.nan, dtype=np.float64)
    if n < m or n == 0:
        return out[:, 0] if one_d else out
    nan = np.isnan(a)
    filled = np.where(nan, -np.inf, a)
    pad = (-n) % m
    if pad:
        filled = np.concatenate([filled, np.full((pad, a.shape[1]), -np.inf)], axis=0)
    blocks = filled.reshape(-1, m, a.shape[1])
    prefix = np.maximum.accumulate(blocks, axis=1).reshape(-1, a.shape[1])
    suffix = np.maximum.accumulate(blocks[:, ::-1], axis=1)[:, ::-1].reshape(-1, a.shape[1])
    i = np.arange(m - 1, n)
    res = np.maximum(suffix[i - m + 1], prefix[i])
    counts = np.concatenate([np.zeros((1, a.shape[1])), np.cumsum(nan, axis=0)], axis=0)
    has_nan = (counts[i + 1] - counts[i - m + 1]) > 0
    res[has_nan] = np.nan
    out[m - 1:] = res
    return out[:, 0] if one_d else out


def rolling_min(x: npt.ArrayLike, m: int) -> FloatArray:
    """Smallest value of each trailing window of ``m`` samples (see ``rolling_max``)."""
    return -rolling_max(-np.asarray(x, dtype=np.float64), m)


def true_runs(mask: npt.ArrayLike) -> tuple[IntArray, IntArray]:
    """Start and end (exclusive) indices of each run of True in a 1-D mask."""
    m = np.asarray(mask, dtype=bool)
    if m.size == 0:
        empty = np.empty(0, dtype=np.intp)
        return empty, empty
    d = np.diff(np.concatenate([[False], m, [False]]).astype(np.int8))
    return np.flatnonzero(d == 1).astype(np.intp), np.flatnonzero(d == -1).astype(np.intp)


def crossing_time(t_mid: FloatArray, y: FloatArray, level: float, j: int) -> float:
    """Time ``level`` is crossed between samples ``j`` and ``j + 1``, by linear interpolation.

    Falls back to the midpoint between the two samples when either is NaN or
    they are equal (the crossing is then known only to the grid's resolution).
    """
    if j < 0:
        return float(t_mid[0])
    if j + 1 >= y.size:
        return float(t_mid[-1])
    y0, y1 = float(y[j]), float(y[j + 1])
    t0, t1 = float(t_mid[j]), float(t_mid[j + 1])
    if not (np.isfinite(y0) and np.isfinite(y1)) or y0 == y1:
        return 0.5 * (t0 + t1)
    f = (level - y0) / (y1 - y0)
    return t0 + min(max(f, 0.0), 1.0) * (t1 - t0)


def nan_mean_rows(a: FloatArray) -> FloatArray:
    """Mean of each row over its finite entries; NaN for a row with none."""
    ok = np.isfinite(a)
    n = ok.sum(axis=1)
    s = np.where(ok, a, 0.0).sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(n > 0, s / np.where(n > 0, n, 1), np.nan)
