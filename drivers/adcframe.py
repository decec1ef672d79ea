"""The line protocol of the soaklog serial RTD board: frames, replies and commands as bytes.

This module is pure (no I/O, no clock): the board simulator and the serial
driver share it, and tests feed it bytes. The protocol is our own design.

Board to host
=============

Every line the board sends has the same envelope::

    @<body>~<CRC>\\r\\n

=========  =========================================================================
part       meaning
=========  =========================================================================
``@``      start marker; never appears anywhere else in a line
body       printable ASCII (0x20…0x7E) without ``@`` and ``~``; its first letter
           is the kind: ``D`` data frame, ``R`` command reply, ``E`` refusal
``~``      checksum marker; never appears in a body
CRC        exactly 4 upper-case hex digits: CRC-16/CCITT-FALSE of the body bytes
           (everything between ``@`` and ``~``, both excluded)
``\\r\\n``   line end; optional for the decoder, because ``~`` and the fixed-width
           CRC already close the frame
=========  =========================================================================

Data frame body, fields separated by one space::

    D <seq> <tick> <flags> <ch0> <ch1> … <chN-1>

========  ===========  ==============================================================
field     format       meaning
========  ===========  ==============================================================
kind      ``D``        a data frame
seq       4 hex        frame counter, 0000…FFFF, +1 per frame sent, wraps to 0000
tick      8 hex        board clock in ms at the frame's sample time, wraps at 2^32
                       (49.7 days of board time)
flags     2 hex        bit field, see ``FLAG_*``: 01 a channel is not ``G``,
                       02 first frame after streaming (re)started, 04 rate or
                       excitation changed since the previous frame, 08 the board
                       fell behind its schedule and restarted it
chK       counts+code  signed decimal ADC counts (no ``+``, no leading zeros),
                       then one status letter: ``G`` good, ``O`` open sensor
                       (counts = +full scale), ``H`` over range (clipped to
                       +full scale), ``L`` under range (clipped to −full scale)
========  ===========  ==============================================================

1 to 64 channels. The counts are ratiometric against the board's reference
resistor R_ref, with ``bits`` = 24 (see ``REF``)::

    counts = floor(R_rtd / R_ref · 2^(bits−1) + 0.5), clipped to −2^(bits−1) … 2^(bits−1) − 1
    R_rtd  = counts / 2^(bits−1) · R_ref

Example: sequence 42, board time 127 944 ms, a Pt100 at 100 °C (138.5055 ohm
against R_ref = 400 ohm: 2 904 671 counts) and an open input::

    @D 002A 0001F3C8 01 2904671G 8388607O~A275\\r\\n

Reply body: ``R <WORD> <key>=<value> …``, one reply per command, keys in
lower case, values without spaces. Refusal body: ``E <WORD> <message>``, where
``WORD`` is the command refused (``?`` when it could not be read) and the
message is free text.

Checksum
========

CRC-16/CCITT-FALSE: width 16, polynomial 0x1021, initial value 0xFFFF, input and
output not reflected, final XOR 0x0000; check value 0x29B1 for the ASCII bytes
``123456789`` (the parameters and check value of the CRC RevEng catalogue
entry; ``binascii.crc_hqx(data, 0xFFFF)`` computes the same CRC).

Host to board
=============

Commands are lines of ASCII ended by CR, LF or both; words are case-insensitive
and separated by spaces. A command may end with ``~`` and the 4-hex CRC of the
text before the ``~``; a board refuses a command whose CRC is wrong
(``E <WORD> checksum …``). Commands are answered in the order received, between
data frames, one reply line each. A reply leaves before the first data frame
made with the settings it changed; that frame has flag 04 set.

===============  ====================================  ===========================================
command          does                                  reply
===============  ====================================  ===========================================
``WHO``          identify                              ``R WHO maker=… model=… serial=… firmware=…``
``CHANS``        number of inputs                      ``R CHANS n=8``
``RATE``         query the frame rate                  ``R RATE hz=20``
``RATE <hz>``    set the frame rate, 0.1…50 frames/s   ``R RATE hz=<new>``
``EXC``          query the excitation current          ``R EXC a=0.00025``
``EXC <a>``      set it, 1e-5…1e-3 A                   ``R EXC a=<new>``
``REF``          reference resistor, resolution,       ``R REF ohm=400 bits=24 a=0.00025 wiring=3``
                 excitation, RTD wiring
``GO``           start streaming data frames           ``R GO streaming=1``
``HALT``         stop streaming                        ``R HALT streaming=0``
===============  ====================================  ===========================================

Decoding
========

``FrameDecoder.feed`` takes byte chunks of any size and returns what became
complete: ``Frame``, ``Reply`` or ``FrameError`` records. It never raises. It
resynchronises on every ``@``: bytes outside a frame are reported once as
``garbage`` (CR, LF, space and tab between frames are ignored), a candidate cut
short by a new ``@`` or a line end is ``truncated``, a byte that is not
printable ASCII inside a candidate is ``non_ascii``, a body that does not parse
is ``syntax``, a wrong CRC is ``checksum`` and more than ``MAX_LINE_BYTES``
without a ``~`` is ``too_long``. After a rejected candidate the decoder restarts
at the next ``@`` after its start, so one bad frame never costs the next one.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from soaklog.errors import InputError

__all__ = [
    "START",
    "CRC_MARK",
    "MAX_CHANNELS",
    "MAX_LINE_BYTES",
    "FLAG_CHANNEL_FAULT",
    "FLAG_STREAM_START",
    "FLAG_CONFIG_CHANGED",
    "FLAG_OVERRUN",
    "CHANNEL_CODES",
    "COMMANDS",
    "Frame",
    "Reply",
    "Command",
    "FrameError",
    "crc16_ccitt_false",
    "encode_frame",
    "encode_reply",
    "encode_refusal",
    "encode_command",
    "parse_command",
    "FrameDecoder",
    "ohm_to_counts",
    "counts_to_ohm",
]

START = b"@"
CRC_MARK = b"~"
MAX_CHANNELS = 64
#: longest candidate (from ``@`` to ``~``) the decoder waits for; a full
#: 64-channel frame is under 700 bytes
MAX_LINE_BYTES = 1024

FLAG_CHANNEL_FAULT = 0x01
FLAG_STREAM_START = 0x02
FLAG_CONFIG_CHANGED = 0x04
FLAG_OVERRUN = 0x08

#: channel status letters: good, open, over range, under range
CHANNEL_CODES = "GOHL"
COMMANDS = ("WHO", "CHANS", "RATE", "EXC", "REF", "GO", "HALT")

ErrorReason = Literal["garbage", "truncated", "non_ascii", "syntax", "checksum", "too_long"]

_SEQ_MOD = 1 << 16
_TICK_MOD = 1 << 32
_MAX_ADC_BITS = 24
_COUNT_LIMIT = 1 << (_MAX_ADC_BITS - 1)
#: how many bytes of offending input a FrameError keeps
_KEEP_BYTES = 80
_WHITESPACE = b" \t\r\n"
_HEX = b"0123456789ABCDEF"

_DATA_RE = re.compile(
    r"D (?P<seq>[0-9A-F]{4}) (?P<tick>[0-9A-F]{8}) (?P<flags>[0-9A-F]{2})"
    r"(?P<chans>(?: -?(?:0|[1-9][0-9]{0,7})[GOHL])+)"
)
_CHAN_RE = re.compile(r"(-?(?:0|[1-9][0-9]{0,7}))([GOHL])")
_WORD_RE = re.compile(r"[A-Z][A-Z0-9]{0,15}|\?")
_KEY_RE = re.compile(r"[a-z][a-z0-9_]{0,31}")
_VALUE_RE = re.compile(r"[!-?A-}]{1,64}")  # printable, no space, '@' (0x40) or '~' (0x7E)
_TEXT_RE = re.compile(r"[ -?A-}]*")  # printable ASCII without '@' and '~'


# ---------------------------------------------------------------- records


@dataclass(frozen=True)
class Frame:
    """One data frame: counter, board time, flags and one (counts, code) per channel.

    Attributes:
        seq: frame counter, 0…65535, wraps.
        tick_ms: board clock in ms, 0…2^32−1, wraps.
        flags: bit field of ``FLAG_*``.
        counts: signed ADC counts per channel, within ±2^23.
        codes: one letter of ``CHANNEL_CODES`` per channel (``"GGOG"``).
    """

    seq: int
    tick_ms: int
    flags: int
    counts: tuple[int, ...]
    codes: str

    def __post_init__(self) -> None:
        if not 0 <= self.seq < _SEQ_MOD:
            raise InputError(f"frame seq {self.seq} is outside 0…65535; wrap it with % 65536")
        if not 0 <= self.tick_ms < _TICK_MOD:
            raise InputError(f"frame tick_ms {self.tick_ms} is outside 0…2^32-1; wrap it with % 2**32")
        if not 0 <= self.flags <= 0xFF:
            raise InputError(f"frame flags {self.flags} do not fit in one byte")
        if not 1 <= len(self.counts) <= MAX_CHANNELS:
            raise InputError(f"a frame carries 1…{MAX_CHANNELS} channels, not {len(self.counts)}")
        if len(self.codes) != len(self.counts):
            raise InputError(
                f"{len(self.counts)} channel counts but {len(self.codes)} status letters ({self.codes!r}); give one each"
            )
        for c in self.counts:
            if isinstance(c, bool) or not isinstance(c, int) or not -_COUNT_LIMIT <= c < _COUNT_LIMIT:
                raise InputError(f"channel counts {c!r} are not a signed 24-bit integer")
        bad = set(self.codes) - set(CHANNEL_CODES)
        if bad:
            raise InputError(f"channel status letters {sorted(bad)} are not among {CHANNEL_CODES!r}")


@dataclass(frozen=True)
class Reply:
    """A command reply (``ok``) or refusal (not ``ok``) from the board.

    Attributes:
        command: the command word answered (``"RATE"``; ``"?"`` when unreadable).
        ok: True for ``R`` (done), False for ``E`` (refused).
        fields: ``(key, value)`` pairs of an ``R`` reply, in order sent.
        message: the reason text of an ``E`` refusal (empty for ``R``).
    """

    command: str
    ok: bool
    fields: tuple[tuple[str, str], ...] = ()
    message: str = ""

    def get(self, key: str, default: str | None = None) -> str | None:
        """The value sent for ``key``, or ``default``."""
        for k, v in self.fields:
            if k == key:
                return v
        return default


@dataclass(frozen=True)
class Command:
    """One host command as the board reads it: upper-case word and its arguments."""

    word: str
    args: tuple[str, ...] = ()


@dataclass(frozen=True)
class FrameError:
    """Bytes the decoder rejected, and why (a record, not an exception).

    Attributes:
        reason: ``garbage``, ``truncated``, ``non_ascii``, ``syntax``,
            ``checksum`` or ``too_long``.
        data: the first bytes of the rejected input (at most 80).
        detail: a short human-readable explanation.
    """

    reason: ErrorReason
    data: bytes
    detail: str = ""


# ---------------------------------------------------------------- checksum


def _crc_table() -> tuple[int, ...]:
    # MSB-first table for polynomial 0x1021 (CRC-16/CCITT-FALSE, CRC RevEng catalogue)
    table = []
    for byte in range(256):
        crc = byte << 8
        for _ in range(8):
            crc = ((crc << 1) ^ 0x1021) if crc & 0x8000 else (crc << 1)
        table.append(crc & 0xFFFF)
    return tuple(table)


_CRC_TABLE = _crc_table()


def crc16_ccitt_false(data: bytes) -> int:
    """CRC-16/CCITT-FALSE of ``data``: poly 0x1021, init 0xFFFF, no reflection, xorout 0."""
    crc = 0xFFFF
    for b in data:
        crc = ((crc << 8) & 0xFFFF) ^ _CRC_TABLE[(crc >> 8) ^ b]
    return crc


def _seal(body: str, *, corrupt: bool = False) -> bytes:
    raw = body.encode("ascii")
    crc = crc16_ccitt_false(raw)
    if corrupt:
        # flipping one bit always changes the value; the rest of the line stays valid
        crc ^= 0x0001
    return START + raw + CRC_MARK + f"{crc:04X}".encode("ascii") + b"\r\n"


# ---------------------------------------------------------------- encoders


def encode_frame(frame: Frame, *, corrupt: bool = False) -> bytes:
    """The line for one data frame, ``@D …~CRC\\r\\n``.

    Args:
        frame: the frame to send.
        corrupt: send a deliberately wrong CRC (fault injection only).
    """
    chans = " ".join(f"{c}{code}" for c, code in zip(frame.counts, frame.codes))
    return _seal(f"D {frame.seq:04X} {frame.tick_ms:08X} {frame.flags:02X} {chans}", corrupt=corrupt)


def _check_word(word: str) -> str:
    if not isinstance(word, str) or not _WORD_RE.fullmatch(word):
        raise InputError(f"command word {word!r} must be 1-16 upper-case letters and digits, or '?'")
    return word


def encode_reply(command: str, fields: Sequence[tuple[str, str]] = ()) -> bytes:
    """The line for an accepted command, ``@R WORD key=value …~CRC\\r\\n``.

    Raises:
        InputError: a word, key or value that the format cannot carry.
    """
    parts = ["R", _check_word(command)]
    for key, value in fields:
        if not _KEY_RE.fullmatch(key):
            raise InputError(f"reply key {key!r} must be lower-case letters, digits and '_' (1-32)")
        if not _VALUE_RE.fullmatch(value):
            raise InputError(f"reply value {value!r} for {key!r} must be 1-64 printable characters without space, '@', '~'")
        parts.append(f"{key}={value}")
    return _seal(" ".join(parts))


def encode_refusal(command: str, message: str) -> bytes:
    """The line for a refused command, ``@E WORD message~CRC\\r\\n``; '@' and '~' become '?'."""
    text = "".join(ch if " " <= ch <= "}" and ch != "@" else "?" for ch in message)
    body = f"E {_check_word(command)}"
    return _seal(f"{body} {text}" if text else body)


def encode_command(word: str, *args: str, checksum: bool = True) -> bytes:
    """A host command line, ``WORD arg…[~CRC]\\r\\n``.

    Args:
        word: one of ``COMMANDS`` (any case).
        args: its arguments, without spaces.
        checksum: append ``~`` and the CRC of the text, so a corrupted command is refused.
    """
    word = _check_word(word.upper())
    for a in args:
        if not a or not _VALUE_RE.fullmatch(a):
            raise InputError(f"command argument {a!r} must be 1-64 printable characters without space, '@', '~'")
    text = " ".join((word, *args))
    if checksum:
        text += f"~{crc16_ccitt_false(text.encode('ascii')):04X}"
    return text.encode("ascii") + b"\r\n"


# ---------------------------------------------------------------- decoders


def parse_command(line: bytes) -> Command | FrameError:
    """Read one host command line (without its line end); never raises.

    Returns a ``Command`` with the word upper-cased, or a ``FrameError``
    (``non_ascii``, ``syntax`` or ``checksum``).
    """
    head = bytes(line[:_KEEP_BYTES])
    if any(b < 0x20 or b > 0x7E for b in line):
        return FrameError("non_ascii", head, "command has bytes that are not printable ASCII")
    text = line.decode("ascii")
    if "~" in text:
        text, _, crc_text = text.rpartition("~")
        if not re.fullmatch(r"[0-9A-Fa-f]{4}", crc_text):
            return FrameError("syntax", head, f"command checksum {crc_text!r} is not 4 hex digits")
        if int(crc_text, 16) != crc16_ccitt_false(text.encode("ascii")):
            return FrameError("checksum", head, "command checksum does not match")
    words = text.split()
    if not words:
        return FrameError("syntax", head, "empty command")
    word = words[0].upper()
    if not _WORD_RE.fullmatch(word):
        return FrameError("syntax", head, f"command word {words[0][:16]!r} is not a word")
    return Command(word, tuple(words[1:]))


def _parse_body(body: str) -> Frame | Reply | None:
    kind = body[:1]
    if kind == "D":
        m = _DATA_RE.fullmatch(body)
        if m is None:
            return None
        pairs = _CHAN_RE.findall(m.group("chans"))
        counts = tuple(int(c) for c, _ in pairs)
        if len(counts) > MAX_CHANNELS or any(not -_COUNT_LIMIT <= c < _COUNT_LIMIT for c in counts):
            return None
        return Frame(
            int(m.group("seq"), 16),
            int(m.group("tick"), 16),
            int(m.group("flags"), 16),
            counts,
            "".join(code for _, code in pairs),
        )
    if kind == "R":
        words = body.split(" ")
        if len(words) < 2 or not _WORD_RE.fullmatch(words[1]):
            return None
        fields = []
        for item in words[2:]:
            key, eq, value = item.partition("=")
            if not eq or not _KEY_RE.fullmatch(key) or not _VALUE_RE.fullmatch(value):
                return None
            fields.append((key, value))
        return Reply(words[1], True, tuple(fields))
    if kind == "E":
        if not body.startswith("E "):
            return None
        word, _, message = body[2:].partition(" ")
        if not _WORD_RE.fullmatch(word) or not _TEXT_RE.fullmatch(message):
            return None
        return Reply(word, False, (), message)
    return None


class FrameDecoder:
    """Turns a byte stream from the board into frames, replies and errors; never raises.

    Feed it chunks as they arrive (any size, any split); each call returns the
    records completed by that chunk. See the module docstring for the
    resynchronisation rules.
    """

    def __init__(self) -> None:
        self._buf = bytearray()

    @property
    def pending(self) -> int:
        """Bytes held back, waiting for the rest of a frame."""
        return len(self._buf)

    def feed(self, data: bytes) -> list[Frame | Reply | FrameError]:
        """Add ``data`` to the stream and return every record it completed."""
        out: list[Frame | Reply | FrameError] = []
        try:
            self._buf += data
            self._drain(out)
        except Exception as exc:  # noqa: BLE001 - the contract is "never raises"
            out.append(FrameError("garbage", bytes(self._buf[:_KEEP_BYTES]), f"decoder fault {exc!r}"))
            self._buf.clear()
        return out

    def _drain(self, out: list[Frame | Reply | FrameError]) -> None:
        buf = self._buf
        while buf:
            start = buf.find(START)
            # bytes before the next start marker: line ends are fine, the rest is garbage
            lead = buf if start < 0 else buf[:start]
            junk = bytes(lead).strip(_WHITESPACE)
            if junk:
                out.append(FrameError("garbage", junk[:_KEEP_BYTES], f"{len(junk)} bytes outside any frame"))
            if start < 0:
                buf.clear()
                return
            del buf[:start]
            step = self._take(buf)
            if step is None:
                return  # the candidate at buf[0] needs more bytes
            used, record = step
            out.append(record)
            # ``used`` never reaches past a second '@', so a real frame that
            # follows a broken one is never swallowed
            del buf[:used]

    @staticmethod
    def _take(buf: bytearray) -> tuple[int, Frame | Reply | FrameError] | None:
        """Judge the candidate at buf[0] == '@': (bytes used, record), or None to wait."""
        limit = min(len(buf), MAX_LINE_BYTES + 1)
        bad_byte = -1
        for i in range(1, limit):
            b = buf[i]
            if b == 0x7E:  # '~'
                crc = bytes(buf[i + 1 : i + 5])
                for k, x in enumerate(crc):
                    if x in (0x40, 0x0A, 0x0D):  # the next frame or a line end came early
                        head = bytes(buf[: min(i + 1 + k, _KEEP_BYTES)])
                        return i + 1 + k, FrameError("truncated", head, "checksum cut short")
                if len(crc) < 4:
                    return None
                line = bytes(buf[: i + 5])
                if not all(x in _HEX for x in crc):
                    return i + 5, FrameError("syntax", line[:_KEEP_BYTES], "checksum is not 4 upper-case hex digits")
                if bad_byte >= 0:
                    return i + 5, FrameError("non_ascii", line[:_KEEP_BYTES], f"byte 0x{bad_byte:02X} inside a frame")
                return i + 5, FrameDecoder._check(line)
            if b in (0x40, 0x0A, 0x0D):  # '@', LF, CR
                head = bytes(buf[: min(i, _KEEP_BYTES)])
                if bad_byte >= 0:
                    return i, FrameError("non_ascii", head, f"byte 0x{bad_byte:02X} inside a frame")
                return i, FrameError("truncated", head, "frame cut short before its checksum")
            if (b < 0x20 or b > 0x7E) and bad_byte < 0:
                bad_byte = b
        if len(buf) > MAX_LINE_BYTES:
            head = bytes(buf[:_KEEP_BYTES])
            return MAX_LINE_BYTES, FrameError("too_long", head, f"no checksum within {MAX_LINE_BYTES} bytes")
        return None

    @staticmethod
    def _check(line: bytes) -> Frame | Reply | FrameError:
        body = line[1:-5]
        head = line[:_KEEP_BYTES]
        if int(line[-4:], 16) != crc16_ccitt_false(body):
            return FrameError("checksum", head, "checksum does not match the frame")
        try:
            record = _parse_body(body.decode("ascii"))
        except (ValueError, InputError):
            record = None
        if record is None:
            return FrameError("syntax", head, "frame body does not follow the format")
        return record


# ---------------------------------------------------------------- counts and ohms


def _full_scale(bits: int) -> int:
    if isinstance(bits, bool) or not isinstance(bits, int) or not 8 <= bits <= _MAX_ADC_BITS:
        raise InputError(f"ADC resolution {bits!r} bits is not supported; use 8 to 24")
    return 1 << (bits - 1)


def _check_reference(reference_ohm: float) -> None:
    if not (math.isfinite(reference_ohm) and reference_ohm > 0):
        raise InputError(f"reference resistance {reference_ohm!r} ohm must be finite and positive")


def ohm_to_counts(ohm: float, reference_ohm: float, *, bits: int = 24) -> tuple[int, str]:
    """The code a ratiometric ADC gives for ``ohm`` against ``reference_ohm``, and its status letter.

    ``counts = floor(ohm / reference_ohm · 2^(bits−1) + 0.5)``; NaN and +inf
    (an open sensor) give +full scale with ``O``; codes beyond the range are
    clipped with ``H`` or ``L``.
    """
    fs = _full_scale(bits)
    _check_reference(reference_ohm)
    if math.isnan(ohm) or ohm == math.inf:
        return fs - 1, "O"
    if ohm == -math.inf:
        return -fs, "L"
    code = math.floor(ohm / reference_ohm * fs + 0.5)
    if code > fs - 1:
        return fs - 1, "H"
    if code < -fs:
        return -fs, "L"
    return code, "G"


def counts_to_ohm(counts: int, reference_ohm: float, *, bits: int = 24) -> float:
    """The resistance ``counts`` stand for: ``counts / 2^(bits−1) · reference_ohm``."""
    fs = _full_scale(bits)
    _check_reference(reference_ohm)
    return counts / fs * reference_ohm
