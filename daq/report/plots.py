"""The report's plots as PNG bytes (matplotlib's Agg canvas directly: no pyplot, no global state).

Each function takes the analysed data and returns one PNG, or None when the
plot does not apply (no cycles in a soak, no deviation to show).
"""

from __future__ import annotations

import io
import math
from collections.abc import Sequence

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from soaklog.report.conformance import Conformance
from soaklog.profile import Band
from soaklog.kinds.profiles.cycle import CycleProfile
from soaklog.kinds.profiles.soak import SoakProfile
from soaklog.report.series import FloatArray, Series, nan_mean_rows

__all__ = ["MAX_PLOT_POINTS", "by_cycle_png", "closeups_png", "cycle_overlay_png", "overview_png", "spread_png"]

MAX_PLOT_POINTS = 3000
_DEV_COLOUR = "#c0392b"
_BAND_COLOUR = "#2e86c1"
_DPI = 100


def _png(fig: Figure) -> bytes:
    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=_DPI)
    return buf.getvalue()


def _new(width_in: float = 11.0, height_in: float = 4.6) -> Figure:
    fig = Figure(figsize=(width_in, height_in), layout="constrained")
    return fig


def _time_axis(series: Series, t0_s: float) -> tuple[float, str]:
    """Scale and label for a time axis counted from ``t0_s``."""
    span = series.end_s - t0_s
    if span <= 3 * 3600:
        return 60.0, "minutes from the first reading"
    if span <= 7 * 86400:
        return 3600.0, "hours from the first reading"
    return 86400.0, "days from the first reading"


def _decimate(values: FloatArray, factor: int, how: str) -> FloatArray:
    """Combine ``factor`` consecutive rows (mean, min or max over the finite ones)."""
    if factor <= 1:
        return values
    n = values.shape[0]
    pad = (-n) % factor
    shape = (-1, factor) + values.shape[1:]
    fill = np.nan
    v = np.concatenate([values, np.full((pad,) + values.shape[1:], fill)], axis=0).reshape(shape)
    ok = np.isfinite(v)
    cnt = ok.sum(axis=1)
    if how == "mean":
        s = np.where(ok, v, 0.0).sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(cnt > 0, s / np.where(cnt > 0, cnt, 1), np.nan)
    if how == "min":
        r = np.where(ok, v, np.inf).min(axis=1)
    else:
        r = np.where(ok, v, -np.inf).max(axis=1)
    return np.where(cnt > 0, r, np.nan)


def _colours(n: int) -> list[str]:
    from matplotlib import colormaps

    cmap = colormaps["tab10" if n <= 10 else "tab20"]
    return [cmap(i % cmap.N) for i in range(n)]


def _bands(profile: CycleProfile | SoakProfile | None) -> list[Band]:
    if isinstance(profile, CycleProfile):
        return [profile.high, profile.low]
    if isinstance(profile, SoakProfile):
        return [profile.band]
    return []


def _shade_bands(ax: object, bands: Sequence[Band]) -> None:
    for b in bands:
        ax.axhspan(b.lo_c, b.hi_c, color=_BAND_COLOUR, alpha=0.12, lw=0)  # type: ignore[attr-defined]
        ax.axhline(b.nominal_c, color=_BAND_COLOUR, lw=0.8, ls="--", alpha=0.7)  # type: ignore[attr-defined]


