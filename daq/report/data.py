"""Reading a run out of the store for the report: its configuration, events, and every channel on one grid.

Bounded memory for any run length: a run of up to ``RAW_LIMIT`` readings is
read raw, one channel at a time, into buckets of two scan intervals (and its
per-channel spread computed exactly on the way); a longer one is read from the
store's minute rollups, one bucket per minute, so a 1000-hour run costs what
60 000 rows per channel cost. Raw readings are read again only where a
finding needs its exact time (see ``refine_times``).
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from soaklog.config import ConfigProblems, StationConfig, parse_config
from soaklog.errors import InputError
from soaklog.report.channels import combine_moments, exact_moments
from soaklog.report.series import Series, bucketize
from soaklog.store import AlarmRow, ChannelInfo, EventRow, InstrumentRow, RunRow, StoreReader

__all__ = ["RAW_LIMIT", "ROLLUP_WIDTH_S", "ChannelData", "RunData", "load_run", "refine_end", "refine_start"]

#: runs with at most this many readings are analysed from the raw readings
#: (about 5 s of reading on the benchmark machine); longer ones from the minute rollups
RAW_LIMIT = 2_000_000
ROLLUP_WIDTH_S = 60.0
#: events read at most (a run with more has something else to report first)
MAX_EVENTS = 200_000

Progress = Callable[[int, int, str], None]


@dataclass(frozen=True)
class ChannelData:
    """What the store knows of one channel over the run, beyond its buckets."""

    info: ChannelInfo
    readings: int
    without_temperature: int
    min_c: float | None
    max_c: float | None
    mean_c: float | None
    std_c: float | None
    std_exact: bool
    max_u_c: float | None
    median_u_c: float | None
    interval_s: float | None


@dataclass(frozen=True)
class RunData:
    """One run as the report needs it."""

    run: RunRow
    run_id: int
    config_text: str
    config: StationConfig | None
    config_problem: str
    config_table: dict[str, Any]
    channels: tuple[ChannelData, ...]
    events: tuple[EventRow, ...]
    instruments: tuple[InstrumentRow, ...]
    first_ms: int | None
    last_ms: int | None
    series: Series
    alarm_states: tuple[AlarmRow, ...] = field(default=())

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(c.info.name for c in self.channels)

    def channel(self, name: str) -> ChannelData:
        return next(c for c in self.channels if c.info.name == name)


def _parse_stored_config(text: str) -> tuple[StationConfig | None, str, dict[str, Any]]:
    """The stored configuration, validated if this soaklog can, and as plain TOML in any case."""
    try:
        table = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        return None, f"the stored configuration is not valid TOML: {exc}", {}
    try:
        cfg = parse_config(text, "<run configuration>")
    except ConfigProblems as exc:
        return None, f"the stored configuration does not validate with this soaklog: {exc}", table
    return cfg, "", table


def _intervals(cfg: StationConfig | None, chans: list[ChannelInfo]) -> dict[str, float | None]:
    out: dict[str, float | None] = {}
    for c in chans:
        iv: float | None = None
        if cfg is not None:
            try:
                iv = cfg.instrument(c.instrument).interval_s
            except StopIteration:
                iv = None
        out[c.name] = iv
    return out


def load_run(
    store: StoreReader, run_id: int | None = None, *, source: str = "auto", progress: Progress | None = None,
) -> RunData:
    """Read run ``run_id`` (the newest when None) from ``store``.

    Args:
        source: "raw", "rollup", or "auto" (raw up to ``RAW_LIMIT`` readings).
        progress: called as ``progress(done, total, stage)`` while channels are read.

    Raises:
        StorageError: no such run.
        InputError: an unknown ``source``.
    """
    if source not in ("auto", "raw", "rollup"):
        raise InputError(f"source must be auto, raw or rollup, got {source!r}")
    run = store.run(run_id)
    rid = run.id
    text = run.config or ""
    cfg, problem, table = _parse_stored_config(text)
    chans = store.channels(rid)
    summary = {s.channel: s for s in store.summary(rid)}
    first_ms, last_ms = store.time_span(rid)
    intervals = _intervals(cfg, chans)
    for c in chans:
        if intervals[c.name] is None and first_ms is not None:
            # no instrument interval in the configuration: the median spacing of the first hour's readings
            t_ms = store.raw_window(c.id, first_ms, first_ms + 3_600_000).t_ms
            if t_ms.size > 1:
                intervals[c.name] = float(np.median(np.diff(t_ms))) / 1000.0 or None
    total = sum(s.readings for s in summary.values())
    use_raw = source == "raw" or (source == "auto" and total <= RAW_LIMIT)
    known = [iv for iv in intervals.values() if iv]
    if use_raw:
        width = max(1.0, 2.0 * max(known)) if known else 1.0
    else:
        width = ROLLUP_WIDTH_S
    if first_ms is None or last_ms is None:
        t0_s, n_buckets = 0.0, 0
    else:
        t0_s = math.floor(first_ms / 1000.0 / width) * width
        n_buckets = int(math.floor((last_ms / 1000.0 - t0_s) / width)) + 1
    k = len(chans)
    mean = np.full((n_buckets, k), np.nan, dtype=np.float64)
    lo = np.full((n_buckets, k), np.nan, dtype=np.float64)
    hi = np.full((n_buckets, k), np.nan, dtype=np.float64)
    data: list[ChannelData] = []
    for j, c in enumerate(chans):
        s = summary.get(c.name)
        std: float | None = None
        median_u: float | None = None
        if n_buckets and first_ms is not None and last_ms is not None:
            if use_raw:
                w = store.raw_window(c.id, first_ms, last_ms)
                t_ms, temp, u = w.t_ms, w.temperature_c, w.uncertainty_c
                mean[:, j], lo[:, j], hi[:, j] = bucketize(t_ms / 1000.0, temp, t0_s, width, n_buckets)
                _m, std = combine_moments([exact_moments(temp)])
                ok_u = u[np.isfinite(u)]
                median_u = float(np.median(ok_u)) if ok_u.size else None
                del w, t_ms, temp, u
            else:
                minutes = int(math.ceil((last_ms - first_ms) / 60_000.0)) + 2
                tr = store.trend(c.id, first_ms, last_ms, max_points=minutes)
                t_mid_s = np.asarray(tr.t_ms, dtype=np.float64) / 1000.0
                if tr.source == "rollup":
                    idx = np.floor((t_mid_s - t0_s) / width).astype(np.int64)
                    keep = (idx >= 0) & (idx < n_buckets)
                    mean[idx[keep], j] = tr.mean_c[keep]
                    lo[idx[keep], j] = tr.min_c[keep]
                    hi[idx[keep], j] = tr.max_c[keep]
                else:
                    mean[:, j], lo[:, j], hi[:, j] = bucketize(t_mid_s, tr.mean_c, t0_s, width, n_buckets)
                # within-minute noise is not in the rollups: the spread of the minute means
                ok = mean[:, j][np.isfinite(mean[:, j])]
                std = float(ok.std(ddof=1)) if ok.size > 1 else None
        data.append(ChannelData(
            info=c, readings=s.readings if s else 0, without_temperature=s.without_temperature if s else 0,
            min_c=s.min_c if s else None, max_c=s.max_c if s else None, mean_c=s.mean_c if s else None,
            std_c=std, std_exact=use_raw, max_u_c=s.max_u_c if s else None, median_u_c=median_u,
            interval_s=intervals[c.name],
        ))
        if progress is not None:
            progress(j + 1, k, "reading")
    series = Series(t0_s, width, tuple(c.name for c in chans), mean, lo, hi, "raw" if use_raw else "rollup")
    events: list[EventRow] = []
    after = 0
    while len(events) < MAX_EVENTS:
        chunk = store.events(rid, after_id=after, limit=10_000)
        if not chunk:
            break
        events.extend(chunk)
        after = chunk[-1].id
    alarm_states = tuple(store.alarms(rid))
    return RunData(
        run=run, run_id=rid, config_text=text, config=cfg, config_problem=problem, config_table=table,
        channels=tuple(data), events=tuple(events), instruments=tuple(store.instruments(rid)),
        first_ms=first_ms, last_ms=last_ms, series=series, alarm_states=alarm_states,
    )


def refine_start(
    store: StoreReader, ch_id: int, t0_s: float, t1_s: float, outside: Callable[[np.ndarray], np.ndarray],
) -> float | None:
    """Time of the first raw reading in ``[t0_s, t1_s)`` for which ``outside`` is True (None: none)."""
    w = store.raw_window(ch_id, int(math.floor(t0_s * 1000)), int(math.ceil(t1_s * 1000)) - 1)
    t_ms, temp = w.t_ms, w.temperature_c
    if t_ms.size == 0:
        return None
    with np.errstate(invalid="ignore"):
        hit = np.flatnonzero(outside(temp))
    return None if hit.size == 0 else float(t_ms[hit[0]]) / 1000.0


def refine_end(
    store: StoreReader, ch_id: int, t0_s: float, t1_s: float, outside: Callable[[np.ndarray], np.ndarray],
) -> float | None:
    """Time of the first reading after the last one in ``[t0_s, t1_s)`` for which ``outside`` is True."""
    w = store.raw_window(ch_id, int(math.floor(t0_s * 1000)), int(math.ceil(t1_s * 1000)) - 1)
    t_ms, temp = w.t_ms, w.temperature_c
    if t_ms.size == 0:
        return None
    with np.errstate(invalid="ignore"):
        hit = np.flatnonzero(outside(temp))
    if hit.size == 0:
        return None
    k = int(hit[-1])
    return float(t_ms[k + 1]) / 1000.0 if k + 1 < t_ms.size else None
