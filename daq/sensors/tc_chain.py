"""One thermocouple channel's measurement model: measured volts to temperature with its budget.

The chain, in order (pure and vectorised):

1. over-range: a reading above the meter's fixed range (plus its usual 20 %)
   is withheld (``Flag.OVER_RANGE``);
2. cold-junction compensation by adding voltages (IEC 60584-1; NIST
   Monograph 175, "use of the tables"): the hot junction's emf against 0 °C
   is E = E_measured + E(t_cj), with E(t_cj) the reference function at the
   cold junction's temperature — never t_measured + t_cj, which is wrong by
   the curvature of E(t);
3. the exact inverse t = E⁻¹(E) of the reference function;
4. the budget (JCGM 100): the thermocouple's tolerance class (or its
   calibration), the meter's volts accuracy with sensitivity 1/S(t), and the
   cold junction's own uncertainty with sensitivity S(t_cj)/S(t), S = dE/dt
   (GUM 5.1.3: t = E⁻¹(E_m + E(t_cj)), so ∂t/∂t_cj = S(t_cj)/S(t)).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.sensors.flags import FLAG_DTYPE, WITHHOLDING_UNCERTAINTY, Flag, within
from soaklog.sensors.measurement import OVER_RANGE_FRACTION, Calibration
from soaklog.sensors.thermocouple import TcTolerance, Thermocouple
from soaklog.sensors.uncertainty import Budget, Contribution, combine, normal, rectangular

__all__ = ["ColdJunction", "VoltSpec", "ThermocoupleChain", "TcConversion"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True)
class ColdJunction:
    """Where the reference (cold) junction's temperature comes from.

    ``source``: ``"fixed"`` (an ice point, or a junction box held at a known
    temperature: ``fixed_c`` with its ``expanded_uncertainty_c``),
    ``"channel"`` (another channel measures the terminal block: ``channel``;
    its own stored uncertainty is used) or ``"instrument"`` (the instrument
    reports its terminals' temperature; ``expanded_uncertainty_c`` is its
    specification).
    """

    source: Literal["fixed", "channel", "instrument"]
    fixed_c: float | None = None
    expanded_uncertainty_c: float | None = None
    k: float = 2.0
    channel: str | None = None

    def __post_init__(self) -> None:
        if self.source == "fixed" and (self.fixed_c is None or not np.isfinite(self.fixed_c)):
            raise InputError(f"a fixed cold junction needs its temperature, got {self.fixed_c!r}")
        if self.source == "channel" and not self.channel:
            raise InputError("a cold junction measured by another channel needs that channel's name")
        u = self.expanded_uncertainty_c
        if u is not None and not (np.isfinite(u) and u >= 0):
            raise InputError(f"the cold junction's uncertainty must be a non-negative number of kelvin, got {u!r}")
        if not self.k > 0:
            raise InputError(f"coverage factor k must be positive, got {self.k!r}")

    def describe(self) -> str:
        u = "" if self.expanded_uncertainty_c is None else f", U = {self.expanded_uncertainty_c:g} K (k = {self.k:g})"
        if self.source == "fixed":
            return f"cold junction held at {self.fixed_c:g} °C{u}"
        if self.source == "channel":
            return f"cold junction measured by channel {self.channel}"
        return f"cold junction at the instrument's reference{u}"


@dataclass(frozen=True)
class VoltSpec:
    """A meter's DC volts accuracy, ±(% of reading + % of range), as a bound; ``range_v`` the fixed range."""

    pct_reading: float = 0.0
    pct_range: float = 0.0
    range_v: float | None = None

    def __post_init__(self) -> None:
        if self.pct_reading < 0 or self.pct_range < 0:
            raise InputError(f"meter accuracy must be non-negative, got {self.pct_reading}% of reading "
                             f"+ {self.pct_range}% of range")
        if self.range_v is not None and not self.range_v > 0:
            raise InputError(f"meter range must be positive, got {self.range_v!r} V")

    def bound_v(self, e_v: npt.ArrayLike) -> FloatArray:
        e = np.asarray(e_v, dtype=np.float64)
        rng = self.range_v if self.range_v is not None else 0.1  # the 100 mV range most meters read TCs on
        return self.pct_reading / 100.0 * np.abs(e) + self.pct_range / 100.0 * rng


