"""A SCPI ohmmeter with a multiplexer card, served on a raw TCP socket for pyvisa-py to reach.

The simulated instrument is the "Larchmere Instruments LM-2470", an invented
maker and model. It measures 2-wire (``RESistance``) and 4-wire
(``FRESistance``) resistance on five ranges, and DC volts (``VOLTage:DC``,
100 mV … 1000 V: a thermocouple's emf from a plant that has ``emf_v``; an
open thermocouple reads as an overload), drives the range's test current
through the sensor (so a Pt1000 on a 1 mA range self-heats), integrates for a
number of power-line cycles (noise falls, reading time grows) and scans the
channels of a multiplexer card, each wired to one sensor of a ``Plant``.

Faults for driver tests are injected while it runs, by method or through the
``CommandTable`` from ``commands()``: ``fault drop``, ``fault mute``,
``fault late SECONDS``, ``fault garbage``, ``fault reset``, ``clear``,
``status``.

One message is one line ending in ``\\n``; each reply line ends in ``\\n``.
Several clients may connect; their messages are run one at a time.
"""

from __future__ import annotations

import dataclasses
import ipaddress
import json
import math
import random
import selectors
import socket
import threading
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from soaklog.simulators import scpi
from soaklog.simulators.control import CommandTable, ControlError
from soaklog.simulators.plant import Plant
from soaklog.simulators.scpi import ScpiError

__all__ = [
    "FIRMWARE",
    "MAKER",
    "MODEL",
    "NPLC_LIMITS",
    "OVER_RANGE",
    "RANGES_OHM",
    "TEST_CURRENT_A",
    "DmmSimulator",
]

#: an invented maker and model; any likeness to a real company is unintended
MAKER = "Larchmere Instruments"
MODEL = "LM-2470"
FIRMWARE = "1.0"

#: the resistance ranges, in ohm
RANGES_OHM: tuple[float, ...] = (1e2, 1e3, 1e4, 1e5, 1e6)
#: test current per range: typical of 6½-digit bench meters (common practice,
#: no published source; a real meter's data sheet gives its own)
TEST_CURRENT_A: Mapping[float, float] = {1e2: 1e-3, 1e3: 1e-3, 1e4: 1e-4, 1e5: 1e-5, 1e6: 5e-6}
#: readings up to 120 % of the range are shown before overload (common practice)
OVER_RANGE = 1.2
#: integration time limits and default in power-line cycles (common practice)
NPLC_LIMITS = (0.02, 100.0)
NPLC_DEFAULT = 10.0
#: the range ``DEF`` selects and a fresh channel starts from
RANGE_DEFAULT_OHM = 1e3
#: noise of one reading in ppm of range at 10 PLC; it falls as 1/sqrt(NPLC),
#: as white noise averaged over the integration time does (invented level)
NOISE_PPM_AT_10_PLC = 1.0
#: SCPI-1999 SYSTem:VERSion? answers the SCPI year and revision it follows
SCPI_VERSION = "1999.0"
#: a line this long without a newline is thrown away with -363
MAX_INPUT_BYTES = 1 << 16

Function = Literal["RES", "FRES", "VOLT"]
_FUNCTION_NAMES: dict[Function, str] = {"RES": "RESistance", "FRES": "FRESistance", "VOLT": "VOLTage[:DC]"}
_WIRING: dict[Function, int] = {"RES": 2, "FRES": 4, "VOLT": 2}
#: the DC volts ranges, in V (thermocouples read on the 100 mV range)
RANGES_V: tuple[float, ...] = (0.1, 1.0, 10.0, 100.0, 1000.0)


@dataclass
class _Settings:
    """One function's settings on one channel (mutable: it is instrument state)."""

    range_ohm: float = RANGE_DEFAULT_OHM  # the fixed range, or the one autorange chose last
    auto: bool = True
    nplc: float = NPLC_DEFAULT
    ocomp: bool = False


@dataclass
class _Channel:
    function: Function = "FRES"
    res: _Settings = field(default_factory=_Settings)
    fres: _Settings = field(default_factory=_Settings)
    volt: _Settings = field(default_factory=lambda: _Settings(range_ohm=RANGES_V[0]))  # its range in V
    current_a: float = 0.0  # the test current of the last reading

    def settings(self, function: Function | None = None) -> _Settings:
        f = function or self.function
        return self.fres if f == "FRES" else self.volt if f == "VOLT" else self.res


def _noise_ppm(nplc: float) -> float:
    return NOISE_PPM_AT_10_PLC * math.sqrt(10.0 / nplc)


def _range_for_v(value_v: float) -> float:
    """The smallest DC volts range that holds ``value_v``."""
    if not (0.0 <= value_v <= RANGES_V[-1] * OVER_RANGE):
        raise ScpiError(-222, f"range {value_v:g} V; ranges are 100 mV to 1000 V")
    return next((r for r in RANGES_V if value_v <= r), RANGES_V[-1])


