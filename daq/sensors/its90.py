"""ITS-90 platinum resistance thermometry: the reference functions and the deviation functions of an SPRT.

The International Temperature Scale of 1990 (Preston-Thomas, Metrologia 27,
3–10, 1990; section 3.3) defines temperature between the triple point of
equilibrium hydrogen and the freezing point of silver by a standard platinum
resistance thermometer's resistance ratio W(T90) = R(T90)/R(273.16 K):

- reference functions Wr(T90): below 273.16 K, ln Wr = A0 + Σ Ai·[(ln(T90/273.16 K) + 1.5)/1.5]^i
  (i = 1…12); from 273.15 K, Wr = C0 + Σ Ci·[(T90/K − 754.15)/481]^i (i = 1…9);
- their inverses to within 0.1 mK (B and D coefficients), used here only to
  start Newton's method on the reference function;
- deviation functions W − Wr(T90) per sub-range, with coefficients from the
  thermometer's calibration certificate: 3.3.1.4 (83.8058 K to 273.16 K:
  a4·(W − 1) + b4·(W − 1)·ln W) and 3.3.2 (up to 933.473 K: a·(W − 1) +
  b·(W − 1)² + c·(W − 1)³, with the coefficients each sub-range admits).

The coefficients below are from memory of the Metrologia text; the test
suite's Table 1 self-test checks them: they reproduce every W_r of the
scale's Table 1 to 1e-8.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.sensors.cvd import inclusive_bounds
from soaklog.sensors.flags import EDGE_TOL_K, FLAG_DTYPE, Flag

__all__ = ["A", "B", "C", "D", "wr", "wr_inverse_k", "SUBRANGES", "Deviation", "SprtCurve", "T_TPW_K"]

FloatArray = npt.NDArray[np.float64]

T_TPW_K = 273.16
KELVIN = 273.15

#: ITS-90, 3.3.1, reference function below 273.16 K (from memory of Metrologia 27, 1990, table 4)
A = (-2.13534729, 3.18324720, -1.80143597, 0.71727204, 0.50344027, -0.61899395, -0.05332322,
     0.28021362, 0.10715224, -0.29302865, 0.04459872, 0.11868632, -0.05248134)
#: its inverse, T90/273.16 K = B0 + Σ Bi·[(Wr^(1/6) − 0.65)/0.35]^i, equivalent to within 0.1 mK
B = (0.183324722, 0.240975303, 0.209108771, 0.190439972, 0.142648498, 0.077993465, 0.012475611,
     -0.032267127, -0.075291522, -0.056470670, 0.076201285, 0.123893204, -0.029201193, -0.091173542,
     0.001317696, 0.026025526)
#: ITS-90, 3.3.2, reference function from 273.15 K to 1234.93 K
C = (2.78157254, 1.64650916, -0.13714390, -0.00649767, -0.00234444, 0.00511868, 0.00187982,
     -0.00204472, -0.00046122, 0.00045724)
#: its inverse, T90/K − 273.15 = D0 + Σ Di·[(Wr − 2.64)/1.64]^i, equivalent to within 0.13 mK
D = (439.932854, 472.418020, 37.684494, 7.472018, 2.920828, 0.005184, -0.963864, -0.188732,
     0.191203, 0.049025)


def _poly(c: tuple[float, ...], x: FloatArray) -> FloatArray:
    out = np.full(x.shape, c[-1], dtype=np.float64)
    for ci in c[-2::-1]:
        out = out * x + ci
    return out


def wr(t_k: npt.ArrayLike) -> FloatArray:
    """The reference function Wr(T90), T90 in kelvin (below 273.16 K the low function, from it the high)."""
    t = np.asarray(t_k, dtype=np.float64)
    low = t < T_TPW_K
    with np.errstate(invalid="ignore", divide="ignore"):
        x_low = (np.log(np.where(low, t, T_TPW_K) / T_TPW_K) + 1.5) / 1.5
        w_low = np.exp(_poly(A, x_low))
    w_high = _poly(C, (t - 754.15) / 481.0)
    return np.where(low, w_low, w_high)


def _wr_inverse_seed(w: FloatArray) -> FloatArray:
    with np.errstate(invalid="ignore"):
        low = T_TPW_K * _poly(B, (np.power(np.maximum(w, 0.0), 1.0 / 6.0) - 0.65) / 0.35)
    high = _poly(D, (w - 2.64) / 1.64) + KELVIN
    return np.where(w < 1.0, low, high)


def wr_inverse_k(w: npt.ArrayLike) -> FloatArray:
    """T90 in kelvin whose Wr is ``w``: the B/D inverse refined by Newton's method on Wr (exact)."""
    wa = np.asarray(w, dtype=np.float64)
    t = _wr_inverse_seed(wa)
    for _ in range(6):
        h = 1e-4
        d = (wr(t + h) - wr(t - h)) / (2 * h)
        step = (wr(t) - wa) / d
        t = t - step
        if not np.nanmax(np.abs(step), initial=0.0) > 1e-10:
            break
    return t


#: ITS-90 sub-ranges a deviation function may cover: number → (T90 low K, T90 high K, coefficients admitted)
SUBRANGES: dict[int, tuple[float, float, tuple[str, ...]]] = {
    4: (83.8058, 273.16, ("a", "b")),          # Ar triple point to TPW: a4(W−1) + b4(W−1)·ln W
    5: (234.3156, 302.9146, ("a", "b")),       # Hg to Ga
    7: (273.15, 933.473, ("a", "b", "c")),     # to the Al freezing point
    8: (273.15, 692.677, ("a", "b")),          # to Zn
    9: (273.15, 505.078, ("a", "b")),          # to Sn
    10: (273.15, 429.7485, ("a",)),            # to In
    11: (273.15, 302.9146, ("a",)),            # to Ga
}


