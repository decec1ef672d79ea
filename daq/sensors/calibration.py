"""Fit one sensor's own Callendar–Van Dusen coefficients to calibration points.

A calibration gives pairs (reference temperature, measured resistance). The
Callendar–Van Dusen equation of IEC 60751:2008, 4.2,

    R(t) = R0 + (R0·A)·t + (R0·B)·t² + (R0·C)·(t − 100)·t³·[t < 0],

is linear in the products (R0, R0·A, R0·B, R0·C), so the fit is ordinary
linear least squares and needs no starting values. C acts below 0 °C only; it
is fitted when points below 0 °C support it and otherwise held at a fixed
value (IEC 60751's by default), so that the linear problem keeps the form
R = R0·(1 + C·g(t)) + (R0·A)·t + (R0·B)·t².

The result keeps the span of the reference temperatures: a reading converted
outside it is an extrapolation of the calibration, which the pipeline flags
(``Flag.CALIBRATION_EXTRAPOLATED``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from soaklog.errors import CalibrationError
from soaklog.sensors.cvd import IEC_60751, CvdCurve, resistance, slope
from soaklog.sensors.flags import FLAG_DTYPE, Flag, within

__all__ = ["CalibrationFit", "fit_cvd"]

FloatArray = npt.NDArray[np.float64]

#: above this condition number of the column-scaled design matrix the fitted
#: coefficients amplify measurement noise by more than a millionfold; the fit
#: is still made but says so (common practice, no published source)
_COND_WARN = 1e6
#: below this relative size (1 mOhm on a Pt100, about 2.5 mK) the standard C
#: term at the coldest point is lost in ordinary calibration uncertainty, so a
#: fitted C there is mostly noise (common practice, no published source)
_C_TERM_WARN = 1e-5


@dataclass(frozen=True, eq=False)
class CalibrationFit:
    """A fitted sensor curve with the evidence of how well it fits its points.

    Attributes:
        curve: the fitted curve (R0, A, B, C) over the IEC 60751 range.
        t_ref_c: the reference temperatures of the points, °C.
        r_ohm: the measured resistances of the points, ohm.
        residual_ohm: measured minus fitted resistance at each point.
        residual_c: ``residual_ohm`` divided by dR/dt of the fitted curve: about
            the temperature the fitted curve reads at each point minus the
            reference temperature.
        rms_residual_ohm, rms_residual_c: root mean square of the residuals.
        residual_std_ohm: sqrt(Σ residual² / dof), the standard deviation of
            one point about the fit; NaN when ``dof`` is 0.
        dof: degrees of freedom, points minus fitted coefficients.
        fitted_c: whether C was fitted (else it was held at a fixed value).
        t_min_c, t_max_c: the span of the reference temperatures.
        condition_number: of the column-scaled design matrix; large values mean
            the points do not pin the coefficients down.
        warnings: plain-text caveats about the fit (empty when there are none).
    """

    curve: CvdCurve
    t_ref_c: FloatArray
    r_ohm: FloatArray
    residual_ohm: FloatArray
    residual_c: FloatArray
    rms_residual_ohm: float
    rms_residual_c: float
    residual_std_ohm: float
    dof: int
    fitted_c: bool
    t_min_c: float
    t_max_c: float
    condition_number: float
    warnings: tuple[str, ...]

    @property
    def n_points(self) -> int:
        return int(self.t_ref_c.size)

    @property
    def n_coefficients(self) -> int:
        """How many coefficients were fitted: 3 (R0, A, B) or 4 (with C)."""
        return 4 if self.fitted_c else 3

    def in_span(self, t_c: npt.ArrayLike) -> npt.NDArray[np.bool_]:
        """Whether ``t_c`` lies within the span of the calibration points, ends inclusive (NaN does not)."""
        return within(t_c, self.t_min_c, self.t_max_c)

    def extrapolation_flags(self, t_c: npt.ArrayLike) -> npt.NDArray[np.uint16]:
        """``Flag.CALIBRATION_EXTRAPOLATED`` where ``t_c`` lies outside the span, else 0.

        NaN temperatures get no flag here: they are already withheld by the
        conversion that produced them, with its own flag.
        """
        t = np.asarray(t_c, dtype=np.float64)
        outside = ~np.isnan(t) & ~within(t, self.t_min_c, self.t_max_c)
        return np.where(outside, FLAG_DTYPE(Flag.CALIBRATION_EXTRAPOLATED), FLAG_DTYPE(0)).astype(
            FLAG_DTYPE
        )


def _c_term(t: FloatArray) -> FloatArray:
    """(t − 100)·t³ below 0 °C and 0 above: the shape C multiplies (IEC 60751:2008, 4.2)."""
    return np.where(t < 0.0, (t - 100.0) * t**3, 0.0)


def _read_only(a: FloatArray) -> FloatArray:
    a = np.array(a, dtype=np.float64, copy=True)
    a.setflags(write=False)
    return a


def fit_cvd(
    t_ref_c: npt.ArrayLike,
    r_ohm: npt.ArrayLike,
    *,
    fit_c: bool | None = None,
    c_fixed: float = IEC_60751.c,
    name: str = "calibration fit",
) -> CalibrationFit:
    """Fit R0, A, B (and C) of the Callendar–Van Dusen equation to calibration points.

    Args:
        t_ref_c: reference temperatures, °C, within the IEC 60751 range
            −200…850 °C.
        r_ohm: the sensor's resistance at each reference temperature, ohm.
        fit_c: ``True`` fits C (needs points below 0 °C), ``False`` holds C at
            ``c_fixed``; ``None`` (default) fits C when at least one point is
            below 0 °C and there are at least four points at four distinct
            temperatures.
        c_fixed: the value of C when C is not fitted; it matters only for
            readings below 0 °C (and for points below 0 °C in the fit).
        name: recorded as the curve's name.

    Returns:
        The fit; its ``warnings`` say when the fit is exactly determined (no
        residual to judge it by) or poorly conditioned.

    Raises:
        CalibrationError: inputs that are not matching 1-D arrays of finite
            values, non-positive resistances, temperatures outside −200…850 °C,
            fewer points or distinct temperatures than coefficients, C asked
            for with no point below 0 °C, a rank-deficient design matrix, or
            coefficients that do not give a rising curve.
    """
    t = np.asarray(t_ref_c, dtype=np.float64)
    r = np.asarray(r_ohm, dtype=np.float64)
    if t.ndim != 1 or r.ndim != 1 or t.shape != r.shape:
        raise CalibrationError(
            f"temperatures and resistances must be 1-D sequences of equal length, got shapes "
            f"{t.shape} and {r.shape}; pass one temperature per resistance"
        )
    if not np.all(np.isfinite(t)):
        raise CalibrationError(f"reference temperatures must be finite, got {t.tolist()!r}")
    if not np.all(np.isfinite(r) & (r > 0.0)):
        bad = r[~(np.isfinite(r) & (r > 0.0))]
        raise CalibrationError(
            f"resistances must be finite and positive, got {bad.tolist()!r} ohm; "
            "check the points for overloads or sign errors"
        )
    # the equation is defined over −200…850 °C only (IEC 60751:2008, 4.2)
    lo, hi = IEC_60751.t_min_c, IEC_60751.t_max_c
    outside = t[(t < lo) | (t > hi)]
    if outside.size:
        raise CalibrationError(
            f"reference temperatures {outside.tolist()!r} °C lie outside the Callendar–Van Dusen "
            f"range {lo:g}…{hi:g} °C; drop those points"
        )

    n = t.size
    n_distinct = int(np.unique(t).size)
    below = t < 0.0
    n_below = int(np.unique(t[below]).size)
    notes: list[str] = []

    if fit_c is None:
        fit_c = n_below >= 1 and n >= 4 and n_distinct >= 4
        if n_below >= 1 and not fit_c:
            notes.append(
                f"C not fitted (only {n} points at {n_distinct} distinct temperatures, 4 needed); "
                f"held at {c_fixed:g}"
            )
    if fit_c and n_below == 0:
        raise CalibrationError(
            "C was asked for but no calibration point lies below 0 °C, where C acts; "
            "add points below 0 °C or fit with fit_c=False"
        )
    p = 4 if fit_c else 3
    unknowns = "R0, A, B, C" if fit_c else "R0, A, B"
    if n < p:
        raise CalibrationError(
            f"{n} point(s) cannot determine {p} coefficients ({unknowns}); give at least {p} points"
        )
    if n_distinct < p:
        raise CalibrationError(
            f"the points lie at only {n_distinct} distinct temperature(s) "
            f"({np.unique(t).tolist()!r} °C) but {p} coefficients ({unknowns}) need {p}; "
            "add points at other temperatures"
        )

    # Columns scaled to comparable size (t/100 °C, C term by its largest value)
    # so the condition number and the rank test describe the points, not units.
    g = _c_term(t)
    tau = t / 100.0
    cols = [np.ones(n, dtype=np.float64), tau, tau * tau]
    scales = [1.0, 100.0, 1e4]
    if fit_c:
        g_scale = float(np.max(np.abs(g)))
        cols.append(g / g_scale)
        scales.append(g_scale)
    else:
        # R0 multiplies (1 + C·g(t)) when C is held fixed: still linear in R0
        cols[0] = 1.0 + c_fixed * g
    x = np.column_stack(cols).astype(np.float64, copy=False)

    sv = np.linalg.svd(x, compute_uv=False)
    # numpy's default rank tolerance (numpy.linalg.matrix_rank)
    tol = sv[0] * max(x.shape) * np.finfo(np.float64).eps
    rank = int(np.sum(sv > tol))
    if rank < p:
        raise CalibrationError(
            f"the design matrix has rank {rank} < {p}: the temperatures {np.unique(t).tolist()!r} °C "
            f"cannot separate {unknowns}; spread the points over the range"
            + ("" if fit_c or n_below == 0 else f", or check c_fixed={c_fixed:g}")
        )
    cond = float(sv[0] / sv[-1])

    coef_scaled, *_ = np.linalg.lstsq(x, r, rcond=None)
    coef = coef_scaled / np.asarray(scales, dtype=np.float64)
    r0 = float(coef[0])
    a = float(coef[1] / r0)
    b = float(coef[2] / r0)
    c = float(coef[3] / r0) if fit_c else float(c_fixed)
    try:
        curve = CvdCurve(r0_ohm=r0, a=a, b=b, c=c, name=name)
    except ValueError as exc:
        raise CalibrationError(
            f"the points give R0={r0:.6g} ohm, A={a:.6g}, B={b:.6g}, C={c:.6g}, which is not a "
            f"platinum curve ({exc}); check the points for mix-ups"
        ) from exc

    res = r - resistance(t, curve)
    res_c = res / slope(t, curve)
    dof = n - p
    if dof == 0:
        notes.append(
            f"exactly determined: {n} points for {p} coefficients, so the residuals are zero by "
            "construction and do not show how good the calibration is; add points to check it"
        )
    if fit_c and n_below == 1:
        notes.append("C rests on a single temperature below 0 °C; add another to check it")
    if fit_c:
        t_cold = float(np.min(t))
        c_term = abs(IEC_60751.c * float(_c_term(np.float64(t_cold))))
        if c_term < _C_TERM_WARN:
            notes.append(
                f"C barely acts at the coldest point ({t_cold:g} °C): there the standard C changes "
                f"R by {c_term:.2g}·R0 only, so the fitted C is mostly noise; add points below "
                "about −30 °C or fit with fit_c=False"
            )
    if cond > _COND_WARN:
        notes.append(
            f"poorly conditioned (condition number {cond:.3g}): the points barely separate "
            f"{unknowns}; spread them over the range"
        )
    ssr = float(np.sum(res * res))
    return CalibrationFit(
        curve=curve,
        t_ref_c=_read_only(t),
        r_ohm=_read_only(r),
        residual_ohm=_read_only(res),
        residual_c=_read_only(res_c),
        rms_residual_ohm=float(np.sqrt(ssr / n)),
        rms_residual_c=float(np.sqrt(np.mean(res_c * res_c))),
        residual_std_ohm=float(np.sqrt(ssr / dof)) if dof > 0 else float("nan"),
        dof=dof,
        fitted_c=bool(fit_c),
        t_min_c=float(np.min(t)),
        t_max_c=float(np.max(t)),
        condition_number=cond,
        warnings=tuple(notes),
    )

