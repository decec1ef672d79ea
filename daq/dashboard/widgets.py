"""The dashboard's widgets. Each takes records (data), never a store, and keeps its own DEFAULT_CSS."""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from datetime import UTC, datetime
from typing import ClassVar

import numpy as np
from rich.text import Text
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widget import Widget
from textual.widgets import DataTable, OptionList, Static
from textual.widgets.option_list import Option

from soaklog.dashboard.derive import (
    MARK,
    alarmed_channels,
    channel_condition,
    run_state,
    verdict,
)
from soaklog.dashboard.plan import RunPlan
from soaklog.dashboard.plot import PlotLevel, PlotSeries, render_plot
from soaklog.dashboard.records import (
    WINDOW_TITLE,
    ActionRow,
    AlarmRow,
    ChannelRow,
    EventRow,
    InstrumentRow,
    Snapshot,
    TrendSeries,
    WindowName,
)
from soaklog.dashboard.table import LiveTable
from soaklog.dashboard.units import (
    DIFFERENCE_SYMBOL,
    SYMBOL,
    Unit,
    fmt_age,
    fmt_difference,
    fmt_elapsed,
    fmt_hours,
    fmt_rate,
    fmt_temperature,
    parse_utc_ms,
    to_unit,
)

__all__ = [
    "ATTENTION",
    "SAFETY_CAUTION",
    "SAFETY_CAUTION_SHORT",
    "SERIES_STYLES",
    "AlarmBoard",
    "CautionLine",
    "ChannelBoard",
    "ChannelPicker",
    "EventLog",
    "InstrumentBoard",
    "InstrumentDetail",
    "KeyLine",
    "RequestLine",
    "RunHeader",
    "TrendPanel",
    "utc_clock",
]

SAFETY_CAUTION = (
    "Software alarms are not a safety device: every chamber needs its own independent "
    "over-temperature cut-out, set and tested per its maker's manual."
)
#: the same caution where only 80 columns are there
SAFETY_CAUTION_SHORT = "Software alarms are not a safety device: use the chamber's own cut-out."

# our own palette: amber for what needs a look, sea green for all clear; words and
# markers carry the same meaning for a monochrome terminal
ATTENTION = "bold #f0a030"
MARKER_STYLE = "bold reverse #f0a030"
CLEAR = "bold #58b89c"
QUIET = "#8a8f98"
SERIES_STYLES = ("#6cc4e0", "#f0c848", "#e07ab8", "#96d070", "#b8a0f8", "#ff9a70")
SETPOINT_STYLE = "#b0b0b0"
LIMIT_STYLE = "#f06a5a"


def utc_clock(t_ms: int | None, *, now_ms: int | None = None) -> str:
    """``HH:MM:SS`` (UTC) for a time today, ``MM-DD HH:MM`` for another day, ``—`` for none."""
    if t_ms is None:
        return "—"
    dt = datetime.fromtimestamp(t_ms / 1000.0, tz=UTC)
    if now_ms is not None:
        today = datetime.fromtimestamp(now_ms / 1000.0, tz=UTC).date()
        if dt.date() != today:
            return dt.strftime("%m-%d %H:%M")
    return dt.strftime("%H:%M:%S")


def _cut(text: str, width: int) -> str:
    return text if len(text) <= width else text[: max(0, width - 1)] + "…"


def _cut_left(text: str, width: int) -> str:
    return text if len(text) <= width else "…" + text[-(width - 1):]


# ---------------------------------------------------------------- frame


