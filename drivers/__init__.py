"""Instrument drivers: SCPI multimeters over VISA, serial ADC boards.

Drivers produce raw readings (``RawReading``, or the columnar ``RawScan``)
and know nothing of temperature.
"""

from __future__ import annotations

from drivers.base import STATUSES, Driver, Health, RawReading, RawScan, failed_scan
from drivers.probe import ProbeResult, format_probe, probe
from drivers.scpi_meter import PROFILES, Backoff, MeterProfile, ScpiMeter, parse_reply, parse_scan, profile_named
from drivers.serial_adc import SerialAdc

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
