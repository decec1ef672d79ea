"""Self-heating of an RTD by its measuring current: power, rise and zero-power extrapolation.

The measuring current dissipates P in the element, which then sits above its
surroundings by ΔT = P/δ, δ being the dissipation constant in W/K of the
sensor in its medium (IEC 60751:2008 specifies a self-heating test that gives
the temperature rise per unit power). The reading is high by ΔT; the pipeline
subtracts it.

Where δ is not known, two readings at two currents give both the zero-power
resistance and δ: the rise is proportional to P ∝ I², so R(I) = R(0) + k·I²
and a straight line in I² through the two readings extrapolates to I = 0.
This is the calibration laboratories' two-current method (from memory of
J. V. Nicholas and D. R. White, Traceable Temperatures, 2nd ed., Wiley 2001);
it takes R as linear in I², which holds while k·I² ≪ R.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from soaklog.errors import CalibrationError, InputError

__all__ = [
    "power_w",
    "temperature_rise_k",
    "zero_power_resistance",
    "dissipation_from_two_currents",
]

FloatArray = npt.NDArray[np.float64]


def _finite(value: npt.ArrayLike, name: str, unit: str) -> FloatArray:
    arr = np.asarray(value, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name} must be a finite value in {unit}, got {value!r}")
    return arr


def power_w(
    r_ohm: npt.ArrayLike,
    *,
    current_a: npt.ArrayLike | None = None,
    voltage_v: npt.ArrayLike | None = None,
) -> FloatArray:
    """Power in W dissipated in the element: I²·R for a current source, V²/R for a voltage one.

    Exactly one of ``current_a`` and ``voltage_v`` is given (the excitation
    across the element itself); arguments broadcast. A resistance that is not
    finite and positive (an open or shorted channel) gives NaN.

    Raises:
        InputError: both or neither excitation given, or a non-finite one.
    """
    if (current_a is None) == (voltage_v is None):
        raise InputError(
            "give exactly one excitation: current_a (current source) or voltage_v (voltage source)"
        )
    r = np.asarray(r_ohm, dtype=np.float64)
    valid = np.isfinite(r) & (r > 0)
    safe_r = np.where(valid, r, np.nan)
    with np.errstate(invalid="ignore"):
        if current_a is not None:
            i = _finite(current_a, "current_a", "A")
            p = i * i * safe_r
        else:
            v = _finite(voltage_v, "voltage_v", "V")
            p = v * v / safe_r
    return np.asarray(p, dtype=np.float64)


def temperature_rise_k(power_w: npt.ArrayLike, dissipation_w_per_k: npt.ArrayLike) -> FloatArray:
    """Temperature rise in K of the element above its surroundings: ΔT = P/δ.

    The reading is high by this amount. A NaN power gives NaN.

    Raises:
        InputError: a dissipation constant that is not finite and positive.
    """
    delta = np.asarray(dissipation_w_per_k, dtype=np.float64)
    if not np.all(np.isfinite(delta) & (delta > 0)):
        raise InputError(
            f"dissipation constant must be finite and > 0 W/K, got {dissipation_w_per_k!r} "
            "(a data sheet's mW/K divided by 1000)"
        )
    p = np.asarray(power_w, dtype=np.float64)
    return np.asarray(p / delta, dtype=np.float64)


def _first(values: FloatArray, where: npt.NDArray[np.bool_]) -> float:
    """The first of ``values`` where ``where`` holds, for an error message."""
    return float(np.broadcast_to(values, where.shape)[where].flat[0])


def _two_current_squares(i1_a: npt.ArrayLike, i2_a: npt.ArrayLike) -> tuple[FloatArray, FloatArray]:
    i1 = _finite(i1_a, "i1_a", "A")
    i2 = _finite(i2_a, "i2_a", "A")
    q1, q2 = i1 * i1, i2 * i2
    same = q1 == q2
    if np.any(same):
        first = _first(i1, same)
        raise InputError(
            f"the two readings were taken at the same current ({first:g} A); "
            "the extrapolation needs two different currents (e.g. I and √2·I)"
        )
    return q1, q2


def zero_power_resistance(
    r1_ohm: npt.ArrayLike, i1_a: npt.ArrayLike, r2_ohm: npt.ArrayLike, i2_a: npt.ArrayLike
) -> FloatArray:
    """Resistance in ohm at zero current from ``r1_ohm`` at ``i1_a`` and ``r2_ohm`` at ``i2_a``.

    With R = R(0) + k·I²:  R(0) = (I2²·R1 − I1²·R2) / (I2² − I1²), evaluated as
    R1 − I1²·(R2 − R1)/(I2² − I1²) so that the small self-heating term is
    computed on its own. For I2 = √2·I1 it is the familiar R(0) = 2·R1 − R2.

    Raises:
        InputError: equal currents (|I1| = |I2|) or non-finite currents.
    """
    q1, q2 = _two_current_squares(i1_a, i2_a)
    r1 = np.asarray(r1_ohm, dtype=np.float64)
    r2 = np.asarray(r2_ohm, dtype=np.float64)
    return np.asarray(r1 - q1 * (r2 - r1) / (q2 - q1), dtype=np.float64)


def dissipation_from_two_currents(
    r1_ohm: npt.ArrayLike,
    i1_a: npt.ArrayLike,
    r2_ohm: npt.ArrayLike,
    i2_a: npt.ArrayLike,
    slope_ohm_per_k: npt.ArrayLike,
) -> FloatArray:
    """Dissipation constant δ in W/K from the same two readings as ``zero_power_resistance``.

    ΔT1 = (R1 − R(0)) / (dR/dT) is the rise during reading 1, and
    δ = I1²·R1 / ΔT1. ``slope_ohm_per_k`` is the sensor's dR/dT near the
    temperature of the readings (``daq.sensors.cvd.slope``).

    Raises:
        InputError: equal or non-finite currents, or a slope that is not
            finite and positive.
        CalibrationError: the readings show no rise at I1 (R1 ≤ R(0), e.g. a
            zero first current or readings within noise of each other).
    """
    s = np.asarray(slope_ohm_per_k, dtype=np.float64)
    if not np.all(np.isfinite(s) & (s > 0)):
        raise InputError(f"slope must be finite and > 0 ohm/K, got {slope_ohm_per_k!r}")
    r0 = zero_power_resistance(r1_ohm, i1_a, r2_ohm, i2_a)
    r1 = np.asarray(r1_ohm, dtype=np.float64)
    i1 = np.asarray(i1_a, dtype=np.float64)
    rise_k = (r1 - r0) / s
    no_rise = np.isfinite(rise_k) & (rise_k <= 0)
    if np.any(no_rise):
        raise CalibrationError(
            "the two readings show no self-heating at the first current "
            f"(R1 − R(0) = {_first(r1 - r0, no_rise):.3g} ohm); take the readings further apart "
            "in current (a ratio of √2 or more), with the first current non-zero"
        )
    return np.asarray(i1 * i1 * r1 / rise_k, dtype=np.float64)