class RunHeader(Static):
    """Station, run, state, elapsed and planned time, the plan's phase, the file, and the verdict."""

    DEFAULT_CSS = """
    RunHeader { height: 4; padding: 0 1; background: $boost; }
    """

    def __init__(self, *, note: str = "", path: str | None = None, **kw: object) -> None:
        super().__init__("", **kw)  # type: ignore[arg-type]
        self.note = note
        self.path = path
        self._last: tuple[object, ...] = ()

    def show(self, snap: Snapshot, unit: Unit) -> None:
        w = max(40, self.size.width - 2 if self.size.width else 78)
        run = snap.run
        state, why = run_state(snap)
        plan = run.plan
        line1 = Text()
        line1.append(run.station or "station ?", style="bold")
        line1.append(f"  run {run.run_id}: ")
        line1.append(_cut(run.name or "(unnamed)", max(10, w - len(run.station) - 22)))
        line1.append("  ")
        line1.append(f"[{state}]", style=CLEAR if state == "LIVE" else ATTENTION)
        if why:
            line1.append(f" {why}", style=QUIET)

        elapsed_s = None if run.started_ms is None else (snap.now_ms - run.started_ms) / 1000.0
        line2 = Text(f"elapsed {fmt_elapsed(elapsed_s)}")
        if plan.planned_duration_s:
            pct = 100.0 * (elapsed_s or 0.0) / plan.planned_duration_s
            line2.append(f" of {fmt_hours(plan.planned_duration_s)} planned ({pct:.1f} %)")
        line2.append("   file ", style=QUIET)
        line2.append(_cut_left(self.path or run.database, max(12, w - len(line2.plain))))

        prof = plan.profile
        line3 = Text("plan ", style=QUIET)
        if prof is not None and elapsed_s is not None:
            phase, cycle = prof.phase(elapsed_s)
            sp = float(prof.setpoint_c(elapsed_s))
            line3.append(phase, style="bold")
            if prof.kind == "cycle":
                line3.append(f" · cycle {cycle} of {prof.cycles}")
            line3.append(f" · set point {fmt_temperature(sp, unit, decimals=1)} {SYMBOL[unit]}")
        else:
            line3.append("no [profile] in the run's configuration", style=QUIET)
        if self.note:
            line3.append(f"   {self.note}", style=QUIET)

        v = verdict(snap)
        line4 = Text()
        if v.healthy:
            line4.append("   ALL CLEAR ", style=CLEAR)
        else:
            line4.append(f"{MARK}", style=MARKER_STYLE)
            line4.append(" ")
        line4.append(v.text, style="" if v.healthy else ATTENTION)
        for line in (line1, line2, line3, line4):
            line.truncate(w, overflow="ellipsis")
        key = (line1.plain, line2.plain, line3.plain, line4.plain, w)
        if key != self._last:
            self._last = key
            self.update(Text("\n").join([line1, line2, line3, line4]), layout=False)


class CautionLine(Static):
    """The standing safety caution."""

    DEFAULT_CSS = """
    CautionLine { height: 1; padding: 0 1; color: $text-muted; }
    """

    def __init__(self, **kw: object) -> None:
        super().__init__(SAFETY_CAUTION_SHORT, **kw)  # type: ignore[arg-type]

    def on_resize(self) -> None:
        full = self.size.width >= len(SAFETY_CAUTION)
        self.update(SAFETY_CAUTION if full else SAFETY_CAUTION_SHORT)


class KeyLine(Static):
    """One line of the keys that work here (the help screen lists them all)."""

    DEFAULT_CSS = """
    KeyLine { height: 1; padding: 0 1; background: $boost; }
    """

    def __init__(self, keys: Sequence[tuple[str, str]], **kw: object) -> None:
        text = Text()
        for i, (k, what) in enumerate(keys):
            if i:
                text.append("  ")
            text.append(k, style="bold reverse")
            text.append(f" {what}")
        super().__init__(text, **kw)  # type: ignore[arg-type]


# ---------------------------------------------------------------- channels


_CH_NARROW = ("mark", "label", "temp", "u", "status", "rate", "min", "max", "age")
_CH_WIDE = ("mark", "label", "name", "instrument", "temp", "u", "status", "rate", "min", "max", "age", "at", "raw")


