"""Instrument drivers: SCPI multimeters over VISA, serial ADC boards.

Drivers produce ``RawReading``s and know nothing of temperature.
"""

from __future__ import annotations

from drivers.base import STATUSES, Driver, Health, RawReading, failed_scan

__all__ = ["Driver", "Health", "RawReading", "STATUSES", "failed_scan"]
