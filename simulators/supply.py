"""A programmable DC supply feeding the chamber's heater, served as SCPI over raw TCP on loopback.

Its output is the chamber world's ``heater_supply_enabled`` switch: ``OUTPut OFF``
really cuts the simulated heater, so an interlock action cools the simulated
chamber. The maker and model are invented.

Commands (IEEE 488.2 common commands and SCPI-1999 forms, from memory of both)::

    *IDN?  *RST  *CLS  *OPC?  *ESR?  *TST?
    OUTPut[:STATe] ON|OFF|1|0      OUTPut[:STATe]?  -> 1 | 0
    SYSTem:ERRor[:NEXT]?           SYSTem:VERSion?

``*RST`` switches the output off (SCPI-1999: the reset state of an output is off).

Control commands (``supply …`` on the lab's control port)::

    status | output on|off | fault mute | clear | received
"""

from __future__ import annotations

import ipaddress
import json
import socket
import socketserver
import threading
from collections.abc import Callable, Sequence
from typing import Protocol

from soaklog.simulators import scpi
from soaklog.simulators.control import CommandTable, ControlError
from soaklog.simulators.scpi import ScpiError

__all__ = ["SupplySimulator", "HeaterSwitch", "MAKER", "MODEL"]

MAKER = "Ombrevale Instruments"
MODEL = "HPS-3000 heater supply"
FIRMWARE = "1.4"
SCPI_VERSION = "1999.0"
#: the commands kept for tests and the control port
_LOG_LINES = 200


class HeaterSwitch(Protocol):
    heater_supply_enabled: bool


class _Switch:
    """A switch of its own when the supply feeds no world."""

    heater_supply_enabled = True


