"""Temperature error of a sensor off its nominal curve: Monte Carlo and GUM, side by side.

A real sensor differs from the nominal Callendar–Van Dusen curve. Here it
differs in R0 and in the linear coefficient A:

    R(t) = (R0 + δR0) · (1 + (A + δA)·t + B·t² + C·(t − 100)·t³·[t < 0]),

with δR0 and δA independent and rectangular on ±their half-widths (what a
tolerance or a data sheet bound says, JCGM 100:2008, 4.3.7). A reading of that
sensor converted with the nominal curve is off by e(t) = t_read − t.

``mc_error_band`` propagates the two distributions through the exact
conversion, as JCGM 101:2008 (GUM Supplement 1) describes; ``gum_error_band``
gives the first-order answer of the law of propagation of uncertainty
(JCGM 100:2008, 5.1.2). ``class_half_widths`` turns an IEC 60751 tolerance
class into the two half-widths, so the Monte Carlo envelope can be compared
with the class bound.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751, CvdCurve, resistance, slope, temperature
from soaklog.sensors.tolerance import ToleranceClass

__all__ = [
    "DeviationHalfWidths",
    "McErrorBand",
    "GumErrorBand",
    "DEFAULT_DRAWS",
    "mc_error_band",
    "gum_error_band",
    "class_half_widths",
]

FloatArray = npt.NDArray[np.float64]

#: JCGM 101:2008, 7.2.2: M should be at least 10⁴/(1 − p) for a 100p %
#: coverage interval; 2·10⁵ for p = 0.95 (from memory of the Supplement)
DEFAULT_DRAWS = 200_000

#: grid step for the class half-width search; the constraint it evaluates is
#: smooth in t, so a finer step changes the result by far less than 1e-6
_CLASS_GRID_STEP_C = 0.5


@dataclass(frozen=True)
class DeviationHalfWidths:
    """Half-widths of the rectangular deviations of a sensor from its nominal curve.

    Attributes:
        r0_ohm: half-width of δR0, ohm.
        a_per_c: half-width of δA, 1/°C.
    """

    r0_ohm: float
    a_per_c: float

    def __post_init__(self) -> None:
        for label, v in (("R0 half-width", self.r0_ohm), ("A half-width", self.a_per_c)):
            if not (math.isfinite(v) and v >= 0.0):
                raise InputError(f"{label} must be a finite value >= 0, got {v!r}")


@dataclass(frozen=True, eq=False)
class McErrorBand:
    """Monte Carlo distribution of the temperature error at each grid temperature.

    Attributes:
        t_c: the true temperatures, °C.
        mean_c: mean error, K.
        std_c: standard deviation of the error (JCGM 101:2008, 7.6), K.
        low_c, high_c: the probabilistically symmetric coverage interval
            (JCGM 101:2008, 7.7), K.
        envelope_c: the largest |error| among the draws, K.
        coverage: the coverage probability of ``low_c…high_c``.
        n_draws: number of Monte Carlo trials.
    """

    t_c: FloatArray
    mean_c: FloatArray
    std_c: FloatArray
    low_c: FloatArray
    high_c: FloatArray
    envelope_c: FloatArray
    coverage: float
    n_draws: int


@dataclass(frozen=True, eq=False)
class GumErrorBand:
    """First-order (GUM) standard uncertainty of the temperature error.

    Attributes:
        t_c: the true temperatures, °C.
        sensitivity_r0_c_per_ohm: ∂e/∂δR0 = R(t)/(R0·dR/dt), K/ohm.
        sensitivity_a_c2: ∂e/∂δA = R0·t/(dR/dt), K·°C.
        u_c: combined standard uncertainty of the error, K.
    """

    t_c: FloatArray
    sensitivity_r0_c_per_ohm: FloatArray
    sensitivity_a_c2: FloatArray
    u_c: FloatArray


def _read_only(a: FloatArray) -> FloatArray:
    a = np.array(a, dtype=np.float64, copy=True)
    a.setflags(write=False)
    return a


def _grid(t_true_c: npt.ArrayLike, curve: CvdCurve) -> FloatArray:
    t = np.asarray(t_true_c, dtype=np.float64)
    if t.ndim > 1:
        raise InputError(f"the temperature grid must be a scalar or 1-D, got shape {t.shape}")
    t = np.atleast_1d(t)
    if not np.all(np.isfinite(t)):
        raise InputError(f"grid temperatures must be finite, got {t.tolist()!r}")
    outside = t[(t < curve.t_min_c) | (t > curve.t_max_c)]
    if outside.size:
        raise InputError(
            f"grid temperatures {outside.tolist()!r} °C lie outside the curve's range "
            f"{curve.t_min_c:g}…{curve.t_max_c:g} °C; narrow the grid"
        )
    return t


def _sensitivities(t: FloatArray, curve: CvdCurve) -> tuple[FloatArray, FloatArray]:
    """∂e/∂δR0 and ∂e/∂δA at zero deviation: ∂R/∂input divided by dR/dt."""
    s = slope(t, curve)
    return resistance(t, curve) / (curve.r0_ohm * s), curve.r0_ohm * t / s


def gum_error_band(
    t_true_c: npt.ArrayLike, half_widths: DeviationHalfWidths, *, curve: CvdCurve = IEC_60751
) -> GumErrorBand:
    """Standard uncertainty of the temperature error by the GUM law of propagation.

    u(e)² = (c_R0·u(δR0))² + (c_A·u(δA))² for uncorrelated inputs
    (JCGM 100:2008, 5.1.2), with u = half-width/√3 for a rectangular
    distribution (JCGM 100:2008, 4.3.7).

    Raises:
        InputError: a grid that is not finite or leaves the curve's range.
    """
    t = _grid(t_true_c, curve)
    c_r0, c_a = _sensitivities(t, curve)
    u_r0 = half_widths.r0_ohm / math.sqrt(3.0)
    u_a = half_widths.a_per_c / math.sqrt(3.0)
    u = np.hypot(c_r0 * u_r0, c_a * u_a)
    return GumErrorBand(
        t_c=_read_only(t),
        sensitivity_r0_c_per_ohm=_read_only(c_r0),
        sensitivity_a_c2=_read_only(c_a),
        u_c=_read_only(u),
    )


def _symmetric_interval_ranks(m: int, p: float) -> tuple[int, int]:
    """1-based ranks (r, r + q) of the probabilistically symmetric interval.

    JCGM 101:2008, 7.7.2 (from memory): q = pM if that is an integer, else the
    integer part of pM + 1/2; r = (M − q)/2 if that is an integer, else the
    integer part of (M − q + 1)/2.
    """
    # for an integer pM, the integer part of pM + 1/2 is pM itself
    q = int(math.floor(p * m + 0.5))
    r = (m - q) // 2 if (m - q) % 2 == 0 else (m - q + 1) // 2
    return r, r + q


def mc_error_band(
    t_true_c: npt.ArrayLike,
    half_widths: DeviationHalfWidths,
    rng: np.random.Generator,
    *,
    n_draws: int = DEFAULT_DRAWS,
    coverage: float = 0.95,
    curve: CvdCurve = IEC_60751,
) -> McErrorBand:
    """Distribution of the temperature error over a grid, by Monte Carlo (JCGM 101:2008).

    One population of ``n_draws`` sensors is drawn (δR0 and δA independent,
    rectangular) and each is read at every grid temperature, so the band at
    neighbouring temperatures describes the same sensors.

    Args:
        t_true_c: true temperatures, °C, within the curve's range.
        half_widths: of δR0 and δA.
        rng: the random generator; pass a seeded one for reproducible results.
        n_draws: Monte Carlo trials M; JCGM 101:2008, 7.2.2 suggests at
            least 10⁴/(1 − coverage).
        coverage: probability p of the symmetric coverage interval.
        curve: the nominal curve the readings are converted with.

    Raises:
        InputError: a grid outside the curve's range, a coverage outside (0, 1),
            or too few draws for the interval to exist.
    """
    if not isinstance(rng, np.random.Generator):
        raise InputError(
            f"rng must be a numpy.random.Generator, got {type(rng).__name__}; "
            "use numpy.random.default_rng(seed)"
        )
    if not (0.0 < coverage < 1.0):
        raise InputError(f"coverage must lie strictly between 0 and 1, got {coverage!r}")
    m = int(n_draws)
    if m != n_draws or m < 2:
        raise InputError(f"n_draws must be an integer >= 2, got {n_draws!r}")
    r_lo, r_hi = _symmetric_interval_ranks(m, coverage)
    if r_lo < 1 or r_hi > m:
        raise InputError(
            f"{m} draws are too few for a {coverage:.0%} coverage interval; JCGM 101:2008, "
            f"7.2.2 recommends at least {math.ceil(10_000 / (1.0 - coverage))}"
        )
    t = _grid(t_true_c, curve)
    if half_widths.r0_ohm >= curve.r0_ohm:
        raise InputError(
            f"an R0 half-width of {half_widths.r0_ohm:g} ohm allows a sensor of zero resistance "
            f"(R0 = {curve.r0_ohm:g} ohm); give the deviation, not the resistance"
        )

    # The reading of a deviating sensor can fall just outside the nominal
    # range at the range ends; the inverse is still exact there, so convert
    # with the range widened by twice the worst first-order error.
    c_r0, c_a = _sensitivities(t, curve)
    margin = 1.0 + 2.0 * float(
        np.max(np.abs(c_r0) * half_widths.r0_ohm + np.abs(c_a) * half_widths.a_per_c)
    )
    try:
        wide = dataclasses.replace(
            curve, t_min_c=curve.t_min_c - margin, t_max_c=curve.t_max_c + margin
        )
    except ValueError as exc:
        raise InputError(
            f"the deviations are too large for curve {curve.name!r}: its readings would leave "
            f"the range where it rises ({exc})"
        ) from exc

    d_r0 = rng.uniform(-half_widths.r0_ohm, half_widths.r0_ohm, m).astype(np.float64, copy=False)
    d_a = rng.uniform(-half_widths.a_per_c, half_widths.a_per_c, m).astype(np.float64, copy=False)
    scale = curve.r0_ohm + d_r0

    g = t.size
    mean = np.empty(g, dtype=np.float64)
    std = np.empty(g, dtype=np.float64)
    low = np.empty(g, dtype=np.float64)
    high = np.empty(g, dtype=np.float64)
    env = np.empty(g, dtype=np.float64)
    for i, ti in enumerate(t):
        w = float(resistance(ti, curve)) / curve.r0_ohm
        r = scale * (w + d_a * ti)
        t_read, _ = temperature(r, wide)
        e = t_read - ti
        if not np.all(np.isfinite(e)):
            raise InputError(
                f"at {ti:g} °C some deviating sensors read outside the curve {curve.name!r}; "
                "the half-widths are too large for it"
            )
        mean[i] = e.mean()
        std[i] = e.std(ddof=1)  # JCGM 101:2008, 7.6: divisor M − 1
        part = np.partition(e, (r_lo - 1, r_hi - 1))
        low[i], high[i] = part[r_lo - 1], part[r_hi - 1]
        env[i] = np.max(np.abs(e))
    return McErrorBand(
        t_c=_read_only(t),
        mean_c=_read_only(mean),
        std_c=_read_only(std),
        low_c=_read_only(low),
        high_c=_read_only(high),
        envelope_c=_read_only(env),
        coverage=float(coverage),
        n_draws=m,
    )


def class_half_widths(tol: ToleranceClass, curve: CvdCurve = IEC_60751) -> DeviationHalfWidths:
    """The R0 and A half-widths that fill an IEC 60751 tolerance class ±(a + b·|t|).

    The class bound at 0 °C, a, fixes δR0: the largest R0 deviation whose
    reading at 0 °C is still within ±a. The slope part b·|t| fixes δA: the
    largest A deviation for which a sensor at both limits at once (the worst
    case, since the reading is monotonic in δR0 and δA) stays within
    ±(a + b·|t|) at every temperature of the class's validity range,
    evaluated exactly through the nominal curve on a 0.5 °C grid. The worst
    case then touches the bound at 0 °C and where the constraint binds
    (usually an end of the range), and stays inside it elsewhere.

    Raises:
        InputError: a class that the R0 deviation alone already exhausts.
    """
    r0 = curve.r0_ohm
    a = tol.a_c
    # IEC 60751 states the class in kelvin; in ohm at 0 °C it is R(±a) − R0
    h_r0 = float(min(resistance(a, curve) - r0, r0 - resistance(-a, curve)))

    n = max(2, int(math.ceil((tol.t_max_c - tol.t_min_c) / _CLASS_GRID_STEP_C)) + 1)
    t = np.linspace(tol.t_min_c, tol.t_max_c, n, dtype=np.float64)
    t = t[t != 0.0]
    bound = tol.bound_c(t)
    w = resistance(t, curve) / r0
    abs_t = np.abs(t)
    # largest R at (R0 + h)·(W + δA·|t|) must not read above t + bound,
    # smallest at (R0 − h)·(W − δA·|t|) not below t − bound
    upper = (resistance(t + bound, curve) / (r0 + h_r0) - w) / abs_t
    lower = (w - resistance(t - bound, curve) / (r0 - h_r0)) / abs_t
    h_a = float(min(np.min(upper), np.min(lower)))
    if not h_a > 0.0:
        raise InputError(
            f"{tol.describe()}: the R0 deviation alone reaches the bound somewhere in the range, "
            "leaving no room for a slope deviation"
        )
    return DeviationHalfWidths(r0_ohm=h_r0, a_per_c=h_a)
