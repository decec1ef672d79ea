"""Thermocouples of types B, E, J, K, N, R, S, T by the NIST ITS-90 reference functions (IEC 60584-1), both directions.

E(t), the emf in mV of a thermocouple whose reference junction is at 0 °C, is
the reference function of NIST Monograph 175 (IEC 60584-1:2013 gives the same
functions): a polynomial per sub-range, plus an exponential term for type K
above 0 °C. Coefficients in ``tc_coefficients``.

The inverse t(E) is exact, not the Monograph's inverse polynomial (which
departs from the reference function by up to 0.06 K): that polynomial only
seeds Newton's method on E(t), iterated until the step is below 1e-10 °C
(2–3 steps). Each direction is used only within its range — the reference
function's for E(t), the Monograph's inverse range for t(E) (type B from
250 °C, where its emf is no longer ambiguous) — with the ends inclusive;
outside, NaN with ``Flag.OUT_OF_RANGE``, never an extrapolation.

Cold-junction compensation adds voltages, never temperatures: the emf of the
hot junction against 0 °C is the measured emf plus E(t_cj), and its
temperature is t(E_measured + E(t_cj)).

Tolerance classes 1, 2, 3 of IEC 60584-1:2013 (table of tolerance classes;
the values below are from memory of that table and agree with the older
IEC 60584-2:1982): the greater of a fixed value and a fraction of |t|, each
class over its own range.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.sensors.flags import EDGE_TOL_K, FLAG_DTYPE, Flag, within
from soaklog.sensors.tc_coefficients import FORWARD, INVERSE, K_EXPONENTIAL

__all__ = ["TYPES", "Thermocouple", "TcTolerance", "tc_tolerance", "TOLERANCE_CLASSES"]

FloatArray = npt.NDArray[np.float64]
FlagArray = npt.NDArray[np.uint16]

#: the letter-designated types, in IEC 60584-1 order of the alphabet
TYPES: tuple[str, ...] = tuple(sorted(FORWARD))

_CHUNK = 1 << 16
_NEWTON_TOL_C = 1e-10
_NEWTON_MAX = 8


def _horner(c: tuple[float, ...], x: FloatArray) -> FloatArray:
    """Σ cᵢ·xⁱ by Horner's scheme."""
    out = np.full(x.shape, c[-1], dtype=np.float64)
    for ci in c[-2::-1]:
        out *= x
        out += ci
    return out


def _horner_derivative(c: tuple[float, ...], x: FloatArray) -> FloatArray:
    """d/dx Σ cᵢ·xⁱ = Σ i·cᵢ·xⁱ⁻¹."""
    d = tuple(i * ci for i, ci in enumerate(c))[1:]
    return _horner(d, x) if d else np.zeros(x.shape, dtype=np.float64)


