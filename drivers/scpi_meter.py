"""SCPI ohmmeters over VISA: a driver that recovers by itself (parsing and profiles: ``drivers.scpi_text``).

The driver opens the instrument through the driver layer's SCPI session
(``drivers.scpi_session``: pyvisa, the identity check, failures translated
once, the error queue), configures one fixed range (so the test current is
known), and reads one comma-separated reply per scan. Instrument trouble becomes a
status on the readings, never an exception: after a timeout or a lost link the
session is closed (never ``clear()``-ed, which hangs on a dead socket) and
re-opened after a capped exponential back-off, so a late answer can never be
taken for the reply to a later query.

Commands live in ``MeterProfile`` templates only; placeholders are
``{range}``, ``{channels}``, ``{nplc}`` and ``{state}``.
"""

from __future__ import annotations

import dataclasses
import threading
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Literal, TypeVar

from soaklog.errors import (
    ConnectionLost,
    InputError,
    InstrumentError,
    InstrumentTimeout,
)
from soaklog.drivers.base import STATUS_INDEX, Clock, Health, RawReading, SystemClock, failed_scan
from soaklog.drivers.scpi_text import (
    NOT_A_NUMBER,
    OVERLOAD,
    PROFILES,
    MeterProfile,
    format_channel_list,
    parse_error_entry,
    parse_reply,
    parse_scan,
    profile_named,
)
from soaklog.drivers.scpi_session import ReplyGarbled, ScpiSession
from soaklog.drivers.scpi_session import stream_state as _stream_state
from soaklog.drivers.scpi_text import shown as _shown


__all__ = [
    "OVERLOAD",
    "NOT_A_NUMBER",
    "PROFILES",
    "Backoff",
    "Clock",
    "MeterProfile",
    "ReplyGarbled",
    "ScpiMeter",
    "format_channel_list",
    "parse_error_entry",
    "parse_reply",
    "parse_scan",
    "profile_named",
]

#: IEEE 488.2-1992, 11.5.1.1 (from memory): event status register bits
_ESR_PON = 128
_ESR_ERRORS = 4 | 8 | 16 | 32  # query, device-dependent, execution, command error

# -------------------------------------------------------------------- the driver


@dataclass(frozen=True)
class Backoff:
    """Reconnect delays: ``initial_s``, multiplied by ``factor`` after each failure, at most ``max_s``."""

    initial_s: float = 1.0
    factor: float = 2.0
    max_s: float = 60.0

    def __post_init__(self) -> None:
        if not (self.initial_s >= 0 and self.factor >= 1 and self.max_s >= self.initial_s):
            raise InputError(f"back-off needs initial_s >= 0, factor >= 1 and max_s >= initial_s, got {self}")

    def delay_s(self, failures: int) -> float:
        """The wait after ``failures`` consecutive failures (1 for the first)."""
        return min(self.initial_s * self.factor ** max(failures - 1, 0), self.max_s)


_E = TypeVar("_E", bound=InstrumentError)
Wiring = Literal[2, 4]


