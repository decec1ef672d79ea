"""Actions on an alarm's state change: log, run a program, send SCPI commands, set a serial control line.

Each configured action has its own worker thread and queue, so a hung program
never delays an interlock behind it, and nothing here ever blocks acquisition
or the writer: ``submit`` only queues. Every outcome (done, failed, timed out)
comes back through ``outcomes()`` for the writer thread to record as an event.

- ``program`` runs an argument list without a shell (``shell=False``: a name
  with ``;``, ``$( )`` or spaces is a file name, never a command line), in its
  own process group, with the alarm's fields in its environment
  (``SOAKLOG_ALARM``, ``SOAKLOG_STATE``, …); at its time limit the whole
  group is killed.
- ``scpi`` opens a VISA resource (pyvisa, ``@py`` by default), writes the
  commands, reads the error queue and optionally checks a query's reply
  (``OUTP?`` → ``0``), then closes.
- ``serial_line`` sets or clears RTS or DTR of a serial port (pyserial; a
  device path or a URL such as ``loop://``) and keeps the port open, because
  closing a port may drop its control lines and with them a relay.

An interlock action is a second line behind the chamber's own over-temperature
protection, best effort: its outcome is recorded, never assumed.
"""

from __future__ import annotations

import logging
import math
import os
import queue
import signal
import subprocess
import threading
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

from soaklog.config import ActionConfig

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

Outcome = Literal["done", "failed", "timed_out"]
#: the event kind each outcome is recorded as
EVENT_KINDS: dict[str, str] = {"done": "action_done", "failed": "action_failed", "timed_out": "action_timed_out"}

#: requests one action may have waiting; beyond this a request fails at once (never blocks the writer)
MAX_QUEUED = 32
#: a killed program gets this long after SIGTERM before SIGKILL
KILL_GRACE_S = 2.0
_DETAIL_CHARS = 300


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


def _short(text: str) -> str:
    text = " ".join(text.split())
    return text if len(text) <= _DETAIL_CHARS else text[: _DETAIL_CHARS - 1] + "…"


def action_environment(fields: Mapping[str, str], base: Mapping[str, str] | None = None) -> dict[str, str]:
    """The environment of an action program: the service's own, plus ``SOAKLOG_<FIELD>`` for each alarm field."""
    env = dict(os.environ if base is None else base)
    for k, v in fields.items():
        env["SOAKLOG_" + k.upper()] = str(v).replace("\x00", "")
    return env


def run_program(argv: Sequence[str], *, timeout_s: float, env: Mapping[str, str]) -> tuple[Outcome, str]:
    """Run ``argv`` (no shell) with a time limit; at the limit its whole process group is killed."""
    try:
        proc = subprocess.Popen(  # noqa: S603 - an argument list, never a shell
            list(argv), shell=False, env=dict(env), stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
            stderr=subprocess.PIPE, start_new_session=True, close_fds=True,
        )
    except OSError as exc:
        return "failed", _short(f"cannot start {argv[0]!r}: {exc.strerror or exc}")
    try:
        out, err = proc.communicate(timeout=timeout_s)
    except subprocess.TimeoutExpired:
        _kill_group(proc)
        return "timed_out", f"still running after {timeout_s:g} s; killed (pid {proc.pid})"
    if proc.returncode == 0:
        return "done", _short(out.decode("utf-8", "replace").strip()[-_DETAIL_CHARS:])
    why = (f"killed by signal {-proc.returncode}" if proc.returncode < 0 else f"exit status {proc.returncode}")
    tail = err.decode("utf-8", "replace").strip() or out.decode("utf-8", "replace").strip()
    return "failed", _short(f"{why}" + (f": {tail[-_DETAIL_CHARS:]}" if tail else ""))


def _kill_group(proc: subprocess.Popen[bytes]) -> None:
    """SIGTERM to the program's process group, SIGKILL after a grace period; then reap it."""
    for sig, wait_s in ((signal.SIGTERM, KILL_GRACE_S), (signal.SIGKILL, 10.0)):
        try:
            os.killpg(proc.pid, sig)
        except ProcessLookupError:
            pass
        try:
            proc.communicate(timeout=wait_s)
            return
        except subprocess.TimeoutExpired:
            continue


def _same_reply(got: str, want: str) -> bool:
    g, w = got.strip(), want.strip()
    try:
        a, b = float(g), float(w)
        return math.isclose(a, b, rel_tol=0.0, abs_tol=1e-9) or a == b
    except ValueError:
        return g.upper() == w.upper()


