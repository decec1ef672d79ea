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
from soaklog.sensors.flags import EDGE_TOL_K, FLAG_DTYPE, Flag

__all__ = ["KELVIN_OFFSET", "SteinhartHart", "BetaNtc", "fit_steinhart_hart", "NtcCurve", "NtcTolerance",
           "DEFAULT_NTC_RANGE_C", "T25_C"]

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


# ---------------------------------------------------------------- a thermistor as a channel's curve

#: the range an NTC's equation is used over when none is given: the −40…125 °C
#: that most epoxy-coated bead and chip thermistors are specified for (common
#: practice, no published source; give the data sheet's or the fit's range)
DEFAULT_NTC_RANGE_C = (-40.0, 125.0)

#: the reference temperature of R25 and of tolerances on it, °C
T25_C = 25.0


@dataclass(frozen=True)
class NtcCurve:
    """A thermistor's equation over the range it is valid for: what a channel's chain converts with.

    Like ``cvd.CvdCurve``: ``resistance(t)`` evaluates wherever asked,
    ``temperature(r)`` gives NaN with ``Flag.OUT_OF_RANGE`` outside
    ``t_min_c``…``t_max_c`` (ends inclusive within a few ulps; never an
    extrapolation — 1e300 ohm is out of range, not −273 °C) and
    ``slope(t)`` is dR/dt (negative: an NTC).
    """

    model: SteinhartHart | BetaNtc
    t_min_c: float = DEFAULT_NTC_RANGE_C[0]
    t_max_c: float = DEFAULT_NTC_RANGE_C[1]
    name: str = "NTC"

    def __post_init__(self) -> None:
        if not (np.isfinite(self.t_min_c) and np.isfinite(self.t_max_c) and self.t_min_c < self.t_max_c):
            raise InputError(f"an NTC's range must be low < high in °C, got {self.t_min_c!r}…{self.t_max_c!r}")
        if self.t_min_c + KELVIN_OFFSET <= 0.0:
            raise InputError(f"an NTC's range must lie above −273.15 °C, got {self.t_min_c!r} °C")
        r_lo, f_lo = self.model.resistance(self.t_max_c)
        r_hi, f_hi = self.model.resistance(self.t_min_c)
        if f_lo or f_hi or not float(r_lo) < float(r_hi):
            raise InputError(f"the thermistor's equation gives no usable resistance over "
                             f"{self.t_min_c:g}…{self.t_max_c:g} °C")

    @property
    def r25_ohm(self) -> float:
        """Resistance at 25 °C."""
        return float(self.model.resistance(T25_C)[0])

    @property
    def r0_ohm(self) -> float:
        """The nominal resistance a thermistor is named by (its R25)."""
        return self.r25_ohm

    @property
    def label(self) -> str:
        """A short name for tables: NTC 10k."""
        r = self.r25_ohm
        return f"NTC {r / 1000:.3g}k" if r >= 1000 else f"NTC {r:.3g}"

    def resistance(self, t_c: npt.ArrayLike) -> FloatArray:
        return self.model.resistance(t_c)[0]

    def temperature(self, r_ohm: npt.ArrayLike) -> tuple[FloatArray, FlagArray]:
        from soaklog.sensors.cvd import inclusive_bounds

        r = np.asarray(r_ohm, dtype=np.float64)
        t, flags = self.model.temperature(r)
        # ends inclusive within EDGE_TOL_K, as for every curve (see cvd.temperature)
        r_min, r_max = inclusive_bounds(float(self.model.resistance(self.t_max_c + EDGE_TOL_K)[0]),
                                        float(self.model.resistance(self.t_min_c - EDGE_TOL_K)[0]))
        outside = ~((r >= r_min) & (r <= r_max)) & (flags == 0)
        flags = np.where(outside, FLAG_DTYPE(Flag.OUT_OF_RANGE), flags).astype(FLAG_DTYPE)
        t = np.where(flags != 0, np.nan, np.clip(t, self.t_min_c, self.t_max_c))
        return t.astype(np.float64, copy=False), flags

    def slope(self, t_c: npt.ArrayLike) -> FloatArray:
        """dR/dt in ohm/K: R·d(ln R)/dT, with d(1/T)/d(ln R) = b + 3c·(ln R)² (β: 1/β)."""
        t_k, _ = _usable_kelvin(t_c)
        r = self.resistance(t_c)
        with np.errstate(divide="ignore", invalid="ignore"):
            return -r / (t_k * t_k * self._dinv_t_dlnr(r))

    def _dinv_t_dlnr(self, r: FloatArray) -> FloatArray:
        m = self.model
        if isinstance(m, BetaNtc):
            return np.full(np.shape(r), 1.0 / m.beta_k, dtype=np.float64)
        with np.errstate(divide="ignore", invalid="ignore"):
            y = np.log(r)
        return m.b + 3.0 * m.c * y * y


@dataclass(frozen=True)
class NtcTolerance:
    """A thermistor's data-sheet tolerance, ±% of R25 and ±% of β, as a temperature bound.

    The resistance at T may be off by the R25 tolerance plus what a β off by
    its tolerance does away from 25 °C: Δ ln R = (Δβ/β)·β·|1/T − 1/T25| =
    (Δβ/β)·|ln(R(T)/R25)| for the β equation (for a Steinhart–Hart curve the
    same form, with its own ln(R/R25)); the two are added, as thermistor data
    sheets combine them into one resistance tolerance, and turned into kelvin
    by the curve's sensitivity: ΔT = (ΔR/R) / |d ln R/dT|.
    """

    curve: NtcCurve
    r25_pct: float = 0.0
    beta_pct: float = 0.0

    def __post_init__(self) -> None:
        for v, what in ((self.r25_pct, "R25 tolerance"), (self.beta_pct, "β tolerance")):
            if not (np.isfinite(v) and v >= 0.0):
                raise InputError(f"the thermistor's {what} must be a non-negative percentage, got {v!r}")

    @property
    def name(self) -> str:
        return f"±{self.r25_pct:g} % R25, ±{self.beta_pct:g} % β"

    element = ""

    @property
    def t_min_c(self) -> float:
        return self.curve.t_min_c

    @property
    def t_max_c(self) -> float:
        return self.curve.t_max_c

    def resistance_fraction(self, t_c: npt.ArrayLike) -> FloatArray:
        """ΔR/R at ``t_c``: the R25 part plus the β part."""
        r = self.curve.resistance(t_c)
        with np.errstate(divide="ignore", invalid="ignore"):
            ln_ratio = np.abs(np.log(r / self.curve.r25_ohm))
        return self.r25_pct / 100.0 + self.beta_pct / 100.0 * ln_ratio

    def bound_c(self, t_c: npt.ArrayLike) -> FloatArray:
        t = np.asarray(t_c, dtype=np.float64)
        r = self.curve.resistance(t)
        with np.errstate(divide="ignore", invalid="ignore"):
            dlnr_dt = np.abs(self.curve.slope(t) / r)
            return self.resistance_fraction(t) / dlnr_dt

    def in_range(self, t_c: npt.ArrayLike) -> npt.NDArray[np.bool_]:
        from soaklog.sensors.flags import within

        return within(t_c, self.t_min_c, self.t_max_c)

    def describe(self) -> str:
        return f"thermistor tolerance {self.name} over {self.t_min_c:g}…{self.t_max_c:g} °C"
