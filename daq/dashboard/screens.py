"""The dashboard's views, one Screen each, and its two small dialogs."""

from __future__ import annotations

from collections import deque
from typing import ClassVar, Protocol, cast

from rich.table import Table
from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.css.query import NoMatches
from textual.screen import ModalScreen, Screen
from textual.widgets import DataTable, Input, OptionList, Static
from textual.widgets.option_list import Option

from soaklog.dashboard.records import WINDOW_TITLE, ActionRow, EventRow, Snapshot, TrendRequest, WindowName
from soaklog.dashboard.table import LiveTable
from soaklog.dashboard.units import Unit
from soaklog.dashboard.widgets import (
    SAFETY_CAUTION,
    AlarmBoard,
    CautionLine,
    ChannelBoard,
    ChannelPicker,
    EventLog,
    InstrumentBoard,
    InstrumentDetail,
    KeyLine,
    RequestLine,
    RunHeader,
    TrendPanel,
)



class Dashboard(Protocol):
    """What the views need of the app that shows them (the app satisfies it; the views never import it)."""

    header_note: str
    shown_path: str | None
    unit: Unit
    window: WindowName
    graph_channels: tuple[str, ...]
    fit_all: bool
    snapshot: Snapshot | None
    events: deque[EventRow]
    generation: int

    @property
    def actions(self) -> list[ActionRow]: ...

    def wake(self) -> None: ...

    def plot_channel(self, name: str) -> None: ...

    def step_window(self, step: int) -> None: ...

    def request(self, kind: str, *, target: str = "", note: str = "", what: str = "",
                for_s: float | None = None, quiet: bool = False) -> None: ...

__all__ = [
    "GLOBAL_KEYS",
    "SHELVE_CHOICES",
    "VIEW_KEYS",
    "AlarmsView",
    "GraphView",
    "HelpView",
    "InstrumentsView",
    "NoteDialog",
    "ProbesView",
    "ShelveDialog",
    "View",
]

#: keys that work on every view (the help screen and the README list the same)
GLOBAL_KEYS: list[tuple[str, str]] = [
    ("p", "Probes: every channel now"),
    ("g", "Graph: trends of chosen channels"),
    ("a", "Alarms: acknowledge, shelve, note; the run's log"),
    ("i", "Instruments: connected or lost, errors"),
    ("u", "unit: °C → K → °F (display only)"),
    ("r", "read the file again now"),
    ("? h", "this help"),
    ("q", "quit (the logger keeps running)"),
]

VIEW_KEYS: dict[str, list[tuple[str, str]]] = {
    "Probes": [("↑ ↓", "move"), ("enter", "plot the highlighted channel on the Graph")],
    "Graph": [("space", "add or remove the highlighted channel (up to 6)"),
              ("w", "next window: 10 min → 1 h → 24 h → whole run"), ("W", "previous window"),
              ("f", "scale: readings, set point and limits / readings only"), ("c", "clear the choice")],
    "Alarms": [("↑ ↓", "choose an alarm"), ("k", "acknowledge the chosen alarm"),
               ("K", "acknowledge every alarm that waits for it"),
               ("s", "shelve the chosen alarm for a while (or unshelve it)"),
               ("n", "write a note (on the chosen alarm, or on the run)"), ("tab", "alarm list ↔ log")],
    "Instruments": [("↑ ↓", "choose an instrument; its details show below")],
}

SHELVE_CHOICES: list[tuple[str, float]] = [("15 min", 900.0), ("1 h", 3600.0), ("4 h", 14400.0),
                                           ("8 h", 28800.0), ("24 h", 86400.0)]


class View(Screen[None]):
    """One view of the dashboard: the run header on top, the caution and the keys below."""

    TITLE: ClassVar[str] = ""
    KEYS: ClassVar[list[tuple[str, str]]] = []

    @property
    def dash(self) -> Dashboard:
        return cast(Dashboard, self.app)

    def compose(self) -> ComposeResult:
        yield RunHeader(note=self.dash.header_note, path=self.dash.shown_path, id="header")
        with Vertical(id="body"):
            yield from self.body()
        yield CautionLine(id="caution")
        yield KeyLine(self.KEYS, id="keys")

    def body(self) -> ComposeResult:
        yield from ()

    _composed = False

    def on_mount(self) -> None:
        self._composed = True

    def show(self, snap: Snapshot) -> None:
        if not self._composed:
            return  # a snapshot came before the view's widgets exist; on_screen_resume shows it
        try:
            self.query_one(RunHeader).show(snap, self.dash.unit)
            self.show_body(snap)
        except NoMatches:
            return  # still mounting its widgets: the next snapshot finds them

    def show_body(self, snap: Snapshot) -> None:
        pass

    def trend_request(self) -> TrendRequest | None:
        return None

    def on_screen_resume(self) -> None:
        if self.dash.snapshot is not None:
            self.show(self.dash.snapshot)
        self.dash.wake()


