"""Callendar–Van Dusen equation for platinum RTDs (IEC 60751), both directions.

    R(t) = R0 · (1 + A·t + B·t²)                    0 °C ≤ t ≤ 850 °C
    R(t) = R0 · (1 + A·t + B·t² + C·(t − 100)·t³)  −200 °C ≤ t < 0 °C

IEC 60751:2008, 4.2 gives the equation, the range −200…850 °C and the standard
coefficients A = 3.9083e-3 /°C, B = −5.775e-7 /°C², C = −4.183e-12 /°C⁴.

The inverse is exact, not an approximation: above 0 °C the quadratic is solved
in closed form (in the cancellation-free form 2x / (A + √(A² + 4Bx))); below
0 °C that closed form is the seed for Newton steps on the quartic, iterated
until the step is below 1e-10 °C. Arrays are processed in cache-sized chunks,
so millions of values convert without large temporaries.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.sensors.flags import EDGE_TOL_K, FLAG_DTYPE, Flag

__all__ = ["CvdCurve", "IEC_60751", "resistance", "temperature", "slope", "inclusive_bounds", "EDGE_ULPS"]

FloatArray = npt.NDArray[np.float64]

#: values per chunk: large enough to amortise Python overhead, small enough to
#: keep the working set in the L2 cache (measured with `soaklog bench`)
_CHUNK = 1 << 16
_NEWTON_TOL_C = 1e-10
_NEWTON_MAX = 12


#: how many units in the last place a value may lie beyond a range's end and
#: still count as the end itself: a table value typed in decimal, or computed
#: another way, differs from the float of the same point by a few rounding steps
EDGE_ULPS = 4


def inclusive_bounds(lo: float, hi: float, ulps: int = EDGE_ULPS) -> tuple[float, float]:
    """``lo`` and ``hi`` widened outwards by ``ulps`` units in the last place (a range's ends inclusive)."""
    for _ in range(ulps):
        lo = float(np.nextafter(lo, -np.inf))
        hi = float(np.nextafter(hi, np.inf))
    return lo, hi


@dataclass(frozen=True)
class CvdCurve:
    """One Callendar–Van Dusen sensor curve: R0 and the coefficients A, B, C.

    Attributes:
        r0_ohm: resistance at 0 °C (100 for a Pt100, 1000 for a Pt1000, or a
            calibrated value).
        a, b, c: the Callendar–Van Dusen coefficients (C acts below 0 °C only).
        t_min_c, t_max_c: the range over which the equation is used; outside
            it no temperature is given, only a flag.
        name: where the coefficients come from, for the record.
    """

    r0_ohm: float = 100.0
    a: float = 3.9083e-3
    b: float = -5.775e-7
    c: float = -4.183e-12
    t_min_c: float = -200.0
    t_max_c: float = 850.0
    name: str = "IEC 60751"

    def __post_init__(self) -> None:
        for key in ("r0_ohm", "a", "b", "c", "t_min_c", "t_max_c"):
            if not np.isfinite(getattr(self, key)):
                raise ValueError(f"{key} must be a finite number, got {getattr(self, key)!r}")
        if not (np.isfinite(self.r0_ohm) and self.r0_ohm > 0):
            raise ValueError(f"R0 must be a positive resistance, got {self.r0_ohm!r} ohm")
        if not (np.isfinite(self.a) and self.a > 0):
            raise ValueError(f"coefficient A must be positive for a platinum curve, got {self.a!r}")
        if not (self.t_min_c < 0.0 < self.t_max_c):
            raise ValueError(f"range {self.t_min_c}…{self.t_max_c} °C must contain 0 °C")
        # the curve must rise monotonically over its whole range or the inverse is ambiguous
        grid = np.linspace(self.t_min_c, self.t_max_c, 2101)
        with np.errstate(all="ignore"):
            rising = bool(np.all(slope(grid, self) > 0))
        if not rising:
            raise ValueError(
                f"coefficients A={self.a}, B={self.b}, C={self.c} do not give a rising curve "
                f"over {self.t_min_c}…{self.t_max_c} °C"
            )

    @property
    def alpha(self) -> float:
        """Mean temperature coefficient 0…100 °C, (R100 − R0)/(100 °C · R0) = A + 100·B."""
        return self.a + 100.0 * self.b

    @property
    def label(self) -> str:
        """A short name for tables: Pt100, Pt1000."""
        return f"Pt{self.r0_ohm:g}"

    def with_r0(self, r0_ohm: float) -> CvdCurve:
        """The same coefficients for another nominal or calibrated R0."""
        return dataclasses.replace(self, r0_ohm=float(r0_ohm))

    def resistance(self, t_c: npt.ArrayLike) -> FloatArray:
        return resistance(t_c, self)

    def temperature(self, r_ohm: npt.ArrayLike) -> tuple[FloatArray, npt.NDArray[np.uint16]]:
        return temperature(r_ohm, self)

    def slope(self, t_c: npt.ArrayLike) -> FloatArray:
        return slope(t_c, self)


def resistance(t_c: npt.ArrayLike, curve: CvdCurve | None = None) -> FloatArray:
    """Resistance in ohm at temperatures ``t_c`` (°C).

    The polynomial is evaluated wherever asked; callers that need the range
    check it against ``curve.t_min_c`` / ``curve.t_max_c``.
    """
    curve = curve or IEC_60751
    t = np.asarray(t_c, dtype=np.float64)
    w = 1.0 + t * (curve.a + t * curve.b)
    if curve.c != 0.0:
        neg = t < 0.0
        if np.any(neg):
            tn = t[neg] if t.ndim else t
            w = np.array(w, dtype=np.float64, copy=True)
            w[neg] += curve.c * (tn - 100.0) * tn**3
    return curve.r0_ohm * w


def slope(t_c: npt.ArrayLike, curve: CvdCurve | None = None) -> FloatArray:
    """dR/dt in ohm/°C at temperatures ``t_c`` (the sensitivity used in uncertainty)."""
    curve = curve or IEC_60751
    t = np.asarray(t_c, dtype=np.float64)
    d = curve.a + 2.0 * curve.b * t
    if curve.c != 0.0:
        d = d + np.where(t < 0.0, curve.c * t * t * (4.0 * t - 300.0), 0.0)
    return curve.r0_ohm * d


def temperature(
    r_ohm: npt.ArrayLike, curve: CvdCurve | None = None
) -> tuple[FloatArray, npt.NDArray[np.uint16]]:
    """Temperature in °C for resistances ``r_ohm``, and a flag array beside it.

    Values outside the curve's range are NaN with ``Flag.OUT_OF_RANGE``;
    non-finite, zero or negative resistances are NaN with ``Flag.INVALID_INPUT``.

    Returns:
        (t_c, flags), both shaped like the input.
    """
    curve = curve or IEC_60751
    r = np.asarray(r_ohm, dtype=np.float64)
    shape = r.shape
    flat = np.ascontiguousarray(r).reshape(-1)
    n = flat.size
    t_out = np.empty(n, dtype=np.float64)
    flags = np.zeros(n, dtype=FLAG_DTYPE)

    a, b, c, r0 = curve.a, curve.b, curve.c, curve.r0_ohm
    # the range is checked on the resistance itself, its ends inclusive within
    # EDGE_TOL_K (and a few ulps): R(t_max) written as a decimal (390.481125 ohm
    # at 850 °C) may lie a rounding step above the float the polynomial gives;
    # such a value reads t_max itself (clamped below), never a number outside
    r_min, r_max = inclusive_bounds(float(resistance(curve.t_min_c - EDGE_TOL_K, curve)),
                                    float(resistance(curve.t_max_c + EDGE_TOL_K, curve)))
    a2 = a * a
    b4 = 4.0 * b
    inv_r0 = 1.0 / r0

    size = min(_CHUNK, max(n, 1))
    x = np.empty(size, dtype=np.float64)
    tmp = np.empty(size, dtype=np.float64)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        for start in range(0, n, _CHUNK):
            stop = min(start + _CHUNK, n)
            m = stop - start
            xs, ts = x[:m], tmp[:m]
            rs = flat[start:stop]
            out = t_out[start:stop]
            # x = W − 1, then t = 2x / (A + sqrt(A² + 4Bx)): exact for t ≥ 0,
            # and the quadratic seed for t < 0
            np.multiply(rs, inv_r0, out=xs)
            xs -= 1.0
            np.multiply(xs, b4, out=ts)
            ts += a2
            np.sqrt(ts, out=ts)
            ts += a
            np.add(xs, xs, out=out)
            out /= ts
            good = (rs >= r_min) & (rs <= r_max)
            if c != 0.0:
                neg = np.flatnonzero((xs < 0.0) & good)
                if neg.size:
                    out[neg] = _newton_below_zero(out[neg], xs[neg], a, b, c)
            np.clip(out, curve.t_min_c, curve.t_max_c, out=out)
            if not good.all():
                idx = np.flatnonzero(~good)
                out[idx] = np.nan
                rv = rs[idx]
                invalid = ~(np.isfinite(rv) & (rv > 0.0))
                flags[start + idx] = np.where(
                    invalid, FLAG_DTYPE(Flag.INVALID_INPUT), FLAG_DTYPE(Flag.OUT_OF_RANGE)
                )
    return t_out.reshape(shape), flags.reshape(shape)


def _newton_below_zero(t: FloatArray, x: FloatArray, a: float, b: float, c: float) -> FloatArray:
    """Solve A·t + B·t² + C·(t − 100)·t³ = x by Newton's method from seed ``t``."""
    c100 = -100.0 * c
    c300 = -300.0 * c
    c4 = 4.0 * c
    b2 = 2.0 * b
    for _ in range(_NEWTON_MAX):
        f = t * (a + t * (b + t * (c100 + t * c))) - x
        df = a + t * (b2 + t * (c300 + t * c4))
        step = f / df
        t = t - step
        if not np.max(np.abs(step)) > _NEWTON_TOL_C:
            break
    return t


IEC_60751 = CvdCurve()
"""The standard Pt100 curve of IEC 60751 (use ``with_r0`` for Pt500, Pt1000…)."""
