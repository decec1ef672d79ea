"""Pure metrology: RTD and thermistor equations, corrections, uncertainty.

No I/O and no clock here; arrays in, arrays out, flags beside them.
"""

from __future__ import annotations

from daq.sensors.cvd import IEC_60751, CvdCurve, resistance, slope, temperature
from daq.sensors.flags import Flag, flag_names

__all__ = [
    "CvdCurve",
    "IEC_60751",
    "Flag",
    "flag_names",
    "resistance",
    "slope",
    "temperature",
]