class ScpiMeter:
    """One SCPI ohmmeter (with or without a scanner card) as a ``Driver``.

    Args:
        name: the instrument's name in messages and health (``dmm1``).
        resource: a VISA resource string, used as given.
        channels: the meter's own channel names in scan order (``"101"``…).
        wiring: 2 or 4: the meter's resistance function.
        range_ohm: a fixed range (the smallest that holds this value), or
            None for autorange, which changes the test current with the range.
        nplc: integration time in power-line cycles.
        offset_compensation: measure with the current on and off to cancel thermal EMFs.
        profile: the meter's command templates.
        timeout_s: how long one reply may take (a whole scan for ``READ?``).
        backend: the pyvisa backend (``@py``, ``file.yaml@sim``).
        clock: an object with ``utc_s()`` and ``monotonic_s()``.
        backoff: reconnect delays.
        test_current_a: range -> current table replacing the profile's.
    """

    def __init__(
        self,
        name: str,
        resource: str,
        channels: Sequence[str],
        *,
        wiring: Wiring = 4,
        range_ohm: float | None = 1000.0,
        nplc: float = 1.0,
        offset_compensation: bool = True,
        profile: MeterProfile = PROFILES["generic"],
        timeout_s: float = 5.0,
        backend: str = "@py",
        clock: Clock | None = None,
        backoff: Backoff = Backoff(),
        test_current_a: Mapping[float, float] | None = None,
        channel_settings: Mapping[str, tuple[Wiring, float | None]] | None = None,
        volt_channels: Mapping[str, float | None] | None = None,
    ) -> None:
        channels = tuple(str(c) for c in channels)
        if not channels or len(set(channels)) != len(channels):
            raise InputError(f"{name}: channels must be a non-empty list of distinct names, got {list(channels)}")
        if len(channels) > profile.max_channels:
            raise InputError(
                f"{name}: profile {profile.name!r} reads {profile.max_channels} channel(s), not {len(channels)}"
            )
        if wiring not in (2, 4):
            raise InputError(f"{name}: a meter measures 2- or 4-wire, got wiring={wiring!r}")
        if range_ohm is not None and not range_ohm > 0:
            raise InputError(f"{name}: range_ohm must be positive or None (autorange), got {range_ohm!r}")
        if not (nplc > 0 and timeout_s > 0):
            raise InputError(f"{name}: nplc ({nplc!r}) and timeout_s ({timeout_s!r}) must be positive")
        ocomp_template = profile.offset_compensation_4w if wiring == 4 else profile.offset_compensation_2w
        if offset_compensation and not ocomp_template:
            raise InputError(
                f"{name}: profile {profile.name!r} has no {wiring}-wire offset-compensation command; "
                "set offset_compensation = false or give the command"
            )
        if test_current_a is not None:
            profile = dataclasses.replace(profile, test_current_a=tuple(sorted(test_current_a.items())))
        self.name = name
        self.resource = resource
        self.channels = channels
        self.wiring = wiring
        self.range_ohm = range_ohm
        self.nplc = float(nplc)
        self.offset_compensation = offset_compensation
        self.profile = profile
        self.timeout_s = float(timeout_s)
        self.backend = backend
        self.current_a = profile.current_for_range(range_ohm)
        # per channel: (wiring, range); channels not named use the meter's own
        settings = dict(channel_settings or {})
        for ch, (w, r) in settings.items():
            if ch not in channels:
                raise InputError(f"{name}: settings for channel {ch!r}, which is not in the scan")
            if w not in (2, 4):
                raise InputError(f"{name}: channel {ch} wiring must be 2 or 4, got {w!r}")
            if r is not None and not r > 0:
                raise InputError(f"{name}: channel {ch} range must be positive or None, got {r!r}")
        self._settings: dict[str, tuple[Wiring, float | None]] = {
            ch: settings.get(ch, (wiring, range_ohm)) for ch in channels
        }
        # channels that measure DC volts (thermocouples), with their range (None: autorange)
        volts = dict(volt_channels or {})
        for ch, r in volts.items():
            if ch not in channels:
                raise InputError(f"{name}: a volts setting for channel {ch!r}, which is not in the scan")
            if r is not None and not r > 0:
                raise InputError(f"{name}: channel {ch} volts range must be positive or None, got {r!r}")
        if volts and not profile.configure_dcv:
            raise InputError(f"{name}: profile {profile.name!r} has no DC volts command (configure_dcv); "
                             "give it in commands to read thermocouples")
        self._volts = volts
        self._signed: tuple[bool, ...] | None = tuple(ch in volts for ch in channels) if volts else None
        self._currents: tuple[float | None, ...] = tuple(
            None if ch in volts else profile.current_for_range(self._settings[ch][1]) for ch in channels)
        self._wirings: tuple[int | None, ...] = tuple(None if ch in volts else self._settings[ch][0] for ch in channels)
        if not volts and len(set(self._settings.values())) == 1:
            self._scan_current: tuple[float | None, ...] | float | None = self._currents[0]
            self._scan_wiring: tuple[int, ...] | int = self._wirings[0]
        else:
            self._scan_current, self._scan_wiring = self._currents, self._wirings
        self._clock: Clock = clock if clock is not None else SystemClock()
        self._backoff = backoff
        # the driver layer's one SCPI session: identity check, translated failures, the error queue
        self._session = ScpiSession(name, resource, backend=backend, timeout_s=self.timeout_s,
                                    identify=profile.identify, error_query=profile.error_query)
        self._opened_once = False
        self._failures = 0
        self._retry_at_s: float | None = None  # on the monotonic time line
        self._health = Health(counters={"reconnect_attempts": 0, "instrument_errors": 0, "power_ons": 0})
        self._lock = threading.RLock()
        self._read_message = (
            f"{profile.read};{profile.event_status}" if profile.event_status else profile.read
        )

    # --- the Driver interface -------------------------------------------------------

    def open(self) -> None:
        """Connect, check identity, reset, configure and check the error queue.

        Raises:
            InstrumentError: nothing answers, someone else answers, or the
                meter refused part of the configuration (the entries listed).
        """
        with self._lock:
            self._drop()
            try:
                self._connect()
            except InstrumentError as exc:
                self._failed(exc, backoff=True)
                raise

    def close(self) -> None:
        """Close the session; never raises."""
        with self._lock:
            self._drop()

    def health(self) -> dict[str, object]:
        # no lock: a scan may hold it for a whole timeout, and a snapshot of
        # plain fields is safe to take while they change
        return self._health.snapshot()

    def read_scan(self) -> Sequence[RawReading]:
        """One reading per channel; trouble becomes statuses, and reconnecting waits for the back-off."""
        with self._lock:
            if self._inst is not None:
                state = _stream_state(self._inst)
                if state == "closed":
                    exc = self._error(ConnectionLost, "the connection was closed by the instrument")
                    return self._failed_scan(exc, "lost", backoff=True)
                if state == "stale":
                    # bytes nobody asked for: the stream is out of step; start afresh now
                    self._drop()
            if self._inst is None:
                now_s = self._clock.monotonic_s()
                if self._retry_at_s is not None and now_s < self._retry_at_s:
                    wait_s = self._retry_at_s - now_s
                    why = self._health.last_error or "not connected"
                    return failed_scan(self.channels, self._clock.utc_s(), "lost", f"{why} (retry in {wait_s:.1f} s)")
                try:
                    self._connect()
                except InstrumentError as exc:
                    return self._failed_scan(exc, "lost", backoff=True)
            try:
                return self._scan()
            except InstrumentTimeout as exc:
                lost = self._inst is not None and _stream_state(self._inst) == "closed"
                return self._failed_scan(exc, "lost" if lost else "timeout", backoff=True)
            except ReplyGarbled as exc:
                self._health.bad_frames += 1
                return self._failed_scan(exc, "garbage", backoff=False)
            except InstrumentError as exc:
                return self._failed_scan(exc, "lost", backoff=True)

    # --- connecting ------------------------------------------------------------------

    @property
    def _inst(self) -> object | None:
        """The open pyvisa resource, or None."""
        return self._session.instrument

    def _connect(self) -> None:
        if self._opened_once:
            self._health.counters["reconnect_attempts"] += 1
        self._health.identity = self._session.open()  # opened, and the same instrument answers as first met
        try:
            self._configure()
        except InstrumentError:
            self._drop()
            raise
        self._health.connected = True
        self._health.next_retry_utc_s = None
        self._retry_at_s = None
        self._failures = 0
        if self._opened_once:
            self._health.reconnects += 1
        self._opened_once = True

    def _configure(self) -> None:
        p = self.profile
        groups: dict[tuple[Wiring, float | None], list[str]] = {}
        dcv: dict[float | None, list[str]] = {}
        for ch in self.channels:
            if ch in self._volts:
                dcv.setdefault(self._volts[ch], []).append(ch)
            else:
                groups.setdefault(self._settings[ch], []).append(ch)
        sent = [c for c in (p.reset, p.clear) if c]
        for range_v, chans in dcv.items():
            values = {
                "range": p.autorange if range_v is None else f"{range_v:.10g}",
                "channels": format_channel_list(chans),
                "nplc": f"{self.nplc:.10g}",
                "state": p.off,
            }
            sent += [p.render(t, **values) for t in (p.configure_dcv, p.nplc_dcv) if t]
        for (wiring, range_ohm), chans in groups.items():
            values = {
                "range": p.autorange if range_ohm is None else f"{range_ohm:.10g}",
                "channels": format_channel_list(chans),
                "nplc": f"{self.nplc:.10g}",
                "state": p.on if self.offset_compensation else p.off,
            }
            four = wiring == 4
            templates = [
                p.configure_4w if four else p.configure_2w,
                p.nplc_4w if four else p.nplc_2w,
                p.offset_compensation_4w if four else p.offset_compensation_2w,
            ]
            sent += [p.render(t, **values) for t in templates if t]
        if len(self.channels) > 1 and p.scan:
            sent.append(p.render(p.scan, channels=format_channel_list(self.channels)))
        for command in sent:
            self._write(command)
        errors = self._drain_errors()
        if errors:
            code, _ = errors[0]
            listed = "; ".join(f"{c},{m!r}" for c, m in errors)
            raise InstrumentError(
                self._where(
                    f"refused the configuration: {listed} after {' | '.join(sent)}; check the profile and its commands"
                ),
                resource=self.resource,
                scpi_code=code,
            )

    def _drain_errors(self) -> list[tuple[int, str]]:
        """Read the error queue until it says 0."""
        return self._session.drain_errors(on_entry=self._count_error)

    def _count_error(self, code: int, message: str) -> None:
        self._health.counters["instrument_errors"] += 1

    # --- reading ---------------------------------------------------------------------

    def _scan(self) -> Sequence[RawReading]:
        started_s = self._clock.utc_s()
        reply = self._query(self._read_message)
        t_utc_s = 0.5 * (started_s + self._clock.utc_s())  # the middle of the scan
        self._health.reads += 1
        body = reply
        if self.profile.event_status:
            head, sep, tail = reply.rpartition(";")
            body = head if sep else ""
            try:
                esr = int(tail.strip())
            except ValueError:
                message = self._read_message
                raise self._error(ReplyGarbled, f"answered {message!r} with {_shown(reply)}", message) from None
            if esr & _ESR_PON:
                self._health.counters["power_ons"] += 1
                self._note(f"{self.name} reports a power-on (*ESR? bit 7): settings lost; configuring again")
                self._drop()  # re-opened and configured on the next call, without back-off
                return failed_scan(self.channels, t_utc_s, "error", self._health.last_error)
            if esr & _ESR_ERRORS:
                entries = self._drain_errors()
                listed = "; ".join(f"{c},{m!r}" for c, m in entries) or f"*ESR? = {esr}"
                self._note(f"{self.name} logged an error during the scan: {listed}")
                return failed_scan(self.channels, t_utc_s, "error", self._health.last_error)
        scan = parse_scan(body, self.channels, t_utc_s, current_a=self._scan_current, wiring=self._scan_wiring,
                          signed=self._signed)
        if scan.status[0] == STATUS_INDEX["garbage"]:  # a scan fails to parse as a whole
            raise self._error(ReplyGarbled, f"sent a scan that does not parse: {scan.reasons[0]}", self.profile.read)
        self._health.last_ok_utc_s = t_utc_s
        return scan

    # --- I/O, translated once --------------------------------------------------------

    def _query(self, command: str) -> str:
        return self._session.query(command)

    def _write(self, command: str) -> None:
        self._session.write(command)

    # --- bookkeeping -----------------------------------------------------------------

    def _where(self, what: str) -> str:
        return self._session.where(what)

    def _error(self, kind: type[_E], what: str, command: str | None = None) -> _E:
        """An exception of ``kind`` that names this instrument and keeps the facts as attributes."""
        return self._session.error(kind, what, command)

    def _note(self, message: str) -> None:
        self._health.last_error = message
        self._health.last_error_utc_s = self._clock.utc_s()
        self._health.errors += 1

    def _drop(self) -> None:
        """Close the session without ``clear()`` (which hangs on a dead socket)."""
        self._session.close()
        self._health.connected = False

    def _failed(self, exc: InstrumentError, *, backoff: bool) -> None:
        self._drop()
        self._note(str(exc))
        if isinstance(exc, InstrumentTimeout):
            self._health.timeouts += 1
        if backoff:
            self._failures += 1
            delay_s = self._backoff.delay_s(self._failures)
        else:
            delay_s = 0.0
        self._retry_at_s = self._clock.monotonic_s() + delay_s
        self._health.next_retry_utc_s = self._clock.utc_s() + delay_s

    def _failed_scan(self, exc: InstrumentError, status: str, *, backoff: bool) -> list[RawReading]:
        self._failed(exc, backoff=backoff)
        return failed_scan(self.channels, self._clock.utc_s(), status, str(exc))