class SupplySimulator:
    """The supply on a loopback TCP port; ``resource`` is its VISA address.

    Args:
        world: what the output drives (``heater_supply_enabled``); None for a bare supply.
        host: a loopback address.
        port: the TCP port (0 picks a free one).
        serial: the serial number of ``*IDN?``.
    """

    def __init__(self, world: HeaterSwitch | None = None, *, host: str = "127.0.0.1", port: int = 0,
                 serial: str = "SIM-0001") -> None:
        addr = ipaddress.ip_address(socket.gethostbyname(host))
        if not addr.is_loopback:
            raise ValueError(f"the simulated supply listens on loopback only, not {host!r}")
        self._world: HeaterSwitch = world if world is not None else _Switch()
        self._serial = serial
        self._lock = threading.RLock()
        self._errors = scpi.ErrorQueue(20)
        self._status = scpi.StatusRegisters()
        self._status.power_on()
        self._muted = False
        self._log: list[str] = []
        self._tree = scpi.CommandTree()
        self._handlers: dict[str, Callable[[Sequence[str]], str | None]] = {}
        self._register()
        sim = self

        class Handler(socketserver.StreamRequestHandler):
            def handle(self) -> None:
                for raw in self.rfile:
                    reply = sim.execute(raw.rstrip(b"\r\n"))
                    if reply is None:
                        continue
                    try:
                        self.wfile.write(reply.encode("ascii") + b"\n")
                        self.wfile.flush()
                    except OSError:
                        return

        class Server(socketserver.ThreadingTCPServer):
            daemon_threads = True
            allow_reuse_address = True

        self._server = Server((host, port), Handler)
        self._thread = threading.Thread(target=self._server.serve_forever, name="supply", daemon=True)
        self._started = False

    # ------------------------------------------------------------ lifetime

    @property
    def address(self) -> tuple[str, int]:
        host, port = self._server.server_address[:2]
        return str(host), int(port)

    @property
    def resource(self) -> str:
        host, port = self.address
        return f"TCPIP0::{host}::{port}::SOCKET"

    @property
    def identity(self) -> str:
        return f"{MAKER},{MODEL},{self._serial},{FIRMWARE}"

    @property
    def output(self) -> bool:
        return bool(self._world.heater_supply_enabled)

    def start(self) -> SupplySimulator:
        if not self._started:
            self._started = True
            self._thread.start()
        return self

    def close(self) -> None:
        if self._started:
            self._server.shutdown()
            self._started = False
        self._server.server_close()

    def __enter__(self) -> SupplySimulator:
        return self.start()

    def __exit__(self, *exc: object) -> None:
        self.close()

    def received(self) -> list[str]:
        """The program messages received, oldest first (the last 200)."""
        with self._lock:
            return list(self._log)

    # ------------------------------------------------------------ SCPI

    def execute(self, message: bytes | str) -> str | None:
        """Run one program message; its response line, or None when it asks nothing (or the supply is mute)."""
        try:
            text = message.decode("ascii") if isinstance(message, bytes) else message
        except UnicodeDecodeError:
            with self._lock:
                self._record(ScpiError(-101, "byte above 0x7F in the message"))
            return None
        responses: list[str] = []
        with self._lock:
            self._log.append(text.strip())
            del self._log[:-_LOG_LINES]
            if self._muted:
                return None
            for item in scpi.parse_message(text, self._tree):
                if isinstance(item, ScpiError):
                    self._record(item)
                    break
                try:
                    out = self._handlers[item.pattern](item.params)
                except ScpiError as exc:
                    self._record(exc)
                    if scpi.ends_message(exc.code):
                        break
                    continue
                if out is not None:
                    responses.append(out)
        return ";".join(responses) if responses else None

    def _record(self, e: ScpiError) -> None:
        self._errors.push(e.code, e.detail)
        self._status.record_error(e.code)

    def _register(self) -> None:
        def add(pattern: str, handler: Callable[[Sequence[str]], str | None]) -> None:
            self._tree.add(pattern)
            self._handlers[pattern] = handler

        def none(fn: Callable[[], str | None]) -> Callable[[Sequence[str]], str | None]:
            def h(params: Sequence[str]) -> str | None:
                if params:
                    raise ScpiError(-108, params[0])
                return fn()
            return h

        add("*IDN?", none(lambda: self.identity))
        add("*RST", none(lambda: self._set_output(False)))
        add("*CLS", none(self._cls))
        add("*OPC?", none(lambda: "1"))
        add("*ESR?", none(lambda: str(self._status.read_esr())))
        add("*TST?", none(lambda: "0"))
        add("OUTPut[:STATe]", self._output)
        add("OUTPut[:STATe]?", none(lambda: "1" if self.output else "0"))
        add("SYSTem:ERRor[:NEXT]?", none(self._errors.pop_formatted))
        add("SYSTem:VERSion?", none(lambda: SCPI_VERSION))

    def _cls(self) -> None:
        self._errors.clear()
        self._status.read_esr()

    def _output(self, params: Sequence[str]) -> None:
        if len(params) != 1:
            raise ScpiError(-109 if not params else -108, "OUTPut ON|OFF")
        self._set_output(scpi.parse_boolean(params[0]))

    def _set_output(self, on: bool) -> None:
        self._world.heater_supply_enabled = bool(on)

    # ------------------------------------------------------------ control port

    def commands(self) -> CommandTable:
        table = CommandTable()

        def status(args: Sequence[str]) -> str:
            return json.dumps({"resource": self.resource, "identity": self.identity, "output": self.output,
                               "muted": self._muted, "errors_queued": len(self._errors)})

        def output(args: Sequence[str]) -> str:
            if len(args) != 1 or args[0].lower() not in ("on", "off"):
                raise ControlError("usage: output on|off")
            self._set_output(args[0].lower() == "on")
            return f"output {args[0].lower()}"

        def fault(args: Sequence[str]) -> str:
            if list(args) != ["mute"]:
                raise ControlError("usage: fault mute")
            with self._lock:
                self._muted = True
            return "mute"

        def clear(args: Sequence[str]) -> str:
            with self._lock:
                self._muted = False
            return "cleared"

        def received(args: Sequence[str]) -> str:
            return json.dumps(self.received()[-20:])

        for name, fn in (("status", status), ("output", output), ("fault", fault), ("clear", clear),
                         ("received", received)):
            table.register(name, fn)
        return table
