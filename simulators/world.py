"""The simulated chamber world: clock, chamber model and sensors behind the ``Plant`` interface.

Instrument simulators (the SCPI multimeter, the serial ADC board) ask the
world what their inputs see; each asks from its own server thread, so every
public method takes one lock. The chamber model is advanced lazily: whenever
the world is asked, it first steps the model to the clock's present time.

A truth log (JSON lines) records, for each ``terminal`` call or at most once
per channel per interval, what was really there: the position's temperature,
the element's (self-heating included), its resistance and what the terminals
read. Tests compare a logger's stored temperature with it.

Faults are injected through ``commands()``, a ``CommandTable`` that
``simulators.control.ControlServer`` serves on a loopback port::

    fault open CH | fault short CH | fault stuck CH | fault drift CH K_PER_H
    fault runaway | fault door SECONDS | fault cooler
    clear [CH | all | runaway | door | cooler | cutout]
    heater on | heater off
    status | truth CH | channels
"""

from __future__ import annotations

import json
import math
import threading
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Literal

import numpy as np

from soaklog.errors import InputError
from soaklog.sensors.leads import Conductor
from soaklog.simulators.chamber import ChamberModel, ChamberParams, Position
from soaklog.simulators.clock import SimClock, SimTime
from soaklog.simulators.control import CommandTable, ControlError
from soaklog.simulators.plant import Terminal
from soaklog.simulators.profiles import Cycle
from soaklog.simulators.sensors import NO_FAULT, Fault, FaultState, Reading, SimSensor

__all__ = [
    "ChamberWorld",
    "DemoChannel",
    "DEMO_CHANNELS",
    "DEMO_METER_CHANNELS",
    "DEMO_BOARD_CHANNELS",
    "DEFAULT_CURRENT_A",
    "demo_world",
]

#: measuring current assumed for ``truth`` before any instrument has asked:
#: about 1 mA, as on a DMM's 100 ohm and 1 kohm ranges (common practice; check the meter's data sheet)
DEFAULT_CURRENT_A = 1e-3


def _json_number(x: float) -> float | None:
    """JSON has no infinity: an open circuit is written as null."""
    return x if math.isfinite(x) else None