class ChannelBoard(LiveTable):
    """Every channel: value, uncertainty, status, rate, min/max since the start, age of the last good reading."""

    DEFAULT_CSS = """
    ChannelBoard { height: 1fr; }
    """

    WIDE_AT = 120

    def __init__(self, **kw: object) -> None:
        super().__init__(**kw)
        self._layout: tuple[object, ...] = ()

    @property
    def highlighted_channel(self) -> str | None:
        return self.highlighted_key

    def _column_spec(self, unit: Unit, label_w: int, wide: bool) -> list[tuple[str, str, int]]:
        d = DIFFERENCE_SYMBOL[unit]
        cols = [("mark", "", 3), ("label", " Channel", label_w + 2)]
        if wide:
            cols += [("name", " Id", 15), ("instrument", " On", 9)]
        cols += [
            ("temp", f"{SYMBOL[unit]:>8}", 9), ("u", f"{'±U ' + d:>6}", 7), ("status", " Status", 10),
            ("rate", f"{d + '/min':>7}", 8), ("min", f"{'min':>7}", 8), ("max", f"{'max':>7}", 8),
            ("age", f"{'age':>6}", 7),
        ]
        if wide:
            cols += [("at", " Read (UTC)", 12), ("raw", "  Raw", 14)]
        return cols

    def show(self, snap: Snapshot, unit: Unit) -> None:
        width = self.size.width or 80
        wide = width >= self.WIDE_AT
        fixed = sum(w for k, _h, w in self._column_spec(unit, 0, wide) if k != "label") + 2
        longest = max((len(c.label) for c in snap.channels), default=8)
        label_w = max(8, min(28 if wide else 20, longest, width - fixed - 1))
        layout = (unit, label_w, wide)
        if layout != self._layout:
            self._layout = layout
            self.set_columns([(k, Text(h), w) for k, h, w in self._column_spec(unit, label_w, wide)])
        alarmed = alarmed_channels(snap)
        self.set_rows([(c.name, self._row(c, snap, unit, label_w, wide, alarmed)) for c in snap.channels])

    def _row(self, c: ChannelRow, snap: Snapshot, unit: Unit, label_w: int, wide: bool,
             alarmed: set[str]) -> dict[str, Text]:
        cond = channel_condition(c, snap.now_ms, snap.run.plan, alarmed=c.name in alarmed)
        style = ATTENTION if cond.abnormal else ""
        age = None if c.last_ok_ms is None else (snap.now_ms - c.last_ok_ms) / 1000.0

        def num(s: str, w: int) -> Text:
            return Text(s.rjust(w), style=style)

        out = {
            "mark": Text(f"{cond.marker:2}", style=MARKER_STYLE if cond.abnormal else ""),
            "label": Text(" " + _cut(c.label, label_w), style=f"bold {style}".strip() if cond.abnormal else ""),
            "temp": num(fmt_temperature(c.temperature_c, unit), 8),
            "u": num(fmt_difference(c.uncertainty_c, unit), 6),
            "status": Text(" " + _cut(cond.word, 9), style=style),
            "rate": num(fmt_rate(c.rate_k_per_min, unit), 7),
            "min": num(fmt_temperature(c.min_c, unit, decimals=2), 7),
            "max": num(fmt_temperature(c.max_c, unit, decimals=2), 7),
            "age": num(fmt_age(age), 6),
        }
        if wide:
            out["name"] = Text(" " + _cut(c.name, 14), style=style)
            out["instrument"] = Text(" " + _cut(c.instrument, 8), style=style)
            out["at"] = Text(" " + utc_clock(c.t_ms, now_ms=snap.now_ms), style=style)
            raw = "—" if c.raw is None else f"{c.raw:.4f} {c.raw_unit}"
            out["raw"] = Text(_cut(raw, 13).rjust(13), style=style)
        return out


# ---------------------------------------------------------------- trends


def _time_label(window: WindowName, run_start_ms: int | None) -> Callable[[int], str]:
    if window == "run":
        def label(t: int) -> str:
            if run_start_ms is None:
                return utc_clock(t)
            h = (t - run_start_ms) / 3_600_000
            if abs(h) < 1e-9:
                return "start"
            return f"+{round(h)} h" if abs(h - round(h)) < 1e-6 else f"+{h * 60:.0f} min"
        return label
    if window == "24h":
        return lambda t: datetime.fromtimestamp(t / 1000.0, tz=UTC).strftime("%d %H:%M")
    if window == "1h":
        return lambda t: datetime.fromtimestamp(t / 1000.0, tz=UTC).strftime("%H:%M")
    return lambda t: datetime.fromtimestamp(t / 1000.0, tz=UTC).strftime("%H:%M:%S")


