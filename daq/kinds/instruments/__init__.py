"""Instrument kinds: what an ``[[instrument]]`` may say, and the driver it gets (see soaklog.kinds).

An instrument kind declares its own keys (beside ``name``, ``driver``,
``interval`` and ``timeout``, which every instrument has), reads them by file
and key, says what its channels may be (input names, wiring, a per-channel
range), what the measurement chain takes from it (test current, a meter's or
a board's specification) and builds its driver — importing the driver module
only then, so a command that never talks to instruments never imports pyvisa
or pyserial.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any, ClassVar

from soaklog.kinds.keys import DURATION, Checker, Key

if TYPE_CHECKING:
    from soaklog.config import ChannelConfig, InstrumentConfig, SensorConfig
    from soaklog.drivers.base import Clock, Driver
    from soaklog.sensors.measurement import AdcSpec, MeterSpec

__all__ = ["InstrumentKind", "COMMON_KEYS"]

#: keys every instrument has, whatever its driver
COMMON_KEYS: Mapping[str, Key] = {
    "name": Key(str, "the instrument's name, used by channels and in messages", required=True),
    "driver": Key(str, "the instrument's kind", required=True),
    "interval": Key(DURATION, "time between scans", default="2s"),
    "timeout": Key(DURATION, "how long one reply may take", default="5s"),
}


class InstrumentKind:
    """The base of every instrument kind: safe defaults a kind overrides where it differs."""

    name: ClassVar[str] = ""
    #: what the kind is, in a message ("a multimeter", "a serial ADC board")
    noun: ClassVar[str] = "an instrument"
    #: the kind's own keys
    keys: ClassVar[Mapping[str, Key]] = {}
    #: whether a channel may set its own range (``range_ohm``)
    channel_range: ClassVar[bool] = False
    #: what its inputs measure: "ohm", and "V" for one that measures DC volts too (thermocouples)
    measures: ClassVar[frozenset[str]] = frozenset({"ohm"})

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any]:
        """The kind's settings from its table (problems to ``ck``, by key)."""
        return {}

    def default_wiring(self, inst: InstrumentConfig) -> int:
        return int(inst.settings.get("wiring", 4))

    def check_input(self, inst: InstrumentConfig, inp: str) -> str | None:
        """A problem with a channel's ``input`` name on this instrument, or None."""
        return None

    def check_wiring(self, inst: InstrumentConfig, wiring: int) -> str | None:
        """A problem with a channel's wiring on this instrument, or None."""
        return None

    def range_ohm(self, inst: InstrumentConfig, channel: ChannelConfig | None = None) -> float | None:
        """The ohms range a channel is measured on (None: not a ranged meter, or autorange)."""
        return None

    def current_a(self, inst: InstrumentConfig, channel: ChannelConfig | None = None) -> float | None:
        """The measuring current through a channel's sensor (None: not known)."""
        return None

    def meter_spec(self, inst: InstrumentConfig, channel: ChannelConfig) -> MeterSpec | None:
        return None

    def adc_spec(self, inst: InstrumentConfig, channel: ChannelConfig) -> AdcSpec | None:
        return None

    def open_on_overload(self, inst: InstrumentConfig, channel: ChannelConfig, r_max_ohm: float) -> bool:
        """Whether an overload on this channel means an open sensor (rather than a hot one)."""
        return True

    def address(self, inst: InstrumentConfig) -> str:
        """Where the instrument is (a resource string, a port)."""
        return ""

    def accuracy(self, inst: InstrumentConfig) -> str | None:
        """Its measuring accuracy in words, for the report (None: not given)."""
        return None

    def warnings(self, inst: InstrumentConfig, channel: ChannelConfig, sensor: SensorConfig, ck: Checker) -> None:
        """What a metrologist would point out about this channel on this instrument."""

    def driver(self, inst: InstrumentConfig, clock: Clock, channels: Sequence[ChannelConfig]) -> Driver:
        """The instrument's driver for these channels (imported here, not at module level).

        Raises:
            ConfigError: a setting the driver cannot use, by key.
        """
        raise NotImplementedError(f"{type(self).__name__} builds no driver")