class ChamberWorld:
    """A chamber with its sensors, as instruments see it (implements ``simulators.plant.Plant``).

    Args:
        model: the chamber model (the world owns it from now on).
        sensors: the simulated sensors; their names are the channels, in order.
        clock: the time source (default: a real-time ``SimClock``).
        truth_log: a path or an open text file for JSON lines; None for no log.
        truth_log_interval_s: None writes a line on every ``terminal`` call;
            a number writes at most one line per channel per that many
            simulated seconds.

    Raises:
        InputError: duplicate channel names, or a sensor at a position the
            chamber does not have.
    """

    def __init__(
        self,
        model: ChamberModel,
        sensors: Sequence[SimSensor],
        clock: SimTime | None = None,
        *,
        truth_log: str | Path | IO[str] | None = None,
        truth_log_interval_s: float | None = None,
    ) -> None:
        names = [s.name for s in sensors]
        if len(set(names)) != len(names):
            raise InputError(f"sensor names (channels) must be unique, got {names}")
        known = {p.name for p in model.positions}
        for s in sensors:
            if s.position not in known:
                raise InputError(
                    f"sensor {s.name!r} sits at position {s.position!r}, which the chamber does not "
                    f"have; known: {', '.join(sorted(known)) or 'none'}"
                )
        if truth_log_interval_s is not None and not (
            isinstance(truth_log_interval_s, (int, float)) and truth_log_interval_s > 0
        ):
            raise InputError(f"truth_log_interval_s must be > 0 s or None, got {truth_log_interval_s!r}")
        self._model = model
        self._sensors = {s.name: s for s in sensors}
        self._clock: SimTime = clock if clock is not None else SimClock()
        self._lock = threading.RLock()
        self._faults: dict[str, FaultState] = {}
        self._last_mode: dict[str, tuple[int, float]] = {}
        self._interval = truth_log_interval_s
        self._last_logged: dict[str, float] = {}
        self._owns_log = False
        self._log: IO[str] | None
        if truth_log is None:
            self._log = None
        elif isinstance(truth_log, (str, Path)):
            self._log = open(truth_log, "a", encoding="utf-8")  # noqa: SIM115 - closed in close()
            self._owns_log = True
        else:
            self._log = truth_log

    # ------------------------------------------------------------ plumbing

    def __enter__(self) -> ChamberWorld:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Close the truth log if the world opened it."""
        with self._lock:
            if self._log is not None:
                if self._owns_log:
                    self._log.close()
                else:
                    self._log.flush()
                self._log = None

    @property
    def clock(self) -> SimTime:
        return self._clock

    @property
    def model(self) -> ChamberModel:
        """The chamber model. Not thread-safe on its own: use the world's methods while serving."""
        return self._model

    def _sync(self) -> float:
        t = self._clock.now_s()
        self._model.advance_to(t)
        return self._model.t_s

    def now_s(self) -> float:
        """Simulated time of the chamber state (the clock's time, to the model step)."""
        with self._lock:
            return self._sync()

    # ------------------------------------------------------------ the Plant interface

    def channels(self) -> list[str]:
        """Channel names, in wiring order."""
        with self._lock:
            return list(self._sensors)

    def sensor(self, channel: str) -> SimSensor:
        """The simulated sensor behind ``channel``.

        Raises:
            KeyError: an unknown channel.
        """
        with self._lock:
            return self._sensors[channel]

    def _read(self, channel: str, wiring: int, current_a: float) -> tuple[float, Reading]:
        sensor = self._sensors[channel]
        t = self._sync()
        true_c = self._model.position_c(sensor.position)
        air_c = self._model.state().air_c
        reading = sensor.read(
            true_c,
            air_c,
            self._model.params.ambient_c,
            wiring=wiring,
            current_a=current_a,
            t_s=t,
            fault=self._faults.get(channel, NO_FAULT),
        )
        return t, reading

    def terminal(self, channel: str, *, wiring: int, current_a: float) -> Terminal:
        """The resistance an instrument input sees now (see ``simulators.plant.Plant``).

        Raises:
            KeyError: an unknown channel.
            InputError: a wiring mode other than 2, 3 or 4.
        """
        with self._lock:
            if channel not in self._sensors:
                raise KeyError(channel)
            t, reading = self._read(channel, wiring, current_a)
            self._last_mode[channel] = (int(wiring), float(current_a))
            self._log_line(channel, t, reading, int(wiring), float(current_a))
            return Terminal(reading.terminal_ohm, t)

    def truth(
        self, channel: str, *, wiring: int | None = None, current_a: float | None = None
    ) -> dict[str, float | int | str | None]:
        """What is really there at ``channel`` now.

        The terminal resistance is given for ``wiring`` and ``current_a``
        (by default: as the last instrument asked, else the sensor's own wiring
        and ``DEFAULT_CURRENT_A``).

        Returns:
            ``t_s``, ``channel``, ``position``, ``true_c`` (the position's
            temperature), ``element_c`` (with self-heating), ``element_ohm``,
            ``terminal_ohm`` (None when open), ``wiring``, ``current_a``,
            ``air_c``, ``setpoint_c`` and ``fault``.

        Raises:
            KeyError: an unknown channel.
        """
        with self._lock:
            sensor = self._sensors[channel]
            last_wiring, last_current = self._last_mode.get(channel, (sensor.wiring, DEFAULT_CURRENT_A))
            w = last_wiring if wiring is None else wiring
            i = last_current if current_a is None else current_a
            t, reading = self._read(channel, w, i)
            return self._record(channel, t, reading, w, i)

    def _record(
        self, channel: str, t: float, reading: Reading, wiring: int, current_a: float
    ) -> dict[str, float | int | str | None]:
        state = self._model.state()
        return {
            "t_s": t,
            "channel": channel,
            "position": self._sensors[channel].position,
            "true_c": reading.true_c,
            "element_c": reading.element_c,
            "element_ohm": _json_number(reading.element_ohm),
            "terminal_ohm": _json_number(reading.terminal_ohm),
            "wiring": wiring,
            "current_a": current_a,
            "air_c": state.air_c,
            "setpoint_c": _json_number(state.setpoint_c),
            "fault": reading.fault,
        }

    def _log_line(self, channel: str, t: float, reading: Reading, wiring: int, current_a: float) -> None:
        if self._log is None:
            return
        if self._interval is not None:
            last = self._last_logged.get(channel)
            if last is not None and t < last + self._interval:
                return
            self._last_logged[channel] = t
        line = json.dumps(self._record(channel, t, reading, wiring, current_a), allow_nan=False)
        self._log.write(line + "\n")
        self._log.flush()

    # ------------------------------------------------------------ faults

    def set_fault(self, channel: str, kind: Fault | str, *, drift_k_per_h: float = 0.0) -> None:
        """Inject a sensor fault on ``channel`` from now on (replacing any other).

        Raises:
            KeyError: an unknown channel.
            InputError: an unknown fault kind or a non-finite drift rate.
        """
        try:
            fault = kind if isinstance(kind, Fault) else Fault(str(kind).lower())
        except ValueError as exc:
            kinds = ", ".join(f.value for f in Fault if f is not Fault.NONE)
            raise InputError(f"unknown sensor fault {kind!r}; known: {kinds}") from exc
        if not (isinstance(drift_k_per_h, (int, float)) and math.isfinite(drift_k_per_h)):
            raise InputError(f"drift rate must be a finite number of K/h, got {drift_k_per_h!r}")
        with self._lock:
            sensor = self._sensors[channel]
            if fault is Fault.NONE:
                self._faults.pop(channel, None)
                return
            t = self._sync()
            self._faults[channel] = FaultState(
                kind=fault,
                since_s=t,
                true_c=self._model.position_c(sensor.position),
                chamber_c=self._model.state().air_c,
                drift_k_per_h=float(drift_k_per_h),
            )

    def clear(self, what: str | None = None) -> None:
        """Clear faults: None or "all" clears every sensor and chamber fault; a channel name
        clears that sensor; "runaway", "door", "cooler" or "cutout" clear that chamber fault.

        Raises:
            KeyError: a name that is neither a channel nor a chamber fault.
        """
        with self._lock:
            self._sync()
            if what is None or what == "all":
                self._faults.clear()
                self._model.clear_faults()
            elif what in self._sensors:
                self._faults.pop(what, None)
            elif what == "runaway":
                self._model.set_runaway(False)
            elif what == "door":
                self._model.close_door()
            elif what == "cooler":
                self._model.set_cooler_failed(False)
            elif what == "cutout":
                self._model.reset_cutout()
            else:
                raise KeyError(what)

    def faults(self) -> dict[str, str]:
        """Sensor faults in force, by channel."""
        with self._lock:
            return {ch: f.kind.value for ch, f in self._faults.items()}

    def set_runaway(self, on: bool = True) -> None:
        """Heater runaway: the chamber controller's output stuck at full heat."""
        with self._lock:
            self._sync()
            self._model.set_runaway(on)

    def open_door(self, duration_s: float) -> None:
        """Open the chamber door now for ``duration_s`` seconds."""
        with self._lock:
            self._sync()
            self._model.open_door(duration_s)

    def set_cooler_failed(self, failed: bool = True) -> None:
        with self._lock:
            self._sync()
            self._model.set_cooler_failed(failed)

    @property
    def heater_supply_enabled(self) -> bool:
        """The external heater supply switch (a simulated power supply drives it later)."""
        with self._lock:
            return self._model.heater_supply_enabled

    @heater_supply_enabled.setter
    def heater_supply_enabled(self, on: bool) -> None:
        with self._lock:
            self._sync()
            self._model.heater_supply_enabled = on

    def status(self) -> dict[str, object]:
        """The chamber and its faults now, as plain values (the ``status`` command's JSON)."""
        with self._lock:
            self._sync()
            s = self._model.state()
            return {
                "t_s": s.t_s,
                "setpoint_c": _json_number(s.setpoint_c),
                "air_c": s.air_c,
                "load_c": s.load_c,
                "heater_w": s.heater_w,
                "cooler_w": s.cooler_w,
                "phase": s.phase.label,
                "cycle": s.phase.cycle,
                "door_open": s.door_open,
                "runaway": s.runaway,
                "heater_supply_enabled": s.heater_supply_enabled,
                "cooler_failed": s.cooler_failed,
                "cutout_tripped": s.cutout_tripped,
                "faults": self.faults(),
            }

    # ------------------------------------------------------------ control commands

    def _channel_arg(self, args: Sequence[str], usage: str) -> str:
        if len(args) != 1:
            raise ControlError(f"usage: {usage}")
        if args[0] not in self._sensors:
            raise ControlError(f"unknown channel {args[0]!r}; known: {', '.join(self._sensors)}")
        return args[0]

    def _cmd_fault(self, args: Sequence[str]) -> str:
        kinds = "open|short|stuck CH, drift CH K_PER_H, runaway, door SECONDS, cooler"
        if not args:
            raise ControlError(f"usage: fault {kinds}")
        kind, rest = args[0].lower(), list(args[1:])
        if kind in ("open", "short", "stuck"):
            ch = self._channel_arg(rest, f"fault {kind} CH")
            self.set_fault(ch, kind)
            return f"{kind} {ch}"
        if kind == "drift":
            if len(rest) != 2:
                raise ControlError("usage: fault drift CH K_PER_H")
            ch = self._channel_arg(rest[:1], "fault drift CH K_PER_H")
            rate = _float_arg(rest[1], "drift rate K_PER_H")
            self.set_fault(ch, Fault.DRIFT, drift_k_per_h=rate)
            return f"drift {ch} {rate:g} K/h"
        if kind == "runaway":
            if rest:
                raise ControlError("usage: fault runaway")
            self.set_runaway(True)
            return "runaway"
        if kind == "door":
            if len(rest) != 1:
                raise ControlError("usage: fault door SECONDS")
            seconds = _float_arg(rest[0], "door open SECONDS")
            if seconds < 0:
                raise ControlError(f"door open SECONDS must be ≥ 0, got {rest[0]!r}")
            self.open_door(seconds)
            return f"door open {seconds:g} s"
        if kind == "cooler":
            if rest:
                raise ControlError("usage: fault cooler")
            self.set_cooler_failed(True)
            return "cooler failed"
        raise ControlError(f"unknown fault {args[0]!r}; known: {kinds}")

    def _cmd_clear(self, args: Sequence[str]) -> str:
        if len(args) > 1:
            raise ControlError("usage: clear [CH|all|runaway|door|cooler|cutout]")
        what = args[0] if args else "all"
        try:
            self.clear(what)
        except KeyError:
            raise ControlError(
                f"nothing called {what!r} to clear; give a channel ({', '.join(self._sensors)}) "
                "or all, runaway, door, cooler, cutout"
            ) from None
        return f"cleared {what}"

    def _cmd_heater(self, args: Sequence[str]) -> str:
        if len(args) != 1 or args[0].lower() not in ("on", "off"):
            raise ControlError("usage: heater on|off")
        self.heater_supply_enabled = args[0].lower() == "on"
        return f"heater supply {args[0].lower()}"

    def _cmd_status(self, args: Sequence[str]) -> str:
        if args:
            raise ControlError("usage: status")
        return json.dumps(self.status(), allow_nan=False)

    def _cmd_truth(self, args: Sequence[str]) -> str:
        ch = self._channel_arg(args, "truth CH")
        return json.dumps(self.truth(ch), allow_nan=False)

    def _cmd_channels(self, args: Sequence[str]) -> str:
        if args:
            raise ControlError("usage: channels")
        return " ".join(self.channels())

    def commands(self) -> CommandTable:
        """A command table for ``simulators.control.ControlServer`` (see the module docstring)."""
        table = CommandTable()
        table.register("fault", self._cmd_fault)
        table.register("clear", self._cmd_clear)
        table.register("heater", self._cmd_heater)
        table.register("status", self._cmd_status)
        table.register("truth", self._cmd_truth)
        table.register("channels", self._cmd_channels)
        return table


