"""Instrument drivers: SCPI multimeters over VISA, serial ADC boards.

Drivers produce raw readings (``RawReading``, or the columnar ``RawScan``)
and know nothing of temperature.
"""

from __future__ import annotations

from soaklog.drivers.base import STATUSES, Driver, Health, RawReading, RawScan, failed_scan
from soaklog.drivers.probe import ProbeResult, format_probe, probe
from soaklog.drivers.scpi_meter import PROFILES, Backoff, MeterProfile, ScpiMeter, parse_reply, parse_scan, profile_named
from soaklog.drivers.serial_adc import SerialAdc

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
    "probe",
    "profile_named",
]