class ProbesView(View):
    """Every channel at a glance; on a tall terminal, the highlighted one's last 10 minutes below."""

    TITLE = "Probes"
    KEYS: ClassVar[list[tuple[str, str]]] = [("p", "probes"), ("g", "graph"), ("a", "alarms"), ("i", "instruments"), ("enter", "plot"),
            ("u", "unit"), ("?", "help"), ("q", "quit")]
    TALL_AT = 40

    def body(self) -> ComposeResult:
        yield ChannelBoard(id="channels")
        yield TrendPanel(id="mini")

    @property
    def tall(self) -> bool:
        return self.size.height >= self.TALL_AT

    def on_resize(self) -> None:
        self.set_class(self.tall, "-tall")

    def show_body(self, snap: Snapshot) -> None:
        board = self.query_one(ChannelBoard)
        board.show(snap, self.dash.unit)
        if self.tall:
            req = self.trend_request()
            if req is not None and snap.trend_request == req:
                self.query_one("#mini", TrendPanel).show(
                    snap.trends, window=req.window, unit=self.dash.unit, plan=snap.run.plan,
                    run_start_ms=snap.run.started_ms, t_from_ms=snap.trend_from_ms, t_to_ms=snap.trend_to_ms,
                )

    def trend_request(self) -> TrendRequest | None:
        if not self.tall:
            return None
        name = self.query_one(ChannelBoard).highlighted_channel
        return None if name is None else TrendRequest((name,), "10min")

    @on(LiveTable.RowSelected, "#channels")
    def _plot(self, event: LiveTable.RowSelected) -> None:
        self.dash.plot_channel(event.row_key)

    @on(LiveTable.RowHighlighted, "#channels")
    def _moved(self, _event: LiveTable.RowHighlighted) -> None:
        if self.tall:
            self.dash.wake()


class GraphView(View):
    """Trends of the chosen channels over a window, with the planned set point and the alarm limits."""

    TITLE = "Graph"
    KEYS: ClassVar[list[tuple[str, str]]] = [("space", "choose"), ("w", "window"), ("f", "scale"), ("c", "clear"), ("p", "probes"),
            ("a", "alarms"), ("?", "help"), ("q", "quit")]
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("w", "window(1)", "next window"),
        Binding("W", "window(-1)", "previous window"),
        Binding("f", "fit", "scale"),
        Binding("c", "clear", "clear"),
    ]

    def body(self) -> ComposeResult:
        with Horizontal():
            yield ChannelPicker(id="picker")
            yield TrendPanel(id="trend")

    def on_screen_resume(self) -> None:
        snap = self.dash.snapshot
        if not self.dash.graph_channels and snap is not None and snap.channels:
            self.dash.graph_channels = (snap.channels[0].name,)
        self.query_one(ChannelPicker).focus()
        super().on_screen_resume()

    def show_body(self, snap: Snapshot) -> None:
        self.query_one(ChannelPicker).set_channels(snap.channels, self.dash.graph_channels)
        req = self.trend_request()
        panel = self.query_one("#trend", TrendPanel)
        if req is None:
            panel.show((), window=self.dash.window, unit=self.dash.unit, plan=snap.run.plan,
                       run_start_ms=snap.run.started_ms, t_from_ms=None, t_to_ms=None)
        elif snap.trend_request == req:
            panel.show(snap.trends, window=req.window, unit=self.dash.unit, plan=snap.run.plan,
                       run_start_ms=snap.run.started_ms, t_from_ms=snap.trend_from_ms, t_to_ms=snap.trend_to_ms,
                       fit_all=self.dash.fit_all)

    def trend_request(self) -> TrendRequest | None:
        chans = self.dash.graph_channels
        return TrendRequest(chans, self.dash.window) if chans else None

    @on(ChannelPicker.Changed, "#picker")
    def _chosen(self, event: ChannelPicker.Changed) -> None:
        chosen = event.chosen
        if len(chosen) > 6:
            self.notify("at most 6 channels on one graph", severity="warning")
            self.query_one(ChannelPicker).set_channels(self.dash.snapshot.channels if self.dash.snapshot else (),
                                                       self.dash.graph_channels)
            return
        if chosen != self.dash.graph_channels:
            self.dash.graph_channels = chosen
            self.dash.wake()

    def action_window(self, step: int) -> None:
        self.dash.step_window(step)
        self.notify(f"window: {WINDOW_TITLE[self.dash.window]}", timeout=2)

    def action_fit(self) -> None:
        self.dash.fit_all = not self.dash.fit_all
        if self.dash.snapshot is not None:
            self.show(self.dash.snapshot)

    def action_clear(self) -> None:
        self.dash.graph_channels = ()
        snap = self.dash.snapshot
        self.query_one(ChannelPicker).set_channels(snap.channels if snap else (), ())
        self.dash.wake()


