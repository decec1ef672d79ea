"""NTC thermistors: the Steinhart–Hart and β equations, both directions.

Steinhart & Hart, Deep-Sea Research 15 (1968) 497–503:

    1/T = A + B·ln R + C·(ln R)³            (T in kelvin, R in ohm)

The β equation, the two-parameter form most data sheets quote:

    1/T = 1/T0 + (1/β)·ln(R/R0)

Temperatures are given and taken in °C at the interface; inside, T/K =
t/°C + 273.15 (SI Brochure, 9th ed., 2.3.1). As in ``cvd``, conversions take
arrays and return a flag array beside the values: an input that is not a
usable number gives NaN with ``Flag.INVALID_INPUT``, a result the equation
cannot give (no positive kelvin temperature, a resistance that over- or
underflows) gives NaN with ``Flag.OUT_OF_RANGE``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.errors import CalibrationError, InputError
from soaklog.sensors.flags import FLAG_DTYPE, Flag

__all__ = ["KELVIN_OFFSET", "SteinhartHart", "BetaNtc", "fit_steinhart_hart"]

FloatArray = npt.NDArray[np.float64]
FlagArray = npt.NDArray[np.uint16]
BoolArray = npt.NDArray[np.bool_]

#: T/K = t/°C + 273.15 (SI Brochure, 9th ed., 2.3.1)
KELVIN_OFFSET = 273.15

#: c/b below this: c·(ln R)³ is below 1e-100·b·ln R for any ln R under 1e25
_C_NEGLIGIBLE = 1e-150
#: a fitted c below zero whose term stays this far below 1/T at every point is
#: rounding of a true c = 0 (points from a β curve, for instance)
_C_ROUNDING = 1e-12


def _flag_where(shape: tuple[int, ...], invalid: BoolArray, out_of_range: BoolArray) -> FlagArray:
    flags = np.zeros(shape, dtype=FLAG_DTYPE)
    flags[out_of_range] = FLAG_DTYPE(Flag.OUT_OF_RANGE)
    flags[invalid] = FLAG_DTYPE(Flag.INVALID_INPUT)
    return flags


def _kelvin_from_inverse(inv_t: FloatArray, invalid: BoolArray) -> tuple[FloatArray, FlagArray]:
    """°C from 1/T, with NaN and flags where the input or the result is unusable."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t_k = 1.0 / inv_t
    out_of_range = ~invalid & ~(np.isfinite(t_k) & (t_k > 0.0))
    t_c = np.where(invalid | out_of_range, np.nan, t_k - KELVIN_OFFSET)
    return t_c.astype(np.float64, copy=False), _flag_where(t_c.shape, invalid, out_of_range)


def _ohm_from_log(ln_r: FloatArray, invalid: BoolArray) -> tuple[FloatArray, FlagArray]:
    """Ohm from ln R, with NaN and flags where the input or the result is unusable."""
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        r = np.exp(ln_r)
    out_of_range = ~invalid & ~(np.isfinite(r) & (r > 0.0))
    r = np.where(invalid | out_of_range, np.nan, r)
    return r.astype(np.float64, copy=False), _flag_where(r.shape, invalid, out_of_range)


