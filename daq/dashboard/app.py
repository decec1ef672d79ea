"""The dashboard app: wires the views, reads the store in a worker thread, sends operator requests.

``run_dashboard`` is ``soaklog dash``; ``run_dashboard_live`` shows the
dashboard in the foreground of a process whose logger (the demo's) runs in
other threads, and stops that process's work when the user quits.
"""

from __future__ import annotations

import logging
import threading
import time
from collections import deque
from collections.abc import Callable
from pathlib import Path
from typing import ClassVar, Protocol

from textual import work
from textual.app import App
from textual.binding import Binding, BindingType
from textual.css.query import NoMatches
from textual.worker import get_current_worker

from soaklog.dashboard.records import (
    WINDOWS,
    ActionRow,
    EventRow,
    Snapshot,
    TrendRequest,
    WindowName,
)
from soaklog.dashboard.screens import (
    AlarmsView,
    GraphView,
    HelpView,
    InstrumentsView,
    ProbesView,
    View,
)
from soaklog.dashboard.source import StoreSource, default_actor, submit_operator_action
from soaklog.dashboard.units import SYMBOL, Unit, next_unit
from soaklog.errors import SoaklogError, StorageError

__all__ = ["DashboardApp", "SnapshotSource", "run_dashboard", "run_dashboard_live"]

#: how many of the run's events the app keeps for the log view
_EVENTS_KEPT = 1000


class SnapshotSource(Protocol):
    """What the app reads from: ``StoreSource`` or, in tests, anything shaped like it."""

    def poll(self, request: TrendRequest | None = None) -> Snapshot: ...

    def close(self) -> None: ...


ActionWriter = Callable[..., int]


