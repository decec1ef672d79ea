"""SCPI program messages, parameters, the error queue and the status bytes, without sockets.

Everything here is text in, values out: a simulator (or a test) feeds it one
program message and gets back the commands it holds, each resolved against a
tree of known headers. The rules follow IEEE 488.2-1992 (program message
syntax, common commands, status reporting) and SCPI-1999 (long and short
mnemonic forms, optional nodes, the error/event queue and its standard texts).
Clause numbers below are quoted from memory of those documents.
"""

from __future__ import annotations

import math
import re
from collections import deque
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

__all__ = [
    "ERROR_TEXT",
    "Command",
    "CommandTree",
    "ErrorQueue",
    "ScpiError",
    "StatusRegisters",
    "ends_message",
    "error_text",
    "esr_bit",
    "format_channel_list",
    "format_number",
    "is_channel_list",
    "parse_boolean",
    "parse_channel_list",
    "parse_keyword",
    "parse_message",
    "parse_numeric",
    "split_params",
    "split_units",
]

# SCPI-1999 vol. 2, ch. 21 (error/event numbers) and IEEE 488.2-1992, 11.5.1.1:
# the standard texts that must accompany the standard codes (from memory).
ERROR_TEXT: dict[int, str] = {
    0: "No error",
    -100: "Command error",
    -101: "Invalid character",
    -102: "Syntax error",
    -103: "Invalid separator",
    -104: "Data type error",
    -108: "Parameter not allowed",
    -109: "Missing parameter",
    -110: "Command header error",
    -112: "Program mnemonic too long",
    -113: "Undefined header",
    -120: "Numeric data error",
    -121: "Invalid character in number",
    -123: "Exponent too large",
    -130: "Suffix error",
    -131: "Invalid suffix",
    -138: "Suffix not allowed",
    -140: "Character data error",
    -144: "Character data too long",
    -150: "String data error",
    -151: "Invalid string data",
    -200: "Execution error",
    -221: "Settings conflict",
    -222: "Data out of range",
    -223: "Too much data",
    -224: "Illegal parameter value",
    -230: "Data corrupt or stale",
    -241: "Hardware missing",
    -300: "Device-specific error",
    -310: "System error",
    -330: "Self-test failed",
    -350: "Queue overflow",
    -363: "Input buffer overrun",
    -400: "Query error",
    -410: "Query INTERRUPTED",
    -420: "Query UNTERMINATED",
    -430: "Query DEADLOCKED",
    -440: "Query UNTERMINATED after indefinite response",
}

#: IEEE 488.2-1992, 7.6.1.4: a program mnemonic has at most 12 characters.
MAX_MNEMONIC_CHARS = 12


_MAX_DETAIL_CHARS = 60


