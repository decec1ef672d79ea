"""Per-channel figures of a run: spread of values, time beyond alarm limits, gaps (pure numpy).

Times beyond a limit are counted on buckets: ``at_least_s`` counts buckets
whose every reading was beyond the limit, ``at_most_s`` those with any reading
beyond it. From raw readings on a fine grid the two agree to a bucket; from
minute rollups they bracket the truth to a minute each time the limit is
crossed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.report.series import FloatArray, Series, true_runs

__all__ = [
    "Beyond",
    "Gap",
    "bucket_moments",
    "channel_gaps",
    "combine_moments",
    "completeness",
    "exact_moments",
    "merge_gaps",
    "time_beyond",
]


@dataclass(frozen=True)
class Beyond:
    """Time a channel spent above (or below) a limit, bracketed by the bucket resolution."""

    limit_c: float
    above: bool
    at_least_s: float
    at_most_s: float
    episodes: int


@dataclass(frozen=True)
class Gap:
    """A stretch without a valid reading on one or more channels."""

    start_s: float
    end_s: float
    channels: tuple[str, ...]

    @property
    def duration_s(self) -> float:
        return self.end_s - self.start_s


def time_beyond(lo: FloatArray, hi: FloatArray, width_s: float, limit_c: float, *, above: bool) -> Beyond:
    """Time one channel's buckets (lowest ``lo``, highest ``hi``) spent beyond ``limit_c``."""
    with np.errstate(invalid="ignore"):
        if above:
            surely, maybe = lo > limit_c, hi > limit_c
        else:
            surely, maybe = hi < limit_c, lo < limit_c
    starts, _ends = true_runs(maybe)
    return Beyond(limit_c, above, float(surely.sum()) * width_s, float(maybe.sum()) * width_s, int(starts.size))


def bucket_moments(mean: FloatArray) -> tuple[float | None, float | None]:
    """Mean and standard deviation of one channel's bucket means (each bucket weighted alike)."""
    v = mean[np.isfinite(mean)]
    if v.size == 0:
        return None, None
    if v.size == 1:
        return float(v[0]), 0.0
    return float(v.mean()), float(v.std(ddof=1))


def channel_gaps(series: Series, min_buckets: int = 1) -> list[Gap]:
    """Every run of at least ``min_buckets`` buckets without a valid reading, per channel."""
    out: list[Gap] = []
    w = series.width_s
    for c, name in enumerate(series.names):
        valid = np.isfinite(series.mean[:, c])
        starts, ends = true_runs(~valid)
        for s, e in zip(starts.tolist(), ends.tolist(), strict=True):
            if e - s < min_buckets:
                continue
            out.append(Gap(series.t0_s + s * w, series.t0_s + e * w, (name,)))
    return out


def merge_gaps(gaps: list[Gap]) -> list[Gap]:
    """One row per stretch: gaps with the same start and end become one, listing their channels."""
    by_span: dict[tuple[float, float], list[str]] = {}
    for g in gaps:
        by_span.setdefault((g.start_s, g.end_s), []).extend(g.channels)
    return [Gap(s, e, tuple(ch)) for (s, e), ch in sorted(by_span.items())]


def completeness(valid_readings: int, first_ms: int | None, last_ms: int | None, interval_s: float | None) -> float | None:
    """Valid readings as a share of those a channel's interval promises over the run (0…1)."""
    if first_ms is None or last_ms is None or not interval_s:
        return None
    expected = (last_ms - first_ms) / 1000.0 / interval_s + 1.0
    if expected <= 0:
        return None
    return float(min(1.0, valid_readings / expected))


def exact_moments(values: npt.ArrayLike) -> tuple[int, float, float]:
    """Count, sum and sum of squared deviations from the mean (for streaming in chunks)."""
    v = np.asarray(values, dtype=np.float64)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return 0, 0.0, 0.0
    m = float(v.mean())
    return int(v.size), float(v.sum()), float(((v - m) ** 2).sum())


def combine_moments(parts: list[tuple[int, float, float]]) -> tuple[float | None, float | None]:
    """Mean and sample standard deviation from chunks of (count, sum, M2) (the pairwise update of Chan, Golub and LeVeque, 1983)."""
    n, mean, m2 = 0, 0.0, 0.0
    for nb, sb, m2b in parts:
        if nb == 0:
            continue
        mb = sb / nb
        delta = mb - mean
        tot = n + nb
        m2 = m2 + m2b + delta * delta * n * nb / tot
        mean = mean + delta * nb / tot
        n = tot
    if n == 0:
        return None, None
    return mean, (float(np.sqrt(m2 / (n - 1))) if n > 1 else 0.0)