def overview_png(series: Series, conformance: Conformance | None, *, label_first: int = 30) -> bytes:
    """Every channel over the whole run, the profile's bands shaded, each deviation marked and numbered."""
    fig = _new(11.0, 5.2)
    ax = fig.add_subplot(1, 1, 1)
    t0 = series.t0_s
    scale, xlabel = _time_axis(series, t0)
    factor = max(1, math.ceil(series.n / MAX_PLOT_POINTS))
    x = (_decimate(series.t_mid()[:, None], factor, "mean")[:, 0] - t0) / scale
    mean = _decimate(series.mean, factor, "mean")
    colours = _colours(len(series.names))
    for c, name in enumerate(series.names):
        ax.plot(x, mean[:, c], lw=0.9, color=colours[c], label=name)
    if conformance is not None:
        _shade_bands(ax, _bands(conformance.profile))
        _mark_deviations(ax, conformance, t0, scale, series.width_s, label_first)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("temperature (°C)")
    ax.set_title("All channels over the run" + ("; red: deviations, numbered as in the table (shaded: out of "
                                                  "band or no data; bar at the top: a short dwell, a ramp)"
                                                  if conformance is not None and conformance.deviations else ""),
                 fontsize=10, loc="left", pad=22)
    ax.grid(True, lw=0.3, alpha=0.5)
    if len(series.names) <= 16:
        ax.legend(fontsize=7, ncols=min(4, len(series.names)), loc="best", framealpha=0.8)
    return _png(fig)


def _numbers(nums: Sequence[int]) -> str:
    """1, 2, 3, 7 → "1–3, 7" (at most a few groups)."""
    groups: list[list[int]] = []
    for n in nums:
        if groups and n == groups[-1][-1] + 1:
            groups[-1].append(n)
        else:
            groups.append([n])
    parts = [f"{g[0]}–{g[-1]}" if len(g) > 2 else ", ".join(map(str, g)) for g in groups]
    return ", ".join(parts[:3]) + ("…" if len(parts) > 3 else "")


def _mark_deviations(ax: object, conformance: Conformance, t0: float, scale: float, width_s: float,
                     label_first: int) -> None:
    """Excursions and gaps as shaded spans; longer findings (a short dwell, a ramp) as a bar along the top."""
    groups: dict[tuple[float, float, bool], list[int]] = {}
    for k, d in enumerate(conformance.deviations):
        a = (d.start_s - t0) / scale
        b = ((d.end_s if d.end_s is not None else d.start_s) - t0) / scale
        b = max(b, a + width_s / scale)
        local = d.kind in ("excursion", "no_data")
        groups.setdefault((round(a, 6), round(b, 6), local), []).append(k + 1)
    for n, ((a, b, local), nums) in enumerate(sorted(groups.items())):
        if local:
            ax.axvspan(a, b, color=_DEV_COLOUR, alpha=0.18, lw=0)  # type: ignore[attr-defined]
        else:
            ax.axvspan(a, b, ymin=0.965, ymax=1.0, color=_DEV_COLOUR, alpha=0.55, lw=0)  # type: ignore[attr-defined]
        if n < label_first:
            ax.annotate(_numbers(nums), xy=(a, 1.0), xycoords=("data", "axes fraction"),  # type: ignore[attr-defined]
                        xytext=(0, 2 + 8 * (n % 2)), textcoords="offset points", ha="left", va="bottom",
                        fontsize=7, color=_DEV_COLOUR)


def cycle_overlay_png(sample: Series, conformance: Conformance, *, max_cycles: int = 400) -> bytes | None:
    """Each cycle's reference (mean of the sample channels) against the time since the cycle began."""
    if not isinstance(conformance.profile, CycleProfile) or not conformance.cycles:
        return None
    ref = nan_mean_rows(sample.mean)
    t = sample.t_mid()
    rows = list(conformance.cycles)
    if len(rows) > max_cycles:
        pick = np.unique(np.linspace(0, len(rows) - 1, max_cycles).round().astype(int))
        rows = [rows[i] for i in pick]
    fig = _new(11.0, 4.8)
    ax = fig.add_subplot(1, 1, 1)
    cmap_n = max(1, len(rows) - 1)
    from matplotlib import colormaps

    cmap = colormaps["viridis"]
    arrival = {r.cycle: r.t_end_s for r in conformance.ramps if r.direction == "up" and r.t_end_s is not None}
    for k, r in enumerate(rows):
        t_ref = arrival.get(r.cycle)
        if t_ref is None:
            continue
        a = sample.index_of(r.start_s)
        b = sample.index_of(r.end_s) + 1
        if b - a < 2:
            continue
        ax.plot((t[a:b] - t_ref) / 60.0, ref[a:b], lw=0.8, alpha=0.7 if len(rows) < 50 else 0.35,
                color=cmap(k / cmap_n), label=f"cycle {r.cycle}" if len(rows) <= 8 else None)
    _shade_bands(ax, _bands(conformance.profile))
    ax.set_xlabel("minutes from reaching the high extreme (the 90 % point of the ramp up)")
    ax.set_ylabel("mean of the sample channels (°C)")
    note = f" ({len(rows)} of {len(conformance.cycles)} shown, evenly spread)" if len(rows) < len(conformance.cycles) else ""
    ax.set_title(f"Cycles overlaid, first (dark) to last (light){note}", fontsize=10, loc="left")
    ax.grid(True, lw=0.3, alpha=0.5)
    if len(rows) <= 8:
        ax.legend(fontsize=7, loc="best")
    return _png(fig)