def _float_arg(text: str, what: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise ControlError(f"{what} must be a number, got {text!r}") from None
    if not math.isfinite(value):
        raise ControlError(f"{what} must be finite, got {text!r}")
    return value


# ---------------------------------------------------------------- the demo scenario


@dataclass(frozen=True)
class DemoChannel:
    """One sensor of the demo scenario and how it is meant to be wired.

    Attributes:
        channel: channel (and sensor) name.
        position: chamber position.
        instrument: "meter" (the SCPI multimeter) or "board" (the serial ADC board).
        r0_ohm: 100 (Pt100) or 1000 (Pt1000).
        tolerance_class: IEC 60751 class it was bought as.
        element: "wire" (wire-wound) or "film".
        wiring: conductors installed, and the mode to measure it in.
        dissipation_w_per_k: δ in its place.
    """

    channel: str
    position: str
    instrument: Literal["meter", "board"]
    r0_ohm: float
    tolerance_class: str
    element: Literal["wire", "film"]
    wiring: Literal[2, 3, 4]
    dissipation_w_per_k: float


# An invented qualification lab: power modules cycled between −40 °C and +125 °C.
# Dissipation constants are orders of magnitude of data sheets (a sheathed probe
# in moving air ~10 mW/K, a film element glued to a case ~3 mW/K): common
# practice, no published source.
DEMO_CHANNELS: tuple[DemoChannel, ...] = (
    DemoChannel("air-supply", "air-supply", "meter", 100.0, "A", "wire", 4, 0.010),
    DemoChannel("air-return", "air-return", "meter", 100.0, "A", "wire", 4, 0.010),
    DemoChannel("shelf-1-front", "shelf-1-front", "meter", 100.0, "A", "wire", 4, 0.010),
    DemoChannel("module-3-case", "module-3-case", "meter", 1000.0, "B", "film", 2, 0.003),
    DemoChannel("module-6-case", "module-6-case", "meter", 1000.0, "B", "film", 2, 0.003),
    DemoChannel("shelf-2-rear", "shelf-2-rear", "board", 100.0, "B", "film", 3, 0.004),
    DemoChannel("door-corner", "door-corner", "board", 100.0, "B", "film", 3, 0.004),
    DemoChannel("fixture-plate", "fixture-plate", "board", 100.0, "B", "film", 3, 0.004),
)
DEMO_METER_CHANNELS = tuple(c.channel for c in DEMO_CHANNELS if c.instrument == "meter")
DEMO_BOARD_CHANNELS = tuple(c.channel for c in DEMO_CHANNELS if c.instrument == "board")

# where each sits: air share, gradient per kelvin from ambient, noise (K)
_DEMO_POSITIONS = (
    Position("air-supply", 1.0, 0.004, 0.03),  # conditioner outlet: ahead of the mean air
    Position("air-return", 1.0, -0.002, 0.02),
    Position("shelf-1-front", 0.85, -0.003, 0.02),
    Position("module-3-case", 0.05, 0.001, 0.01),
    Position("module-6-case", 0.05, -0.001, 0.01),
    Position("shelf-2-rear", 0.75, -0.005, 0.02),
    Position("door-corner", 0.9, -0.012, 0.04),  # pulled towards the lab through the door seal
    Position("fixture-plate", 0.15, -0.002, 0.01),
)

# leads: gauge, inside and outside lengths in m, per kind of hook-up
_DEMO_LEADS = {
    ("meter", 4): Conductor(awg=24, inside_length_m=2.5, outside_length_m=6.0),
    ("meter", 2): Conductor(awg=26, inside_length_m=2.0, outside_length_m=6.0),
    ("board", 3): Conductor(awg=24, inside_length_m=2.0, outside_length_m=1.5),
}


def demo_world(
    seed: int = 20261201,
    speed: float = 1.0,
    *,
    clock: SimTime | None = None,
    cycles: int = 1000,
    truth_log: str | Path | IO[str] | None = None,
    truth_log_interval_s: float | None = None,
) -> ChamberWorld:
    """The demo scenario: a qualification lab cycling power modules between −40 °C and +125 °C.

    10 K/min ramps, 15 min dwells at each extreme, ``cycles`` cycles (1000
    by default: about 1050 hours), starting from the lab's 23 °C. Eight
    sensors (``DEMO_CHANNELS``): three Pt100 wire-wound class A 4-wire and two
    Pt1000 film class B 2-wire on the multimeter, three Pt100 film class B
    3-wire on the serial board. Each sensor's curve and lead mismatch are
    drawn from ``seed``; the chamber has an independent over-temperature
    cut-out at 155 °C.

    Args:
        seed: one number for everything random (sensor deviations, noise).
        speed: simulated seconds per wall second for the default clock.
        clock: a clock to use instead (e.g. ``ManualClock`` in tests).
    """
    profile = Cycle(-40.0, 125.0, 10.0, 900.0, 900.0, cycles)
    model = ChamberModel(ChamberParams(cutout_c=155.0), profile, _DEMO_POSITIONS, seed=seed)
    rng = np.random.default_rng([seed, 1])
    sensors = [
        SimSensor.within_class(
            c.channel,
            c.position,
            rng,
            r0_ohm=c.r0_ohm,
            tolerance_class_name=c.tolerance_class,
            element=c.element,
            wiring=c.wiring,
            leads=_DEMO_LEADS[(c.instrument, c.wiring)],
            dissipation_w_per_k=c.dissipation_w_per_k,
        )
        for c in DEMO_CHANNELS
    ]
    return ChamberWorld(
        model,
        sensors,
        clock if clock is not None else SimClock(speed),
        truth_log=truth_log,
        truth_log_interval_s=truth_log_interval_s,
    )

