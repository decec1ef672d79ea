"""Serial RTD ADC boards: a reader thread keeps the newest checksummed frame, and each scan takes it once.

The board (protocol in ``drivers.adcframe``) streams data frames on its
own; the host only sets it up. ``open()`` opens the port (a device path, locked
with ``exclusive=True``, or a pyserial URL such as ``socket://host:port``),
asks ``WHO`` and checks the answer, sets the frame rate and the excitation,
reads back what the board says it uses (``REF``: reference resistor,
resolution, excitation) and sends ``GO``. From then on a reader thread feeds
every byte to ``AdcStream`` (the shared ``FrameDecoder`` plus bookkeeping),
and ``read_scan`` hands out the newest good frame that no scan has returned.

Why a reader thread rather than reading in ``read_scan``: the board never
stops sending, and the service only calls once per scan interval. Between
calls the line would pile up in the operating system's buffer (a few KB on a
Linux tty), the board's writes would then be dropped, and the "newest" frame
read at the next scan would be one from when the buffer filled, seconds old.
Draining continuously keeps the newest frame truly new, counts every lost and
rejected frame, and notices a vanished port at once. The thread waits in
``select`` (through pyserial) with a short timeout only so that ``close()`` is
seen; it spends no CPU while the line is quiet, and it does not exist while
the port is closed.

Time: frames are stamped with the given clock's UTC when their last byte
arrives. The back-off schedule runs on the clock's monotonic line (so a test
clock drives it); waits for bytes are real seconds, because bytes arrive in
real time.

Failures never escape ``read_scan``: a vanished port is ``lost`` and is
re-opened after a capped, doubling back-off (while waiting, ``read_scan``
returns at once without touching the port); a board that stays silent is
``timeout`` and is re-identified and restarted on the same schedule (a board
that restarted behind a still-present USB port needs its settings and ``GO``
again); only rejected frames since the last scan give ``checksum`` or
``garbage``. A frame flagged "rate or excitation changed" after the session
started means someone else changed the board: the next scan sets it up again
before trusting its excitation.
"""

from __future__ import annotations

import math
import threading
import time
from collections.abc import Sequence

import serial

from soaklog.errors import (
    ConnectionLost,
    InputError,
    InstrumentError,
    InstrumentTimeout,
)
from soaklog.drivers.adc_stream import AdcStream, Record
from soaklog.drivers.adcframe import (
    MAX_CHANNELS,
    Reply,
    encode_command,
)
from soaklog.drivers.base import Clock, Health, RawReading, SystemClock, failed_scan


__all__ = ["AdcStream", "Clock", "DEFAULT_BACKOFF_S", "SerialAdc"]

#: reconnect delays: the first wait, doubled after each failure up to the cap
#: (the shape of TCP's retransmission back-off, RFC 6298 5.5 and 2.5, from memory)
DEFAULT_BACKOFF_S = (1.0, 60.0)
#: how long the reader thread's read waits before looking at its stop flag
_READ_POLL_S = 0.1
#: most bytes taken in one read once data is there (several full frames)
_CHUNK_BYTES = 4096
#: how long close() waits for the reader thread
_JOIN_S = 2.0
_MAX_NOTES = 10


def _fmt(x: float) -> str:
    return format(x, ".6g")


def _read_available(port: serial.SerialBase) -> bytes:
    """Wait up to the port's timeout for a byte, then take what else is there without waiting."""
    data = port.read(max(1, port.in_waiting))
    if len(data) != 1:
        return data
    # a lone byte: either the first of a frame whose rest is already here, or a
    # transport whose in_waiting only says "something" (socket:// answers 0 or
    # 1); reading on byte by byte would cost a system call per byte
    port.timeout = 0
    try:
        return data + port.read(_CHUNK_BYTES)
    finally:
        port.timeout = _READ_POLL_S


def _finite_positive(x: object) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x) and x > 0


# ---------------------------------------------------------------- the driver