def spread_png(series: Series, sample_names: Sequence[str], conformance: Conformance | None) -> bytes:
    """The spread between channels (highest minus lowest bucket mean) over the run."""
    fig = _new(11.0, 4.0)
    ax = fig.add_subplot(1, 1, 1)
    t0 = series.t0_s
    scale, xlabel = _time_axis(series, t0)
    factor = max(1, math.ceil(series.n / MAX_PLOT_POINTS))
    x = (_decimate(series.t_mid()[:, None], factor, "mean")[:, 0] - t0) / scale

    def spread(s: Series) -> FloatArray:
        ok = np.isfinite(s.mean)
        hi = np.where(ok, s.mean, -np.inf).max(axis=1)
        lo = np.where(ok, s.mean, np.inf).min(axis=1)
        return np.where(ok.sum(axis=1) >= 2, hi - lo, np.nan)

    all_spread = _decimate(spread(series)[:, None], factor, "max")[:, 0]
    ax.plot(x, all_spread, lw=0.9, color="#34495e", label=f"all {len(series.names)} channels")
    if tuple(sample_names) != series.names and len(sample_names) >= 2:
        s = series.columns(sample_names)
        ax.plot(x, _decimate(spread(s)[:, None], factor, "max")[:, 0], lw=0.9, color="#e67e22",
                label=f"the {len(sample_names)} sample channels")
    if conformance is not None:
        for d in conformance.deviations:
            ax.axvline((d.start_s - t0) / scale, color=_DEV_COLOUR, lw=0.5, alpha=0.5)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("spread between channels (K)")
    ax.set_title("Spread across channels (highest minus lowest at each moment; large during ramps)",
                 fontsize=10, loc="left")
    ax.grid(True, lw=0.3, alpha=0.5)
    ax.legend(fontsize=7, loc="best")
    return _png(fig)