def _usable_resistance(r_ohm: npt.ArrayLike) -> tuple[FloatArray, FloatArray, BoolArray]:
    r = np.asarray(r_ohm, dtype=np.float64)
    invalid = ~(np.isfinite(r) & (r > 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        ln_r = np.log(np.where(invalid, 1.0, r))
    return r, ln_r, invalid


def _usable_kelvin(t_c: npt.ArrayLike) -> tuple[FloatArray, BoolArray]:
    t = np.asarray(t_c, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        t_k = t + KELVIN_OFFSET
    invalid = ~(np.isfinite(t_k) & (t_k > 0.0))
    return np.where(invalid, 1.0, t_k), invalid


@dataclass(frozen=True)
class SteinhartHart:
    """Steinhart–Hart coefficients of one thermistor: 1/T = a + b·ln R + c·(ln R)³.

    ``b > 0`` and ``c ≥ 0`` are required: then 1/T rises with ln R everywhere,
    so R falls with T (an NTC) and each resistance has exactly one
    temperature and each temperature exactly one resistance.

    Attributes:
        a: in 1/K.
        b: in 1/K per unit of ln(R/ohm).
        c: in 1/K per unit of ln(R/ohm)³.
    """

    a: float
    b: float
    c: float

    def __post_init__(self) -> None:
        if not all(np.isfinite(v) for v in (self.a, self.b, self.c)):
            raise InputError(
                f"Steinhart–Hart coefficients must be finite, got a={self.a!r}, b={self.b!r}, c={self.c!r}"
            )
        if not (self.b > 0.0 and self.c >= 0.0):
            raise InputError(
                f"Steinhart–Hart coefficients need b > 0 and c >= 0 for a falling NTC curve, got "
                f"b={self.b!r}, c={self.c!r}; check the sign and order of the coefficients"
            )

    def temperature(self, r_ohm: npt.ArrayLike) -> tuple[FloatArray, FlagArray]:
        """Temperature in °C for resistances ``r_ohm``, and a flag array beside it."""
        _, ln_r, invalid = _usable_resistance(r_ohm)
        inv_t = self.a + ln_r * (self.b + self.c * ln_r * ln_r)
        return _kelvin_from_inverse(inv_t, invalid)

    def resistance(self, t_c: npt.ArrayLike) -> tuple[FloatArray, FlagArray]:
        """Resistance in ohm at temperatures ``t_c`` (°C), and a flag array beside it.

        ln R is the one real root of c·y³ + b·y + (a − 1/T) = 0. With p = b/c > 0
        and q = (a − 1/T)/c, the root of y³ + p·y + q = 0 in hyperbolic form is
        y = −2·√(p/3)·sinh(⅓·asinh((3q/2p)·√(3/p))): unlike Cardano's
        difference of two cube roots it loses no digits when c is small, and it
        tends to the β-like y = (1/T − a)/b as c → 0.
        """
        t_k, invalid = _usable_kelvin(t_c)
        d = self.a - 1.0 / t_k
        if self.c <= self.b * _C_NEGLIGIBLE:
            # the cubic term is far below double precision here, and p = b/c
            # would overflow the hyperbolic form
            ln_r = -d / self.b
        else:
            p = self.b / self.c
            q = d / self.c
            k = np.sqrt(p / 3.0)
            with np.errstate(over="ignore", invalid="ignore"):
                ln_r = -2.0 * k * np.sinh(np.arcsinh(1.5 * q / (p * k)) / 3.0)
        return _ohm_from_log(np.asarray(ln_r, dtype=np.float64), invalid)


@dataclass(frozen=True, kw_only=True)
class BetaNtc:
    """A thermistor described by R0 at T0 and β: 1/T = 1/T0 + (1/β)·ln(R/R0).

    Attributes:
        r0_ohm: resistance at ``t0_c``.
        t0_c: the reference temperature, °C (25 °C on most data sheets).
        beta_k: β in kelvin, e.g. B25/85 from the data sheet.
    """

    r0_ohm: float
    t0_c: float = 25.0
    beta_k: float

    def __post_init__(self) -> None:
        if not (np.isfinite(self.r0_ohm) and self.r0_ohm > 0.0):
            raise InputError(f"R0 must be a positive resistance, got {self.r0_ohm!r} ohm")
        if not (np.isfinite(self.t0_c) and self.t0_c + KELVIN_OFFSET > 0.0):
            raise InputError(f"T0 must be above absolute zero (−273.15 °C), got {self.t0_c!r} °C")
        if not (np.isfinite(self.beta_k) and self.beta_k > 0.0):
            raise InputError(
                f"β must be positive (kelvin) for an NTC, got {self.beta_k!r} K; "
                "data sheets give it as B25/50 or B25/85, typically 3000…5000 K"
            )

    def temperature(self, r_ohm: npt.ArrayLike) -> tuple[FloatArray, FlagArray]:
        """Temperature in °C for resistances ``r_ohm``, and a flag array beside it."""
        _, ln_r, invalid = _usable_resistance(r_ohm)
        t0_k = self.t0_c + KELVIN_OFFSET
        inv_t = 1.0 / t0_k + (ln_r - np.log(self.r0_ohm)) / self.beta_k
        return _kelvin_from_inverse(inv_t, invalid)

    def resistance(self, t_c: npt.ArrayLike) -> tuple[FloatArray, FlagArray]:
        """Resistance in ohm at temperatures ``t_c`` (°C), and a flag array beside it."""
        t_k, invalid = _usable_kelvin(t_c)
        t0_k = self.t0_c + KELVIN_OFFSET
        ln_r = np.log(self.r0_ohm) + self.beta_k * (1.0 / t_k - 1.0 / t0_k)
        return _ohm_from_log(np.asarray(ln_r, dtype=np.float64), invalid)


def fit_steinhart_hart(t_c: npt.ArrayLike, r_ohm: npt.ArrayLike) -> SteinhartHart:
    """Steinhart–Hart coefficients through three (temperature, resistance) points.

    The equation is linear in (a, b, c), so three points give a 3×3 system
    [1, ln R, (ln R)³]·(a, b, c) = 1/T, solved exactly. Points spread over the
    range of use (for example its ends and its middle) fit best.

    Args:
        t_c: three temperatures, °C.
        r_ohm: the resistance at each, ohm.

    Raises:
        CalibrationError: not three points, values not finite, a resistance
            not positive, a temperature not above absolute zero, two points
            at one temperature, resistances that do not fall as temperature
            rises, or points that give b ≤ 0 or c < 0.
    """
    t = np.asarray(t_c, dtype=np.float64)
    r = np.asarray(r_ohm, dtype=np.float64)
    if t.shape != (3,) or r.shape != (3,):
        raise CalibrationError(
            f"a Steinhart–Hart fit takes exactly three points, got temperatures of shape {t.shape} "
            f"and resistances of shape {r.shape}"
        )
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(r))):
        raise CalibrationError(f"points must be finite, got t={t.tolist()!r} °C, R={r.tolist()!r} ohm")
    if np.any(r <= 0.0):
        raise CalibrationError(f"resistances must be positive, got {r.tolist()!r} ohm")
    t_k = t + KELVIN_OFFSET
    if np.any(t_k <= 0.0):
        raise CalibrationError(f"temperatures must be above −273.15 °C, got {t.tolist()!r} °C")
    order = np.argsort(t)
    ts, rs = t[order], r[order]
    if np.any(np.diff(ts) == 0.0):
        raise CalibrationError(
            f"two points share a temperature ({ts.tolist()!r} °C); three distinct temperatures are needed"
        )
    if not np.all(np.diff(rs) < 0.0):
        raise CalibrationError(
            f"resistances {rs.tolist()!r} ohm at {ts.tolist()!r} °C do not fall as temperature rises: "
            "not an NTC thermistor, or points mixed up"
        )
    ln_r = np.log(rs)
    m = np.column_stack([np.ones(3, dtype=np.float64), ln_r, ln_r**3])
    inv_t = 1.0 / (ts + KELVIN_OFFSET)
    a, b, c = (float(v) for v in np.linalg.solve(m, inv_t))
    if c < 0.0 and np.max(np.abs(c * ln_r**3)) <= _C_ROUNDING * float(np.min(inv_t)):
        c = 0.0
    if not (b > 0.0 and c >= 0.0):
        raise CalibrationError(
            f"the points give a={a:.6g}, b={b:.6g}, c={c:.6g}; b > 0 and c >= 0 are needed for a "
            "monotonic NTC curve; check the points or use the β equation"
        )
    return SteinhartHart(a, b, c)
