"""What SCPI instruments say, as text: reply parsing (records or columnar) and command profiles (pure).

No I/O here: the driver (``drivers.scpi_meter``), the probe and the tests use
these functions on strings, and Hypothesis feeds them garbage.
"""

from __future__ import annotations

import dataclasses
import math
import re
import string
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from soaklog.errors import InputError
from soaklog.drivers.base import STATUS_INDEX, RawReading, RawScan, failed_scan

__all__ = [
    "OVERLOAD",
    "NOT_A_NUMBER",
    "PROFILES",
    "MeterProfile",
    "format_channel_list",
    "parse_error_entry",
    "parse_reply",
    "parse_scan",
    "profile_named",
    "shown",
]

#: SCPI-1999 vol. 1, 7.2.1 (from memory): +9.9E37 stands for an over-range (infinite) reading
OVERLOAD = 9.9e37
#: SCPI-1999 vol. 1, 7.2.1 (from memory): 9.91E37 stands for not-a-number
NOT_A_NUMBER = 9.91e37
_SHOWN_CHARS = 40

# IEEE 488.2-1992, 8.7 (from memory): NR1/NR2/NR3 response numbers; stricter
# than float(), which would also take "nan", "inf", "1_0", "0x10" and non-ASCII digits
_NR = r"\s*[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?\s*"
_NUMBER = re.compile(_NR, re.ASCII)
_NUMBERS = re.compile(rf"{_NR}(?:,{_NR})*", re.ASCII)  # a whole scan in one pass
#: str.translate table deleting every character a scan of plain numbers may hold
_NUMBER_CHARS = str.maketrans("", "", "0123456789+-.eE, \t\n\r\f\v")
_ERROR_ENTRY = re.compile(r'\s*([+-]?[0-9]+)\s*(?:,\s*"?(.*?)"?)?\s*', re.ASCII | re.DOTALL)
_PLACEHOLDERS = frozenset({"range", "channels", "nplc", "state"})


def shown(text: str) -> str:
    """The received text as it goes into a reason: quoted, cut to a readable length."""
    return repr(text if len(text) <= _SHOWN_CHARS else text[:_SHOWN_CHARS] + "…")


# --------------------------------------------------------------------- parsing


def parse_reply(
    text: str,
    channels: Sequence[str],
    t_utc_s: float,
    *,
    current_a: float | None = None,
    wiring: int | None = None,
    signed: frozenset[str] = frozenset(),
) -> list[RawReading]:
    """Split one comma-separated SCPI reply into one reading per channel; never raises, never invents a number.

    A reply that does not hold exactly one plain number per channel makes every
    channel ``garbage`` (the values cannot be told apart). Per value: the
    SCPI not-a-number code is ``error``, an overload (either sign) is
    ``overload``, a negative resistance is ``out_of_range``; a channel in
    ``signed`` measures DC volts (a thermocouple), which may be negative.
    """
    if not channels:
        return []
    if not isinstance(text, str):
        return failed_scan(channels, t_utc_s, "garbage", f"reply is not text: {type(text).__name__}")
    body = text.strip()
    fields = body.split(",") if body else []
    if len(fields) != len(channels):
        reason = f"expected {len(channels)} value(s), got {len(fields)}: {shown(body)}"
        return failed_scan(channels, t_utc_s, "garbage", reason)
    if _NUMBERS.fullmatch(body) is None:
        bad = next(f for f in fields if _NUMBER.fullmatch(f) is None)
        return failed_scan(channels, t_utc_s, "garbage", f"not a number {shown(bad.strip())} in {shown(body)}")
    out = []
    for channel, field_text in zip(channels, fields):
        value = float(field_text)
        if 0.0 <= value < OVERLOAD:  # the usual case first: a scan is mostly good readings
            out.append(RawReading(channel, t_utc_s, value, "V" if channel in signed else "ohm", "ok", "",
                                  None if channel in signed else current_a, None if channel in signed else wiring))
            continue
        if channel in signed and -OVERLOAD < value < 0.0:
            out.append(RawReading(channel, t_utc_s, value, "V", "ok", "", None, None))
            continue
        if math.isclose(value, NOT_A_NUMBER, rel_tol=1e-9):
            status, reason = "error", "the meter sent not-a-number (9.91E37) for this reading"
        elif not abs(value) < OVERLOAD:
            status, reason = "overload", f"the meter reports over range ({field_text.strip()})"
        else:
            status, reason = "out_of_range", f"negative resistance {field_text.strip()} ohm; check the wiring"
        out.append(RawReading(channel, t_utc_s, math.nan, "ohm", status, reason, current_a, wiring))
    return out


