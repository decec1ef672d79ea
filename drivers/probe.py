"""Talk to one instrument once and say plainly what works: identity, a reading per channel, its error queue.

``probe()`` never raises for instrument trouble: it returns a ``ProbeResult``
whose ``problem`` says why it could not talk (nothing listening, no answer,
garbage) and what to try. It does not reset the instrument; each reading is a
``MEASure?`` with the meter's own range choice.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import dataclass

from soaklog.drivers.base import RawReading, failed_scan
from soaklog.drivers.scpi_session import ReplyGarbled, ScpiSession
from soaklog.drivers.scpi_text import PROFILES, MeterProfile, format_channel_list, parse_reply
from soaklog.errors import InstrumentError, InstrumentTimeout

__all__ = ["ProbeResult", "probe", "format_probe"]

#: the name of the reading taken without a channel list (the meter's front terminals)
FRONT = "front"


@dataclass(frozen=True)
class ProbeResult:
    """What one conversation with an instrument gave.

    Attributes:
        resource: the VISA resource string probed.
        backend: the pyvisa backend used.
        identity: the ``*IDN?`` answer, or None when there was none.
        readings: one per channel asked for (or one from the front terminals).
        errors: the error queue entries read afterwards, as sent (``-113,"Undefined header"``).
        problem: why it could not talk, and what to try; empty when it could.
        notes: other things worth knowing (error queue entries, readings that are not ok).
        errors_read: whether the error queue was read to its end (not after a failure).
    """

    resource: str
    backend: str
    identity: str | None
    readings: tuple[RawReading, ...] = ()
    errors: tuple[str, ...] = ()
    problem: str = ""
    notes: tuple[str, ...] = ()
    errors_read: bool = False

    @property
    def ok(self) -> bool:
        """True when the instrument answered every question in a form that could be read."""
        return self.identity is not None and not self.problem

    @property
    def exit_code(self) -> int:
        """0 when it could talk, 1 when it could not."""
        return 0 if self.ok else 1


def _where(resource: str) -> str:
    """``host:port`` of a TCPIP socket resource, else the resource itself."""
    parts = resource.split("::")
    if len(parts) == 4 and parts[0].upper().startswith("TCPIP") and parts[3].upper() == "SOCKET":
        return f"{parts[1]}:{parts[2]}"
    return resource


def _diagnosis(exc: InstrumentError, identify: str, resource: str, timeout_s: float) -> tuple[str, str]:
    """What the session's failure means for someone at the bench, and the reading status it gives."""
    command = exc.command or ""
    cause = exc.__cause__
    if isinstance(exc, InstrumentTimeout):
        if command == identify:
            return (f"no answer to {identify} within {timeout_s:g} s: something accepted the connection but sent no "
                    "line ending in \\n; check the instrument's read/write termination (this program uses \\n) "
                    "and that this port speaks SCPI"), "timeout"
        return (f"no answer to {command!r} within {timeout_s:g} s; the reading may take longer "
                "(NPLC, autorange, many channels): try a longer timeout"), "timeout"
    if isinstance(cause, ConnectionRefusedError):
        return (f"nothing is listening at {_where(resource)} (connection refused): is the instrument on, "
                "at this address, and is this its SCPI port (often 5025)?"), "lost"
    if isinstance(cause, UnicodeDecodeError):
        return (f"the answer to {command!r} is not ASCII text (garbage): this port may not speak SCPI, "
                "or a serial link has the wrong baud rate"), "garbage"
    if isinstance(exc, ReplyGarbled):
        return f"{exc}: this port may not speak SCPI", "garbage"
    return str(exc), "lost"


def probe(
    resource: str,
    *,
    channels: Sequence[str] | None = None,
    four_wire: bool = False,
    timeout_s: float = 3.0,
    backend: str = "@py",
    profile: MeterProfile = PROFILES["generic"],
) -> ProbeResult:
    """Open ``resource``, read its identity, one reading per channel, and its error queue.

    It talks through the driver layer's SCPI session (``drivers.scpi_session``),
    as the logger's own driver does: the same identity check, time limits and
    reading of the error queue.

    Args:
        resource: a VISA resource string (``TCPIP0::192.0.2.5::5025::SOCKET``).
        channels: card channels to read one at a time; None reads once without a channel list.
        four_wire: 4-wire resistance (``MEAS:FRES?``) instead of 2-wire.
        timeout_s: how long each answer may take.
        backend: the pyvisa backend (``@py``, ``file.yaml@sim``).
        profile: where the commands come from.
    """
    wiring = 4 if four_wire else 2
    template = profile.measure_4w if four_wire else profile.measure_2w
    names = [str(c) for c in channels] if channels else [FRONT]
    session = ScpiSession("probe", resource, backend=backend, timeout_s=timeout_s, identify=profile.identify,
                          error_query=profile.error_query)
    identity: str | None = None
    readings: list[RawReading] = []
    errors: list[str] = []
    notes: list[str] = []
    problem = ""
    errors_read = False
    try:
        identity = session.open()
        for name in names:
            command = profile.render(template, channels="" if name == FRONT else format_channel_list([name]))
            try:
                reply = session.query(command)
            except InstrumentError as exc:
                # the stream may be out of step now: ask nothing more
                why, status = _diagnosis(exc, profile.identify, resource, timeout_s)
                readings.extend(failed_scan(names[len(readings):], time.time(), status, why))
                raise
            readings.extend(parse_reply(reply, [name], time.time(), wiring=wiring))
        try:
            errors = [f'{code},"{message}"' for code, message in session.drain_errors()]
            errors_read = True
        except ReplyGarbled as exc:
            notes.append(f"the error queue could not be read to its end: {exc}")
    except InstrumentError as exc:
        problem = _diagnosis(exc, profile.identify, resource, timeout_s)[0]
    finally:
        session.close()  # the session only: pyvisa shares one manager per backend with the whole process
    if errors:
        notes.append(f"the instrument's error queue held {len(errors)} entr{'y' if len(errors) == 1 else 'ies'}")
    if any(r.status == "garbage" for r in readings) and not problem:
        problem = f"a reading does not parse: {next(r.reason for r in readings if r.status == 'garbage')}"
    for r in readings:
        if r.status not in ("ok", "garbage", "timeout", "lost"):
            notes.append(f"{r.channel}: {r.status}: {r.reason}")
    return ProbeResult(resource, backend, identity, tuple(readings), tuple(errors), problem, tuple(notes), errors_read)


def format_probe(result: ProbeResult) -> str:
    """The result as a few aligned lines for a terminal."""
    lines = [f"{'resource':<10}{result.resource}  (backend {result.backend})"]
    lines.append(f"{'identity':<10}{result.identity if result.identity is not None else '(none)'}")
    for r in result.readings:
        if r.ok:
            shown = f"{r.value:.9g} ohm" + (f"  ({r.wiring}-wire)" if r.wiring else "")
        else:
            shown = f"{r.status}: {r.reason}"
        lines.append(f"{'reading':<10}{r.channel:<7}{shown}")
    if result.identity is not None:
        listed = "; ".join(result.errors) if result.errors else ("none" if result.errors_read else "(not read)")
        lines.append(f"{'errors':<10}{listed}")
    if result.problem:
        lines.append(f"{'problem':<10}{result.problem}")
    verdict = "talks" if result.ok else "could not talk"
    lines.append(f"{'verdict':<10}{verdict} (exit {result.exit_code})")
    return "\n".join(lines)
