"""Per-value condition flags, carried as a ``uint16`` array beside every result.

A flag either withholds the temperature (the value is NaN: no invented number)
or qualifies it (the value stands, with a caveat the user must see).
"""

from __future__ import annotations

import enum
from collections.abc import Iterable

import numpy as np
import numpy.typing as npt

__all__ = ["Flag", "FLAG_DTYPE", "WITHHOLDING", "WITHHOLDING_UNCERTAINTY", "EDGE_TOL_K", "within", "flag_names", "empty_flags"]

FLAG_DTYPE = np.uint16


class Flag(enum.IntFlag):
    """Conditions a converted value can carry; names are the contract strings."""

    OUT_OF_RANGE = 1 << 0
    """Outside the equation's range (IEC 60751: −200…850 °C); no temperature."""
    INVALID_INPUT = 1 << 1
    """Not a finite, positive resistance after corrections; no temperature."""
    OUTSIDE_CLASS_RANGE = 1 << 2
    """The tolerance class does not apply at this temperature."""
    NO_SENSOR_SPEC = 1 << 3
    """No tolerance class or calibration given: the uncertainty omits the sensor."""
    CALIBRATION_EXTRAPOLATED = 1 << 4
    """Outside the span of the calibration points the coefficients came from."""
    LARGE_SELF_HEATING = 1 << 5
    """The self-heating correction exceeds 0.1 K (common practice, no published source)."""
    LEADS_EXCEED_SENSOR = 1 << 6
    """The lead correction is larger than what was measured; no temperature."""
    OVER_RANGE = 1 << 7
    """Above what the instrument's range can measure (a fixed range and its over-range); no temperature."""
    NO_COLD_JUNCTION = 1 << 8
    """A thermocouple's cold-junction temperature is not known at this reading; no temperature."""
    COLD_JUNCTION_UNVOUCHED = 1 << 9
    """The cold junction's temperature has no stated uncertainty: the reading's uncertainty is withheld."""

    @property
    def label(self) -> str:
        return (self.name or "").lower()


#: flags that mean the value is withheld (NaN) rather than qualified
WITHHOLDING = (Flag.OUT_OF_RANGE | Flag.INVALID_INPUT | Flag.LEADS_EXCEED_SENSOR | Flag.OVER_RANGE
               | Flag.NO_COLD_JUNCTION)

#: flags that leave the temperature but withhold its uncertainty (NaN, never 0):
#: the configuration does not say enough to state one honestly
WITHHOLDING_UNCERTAINTY = Flag.NO_SENSOR_SPEC | Flag.COLD_JUNCTION_UNVOUCHED


#: a temperature this close to the end of a range counts as inside it (an equation's
#: range, a class's, a calibration's span): the inverse of an equation lands a
#: rounding step (about 1e-13 K) beside the end (R(500 °C) = 280.9775 ohm reads
#: 500.00000000000006 °C), a table value typed in decimal lies a few ulps off, and a
#: nanokelvin is far below anything a thermometer resolves
EDGE_TOL_K = 1e-9


def within(t_c: npt.ArrayLike, lo_c: float, hi_c: float) -> npt.NDArray[np.bool_]:
    """Whether ``t_c`` lies in [lo_c, hi_c], ends inclusive within ``EDGE_TOL_K`` (NaN does not)."""
    t = np.asarray(t_c, dtype=np.float64)
    return (t >= lo_c - EDGE_TOL_K) & (t <= hi_c + EDGE_TOL_K)


def empty_flags(shape: int | tuple[int, ...]) -> npt.NDArray[np.uint16]:
    """A zeroed flag array of the given shape."""
    return np.zeros(shape, dtype=FLAG_DTYPE)


def flag_names(bits: int | np.integer) -> list[str]:
    """The contract strings of the flags set in ``bits``, in definition order."""
    value = int(bits)
    return [f.label for f in Flag if value & f]


def combine(arrays: Iterable[npt.NDArray[np.uint16]]) -> npt.NDArray[np.uint16]:
    """Bitwise OR of several flag arrays of one shape."""
    out: npt.NDArray[np.uint16] | None = None
    for a in arrays:
        out = a.copy() if out is None else out | a
    if out is None:
        raise ValueError("combine() needs at least one array")
    return out
