"""A serial RTD ADC board on a pseudo-terminal, speaking the protocol of ``drivers.adcframe``.

The board has one ratiometric 24-bit converter per input: it drives the
excitation current through the RTD and its reference resistor in series and
sends ``counts = R_rtd / R_ref · 2^23``. It streams data frames at a set rate
and answers commands between them (see ``adcframe`` for the wire format).

Open it with pyserial like a real board::

    board = AdcBoardSimulator(plant, ["rtd1", "rtd2"], rate_hz=20).start()
    port = serial.Serial(board.device_path, baudrate=115200, timeout=1)

The baud rate is ignored (a pty has none). Opening a pty port flushes its
input, so frames sent before the open are lost, as on a real line.

Faults are injected with methods or through ``commands()``, a ``CommandTable``
that ``ControlServer`` serves on a loopback port:

=====================  ============================================================
control line           effect
=====================  ============================================================
``fault badsum [N]``   the next N data frames (or all, until cleared) carry a wrong CRC
``fault partial``      frames are written in 2-3 pieces with pauses, and about one in
                       three without its line end, so it runs into the next
``fault garbage``      random bytes (any value, non-ASCII included) between frames
``fault mute``         no frames and no replies; commands received are dropped
``fault vanish``       the pty is closed: readers on it get ``SerialException``;
                       ``clear`` brings up a new pty (a new ``device_path``;
                       ``link_path`` follows it)
``clear [NAME]``       ends every fault (or one)
``status``             a JSON object: faults, streaming, rate, counters, device
=====================  ============================================================

After ``vanish``, pyserial's ``read`` and ``readline`` raise ``SerialException``
at once, but ``in_waiting`` raises a bare ``OSError`` (EIO): a driver must
catch both.

Run standalone with ``python -m simulators.adc``: it prints the device path and
the control address, and stops on Ctrl-C or SIGTERM.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import math
import os
import random
import re
import select
import signal
import threading
import time
import tty
from collections.abc import Sequence

from soaklog.errors import InputError
from soaklog.drivers import adcframe as af
from soaklog.simulators.control import CommandTable, ControlError, ControlServer
from soaklog.simulators.plant import OPEN_OHM, FixedPlant, Plant

__all__ = [
    "AdcBoardSimulator",
    "FAULTS",
    "MAKER",
    "MODEL",
    "FIRMWARE",
    "RATE_RANGE_HZ",
    "EXCITATION_RANGE_A",
    "main",
]

MAKER = "Tallowfen"  # an invented maker
MODEL = "TF-RB24"
FIRMWARE = "0.9.0-sim"
RATE_RANGE_HZ = (0.1, 50.0)
EXCITATION_RANGE_A = (1e-5, 1e-3)
FAULTS = ("badsum", "partial", "garbage", "mute", "vanish")

#: longest command line the board keeps before refusing it
_MAX_COMMAND_BYTES = 256
#: how far behind its schedule the streamer may fall before it starts a new one
_MAX_LAG_PERIODS = 5
_WRITE_WAIT_S = 0.005


def _fmt(x: float) -> str:
    return format(x, ".6g")


class AdcBoardSimulator:
    """A streaming RTD ADC board on a pty, with fault injection.

    Args:
        plant: the world the inputs are wired to.
        channel_map: plant channel name per board input, in input order;
            ``None`` is an input with nothing connected (reads open).
        rate_hz: frames per second, 0.1…50 (the board's clock).
        wiring: how each RTD is connected, 2, 3 or 4 wires (passed to the plant).
        reference_ohm: the reference resistor R_ref.
        excitation_a: the excitation current, 1e-5…1e-3 A (self-heats the sensors).
        bits: converter resolution, 8…24.
        noise_counts: standard deviation of Gaussian noise added to each reading, in counts.
        time_scale: how many board seconds pass per wall-clock second; the
            board clock (frame ticks) and the frame pacing follow it.
        seed: seed of the noise and fault randomness (None: unpredictable).
        streaming: start streaming as soon as the board starts (else wait for ``GO``).
        serial_number: what ``WHO`` reports.
        link_path: keep a symlink here pointing at the current pty, so a
            client can reopen the same path after ``vanish`` and ``clear``.

    Raises:
        InputError: a setting out of range or a channel the plant does not have.
    """

    def __init__(
        self,
        plant: Plant,
        channel_map: Sequence[str | None],
        *,
        rate_hz: float = 1.0,
        wiring: int = 3,
        reference_ohm: float = 400.0,
        excitation_a: float = 250e-6,
        bits: int = 24,
        noise_counts: float = 2.0,
        time_scale: float = 1.0,
        seed: int | None = None,
        streaming: bool = True,
        serial_number: str = "TF24-000117",
        link_path: str | os.PathLike[str] | None = None,
    ) -> None:
        channel_map = list(channel_map)
        if not 1 <= len(channel_map) <= af.MAX_CHANNELS:
            raise InputError(f"a board has 1…{af.MAX_CHANNELS} inputs; channel_map has {len(channel_map)}")
        known = plant.channels()
        unknown = [c for c in channel_map if c is not None and c not in known]
        if unknown:
            raise InputError(f"channel_map names {unknown} that the plant does not have; known: {known}")
        if wiring not in (2, 3, 4):
            raise InputError(f"wiring {wiring!r} must be 2, 3 or 4")
        if not (isinstance(bits, int) and 8 <= bits <= 24):
            raise InputError(f"bits {bits!r} must be an integer 8…24")
        if not (math.isfinite(reference_ohm) and reference_ohm > 0):
            raise InputError(f"reference_ohm {reference_ohm!r} must be finite and positive")
        if not (math.isfinite(noise_counts) and noise_counts >= 0):
            raise InputError(f"noise_counts {noise_counts!r} must be finite and not negative")
        if not (math.isfinite(time_scale) and time_scale > 0):
            raise InputError(f"time_scale {time_scale!r} must be finite and positive")
        if not re.fullmatch(r"[!-?A-}]{1,32}", serial_number):
            raise InputError(f"serial_number {serial_number!r} must be 1-32 printable characters without spaces")
        self._plant = plant
        self._inputs = channel_map
        self._wiring = wiring
        self._reference_ohm = float(reference_ohm)
        self._bits = bits
        self._noise_counts = float(noise_counts)
        self._time_scale = float(time_scale)
        self._serial_number = serial_number
        self._rate_hz = self._check_rate(rate_hz)
        self._excitation_a = self._check_excitation(excitation_a)
        self._rng = random.Random(seed)
        self._link_path = os.fspath(link_path) if link_path is not None else None

        # _cond guards configuration, faults and counters; _io guards the pty
        # file descriptors and every write, so frames and replies never interleave
        self._cond = threading.Condition()
        self._io = threading.Lock()
        self._stop = threading.Event()
        self._streaming = bool(streaming)
        self._faults: dict[str, int | None] = {}
        self._reschedule = True
        self._pending_flags = af.FLAG_STREAM_START
        self._seq = 0
        self._frames_sent = 0
        self._replies_sent = 0
        self._plant_error: str | None = None
        self._threads: list[threading.Thread] = []
        self._closed = False
        self._t0 = time.monotonic()

        self._master = -1
        self._slave = -1
        self._generation = 0
        self._device_path = ""
        self._wake_r, self._wake_w = os.pipe()
        os.set_blocking(self._wake_r, False)
        os.set_blocking(self._wake_w, False)
        try:
            self._open_pty()
        except BaseException:
            os.close(self._wake_r)
            os.close(self._wake_w)
            raise
        self._table = self._build_table()

    # ------------------------------------------------------------ life cycle

    @property
    def device_path(self) -> str:
        """Path of the pty for pyserial (changes when the board comes back after ``vanish``)."""
        with self._io:
            return self._device_path

    @property
    def link_path(self) -> str | None:
        """The stable symlink to the current pty, if one was asked for."""
        return self._link_path

    def start(self) -> AdcBoardSimulator:
        """Start streaming and answering; returns the board."""
        if self._closed:
            raise InputError("this board simulator is closed; make a new one")
        if self._threads:
            return self
        self._t0 = time.monotonic()
        self._threads = [
            threading.Thread(target=self._stream_loop, name="adc-stream", daemon=True),
            threading.Thread(target=self._read_loop, name="adc-commands", daemon=True),
        ]
        for t in self._threads:
            t.start()
        return self

    def close(self) -> None:
        """Stop both threads and close every file descriptor; safe to call twice."""
        if self._closed:
            return
        self._closed = True
        self._stop.set()
        with self._cond:
            self._cond.notify_all()
        self._wake()
        for t in self._threads:
            t.join(timeout=5.0)
        self._close_pty()
        os.close(self._wake_r)
        os.close(self._wake_w)

    def __enter__(self) -> AdcBoardSimulator:
        return self.start()

    def __exit__(self, *exc: object) -> None:
        self.close()

    # ------------------------------------------------------------ faults

    def fault_badsum(self, count: int | None = None) -> None:
        """Send the next ``count`` data frames (None: every frame until cleared) with a wrong CRC."""
        if count is not None and count < 1:
            raise InputError(f"badsum count {count} must be at least 1 (or None for until cleared)")
        self._set_fault("badsum", count)

    def fault_partial(self) -> None:
        """Write frames in pieces with pauses, some without their line end."""
        self._set_fault("partial")

    def fault_garbage(self) -> None:
        """Write random bytes, non-ASCII included, between frames."""
        self._set_fault("garbage")

    def fault_mute(self) -> None:
        """Send nothing and answer nothing until cleared."""
        self._set_fault("mute")

    def fault_vanish(self) -> None:
        """Close the pty, as a board unplugged; ``clear`` brings up a new one."""
        self._set_fault("vanish")
        self._close_pty()
        self._wake()

    def clear(self, name: str | None = None) -> None:
        """End every fault, or the one named; a vanished board comes back on a new pty."""
        if name is not None and name not in FAULTS:
            raise InputError(f"no fault {name!r}; faults are {', '.join(FAULTS)}")
        with self._cond:
            names = list(self._faults) if name is None else [name]
            was_vanished = "vanish" in self._faults and "vanish" in names
            was_quiet = any(n in self._faults for n in ("mute", "vanish") if n in names)
            for n in names:
                self._faults.pop(n, None)
            if was_quiet:
                self._reschedule = True
                self._pending_flags |= af.FLAG_STREAM_START
        if was_vanished and not self._closed:
            self._open_pty()
        with self._cond:
            self._cond.notify_all()
        self._wake()

    def clear_faults(self) -> None:
        """End every fault (the same as ``clear()``, named as on the other simulators)."""
        self.clear()

    def active_faults(self) -> list[str]:
        """Names of the faults in force, sorted."""
        with self._cond:
            return sorted(self._faults)

    def status(self) -> dict[str, object]:
        """Faults in force, streaming state, settings and counters, as JSON-ready values."""
        device_path = self.device_path
        with self._cond:
            return {
                "faults": sorted(self._faults),
                "badsum_remaining": self._faults.get("badsum"),
                "streaming": self._streaming,
                "rate_hz": self._rate_hz,
                "excitation_a": self._excitation_a,
                "reference_ohm": self._reference_ohm,
                "bits": self._bits,
                "wiring": self._wiring,
                "inputs": len(self._inputs),
                "seq": self._seq,
                "frames_sent": self._frames_sent,
                "replies_sent": self._replies_sent,
                "device_path": device_path,
                "plant_error": self._plant_error,
            }

    def commands(self) -> CommandTable:
        """The control commands (``fault``, ``clear``, ``status``) for a ``ControlServer``."""
        return self._table

    def _set_fault(self, name: str, count: int | None = None) -> None:
        with self._cond:
            self._faults[name] = count
            self._cond.notify_all()

    def _build_table(self) -> CommandTable:
        table = CommandTable()

        def fault(args: Sequence[str]) -> str:
            if not args or args[0].lower() not in FAULTS:
                raise ControlError(f"fault needs one of: {', '.join(FAULTS)}")
            name = args[0].lower()
            if name == "badsum" and len(args) > 1:
                try:
                    count = int(args[1])
                    self.fault_badsum(count)
                except (ValueError, InputError) as exc:
                    raise ControlError(f"badsum count {args[1]!r} must be a whole number >= 1") from exc
                return f"badsum {count}"
            if len(args) > 1:
                raise ControlError(f"fault {name} takes no argument")
            getattr(self, f"fault_{name}")()
            return name

        def clear(args: Sequence[str]) -> str:
            if len(args) > 1 or (args and args[0].lower() not in FAULTS):
                raise ControlError(f"clear takes nothing or one of: {', '.join(FAULTS)}")
            self.clear(args[0].lower() if args else None)
            return f"cleared {args[0].lower()}" if args else "cleared"

        def status(args: Sequence[str]) -> str:
            return json.dumps(self.status(), sort_keys=True)

        table.register("fault", fault)
        table.register("clear", clear)
        table.register("status", status)
        return table

    # ------------------------------------------------------------ the pty

    def _open_pty(self) -> None:
        master, slave = os.openpty()
        try:
            # raw mode on the pair: no echo, no CR/LF translation (see STACK.md)
            tty.setraw(master)
            os.set_blocking(master, False)
            path = os.ttyname(slave)
        except BaseException:
            os.close(master)
            os.close(slave)
            raise
        with self._io:
            self._master, self._slave = master, slave
            self._generation += 1
            self._device_path = path
        if self._link_path is not None:
            tmp = f"{self._link_path}.{os.getpid()}.tmp"
            with contextlib.suppress(FileNotFoundError):
                os.unlink(tmp)
            os.symlink(path, tmp)
            os.replace(tmp, self._link_path)

    def _close_pty(self) -> None:
        with self._io:
            for fd in (self._master, self._slave):
                if fd >= 0:
                    os.close(fd)
            self._master = self._slave = -1
            self._generation += 1
        if self._link_path is not None and os.path.islink(self._link_path):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(self._link_path)

    def _wake(self) -> None:
        with contextlib.suppress(BlockingIOError, OSError):
            os.write(self._wake_w, b"x")

    def _write(self, data: bytes) -> bool:
        """Write all of ``data`` to the pty; drop it when nobody drains the line. Caller holds _io."""
        view = memoryview(data)
        while view:
            if self._master < 0:
                return False
            try:
                n = os.write(self._master, view)
            except BlockingIOError:
                # the other end is not reading: a UART would send into the void
                _, ready, _ = select.select([], [self._master], [], _WRITE_WAIT_S)
                if not ready:
                    return False
                continue
            except OSError:
                return False
            view = view[n:]
        return True

    # ------------------------------------------------------------ streaming

    def _stream_loop(self) -> None:
        slot0 = 0.0
        base_ms = 0
        k = 0
        scheduled = False
        while not self._stop.is_set():
            with self._cond:
                active = self._streaming and "mute" not in self._faults and "vanish" not in self._faults
                if not active or self._reschedule:
                    scheduled = False
                    if active:
                        self._reschedule = False
                if not active:
                    self._cond.wait(0.5)
                    continue
                period_s = 1.0 / (self._rate_hz * self._time_scale)
                now = time.monotonic()
                if not scheduled:
                    slot0, k, scheduled = now, 0, True
                    base_ms = round((now - self._t0) * self._time_scale * 1000.0)
                due = slot0 + k * period_s
                if due > now:
                    self._cond.wait(due - now)
                    continue
                if now - due > _MAX_LAG_PERIODS * period_s:
                    # fell behind (a stalled machine): start a new schedule and say so
                    self._pending_flags |= af.FLAG_OVERRUN
                    slot0, k = now, 0
                    base_ms = round((now - self._t0) * self._time_scale * 1000.0)
                tick_ms = (base_ms + round(k * 1000.0 / self._rate_hz)) % (1 << 32)
                k += 1
                flags = self._pending_flags
                self._pending_flags = 0
                excitation_a = self._excitation_a
                faults = dict(self._faults)
                seq = self._seq
                self._seq = (self._seq + 1) % (1 << 16)
                if faults.get("badsum") is not None:
                    left = faults["badsum"] - 1  # type: ignore[operator]
                    if left <= 0:
                        del self._faults["badsum"]
                    else:
                        self._faults["badsum"] = left
                self._frames_sent += 1
                # take the pty before letting go of the settings: a reply to a
                # command that changes them then goes out after this frame, and
                # every later frame is made with the new settings
                self._io.acquire()
            try:
                frame = self._measure(seq, tick_ms, flags, excitation_a)
                self._send_frame(frame, faults, period_s)
            finally:
                self._io.release()

    def _measure(self, seq: int, tick_ms: int, flags: int, excitation_a: float) -> af.Frame:
        counts: list[int] = []
        codes: list[str] = []
        lsb_ohm = self._reference_ohm / (1 << (self._bits - 1))
        for name in self._inputs:
            ohm = OPEN_OHM
            if name is not None:
                try:
                    ohm = self._plant.terminal(name, wiring=self._wiring, current_a=excitation_a).ohm
                except Exception as exc:  # noqa: BLE001 - a plant failure reads as an open input, seen in status()
                    self._plant_error = f"{name}: {exc!r}"
                    ohm = OPEN_OHM
            if self._noise_counts and math.isfinite(ohm):
                ohm += self._rng.gauss(0.0, self._noise_counts) * lsb_ohm
            c, code = af.ohm_to_counts(ohm, self._reference_ohm, bits=self._bits)
            counts.append(c)
            codes.append(code)
        if any(code != "G" for code in codes):
            flags |= af.FLAG_CHANNEL_FAULT
        return af.Frame(seq, tick_ms, flags, tuple(counts), "".join(codes))

    def _send_frame(self, frame: af.Frame, faults: dict[str, int | None], period_s: float) -> None:
        # caller holds _io
        line = af.encode_frame(frame, corrupt="badsum" in faults)
        rng = self._rng
        if "partial" in faults:
            if rng.random() < 1 / 3:
                line = line[:-2]  # runs into the next frame
            cuts = sorted(rng.sample(range(1, len(line)), k=2))
            pieces = [line[a:b] for a, b in zip([0, *cuts], [*cuts, len(line)])]
            pause_s = min(0.005, period_s / 8)
            for i, piece in enumerate(pieces):
                if i and self._stop.wait(pause_s):
                    return
                if not self._write(piece):
                    return
        elif not self._write(line):
            return
        if "garbage" in faults and rng.random() < 0.5:
            self._write(bytes(rng.randrange(256) for _ in range(rng.randint(1, 24))))

    # ------------------------------------------------------------ commands

    def _read_loop(self) -> None:
        buf = bytearray()
        seen_generation = -1
        while not self._stop.is_set():
            with self._io:
                fd, generation = self._master, self._generation
            if generation != seen_generation:
                buf.clear()  # a new pty, or none: what came before is gone
                seen_generation = generation
            if fd < 0:
                with self._cond:
                    self._cond.wait(0.5)
                continue
            try:
                ready, _, _ = select.select([fd, self._wake_r], [], [], 0.5)
            except (OSError, ValueError):
                continue  # the pty was closed under us; the generation tells
            if self._wake_r in ready:
                with contextlib.suppress(BlockingIOError, OSError):
                    os.read(self._wake_r, 4096)
            if fd not in ready:
                continue
            with self._io:
                if self._generation != generation:
                    continue
                try:
                    data = os.read(fd, 4096)
                except BlockingIOError:
                    continue
                except OSError:
                    data = b""
            if not data:
                self._stop.wait(0.05)  # nothing to read after all; do not spin
                continue
            with self._cond:
                muted = "mute" in self._faults
            if muted:
                continue
            buf += data
            for line in self._split_lines(buf):
                self._answer(line)

    @staticmethod
    def _split_lines(buf: bytearray) -> list[bytes]:
        lines = []
        while True:
            ends = [i for i in (buf.find(b"\r"), buf.find(b"\n")) if i >= 0]
            if not ends:
                break
            end = min(ends)
            lines.append(bytes(buf[:end]))
            del buf[: end + 1]
        if len(buf) > _MAX_COMMAND_BYTES:
            lines.append(bytes(buf))  # refused below as too long
            buf.clear()
        return [line for line in lines if line.strip()]

    def _answer(self, line: bytes) -> None:
        # the reply is written before _cond is let go, so it leaves before the
        # first frame made with the new settings (lock order: _cond, then _io)
        with self._cond:
            if len(line) > _MAX_COMMAND_BYTES:
                reply = af.encode_refusal("?", f"command longer than {_MAX_COMMAND_BYTES} bytes")
            else:
                cmd = af.parse_command(line)
                if isinstance(cmd, af.FrameError):
                    reply = af.encode_refusal(_word_of(line), f"{cmd.reason}: {cmd.detail}")
                else:
                    reply = self._execute(cmd)
            with self._io:
                sent = self._write(reply)
            if sent:
                self._replies_sent += 1

    def _execute(self, cmd: af.Command) -> bytes:
        # caller holds _cond
        word, args = cmd.word, cmd.args
        if word in ("WHO", "CHANS", "REF", "GO", "HALT") and args:
            return af.encode_refusal(word, f"{word} takes no argument, got {' '.join(args)!r}")
        if word in ("RATE", "EXC") and len(args) > 1:
            return af.encode_refusal(word, f"{word} takes one number at most, got {' '.join(args)!r}")
        if word == "WHO":
            return af.encode_reply(
                word,
                [("maker", MAKER), ("model", MODEL), ("serial", self._serial_number), ("firmware", FIRMWARE)],
            )
        if word == "CHANS":
            return af.encode_reply(word, [("n", str(len(self._inputs)))])
        if word == "REF":
            return af.encode_reply(
                word,
                [
                    ("ohm", _fmt(self._reference_ohm)),
                    ("bits", str(self._bits)),
                    ("a", _fmt(self._excitation_a)),
                    ("wiring", str(self._wiring)),
                ],
            )
        if word == "RATE":
            if args:
                try:
                    self._rate_hz = self._check_rate(float(args[0]))
                except (ValueError, InputError):
                    lo, hi = RATE_RANGE_HZ
                    return af.encode_refusal(word, f"rate {args[0]!r} is not a number of frames/s in {lo}..{hi}")
                self._changed()
            return af.encode_reply(word, [("hz", _fmt(self._rate_hz))])
        if word == "EXC":
            if args:
                try:
                    self._excitation_a = self._check_excitation(float(args[0]))
                except (ValueError, InputError):
                    lo, hi = EXCITATION_RANGE_A
                    return af.encode_refusal(word, f"excitation {args[0]!r} is not a current in A in {lo}..{hi}")
                self._changed()
            return af.encode_reply(word, [("a", _fmt(self._excitation_a))])
        if word in ("GO", "HALT"):
            go = word == "GO"
            if go and not self._streaming:
                self._reschedule = True
                self._pending_flags |= af.FLAG_STREAM_START
            self._streaming = go
            self._cond.notify_all()
            return af.encode_reply(word, [("streaming", "1" if go else "0")])
        return af.encode_refusal(word, f"unknown command; known: {' '.join(af.COMMANDS)}")

    def _changed(self) -> None:
        # caller holds _cond
        self._reschedule = True
        self._pending_flags |= af.FLAG_CONFIG_CHANGED
        self._cond.notify_all()

    @staticmethod
    def _check_rate(rate_hz: float) -> float:
        lo, hi = RATE_RANGE_HZ
        if not (math.isfinite(rate_hz) and lo <= rate_hz <= hi):
            raise InputError(f"rate {rate_hz!r} frames/s is outside {lo}…{hi}")
        return float(rate_hz)

    @staticmethod
    def _check_excitation(current_a: float) -> float:
        lo, hi = EXCITATION_RANGE_A
        if not (math.isfinite(current_a) and lo <= current_a <= hi):
            raise InputError(f"excitation {current_a!r} A is outside {lo}…{hi} A")
        return float(current_a)


def _word_of(line: bytes) -> str:
    """The command word of a line the board refuses, for the refusal; '?' when unreadable."""
    text = line.split(b"~", 1)[0].decode("ascii", "replace").split()
    word = text[0].upper() if text else ""
    return word if re.fullmatch(r"[A-Z][A-Z0-9]{0,15}", word) else "?"


def main(argv: Sequence[str] | None = None) -> int:
    """Run a board on a demo plant until interrupted; print the device and the control port."""
    parser = argparse.ArgumentParser(prog="python -m simulators.adc", description=main.__doc__)
    parser.add_argument("--inputs", type=int, default=4, help="number of inputs (default 4)")
    parser.add_argument("--rate", type=float, default=1.0, help="frames per second (default 1)")
    parser.add_argument("--control-port", type=int, default=0, help="loopback control port (default: any free)")
    parser.add_argument("--link", default=None, help="keep a symlink to the pty here")
    args = parser.parse_args(argv)
    # Pt100s between 0 °C and about 100 °C (IEC 60751: 100.00 and 138.51 ohm)
    values = {f"rtd{i + 1}": 100.0 + 38.5 * i / max(args.inputs - 1, 1) for i in range(args.inputs)}
    plant = FixedPlant(values)
    with (
        AdcBoardSimulator(plant, list(values), rate_hz=args.rate, link_path=args.link) as board,
        ControlServer(board.commands(), port=args.control_port) as control,
    ):
        host, port = control.address
        print(f"device {board.device_path}", flush=True)
        if board.link_path:
            print(f"link {board.link_path}", flush=True)
        print(f"control {host}:{port}", flush=True)
        stop = threading.Event()
        # SIGTERM (a service manager, ``timeout``) closes the board as Ctrl-C does
        signal.signal(signal.SIGTERM, lambda *_: stop.set())
        with contextlib.suppress(KeyboardInterrupt):
            while not stop.wait(0.5):
                pass
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