class AlarmsView(View):
    """The run's alarms (what needs acknowledging first), your requests, and the run's log."""

    TITLE = "Alarms"
    KEYS: ClassVar[list[tuple[str, str]]] = [("k", "acknowledge"), ("K", "all"), ("s", "shelve"), ("n", "note"), ("p", "probes"),
            ("g", "graph"), ("?", "help"), ("q", "quit")]
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("k", "acknowledge", "acknowledge"),
        Binding("K", "acknowledge_all", "acknowledge all"),
        Binding("s", "shelve", "shelve"),
        Binding("n", "note", "note"),
    ]

    def body(self) -> ComposeResult:
        yield AlarmBoard(id="alarms")
        yield RequestLine(id="requests")
        yield EventLog(id="events")

    def on_screen_resume(self) -> None:
        self.query_one(AlarmBoard).focus()
        super().on_screen_resume()

    def show_body(self, snap: Snapshot) -> None:
        # alarm points that are normal and never went off are not news: leave them out
        shown = [a for a in snap.alarms if a.state != "normal" or a.since_utc]
        self.query_one(AlarmBoard).show(shown, snap.now_ms)
        self.query_one(RequestLine).show(self.dash.actions, snap.now_ms, lines=3 if self.size.height >= 36 else 1)
        self.query_one(EventLog).sync(self.dash.events, snap.now_ms, generation=self.dash.generation)

    def action_acknowledge(self) -> None:
        alarm = self.query_one(AlarmBoard).selected_alarm
        if alarm is None:
            self.notify("no alarm to acknowledge", severity="warning")
            return
        if not alarm.needs_ack:
            self.notify(f"{alarm.rule or alarm.id} is {alarm.state.replace('_', ' ')}: nothing to acknowledge",
                        severity="warning")
            return
        self.dash.request("acknowledge", target=alarm.id, what=alarm.id)

    def action_acknowledge_all(self) -> None:
        waiting = [a for a in self.query_one(AlarmBoard).alarms if a.needs_ack]
        if not waiting:
            self.notify("no alarm waits for an acknowledgement", severity="warning")
            return
        for a in waiting:
            self.dash.request("acknowledge", target=a.id, what=a.id, quiet=True)
        self.notify(f"{len(waiting)} acknowledgement request{'s' if len(waiting) != 1 else ''} sent; "
                    "the logger applies them", timeout=4)

    def action_shelve(self) -> None:
        alarm = self.query_one(AlarmBoard).selected_alarm
        if alarm is None:
            self.notify("no alarm to shelve", severity="warning")
            return

        def done(seconds: float | None) -> None:
            if seconds is None:
                return
            if seconds == 0:
                self.dash.request("unshelve", target=alarm.id, what=alarm.id)
            else:
                self.dash.request("shelve", target=alarm.id, what=alarm.id, for_s=seconds)

        self.app.push_screen(ShelveDialog(alarm.rule or alarm.id, shelved=alarm.state == "shelved"), done)

    def action_note(self) -> None:
        alarm = self.query_one(AlarmBoard).selected_alarm
        about = f"alarm {alarm.id}" if alarm is not None else "the run"

        def done(text: str | None) -> None:
            if text:
                self.dash.request("note", target=alarm.id if alarm is not None else "", note=text, what=about)

        self.app.push_screen(NoteDialog(about), done)