def error_text(code: int) -> str:
    """The standard text of an error code, or the text of its class for an unlisted code."""
    if code in ERROR_TEXT:
        return ERROR_TEXT[code]
    # A code without its own text falls back to the text of its hundred
    # (SCPI-1999 vol. 2, ch. 21: the classes -100, -200, -300, -400).
    return ERROR_TEXT.get(-(abs(code) // 100) * 100, "Device-specific error")


class ScpiError(Exception):
    """A SCPI error with its standard code; ``detail`` is the device-dependent part."""

    def __init__(self, code: int, detail: str = "") -> None:
        self.code = code
        self.detail = detail
        super().__init__(format_error(code, detail))

    @property
    def text(self) -> str:
        return error_text(self.code)


def format_error(code: int, detail: str = "") -> str:
    """``-113,"Undefined header;FOO"``: the form ``SYSTem:ERRor?`` answers (SCPI-1999 vol. 2, ch. 21)."""
    text = error_text(code)
    if detail:
        # IEEE 488.2 string response data: a double quote inside is doubled; a
        # single quote reads better in a log than a doubled one.
        # The reply must stay ASCII (IEEE 488.2-1992, 8.7.8) and short, whatever
        # the offending input was.
        safe = detail.encode("ascii", "replace").decode("ascii").replace(chr(34), chr(39))
        if len(safe) > _MAX_DETAIL_CHARS:
            safe = safe[: _MAX_DETAIL_CHARS - 3] + "..."
        text = f"{text};{safe}"
    return f'{code:d},"{text}"'


def esr_bit(code: int) -> int:
    """The Standard Event Status Register bit an error sets (IEEE 488.2-1992, 11.5.1.1), as a mask."""
    if -199 <= code <= -100:
        return 1 << 5  # CME, command error
    if -299 <= code <= -200:
        return 1 << 4  # EXE, execution error
    if -399 <= code <= -300:
        return 1 << 3  # DDE, device-dependent error
    if -499 <= code <= -400:
        return 1 << 2  # QYE, query error
    if code > 0:
        return 1 << 3  # device-defined positive codes count as device-dependent
    return 0


def ends_message(code: int) -> bool:
    """Whether an error stops the rest of its program message from running.

    A command error (syntax, header, parameter form) leaves the parser unsure
    where the next unit starts, so the rest of the message is dropped; an
    execution error affects only its own command. Common practice of SCPI
    instruments, no published rule.
    """
    return -199 <= code <= -100


class ErrorQueue:
    """The SCPI error/event queue: first in, first out, with ``-350`` on overflow.

    SCPI-1999 vol. 2, ch. 21 (from memory): when the queue is full, the most
    recent entry is replaced by ``-350,"Queue overflow"`` and further errors
    are lost until there is room; reading an empty queue gives
    ``0,"No error"``. The capacity of 20 is common practice among bench meters.
    """

    def __init__(self, capacity: int = 20) -> None:
        if capacity < 2:
            raise ValueError(f"error queue capacity must be at least 2 (one error and the overflow), not {capacity}")
        self._capacity = capacity
        self._items: deque[tuple[int, str]] = deque()

    @property
    def capacity(self) -> int:
        return self._capacity

    def __len__(self) -> int:
        return len(self._items)

    def push(self, code: int, detail: str = "") -> None:
        """Queue one error; a full queue keeps its oldest entries and ends with -350."""
        if len(self._items) < self._capacity:
            self._items.append((code, detail))
        elif self._items[-1][0] != -350:
            self._items[-1] = (-350, "")

    def pop(self) -> tuple[int, str]:
        """The oldest ``(code, text-with-detail)``; ``(0, "No error")`` when empty."""
        if not self._items:
            return 0, ERROR_TEXT[0]
        code, detail = self._items.popleft()
        formatted = format_error(code, detail)
        return code, formatted.split(",", 1)[1][1:-1]

    def pop_formatted(self) -> str:
        """The oldest entry as ``SYSTem:ERRor?`` answers it."""
        if not self._items:
            return format_error(0)
        return format_error(*self._items.popleft())

    def clear(self) -> None:
        self._items.clear()

    def codes(self) -> list[int]:
        """The queued codes, oldest first, without removing them."""
        return [code for code, _ in self._items]


class StatusRegisters:
    """The IEEE 488.2 status byte and standard event registers (11.2, 11.5), as plain integers."""

    #: IEEE 488.2-1992, 11.5.1.1: bit 0 operation complete, bit 7 power on.
    OPC = 1 << 0
    PON = 1 << 7
    #: IEEE 488.2-1992, 11.2.1 and SCPI-1999 vol. 1, 9.1: bit 2 error/event
    #: queue not empty, bit 4 message available, bit 5 event summary, bit 6
    #: master summary (from memory).
    EAV = 1 << 2
    MAV = 1 << 4
    ESB = 1 << 5
    MSS = 1 << 6

    def __init__(self) -> None:
        self.esr = self.PON
        self.ese = 0
        self.sre = 0

    def power_on(self) -> None:
        self.esr = self.PON
        self.ese = 0
        self.sre = 0

    def record_error(self, code: int) -> None:
        self.esr |= esr_bit(code)

    def read_esr(self) -> int:
        """``*ESR?``: the register is cleared by reading it (IEEE 488.2-1992, 10.12)."""
        value, self.esr = self.esr, 0
        return value

    def status_byte(self, *, errors_queued: bool, message_available: bool) -> int:
        """``*STB?``: bit 6 is the master summary of the other bits under ``*SRE`` (IEEE 488.2-1992, 11.2.2)."""
        stb = 0
        if errors_queued:
            stb |= self.EAV
        if message_available:
            stb |= self.MAV
        if self.esr & self.ese:
            stb |= self.ESB
        if stb & self.sre & ~self.MSS:
            stb |= self.MSS
        return stb


# --- headers ------------------------------------------------------------------


@dataclass(frozen=True)
class _Node:
    long: str
    optional: bool

    @property
    def short(self) -> str:
        # SCPI-1999 vol. 1, 6.2.1: the short form is the upper-case part of the
        # long form; a mnemonic written all in capitals has no shorter form.
        return "".join(c for c in self.long if c.isupper() or c.isdigit()) or self.long.upper()

    def matches(self, mnemonic: str) -> bool:
        m = mnemonic.upper()
        return m == self.short or m == self.long.upper()


@dataclass(frozen=True)
class _Pattern:
    text: str
    nodes: tuple[_Node, ...]
    query: bool
    common: bool


_PATTERN_NODE = re.compile(r"\[:?([A-Za-z][A-Za-z0-9]*):?\]|([A-Za-z][A-Za-z0-9]*)")


def _parse_pattern(text: str) -> _Pattern:
    body = text.strip()
    query = body.endswith("?")
    if query:
        body = body[:-1]
    if body.startswith("*"):
        return _Pattern(text, (_Node(body.upper(), False),), query, True)
    nodes: list[_Node] = []
    pos = 0
    while pos < len(body):
        if body[pos] == ":":
            pos += 1
            continue
        m = _PATTERN_NODE.match(body, pos)
        if m is None:
            raise ValueError(f"cannot read header pattern {text!r} at {body[pos:]!r}")
        nodes.append(_Node(m.group(1) or m.group(2), m.group(1) is not None))
        pos = m.end()
    if not nodes or all(n.optional for n in nodes):
        raise ValueError(f"header pattern {text!r} has no required node")
    return _Pattern(text, tuple(nodes), query, False)


def _match_nodes(nodes: Sequence[_Node], mnemonics: Sequence[str]) -> list[int] | None:
    """Which node each mnemonic matched, or None; optional nodes may be left out."""

    def walk(i: int, j: int) -> list[int] | None:
        if j == len(mnemonics):
            return [] if all(n.optional for n in nodes[i:]) else None
        if i == len(nodes):
            return None
        if nodes[i].matches(mnemonics[j]):
            rest = walk(i + 1, j + 1)
            if rest is not None:
                return [i, *rest]
        if nodes[i].optional:
            return walk(i + 1, j)
        return None

    return walk(0, 0)


class CommandTree:
    """The headers an instrument knows, written the SCPI way.

    Patterns look like ``CONFigure:FRESistance``, ``[SENSe:]FRESistance:NPLCycles?``
    or ``SYSTem:ERRor[:NEXT]?``: capitals are the short form, the whole word the
    long form, brackets an optional node, a final ``?`` the query form.
    """

    def __init__(self, patterns: Iterable[str] = ()) -> None:
        self._patterns: list[_Pattern] = []
        self._common: dict[tuple[str, bool], _Pattern] = {}
        for p in patterns:
            self.add(p)

    def add(self, pattern: str) -> None:
        parsed = _parse_pattern(pattern)
        if parsed.common:
            self._common[(parsed.nodes[0].long, parsed.query)] = parsed
        else:
            self._patterns.append(parsed)

    def patterns(self) -> list[str]:
        return [p.text for p in self._common.values()] + [p.text for p in self._patterns]

    def match_common(self, header: str, query: bool) -> str | None:
        p = self._common.get((header.upper(), query))
        return None if p is None else p.text

    def match(self, mnemonics: Sequence[str], query: bool) -> str | None:
        """The pattern a full (root-based) header matches, or None."""
        for p in self._patterns:
            if p.query == query and _match_nodes(p.nodes, mnemonics) is not None:
                return p.text
        return None


@dataclass(frozen=True)
class Command:
    """One resolved program message unit.

    Attributes:
        pattern: the tree pattern it matched, e.g. ``[SENSe:]FRESistance:NPLCycles?``.
        header: the header as received, e.g. ``FRES:NPLC?``.
        params: the parameters as text, split on top-level commas, stripped.
    """

    pattern: str
    header: str
    params: tuple[str, ...]

    @property
    def query(self) -> bool:
        return self.header.endswith("?")


def _scan_top_level(text: str, separator: str) -> list[str]:
    """Split on ``separator`` outside quoted strings and parentheses."""
    parts: list[str] = []
    depth = 0
    quote = ""
    start = 0
    i = 0
    while i < len(text):
        c = text[i]
        if quote:
            if c == quote:
                # IEEE 488.2-1992, 7.7.5: a doubled quote stands for itself.
                if i + 1 < len(text) and text[i + 1] == quote:
                    i += 1
                else:
                    quote = ""
        elif c in "\"'":
            quote = c
        elif c == "(":
            depth += 1
        elif c == ")":
            depth = max(0, depth - 1)
        elif c == separator and depth == 0:
            parts.append(text[start:i])
            start = i + 1
        i += 1
    parts.append(text[start:])
    return parts


def split_units(message: str) -> list[str]:
    """Split a program message into its units on ``;`` (IEEE 488.2-1992, 7.3.3), keeping quoted text whole."""
    return _scan_top_level(message.strip(), ";")


def split_params(text: str) -> list[str]:
    """Split a parameter string on top-level commas (IEEE 488.2-1992, 7.4.2); ``""`` gives no parameters."""
    if not text.strip():
        return []
    return [p.strip() for p in _scan_top_level(text, ",")]


_HEADER_SPLIT = re.compile(r"(\S+)(\s*)(.*)\Z", re.DOTALL)
_MNEMONIC = re.compile(r"[A-Za-z][A-Za-z0-9_]*\Z")
_COMMON = re.compile(r"\*[A-Za-z]+\Z")


def parse_message(message: str, tree: CommandTree) -> list[Command | ScpiError]:
    """Resolve every unit of one program message against ``tree``.

    Compound headers follow IEEE 488.2-1992 annex A and SCPI-1999 vol. 1, 6.2.4
    (from memory): the message starts at the root; a header without a leading
    colon is taken relative to the path left by the previous header (that
    header less its last mnemonic); a leading colon goes back to the root;
    common commands (``*RST``) leave the path alone. A command error ends the
    list: the rest of the message is not run (see ``ends_message``).
    """
    out: list[Command | ScpiError] = []
    path: list[str] = []
    for unit in split_units(message):
        text = unit.strip()
        if not text:
            continue  # an empty unit (a trailing ';') carries nothing
        # IEEE 488.2-1992, 7.4.3: white space separates the header from its data.
        head, _, rest = _HEADER_SPLIT.match(text).groups()  # type: ignore[union-attr]
        query = head.endswith("?")
        bare = head[:-1] if query else head
        params = tuple(split_params(rest))
        if bare.startswith("*"):
            if not _COMMON.match(bare):
                out.append(ScpiError(-102, head))
                break
            pattern = tree.match_common(bare, query)
            if pattern is None:
                out.append(ScpiError(-113, head))
                break
            out.append(Command(pattern, head, params))
            continue
        absolute = bare.startswith(":")
        mnemonics = bare[1:].split(":") if absolute else bare.split(":")
        error = _check_mnemonics(mnemonics, head)
        if error is not None:
            out.append(error)
            break
        full = mnemonics if absolute else [*path, *mnemonics]
        pattern = tree.match(full, query)
        if pattern is None:
            out.append(ScpiError(-113, head))
            break
        path = full[:-1]
        out.append(Command(pattern, head, params))
    return out


def _check_mnemonics(mnemonics: Sequence[str], head: str) -> ScpiError | None:
    for m in mnemonics:
        if not m:
            return ScpiError(-102, head)
        if not _MNEMONIC.match(m):
            bad = next((c for c in m if not (c.isascii() and (c.isalnum() or c == "_"))), None)
            return ScpiError(-101 if bad is not None and not bad.isascii() else -102, head)
        if len(m) > MAX_MNEMONIC_CHARS:
            return ScpiError(-112, m)
    return None


# --- parameters ---------------------------------------------------------------


def parse_keyword(token: str, choices: Sequence[str]) -> str:
    """Match character data against SCPI mnemonics (``MINimum``, ``AUTO``); returns the short form in capitals.

    Raises:
        ScpiError: -224 when the word is not one of ``choices``.
    """
    for choice in choices:
        node = _Node(choice, False)
        if node.matches(token.strip()):
            return node.short
    raise ScpiError(-224, token.strip())


# IEEE 488.2-1992, 7.7.2: decimal numeric program data (NR1, NR2, NR3 forms,
# white space allowed before the exponent and before a suffix).
_NUMBER = re.compile(r"([+-]?(?:\d+\.?\d*|\.\d+)(?:\s*[eE]\s*[+-]?\d+)?)\s*([A-Za-z][A-Za-z0-9/]*)?\Z")

# IEEE 488.2-1992, 7.7.3, table 7-1: suffix multipliers; "MA" is mega, "M"
# is milli, except that MOHM and MHZ mean megaohm and megahertz (from memory).
_MULTIPLIERS = {
    "EX": 1e18, "PE": 1e15, "T": 1e12, "G": 1e9, "MA": 1e6, "K": 1e3,
    "M": 1e-3, "U": 1e-6, "N": 1e-9, "P": 1e-12, "F": 1e-15, "A": 1e-18,
}  # fmt: skip
_MEGA_EXCEPTIONS = {"MOHM": ("OHM", 1e6), "MHZ": ("HZ", 1e6)}

_SPECIAL_NUMBERS = ("MINimum", "MAXimum", "DEFault")


def parse_numeric(
    token: str,
    *,
    unit: str | None = None,
    keywords: Sequence[str] = _SPECIAL_NUMBERS,
) -> float | str:
    """Read numeric program data with an optional suffix, or one of ``keywords``.

    Args:
        token: one parameter, e.g. ``"100"``, ``"1e3"``, ``"10 kOHM"``, ``"MAX"``.
        unit: the suffix unit the parameter accepts (``"OHM"``), None for none.
        keywords: character data accepted instead of a number (SCPI mnemonics).

    Returns:
        The value in the base unit, or the keyword's short form (``"MIN"``).

    Raises:
        ScpiError: -121 malformed number, -131 unknown suffix, -138 suffix on a
            unitless parameter, -104 a string where a number belongs, -224 an
            unknown word.
    """
    t = token.strip()
    if not t:
        raise ScpiError(-109)
    if t[0] in "\"'":
        raise ScpiError(-104, t)
    m = _NUMBER.match(t)
    if m is None:
        if t[0].isdigit() or t[0] in "+-.":
            raise ScpiError(-121, t)
        if t[0] == "(":
            raise ScpiError(-104, t)
        return parse_keyword(t, keywords)
    mantissa = re.sub(r"\s+", "", m.group(1))
    value = float(mantissa)
    if not math.isfinite(value):
        raise ScpiError(-123, t)
    suffix = m.group(2)
    if suffix is None:
        return value
    if unit is None:
        raise ScpiError(-138, t)
    return value * _suffix_factor(suffix.upper(), unit.upper(), t)


def _suffix_factor(suffix: str, unit: str, token: str) -> float:
    if suffix == unit:
        return 1.0
    exception = _MEGA_EXCEPTIONS.get(suffix)
    if exception is not None and exception[0] == unit:
        return exception[1]
    if suffix.endswith(unit):
        factor = _MULTIPLIERS.get(suffix[: -len(unit)])
        if factor is not None:
            return factor
    raise ScpiError(-131, token)


def parse_boolean(token: str) -> bool:
    """Boolean program data: ``ON``/``OFF`` or a number, nonzero after rounding being true (SCPI-1999 vol. 1, 7.3)."""
    t = token.strip()
    if not t:
        raise ScpiError(-109)
    try:
        value = parse_numeric(t, keywords=("ON", "OFF"))
    except ScpiError as exc:
        if exc.code == -224:
            raise ScpiError(-224, t) from None
        raise
    if isinstance(value, str):
        return value == "ON"
    return round(value) != 0


_CHANNEL = re.compile(r"\s*(\d+)\s*(?::\s*(\d+)\s*)?\Z")

#: the longest channel list one parameter may expand to
MAX_CHANNELS = 1000


def is_channel_list(token: str) -> bool:
    """Whether a parameter is channel-list data, ``(@…)``."""
    t = token.strip()
    return t.startswith("(") and t[1:].lstrip().startswith("@")


def parse_channel_list(token: str) -> tuple[int, ...]:
    """Expand ``(@101:105,108)`` into channel numbers in the order written (SCPI-1999 vol. 1, 8.3.2).

    A range runs either way (``105:101`` counts down). ``(@)`` is the empty list.

    Raises:
        ScpiError: -102 when the text is not a channel list, -223 when it expands
            to more than ``MAX_CHANNELS`` channels.
    """
    t = token.strip()
    if not (t.startswith("(") and t.endswith(")")):
        raise ScpiError(-102, t)
    inner = t[1:-1].strip()
    if not inner.startswith("@"):
        raise ScpiError(-102, t)
    inner = inner[1:].strip()
    if not inner:
        return ()
    channels: list[int] = []
    for item in inner.split(","):
        m = _CHANNEL.match(item)
        if m is None:
            raise ScpiError(-102, t)
        first = int(m.group(1))
        last = int(m.group(2)) if m.group(2) is not None else first
        step = 1 if last >= first else -1
        if len(channels) + abs(last - first) + 1 > MAX_CHANNELS:
            raise ScpiError(-223, t)
        channels.extend(range(first, last + step, step))
    return tuple(channels)


def format_channel_list(channels: Iterable[int]) -> str:
    """Write channel numbers as ``(@101:105,108)``, runs of consecutive numbers as ranges."""
    chans = list(channels)
    parts: list[str] = []
    i = 0
    while i < len(chans):
        j = i
        while j + 1 < len(chans) and chans[j + 1] == chans[j] + 1:
            j += 1
        parts.append(f"{chans[i]}" if j == i else f"{chans[i]}:{chans[j]}")
        i = j + 1
    return "(@" + ",".join(parts) + ")"


#: SCPI-1999 vol. 1, 7.2.1 (from memory): +9.9E37 stands for positive infinity,
#: the value a meter answers on overload; 9.91E37 is not-a-number.
OVERLOAD = 9.9e37
NOT_A_NUMBER = 9.91e37


def format_number(value: float) -> str:
    """NR3 with nine significant digits, ``+1.38505500E+02``; infinities as ``±9.9E37``, NaN as ``9.91E37``."""
    if math.isnan(value):
        value = NOT_A_NUMBER
    elif math.isinf(value):
        value = math.copysign(OVERLOAD, value)
    return f"{value:+.8E}"