def _range_for(value_ohm: float) -> float:
    """The smallest range that holds ``value_ohm`` at full scale."""
    if not (0.0 <= value_ohm <= RANGES_OHM[-1] * OVER_RANGE):
        raise ScpiError(-222, f"range {value_ohm:g} ohm; ranges are 100 ohm to 1 Mohm")
    return next(r for r in RANGES_OHM if value_ohm <= r) if value_ohm <= RANGES_OHM[-1] else RANGES_OHM[-1]


def _require_loopback(host: str) -> None:
    try:
        addr = ipaddress.ip_address(socket.gethostbyname(host))
    except (OSError, ValueError) as exc:
        raise ValueError(f"simulator host {host!r} does not resolve; use 127.0.0.1") from exc
    if not addr.is_loopback:
        raise ValueError(f"the simulated meter listens on loopback only, not {host!r}; use 127.0.0.1")


class DmmSimulator:
    """The LM-2470 meter on a loopback TCP port, measuring a ``Plant`` through its multiplexer card.

    Args:
        plant: the world the inputs are wired to.
        channel_map: card channel number -> plant channel name, e.g. ``{101: "pt1", 102: "pt2"}``.
        host: a loopback address to listen on.
        port: the TCP port; 0 picks a free one (see ``address`` and ``resource``).
        serial: the serial number field of ``*IDN?``.
        time_scale: wall-clock seconds slept per simulated second of integration
            (1 is real time; small values keep tests fast; 0 does not sleep).
        line_hz: the power-line frequency that sets one PLC.
        noise_scale: multiplies the reading noise (0 gives noiseless readings).
        thermal_emf_v: the thermal EMF in the input circuit; without offset
            compensation it adds ``thermal_emf_v / current`` ohm to a reading.
        seed: seeds the noise and garbage generators for repeatable runs.
        error_queue_size: entries the error queue holds before -350.

    Raises:
        ValueError: a non-loopback host, an empty map, a channel name the plant
            does not have, or a negative scale.
    """

    def __init__(
        self,
        plant: Plant,
        channel_map: Mapping[int, str],
        *,
        host: str = "127.0.0.1",
        port: int = 0,
        serial: str = "SIM-0001",
        time_scale: float = 1.0,
        line_hz: float = 50.0,
        noise_scale: float = 1.0,
        thermal_emf_v: float = 2e-6,
        seed: int | None = None,
        error_queue_size: int = 20,
    ) -> None:
        _require_loopback(host)
        if not channel_map:
            raise ValueError("channel_map is empty; map at least one card channel to a plant channel: {101: 'pt1'}")
        known = set(plant.channels())
        for number, name in channel_map.items():
            if not isinstance(number, int) or number <= 0:
                raise ValueError(f"card channel {number!r} is not a positive integer; use numbers like 101")
            if name not in known:
                raise ValueError(
                    f"channel {number} is mapped to {name!r}, which the plant does not have; known: {sorted(known)}"
                )
        if time_scale < 0 or line_hz <= 0 or noise_scale < 0:
            raise ValueError(
                f"time_scale ({time_scale}) and noise_scale ({noise_scale}) must be >= 0 and line_hz ({line_hz}) > 0"
            )
        if any(c in serial for c in ",;\n") or not serial.isascii():
            raise ValueError(f"serial {serial!r} must be ASCII without ',', ';' or newlines (it is an *IDN? field)")
        self._plant = plant
        self._map = dict(sorted(channel_map.items()))
        self._serial = serial
        self._time_scale = float(time_scale)
        self._line_hz = float(line_hz)
        self._noise_scale = float(noise_scale)
        self._emf_v = float(thermal_emf_v)
        self._rng = np.random.default_rng(seed)
        self._garbage_rng = random.Random(seed)

        self._state_lock = threading.RLock()
        self._errors = scpi.ErrorQueue(error_queue_size)
        self._status = scpi.StatusRegisters()
        self._channels: dict[int, _Channel] = {}
        self._scan: list[int] = []
        self._closed: int | None = None
        self._readings: list[float] | None = None
        self._responses_pending = False
        self._power_on_state()

        self._fault_lock = threading.Lock()
        self._muted = False
        self._garbage = False
        self._late_s = 0.0

        self._tree = scpi.CommandTree()
        self._handlers: dict[str, Callable[[Sequence[str]], str | None]] = {}
        self._register_commands()
        self._table = self._control_table()

        self._stop = threading.Event()
        self._conn_lock = threading.Lock()
        self._conns: set[socket.socket] = set()
        self._threads: list[threading.Thread] = []
        self._serve_thread: threading.Thread | None = None
        self._listener = socket.create_server((host, port))
        self._listener.setblocking(False)
        bound_host, bound_port = self._listener.getsockname()[:2]
        self._address = (str(bound_host), int(bound_port))
        self._wake_r, self._wake_w = socket.socketpair()

    # --- addressing and lifetime ----------------------------------------------

    @property
    def address(self) -> tuple[str, int]:
        """The ``(host, port)`` the meter listens on."""
        return self._address

    @property
    def resource(self) -> str:
        """The VISA resource string, ``TCPIP0::127.0.0.1::PORT::SOCKET``."""
        host, port = self.address
        return f"TCPIP0::{host}::{port}::SOCKET"

    @property
    def identity(self) -> str:
        """What ``*IDN?`` answers: maker, model, serial, firmware (IEEE 488.2-1992, 10.14)."""
        return f"{MAKER},{MODEL},{self._serial},{FIRMWARE}"

    def serve_forever(self) -> None:
        """Accept and serve clients until ``close()``; each client gets a thread."""
        with selectors.DefaultSelector() as sel:
            sel.register(self._listener, selectors.EVENT_READ)
            sel.register(self._wake_r, selectors.EVENT_READ)
            while not self._stop.is_set():
                for key, _ in sel.select():
                    if key.fileobj is self._wake_r or self._stop.is_set():
                        return
                    try:
                        conn, _addr = self._listener.accept()
                    except (BlockingIOError, InterruptedError):
                        continue
                    except OSError:
                        return
                    conn.setblocking(True)
                    # Replies are short lines: send each at once rather than
                    # let Nagle's algorithm hold it for the next.
                    conn.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
                    with self._conn_lock:
                        self._conns.add(conn)
                        self._threads = [t for t in self._threads if t.is_alive()]
                        thread = threading.Thread(
                            target=self._serve_client, args=(conn,), name="dmm-client", daemon=True
                        )
                        self._threads.append(thread)
                    thread.start()

    def start(self) -> DmmSimulator:
        """Serve in a background thread and return at once."""
        if self._serve_thread is None:
            self._serve_thread = threading.Thread(target=self.serve_forever, name="dmm-accept", daemon=True)
            self._serve_thread.start()
        return self

    def close(self) -> None:
        """Stop serving: close the port and every client connection."""
        if self._stop.is_set():
            return
        self._stop.set()
        try:
            self._wake_w.send(b"x")
        except OSError:
            pass
        if self._serve_thread is not None:
            self._serve_thread.join(timeout=5.0)
        self._listener.close()
        self._drop_connections()
        with self._conn_lock:
            threads = list(self._threads)
        for thread in threads:
            thread.join(timeout=5.0)
        self._wake_r.close()
        self._wake_w.close()

    def __enter__(self) -> DmmSimulator:
        return self.start()

    def __exit__(self, *exc: object) -> None:
        self.close()

    # --- faults -----------------------------------------------------------------

    def fault_drop(self) -> int:
        """Close every client connection now; returns how many were open. New connections are accepted."""
        return self._drop_connections()

    def fault_mute(self) -> None:
        """Keep reading messages but neither run nor answer them."""
        with self._fault_lock:
            self._muted = True

    def fault_late(self, seconds: float) -> None:
        """Answer every query ``seconds`` late (wall-clock, not scaled)."""
        if not (math.isfinite(seconds) and seconds >= 0):
            raise ValueError(f"late delay must be a finite number of seconds >= 0, not {seconds!r}")
        with self._fault_lock:
            self._late_s = float(seconds)

    def fault_garbage(self) -> None:
        """Answer every query with random bytes, some of them not ASCII, then a newline."""
        with self._fault_lock:
            self._garbage = True

    def fault_reset(self) -> None:
        """Behave as after power-up: configuration lost, error queue empty, PON set. Faults stay."""
        with self._state_lock:
            self._power_on_state()

    def clear_faults(self) -> None:
        """Remove every fault (mute, late, garbage)."""
        with self._fault_lock:
            self._muted = False
            self._garbage = False
            self._late_s = 0.0

    def active_faults(self) -> list[str]:
        with self._fault_lock:
            faults = []
            if self._garbage:
                faults.append("garbage")
            if self._late_s > 0:
                faults.append("late")
            if self._muted:
                faults.append("mute")
            return faults

    def status(self) -> dict[str, object]:
        """Active faults and the configuration, as JSON-ready data."""
        with self._fault_lock:
            late_s = self._late_s
        with self._state_lock:
            channels = {
                str(n): {
                    "sensor": self._map[n],
                    "function": ch.function,
                    "current_a": ch.current_a,
                    **{f.lower(): dataclasses.asdict(ch.settings(f)) for f in ("RES", "FRES")},
                }
                for n, ch in self._channels.items()
            }
            state = {
                "scan": list(self._scan),
                "closed": self._closed,
                "errors_queued": len(self._errors),
                "esr": self._status.esr,
                "channels": channels,
            }
        with self._conn_lock:
            connections = len(self._conns)
        return {
            "faults": self.active_faults(),
            "late_s": late_s,
            "identity": self.identity,
            "resource": self.resource,
            "connections": connections,
            **state,
        }

    def commands(self) -> CommandTable:
        """The run-time control commands, for a ``ControlServer``: ``fault …``, ``clear``, ``status``."""
        return self._table

    def _control_table(self) -> CommandTable:
        table = CommandTable()

        def fault(args: Sequence[str]) -> str:
            if not args:
                raise ControlError("fault needs a kind: drop, mute, late SECONDS, garbage, reset")
            kind = args[0].lower()
            rest = args[1:]
            if kind == "late":
                if len(rest) != 1:
                    raise ControlError("fault late needs one delay in seconds, e.g. 'fault late 0.5'")
                try:
                    self.fault_late(float(rest[0]))
                except ValueError as exc:
                    raise ControlError(f"bad delay {rest[0]!r}: {exc}") from None
                return f"late {float(rest[0]):g}"
            if rest:
                raise ControlError(f"fault {kind} takes no arguments, got {' '.join(rest)!r}")
            if kind == "drop":
                return f"drop {self.fault_drop()}"
            if kind == "mute":
                self.fault_mute()
            elif kind == "garbage":
                self.fault_garbage()
            elif kind == "reset":
                self.fault_reset()
            else:
                raise ControlError(f"unknown fault {kind!r}; known: drop, garbage, late, mute, reset")
            return kind

        def clear(args: Sequence[str]) -> str:
            if args:
                raise ControlError("clear takes no arguments")
            self.clear_faults()
            return "cleared"

        def status(args: Sequence[str]) -> str:
            if args:
                raise ControlError("status takes no arguments")
            return json.dumps(self.status(), sort_keys=True)

        table.register("fault", fault)
        table.register("clear", clear)
        table.register("status", status)
        return table

    # --- connections --------------------------------------------------------------

    def _drop_connections(self) -> int:
        with self._conn_lock:
            conns = list(self._conns)
        for conn in conns:
            try:
                conn.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass
        return len(conns)

    def _serve_client(self, conn: socket.socket) -> None:
        buf = bytearray()
        try:
            while not self._stop.is_set():
                chunk = conn.recv(65536)
                if not chunk:
                    return
                buf += chunk
                while (end := buf.find(b"\n")) >= 0:
                    line = bytes(buf[:end])
                    del buf[: end + 1]
                    self._on_line(conn, line)
                if len(buf) > MAX_INPUT_BYTES:
                    buf.clear()
                    with self._state_lock:
                        self._record(ScpiError(-363, f"more than {MAX_INPUT_BYTES} bytes without a newline"))
        except OSError:
            return
        finally:
            with self._conn_lock:
                self._conns.discard(conn)
            conn.close()

    def _on_line(self, conn: socket.socket, line: bytes) -> None:
        with self._fault_lock:
            muted, garbage, late_s = self._muted, self._garbage, self._late_s
        if muted:
            return
        reply = self.execute(line.rstrip(b"\r"))
        if reply is None:
            return
        data = self._garbage_bytes() if garbage else reply.encode("ascii") + b"\n"
        if late_s > 0 and self._stop.wait(late_s):
            return
        conn.sendall(data)

    def _garbage_bytes(self) -> bytes:
        rng = self._garbage_rng
        # printable and high bytes, never a line end, at least one not ASCII
        body = [rng.choice([b for b in range(0x20, 0x100) if b != 0x7F]) for _ in range(rng.randint(8, 40))]
        body[rng.randrange(len(body))] = rng.randrange(0x80, 0x100)
        return bytes(body) + b"\n"

    # --- program messages -------------------------------------------------------

    def execute(self, message: bytes | str) -> str | None:
        """Run one program message and return its response line (no newline), or None when it has no queries."""
        if isinstance(message, bytes):
            try:
                text = message.decode("ascii")
            except UnicodeDecodeError:
                with self._state_lock:
                    self._record(ScpiError(-101, "byte above 0x7F in the message"))
                return None
        else:
            text = message
        responses: list[str] = []
        with self._state_lock:
            for item in scpi.parse_message(text, self._tree):
                if isinstance(item, ScpiError):
                    self._record(item)
                    break
                self._responses_pending = bool(responses)
                try:
                    out = self._handlers[item.pattern](item.params)
                except ScpiError as exc:
                    self._record(exc)
                    if scpi.ends_message(exc.code):
                        break
                    continue
                except Exception as exc:  # a plant failure must not stop the server
                    self._record(ScpiError(-300, f"{type(exc).__name__}: {exc}"))
                    continue
                if out is not None:
                    responses.append(out)
        return ";".join(responses) if responses else None

    def _record(self, error: ScpiError) -> None:
        self._errors.push(error.code, error.detail)
        self._status.record_error(error.code)

    def _power_on_state(self) -> None:
        self._errors.clear()
        self._status.power_on()
        self._reset_configuration()

    def _reset_configuration(self) -> None:
        self._channels = {n: _Channel() for n in self._map}
        self._scan = []
        self._closed = None
        self._readings = None

    # --- the command set ---------------------------------------------------------

    def _register_commands(self) -> None:
        def add(pattern: str, handler: Callable[[Sequence[str]], str | None]) -> None:
            self._tree.add(pattern)
            self._handlers[pattern] = handler

        add("*IDN?", self._no_params(lambda: self.identity))
        add("*RST", self._no_params(self._reset_configuration))
        add("*CLS", self._no_params(self._cls))
        add("*OPC", self._no_params(self._opc))
        add("*OPC?", self._no_params(lambda: "1"))  # every operation here ends before the next
        add("*WAI", self._no_params(lambda: None))
        add("*TST?", self._no_params(lambda: "0"))  # IEEE 488.2-1992, 10.38: 0 is a pass
        add("*ESR?", self._no_params(lambda: str(self._status.read_esr())))
        add("*ESE", lambda p: self._set_register("ese", p))
        add("*ESE?", self._no_params(lambda: str(self._status.ese)))
        add("*SRE", lambda p: self._set_register("sre", p))
        add("*SRE?", self._no_params(lambda: str(self._status.sre)))
        add("*STB?", self._no_params(self._stb))
        add("SYSTem:ERRor[:NEXT]?", self._no_params(self._errors.pop_formatted))
        add("SYSTem:VERSion?", self._no_params(lambda: SCPI_VERSION))
        add("CONFigure?", self._conf_query)
        add("INITiate[:IMMediate]", self._no_params(self._initiate))
        add("FETCh?", self._no_params(self._fetch))
        add("READ?", self._no_params(self._read))
        add("[SENSe:]FUNCtion[:ON]", self._function)
        add("[SENSe:]FUNCtion[:ON]?", self._function_query)
        for f, name in _FUNCTION_NAMES.items():
            add(f"CONFigure:{name}", lambda p, f=f: self._configure(f, p))
            add(f"MEASure:{name}?", lambda p, f=f: self._measure_query(f, p))
            add(f"[SENSe:]{name}:RANGe[:UPPer]", lambda p, f=f: self._set_range(f, p))
            add(f"[SENSe:]{name}:RANGe[:UPPer]?", lambda p, f=f: self._range_query(f, p))
            add(f"[SENSe:]{name}:RANGe:AUTO", lambda p, f=f: self._set_flag(f, "auto", p))
            add(f"[SENSe:]{name}:RANGe:AUTO?", lambda p, f=f: self._flag_query(f, "auto", p))
            add(f"[SENSe:]{name}:NPLCycles", lambda p, f=f: self._set_nplc(f, p))
            add(f"[SENSe:]{name}:NPLCycles?", lambda p, f=f: self._nplc_query(f, p))
            add(f"[SENSe:]{name}:OCOMpensated", lambda p, f=f: self._set_flag(f, "ocomp", p))
            add(f"[SENSe:]{name}:OCOMpensated?", lambda p, f=f: self._flag_query(f, "ocomp", p))
        add("ROUTe:SCAN", self._route_scan)
        add("ROUTe:SCAN?", self._no_params(lambda: scpi.format_channel_list(self._scan)))
        add("ROUTe:CLOSe", self._route_close)
        add("ROUTe:CLOSe?", self._route_close_query)
        add("ROUTe:OPEN", self._route_open)

    @staticmethod
    def _no_params(fn: Callable[[], str | None]) -> Callable[[Sequence[str]], str | None]:
        def handler(params: Sequence[str]) -> str | None:
            if params:
                raise ScpiError(-108, ",".join(params))
            return fn()

        return handler

    # IEEE 488.2 common commands

    def _cls(self) -> None:
        # IEEE 488.2-1992, 10.3; SCPI-1999 vol. 1, 4.1.3.2: *CLS empties the error queue too
        self._status.esr = 0
        self._errors.clear()

    def _opc(self) -> None:
        self._status.esr |= scpi.StatusRegisters.OPC

    def _stb(self) -> str:
        stb = self._status.status_byte(errors_queued=len(self._errors) > 0, message_available=self._responses_pending)
        return str(stb)

    def _set_register(self, name: Literal["ese", "sre"], params: Sequence[str]) -> None:
        value = self._one_number(params)
        if not 0 <= round(value) <= 255:
            raise ScpiError(-222, f"{params[0]}; the register takes 0 to 255")
        bits = round(value)
        if name == "sre":
            bits &= ~scpi.StatusRegisters.MSS  # IEEE 488.2-1992, 11.3.2: bit 6 of SRE is not settable
        setattr(self._status, name, bits)

    # parameters

    @staticmethod
    def _one_number(params: Sequence[str]) -> float:
        """Exactly one plain number, no suffix and no keyword."""
        if not params:
            raise ScpiError(-109)
        if len(params) > 1:
            raise ScpiError(-108, ",".join(params[1:]))
        value = scpi.parse_numeric(params[0], keywords=())
        assert isinstance(value, float)  # with no keywords, a word raises -224
        return value

    def _split_channels(self, params: Sequence[str], max_positional: int) -> tuple[list[str], list[int] | None]:
        positional = list(params)
        channels: list[int] | None = None
        if positional and scpi.is_channel_list(positional[-1]):
            channels = list(scpi.parse_channel_list(positional.pop()))
            self._check_channels(channels)
        if any(scpi.is_channel_list(p) for p in positional):
            raise ScpiError(-103, "the channel list goes last")
        if len(positional) > max_positional:
            raise ScpiError(-108, ",".join(positional[max_positional:]))
        return positional, channels

    def _check_channels(self, channels: Sequence[int]) -> None:
        for n in channels:
            if n not in self._map:
                card = scpi.format_channel_list(self._map)
                raise ScpiError(-224, f"channel {n} is not on the card; card channels: {card}")

    def _targets(self, channels: list[int] | None) -> list[int]:
        """Channels a setting applies to: the list given, else the scan list, the closed channel, or all."""
        if channels:
            return channels
        if self._scan:
            return list(self._scan)
        if self._closed is not None:
            return [self._closed]
        return list(self._map)

    # configuration

    def _configure(self, function: Function, params: Sequence[str]) -> None:
        positional, channels = self._split_channels(params, 2)
        auto, range_ohm = self._parse_range(positional[0] if positional else "", function)
        targets = self._targets(channels)
        resolution = positional[1] if len(positional) > 1 else ""
        nplc = self._nplc_for_resolution(resolution, range_ohm or self._present_range(targets, function))
        for n in targets:
            ch = self._channels[n]
            ch.function = function
            s = ch.settings(function)
            s.auto = auto
            if range_ohm is not None:
                s.range_ohm = range_ohm
            s.nplc = nplc
        if channels:
            self._scan = list(channels)
            self._closed = None
        self._readings = None

    def _present_range(self, targets: Sequence[int], function: Function) -> float:
        return self._channels[targets[0]].settings(function).range_ohm

    @staticmethod
    def _parse_range(token: str, function: Function = "FRES") -> tuple[bool, float | None]:
        """(autorange, fixed range or None) from a CONFigure range parameter."""
        if not token.strip():
            return True, None
        volts = function == "VOLT"
        ranges = RANGES_V if volts else RANGES_OHM
        value = scpi.parse_numeric(token, unit="V" if volts else "OHM",
                                   keywords=("MINimum", "MAXimum", "DEFault", "AUTO"))
        if value in ("DEF", "AUTO"):
            return True, None
        if value == "MIN":
            return False, ranges[0]
        if value == "MAX":
            return False, ranges[-1]
        assert isinstance(value, float)
        return False, _range_for_v(value) if volts else _range_for(value)

    @staticmethod
    def _nplc_for_resolution(token: str, range_ohm: float) -> float:
        if not token.strip():
            return NPLC_DEFAULT
        value = scpi.parse_numeric(token, unit="OHM")
        if value == "DEF":
            return NPLC_DEFAULT
        if value == "MIN":  # the finest resolution takes the longest integration
            return NPLC_LIMITS[1]
        if value == "MAX":
            return NPLC_LIMITS[0]
        assert isinstance(value, float)
        if value <= 0:
            raise ScpiError(-222, f"resolution {token}; it must be > 0")
        # invert the noise model: ppm(nplc) = NOISE_PPM_AT_10_PLC * sqrt(10 / nplc)
        ppm = value / range_ohm * 1e6
        nplc = 10.0 * (NOISE_PPM_AT_10_PLC / ppm) ** 2
        if nplc > NPLC_LIMITS[1] * (1 + 1e-9):
            best = _noise_ppm(NPLC_LIMITS[1]) * range_ohm * 1e-6
            raise ScpiError(-222, f"resolution {token} is finer than {best:.3g} ohm on the {range_ohm:g} ohm range")
        return max(nplc, NPLC_LIMITS[0])

    def _conf_query(self, params: Sequence[str]) -> str:
        _, channels = self._split_channels(params, 0)
        targets = channels or self._targets(None)[:1]
        parts = []
        for n in targets:
            ch = self._channels[n]
            s = ch.settings()
            resolution = _noise_ppm(s.nplc) * s.range_ohm * 1e-6
            parts.append(f'"{ch.function} {scpi.format_number(s.range_ohm)},{scpi.format_number(resolution)}"')
        return ",".join(parts)

    def _function(self, params: Sequence[str]) -> None:
        positional, channels = self._split_channels(params, 1)
        if not positional:
            raise ScpiError(-109)
        word = positional[0].strip().strip("\"'")
        function = scpi.parse_keyword(word, list(_FUNCTION_NAMES.values()))
        for n in self._targets(channels):
            self._channels[n].function = "FRES" if function == "FRES" else "RES"
        self._readings = None

    def _function_query(self, params: Sequence[str]) -> str:
        _, channels = self._split_channels(params, 0)
        return ",".join(f'"{self._channels[n].function}"' for n in (channels or self._targets(None)[:1]))

    def _set_range(self, function: Function, params: Sequence[str]) -> None:
        positional, channels = self._split_channels(params, 1)
        if not positional:
            raise ScpiError(-109)
        volts = function == "VOLT"
        value = scpi.parse_numeric(positional[0], unit="V" if volts else "OHM")
        ranges = RANGES_V if volts else RANGES_OHM
        if isinstance(value, str):
            range_ohm = {"MIN": ranges[0], "MAX": ranges[-1], "DEF": ranges[0] if volts else RANGE_DEFAULT_OHM}[value]
        else:
            range_ohm = _range_for_v(value) if volts else _range_for(value)
        for n in self._targets(channels):
            s = self._channels[n].settings(function)
            s.range_ohm = range_ohm
            s.auto = False
        self._readings = None

    def _range_query(self, function: Function, params: Sequence[str]) -> str:
        positional, channels = self._split_channels(params, 1)
        if positional:
            word = scpi.parse_keyword(positional[0], ("MINimum", "MAXimum"))
            return scpi.format_number(RANGES_OHM[0] if word == "MIN" else RANGES_OHM[-1])
        targets = channels or self._targets(None)[:1]
        return ",".join(scpi.format_number(self._channels[n].settings(function).range_ohm) for n in targets)

    def _set_nplc(self, function: Function, params: Sequence[str]) -> None:
        positional, channels = self._split_channels(params, 1)
        if not positional:
            raise ScpiError(-109)
        value = scpi.parse_numeric(positional[0])
        if isinstance(value, str):
            nplc = {"MIN": NPLC_LIMITS[0], "MAX": NPLC_LIMITS[1], "DEF": NPLC_DEFAULT}[value]
        elif NPLC_LIMITS[0] <= value <= NPLC_LIMITS[1]:
            nplc = value
        else:
            raise ScpiError(-222, f"NPLC {positional[0]}; it takes {NPLC_LIMITS[0]:g} to {NPLC_LIMITS[1]:g}")
        for n in self._targets(channels):
            self._channels[n].settings(function).nplc = nplc
        self._readings = None

    def _nplc_query(self, function: Function, params: Sequence[str]) -> str:
        positional, channels = self._split_channels(params, 1)
        if positional:
            word = scpi.parse_keyword(positional[0], ("MINimum", "MAXimum"))
            return scpi.format_number(NPLC_LIMITS[0] if word == "MIN" else NPLC_LIMITS[1])
        targets = channels or self._targets(None)[:1]
        return ",".join(scpi.format_number(self._channels[n].settings(function).nplc) for n in targets)

    def _set_flag(self, function: Function, name: Literal["auto", "ocomp"], params: Sequence[str]) -> None:
        positional, channels = self._split_channels(params, 1)
        if not positional:
            raise ScpiError(-109)
        flag = scpi.parse_boolean(positional[0])
        for n in self._targets(channels):
            setattr(self._channels[n].settings(function), name, flag)
        self._readings = None

    def _flag_query(self, function: Function, name: Literal["auto", "ocomp"], params: Sequence[str]) -> str:
        _, channels = self._split_channels(params, 0)
        targets = channels or self._targets(None)[:1]
        return ",".join("1" if getattr(self._channels[n].settings(function), name) else "0" for n in targets)

    # routing

    def _route_scan(self, params: Sequence[str]) -> None:
        positional, channels = self._split_channels(params, 0)
        if channels is None:
            raise ScpiError(-109, "ROUTe:SCAN takes a channel list, e.g. (@101:120)")
        self._scan = list(channels)
        self._closed = None
        self._readings = None

    def _route_close(self, params: Sequence[str]) -> None:
        _, channels = self._split_channels(params, 0)
        if channels is None:
            raise ScpiError(-109, "ROUTe:CLOSe takes a channel list, e.g. (@105)")
        if len(channels) != 1:
            # closing two multiplexer channels would join their inputs
            raise ScpiError(-221, f"close one channel at a time, not {len(channels)}")
        self._closed = channels[0]
        self._scan = []
        self._readings = None

    def _route_close_query(self, params: Sequence[str]) -> str:
        _, channels = self._split_channels(params, 0)
        if channels is None:
            raise ScpiError(-109, "ROUTe:CLOSe? takes a channel list")
        return ",".join("1" if n == self._closed else "0" for n in channels)

    def _route_open(self, params: Sequence[str]) -> None:
        _, channels = self._split_channels(params, 0)
        if channels is None or self._closed in channels:
            self._closed = None

    # measuring

    def _measure_query(self, function: Function, params: Sequence[str]) -> str:
        self._configure(function, params)
        return self._read()

    def _read(self) -> str:
        self._initiate()
        return self._fetch()

    def _fetch(self) -> str:
        if self._readings is None:
            raise ScpiError(-230, "no readings; send INITiate or READ? first")
        return ",".join(scpi.format_number(v) for v in self._readings)

    def _initiate(self) -> None:
        if self._scan:
            channels = list(self._scan)
        elif self._closed is not None:
            channels = [self._closed]
        else:
            # no card channel chosen: the first one, as a meter without a card
            # measures its front terminals
            channels = [next(iter(self._map))]
        readings: list[float] = []
        busy_s = 0.0
        for n in channels:
            value, seconds = self._measure_channel(n)
            readings.append(value)
            busy_s += seconds
        self._readings = readings
        if busy_s * self._time_scale > 0:
            self._stop.wait(busy_s * self._time_scale)

    def _terminal(self, number: int, wiring: int, range_ohm: float) -> float:
        current_a = TEST_CURRENT_A[range_ohm]
        self._channels[number].current_a = current_a
        try:
            return self._plant.terminal(self._map[number], wiring=wiring, current_a=current_a).ohm
        except KeyError:
            raise ScpiError(-241, f"channel {number} ({self._map[number]!r}) is missing from the plant") from None

    def _measure_volts(self, number: int) -> tuple[float, float]:
        """One DC volts reading (a thermocouple's emf at the card's terminals) and its seconds."""
        ch = self._channels[number]
        s = ch.settings("VOLT")
        ch.current_a = 0.0
        emf = getattr(self._plant, "emf_v", None)
        if emf is None:
            raise ScpiError(-241, f"channel {number} ({self._map[number]!r}) has no voltage in this plant")
        try:
            e = float(emf(self._map[number]))
        except KeyError:
            raise ScpiError(-241, f"channel {number} ({self._map[number]!r}) is missing from the plant") from None
        seconds = s.nplc / self._line_hz
        if s.auto and math.isfinite(e):
            s.range_ohm = next((r for r in RANGES_V if abs(e) <= r * OVER_RANGE), RANGES_V[-1])
        if not (math.isfinite(e) and abs(e) <= s.range_ohm * OVER_RANGE):
            return math.inf, seconds  # an open thermocouple floats to an overload (the burnout check)
        if self._noise_scale > 0:
            e += float(self._rng.normal(0.0, self._noise_scale * _noise_ppm(s.nplc) * 1e-6 * s.range_ohm))
        return e, seconds

    def _measure_channel(self, number: int) -> tuple[float, float]:
        """One reading of one channel and the simulated seconds it took."""
        ch = self._channels[number]
        if ch.function == "VOLT":
            return self._measure_volts(number)
        s = ch.settings()
        wiring = _WIRING[ch.function]
        if s.auto:
            range_ohm, ohm = self._autorange(number, wiring, s.range_ohm)
            s.range_ohm = range_ohm
        else:
            range_ohm = s.range_ohm
            ohm = self._terminal(number, wiring, range_ohm)
        # offset compensation measures with the current on and off: twice the time
        seconds = s.nplc / self._line_hz * (2.0 if s.ocomp else 1.0)
        if not (math.isfinite(ohm) and ohm <= range_ohm * OVER_RANGE):
            return math.inf, seconds
        value = ohm
        if not s.ocomp:
            value += self._emf_v / TEST_CURRENT_A[range_ohm]
        if self._noise_scale > 0:
            sigma = self._noise_scale * _noise_ppm(s.nplc) * 1e-6 * range_ohm
            value += float(self._rng.normal(0.0, sigma))
        return value, seconds

    def _autorange(self, number: int, wiring: int, start_ohm: float) -> tuple[float, float]:
        """Pick the smallest range whose reading, at that range's current, is within 120 %.

        Starts from the range chosen last, so a steady input costs one reading;
        once it has moved up it does not move down again in the same reading
        (self-heating near a range edge would otherwise make it hunt).
        """
        i = RANGES_OHM.index(start_ohm)
        went_up = False
        while True:
            r = RANGES_OHM[i]
            ohm = self._terminal(number, wiring, r)
            fits = math.isfinite(ohm) and ohm <= r * OVER_RANGE
            if not fits:
                if i == len(RANGES_OHM) - 1:
                    return r, ohm
                i += 1
                went_up = True
                continue
            if not went_up and i > 0 and ohm <= RANGES_OHM[i - 1] * OVER_RANGE:
                i -= 1
                continue
            return r, ohm