def parse_scan(
    text: str,
    channels: Sequence[str],
    t_utc_s: float,
    *,
    current_a: Sequence[float | None] | float | None = None,
    wiring: Sequence[int | None] | int | None = None,
    signed: Sequence[bool] | None = None,
) -> RawScan:
    """``parse_reply`` in columnar form: the same statuses, as one ``RawScan``.

    A reply of plain numbers all inside 0 … 9.9E37 (the every-day case) is
    converted in one pass; anything else goes through ``parse_reply`` for its
    per-value statuses and reasons.
    """
    chans = tuple(channels)
    # only the characters of plain numbers: then float() accepts exactly the
    # IEEE 488.2 NR1/NR2/NR3 forms (no nan, inf, 0x…, 1_0, non-ASCII digits)
    if isinstance(text, str) and not text.translate(_NUMBER_CHARS):
        fields = text.split(",")
        if len(fields) == len(chans):
            try:
                values = np.array([float(f) for f in fields], dtype=np.float64)
            except ValueError:
                values = None
            low = 0.0 if signed is None else np.where(np.asarray(signed, dtype=bool), -OVERLOAD, 0.0)
            if values is not None and bool(((values >= low) & (np.abs(values) < OVERLOAD)).all()):
                return RawScan(chans, t_utc_s, values, np.zeros(len(chans), dtype=np.int8),
                               current_a=current_a, wiring=wiring, checked=True)
    single_current = current_a if not isinstance(current_a, (list, tuple)) else None
    single_wiring = wiring if not isinstance(wiring, (list, tuple)) else None
    volts = frozenset(c for c, v in zip(chans, signed, strict=True) if v) if signed is not None else frozenset()
    readings = parse_reply(text, chans, t_utc_s, current_a=single_current, wiring=single_wiring, signed=volts)
    return RawScan(
        chans, t_utc_s,
        np.array([r.value for r in readings], dtype=np.float64),
        np.array([STATUS_INDEX[r.status] for r in readings], dtype=np.int8),
        [r.reason for r in readings], current_a=current_a, wiring=wiring,
    )


def parse_error_entry(text: str) -> tuple[int, str] | None:
    """``(code, message)`` from one ``SYSTem:ERRor?`` answer (``-113,"Undefined header"``); None if it is not one."""
    m = _ERROR_ENTRY.fullmatch(text)
    if m is None:
        return None
    return int(m.group(1)), (m.group(2) or "")


def format_channel_list(channels: Sequence[str]) -> str:
    """A SCPI channel list, ``(@101:105,110)``: runs of consecutive numbers joined by a colon.

    SCPI-1999 vol. 1, 8.3.2 (from memory): channel lists are ``(@...)`` with
    ``,`` between entries and ``:`` for a range.
    """
    if not channels:
        return "(@)"
    if not all(c.isascii() and c.isdigit() for c in channels):
        return "(@" + ",".join(channels) + ")"
    parts: list[str] = []
    numbers = [int(c) for c in channels]
    start = prev = numbers[0]
    for n in [*numbers[1:], None]:
        if n is not None and n == prev + 1:
            prev = n
            continue
        parts.append(str(start) if start == prev else f"{start}:{prev}")
        if n is not None:
            start = prev = n
    return "(@" + ",".join(parts) + ")"


# -------------------------------------------------------------------- profiles