class SerialAdc:
    """One serial RTD ADC board as a ``Driver``.

    Args:
        name: the instrument's name in messages and health (``adc1``).
        port: a device path (``/dev/ttyACM0``, opened with ``exclusive=True``)
            or a pyserial URL (``socket://127.0.0.1:7000``), used as given.
        inputs: the board inputs to read, by number (``"0"``, ``"3"``); each
            reading carries its input's name as its channel.
        baudrate: line speed (ignored by ptys and sockets).
        timeout_s: how long a command reply, or a new frame, may take.
        reference_ohm: the reference resistor expected; the board's own
            report (``REF``) wins, and a difference is noted in health.
        bits: the converter resolution expected (the board's report wins).
        excitation_a: the excitation current to set; readings carry what the
            board reports after setting it.
        wiring: how the RTDs are hooked up (2, 3 or 4), carried by the readings.
        rate_hz: frames per second to set (None: keep the board's rate).
        clock: an object with ``utc_s()`` and ``monotonic_s()`` (default: ``SystemClock``).
        backoff: ``(first_s, cap_s)``: the wait before the first reconnect,
            doubled after each failure, at most ``cap_s``.

    Raises:
        InputError: a setting that cannot work. The constructor does no I/O.
    """

    def __init__(
        self,
        name: str,
        port: str,
        inputs: Sequence[str],
        *,
        baudrate: int = 115200,
        timeout_s: float = 2.0,
        reference_ohm: float = 400.0,
        bits: int = 24,
        excitation_a: float = 250e-6,
        wiring: int = 3,
        rate_hz: float | None = None,
        clock: Clock | None = None,
        backoff: tuple[float, float] = DEFAULT_BACKOFF_S,
    ) -> None:
        if not isinstance(name, str) or not name:
            raise InputError(f"an ADC board needs a name, got {name!r}")
        if not isinstance(port, str) or not port:
            raise InputError(f"{name}: port must be a device path or a pyserial URL, got {port!r}")
        inputs = tuple(inputs)
        if not inputs:
            raise InputError(f"{name}: no inputs to read; give board input numbers such as '0', '1'")
        index: list[int] = []
        for inp in inputs:
            if not (isinstance(inp, str) and inp.isascii() and inp.isdigit() and int(inp) < MAX_CHANNELS):
                raise InputError(
                    f"{name}: board input {inp!r} is not a number 0…{MAX_CHANNELS - 1}; inputs are named '0', '1', …"
                )
            index.append(int(inp))
        if len(set(index)) != len(index):
            raise InputError(f"{name}: inputs {list(inputs)} name the same board input twice")
        if isinstance(baudrate, bool) or not isinstance(baudrate, int) or baudrate <= 0:
            raise InputError(f"{name}: baudrate must be a positive whole number, got {baudrate!r}")
        for what, value in (("timeout_s", timeout_s), ("reference_ohm", reference_ohm), ("excitation_a", excitation_a)):
            if not _finite_positive(value):
                raise InputError(f"{name}: {what} must be a finite positive number, got {value!r}")
        if isinstance(bits, bool) or not isinstance(bits, int) or not 8 <= bits <= 24:
            raise InputError(f"{name}: the board protocol carries 8…24-bit counts, not bits={bits!r}")
        if wiring not in (2, 3, 4):
            raise InputError(f"{name}: wiring must be 2, 3 or 4, got {wiring!r}")
        if rate_hz is not None and not _finite_positive(rate_hz):
            raise InputError(f"{name}: rate_hz must be a finite positive number of frames/s or None, got {rate_hz!r}")
        try:
            first_s, cap_s = (float(x) for x in backoff)
        except (TypeError, ValueError):
            raise InputError(f"{name}: backoff must be (first_s, cap_s), got {backoff!r}") from None
        if not (math.isfinite(cap_s) and 0 < first_s <= cap_s):
            raise InputError(f"{name}: backoff needs 0 < first_s <= cap_s (finite), got {backoff!r}")

        self.name = name
        self.port = port
        self.inputs = inputs
        self.baudrate = baudrate
        self.timeout_s = float(timeout_s)
        self.reference_ohm = float(reference_ohm)
        self.bits = bits
        self.excitation_a = float(excitation_a)
        self.wiring = wiring
        self.rate_hz = None if rate_hz is None else float(rate_hz)
        self._channels = tuple(zip(inputs, index))
        self._clock: Clock = clock if clock is not None else SystemClock()
        self._backoff = (first_s, cap_s)

        # _cond guards the stream, health and session state; the reader holds
        # it only to feed one chunk, never across I/O
        self._cond = threading.Condition()
        # one operation (open, close, read_scan) at a time
        self._op = threading.RLock()
        self._stream = AdcStream()
        self._health = Health(counters={"connect_attempts": 0, "resyncs": 0})
        self._port: serial.SerialBase | None = None
        self._reader: threading.Thread | None = None
        self._reader_stop = threading.Event()
        self._session = 0
        self._session_mono_s = 0.0
        self._lost: ConnectionLost | None = None
        self._closed = False
        self._ever_connected = False
        self._failures = 0
        self._retry_at_s: float | None = None  # clock.monotonic_s() of the next attempt
        self._fail_status = "lost"
        self._silent_retry_at_s: float | None = None
        # what the board reported at the last set-up
        self._board_reference_ohm = self.reference_ohm
        self._board_bits = bits
        self._board_excitation_a: float | None = None
        self._board_wiring: int | None = None
        self._board_rate_hz: float | None = None
        self._board_inputs: int | None = None
        self._notes: list[str] = []
        #: maker, model and serial of the board found after open(); reconnecting must find the same one
        self._expected_board: str | None = None

    def open(self) -> None:
        """Open the port, identify the board, set it up and start streaming.

        Raises:
            ConnectionLost: the port cannot be opened or went away.
            InstrumentTimeout: the board did not answer a command within ``timeout_s``.
            InstrumentError: the board refused a command or answered something else.
        """
        with self._op:
            self._closed = False
            self._disconnect()
            self._expected_board = None  # an explicit open() accepts whichever board answers
            try:
                self._connect()
            except InstrumentError as exc:
                self._failed(exc)
                raise

    def close(self) -> None:
        """Stop the reader and close the port; never raises. ``open()`` starts again."""
        with self._op:
            self._closed = True
            self._disconnect()
            with self._cond:
                self._retry_at_s = None
                self._health.next_retry_utc_s = None

    def health(self) -> dict[str, object]:
        """A snapshot of the board's condition, safe to hand to another thread.

        Keys of ``Health`` (``connected``, ``identity``, ``last_error``,
        ``last_error_utc_s``, ``last_ok_utc_s``; ``reads``: scans with a new
        frame; ``errors``: failures noted, timeouts included; ``timeouts``:
        waits that ran out; ``reconnects``: sessions after the first;
        ``bad_frames``: rejected candidates; ``next_retry_utc_s``), and:
        ``connect_attempts``, ``resyncs`` (set-ups of a connected board that
        went silent or was changed), ``port``, ``frames`` (good frames
        received), ``missed_frames`` and ``sequence_gaps`` (by the board's
        frame counter), ``sequence_jumps``, ``bad_by_reason``,
        ``last_bad_frame``, ``unexpected_replies``, ``config_changes``,
        ``failures`` (in a row), what the board reported (``reference_ohm``,
        ``bits``, ``excitation_a``, ``board_wiring``, ``rate_hz``,
        ``board_inputs``) and ``notes`` (differences from the configuration).
        """
        with self._cond:
            snap = self._health.snapshot()
            s = self._stream
            snap.update(
                {
                    "port": self.port,
                    "bad_frames": s.bad_frames,
                    "frames": s.frames,
                    "missed_frames": s.missed_frames,
                    "sequence_gaps": s.sequence_gaps,
                    "sequence_jumps": s.sequence_jumps,
                    "bad_by_reason": dict(s.bad_by_reason),
                    "last_bad_frame": "" if s.last_bad is None else f"{s.last_bad.reason}: {s.last_bad.detail}",
                    "unexpected_replies": s.unexpected_replies,
                    "config_changes": s.config_changes,
                    "failures": self._failures,
                    "reference_ohm": self._board_reference_ohm,
                    "bits": self._board_bits,
                    "excitation_a": self._board_excitation_a,
                    "board_wiring": self._board_wiring,
                    "rate_hz": self._board_rate_hz,
                    "board_inputs": self._board_inputs,
                    "notes": list(self._notes),
                }
            )
        return snap

    def read_scan(self) -> list[RawReading]:
        """One reading per input from the newest frame no scan has returned; trouble becomes statuses."""
        with self._op:
            try:
                return self._scan()
            except Exception as exc:  # noqa: BLE001 - the contract: instrument trouble never escapes
                reason = f"driver fault: {exc!r}"
                self._note_error(reason)
                return failed_scan(self.inputs, self._clock.utc_s(), "error", reason)

    # ------------------------------------------------------------ scanning

    def _scan(self) -> list[RawReading]:
        if self._closed:
            return failed_scan(self.inputs, self._clock.utc_s(), "lost", f"{self._where()} is closed; call open()")
        # a second round only when the board's settings changed during the
        # first: it is set up again and read once more
        for _ in range(2):
            if self._port is not None and self._resync_due():
                with self._cond:
                    self._health.counters["resyncs"] += 1
                self._disconnect()
                self._retry_at_s = None
            if self._port is None:
                now_s = self._clock.monotonic_s()
                if self._retry_at_s is not None and now_s < self._retry_at_s:
                    why = self._health.last_error or "not connected"
                    return failed_scan(
                        self.inputs, self._clock.utc_s(), self._fail_status,
                        f"{why} (next try in {self._retry_at_s - now_s:.1f} s)",
                    )
                try:
                    self._connect()
                except InstrumentError as exc:
                    status = self._failed(exc)
                    return failed_scan(self.inputs, self._clock.utc_s(), status, str(exc))
            readings = self._take()
            if readings is not None:
                return readings
        reason = f"the rate or excitation of {self._where()} keeps changing behind the driver's back"
        self._note_error(reason)
        return failed_scan(self.inputs, self._clock.utc_s(), "error", reason)

    def _resync_due(self) -> bool:
        """The board must be set up again: silent for a whole back-off, or changed by someone else."""
        with self._cond:
            if self._stream.settings_changed:
                return True
            return self._silent_retry_at_s is not None and self._clock.monotonic_s() >= self._silent_retry_at_s

    def _take(self) -> list[RawReading] | None:
        """The scan from the current session; None when the board's settings changed meanwhile."""
        with self._cond:
            last = self._stream.last_frame_mono_s
            # wait for a new frame until timeout_s after the last one (or the
            # session start): a silent board costs one wait, not one per scan
            deadline = max(last if last is not None else 0.0, self._session_mono_s) + self.timeout_s
            while not self._stream.fresh and self._lost is None and not self._stream.settings_changed:
                left = deadline - time.monotonic()
                if left <= 0:
                    break
                self._cond.wait(left)
            lost = self._lost
            if lost is None and self._stream.settings_changed:
                return None
            readings = None
            if lost is None:
                readings = self._stream.take(
                    self._channels,
                    reference_ohm=self._board_reference_ohm,
                    bits=self._board_bits,
                    current_a=self._board_excitation_a,
                    wiring=self.wiring,
                    utc_s=self._clock.utc_s(),
                )
        if lost is not None:
            self._disconnect()
            status = self._failed(lost)
            return failed_scan(self.inputs, self._clock.utc_s(), status, str(lost))
        if readings is None:
            since = "" if last is None else f" (last frame {time.monotonic() - last:.1f} s ago)"
            reason = f"no new frame from {self._where()} within {self.timeout_s:g} s{since}"
            self._note_error(reason, timeout=True)
            with self._cond:
                heard = self._stream.last_heard_mono_s
                silent = heard is None or time.monotonic() - heard >= self.timeout_s
                if silent and self._silent_retry_at_s is None:
                    self._failures += 1
                    delay_s = self._delay_s()
                    self._silent_retry_at_s = self._clock.monotonic_s() + delay_s
                    self._health.next_retry_utc_s = self._clock.utc_s() + delay_s
            return failed_scan(self.inputs, self._clock.utc_s(), "timeout", reason)
        with self._cond:
            if readings[0].status in ("checksum", "garbage"):
                self._health.errors += 1
                self._health.last_error = readings[0].reason
                self._health.last_error_utc_s = self._clock.utc_s()
                # the board is talking: setting it up again would not mend its frames
                self._silent_retry_at_s = None
            else:
                self._health.reads += 1
                self._health.last_ok_utc_s = readings[0].t_utc_s
                self._failures = 0
                self._silent_retry_at_s = None
                self._health.next_retry_utc_s = None
        return readings

    # ------------------------------------------------------------ connecting

    def _connect(self) -> None:
        with self._cond:
            self._health.counters["connect_attempts"] += 1
        port = self._open_port()
        try:
            with self._cond:
                self._stream.restart()
            self._setup(port)
            go, rest = self._ask(port, "GO")
            if not go.ok:
                raise InstrumentError(
                    f"{self._where()} refused GO: {go.message}", resource=self.port, command="GO"
                )
        except BaseException:
            self._close_port(port)
            raise
        stop = threading.Event()
        with self._cond:
            self._session += 1
            session = self._session
            self._session_mono_s = time.monotonic()
            self._stream.absorb(rest, utc_s=self._clock.utc_s(), mono_s=self._session_mono_s)
            self._port = port
            self._reader_stop = stop
            self._lost = None
            h = self._health
            h.connected = True
            h.next_retry_utc_s = None
            if self._ever_connected:
                h.reconnects += 1
            self._ever_connected = True
            # failures are forgiven by a good frame, not by a connection: a
            # board that answers but never streams keeps backing off
            self._retry_at_s = None
            self._silent_retry_at_s = None
        reader = threading.Thread(
            target=self._read_loop, args=(port, session, stop), name=f"serial-adc-{self.name}", daemon=True
        )
        self._reader = reader
        reader.start()

    def _open_port(self) -> serial.SerialBase:
        try:
            if "://" in self.port:
                return serial.serial_for_url(
                    self.port, baudrate=self.baudrate, timeout=_READ_POLL_S, write_timeout=self.timeout_s
                )
            return serial.Serial(
                self.port, baudrate=self.baudrate, timeout=_READ_POLL_S, write_timeout=self.timeout_s, exclusive=True
            )
        except (serial.SerialException, OSError, ValueError) as exc:
            raise ConnectionLost(
                f"cannot open {self._where()}: {exc}; check the cable, the path and that no other program holds it",
                resource=self.port,
            ) from exc

    def _setup(self, port: serial.SerialBase) -> None:
        """Identify the board, set rate and excitation, and read back what it uses."""
        notes: list[str] = []
        who, _ = self._ask(port, "WHO")
        maker, model = who.get("maker"), who.get("model")
        if not who.ok or not maker or not model:
            why = who.message if not who.ok else f"no maker or model in {who.fields!r}"
            raise InstrumentError(
                f"{self._where()} did not identify as an RTD board ({why}); check the port", resource=self.port, command="WHO"
            )
        identity = " ".join(
            [maker, model] + [f"{k}={v}" for k, v in who.fields if k not in ("maker", "model")]
        )
        board = f"{maker} {model} serial={who.get('serial', '?')}"
        if self._expected_board is not None and board != self._expected_board:
            # a device path can be given to another device; its inputs are not ours
            raise InstrumentError(
                f"a different board answers on {self._where()}: {board!r}, not {self._expected_board!r};"
                " its readings are refused until open() is called again",
                resource=self.port,
                command="WHO",
            )

        chans = self._require(self._ask(port, "CHANS")[0], "CHANS")
        n_inputs = self._int(chans, "n", "CHANS")
        missing = [name for name, i in self._channels if i >= n_inputs]
        if missing:
            notes.append(f"the board has {n_inputs} inputs; {', '.join(missing)} read as errors")

        if self.rate_hz is not None:
            rate = self._ask(port, "RATE", _fmt(self.rate_hz))[0]
            if not rate.ok:
                notes.append(f"board refused RATE {_fmt(self.rate_hz)} ({rate.message}); keeping its own rate")
                rate = self._require(self._ask(port, "RATE")[0], "RATE")
        else:
            rate = self._require(self._ask(port, "RATE")[0], "RATE")
        rate_hz = self._number(rate, "hz", "RATE")
        if 1.0 / rate_hz > self.timeout_s:
            notes.append(f"frames come every {1.0 / rate_hz:g} s but timeout_s is {self.timeout_s:g}: scans will time out")

        exc = self._ask(port, "EXC", _fmt(self.excitation_a))[0]
        if not exc.ok:
            notes.append(f"board refused EXC {_fmt(self.excitation_a)} ({exc.message}); using the current it reports")

        ref = self._require(self._ask(port, "REF")[0], "REF")
        ref_ohm = self._number(ref, "ohm", "REF")
        bits = self._int(ref, "bits", "REF")
        current_a = self._number(ref, "a", "REF")
        board_wiring = ref.get("wiring")
        if not 8 <= bits <= 24:
            raise InstrumentError(
                f"{self._where()} reports {bits}-bit counts; the protocol carries 8…24", resource=self.port, command="REF"
            )
        if not math.isclose(ref_ohm, self.reference_ohm, rel_tol=1e-6):
            notes.append(f"board reports R_ref = {_fmt(ref_ohm)} ohm, configured {_fmt(self.reference_ohm)}: using the board's")
        if bits != self.bits:
            notes.append(f"board reports {bits}-bit counts, configured {self.bits}: using the board's")
        if not math.isclose(current_a, self.excitation_a, rel_tol=1e-6):
            notes.append(
                f"board reports excitation {_fmt(current_a)} A, configured {_fmt(self.excitation_a)}: readings carry the board's"
            )
        if board_wiring is not None and board_wiring != str(self.wiring):
            notes.append(f"board reports {board_wiring}-wire hook-up, configured {self.wiring}: readings carry the configured")

        with self._cond:
            self._health.identity = identity
            self._expected_board = board
            self._board_inputs = n_inputs
            self._board_rate_hz = rate_hz
            self._board_reference_ohm = ref_ohm
            self._board_bits = bits
            self._board_excitation_a = current_a
            self._board_wiring = int(board_wiring) if board_wiring and board_wiring.isdigit() else None
            for note in notes:
                if note not in self._notes:
                    self._notes.append(note)
            del self._notes[:-_MAX_NOTES]

    def _ask(self, port: serial.SerialBase, word: str, *args: str) -> tuple[Reply, list[Record]]:
        """Send one command and wait for its reply; returns it and the records decoded after it."""
        line = encode_command(word, *args)
        shown = " ".join((word, *args))
        try:
            port.write(line)
        except (serial.SerialException, OSError) as exc:
            raise ConnectionLost(
                f"cannot write {shown!r} to {self._where()}: {exc}", resource=self.port, command=shown
            ) from exc
        deadline = time.monotonic() + self.timeout_s
        while True:
            try:
                data = _read_available(port)
            except (serial.SerialException, OSError) as exc:
                raise ConnectionLost(
                    f"{self._where()} went away waiting for the reply to {shown!r}: {exc}", resource=self.port, command=shown
                ) from exc
            if data:
                with self._cond:
                    records = self._stream.decode(data)
                for i, rec in enumerate(records):
                    # frames before the reply were made with the old settings
                    if isinstance(rec, Reply) and (rec.command == word or (not rec.ok and rec.command == "?")):
                        return rec, records[i + 1 :]
            if time.monotonic() >= deadline:
                raise InstrumentTimeout(
                    f"no reply to {shown!r} from {self._where()} within {self.timeout_s:g} s;"
                    " check that the board is powered and on this port",
                    resource=self.port,
                    command=shown,
                )

    def _require(self, reply: Reply, word: str) -> Reply:
        if not reply.ok:
            raise InstrumentError(f"{self._where()} refused {word}: {reply.message}", resource=self.port, command=word)
        return reply

    def _number(self, reply: Reply, key: str, word: str) -> float:
        text = reply.get(key)
        try:
            value = float(text) if text is not None else math.nan
        except ValueError:
            value = math.nan
        if not (math.isfinite(value) and value > 0):
            raise InstrumentError(
                f"{self._where()} answered {word} with {key}={text!r}, not a positive number", resource=self.port, command=word
            )
        return value

    def _int(self, reply: Reply, key: str, word: str) -> int:
        text = reply.get(key)
        if text is None or not text.isascii() or not text.isdigit() or int(text) < 1:
            raise InstrumentError(
                f"{self._where()} answered {word} with {key}={text!r}, not a whole number", resource=self.port, command=word
            )
        return int(text)

    # ------------------------------------------------------------ the reader thread

    def _read_loop(self, port: serial.SerialBase, session: int, stop: threading.Event) -> None:
        while not stop.is_set():
            try:
                data = _read_available(port)
            except Exception as exc:  # noqa: BLE001 - anything the port raises ends this session as lost
                if stop.is_set():
                    return
                lost = ConnectionLost(f"{self._where()} went away: {exc}", resource=self.port)
                lost.__cause__ = exc  # what ``raise … from exc`` records; this thread hands it over instead
                with self._cond:
                    if session == self._session:
                        self._lost = lost
                        self._cond.notify_all()
                return
            if not data:
                continue
            utc_s, mono_s = self._clock.utc_s(), time.monotonic()
            with self._cond:
                if session != self._session:
                    return
                if self._stream.feed(data, utc_s=utc_s, mono_s=mono_s):
                    self._cond.notify_all()

    # ------------------------------------------------------------ failures

    def _disconnect(self) -> None:
        """End the session: stop the reader, close the port (never raises)."""
        with self._cond:
            port, self._port = self._port, None
            reader, self._reader = self._reader, None
            self._reader_stop.set()
            self._session += 1
            self._lost = None
            self._silent_retry_at_s = None
            self._health.connected = False
        if port is not None:
            cancel = getattr(port, "cancel_read", None)
            if cancel is not None:
                try:
                    cancel()
                except Exception:  # noqa: BLE001 - not every transport can cancel; the poll timeout ends it
                    pass
        if reader is not None and reader is not threading.current_thread():
            reader.join(_JOIN_S)
        if port is not None:
            self._close_port(port)

    @staticmethod
    def _close_port(port: serial.SerialBase) -> None:
        try:
            port.close()
        except Exception:  # noqa: BLE001 - a vanished port may fail to close; it is gone either way
            pass

    def _delay_s(self) -> float:
        first_s, cap_s = self._backoff
        return min(first_s * 2.0 ** max(self._failures - 1, 0), cap_s)

    def _failed(self, exc: InstrumentError) -> str:
        """Note a failed connection, schedule the next try; returns the status scans give meanwhile."""
        status = "timeout" if isinstance(exc, InstrumentTimeout) else "lost" if isinstance(exc, ConnectionLost) else "error"
        self._note_error(str(exc), timeout=status == "timeout")
        with self._cond:
            self._failures += 1
            delay_s = self._delay_s()
            self._retry_at_s = self._clock.monotonic_s() + delay_s
            self._health.next_retry_utc_s = self._clock.utc_s() + delay_s
            self._health.connected = False
            self._fail_status = status
        return status

    def _note_error(self, message: str, *, timeout: bool = False) -> None:
        with self._cond:
            self._health.last_error = message
            self._health.last_error_utc_s = self._clock.utc_s()
            self._health.errors += 1
            if timeout:
                self._health.timeouts += 1

    def _where(self) -> str:
        return f"{self.name} ({self.port})"