class TrendPanel(Widget):
    """The trend of the chosen channels over the chosen window, with the planned set point and alarm limits."""

    DEFAULT_CSS = """
    TrendPanel { width: 1fr; height: 1fr; min-height: 8; padding: 0 1 0 0; }
    """

    def __init__(self, **kw: object) -> None:
        super().__init__(**kw)  # type: ignore[arg-type]
        self.series: tuple[TrendSeries, ...] = ()
        self.window: WindowName = "10min"
        self.unit: Unit = "C"
        self.plan = RunPlan()
        self.run_start_ms: int | None = None
        self.t_from_ms: int | None = None
        self.t_to_ms: int | None = None
        self.fit_all = True
        self._cache: tuple[object, list[Text]] | None = None

    def show(self, series: Sequence[TrendSeries], *, window: WindowName, unit: Unit, plan: RunPlan,
             run_start_ms: int | None, t_from_ms: int | None, t_to_ms: int | None, fit_all: bool = True) -> None:
        self.series = tuple(series)
        self.window, self.unit, self.plan = window, unit, plan
        self.run_start_ms, self.t_from_ms, self.t_to_ms = run_start_ms, t_from_ms, t_to_ms
        self.fit_all = fit_all
        self._cache = None
        self.refresh()

    @property
    def data_range_ms(self) -> tuple[int, int] | None:
        """The first and last time stamp plotted (None when nothing is)."""
        ts = [s.t_ms for s in self.series if s.t_ms.size]
        if not ts:
            return None
        return int(min(int(t[0]) for t in ts)), int(max(int(t[-1]) for t in ts))

    def _legend(self, width: int) -> list[Text]:
        lines = []
        sym = SYMBOL[self.unit]
        for i, s in enumerate(self.series):
            style = SERIES_STYLES[i % len(SERIES_STYLES)]
            line = Text()
            line.append(f"{i + 1} ", style=f"bold reverse {style}")
            line.append(f" {s.label}", style=style)
            with np.errstate(invalid="ignore"):
                good = np.isfinite(s.mean_c)
            if np.any(good):
                last = float(s.mean_c[good][-1])
                lo = float(np.nanmin(s.min_c))
                hi = float(np.nanmax(s.max_c))
                line.append(f"  now {fmt_temperature(last, self.unit, decimals=2)}  "
                            f"min {fmt_temperature(lo, self.unit, decimals=2)}  "
                            f"max {fmt_temperature(hi, self.unit, decimals=2)} {sym}")
            else:
                line.append("  no readings in this window", style=QUIET)
            line.truncate(width)
            lines.append(line)
        extra = Text(f"{WINDOW_TITLE[self.window]}", style="bold")
        sources = {s.source for s in self.series}
        if "rollup" in sources:
            extra.append(" (minute means, min–max)", style=QUIET)
        if self.plan.profile is not None:
            extra.append("   ", style=QUIET)
            extra.append("⠒⠒ planned set point", style=SETPOINT_STYLE)
        if self._levels():
            extra.append("   ", style=QUIET)
            extra.append("╌╌ alarm limit", style=LIMIT_STYLE)
        if not self.fit_all:
            extra.append("   (scale fits the readings; f: show limits)", style=QUIET)
        extra.truncate(width)
        return [extra, *lines]

    def _levels(self) -> list[PlotLevel]:
        seen: dict[tuple[str, float], PlotLevel] = {}
        for s in self.series:
            for lim in self.plan.limits_for(s.channel):
                v = float(to_unit(lim.limit_c, self.unit))
                seen.setdefault((lim.kind, v), PlotLevel(v, f"{lim.kind} {v:.1f}", LIMIT_STYLE))
        return list(seen.values())

    def _plot_series(self) -> list[PlotSeries]:
        out = []
        for i, s in enumerate(self.series):
            style = SERIES_STYLES[i % len(SERIES_STYLES)]
            out.append(PlotSeries(str(i + 1), s.t_ms, np.asarray(to_unit(s.mean_c, self.unit)),
                                  np.asarray(to_unit(s.min_c, self.unit)), np.asarray(to_unit(s.max_c, self.unit)),
                                  style))
        prof = self.plan.profile
        if prof is not None and self.run_start_ms is not None and self.t_from_ms is not None and self.t_to_ms is not None:
            t = np.linspace(self.t_from_ms, self.t_to_ms, 600).astype(np.int64)
            sp = np.asarray(to_unit(prof.setpoint_c((t - self.run_start_ms) / 1000.0), self.unit))
            out.append(PlotSeries("", t, sp, sp, sp, SETPOINT_STYLE, dotted=True))
        return out

    def lines(self, width: int, height: int) -> list[Text]:
        """The panel as text lines (legend, then the plot)."""
        key = (width, height)
        if self._cache is not None and self._cache[0] == key:
            return self._cache[1]
        legend = self._legend(width)
        if self.t_from_ms is None or self.t_to_ms is None:
            out = legend + [Text("choose a channel to plot", style=QUIET)]
        else:
            series = self._plot_series()
            levels = self._levels()
            from soaklog.dashboard.plot import y_limits

            data_only = [s for s in series if not s.dotted]
            rng = y_limits(series, levels) if self.fit_all else y_limits(data_only)
            if not any(s.t_ms.size for s in data_only):
                rng = None
            out = legend + render_plot(
                series, width=width, height=max(5, height - len(legend)), t_from_ms=self.t_from_ms,
                t_to_ms=self.t_to_ms, levels=levels if self.fit_all or rng is None else
                [lv for lv in levels if rng[0] <= lv.value <= rng[1]],
                y_range=rng, time_label=_time_label(self.window, self.run_start_ms), axis_style=QUIET,
                tick_origin_ms=(self.run_start_ms or 0) if self.window == "run" else 0,
            )
        self._cache = (key, out)
        return out

    def render(self) -> Text:
        w, h = self.content_size.width, self.content_size.height
        return Text("\n").join(self.lines(max(20, w), max(6, h))[:h])


