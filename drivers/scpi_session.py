"""One SCPI instrument session over VISA: opened with an identity check, every failure translated once, the error queue read.

The driver layer's one way to talk to a message-based SCPI instrument, used
by the multimeter driver (``drivers.scpi_meter``), by ``soaklog probe`` and
by the alarm action that sends SCPI commands (a heater supply's interlock):

- ``open()`` opens the resource through ``pyvisa.ResourceManager(backend)``
  and asks who answers (``*IDN?``): pyvisa-py opens a TCP resource even when
  nothing listens, so only an answer proves the link. A session re-opened
  after a failure must meet the same instrument it met first.
- ``query``/``write`` translate every foreign failure once: a timeout is an
  ``InstrumentTimeout``, a refused or lost link a ``ConnectionLost``, bytes
  that are not ASCII a ``ReplyGarbled``. Nothing above this module sees a
  ``VisaIOError``.
- ``drain_errors()`` reads the SCPI error queue until it says 0.
- ``close()`` closes the instrument only, never ``clear()`` (which hangs on a
  dead socket) and never the resource manager: pyvisa shares one manager per
  backend in a process, and closing it would close every other session.
"""

from __future__ import annotations

import select
import socket
from collections.abc import Callable
from typing import Any, Literal, TypeVar

import pyvisa
from pyvisa.constants import StatusCode

from soaklog.drivers.scpi_text import parse_error_entry, shown
from soaklog.errors import ConnectionLost, InstrumentError, InstrumentTimeout

__all__ = ["ReplyGarbled", "ScpiSession", "MAX_ERROR_ENTRIES", "stream_state", "visa_ms"]

#: SCPI error queues hold tens of entries; more than this is an instrument that never says 0
MAX_ERROR_ENTRIES = 64

_T = TypeVar("_T")
_E = TypeVar("_E", bound=InstrumentError)


class ReplyGarbled(InstrumentError):
    """An answer that is not ASCII text or not what the command answers."""


def visa_ms(seconds: float) -> int:
    """VISA timeouts are whole milliseconds."""
    return max(1, round(seconds * 1000.0))


