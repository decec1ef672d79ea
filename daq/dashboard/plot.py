"""A time plot drawn in braille cells: series as lines (with their min/max envelope), levels as rules.

Pure: data in, lines of styled text out. Each character cell holds 2 × 4
dots (Unicode braille patterns, U+2800…U+28FF), so a 60-column plot has 120
points across. Several series in one cell merge their dots; each series ends
in its number, and the legend beside the plot names it, so they can be told
apart without colour. Levels (alarm limits) are rules of ``╌`` with their name
at the right; the planned set point is a dotted line.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from rich.text import Text

__all__ = ["BRAILLE_BASE", "PlotLevel", "PlotSeries", "render_plot", "y_limits"]

BRAILLE_BASE = 0x2800
# Unicode braille patterns: bit of each dot by (row 0…3, column 0…1)
_DOT_BITS = np.array([[0x01, 0x08], [0x02, 0x10], [0x04, 0x20], [0x40, 0x80]], dtype=np.int64)

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, eq=False)
class PlotSeries:
    """One line: times (ms) and values already in the display unit; ``lo``/``hi`` the bucket envelope."""

    tag: str
    t_ms: npt.NDArray[np.int64]
    mean: FloatArray
    lo: FloatArray
    hi: FloatArray
    style: str = ""
    dotted: bool = False


@dataclass(frozen=True)
class PlotLevel:
    """A horizontal rule at ``value`` (display unit), named at the right end."""

    value: float
    name: str
    style: str = ""


def y_limits(series: Sequence[PlotSeries], levels: Sequence[PlotLevel] = ()) -> tuple[float, float] | None:
    """The value range that shows every series and level, padded by 5 % (None when there is nothing)."""
    lo, hi = math.inf, -math.inf
    for s in series:
        with np.errstate(invalid="ignore"):
            if s.lo.size and np.any(np.isfinite(s.lo)):
                lo = min(lo, float(np.nanmin(s.lo)))
            if s.hi.size and np.any(np.isfinite(s.hi)):
                hi = max(hi, float(np.nanmax(s.hi)))
    for lev in levels:
        lo, hi = min(lo, lev.value), max(hi, lev.value)
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return None
    span = hi - lo
    pad = 0.05 * span if span > 0 else max(0.5, abs(hi) * 1e-3)
    return lo - pad, hi + pad


def _decimals(span: float) -> int:
    if span < 1:
        return 3
    if span < 10:
        return 2
    if span < 100:
        return 1
    return 0


def _columns(s: PlotSeries, t0: float, t1: float, nx: int) -> tuple[FloatArray, FloatArray]:
    """Per dot column: the lowest and highest value that falls in it (NaN where none)."""
    lo = np.full(nx, np.nan)
    hi = np.full(nx, np.nan)
    if s.t_ms.size == 0 or t1 <= t0:
        return lo, hi
    t = s.t_ms.astype(np.float64)
    ok = (t >= t0) & (t <= t1) & np.isfinite(s.lo) & np.isfinite(s.hi)
    if not np.any(ok):
        return lo, hi
    x = np.minimum(((t[ok] - t0) / (t1 - t0) * nx).astype(np.int64), nx - 1)
    cmin = np.full(nx, np.inf)
    cmax = np.full(nx, -np.inf)
    np.minimum.at(cmin, x, s.lo[ok])
    np.maximum.at(cmax, x, s.hi[ok])
    has = np.isfinite(cmin)
    lo[has] = cmin[has]
    hi[has] = cmax[has]
    return lo, hi


def _paint(grid: npt.NDArray[np.bool_], lo: FloatArray, hi: FloatArray, y0: float, y1: float,
           *, max_gap: int, dotted: bool) -> int | None:
    """Mark a series' dots on ``grid`` (rows top-down); returns the last dot row used, if any."""
    ny = grid.shape[0]
    scale = (ny - 1) / (y1 - y0)

    def row(v: float) -> int:
        return int(min(ny - 1, max(0, round((y1 - v) * scale))))

    cols = np.flatnonzero(np.isfinite(lo))
    last_row = None
    prev = None
    for c in cols.tolist():
        a, b = float(lo[c]), float(hi[c])
        if prev is not None and 1 < c - prev <= max_gap:
            # bridge a short gap with a straight line through the empty columns
            pa, pb = float(lo[prev]), float(hi[prev])
            pm, cm = (pa + pb) / 2, (a + b) / 2
            for k in range(prev + 1, c):
                v = pm + (cm - pm) * (k - prev) / (c - prev)
                if not dotted or k % 2 == 0:
                    grid[row(v), k] = True
        if prev is not None and c - prev <= max_gap:
            # join to the neighbour so a steep line has no holes
            a, b = min(a, float(hi[prev])), max(b, float(lo[prev]))
        r_top, r_bot = row(b), row(a)
        if not dotted or c % 2 == 0:
            grid[r_top:r_bot + 1, c] = True
        last_row = row(float(hi[c]) / 2 + float(lo[c]) / 2)
        prev = c
    return last_row