@dataclass(frozen=True)
class TcConversion:
    """The result for an array of readings; every array has the input's shape."""

    measured_v: FloatArray
    cold_junction_c: FloatArray
    emf_mv: FloatArray
    temperature_c: FloatArray
    flags: npt.NDArray[np.uint16]
    budget: Budget

    @property
    def uncertainty_withheld(self) -> npt.NDArray[np.bool_]:
        return (np.isnan(self.temperature_c) | ((self.flags & FLAG_DTYPE(WITHHOLDING_UNCERTAINTY)) != 0)
                | np.isnan(self.budget.combined_k))

    @property
    def uncertainty_c(self) -> FloatArray:
        return np.where(self.uncertainty_withheld, np.nan, self.budget.combined_k)

    @property
    def expanded_uncertainty_c(self) -> FloatArray:
        return np.where(self.uncertainty_withheld, np.nan, self.budget.expanded_k)


@dataclass(frozen=True)
class ThermocoupleChain:
    """Everything between a meter's volts and a temperature, for one thermocouple channel."""

    thermocouple: Thermocouple
    cold_junction: ColdJunction
    tolerance: TcTolerance | None = None
    calibration: Calibration | None = None
    meter: VoltSpec | None = None
    range_v: float | None = None

    #: a thermocouple drives no current (for code that asks a chain for its excitation)
    excitation = None

    @property
    def full_scale_v(self) -> float | None:
        rng = self.range_v if self.range_v is not None else (None if self.meter is None else self.meter.range_v)
        return None if rng is None else rng * (1.0 + OVER_RANGE_FRACTION)

    def convert(
        self,
        measured_v: npt.ArrayLike,
        *,
        cold_junction_c: npt.ArrayLike | None = None,
        cold_junction_u_c: npt.ArrayLike | None = None,
        ambient_c: float = 20.0,
    ) -> TcConversion:
        """Convert measured volts to temperatures with their budget.

        Args:
            measured_v: the meter's readings, in V.
            cold_junction_c: the cold junction's temperature at each reading
                (a channel's; ignored for a fixed cold junction; NaN where
                none is known, which withholds the reading).
            cold_junction_u_c: its expanded uncertainty (k = 2), K, at each
                reading; NaN where none is stated, which withholds the
                uncertainty (``COLD_JUNCTION_UNVOUCHED``).
        """
        e_m = np.asarray(measured_v, dtype=np.float64)
        shape = e_m.shape
        flags = np.zeros(shape, dtype=FLAG_DTYPE)
        cj = self.cold_junction
        if cj.source == "fixed":
            t_cj = np.full(shape, cj.fixed_c, dtype=np.float64)
            u_cj_exp = np.full(shape, np.nan if cj.expanded_uncertainty_c is None else cj.expanded_uncertainty_c)
            k_cj = cj.k
        else:
            if cold_junction_c is None:
                raise InputError(f"the {cj.describe()}: give its temperature at each reading")
            t_cj = np.broadcast_to(np.asarray(cold_junction_c, dtype=np.float64), shape)
            if cold_junction_u_c is not None:
                u_cj_exp = np.broadcast_to(np.asarray(cold_junction_u_c, dtype=np.float64), shape)
                k_cj = 2.0
            else:
                u_cj_exp = np.full(shape, np.nan if cj.expanded_uncertainty_c is None else cj.expanded_uncertainty_c)
                k_cj = cj.k
        tc = self.thermocouple

        bad = ~np.isfinite(e_m)
        flags[bad] |= FLAG_DTYPE(Flag.INVALID_INPUT)
        full = self.full_scale_v
        if full is not None:
            over = np.isfinite(e_m) & (np.abs(e_m) > full)
            flags[over] |= FLAG_DTYPE(Flag.OVER_RANGE)
            bad |= over
        e_cj, cj_flags = tc.emf_mv(t_cj)
        no_cj = cj_flags != 0
        flags[no_cj & ~bad] |= FLAG_DTYPE(Flag.NO_COLD_JUNCTION)
        bad |= no_cj

        # 2. add voltages (mV), never temperatures
        e_total = np.where(bad, np.nan, e_m * 1000.0 + np.where(no_cj, 0.0, e_cj))
        t, t_flags = tc.temperature(e_total)
        flags |= np.where(bad, FLAG_DTYPE(0), t_flags).astype(FLAG_DTYPE)
        valid = np.isfinite(t)
        t_safe = np.where(valid, t, 0.0)

        # 4. budget
        with np.errstate(divide="ignore", invalid="ignore"):
            s_t = tc.seebeck_mv_per_k(t_safe)  # mV/K
            s_cj = tc.seebeck_mv_per_k(np.where(no_cj, 0.0, t_cj))
        out: list[Contribution] = []
        if self.calibration is not None:
            cal = self.calibration
            out.append(normal("sensor_calibration", f"calibration certificate {cal.certificate}".strip()
                              + f", U = {cal.expanded_uncertainty_c:g} K (k = {cal.k:g})",
                              np.full(shape, cal.expanded_uncertainty_c), cal.k, "K"))
            flags[valid & ~within(t_safe, cal.t_min_c, cal.t_max_c)] |= FLAG_DTYPE(Flag.CALIBRATION_EXTRAPOLATED)
        elif self.tolerance is not None:
            tol = self.tolerance
            out.append(rectangular("sensor_tolerance", f"{tol.standard} {tol.describe()}", tol.bound_c(t_safe), "K"))
            flags[valid & ~tol.in_range(t_safe)] |= FLAG_DTYPE(Flag.OUTSIDE_CLASS_RANGE)
        else:
            flags[valid] |= FLAG_DTYPE(Flag.NO_SENSOR_SPEC)
        if self.meter is not None and (self.meter.pct_reading > 0 or self.meter.pct_range > 0):
            m = self.meter
            with np.errstate(divide="ignore", invalid="ignore"):
                sens_v = 1.0 / (s_t / 1000.0)  # K/V
            out.append(rectangular("meter", f"meter ±({m.pct_reading:g} % of reading + {m.pct_range:g} % of range)",
                                   m.bound_v(e_m), "V", sens_v))
        with np.errstate(divide="ignore", invalid="ignore"):
            sens_cj = s_cj / s_t
        out.append(normal("cold_junction", cj.describe(), np.where(np.isnan(u_cj_exp), 0.0, u_cj_exp), k_cj,
                          "K", sens_cj))
        flags[valid & np.isnan(u_cj_exp)] |= FLAG_DTYPE(Flag.COLD_JUNCTION_UNVOUCHED)
        budget = combine(out)
        e_hot = np.where(valid, e_total, np.nan)
        return TcConversion(e_m, np.asarray(t_cj, dtype=np.float64), e_hot, np.where(valid, t, np.nan), flags, budget)

    def at_temperature(self, t_c: npt.ArrayLike, *, ambient_c: float = 20.0,
                       cold_junction_c: float | None = None,
                       cold_junction_u_c: float | None = None) -> TcConversion:
        """What the chain gives for a junction at ``t_c`` with the cold junction at ``cold_junction_c``."""
        t = np.asarray(t_c, dtype=np.float64)
        cj = self.cold_junction
        t_cj = cj.fixed_c if cj.source == "fixed" else (ambient_c if cold_junction_c is None else cold_junction_c)
        e_hot, _ = self.thermocouple.emf_mv(t)
        e_cj, _ = self.thermocouple.emf_mv(t_cj)
        return self.convert((e_hot - e_cj) / 1000.0, cold_junction_c=t_cj, cold_junction_u_c=cold_junction_u_c,
                            ambient_c=ambient_c)
