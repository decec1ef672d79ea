"""Running alarm actions: each configured action on its own worker thread, outcomes collected for the writer.

What an action does is its kind's (``soaklog.kinds.actions``: log, program,
scpi, serial_line, …, one module each); this module only runs them. Each
configured action has its own worker thread and queue, so a hung program
never delays an interlock behind it, and nothing here ever blocks
acquisition or the writer: ``submit`` only queues. Every outcome (done,
failed, timed out) comes back through ``outcomes()`` for the writer thread
to record as an event. The runner lends the kinds what outlives one run: a
pyvisa resource manager, and the serial ports a ``serial_line`` action holds
open (closing a port may drop its control lines and with them a relay).

An interlock action is a second line behind the chamber's own over-temperature
protection, best effort: its outcome is recorded, never assumed.
"""

from __future__ import annotations

import logging
import queue
import threading
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from soaklog.config import ActionConfig
from soaklog.kinds.actions import ActionContext, Outcome, short
from soaklog.kinds.actions.program import action_environment, run_program
from soaklog.kinds.actions.scpi import send_scpi
from soaklog.kinds.actions.serial_line import set_serial_line

__all__ = [
    "ActionOutcome",
    "ActionRunner",
    "action_environment",
    "run_program",
    "send_scpi",
    "set_serial_line",
    "EVENT_KINDS",
]

log = logging.getLogger("soaklog.actions")

#: the event kind each outcome is recorded as
EVENT_KINDS: dict[str, str] = {"done": "action_done", "failed": "action_failed", "timed_out": "action_timed_out"}

#: requests one action may have waiting; beyond this a request fails at once (never blocks the writer)
MAX_QUEUED = 32


@dataclass(frozen=True)
class ActionOutcome:
    """What became of one action.

    ``started_utc_s`` and ``ended_utc_s`` come from the runner's clock (the
    service's UTC); ``fields`` are the alarm fields it was given.
    """

    action: str
    kind: str
    outcome: Outcome
    detail: str
    fields: Mapping[str, str]
    started_utc_s: float
    ended_utc_s: float

    @property
    def event_kind(self) -> str:
        return EVENT_KINDS[self.outcome]

    @property
    def duration_s(self) -> float:
        return self.ended_utc_s - self.started_utc_s

    @property
    def message(self) -> str:
        word = {"done": "done", "failed": "failed", "timed_out": "timed out"}[self.outcome]
        alarm = self.fields.get("alarm", "")
        return f"{self.action} for {alarm or 'a test'}: {word}" + (f": {self.detail}" if self.detail else "")


@dataclass
class _Job:
    action: ActionConfig
    fields: dict[str, str]


@dataclass
class _Worker:
    action: ActionConfig
    jobs: queue.Queue[_Job | None] = field(default_factory=lambda: queue.Queue(maxsize=MAX_QUEUED))
    thread: threading.Thread | None = None