class ChannelPicker(OptionList):
    """The channels to plot: ``[x]`` chosen, ``[ ]`` not; space or enter toggles the highlighted one."""

    DEFAULT_CSS = """
    ChannelPicker, ChannelPicker:focus { width: 24; height: 1fr; border: none; padding: 0; }
    """
    BINDINGS: ClassVar[list[BindingType]] = [Binding("space", "toggle", "choose", show=False)]

    class Changed(Message):
        """The user changed the choice (channel names, in the list's order)."""

        def __init__(self, picker: ChannelPicker, chosen: tuple[str, ...]) -> None:
            super().__init__()
            self.picker = picker
            self.chosen = chosen

        @property
        def control(self) -> ChannelPicker:
            return self.picker

    def __init__(self, **kw: object) -> None:
        super().__init__(**kw)  # type: ignore[arg-type]
        self._names: tuple[str, ...] = ()
        self._labels: dict[str, str] = {}
        self.chosen: tuple[str, ...] = ()

    def _prompt(self, name: str) -> Text:
        on = name in self.chosen
        t = Text("[x] " if on else "[ ] ", style="bold" if on else QUIET)
        t.append(_cut(self._labels.get(name, name), 19), style="bold" if on else "")
        return t

    def set_channels(self, channels: Sequence[ChannelRow], chosen: Iterable[str]) -> None:
        names = tuple(c.name for c in channels)
        chosen_t = tuple(n for n in names if n in set(chosen))
        if names != self._names:
            self._names = names
            self._labels = {c.name: c.label for c in channels}
            self.chosen = chosen_t
            keep = self.highlighted
            self.clear_options()
            self.add_options([Option(self._prompt(n), id=n) for n in names])
            if names:
                self.highlighted = min(keep or 0, len(names) - 1)
        elif chosen_t != self.chosen:
            before = set(self.chosen)
            self.chosen = chosen_t
            for n in before.symmetric_difference(chosen_t):
                self.replace_option_prompt(n, self._prompt(n))

    def action_toggle(self) -> None:
        if self.highlighted is None or not self._names:
            return
        name = self._names[self.highlighted]
        chosen = set(self.chosen) ^ {name}
        self.chosen = tuple(n for n in self._names if n in chosen)
        self.replace_option_prompt(name, self._prompt(name))
        self.post_message(self.Changed(self, self.chosen))

    def _on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        self.action_toggle()


