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
    from soaklog.config import CalibrationRecord, ChannelConfig, SensorConfig
    from soaklog.sensors.measurement import AdcSpec, MeasurementChain, MeterSpec

__all__ = ["SensorKind", "COMMON_KEYS", "CALIBRATION_KEYS", "read_calibration", "read_span"]

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
    #: what an instrument measures for this sensor: "ohm" (a resistance) or "V" (a voltage)
    quantity: ClassVar[str] = "ohm"
    #: keys a ``[[channel]]`` with this sensor may have beyond every channel's
    channel_keys: ClassVar[Mapping[str, Key]] = {}

    def read_channel(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any]:
        """The channel's settings for this kind from its ``channel_keys`` (problems to ``ck``, by key)."""
        return {}

    def check_links(self, ck: Checker, channel: ChannelConfig, key: str,
                    channels: Mapping[str, ChannelConfig], sensors: Mapping[str, SensorConfig]) -> None:
        """Problems with what the channel's settings name elsewhere in the station (another channel)."""

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


#: the keys of a ``[sensor.calibration]`` table every kind that takes one reads
CALIBRATION_KEYS = frozenset({"certificate", "date", "due", "expanded_uncertainty_c", "k", "span_c"})


def read_span(ck: Checker, d: Mapping[str, Any], key: str, name: str,
              default: tuple[float, float]) -> tuple[float, float]:
    """A ``[low, high]`` in °C with low < high (the default, with a problem, when it is not one)."""
    if name not in d:
        return default
    span = d[name]
    if (not isinstance(span, list) or len(span) != 2
            or not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in span)
            or not span[0] < span[1]):
        ck.bad(f"{key}.{name}", f"must be [low, high] in °C with low < high, got {span!r}")
        return default
    return float(span[0]), float(span[1])


def read_calibration(ck: Checker, d: Mapping[str, Any], key: str, sensor: str | None, today: _dt.date,
                     span_default: tuple[float, float], extra: frozenset[str] = frozenset()) -> CalibrationRecord | None:
    """A calibration certificate's record from ``d`` (the ``calibration`` table at ``key``), by file and key.

    ``extra`` names keys a kind reads itself (a curve's coefficients).
    """
    from soaklog.config import CalibrationRecord
    from soaklog.kinds.keys import non_negative, plain_date, positive

    c = ck.table(d, key)
    ck.unknown(c, key, CALIBRATION_KEYS | extra)
    cert = ck.get(c, key, "certificate", str, required=True) or ""
    u = ck.get(c, key, "expanded_uncertainty_c", float, required=True, check=non_negative)
    k = ck.get(c, key, "k", float, default=2.0, check=positive)
    span = read_span(ck, c, key, "span_c", span_default)
    date = ck.get(c, key, "date", _dt.date, check=plain_date)
    due = ck.get(c, key, "due", _dt.date, check=plain_date)
    if due is not None and due < today:
        ck.warn(f"{key}.due: calibration of {sensor} was due {due.isoformat()}; its uncertainty may no longer hold")
    if u is None or k is None:
        return None
    return CalibrationRecord(cert, u, k, span, date, due)


def calibration_of(sensor: SensorConfig):  # type: ignore[no-untyped-def]
    """The chain's ``Calibration`` from a sensor's certificate record (None without one)."""
    from soaklog.sensors.measurement import Calibration

    c = sensor.calibration
    return None if c is None else Calibration(c.expanded_uncertainty_c, c.k, c.span_c[0], c.span_c[1], c.certificate)