class ActionRunner:
    """Runs configured actions on worker threads and collects their outcomes.

    Args:
        actions: the actions of each alarm rule, by rule name.
        station: the station name (in each program's environment).
        utc_s: the clock outcomes are stamped with (the service's UTC).
        resource_manager: a pyvisa resource manager to use (default: one per action run).
        serial_for_url: opens a serial port (default ``serial.serial_for_url``).
    """

    def __init__(
        self,
        actions: Mapping[str, Sequence[ActionConfig]],
        *,
        station: str = "",
        utc_s: Callable[[], float] = time.time,
        resource_manager: Any = None,
        serial_for_url: Callable[..., Any] | None = None,
    ) -> None:
        self._actions = {rule: tuple(a) for rule, a in actions.items()}
        self._station = station
        self._utc_s = utc_s
        self._rm = resource_manager
        self._serial_for_url = serial_for_url
        self._workers: dict[int, _Worker] = {}
        self._outcomes: queue.Queue[ActionOutcome] = queue.Queue()
        self._ports: dict[str, Any] = {}
        self._ports_lock = threading.Lock()
        self._lock = threading.Lock()
        self._pending = 0  # queued or running, all actions
        self._closed = False

    # ------------------------------------------------------------ queueing

    def actions_for(self, rule: str, trigger: str | None) -> list[ActionConfig]:
        if trigger is None:
            return []
        return [a for a in self._actions.get(rule, ()) if trigger in a.on]

    def submit_event(self, rule: str, trigger: str | None, fields: Mapping[str, str]) -> int:
        """Queue every action of ``rule`` that ``trigger`` fires; how many were queued."""
        acts = self.actions_for(rule, trigger)
        for a in acts:
            self.submit(a, fields)
        return len(acts)

    def submit(self, action: ActionConfig, fields: Mapping[str, str]) -> None:
        """Queue one action; never blocks (a full queue is a failed outcome at once)."""
        f = dict(fields)
        f.setdefault("station", self._station)
        w = self._worker(action)
        with self._lock:
            self._pending += 1
        try:
            w.jobs.put_nowait(_Job(action, f))
        except queue.Full:
            with self._lock:
                self._pending -= 1
            now = self._utc_s()
            self._outcomes.put(ActionOutcome(action.name, action.kind, "failed",
                                             f"{MAX_QUEUED} requests already waiting; this one was dropped", f, now, now))

    def _worker(self, action: ActionConfig) -> _Worker:
        with self._lock:
            w = self._workers.get(id(action))
            if w is None:
                w = _Worker(action)
                w.thread = threading.Thread(target=self._work, args=(w,), name=f"action-{action.kind}", daemon=True)
                self._workers[id(action)] = w
                w.thread.start()
            return w

    def outcomes(self) -> list[ActionOutcome]:
        """Every outcome since the last call (the writer thread records them)."""
        out: list[ActionOutcome] = []
        while True:
            try:
                out.append(self._outcomes.get_nowait())
            except queue.Empty:
                return out

    def idle(self) -> bool:
        """Whether no action is queued or running."""
        with self._lock:
            return self._pending == 0

    def wait_idle(self, timeout_s: float) -> bool:
        """Wait until every queued action has run (for ``check --test-actions`` and tests)."""
        deadline = time.monotonic() + timeout_s
        while not self.idle():
            if time.monotonic() > deadline:
                return False
            time.sleep(0.01)
        return True

    def close(self, timeout_s: float = 5.0) -> None:
        """Let running actions finish (each within its time limit), drop the waiting ones, close held ports.

        A dropped request becomes a failed outcome ("not run"), so it is recorded too.
        """
        with self._lock:
            self._closed = True
            workers = list(self._workers.values())
        for w in workers:
            while True:
                try:
                    job = w.jobs.get_nowait()
                except queue.Empty:
                    break
                if job is None:
                    continue
                now = self._utc_s()
                self._outcomes.put(ActionOutcome(job.action.name, job.action.kind, "failed",
                                                 "not run: the runner was closed first", job.fields, now, now))
                with self._lock:
                    self._pending -= 1
            try:
                w.jobs.put(None, timeout=timeout_s)
            except queue.Full:
                pass
        for w in workers:
            if w.thread is not None:
                w.thread.join(timeout=timeout_s + w.action.kind_of.time_limit_s(w.action.params))
        with self._ports_lock:
            for p in self._ports.values():
                try:
                    p.close()
                except Exception:  # noqa: BLE001 - closing on the way out
                    pass
            self._ports.clear()

    # ------------------------------------------------------------ running

    def _work(self, w: _Worker) -> None:
        while True:
            job = w.jobs.get()
            if job is None:
                return
            try:
                start = self._utc_s()
                try:
                    outcome, detail = self._run(job.action, job.fields)
                except Exception as exc:  # noqa: BLE001 - an action must never kill its worker
                    log.exception("action %s", job.action.name)
                    outcome, detail = "failed", short(f"{type(exc).__name__}: {exc}")
                res = ActionOutcome(job.action.name, job.action.kind, outcome, detail, job.fields, start, self._utc_s())
                (log.info if outcome == "done" else log.warning)("%s", res.message)
                self._outcomes.put(res)
            finally:
                with self._lock:
                    self._pending -= 1

    def _run(self, a: ActionConfig, fields: Mapping[str, str]) -> tuple[Outcome, str]:
        return a.kind_of.run(a.params, fields, ActionContext(self._rm, self._port))

    def _port(self, url: str, baudrate: int, line: str, state: bool) -> tuple[Any, str]:
        """The open port for ``url`` (opened once and held, its line preset so opening does not toggle it)."""
        import serial

        with self._ports_lock:
            port = self._ports.get(url)
            if port is not None and getattr(port, "is_open", True):
                return port, ""
            opener = self._serial_for_url or serial.serial_for_url
            try:
                port = opener(url, baudrate=baudrate, do_not_open=True)
                # pyserial applies a line preset at open; a relay must not chatter while the port opens
                setattr(port, line, state)
                port.open()
            except (OSError, ValueError, serial.SerialException) as exc:
                return None, short(f"cannot open {url}: {exc}")
            self._ports[url] = port
            return port, ""

    def port(self, url: str) -> Any:
        """A port the runner holds open (None if it has not opened it)."""
        with self._ports_lock:
            return self._ports.get(url)
