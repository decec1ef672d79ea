"""A small run-time control interface for the simulators: one text line in, one line out.

A simulator registers named commands; ``soaklog simulate`` serves them on a
loopback TCP port so that a test or a user (``nc 127.0.0.1 PORT``) can inject
and clear faults while the simulator runs::

    > fault mute            < ok mute
    > clear                 < ok cleared
    > status                < ok {"faults": []}
    > nonsense              < error unknown command 'nonsense'; known: clear, fault, status

Only loopback addresses are accepted: a fault port is no business of the network.
"""

from __future__ import annotations

import ipaddress
import socket
import socketserver
import threading
from collections.abc import Callable, Sequence

__all__ = ["ControlError", "CommandTable", "ControlServer", "send_control"]

Handler = Callable[[Sequence[str]], str]


class ControlError(Exception):
    """A control command that cannot be carried out; its text is sent back."""


class CommandTable:
    """Named handlers: ``handler(args) -> reply text``; raise ControlError to refuse."""

    def __init__(self) -> None:
        self._handlers: dict[str, Handler] = {}
        self._lock = threading.Lock()

    def register(self, name: str, handler: Handler) -> None:
        with self._lock:
            self._handlers[name.lower()] = handler

    def names(self) -> list[str]:
        with self._lock:
            return sorted(self._handlers)

    def execute(self, line: str) -> str:
        """Run one command line and return the reply line (``ok …`` or ``error …``)."""
        words = line.strip().split()
        if not words:
            return "error empty command"
        with self._lock:
            handler = self._handlers.get(words[0].lower())
        if handler is None:
            return f"error unknown command {words[0]!r}; known: {', '.join(self.names())}"
        try:
            return "ok " + handler(words[1:]).strip()
        except ControlError as exc:
            return f"error {exc}"


def _require_loopback(host: str) -> None:
    try:
        addr = ipaddress.ip_address(socket.gethostbyname(host))
    except (OSError, ValueError) as exc:
        raise ValueError(f"control host {host!r} does not resolve") from exc
    if not addr.is_loopback:
        raise ValueError(f"control port must listen on a loopback address, not {host!r}")


class _Handler(socketserver.StreamRequestHandler):
    server: _Server

    def handle(self) -> None:
        for raw in self.rfile:
            reply = self.server.table.execute(raw.decode("utf-8", "replace"))
            try:
                self.wfile.write(reply.encode("utf-8") + b"\n")
                self.wfile.flush()
            except OSError:
                return


class _Server(socketserver.ThreadingTCPServer):
    daemon_threads = True
    allow_reuse_address = True
    table: CommandTable


class ControlServer:
    """Serves a CommandTable on a loopback TCP port (0 picks a free one)."""

    def __init__(self, table: CommandTable, *, host: str = "127.0.0.1", port: int = 0) -> None:
        _require_loopback(host)
        self._server = _Server((host, port), _Handler)
        self._server.table = table
        self._thread = threading.Thread(target=self._server.serve_forever, name="sim-control", daemon=True)

    @property
    def address(self) -> tuple[str, int]:
        host, port = self._server.server_address[:2]
        return str(host), int(port)

    def start(self) -> ControlServer:
        self._thread.start()
        return self

    def close(self) -> None:
        self._server.shutdown()
        self._server.server_close()

    def __enter__(self) -> ControlServer:
        return self.start()

    def __exit__(self, *exc: object) -> None:
        self.close()


def send_control(address: tuple[str, int], line: str, *, timeout_s: float = 5.0) -> str:
    """Send one command line to a control port and return the reply line."""
    with socket.create_connection(address, timeout=timeout_s) as sock:
        sock.sendall(line.strip().encode("utf-8") + b"\n")
        buf = b""
        while not buf.endswith(b"\n"):
            chunk = sock.recv(4096)
            if not chunk:
                break
            buf += chunk
    return buf.decode("utf-8", "replace").strip()