class DashboardApp(App[int]):
    """soaklog's live dashboard for one station file.

    Args:
        db_path: the station's SQLite file (opened read-only; operator requests
            open it for writing just long enough for one row).
        run_id: the run to show (None: the newest, following new runs).
        clock: UTC now in seconds; tests freeze it, the demo passes its service clock.
        refresh_s: seconds between reads of the file.
        header_note: a short text shown in the header (the demo says it is a demo).
        source_factory: builds the reader inside the worker thread (default: a ``StoreSource``).
        action_writer: writes an operator request (default: into ``db_path``).
        stop_event: when set (by another thread), the app exits.
        actor: who operator requests come from.
        start_view: the view shown first (probes, graph, alarms, instruments).
        shown_path: the file's name as the header shows it (default: its absolute path).
    """

    # absolute, so that a subclass defined elsewhere (a test) finds it too
    CSS_PATH = str(Path(__file__).with_name("dashboard.tcss"))
    TITLE = "soaklog dash"
    ENABLE_COMMAND_PALETTE = False
    MODES: ClassVar[dict[str, type[View]]] = {  # type: ignore[assignment]
        "probes": ProbesView, "graph": GraphView, "alarms": AlarmsView, "instruments": InstrumentsView,
    }
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("p", "view('probes')", "probes"),
        Binding("g", "view('graph')", "graph"),
        Binding("a", "view('alarms')", "alarms"),
        Binding("i", "view('instruments')", "instruments"),
        Binding("question_mark", "help", "help"),
        Binding("h", "help", "help", show=False),
        Binding("u", "unit", "unit"),
        Binding("r", "read_now", "read now"),
        Binding("q", "quit", "quit"),
        Binding("ctrl+c", "quit", "quit", show=False, priority=True),
    ]

    def __init__(
        self,
        db_path: str | Path,
        *,
        run_id: int | None = None,
        clock: Callable[[], float] = time.time,
        refresh_s: float = 1.0,
        header_note: str = "",
        source_factory: Callable[[], SnapshotSource] | None = None,
        action_writer: ActionWriter | None = None,
        stop_event: threading.Event | None = None,
        actor: str | None = None,
        start_view: str = "probes",
        shown_path: str | None = None,
    ) -> None:
        super().__init__()
        self.db_path = str(Path(db_path).resolve())
        self.run_id = run_id
        self.clock = clock
        self.refresh_s = refresh_s
        self.header_note = header_note
        self._source_factory = source_factory or (lambda: StoreSource(self.db_path, run_id=run_id, clock=clock))
        self._write = action_writer or (lambda kind, **kw: submit_operator_action(self.db_path, kind, **kw))
        self.stop_event = stop_event
        self.actor = actor or default_actor()
        self.start_view = start_view
        self.shown_path = shown_path
        # what the views show, kept here so a view that comes back has it at once
        self.snapshot: Snapshot | None = None
        self.events: deque[EventRow] = deque(maxlen=_EVENTS_KEPT)
        self._actions: dict[int, ActionRow] = {}
        self.generation = 0
        self.unit: Unit = "C"
        self.window: WindowName = "10min"
        self.graph_channels: tuple[str, ...] = ()
        self.fit_all = True
        self.reads = 0
        self.read_problem = ""
        self._request: TrendRequest | None = None
        self._dash_wake = threading.Event()
        self._dash_closing = threading.Event()

    @property
    def actions(self) -> list[ActionRow]:
        return [self._actions[k] for k in sorted(self._actions)]

    # ------------------------------------------------------------ life cycle

    def on_mount(self) -> None:
        self.switch_mode(self.start_view)
        self._read_loop()
        if self.stop_event is not None:
            self.set_interval(0.25, self._check_stop)

    def on_unmount(self) -> None:
        self._dash_closing.set()
        self._dash_wake.set()

    def _check_stop(self) -> None:
        if self.stop_event is not None and self.stop_event.is_set():
            self.exit(0)

    def wake(self) -> None:
        """Read the file now rather than at the next tick (a view asked for something new)."""
        self._note_request()
        self._dash_wake.set()

    def _note_request(self) -> None:
        """What the view on screen wants plotted, noted here for the reader thread (UI thread only)."""
        screen = self.screen if self.is_running else None
        try:
            self._request = screen.trend_request() if isinstance(screen, View) else None
        except NoMatches:
            self._request = None

    @work(thread=True, exclusive=True, name="store-reader")
    def _read_loop(self) -> None:
        worker = get_current_worker()
        try:
            source = self._source_factory()
        except SoaklogError as exc:
            self.call_from_thread(self._read_failed, str(exc))
            return
        try:
            while not worker.is_cancelled and not self._dash_closing.is_set():
                self._dash_wake.clear()
                request = self._request
                try:
                    snap = source.poll(request)
                except SoaklogError as exc:
                    self._post(self._read_failed, str(exc))
                else:
                    self._post(self._apply, snap)
                self._dash_wake.wait(self.refresh_s)
        finally:
            source.close()

    def _post(self, fn: Callable[..., object], *args: object) -> None:
        if self._dash_closing.is_set():
            return
        try:
            self.call_from_thread(fn, *args)
        except RuntimeError:
            # the app closed while this read was on its way
            self._dash_closing.set()

    def _read_failed(self, message: str) -> None:
        if message != self.read_problem:
            self.read_problem = message
            self.notify(message, title="cannot read the file", severity="error", timeout=10)

    def _apply(self, snap: Snapshot) -> None:
        if snap.reset:
            self.events.clear()
            self.generation += 1
        self.events.extend(snap.events)
        for a in snap.actions:
            self._actions[a.id] = a
        if len(self._actions) > 200:
            for k in sorted(self._actions)[:-200]:
                del self._actions[k]
        self.snapshot = snap
        self.reads += 1
        self.read_problem = ""
        screen = self.screen
        if isinstance(screen, View):
            screen.show(snap)
        self._note_request()

    # ------------------------------------------------------------ keys

    def action_view(self, name: str) -> None:
        if self.current_mode != name:
            self.switch_mode(name)

    def action_help(self) -> None:
        if not isinstance(self.screen, HelpView):
            self.push_screen(HelpView())

    def action_unit(self) -> None:
        self.unit = next_unit(self.unit)
        self.notify(f"showing {SYMBOL[self.unit]} (stored values stay in °C)", timeout=2)
        if self.snapshot is not None and isinstance(self.screen, View):
            self.screen.show(self.snapshot)

    def action_read_now(self) -> None:
        self.wake()

    def plot_channel(self, name: str) -> None:
        """Show ``name`` alone on the Graph view."""
        self.graph_channels = (name,)
        self.switch_mode("graph")
        self.wake()

    def step_window(self, step: int) -> None:
        self.window = WINDOWS[(WINDOWS.index(self.window) + step) % len(WINDOWS)]
        self.wake()

    # ------------------------------------------------------------ operator requests

    def request(self, kind: str, *, target: str = "", note: str = "", what: str = "",
                for_s: float | None = None, quiet: bool = False) -> None:
        """Queue an operator request for the logger (acknowledge, shelve, unshelve, note)."""
        snap = self.snapshot
        if snap is not None and not snap.live:
            # the logger refuses requests queued while none ran on the file; say so now
            self.notify(f"{kind} not sent: this run has ended, so no logger is there to apply it",
                        severity="warning", timeout=6)
            return
        now_ms = snap.now_ms if snap is not None else int(self.clock() * 1000)
        until_ms = None if for_s is None else now_ms + int(for_s * 1000)
        self._send(kind, target, note, until_ms, now_ms, what or target or "the run", quiet)

    @work(thread=True, group="requests")
    def _send(self, kind: str, target: str, note: str, until_ms: int | None, now_ms: int, what: str,
              quiet: bool) -> None:
        try:
            rid = self._write(kind, target=target, note=note, actor=self.actor, now_ms=now_ms, until_ms=until_ms)
        except StorageError as exc:
            self._post(self._request_failed, kind, what, str(exc))
            return
        self._post(self._request_sent, kind, what, rid, quiet)

    def _request_sent(self, kind: str, what: str, rid: int, quiet: bool) -> None:
        if not quiet:
            self.notify(f"request {rid}: {kind} {what}; the logger applies it", timeout=4)
        self.wake()

    def _request_failed(self, kind: str, what: str, message: str) -> None:
        self.notify(f"{kind} {what} not sent: {message}", severity="error", timeout=10)


