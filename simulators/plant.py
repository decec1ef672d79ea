"""What an instrument simulator measures: the interface between the chamber and the meters.

An instrument simulator (multimeter, ADC board) asks the plant for the
resistance it would see at its terminals for one input, given how it measures
(2-, 3- or 4-wire) and the current it drives through the sensor. The plant
answers from the chamber model, the simulated sensor (its own R0 deviation,
coefficients, leads, dissipation constant) and any sensor fault injected.
The plant owns simulated time: instruments never read a clock.
"""

from __future__ import annotations

import math
import threading
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Protocol

__all__ = ["Plant", "VoltagePlant", "Terminal", "FixedPlant", "OPEN_OHM"]

#: what an open sensor looks like at the terminals
OPEN_OHM = math.inf


@dataclass(frozen=True)
class Terminal:
    """What an instrument input sees at one moment.

    Attributes:
        ohm: resistance at the terminals in ohm (``OPEN_OHM`` when open).
        t_s: simulated time in seconds since the plant started.
    """

    ohm: float
    t_s: float


class Plant(Protocol):
    """The measured world, as instrument simulators see it."""

    def channels(self) -> list[str]:
        """Names of the sensors an instrument may be wired to, in wiring order."""
        ...

    def terminal(self, channel: str, *, wiring: int, current_a: float) -> Terminal:
        """The resistance an instrument input sees now.

        Args:
            channel: a name from ``channels()``.
            wiring: how the instrument measures: 2 (leads included), 3 (lead
                imbalance included) or 4 (leads excluded).
            current_a: the measuring current the instrument drives, which
                self-heats the sensor.

        Raises:
            KeyError: an unknown channel.
        """
        ...


class VoltagePlant(Protocol):
    """A plant whose inputs may also be voltages (thermocouples): what a meter's DC volts function reads."""

    def emf_v(self, channel: str) -> float:
        """The emf at the terminals in V; ``math.inf`` for an open thermocouple."""
        ...


class FixedPlant:
    """A plant with fixed sensor resistances, for instrument tests.

    ``lead_ohm`` is one conductor's resistance, added twice in 2-wire mode.
    ``set`` changes a value at run time (thread-safe).
    """

    def __init__(self, values: Mapping[str, float], *, lead_ohm: float = 0.0) -> None:
        self._values = dict(values)
        self._lead_ohm = lead_ohm
        self._lock = threading.Lock()
        self._t_s = 0.0

    def channels(self) -> list[str]:
        with self._lock:
            return list(self._values)

    def set(self, channel: str, ohm: float) -> None:
        with self._lock:
            self._values[channel] = ohm

    def emf_v(self, channel: str) -> float:
        """The voltage at a volts input: the channel's value taken as volts (a thermocouple's emf)."""
        with self._lock:
            return self._values[channel]

    def terminal(self, channel: str, *, wiring: int, current_a: float) -> Terminal:
        with self._lock:
            r = self._values[channel]
        if wiring == 2 and math.isfinite(r):
            r += 2.0 * self._lead_ohm
        return Terminal(r, self._t_s)