@dataclass(frozen=True)
class Deviation:
    """One sub-range's deviation function W − Wr with a certificate's coefficients."""

    subrange: int
    a: float = 0.0
    b: float = 0.0
    c: float = 0.0

    def __post_init__(self) -> None:
        if self.subrange not in SUBRANGES:
            raise InputError(f"ITS-90 sub-range must be one of {', '.join(map(str, SUBRANGES))}, got {self.subrange!r}")
        admitted = SUBRANGES[self.subrange][2]
        for name in ("b", "c"):
            if getattr(self, name) and name not in admitted:
                raise InputError(f"sub-range {self.subrange} has no coefficient {name} (it takes {', '.join(admitted)})")

    @property
    def t_min_k(self) -> float:
        return SUBRANGES[self.subrange][0]

    @property
    def t_max_k(self) -> float:
        return SUBRANGES[self.subrange][1]

    def delta(self, w: FloatArray) -> FloatArray:
        x = w - 1.0
        if self.subrange == 4:
            with np.errstate(invalid="ignore", divide="ignore"):
                return self.a * x + self.b * x * np.log(w)
        return x * (self.a + x * (self.b + x * self.c))


@dataclass(frozen=True)
class SprtCurve:
    """An SPRT or a calibrated PRT by ITS-90: R = R_TPW·W, W − Wr(T90) by its deviation functions.

    ``below`` (sub-range 4, or 5) serves temperatures under 0.01 °C, ``above``
    (5, 7 … 11) those above; the curve's range is what they cover. Follows
    ``measurement.ResistanceCurve``, so an SPRT goes through the same chain
    as any resistive sensor.
    """

    r_tpw_ohm: float
    below: Deviation | None = None
    above: Deviation | None = None
    name: str = "ITS-90"

    def __post_init__(self) -> None:
        if not (math.isfinite(self.r_tpw_ohm) and self.r_tpw_ohm > 0):
            raise InputError(f"R(273.16 K) must be a positive resistance, got {self.r_tpw_ohm!r} ohm")
        if self.below is None and self.above is None:
            raise InputError("an ITS-90 thermometer needs a deviation function below or above the triple point")
        if self.below is not None and self.below.t_max_k < T_TPW_K:
            raise InputError(f"sub-range {self.below.subrange} does not reach the triple point; it cannot serve below it")

    @property
    def t_min_c(self) -> float:
        if self.below is not None:
            return self.below.t_min_k - KELVIN
        assert self.above is not None
        return self.above.t_min_k - KELVIN

    @property
    def t_max_c(self) -> float:
        return (self.above.t_max_k if self.above is not None else T_TPW_K) - KELVIN

    @property
    def r0_ohm(self) -> float:
        return self.r_tpw_ohm

    @property
    def label(self) -> str:
        return f"SPRT {self.r_tpw_ohm:.4g} ohm"

    def _deviation(self, w: FloatArray) -> FloatArray:
        out = np.zeros(w.shape, dtype=np.float64)
        if self.below is not None:
            m = w < 1.0
            out[m] = self.below.delta(w[m])
        if self.above is not None:
            m = w >= 1.0
            out[m] = self.above.delta(w[m])
        return out

    def resistance(self, t_c: npt.ArrayLike) -> FloatArray:
        """R(t): W solves W − Wr(T) = ΔW(W), by fixed-point steps (ΔW is a few 1e-4 at most)."""
        t = np.asarray(t_c, dtype=np.float64)
        w_r = wr(t + KELVIN)
        w = w_r.copy()
        for _ in range(8):
            w = w_r + self._deviation(w)
        return self.r_tpw_ohm * w

    def temperature(self, r_ohm: npt.ArrayLike) -> tuple[FloatArray, npt.NDArray[np.uint16]]:
        """t in °C from R: W = R/R_TPW, Wr = W − ΔW(W), T90 = Wr⁻¹ — direct; NaN with a flag outside the range."""
        r = np.asarray(r_ohm, dtype=np.float64)
        flags = np.zeros(r.shape, dtype=FLAG_DTYPE)
        r_lo, r_hi = inclusive_bounds(float(self.resistance(self.t_min_c - EDGE_TOL_K)),
                                      float(self.resistance(self.t_max_c + EDGE_TOL_K)))
        invalid = ~(np.isfinite(r) & (r > 0))
        inside = (r >= r_lo) & (r <= r_hi)
        flags[~invalid & ~inside] = FLAG_DTYPE(Flag.OUT_OF_RANGE)
        flags[invalid] = FLAG_DTYPE(Flag.INVALID_INPUT)
        w = np.where(inside, r, self.r_tpw_ohm) / self.r_tpw_ohm
        t = wr_inverse_k(w - self._deviation(w)) - KELVIN
        t = np.clip(t, self.t_min_c, self.t_max_c)
        return np.where(inside, t, np.nan), flags

    def slope(self, t_c: npt.ArrayLike) -> FloatArray:
        """dR/dt in ohm/K (a central difference of 1 mK: the functions are smooth polynomials)."""
        t = np.asarray(t_c, dtype=np.float64)
        h = 1e-3
        return (self.resistance(t + h) - self.resistance(t - h)) / (2 * h)
