"""The braille time plot."""

from __future__ import annotations

import numpy as np
import pytest

from soaklog.dashboard.plot import (
    BRAILLE_BASE,
    PlotLevel,
    PlotSeries,
    render_plot,
    y_limits,
)


def _series(t, v, tag="1"):
    t = np.asarray(t, dtype=np.int64)
    v = np.asarray(v, dtype=np.float64)
    return PlotSeries(tag, t, v, v, v)


def _body(lines, y_label_w=8):
    """The plot area of each line (without axis labels and the two axis lines at the bottom)."""
    return [ln.plain[y_label_w + 1:] for ln in lines[:-2]]


def test_braille_cells_use_the_unicode_dot_numbering():
    # The Unicode Standard, 15.0, ch. 21.3 (Braille Patterns): U+2800 + bits, dot 1 = 0x01, dot 4 = 0x08,
    # dot 7 = 0x40, dot 8 = 0x80. A flat line at the top dot row sets dots 1 and 4 (⠉); at the bottom 7 and 8 (⣀).
    top = render_plot([_series([0, 1000], [10.0, 10.0], tag="")], width=29, height=7, t_from_ms=0, t_to_ms=1000,
                      y_range=(0.0, 10.0))
    assert set(_body(top)[0].strip()) == {chr(BRAILLE_BASE + 0x01 + 0x08)}
    bottom = render_plot([_series([0, 1000], [0.0, 0.0], tag="")], width=29, height=7, t_from_ms=0, t_to_ms=1000,
                         y_range=(0.0, 10.0))
    assert set(_body(bottom)[-1].strip()) == {chr(BRAILLE_BASE + 0x40 + 0x80)}


def test_plot_has_the_requested_size():
    lines = render_plot([_series(np.arange(0, 600_000, 1000), np.sin(np.arange(600)))], width=70, height=15,
                        t_from_ms=0, t_to_ms=600_000, time_label=lambda t: f"{t // 60000}m")
    assert len(lines) == 15
    assert all(len(ln.plain) <= 70 for ln in lines)


def test_a_rising_line_climbs_from_bottom_left_to_top_right():
    lines = render_plot([_series([0, 1000], [0.0, 10.0], tag="")], width=40, height=12, t_from_ms=0, t_to_ms=1000,
                        y_range=(0.0, 10.0))
    body = _body(lines)
    first_col = [i for i, row in enumerate(body) if row[0] != " "]
    last_col = [i for i, row in enumerate(body) if row.rstrip() and row[len(row.rstrip()) - 1] != " "
                and len(row.rstrip()) == len(body[0])]
    assert first_col and max(first_col) == len(body) - 1
    assert last_col == [] or min(last_col) == 0
    # every column has ink: the line has no holes
    width = len(body[0])
    assert all(any(row[c] != " " for row in body) for c in range(width))


def test_a_level_is_a_rule_with_its_name():
    lines = render_plot([_series([0, 1000], [20.0, 21.0])], width=50, height=12, t_from_ms=0, t_to_ms=1000,
                        levels=[PlotLevel(30.0, "high 30.0")])
    text = "\n".join(ln.plain for ln in lines)
    assert "high 30.0" in text
    assert "╌" in text


def test_series_end_in_their_number():
    lines = render_plot([_series([0, 500], [1.0, 2.0], tag="1"), _series([0, 500], [5.0, 6.0], tag="2")],
                        width=50, height=12, t_from_ms=0, t_to_ms=1000)
    text = "\n".join(_body(lines))
    assert "1" in text and "2" in text


def test_nothing_to_draw_says_so():
    lines = render_plot([], width=50, height=10, t_from_ms=0, t_to_ms=1000)
    assert any("no readings" in ln.plain for ln in lines)


def test_y_limits_pad_the_range_by_five_percent():
    lo, hi = y_limits([_series([0, 1], [0.0, 100.0])])
    assert (lo, hi) == pytest.approx((-5.0, 105.0))
    lo, hi = y_limits([_series([0, 1], [0.0, 100.0])], [PlotLevel(130.0, "x")])
    assert hi == pytest.approx(130.0 + 6.5)
    assert y_limits([_series([0, 1], [np.nan, np.nan])]) is None


def test_time_ticks_fall_on_round_clock_times():
    # 10 minutes from 10:50:00 UTC; ticks every 2 or 5 minutes fall on whole minutes
    t0 = 1_800_000_000_000 + (2 * 3600 + 50 * 60) * 1000
    seen = []
    render_plot([_series([t0, t0 + 600_000], [1.0, 2.0])], width=90, height=10, t_from_ms=t0, t_to_ms=t0 + 600_000,
                time_label=lambda t: seen.append(t) or "x")
    assert len(seen) >= 3
    assert all(t % 60_000 == 0 for t in seen)