def send_scpi(
    resource: str,
    commands: Sequence[str],
    *,
    backend: str = "@py",
    timeout_s: float = 5.0,
    check_errors: bool = True,
    verify: tuple[str, str] | None = None,
    resource_manager: Any = None,
) -> tuple[Outcome, str]:
    """Open ``resource``, send ``commands`` (a command ending in ``?`` is a query), check, close.

    Only the instrument is closed, never the resource manager: pyvisa shares one
    manager per backend in a process, and closing it would close every other
    session (the logger's own meters) with it.
    """
    import pyvisa
    from pyvisa import constants
    from pyvisa.errors import VisaIOError

    rm = resource_manager
    inst = None
    replies: list[str] = []
    try:
        if rm is None:
            rm = pyvisa.ResourceManager(backend)
        inst = rm.open_resource(resource, read_termination="\n", write_termination="\n",
                                timeout=int(timeout_s * 1000), open_timeout=int(timeout_s * 1000))
        for cmd in commands:
            if cmd.rstrip().endswith("?"):
                replies.append(f"{cmd} -> {inst.query(cmd).strip()}")
            else:
                inst.write(cmd)
        errors: list[str] = []
        if check_errors:
            # SCPI-1999 vol. 2, ch. 21: read the queue until "0,..." (no error); at most 20 entries
            for _ in range(20):
                e = inst.query("SYST:ERR?").strip()
                if e.split(",", 1)[0].strip().lstrip("+") in ("0", "-0"):
                    break
                errors.append(e)
        if errors:
            return "failed", _short(f"{resource} reported {'; '.join(errors)} after {'; '.join(commands)}")
        if verify is not None:
            got = inst.query(verify[0]).strip()
            if not _same_reply(got, verify[1]):
                return "failed", _short(f"{verify[0]} answered {got!r}, expected {verify[1]!r}: the command did not take")
            replies.append(f"{verify[0]} -> {got}")
        return "done", _short(f"sent {'; '.join(commands)} to {resource}" + (f"; {', '.join(replies)}" if replies else ""))
    except VisaIOError as exc:
        if exc.error_code == constants.StatusCode.error_timeout:
            return "timed_out", _short(f"no reply from {resource} within {timeout_s:g} s ({exc.description})")
        return "failed", _short(f"{resource}: {exc.description}")
    except (OSError, ValueError) as exc:
        return "failed", _short(f"{resource}: {exc}")
    except Exception as exc:  # noqa: BLE001 - a backend's own exceptions are not all VisaIOError
        return "failed", _short(f"{resource}: {type(exc).__name__}: {exc}")
    finally:
        if inst is not None:
            try:
                inst.close()
            except Exception:  # noqa: BLE001 - closing after a failure must not hide it
                pass


def set_serial_line(port: Any, line: str, state: bool) -> tuple[Outcome, str]:
    """Set (True) or clear (False) the RTS or DTR line of an open pyserial port."""
    import serial

    name = getattr(port, "name", None) or getattr(port, "port", "")
    try:
        setattr(port, line, bool(state))
    except (OSError, serial.SerialException) as exc:
        return "failed", _short(
            f"cannot {'set' if state else 'clear'} {line.upper()} of {name}: {exc}; a pseudo-terminal has no "
            "control lines: a relay needs a real serial port or a USB adapter"
        )
    return "done", f"{line.upper()} of {name} {'set' if state else 'cleared'}"


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
                w.thread.join(timeout=timeout_s + float(w.action.params.get("timeout_s", 0.0)))
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
                    outcome, detail = "failed", _short(f"{type(exc).__name__}: {exc}")
                res = ActionOutcome(job.action.name, job.action.kind, outcome, detail, job.fields, start, self._utc_s())
                (log.info if outcome == "done" else log.warning)("%s", res.message)
                self._outcomes.put(res)
            finally:
                with self._lock:
                    self._pending -= 1

    def _run(self, a: ActionConfig, fields: Mapping[str, str]) -> tuple[Outcome, str]:
        p = a.params
        if a.kind == "log":
            text = p.get("message") or ""
            msg = f"{text}: {fields.get('message', '')}" if text else fields.get("message", "")
            log.warning("alarm %s %s: %s", fields.get("alarm", ""), fields.get("event", ""), msg)
            return "done", _short(msg)
        if a.kind == "program":
            return run_program(p["argv"], timeout_s=float(p["timeout_s"]), env=action_environment(fields))
        if a.kind == "scpi":
            return send_scpi(p["resource"], p["commands"], backend=p.get("backend", "@py"),
                             timeout_s=float(p.get("timeout_s", 5.0)), check_errors=bool(p.get("check_errors", True)),
                             verify=p.get("verify"), resource_manager=self._rm)
        if a.kind == "serial_line":
            port, why = self._port(p["port"], int(p.get("baudrate", 9600)), str(p["line"]), bool(p["state"]))
            if port is None:
                return "failed", why
            return set_serial_line(port, str(p["line"]), bool(p["state"]))
        return "failed", f"no such action kind {a.kind!r}"

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
                return None, _short(f"cannot open {url}: {exc}")
            self._ports[url] = port
            return port, ""

    def port(self, url: str) -> Any:
        """A port the runner holds open (None if it has not opened it)."""
        with self._ports_lock:
            return self._ports.get(url)