@dataclass(frozen=True)
class Thermocouple:
    """One letter-designated thermocouple type (``"K"``, ``"T"`` …) by its reference function."""

    type: str

    def __post_init__(self) -> None:
        if self.type not in FORWARD:
            raise InputError(f"thermocouple type must be one of {', '.join(TYPES)}, got {self.type!r}")

    # ------------------------------------------------------------ ranges

    @property
    def t_min_c(self) -> float:
        """Low end of the reference function E(t)."""
        return FORWARD[self.type][0][0]

    @property
    def t_max_c(self) -> float:
        """High end of the reference function (and of the inverse)."""
        return FORWARD[self.type][-1][1]

    @property
    def inverse_t_min_c(self) -> float:
        """Low end of the range over which an emf is turned into a temperature."""
        return INVERSE[self.type][0][2]

    @property
    def inverse_t_max_c(self) -> float:
        return INVERSE[self.type][-1][3]

    @property
    def name(self) -> str:
        return f"type {self.type} (NIST ITS-90 reference function, IEC 60584-1)"

    @property
    def label(self) -> str:
        return f"type {self.type}"

    # ------------------------------------------------------------ E(t)

    def _segments(self, t: FloatArray) -> list[tuple[npt.NDArray[np.bool_], float, tuple[float, ...]]]:
        """(mask, sub-range start, coefficients) per sub-range: [lo, next lo), the first open below, the last above."""
        segs = FORWARD[self.type]
        if len(segs) == 1:
            return [(np.ones(t.shape, dtype=bool), segs[0][0], segs[0][2])]
        idx = np.searchsorted(np.array([s[0] for s in segs[1:]]), t, side="right")
        return [(idx == i, lo, c) for i, (lo, _hi, c) in enumerate(segs)]

    def _emf(self, t: FloatArray) -> FloatArray:
        """E(t) in mV wherever asked (no range check), sub-range by sub-range."""
        out = np.empty(t.shape, dtype=np.float64)
        for m, lo, c in self._segments(t):
            if not m.any():
                continue
            tm = t[m]
            e = _horner(c, tm)
            if self.type == "K" and lo == 0.0:
                a0, a1, a2 = K_EXPONENTIAL
                d = tm - a2
                e += a0 * np.exp(a1 * d * d)
            out[m] = e
        return out

    def _seebeck(self, t: FloatArray) -> FloatArray:
        """dE/dt in mV/K wherever asked."""
        out = np.empty(t.shape, dtype=np.float64)
        for m, lo, c in self._segments(t):
            if not m.any():
                continue
            tm = t[m]
            sb = _horner_derivative(c, tm)
            if self.type == "K" and lo == 0.0:
                a0, a1, a2 = K_EXPONENTIAL
                d = tm - a2
                sb += a0 * np.exp(a1 * d * d) * 2.0 * a1 * d
            out[m] = sb
        return out

    def emf_mv(self, t_c: npt.ArrayLike) -> tuple[FloatArray, FlagArray]:
        """E(t) in mV against a 0 °C reference junction, and a flag array beside it.

        Outside the reference function's range: NaN with ``Flag.OUT_OF_RANGE``
        (ends inclusive within ``EDGE_TOL_K``); not a number: ``INVALID_INPUT``.
        """
        t = np.asarray(t_c, dtype=np.float64)
        flags = np.zeros(t.shape, dtype=FLAG_DTYPE)
        finite = np.isfinite(t)
        inside = within(t, self.t_min_c, self.t_max_c)
        flags[~finite] = FLAG_DTYPE(Flag.INVALID_INPUT)
        flags[finite & ~inside] = FLAG_DTYPE(Flag.OUT_OF_RANGE)
        tc = np.clip(np.where(inside, t, 0.0), self.t_min_c, self.t_max_c)
        e = self._emf(np.atleast_1d(tc)).reshape(t.shape)
        return np.where(inside, e, np.nan), flags

    def seebeck_mv_per_k(self, t_c: npt.ArrayLike) -> FloatArray:
        """dE/dt in mV/K (NaN outside the reference function's range)."""
        t = np.asarray(t_c, dtype=np.float64)
        inside = within(t, self.t_min_c, self.t_max_c)
        tc = np.clip(np.where(inside, t, 0.0), self.t_min_c, self.t_max_c)
        s = self._seebeck(np.atleast_1d(tc)).reshape(t.shape)
        return np.where(inside, s, np.nan)

    # ------------------------------------------------------------ t(E)

    def emf_limits_mv(self) -> tuple[float, float]:
        """The emf at the ends of the inverse range, ends inclusive within ``EDGE_TOL_K``."""
        lo = float(self._emf(np.array([self.inverse_t_min_c - EDGE_TOL_K]))[0])
        hi = float(self._emf(np.array([self.inverse_t_max_c + EDGE_TOL_K]))[0])
        return lo, hi

    def temperature(self, e_mv: npt.ArrayLike) -> tuple[FloatArray, FlagArray]:
        """Temperature in °C of emfs ``e_mv`` (reference junction at 0 °C), and a flag array beside it."""
        e = np.asarray(e_mv, dtype=np.float64)
        shape = e.shape
        flat = np.ascontiguousarray(e).reshape(-1)
        out = np.empty(flat.size, dtype=np.float64)
        flags = np.zeros(flat.size, dtype=FLAG_DTYPE)
        e_lo, e_hi = self.emf_limits_mv()
        t_lo, t_hi = self.inverse_t_min_c, self.inverse_t_max_c
        with np.errstate(invalid="ignore", over="ignore"):
            for start in range(0, flat.size, _CHUNK):
                es = flat[start:start + _CHUNK]
                good = (es >= e_lo) & (es <= e_hi)
                t = self._seed(np.where(good, es, 0.0))
                np.clip(t, t_lo, t_hi, out=t)
                for _ in range(_NEWTON_MAX):
                    step = (self._emf(t) - es) / self._seebeck(t)
                    step[~good] = 0.0
                    t -= step
                    np.clip(t, t_lo, t_hi, out=t)
                    if not np.max(np.abs(step), initial=0.0) > _NEWTON_TOL_C:
                        break
                t[~good] = np.nan
                out[start:start + es.size] = t
                bad = np.flatnonzero(~good)
                if bad.size:
                    ev = es[bad]
                    flags[start + bad] = np.where(np.isfinite(ev), FLAG_DTYPE(Flag.OUT_OF_RANGE),
                                                  FLAG_DTYPE(Flag.INVALID_INPUT))
        return out.reshape(shape), flags.reshape(shape)

    def _seed(self, e: FloatArray) -> FloatArray:
        """The Monograph's inverse polynomial, sub-range by sub-range (a few hundredths of a kelvin off)."""
        segs = INVERSE[self.type]
        out = np.empty(e.shape, dtype=np.float64)
        done = np.zeros(e.shape, dtype=bool)
        for i, (_e_lo, e_hi, _t_lo, _t_hi, d) in enumerate(segs):
            m = ~done & ((e <= e_hi) if i + 1 < len(segs) else True)
            if np.any(m):
                out[m] = _horner(d, e[m])
                done |= m
        return out


