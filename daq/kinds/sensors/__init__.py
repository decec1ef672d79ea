"""Sensor kinds: what a ``[[sensor]]`` of one ``type`` may say, and the measurement chain it gives (see soaklog.kinds).

A sensor kind reads its own keys (beside ``name``, ``type`` and
``description``) into a ``SensorConfig``, builds a channel's measurement
chain from the sensor, its leads and what the instrument gives (the measuring
current, a meter's or a board's specification), and points out what a
metrologist would about a channel before the run.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any, ClassVar

from soaklog.kinds.keys import Checker, Key

if TYPE_CHECKING:
    from soaklog.config import ChannelConfig, SensorConfig
    from soaklog.sensors.measurement import AdcSpec, MeasurementChain, MeterSpec

__all__ = ["SensorKind", "COMMON_KEYS"]

#: keys every sensor has, whatever its type
COMMON_KEYS: Mapping[str, Key] = {
    "name": Key(str, "the sensor's name, used by channels", required=True),
    "type": Key(str, "the sensor's kind", default="pt"),
    "description": Key(str, "free text: maker, serial number, mounting", default=""),
}


class SensorKind:
    """The base of every sensor kind."""

    name: ClassVar[str] = ""
    keys: ClassVar[Mapping[str, Key]] = {}

    def read(self, ck: Checker, d: Mapping[str, Any], key: str, name: str | None, description: str,
             today: _dt.date) -> SensorConfig | None:
        """The sensor from its table (problems to ``ck``, by key); None when it cannot be made."""
        raise NotImplementedError

    def chain(self, sensor: SensorConfig, channel: ChannelConfig, *, current_a: float | None,
              meter: MeterSpec | None, adc: AdcSpec | None) -> MeasurementChain:
        """The channel's measurement chain."""
        raise NotImplementedError

    def warnings(self, sensor: SensorConfig, channel: ChannelConfig, current_a: float | None, ck: Checker) -> None:
        """What a metrologist would point out about this sensor on this channel."""
