"""Instrument drivers: SCPI multimeters over VISA, serial ADC boards.

Drivers produce raw readings (``RawReading``, or the columnar ``RawScan``)
and know nothing of temperature.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

from soaklog.drivers.base import STATUSES, Driver, Health, RawReading, RawScan, failed_scan

if TYPE_CHECKING:
    from soaklog.drivers.probe import ProbeResult, format_probe
    from soaklog.drivers.scpi_meter import (
        PROFILES,
        Backoff,
        MeterProfile,
        ScpiMeter,
        parse_reply,
        parse_scan,
        profile_named,
    )
    from soaklog.drivers.serial_adc import SerialAdc

# The drivers that need pyvisa or pyserial are imported when first used, so
# that importing the pure parts (``drivers.base``, the parsers) loads neither.
# (``probe`` is the submodule ``soaklog.drivers.probe``; its function is ``probe.probe``.)
_LAZY = {
    "ProbeResult": "probe", "format_probe": "probe",
    "PROFILES": "scpi_meter", "Backoff": "scpi_meter", "MeterProfile": "scpi_meter", "ScpiMeter": "scpi_meter",
    "parse_reply": "scpi_meter", "parse_scan": "scpi_meter", "profile_named": "scpi_meter",
    "SerialAdc": "serial_adc",
}


def __getattr__(name: str) -> object:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    return getattr(import_module(f"{__name__}.{module}"), name)


__all__ = [
    "Backoff",
    "Driver",
    "Health",
    "MeterProfile",
    "PROFILES",
    "ProbeResult",
    "RawReading",
    "RawScan",
    "STATUSES",
    "ScpiMeter",
    "SerialAdc",
    "failed_scan",
    "format_probe",
    "parse_reply",
    "parse_scan",
    "profile_named",
]
