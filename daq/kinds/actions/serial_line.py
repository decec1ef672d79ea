"""``kind = "serial_line"``: set or clear RTS or DTR of a serial port (a relay on a USB adapter's control line).

The port (pyserial: a device path or a URL such as ``loop://``) is opened once,
its line preset so opening does not pulse a relay, and held open: closing a
port may drop its control lines and with them the relay.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from soaklog.kinds import ACTIONS
from soaklog.kinds.actions import ActionContext, ActionKind, Outcome, short
from soaklog.kinds.keys import Checker, Key, positive

__all__ = ["set_serial_line"]


def set_serial_line(port: Any, line: str, state: bool) -> tuple[Outcome, str]:
    """Set (True) or clear (False) the RTS or DTR line of an open pyserial port."""
    import serial

    name = getattr(port, "name", None) or getattr(port, "port", "")
    try:
        setattr(port, line, bool(state))
    except (OSError, serial.SerialException) as exc:
        return "failed", short(
            f"cannot {'set' if state else 'clear'} {line.upper()} of {name}: {exc}; a pseudo-terminal has no "
            "control lines: a relay needs a real serial port or a USB adapter"
        )
    return "done", f"{line.upper()} of {name} {'set' if state else 'cleared'}"


@ACTIONS.register("serial_line")
class SerialLineAction(ActionKind):
    name = "serial_line"
    keys: Mapping[str, Key] = {
        "port": Key(str, "the serial port: a device path or a pyserial URL", required=True),
        "line": Key(str, "rts or dtr", required=True),
        "state": Key(bool, "true sets the line, false clears it", default=True),
        "baudrate": Key(int, "the port's speed (the line does not care; the port needs one)", default=9600),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any] | None:
        port = ck.get(d, key, "port", str, required=True)
        line = ck.get(d, key, "line", str, required=True,
                      check=lambda v: None if v.lower() in ("rts", "dtr") else f"must be rts or dtr, got {v!r}")
        state = ck.get(d, key, "state", bool, default=True)
        baud = ck.get(d, key, "baudrate", int, default=9600, check=positive)
        if port is None or line is None:
            return None
        return {"port": port, "line": line.lower(), "state": bool(state), "baudrate": baud or 9600}

    def describe(self, params: Mapping[str, Any]) -> str:
        return f"{'set' if params.get('state') else 'clear'} {str(params.get('line', '')).upper()} of {params.get('port', '')}"

    def run(self, params: Mapping[str, Any], fields: Mapping[str, str], ctx: ActionContext) -> tuple[Outcome, str]:
        if ctx.hold_port is None:
            return "failed", "no serial ports can be held here"
        line, state = str(params["line"]), bool(params["state"])
        port, why = ctx.hold_port(str(params["port"]), int(params.get("baudrate", 9600)), line, state)
        if port is None:
            return "failed", why
        return set_serial_line(port, line, state)