def by_cycle_png(conformance: Conformance) -> bytes | None:
    """Dwell time within tolerance and ramp rate of every cycle against what the profile asks."""
    p = conformance.profile
    if not isinstance(p, CycleProfile) or not conformance.cycles:
        return None
    rows = conformance.cycles
    c = np.asarray([r.cycle for r in rows], dtype=np.float64)
    fig = _new(11.0, 5.4)
    ax1 = fig.add_subplot(2, 1, 1)
    hi = np.asarray([np.nan if r.dwell_high_s is None else r.dwell_high_s / 60 for r in rows], dtype=np.float64)
    lo = np.asarray([np.nan if r.dwell_low_s is None else r.dwell_low_s / 60 for r in rows], dtype=np.float64)
    marker = "o" if len(rows) <= 60 else None
    ax1.plot(c, hi, marker=marker, ms=3, lw=0.8, color="#c0392b", label=f"at {p.high.nominal_c:g} °C")
    ax1.plot(c, lo, marker=marker, ms=3, lw=0.8, color="#2471a3", label=f"at {p.low.nominal_c:g} °C")
    ax1.axhline(p.dwell_high_s / 60, color="#c0392b", ls="--", lw=0.8)
    if p.dwell_low_s != p.dwell_high_s:
        ax1.axhline(p.dwell_low_s / 60, color="#2471a3", ls="--", lw=0.8)
    ax1.set_ylabel("within tolerance (min)")
    ax1.set_ylim(bottom=0)
    from matplotlib.ticker import MaxNLocator

    ax1.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax1.set_title("Each cycle: dwell time with every sample channel within tolerance (dashed: required)",
                  fontsize=10, loc="left")
    ax1.grid(True, lw=0.3, alpha=0.5)
    ax1.legend(fontsize=7, loc="best")
    ax2 = fig.add_subplot(2, 1, 2, sharex=ax1)
    up = np.asarray([np.nan if r.ramp_up_k_per_min is None else r.ramp_up_k_per_min for r in rows], dtype=np.float64)
    dn = np.asarray([np.nan if r.ramp_down_k_per_min is None else r.ramp_down_k_per_min for r in rows], dtype=np.float64)
    ax2.plot(c, up, marker=marker, ms=3, lw=0.8, color="#c0392b", label="ramp up")
    ax2.plot(c, dn, marker=marker, ms=3, lw=0.8, color="#2471a3", label="ramp down")
    if p.ramp_k_per_min is not None:
        tol = p.ramp_tolerance_k_per_min or 0.0
        ax2.axhspan(p.ramp_k_per_min - tol, p.ramp_k_per_min + tol, color=_BAND_COLOUR, alpha=0.12, lw=0)
        ax2.axhline(p.ramp_k_per_min, color=_BAND_COLOUR, ls="--", lw=0.8)
    ax2.set_xlabel("cycle")
    ax2.set_ylabel("10–90 % rate (K/min)")
    ax2.set_title("Each cycle: ramp rate of the mean of the sample channels (band: allowed)", fontsize=10, loc="left")
    ax2.grid(True, lw=0.3, alpha=0.5)
    ax2.legend(fontsize=7, loc="best")
    return _png(fig)


def closeups_png(series: Series, conformance: Conformance, *, panels: int = 4) -> bytes | None:
    """The first deviations up close: the channel concerned, its band, the deviation shaded."""
    candidates = [d for d in conformance.deviations if d.channel in series.names]
    # the first of each kind, then the next ones in time
    devs: list = []
    for d in candidates:
        if d.kind not in {x.kind for x in devs}:
            devs.append(d)
    for d in candidates:
        if len(devs) >= panels:
            break
        if d not in devs:
            devs.append(d)
    devs = sorted(devs[:panels], key=lambda d: d.start_s)
    if not devs:
        return None
    fig = _new(11.0, 2.6 * len(devs) + 0.4)
    t_mid = series.t_mid()
    for k, d in enumerate(devs):
        ax = fig.add_subplot(len(devs), 1, k + 1)
        end = d.end_s if d.end_s is not None else d.start_s + series.width_s
        pad = max(600.0, 2.0 * (end - d.start_s), 10 * series.width_s)
        a = series.index_of(d.start_s - pad)
        b = series.index_of(end + pad) + 1
        c = series.names.index(d.channel)
        x = (t_mid[a:b] - d.start_s) / 60.0
        ax.fill_between(x, series.lo[a:b, c], series.hi[a:b, c], color="#7f8c8d", alpha=0.3, lw=0,
                        label="lowest…highest in each bucket")
        ax.plot(x, series.mean[a:b, c], lw=1.0, color="#2c3e50", label=d.channel)
        if d.band is not None:
            ax.axhspan(d.band.lo_c, d.band.hi_c, color=_BAND_COLOUR, alpha=0.12, lw=0)
        ax.axvspan(0.0, max((end - d.start_s) / 60.0, series.width_s / 60.0), color=_DEV_COLOUR, alpha=0.2, lw=0)
        idx = conformance.deviations.index(d) + 1
        ax.set_title(f"deviation {idx}: {d.message}", fontsize=8, loc="left")
        ax.set_ylabel("°C")
        ax.grid(True, lw=0.3, alpha=0.5)
        ax.legend(fontsize=7, loc="best")
    fig.axes[-1].set_xlabel("minutes from the start of the deviation")
    return _png(fig)