# ---------------------------------------------------------------- alarms and events


_STATE_WORDS = {
    "unacknowledged": "active, not acked",
    "acknowledged": "active, acked",
    "returned_unacknowledged": "cleared, not acked",
    "latched": "latched",
    "shelved": "shelved",
    "out_of_service": "out of service",
    "normal": "normal",
}


class AlarmBoard(DataTable[Text]):
    """The run's alarms, what needs acknowledging first."""

    DEFAULT_CSS = """
    AlarmBoard { height: 1fr; min-height: 4; scrollbar-size-vertical: 1; }
    """

    def __init__(self, **kw: object) -> None:
        super().__init__(cursor_type="row", cell_padding=0, **kw)  # type: ignore[arg-type]
        self._shown: tuple[object, ...] | None = None
        self.alarms: tuple[AlarmRow, ...] = ()

    @property
    def selected_alarm(self) -> AlarmRow | None:
        if not self.alarms or not 0 <= self.cursor_row < len(self.alarms):
            return None
        return self.alarms[self.cursor_row]

    def show(self, alarms: Sequence[AlarmRow], now_ms: int) -> None:
        width = self.size.width or 80
        key = (tuple(alarms), width, now_ms // 60_000)
        if key == self._shown:
            return
        self._shown = key
        keep = self.selected_alarm.id if self.selected_alarm else None
        self.alarms = tuple(alarms)
        self.clear(columns=True)
        wide = width >= 110
        cols = [("mark", "", 3), ("state", " State", 20), ("sev", " Severity", 10), ("since", " Since UTC", 12),
                ("channel", " Channel", 15)]
        if wide:
            cols.append(("rule", " Rule", 24))
        used = sum(w for _k, _h, w in cols)
        cols.append(("msg", " Message", max(20, width - used - 1)))
        for k, h, w in cols:
            self.add_column(Text(h, style="bold"), key=k, width=w)
        if not alarms:
            self.add_row(Text(""), Text(" no alarm has gone off in this run", style=QUIET),
                         *[Text("")] * (len(cols) - 2))
            return
        for a in alarms:
            attn = a.needs_ack
            style = ATTENTION if attn else ("" if a.state != "normal" else QUIET)
            mark = MARK if attn else ("* " if a.state not in ("normal",) else "")
            state = _STATE_WORDS.get(a.state, a.state)
            if a.state == "shelved" and a.shelved_until_utc:
                state = f"shelved to {utc_clock(parse_utc_ms(a.shelved_until_utc), now_ms=now_ms)}"
            cells = [
                Text(f"{mark:2}", style=MARKER_STYLE if attn else ""),
                Text(" " + _cut(state, 19), style=f"bold {style}".strip() if attn else style),
                Text(" " + _cut(a.severity, 9), style=style),
                Text(" " + utc_clock(parse_utc_ms(a.since_utc), now_ms=now_ms), style=style),
                Text(" " + _cut(a.channel or "—", 14), style=style),
            ]
            if wide:
                cells.append(Text(" " + _cut(a.rule, 23), style=style))
            cells.append(Text(" " + _cut(a.message, cols[-1][2] - 1), style=style))
            self.add_row(*cells, key=a.id)
        if keep is not None:
            for i, a in enumerate(alarms):
                if a.id == keep:
                    self.move_cursor(row=i)
                    break


class RequestLine(Static):
    """The operator's latest requests and what the logger did with them."""

    DEFAULT_CSS = """
    RequestLine { height: auto; max-height: 3; padding: 0 1; color: $text-muted; }
    """

    def show(self, actions: Sequence[ActionRow], now_ms: int, *, lines: int = 1) -> None:
        if not actions:
            self.update(Text("your requests: none yet (k acknowledges the highlighted alarm)", style=QUIET))
            return
        out = []
        for a in list(actions)[-lines:]:
            t = Text(f"request {a.id}: {a.kind} {a.target}".rstrip())
            if a.note:
                t.append(f" “{_cut(a.note, 30)}”")
            t.append(f" at {utc_clock(a.t_ms, now_ms=now_ms)} — ")
            if a.applied_ms is None:
                t.append("waiting for the logger", style=ATTENTION)
            else:
                t.append(f"{a.outcome or 'applied'}", style="bold")
            t.truncate(max(20, (self.size.width or 80) - 2), overflow="ellipsis")
            out.append(t)
        self.update(Text("\n").join(out))


class EventLog(DataTable[Text]):
    """The run's events in time order (alarms, acknowledgements, instruments, gaps, starts and stops)."""

    DEFAULT_CSS = """
    EventLog { height: 1fr; min-height: 4; scrollbar-size-vertical: 1; }
    """

    MAX_ROWS = 1000

    def __init__(self, **kw: object) -> None:
        super().__init__(cursor_type="row", cell_padding=0, **kw)  # type: ignore[arg-type]
        self._last_id = 0
        self._width = 0
        self._generation = 0
        self._msg_w = 40
        self._keys: list[str] = []

    def sync(self, events: Sequence[EventRow], now_ms: int, *, generation: int = 0) -> None:
        """Show ``events`` (all the app holds), appending only those not shown yet.

        ``generation`` changes when the app starts over (a new run): the log is rebuilt.
        """
        width = self.size.width or 80
        if width != self._width or not self.columns or generation != self._generation:
            self._generation = generation
            self._rebuild(width)
        new = [e for e in events if e.id > self._last_id]
        follow = self.cursor_row >= self.row_count - 1
        for e in new:
            style = ATTENTION if e.severity in ("high", "critical") else ""
            self.add_row(
                Text(" " + utc_clock(e.t_ms, now_ms=now_ms)), Text(" " + _cut(e.severity, 8), style=style),
                Text(" " + _cut(e.kind, 19), style=style), Text(" " + _cut(e.channel or "—", 14)),
                Text(" " + _cut(e.message, self._msg_w - 1), style=style), key=str(e.id),
            )
            self._keys.append(str(e.id))
            self._last_id = e.id
        while len(self._keys) > self.MAX_ROWS:
            self.remove_row(self._keys.pop(0))
        if new and follow:
            self.move_cursor(row=self.row_count - 1)

    def _rebuild(self, width: int) -> None:
        self._width = width
        self.clear(columns=True)
        self._keys.clear()
        self._last_id = 0
        cols = [("t", " Time UTC", 12), ("sev", " Severity", 10), ("kind", " Event", 20), ("ch", " Channel", 15)]
        used = sum(w for _k, _h, w in cols)
        self._msg_w = max(20, width - used - 1)
        for k, h, w in cols + [("msg", " Message", self._msg_w)]:
            self.add_column(Text(h, style="bold"), key=k, width=w)


# ---------------------------------------------------------------- instruments


class InstrumentBoard(DataTable[Text]):
    """Each instrument: connected or lost, age of its last good reading, error counts, last error."""

    DEFAULT_CSS = """
    InstrumentBoard { height: auto; max-height: 60%; scrollbar-size-vertical: 1; }
    """

    def __init__(self, **kw: object) -> None:
        super().__init__(cursor_type="row", cell_padding=0, **kw)  # type: ignore[arg-type]
        self._shown: tuple[object, ...] | None = None
        self.shown_instruments: tuple[InstrumentRow, ...] = ()

    @property
    def highlighted(self) -> InstrumentRow | None:
        if not self.shown_instruments or not 0 <= self.cursor_row < len(self.shown_instruments):
            return None
        return self.shown_instruments[self.cursor_row]

    def show(self, instruments: Sequence[InstrumentRow], channels: Sequence[ChannelRow], now_ms: int) -> None:
        width = self.size.width or 80
        wide = width >= 120
        last_ok_by_inst: dict[str, int] = {}
        for c in channels:
            if c.last_ok_ms is not None:
                last_ok_by_inst[c.instrument] = max(last_ok_by_inst.get(c.instrument, 0), c.last_ok_ms)
        rows = []
        for i in instruments:
            last_ok = i.last_ok_ms if i.last_ok_ms is not None else last_ok_by_inst.get(i.name)
            last_ok = max(filter(None, (last_ok, last_ok_by_inst.get(i.name))), default=None)
            rows.append((i, last_ok))
        key = (tuple((i, lo) for i, lo in rows), width, now_ms // 1000)
        if key == self._shown:
            return
        self._shown = key
        self.shown_instruments = tuple(instruments)
        row = self.cursor_row
        self.clear(columns=True)
        cols = [("mark", "", 3), ("name", " Instrument", 14), ("state", " State", 11), ("good", " Good read", 11),
                ("reads", "  Reads", 9), ("errors", " Errors", 8)]
        if wide:
            cols += [("timeouts", " Timeouts", 10), ("reconnects", " Reconnects", 12), ("bad", " Bad frames", 12)]
        used = sum(w for _k, _h, w in cols)
        cols.append(("last", " Last error", max(16, width - used - 1)))
        for k, h, w in cols:
            self.add_column(Text(h, style="bold"), key=k, width=w)
        if not instruments:
            self.add_row(Text(""), Text(" no instrument has reported yet", style=QUIET), *[Text("")] * (len(cols) - 2))
            return

        def n(v: int | None, w: int) -> str:
            return ("—" if v is None else str(v)).rjust(w)

        for i, last_ok in rows:
            bad = not i.connected
            style = ATTENTION if bad else ""
            err = i.last_error or "none"
            if i.last_error and i.last_error_ms is not None:
                err = f"{fmt_age((now_ms - i.last_error_ms) / 1000.0)} ago: {i.last_error}"
            cells = [
                Text(f"{MARK if bad else '':2}", style=MARKER_STYLE if bad else ""),
                Text(" " + _cut(i.name, 13), style=f"bold {style}".strip() if bad else ""),
                Text(" " + ("LOST" if bad else "connected"), style=style),
                Text(fmt_age(None if last_ok is None else (now_ms - last_ok) / 1000.0).rjust(9) + " ", style=style),
                Text(n(i.reads, 8)), Text(n(i.errors, 7), style=ATTENTION if (i.errors or 0) > 0 else ""),
            ]
            if wide:
                cells += [Text(n(i.timeouts, 9)), Text(n(i.reconnects, 11)), Text(n(i.bad_frames, 11))]
            cells.append(Text(" " + _cut(err, cols[-1][2] - 1), style=style if i.last_error else QUIET))
            self.add_row(*cells, key=i.name)
        if 0 <= row < len(rows):
            self.move_cursor(row=row)


class InstrumentDetail(Static):
    """Everything known about the highlighted instrument."""

    DEFAULT_CSS = """
    InstrumentDetail { height: 1fr; padding: 1 1 0 1; }
    """

    def show(self, inst: InstrumentRow | None, channels: Sequence[ChannelRow], now_ms: int) -> None:
        if inst is None:
            self.update("")
            return
        t = Text()
        t.append(inst.name, style="bold")
        t.append(f"  {inst.identity or '(no identity reported)'}\n")
        mine = [c.label for c in channels if c.instrument == inst.name]
        t.append(f"channels: {', '.join(mine) if mine else 'none'}\n")
        t.append(f"state: {'connected' if inst.connected else 'LOST (' + MARK + ')'}   "
                 f"health reported {utc_clock(inst.updated_ms, now_ms=now_ms)} UTC\n")
        t.append(f"reads {inst.reads if inst.reads is not None else '—'}  errors {inst.errors if inst.errors is not None else '—'}"
                 f"  timeouts {inst.timeouts if inst.timeouts is not None else '—'}"
                 f"  reconnects {inst.reconnects if inst.reconnects is not None else '—'}"
                 f"  bad frames {inst.bad_frames if inst.bad_frames is not None else '—'}\n")
        if inst.last_error:
            when = "" if inst.last_error_ms is None else f" ({utc_clock(inst.last_error_ms, now_ms=now_ms)} UTC)"
            t.append("last error" + when + ": ", style=ATTENTION)
            t.append(inst.last_error)
        else:
            t.append("last error: none", style=QUIET)
        self.update(t)
