"""Pure metrology: RTD and thermistor equations, corrections, uncertainty.

No I/O and no clock here; arrays in, arrays out, flags beside them.
"""

from __future__ import annotations

from soaklog.sensors.cvd import IEC_60751, CvdCurve, resistance, slope, temperature
from soaklog.sensors.flags import Flag, flag_names
from soaklog.sensors.leads import Conductor, Leads
from soaklog.sensors.measurement import (
    AdcSpec,
    Calibration,
    Conversion,
    Excitation,
    MeasurementChain,
    MeterSpec,
    SensorSpec,
)
from soaklog.sensors.tolerance import ToleranceClass, tolerance_class
from soaklog.sensors.uncertainty import Budget, Contribution

__all__ = [
    "AdcSpec",
    "Budget",
    "Calibration",
    "Conductor",
    "Contribution",
    "Conversion",
    "CvdCurve",
    "Excitation",
    "Flag",
    "IEC_60751",
    "Leads",
    "MeasurementChain",
    "MeterSpec",
    "SensorSpec",
    "ToleranceClass",
    "flag_names",
    "resistance",
    "slope",
    "temperature",
    "tolerance_class",
]
