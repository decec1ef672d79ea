"""The serial board's byte stream as frames: the newest good frame handed out once, rejects counted (pure).

No I/O and no clock (arrival times are passed in): the driver
(``drivers.serial_adc``) feeds it what the port gives, tests feed it bytes.
Decoding is ``drivers.adcframe.FrameDecoder``'s; this adds which frame is new,
sequence gaps, configuration changes and counters.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from soaklog.drivers.adcframe import (
    FLAG_CONFIG_CHANGED,
    Frame,
    FrameDecoder,
    FrameError,
    Reply,
    counts_to_ohm,
)
from soaklog.drivers.base import RawReading, failed_scan

__all__ = ["AdcStream", "Record", "CODE_STATUS"]

Record = Frame | Reply | FrameError

_SEQ_MOD = 1 << 16
#: a sequence step this large is a restart or a jump, not lost frames
_SEQ_JUMP = _SEQ_MOD // 2
_SHOWN_BYTES = 40

#: the board's channel codes that are not a value, as reading statuses
CODE_STATUS = {
    "O": ("open", "the board reports the input open (code O)"),
    "H": ("overload", "over range: the counts are clipped at +full scale (code H)"),
    "L": ("out_of_range", "under range: the counts are clipped at -full scale (code L)"),
}
_CODE_STATUS = CODE_STATUS



class AdcStream:
    """The newest good data frame of a board's byte stream, handed out once, and a tally of what was rejected.

    Buffer logic only (no I/O, no clock: arrival times are passed in), so
    tests feed it bytes. Decoding is ``FrameDecoder``'s; this adds which frame
    is new, sequence gaps and counters. Not thread-safe: the driver holds its
    lock around every call.
    """

    def __init__(self) -> None:
        self._decoder = FrameDecoder()
        #: good data frames received
        self.frames = 0
        #: frames the board numbered but that never arrived good (by sequence number)
        self.missed_frames = 0
        #: places in the sequence where frames went missing
        self.sequence_gaps = 0
        #: sequence steps too large to be losses (a repeated frame, a board restart)
        self.sequence_jumps = 0
        #: rejected candidates (all reasons), and by reason
        self.bad_frames = 0
        self.bad_by_reason: dict[str, int] = {}
        #: replies that arrived while streaming (nobody was waiting for them)
        self.unexpected_replies = 0
        #: frames flagged "rate or excitation changed" after the session's first
        self.config_changes = 0
        self.last_bad: FrameError | None = None
        self._newest: Frame | None = None
        self._newest_utc_s = math.nan
        self._newest_mono_s: float | None = None
        self._heard_mono_s: float | None = None
        self._received = 0  # good frames so far, numbering them
        self._taken = 0  # number of the last frame a scan returned
        self._bad_since = 0
        self._checksum_since = 0
        self._last_seq: int | None = None
        self._session_frames = 0
        self._settings_changed = False

    def restart(self) -> None:
        """Forget the old session (undecoded bytes, newest frame, sequence); keep the counters."""
        self._decoder = FrameDecoder()
        self._newest = None
        self._newest_utc_s = math.nan
        self._newest_mono_s = None
        self._heard_mono_s = None
        self._taken = self._received
        self._bad_since = 0
        self._checksum_since = 0
        self._last_seq = None
        self._session_frames = 0
        self._settings_changed = False

    def decode(self, data: bytes) -> list[Record]:
        """Decode ``data`` without keeping any of it (while commands are answered); bytes of an unfinished frame stay."""
        return self._decoder.feed(data)

    def feed(self, data: bytes, *, utc_s: float, mono_s: float) -> int:
        """Decode ``data`` and keep what it completed; returns how many good frames it held."""
        return self.absorb(self._decoder.feed(data), utc_s=utc_s, mono_s=mono_s)

    def absorb(self, records: Sequence[Record], *, utc_s: float, mono_s: float) -> int:
        """Keep already decoded records (what followed ``GO``'s reply); returns how many were good frames."""
        good = 0
        if records:
            self._heard_mono_s = mono_s
        for rec in records:
            if isinstance(rec, Frame):
                self._frame(rec, utc_s, mono_s)
                good += 1
            elif isinstance(rec, FrameError):
                self.bad_frames += 1
                self.bad_by_reason[rec.reason] = self.bad_by_reason.get(rec.reason, 0) + 1
                self.last_bad = rec
                self._bad_since += 1
                if rec.reason == "checksum":
                    self._checksum_since += 1
            else:
                self.unexpected_replies += 1
        return good

    def _frame(self, frame: Frame, utc_s: float, mono_s: float) -> None:
        if self._last_seq is not None:
            gap = (frame.seq - self._last_seq - 1) % _SEQ_MOD
            if gap >= _SEQ_JUMP:
                self.sequence_jumps += 1
            elif gap:
                self.sequence_gaps += 1
                self.missed_frames += gap
        self._last_seq = frame.seq
        # the session's first frame may carry the change our own set-up made;
        # a later one was measured with settings the host does not know, and
        # so is every frame after it until the board is set up again
        if self._session_frames and frame.flags & FLAG_CONFIG_CHANGED and not self._settings_changed:
            self.config_changes += 1
            self._settings_changed = True
        self._session_frames += 1
        self.frames += 1
        if self._settings_changed:
            return
        self._received += 1
        self._newest = frame
        self._newest_utc_s = utc_s
        self._newest_mono_s = mono_s

    @property
    def fresh(self) -> bool:
        """A good frame arrived that no scan has returned."""
        return self._received > self._taken

    @property
    def last_frame_mono_s(self) -> float | None:
        """When the newest good frame of this session arrived (None: none yet)."""
        return self._newest_mono_s

    @property
    def last_heard_mono_s(self) -> float | None:
        """When anything at all (a frame, a reject, a reply) last came from the board in this session."""
        return self._heard_mono_s

    @property
    def settings_changed(self) -> bool:
        """A frame said the rate or excitation changed behind the host's back; no frame is handed out until ``restart``."""
        return self._settings_changed

    def take(
        self,
        channels: Sequence[tuple[str, int]],
        *,
        reference_ohm: float,
        bits: int,
        current_a: float | None,
        wiring: int | None,
        utc_s: float,
    ) -> list[RawReading] | None:
        """One reading per ``(name, board input)`` from the newest unreturned frame, or the rejects, or None.

        With a new good frame: its values (``ok`` for code ``G``, ``open``,
        ``overload``, ``out_of_range`` for ``O``, ``H``, ``L``), stamped with
        its arrival. Without one but with rejected candidates since the last
        take: ``checksum`` (if any failed their CRC) or ``garbage``, stamped
        ``utc_s``. Nothing at all: None (the caller decides on a timeout).
        """
        if self.fresh:
            frame = self._newest
            assert frame is not None
            self._taken = self._received
            self._bad_since = self._checksum_since = 0
            return [
                self._reading(name, index, frame, reference_ohm, bits, current_a, wiring) for name, index in channels
            ]
        if self._bad_since:
            status = "checksum" if self._checksum_since else "garbage"
            last = self.last_bad
            assert last is not None
            reason = (
                f"{self._bad_since} rejected frame(s) since the last scan and no good one"
                f" ({self._checksum_since} with a wrong checksum); last: {last.reason}: {last.detail}"
                f" {bytes(last.data[:_SHOWN_BYTES])!r}"
            )
            self._bad_since = self._checksum_since = 0
            return failed_scan([name for name, _ in channels], utc_s, status, reason)
        return None

    def _reading(
        self,
        name: str,
        index: int,
        frame: Frame,
        reference_ohm: float,
        bits: int,
        current_a: float | None,
        wiring: int | None,
    ) -> RawReading:
        t = self._newest_utc_s
        if index >= len(frame.counts):
            return RawReading(
                name, t, math.nan, "ohm", "error",
                f"input {index} is not on this board (its frames carry {len(frame.counts)} inputs)",
                current_a, wiring,
            )
        counts, code = frame.counts[index], frame.codes[index]
        full_scale = 1 << (bits - 1)
        if not -full_scale <= counts < full_scale:
            return RawReading(
                name, t, math.nan, "ohm", "out_of_range",
                f"{counts} counts are beyond the {bits}-bit full scale the board reported", current_a, wiring,
            )
        if code == "G":
            return RawReading(name, t, counts_to_ohm(counts, reference_ohm, bits=bits), "ohm", "ok", "", current_a, wiring)
        status, reason = _CODE_STATUS[code]
        return RawReading(name, t, math.nan, "ohm", status, f"{reason}, {counts} counts", current_a, wiring)