# ---------------------------------------------------------------- entry points


def _check_readable(db_path: str, run_id: int | None) -> None:
    """Fail early, with the store's message, when the file or the run cannot be shown."""
    src = StoreSource(db_path, run_id=run_id)
    try:
        src.poll(None)
    finally:
        src.close()


def run_dashboard(db_path: str | Path, *, run_id: int | None = None) -> int:
    """``soaklog dash``: the dashboard on a station file until the user quits; exit status.

    Raises:
        StorageError: no file there, not a soaklog file, or no such run.
    """
    _check_readable(str(db_path), run_id)
    app = DashboardApp(db_path, run_id=run_id)
    app.run()
    return int(app.return_code or 0)


class _KeepLog(logging.Handler):
    """Holds the process's log records (warnings and worse) while the dashboard owns the terminal."""

    def __init__(self) -> None:
        super().__init__(logging.WARNING)
        self.records: deque[logging.LogRecord] = deque(maxlen=200)

    def emit(self, record: logging.LogRecord) -> None:
        self.records.append(record)


def run_dashboard_live(
    db_path: str | Path,
    *,
    stop_event: threading.Event,
    header_note: str = "",
    clock: Callable[[], float] | None = None,
    run_id: int | None = None,
    refresh_s: float = 1.0,
) -> int:
    """Show the dashboard while a logger runs in this process's other threads; exit status.

    Returns when the user quits (``stop_event`` is then set, so the caller
    stops its logger) or when ``stop_event`` is set by the caller. Log
    records that would be written over the screen (stream handlers of the root
    logger) are held, and handed to those handlers after the dashboard closes.

    Args:
        db_path: the logger's database file.
        stop_event: set when the user quits; the caller sets it to close the dashboard.
        header_note: a short text for the header (the demo says what it is).
        clock: UTC now in seconds. Leave the wall clock for an accelerated
            logger too: when the file's newest reading is ahead of the clock,
            ages count from that reading, so they stay true to the chamber's
            time even though commits come once a wall-clock second.
        run_id: the run to show (None: the newest).
        refresh_s: seconds between reads of the file.
    """
    root = logging.getLogger()
    moved = [h for h in root.handlers if isinstance(h, logging.StreamHandler)
             and not isinstance(h, logging.FileHandler)]
    keep = _KeepLog()
    for h in moved:
        root.removeHandler(h)
    root.addHandler(keep)
    app = DashboardApp(db_path, run_id=run_id, clock=clock or time.time, header_note=header_note,
                       stop_event=stop_event, refresh_s=refresh_s)
    try:
        app.run()
    finally:
        stop_event.set()
        root.removeHandler(keep)
        for h in moved:
            root.addHandler(h)
        # what was held goes where it would have gone, now that the terminal is free again
        for record in keep.records:
            for h in moved:
                if record.levelno >= h.level:
                    h.handle(record)
    return int(app.return_code or 0)