class InstrumentsView(View):
    """Each instrument: connected or lost, last good reading, error counts, last error."""

    TITLE = "Instruments"
    KEYS: ClassVar[list[tuple[str, str]]] = [("↑↓", "choose"), ("p", "probes"), ("g", "graph"), ("a", "alarms"), ("?", "help"), ("q", "quit")]

    def body(self) -> ComposeResult:
        yield InstrumentBoard(id="instruments")
        yield InstrumentDetail(id="detail")

    def show_body(self, snap: Snapshot) -> None:
        board = self.query_one(InstrumentBoard)
        board.show(snap.instruments, snap.channels, snap.now_ms)
        self.query_one(InstrumentDetail).show(board.highlighted, snap.channels, snap.now_ms)

    @on(DataTable.RowHighlighted, "#instruments")
    def _moved(self, _event: DataTable.RowHighlighted) -> None:
        snap = self.dash.snapshot
        if snap is not None:
            self.query_one(InstrumentDetail).show(self.query_one(InstrumentBoard).highlighted, snap.channels,
                                                  snap.now_ms)


# ---------------------------------------------------------------- help and dialogs


def help_text() -> Table:
    """Every key, by view, and how to acknowledge an alarm."""
    t = Table.grid(padding=(0, 2))
    t.add_column(justify="right", style="bold", no_wrap=True)
    t.add_column()
    t.add_row(Text("soaklog dash", style="bold"), Text("keys (mouse optional)"))
    t.add_row("", "")
    t.add_row(Text("any view", style="bold underline"), "")
    for k, what in GLOBAL_KEYS:
        t.add_row(k, what)
    for view, keys in VIEW_KEYS.items():
        t.add_row("", "")
        t.add_row(Text(view, style="bold underline"), "")
        for k, what in keys:
            t.add_row(k, what)
    t.add_row("", "")
    t.add_row(Text("an alarm?", style="bold underline"), "")
    t.add_row("1", "press a to open Alarms: alarms marked !! wait for you, first in the list")
    t.add_row("2", "choose one with ↑ ↓ and press k to acknowledge it (K: all of them)")
    t.add_row("3", "your request shows under the list until the logger has applied it")
    t.add_row("", "")
    t.add_row(Text("marks", style="bold underline"), "")
    t.add_row("!!", "needs a look: a faulty or stale channel, an alarm to acknowledge, a lost instrument")
    t.add_row("*", "an alarm that is active but acknowledged")
    t.add_row("", "")
    t.add_row(Text("safety", style="bold underline"), Text(SAFETY_CAUTION))
    t.add_row("", "Acknowledging here does not change the chamber; the logger applies requests and records them.")
    t.add_row("", "")
    t.add_row("esc ?", "back")
    return t


class HelpView(Screen[None]):
    """Every key, by view."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "close", "back"),
        Binding("question_mark", "close", "back", show=False),
        Binding("h", "close", "back", show=False),
    ]

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help"):
            yield Static(help_text(), id="help-text")
        yield KeyLine([("esc", "back"), ("↑↓", "scroll"), ("q", "quit")], id="keys")

    def action_close(self) -> None:
        self.dismiss()


class ShelveDialog(ModalScreen[float | None]):
    """How long to shelve an alarm (or unshelve it)."""

    DEFAULT_CSS = """
    ShelveDialog { align: center middle; }
    ShelveDialog > Vertical { width: 50; height: auto; border: round $accent; padding: 0 1; background: $panel; }
    ShelveDialog OptionList { height: auto; max-height: 9; border: none; }
    """
    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "cancel")]

    def __init__(self, what: str, *, shelved: bool) -> None:
        super().__init__()
        self.what = what
        self.shelved = shelved

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Static(Text(f"shelve {self.what} for", style="bold"))
            opts = [Option("unshelve now", id="0")] if self.shelved else []
            opts += [Option(label, id=str(s)) for label, s in SHELVE_CHOICES]
            yield OptionList(*opts, id="choices")
            yield Static(Text("enter chooses, esc cancels", style="dim"))

    @on(OptionList.OptionSelected)
    def _chosen(self, event: OptionList.OptionSelected) -> None:
        self.dismiss(float(event.option.id or 0))

    def action_cancel(self) -> None:
        self.dismiss(None)


class NoteDialog(ModalScreen[str | None]):
    """A line of text for the run's record."""

    DEFAULT_CSS = """
    NoteDialog { align: center middle; }
    NoteDialog > Vertical { width: 70; height: auto; border: round $accent; padding: 0 1; background: $panel; }
    """
    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "cancel")]

    def __init__(self, about: str) -> None:
        super().__init__()
        self.about = about

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Static(Text(f"note on {self.about}", style="bold"))
            yield Input(placeholder="what happened, what you did", id="note")
            yield Static(Text("enter saves, esc cancels", style="dim"))

    @on(Input.Submitted)
    def _save(self, event: Input.Submitted) -> None:
        self.dismiss(event.value.strip() or None)

    def action_cancel(self) -> None:
        self.dismiss(None)