class ScpiSession:
    """One message-based VISA session to a SCPI instrument (no I/O until ``open``).

    Args:
        name: the instrument's name in messages (``dmm1``, ``scpi action``).
        resource: a VISA resource string, used as given.
        backend: the pyvisa backend (``@py``, ``file.yaml@sim``).
        timeout_s: how long one reply may take (also the open timeout).
        identify: the identity query.
        error_query: the error queue query (empty: the instrument has none).
        resource_manager: a pyvisa resource manager to use (default: the backend's).
    """

    def __init__(self, name: str, resource: str, *, backend: str = "@py", timeout_s: float = 5.0,
                 identify: str = "*IDN?", error_query: str = "SYST:ERR?", resource_manager: Any = None) -> None:
        self.name = name
        self.resource = resource
        self.backend = backend
        self.timeout_s = float(timeout_s)
        self.identify = identify
        self.error_query = error_query
        self._rm = resource_manager
        self._inst: pyvisa.resources.MessageBasedResource | None = None
        #: the identity the instrument gave when first opened (a re-opened session must meet it again)
        self.identity: str | None = None

    @property
    def instrument(self) -> pyvisa.resources.MessageBasedResource | None:
        """The open pyvisa resource, or None."""
        return self._inst

    @property
    def is_open(self) -> bool:
        return self._inst is not None

    # ------------------------------------------------------------ opening and closing

    def open(self) -> str:
        """Open the resource and check who answers; its identity.

        Raises:
            ConnectionLost: the resource cannot be opened or nothing answers.
            InstrumentTimeout: something accepted the connection but did not answer.
            ReplyGarbled: the answer is not an identity.
            InstrumentError: the backend cannot be loaded, the resource is not
                message-based, or another instrument answers than the one met first.
        """
        self.close()
        rm = self._resource_manager()
        try:
            inst = rm.open_resource(self.resource, read_termination="\n", write_termination="\n",
                                    timeout=visa_ms(self.timeout_s), open_timeout=visa_ms(self.timeout_s))
        except pyvisa.errors.VisaIOError as exc:
            raise self.error(ConnectionLost, f"cannot open the resource: {exc.description}") from exc
        except Exception as exc:  # pyvisa-py raises a bare Exception when the TCP connect times out
            raise self.error(ConnectionLost, f"cannot open the resource: {exc}") from exc
        if not isinstance(inst, pyvisa.resources.MessageBasedResource):
            inst.close()
            raise self.error(InstrumentError, "is not a message-based resource; SCPI needs one")
        self._inst = inst
        try:
            return self._identify()
        except InstrumentError:
            self.close()
            raise

    def _identify(self) -> str:
        identity = self.query(self.identify).strip()
        if not identity or not identity.isprintable():
            raise self.error(ReplyGarbled, f"answered {self.identify!r} with {shown(identity)}, not an identity",
                             self.identify)
        if self.identity is not None and identity != self.identity:
            what = (f"now answers as {identity!r}, not {self.identity!r}; "
                    "another instrument at this address? check it and restart")
            raise self.error(InstrumentError, what, self.identify)
        self.identity = identity
        return identity

    def close(self) -> None:
        """Close the instrument (never ``clear()``, never the manager); never raises."""
        inst, self._inst = self._inst, None
        if inst is not None:
            try:
                inst.close()
            except (pyvisa.errors.Error, OSError):
                pass

    def __enter__(self) -> ScpiSession:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # ------------------------------------------------------------ talking

    def query(self, command: str) -> str:
        inst = self._require()
        return self._io(command, lambda: inst.query(command))

    def write(self, command: str) -> None:
        inst = self._require()
        self._io(command, lambda: inst.write(command))

    def drain_errors(self, on_entry: Callable[[int, str], None] | None = None) -> list[tuple[int, str]]:
        """Read the error queue until it says 0 (SCPI-1999 vol. 2, ch. 21, from memory); the entries before it.

        Raises:
            ReplyGarbled: an answer that is not an error entry, or a queue that never empties.
        """
        command = self.error_query
        if not command:
            return []
        entries: list[tuple[int, str]] = []
        for _ in range(MAX_ERROR_ENTRIES):
            reply = self.query(command)
            entry = parse_error_entry(reply)
            if entry is None:
                raise self.error(ReplyGarbled, f"answered {command!r} with {shown(reply)}", command)
            if entry[0] == 0:
                return entries
            entries.append(entry)
            if on_entry is not None:
                on_entry(*entry)
        raise self.error(ReplyGarbled, f"error queue did not empty after {MAX_ERROR_ENTRIES} reads of {command!r}",
                         command)

    def stream_state(self) -> Literal["idle", "closed", "stale", "unknown"]:
        """Whether the open session's link was closed by its peer or holds unrequested bytes (see ``stream_state``)."""
        return "closed" if self._inst is None else stream_state(self._inst)

    # ------------------------------------------------------------ failures, translated once

    def _require(self) -> pyvisa.resources.MessageBasedResource:
        if self._inst is None:
            raise self.error(ConnectionLost, "is not open")
        return self._inst

    def _io(self, command: str, op: Callable[[], _T]) -> _T:
        try:
            return op()
        except pyvisa.errors.VisaIOError as exc:
            if exc.error_code == StatusCode.error_timeout:
                advice = (
                    "check the read termination (this driver ends lines with \\n) and that the port speaks SCPI"
                    if command == self.identify
                    else "check the read termination, or raise timeout_s if a scan takes longer"
                )
                err = InstrumentTimeout(
                    f"no reply to {command!r} from {self.name} ({self.resource}) within {self.timeout_s:g} s; {advice}",
                    resource=self.resource, command=command,
                )
                err.timeout_s = self.timeout_s  # type: ignore[attr-defined]
                raise err from exc
            raise self.error(ConnectionLost, f"failed on {command!r}: {exc.description}", command) from exc
        except pyvisa.errors.Error as exc:  # e.g. InvalidSession: the session was closed under us
            raise self.error(ConnectionLost, f"lost its VISA session on {command!r}: {exc}", command) from exc
        except ConnectionRefusedError as exc:
            what = "refused the connection: nothing listens there; is the instrument on and the port right?"
            raise self.error(ConnectionLost, what, command) from exc
        except OSError as exc:
            raise self.error(ConnectionLost, f"lost the connection on {command!r}: {exc}", command) from exc
        except UnicodeDecodeError as exc:
            what = f"answered {command!r} with bytes that are not ASCII ({exc.reason} at byte {exc.start})"
            raise self.error(ReplyGarbled, what, command) from exc

    def _resource_manager(self) -> Any:
        if self._rm is None:
            try:
                self._rm = pyvisa.ResourceManager(self.backend)
            except (OSError, ValueError, ImportError, pyvisa.errors.Error) as exc:
                raise self.error(InstrumentError, f"cannot load the VISA backend {self.backend!r}: {exc}") from exc
        return self._rm

    def where(self, what: str) -> str:
        return f"{self.name} ({self.resource}) {what}"

    def error(self, kind: type[_E], what: str, command: str | None = None) -> _E:
        """An exception of ``kind`` that names this instrument and keeps the facts as attributes."""
        return kind(self.where(what), resource=self.resource, command=command)


def stream_state(inst: object) -> Literal["idle", "closed", "stale", "unknown"]:
    """Whether a pyvisa-py TCP socket session was closed by its peer or holds unrequested bytes.

    pyvisa-py does not notice a closed peer: the next query spins a CPU core
    for the whole timeout. Looking at the socket first (no I/O, no wait)
    catches it. Sessions of other backends are ``unknown`` and left alone.
    """
    try:
        session = inst.visalib.sessions[inst.session]  # type: ignore[attr-defined]
    except (AttributeError, KeyError, TypeError, pyvisa.errors.Error):
        return "unknown"
    sock = getattr(session, "interface", None)
    if not isinstance(sock, socket.socket):
        return "unknown"
    if getattr(session, "_pending_buffer", b""):
        return "stale"
    try:
        ready, _, _ = select.select([sock], [], [], 0)
        if not ready:
            return "idle"
        data = sock.recv(1, socket.MSG_PEEK)
    except BlockingIOError:
        return "idle"
    except (OSError, ValueError):
        return "closed"
    return "stale" if data else "closed"