def _braille(grid: npt.NDArray[np.bool_]) -> npt.NDArray[np.int64]:
    """Dot grid (4·rows × 2·cols) to braille code points per cell."""
    ny, nx = grid.shape
    cells = grid.reshape(ny // 4, 4, nx // 2, 2).astype(np.int64)
    return (cells * _DOT_BITS[None, :, None, :]).sum(axis=(1, 3)) + BRAILLE_BASE


#: steps between time ticks, so that ticks fall on round clock times
_TICK_STEPS_MS = [s * 1000 for s in (1, 2, 5, 10, 15, 30)] + [m * 60_000 for m in (1, 2, 5, 10, 15, 30)] + [
    h * 3_600_000 for h in (1, 2, 3, 6, 12, 24, 48)] + [d * 86_400_000 for d in (7, 14, 28)]


def _round_ticks(t0: float, t1: float, max_ticks: int, origin: float = 0.0) -> list[float]:
    """Round times (``origin`` plus multiples of a step) inside [t0, t1], at most ``max_ticks`` of them."""
    span = t1 - t0
    for step in _TICK_STEPS_MS:
        if span / step <= max_ticks - 1:
            first = origin + math.ceil((t0 - origin) / step) * step
            return [float(t) for t in range(int(first), int(t1) + 1, step)]
    return []


def render_plot(
    series: Sequence[PlotSeries],
    *,
    width: int,
    height: int,
    t_from_ms: int,
    t_to_ms: int,
    levels: Sequence[PlotLevel] = (),
    y_range: tuple[float, float] | None = None,
    time_label: Callable[[int], str] = lambda t: str(t),
    empty_text: str = "no readings in this window",
    axis_style: str = "",
    tick_origin_ms: int = 0,
) -> list[Text]:
    """Draw the plot into ``height`` lines of ``width`` cells (axes and labels included)."""
    width = max(width, 20)
    height = max(height, 5)
    rng = y_range or y_limits(series, levels)
    y_label_w = 8
    plot_w = width - y_label_w - 1
    plot_h = height - 2
    lines: list[Text] = []
    if rng is None:
        blank = " " * width
        lines = [Text(blank) for _ in range(height)]
        mid = plot_h // 2
        lines[mid] = Text(f"{'':{y_label_w}} {empty_text}"[:width].ljust(width))
        return lines
    y0, y1 = rng
    if y1 <= y0:
        y1 = y0 + 1.0
    dec = _decimals(y1 - y0)
    nx, ny = plot_w * 2, plot_h * 4
    t0, t1 = float(t_from_ms), float(t_to_ms)
    codes = []
    ends: list[tuple[int, str, str]] = []
    for s in series:
        grid = np.zeros((ny, nx), dtype=bool)
        lo, hi = _columns(s, t0, t1, nx)
        have = np.flatnonzero(np.isfinite(lo))
        gaps = np.diff(have)
        max_gap = max(2, int(3 * np.median(gaps))) if gaps.size else 2
        last = _paint(grid, lo, hi, y0, y1, max_gap=max_gap, dotted=s.dotted)
        codes.append(_braille(grid))
        if last is not None and s.tag:
            ends.append((last // 4, s.tag, s.style))
    chars = np.full((plot_h, plot_w), " ", dtype=object)
    styles = np.full((plot_h, plot_w), "", dtype=object)
    level_rows = []
    for lev in levels:
        r = int(min(plot_h - 1, max(0, round((y1 - lev.value) / (y1 - y0) * (plot_h - 1)))))
        chars[r, :] = "╌"
        styles[r, :] = lev.style
        level_rows.append((r, lev))
    for s, code in zip(series, codes, strict=True):
        mask = code != BRAILLE_BASE
        for r, c in zip(*np.nonzero(mask), strict=True):
            prev = chars[r, c]
            if isinstance(prev, str) and len(prev) == 1 and BRAILLE_BASE <= ord(prev) <= BRAILLE_BASE + 0xFF:
                chars[r, c] = chr(ord(prev) | int(code[r, c]))
            else:
                chars[r, c] = chr(int(code[r, c]))
            styles[r, c] = s.style
    # each series' number after its newest point, where it lands inside the plot
    for row_cell, tag, style in ends:
        s_idx = [s.tag for s in series].index(tag)
        lo, _hi = _columns(series[s_idx], t0, t1, nx)
        have = np.flatnonzero(np.isfinite(lo))
        col = min(plot_w - 1, int(have[-1]) // 2 + 1) if have.size else plot_w - 1
        chars[row_cell, col] = tag[0]
        styles[row_cell, col] = f"bold {style}".strip()
    # level names last: a name must stay readable where a line crosses it
    for r, lev in level_rows:
        name = f" {lev.name} "[:plot_w]
        start = max(0, plot_w - len(name))
        for k, ch in enumerate(name):
            chars[r, start + k] = ch
            styles[r, start + k] = lev.style
    tick_rows = {0: y1, plot_h - 1: y0}
    if plot_h >= 7:
        tick_rows[(plot_h - 1) // 2] = y1 - (y1 - y0) * ((plot_h - 1) // 2) / (plot_h - 1)
    for r in range(plot_h):
        label = f"{tick_rows[r]:.{dec}f}" if r in tick_rows else ""
        line = Text(f"{label:>{y_label_w}}", style=axis_style)
        line.append("┤" if r in tick_rows else "│", style=axis_style)
        run_chars: list[str] = []
        run_style = None
        for c in range(plot_w):
            st = styles[r, c]
            if st != run_style and run_chars:
                line.append("".join(run_chars), style=run_style or "")
                run_chars = []
            run_style = st
            run_chars.append(chars[r, c])
        if run_chars:
            line.append("".join(run_chars), style=run_style or "")
        lines.append(line)
    # the time axis: ticks on round times (or evenly spread), labelled by the caller's format
    max_ticks = max(2, min(6, plot_w // 14))
    tick_times = _round_ticks(t0, t1, max_ticks, float(tick_origin_ms))
    if len(tick_times) < 2:
        n_ticks = 2 + max(0, min(4, plot_w // 18 - 1))
        tick_times = [t0 + (t1 - t0) * i / (n_ticks - 1) for i in range(n_ticks)]
    tick_cols = [min(plot_w - 1, max(0, round((t - t0) / (t1 - t0) * (plot_w - 1)))) for t in tick_times]
    axis = ["─"] * plot_w
    for c in tick_cols:
        axis[c] = "┴"
    lines.append(Text(" " * y_label_w + "└" + "".join(axis), style=axis_style))
    label_row = [" "] * (plot_w + y_label_w + 1)
    for c, t in zip(tick_cols, tick_times, strict=True):
        text = time_label(int(t))
        pos = y_label_w + 1 + c
        start = pos - len(text) // 2
        start = max(0, min(len(label_row) - len(text), start))
        if all(ch == " " for ch in label_row[max(0, start - 1): start + len(text) + 1]):
            label_row[start: start + len(text)] = list(text)
    lines.append(Text("".join(label_row), style=axis_style))
    return lines