@dataclass(frozen=True)
class MeterProfile:
    """The commands one family of meters understands, as templates; an empty template means "no such command".

    ``event_status`` is sent in the same message as ``read`` (``READ?;*ESR?``)
    so every scan also tells whether the meter was reset (power-on bit) or
    logged an error, at no extra round trip. Leave it empty for meters that
    do not join replies of a compound message with ``;``.
    """

    name: str
    identify: str = "*IDN?"
    reset: str = "*RST"
    clear: str = "*CLS"
    configure_2w: str = "CONF:RES {range},{channels}"
    configure_4w: str = "CONF:FRES {range},{channels}"
    nplc_2w: str = "SENS:RES:NPLC {nplc},{channels}"
    nplc_4w: str = "SENS:FRES:NPLC {nplc},{channels}"
    offset_compensation_2w: str = "SENS:RES:OCOM {state},{channels}"
    offset_compensation_4w: str = "SENS:FRES:OCOM {state},{channels}"
    scan: str = "ROUT:SCAN {channels}"
    read: str = "READ?"
    event_status: str = "*ESR?"
    error_query: str = "SYST:ERR?"
    #: DC volts (thermocouple channels): SCPI-1999 CONFigure:VOLTage:DC
    configure_dcv: str = "CONF:VOLT:DC {range},{channels}"
    nplc_dcv: str = "SENS:VOLT:DC:NPLC {nplc},{channels}"
    measure_2w: str = "MEAS:RES? {channels}"
    measure_4w: str = "MEAS:FRES? {channels}"
    autorange: str = "AUTO"
    on: str = "ON"
    off: str = "OFF"
    max_channels: int = 1000
    #: measuring current per ohms range, ``((range_ohm, current_a), ...)``: typical of
    #: bench meters (common practice, no published source; a meter's data sheet rules)
    test_current_a: tuple[tuple[float, float], ...] = (
        (100.0, 1e-3),
        (1_000.0, 1e-3),
        (10_000.0, 100e-6),
        (100_000.0, 10e-6),
        (1_000_000.0, 5e-6),
    )

    def __post_init__(self) -> None:
        for f in _TEMPLATE_FIELDS:
            template = getattr(self, f)
            try:
                names = {p[1] for p in string.Formatter().parse(template) if p[1] is not None}
            except ValueError as exc:
                raise InputError(f"profile {self.name!r}: template {f} = {template!r} is malformed: {exc}") from None
            unknown = names - _PLACEHOLDERS
            if unknown:
                raise InputError(
                    f"profile {self.name!r}: template {f} = {template!r} uses {sorted(unknown)}; "
                    f"placeholders are {{{'}, {'.join(sorted(_PLACEHOLDERS))}}}"
                )

    def with_commands(self, commands: Mapping[str, str]) -> MeterProfile:
        """This profile with single templates replaced (the configuration's ``commands`` table)."""
        unknown = sorted(set(commands) - set(_TEMPLATE_FIELDS))
        if unknown:
            raise InputError(f"unknown command name(s) {unknown}; known: {', '.join(_TEMPLATE_FIELDS)}")
        return dataclasses.replace(self, **dict(commands))

    def current_for_range(self, range_ohm: float | None) -> float | None:
        """The test current of the range that holds ``range_ohm``; None on autorange or past the table."""
        if range_ohm is None:
            return None
        for rng, current_a in sorted(self.test_current_a):
            if range_ohm <= rng:
                return current_a
        return None

    def render(self, template: str, **values: str) -> str:
        """One command from a template; a missing channel list leaves no dangling comma."""
        return template.format(**values).strip().rstrip(",").strip()


_TEMPLATE_FIELDS: tuple[str, ...] = tuple(
    f.name for f in dataclasses.fields(MeterProfile) if f.type == "str" and f.name != "name"
)

#: profiles by name: ``generic`` (SCPI-1999 with a scanner card), ``basic`` (the
#: same without the per-scan status check), ``bench`` (one input, no card)
PROFILES: dict[str, MeterProfile] = {
    "generic": MeterProfile("generic"),
    "basic": MeterProfile("basic", event_status=""),
    "bench": MeterProfile(
        "bench",
        configure_2w="CONF:RES {range}",
        configure_4w="CONF:FRES {range}",
        nplc_2w="SENS:RES:NPLC {nplc}",
        nplc_4w="SENS:FRES:NPLC {nplc}",
        configure_dcv="CONF:VOLT:DC {range}",
        nplc_dcv="SENS:VOLT:DC:NPLC {nplc}",
        # many bench meters offer offset compensation in 4-wire only (common practice)
        offset_compensation_2w="",
        offset_compensation_4w="SENS:FRES:OCOM {state}",
        scan="",
        measure_2w="MEAS:RES?",
        measure_4w="MEAS:FRES?",
        max_channels=1,
    ),
}


def profile_named(name: str, commands: Mapping[str, str] | None = None) -> MeterProfile:
    """A profile from ``PROFILES`` with the ``commands`` overrides applied."""
    try:
        profile = PROFILES[name]
    except KeyError:
        raise InputError(f"unknown meter profile {name!r}; known: {', '.join(PROFILES)}") from None
    return profile.with_commands(commands) if commands else profile