# ---------------------------------------------------------------- tolerance classes


@dataclass(frozen=True)
class TcTolerance:
    """An IEC 60584-1 tolerance class of one type: the greater of ``a_c`` and ``b_per_c``·|t| over its range.

    ``above_c`` (types R and S, class 1): above it the bound is
    a + ``slope_per_c``·(t − above_c) instead.
    """

    type: str
    name: str
    a_c: float
    b_per_c: float
    t_min_c: float
    t_max_c: float
    above_c: float | None = None
    slope_per_c: float = 0.0

    standard = "IEC 60584-1"
    element = ""

    def bound_c(self, t_c: npt.ArrayLike) -> FloatArray:
        t = np.asarray(t_c, dtype=np.float64)
        bound = np.maximum(self.a_c, self.b_per_c * np.abs(t))
        if self.above_c is not None:
            bound = np.where(t > self.above_c, self.a_c + self.slope_per_c * (t - self.above_c), bound)
        return bound

    def in_range(self, t_c: npt.ArrayLike) -> npt.NDArray[np.bool_]:
        return within(t_c, self.t_min_c, self.t_max_c)

    def describe(self) -> str:
        if self.above_c is not None:
            rule = f"±{self.a_c:g} °C, above {self.above_c:g} °C ±[{self.a_c:g} + {self.slope_per_c:g}·(t − {self.above_c:g})]"
        elif self.b_per_c:
            rule = f"±{self.a_c:g} °C or ±{self.b_per_c:g}·|t|, whichever is greater"
        else:
            rule = f"±{self.a_c:g} °C"
        return f"type {self.type} class {self.name}: {rule}, over {self.t_min_c:g}…{self.t_max_c:g} °C"


def _cls(types: str, name: str, a: float, b: float, lo: float, hi: float, **kw: float) -> dict[tuple[str, str], TcTolerance]:
    return {(t, name): TcTolerance(t, name, a, b, lo, hi, **kw) for t in types}  # type: ignore[arg-type]


#: IEC 60584-1:2013 tolerance classes (from memory of its table; the same as IEC 60584-2:1982):
#: (type, class) → the class. A type a class does not list has no such class.
TOLERANCE_CLASSES: dict[tuple[str, str], TcTolerance] = {
    **_cls("T", "1", 0.5, 0.004, -40.0, 350.0),
    **_cls("T", "2", 1.0, 0.0075, -40.0, 350.0),
    **_cls("T", "3", 1.0, 0.015, -200.0, 40.0),
    **_cls("E", "1", 1.5, 0.004, -40.0, 800.0),
    **_cls("E", "2", 2.5, 0.0075, -40.0, 900.0),
    **_cls("E", "3", 2.5, 0.015, -200.0, 40.0),
    **_cls("J", "1", 1.5, 0.004, -40.0, 750.0),
    **_cls("J", "2", 2.5, 0.0075, -40.0, 750.0),
    **_cls("KN", "1", 1.5, 0.004, -40.0, 1000.0),
    **_cls("KN", "2", 2.5, 0.0075, -40.0, 1200.0),
    **_cls("KN", "3", 2.5, 0.015, -200.0, 40.0),
    **_cls("RS", "1", 1.0, 0.0, 0.0, 1600.0, above_c=1100.0, slope_per_c=0.003),
    **_cls("RS", "2", 1.5, 0.0025, 0.0, 1600.0),
    **_cls("B", "2", 1.5, 0.0025, 600.0, 1700.0),
    **_cls("B", "3", 4.0, 0.005, 600.0, 1700.0),
}


def tc_tolerance(tc_type: str, name: str) -> TcTolerance:
    """The IEC 60584-1 class ``name`` (1, 2 or 3) of a type.

    Raises:
        InputError: the type has no such class.
    """
    key = (tc_type, str(name).strip())
    found = TOLERANCE_CLASSES.get(key)
    if found is None:
        have = sorted(c for t, c in TOLERANCE_CLASSES if t == tc_type)
        raise InputError(f"IEC 60584-1 has no class {name!r} for type {tc_type}; it has class "
                         f"{', '.join(have) or 'none'}")
    return found
