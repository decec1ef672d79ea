"""One channel's measurement model: measured ohms to temperature with its budget.

The chain, in order (each step pure and vectorised):

1. lead wires: subtract what the hook-up adds (both conductors for 2-wire, the
   known imbalance for 3-wire, nothing for 4-wire); conductors inside the
   chamber follow the sensor's own temperature (two fixed-point passes);
2. Callendar–Van Dusen inverse (IEC 60751) on the sensor's resistance;
3. self-heating: the excitation's power in the sensor over the dissipation
   constant gives the rise ΔT = P/δ, subtracted (IEC 60751 self-heating clause);
4. uncertainty budget (JCGM 100): sensor (tolerance class or calibration),
   meter, ADC and reference resistor, leads, self-heating correction.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.sensors import selfheating
from soaklog.sensors.cvd import IEC_60751
from soaklog.sensors.flags import FLAG_DTYPE, WITHHOLDING_UNCERTAINTY, Flag, within
from soaklog.sensors.leads import Leads
from soaklog.sensors.tolerance import ToleranceClass
from soaklog.sensors.uncertainty import Budget, Contribution, combine, normal, rectangular

__all__ = [
    "SensorSpec",
    "ResistanceCurve",
    "SensorTolerance",
    "Calibration",
    "Excitation",
    "MeterSpec",
    "AdcSpec",
    "MeasurementChain",
    "chain_of",
    "Conversion",
    "LARGE_SELF_HEATING_K",
    "OVER_RANGE_FRACTION",
    "decade_range_ohm",
]

FloatArray = npt.NDArray[np.float64]

#: a fixed range reads up to this fraction above its nominal value before the meter
#: reports an overload: most bench DMMs show 120 % of range (common practice, no
#: published source; ``decade_range_ohm`` assumes the same)
OVER_RANGE_FRACTION = 0.2

#: a self-heating correction above this is flagged: the dissipation constant is
#: rarely known better than a factor of two in a real mounting
#: (common practice, no published source)
LARGE_SELF_HEATING_K = 0.1


@dataclass(frozen=True)
class Calibration:
    """A calibration certificate's result for one sensor.

    Attributes:
        expanded_uncertainty_c: U stated on the certificate, in K.
        k: its coverage factor.
        t_min_c, t_max_c: the span of the calibration points; readings
            outside it are flagged as extrapolated.
        certificate: identifier, for the record.
    """

    expanded_uncertainty_c: float
    k: float = 2.0
    t_min_c: float = -200.0
    t_max_c: float = 850.0
    certificate: str = ""

    def __post_init__(self) -> None:
        if not (np.isfinite(self.expanded_uncertainty_c) and self.expanded_uncertainty_c >= 0):
            raise InputError(
                f"calibration uncertainty must be a non-negative number of kelvin, "
                f"got {self.expanded_uncertainty_c!r}"
            )
        if not self.k > 0:
            raise InputError(f"calibration coverage factor k must be positive, got {self.k!r}")
        if not self.t_min_c < self.t_max_c:
            raise InputError(
                f"calibration span {self.t_min_c}…{self.t_max_c} °C is empty; give min < max"
            )


class ResistanceCurve(Protocol):
    """A resistive sensor's curve, as the chain uses it (``cvd.CvdCurve``, ``ntc.NtcCurve``, ``its90.SprtCurve``).

    ``temperature`` gives NaN with a flag outside ``t_min_c``…``t_max_c``;
    ``slope`` is dR/dt in ohm/K (negative for an NTC).
    """

    @property
    def r0_ohm(self) -> float: ...
    @property
    def t_min_c(self) -> float: ...
    @property
    def t_max_c(self) -> float: ...
    @property
    def name(self) -> str: ...
    def resistance(self, t_c: npt.ArrayLike) -> FloatArray: ...
    def temperature(self, r_ohm: npt.ArrayLike) -> tuple[FloatArray, npt.NDArray[np.uint16]]: ...
    def slope(self, t_c: npt.ArrayLike) -> FloatArray: ...


class SensorTolerance(Protocol):
    """What vouches for a sensor without a calibration: a bound in K and where it applies."""

    def bound_c(self, t_c: npt.ArrayLike) -> FloatArray: ...
    def in_range(self, t_c: npt.ArrayLike) -> npt.NDArray[np.bool_]: ...
    def describe(self) -> str: ...


@dataclass(frozen=True)
class SensorSpec:
    """The sensor: its curve, what vouches for it, and its mounting."""

    curve: ResistanceCurve = IEC_60751
    tolerance: ToleranceClass | SensorTolerance | None = None
    calibration: Calibration | None = None
    dissipation_w_per_k: float | None = None

    def __post_init__(self) -> None:
        d = self.dissipation_w_per_k
        if d is not None and not (np.isfinite(d) and d > 0):
            raise InputError(f"dissipation constant must be positive, got {d!r} W/K")


@dataclass(frozen=True)
class Excitation:
    """The measuring current (or voltage) through the sensor.

    ``self_heating_fraction`` is the relative half-width with which the
    self-heating correction is trusted: data-sheet dissipation constants are
    for stated media and flows that a chamber mounting does not reproduce
    (common practice, no published source: take ±50 %).
    """

    current_a: float | None = None
    voltage_v: float | None = None
    self_heating_fraction: float = 0.5

    def __post_init__(self) -> None:
        if (self.current_a is None) == (self.voltage_v is None):
            raise InputError("give the excitation as a current or as a voltage, not both or neither")
        value = self.current_a if self.current_a is not None else self.voltage_v
        if not (value is not None and np.isfinite(value) and value > 0):
            raise InputError(f"excitation must be positive, got {value!r}")
        if not 0 <= self.self_heating_fraction <= 1:
            raise InputError(
                f"self-heating fraction must be within 0…1, got {self.self_heating_fraction!r}"
            )


def _leads_follow_chamber(leads: Leads) -> bool:
    """Whether the lead correction changes with the chamber temperature."""
    c = leads.conductor
    return leads.wiring != 4 and c is not None and c.fixed_ohm is None and c.inside_length_m > 0


def decade_range_ohm(r_ohm: npt.ArrayLike) -> FloatArray:
    """The smallest decade ohms range (100 Ω, 1 kΩ, …) holding ``r_ohm`` with 20 % over-range.

    Most bench DMMs have decade ranges with 20 % over-range (common practice,
    no published source; give the range explicitly when it is known).
    """
    r = np.asarray(r_ohm, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        exp = np.ceil(np.log10(np.maximum(r, 1e-12) / 1.2))
    return np.power(10.0, np.maximum(exp, 2.0))


@dataclass(frozen=True)
class MeterSpec:
    """A multimeter's ohms accuracy, ±(% of reading + % of range), as a bound.

    ``range_ohm`` None means the decade range that holds the reading.
    """

    pct_reading: float = 0.0
    pct_range: float = 0.0
    range_ohm: float | None = None

    def __post_init__(self) -> None:
        if self.pct_reading < 0 or self.pct_range < 0:
            raise InputError(
                f"meter accuracy must be non-negative, got {self.pct_reading}% of reading "
                f"+ {self.pct_range}% of range"
            )
        if self.range_ohm is not None and not self.range_ohm > 0:
            raise InputError(f"meter range must be positive, got {self.range_ohm!r} ohm")

    def bound_ohm(self, r_ohm: npt.ArrayLike) -> FloatArray:
        r = np.asarray(r_ohm, dtype=np.float64)
        rng = decade_range_ohm(r) if self.range_ohm is None else self.range_ohm
        return self.pct_reading / 100.0 * np.abs(r) + self.pct_range / 100.0 * rng


@dataclass(frozen=True)
class AdcSpec:
    """A ratiometric ADC board: R = ratio · R_ref, with an N-bit converter.

    One code step is R_ref / 2^bits (full scale at the reference); rounding
    leaves ±½ step, rectangular (GUM F.2.2.1). The reference resistor's
    tolerance scales every reading by the same factor.
    """

    bits: int = 24
    reference_ohm: float = 400.0
    reference_tolerance_pct: float = 0.0

    def __post_init__(self) -> None:
        if not 1 <= self.bits <= 32:
            raise InputError(f"ADC resolution must be 1…32 bits, got {self.bits!r}")
        if not self.reference_ohm > 0:
            raise InputError(f"reference resistor must be positive, got {self.reference_ohm!r} ohm")
        if self.reference_tolerance_pct < 0:
            raise InputError(
                f"reference tolerance must be non-negative, got {self.reference_tolerance_pct!r} %"
            )

    @property
    def step_ohm(self) -> float:
        return self.reference_ohm / float(2**self.bits)


@dataclass(frozen=True)
class Conversion:
    """The result for an array of readings; every array has the input's shape."""

    measured_ohm: FloatArray
    sensor_ohm: FloatArray
    lead_correction_ohm: FloatArray
    indicated_c: FloatArray
    self_heating_k: FloatArray
    temperature_c: FloatArray
    flags: npt.NDArray[np.uint16]
    budget: Budget

    @property
    def uncertainty_withheld(self) -> npt.NDArray[np.bool_]:
        """Where no uncertainty can be stated: no temperature, or a flag saying the budget lacks a part."""
        return np.isnan(self.temperature_c) | ((self.flags & FLAG_DTYPE(WITHHOLDING_UNCERTAINTY)) != 0)

    @property
    def uncertainty_c(self) -> FloatArray:
        """Combined standard uncertainty u_c in K (NaN where withheld: never a 0 that means "unknown")."""
        return np.where(self.uncertainty_withheld, np.nan, self.budget.combined_k)

    @property
    def expanded_uncertainty_c(self) -> FloatArray:
        """U = k·u_c, k = 2, in K (NaN where withheld)."""
        return np.where(self.uncertainty_withheld, np.nan, self.budget.expanded_k)


@dataclass(frozen=True)
class MeasurementChain:
    """Everything between the meter's number and a temperature, for one channel.

    ``range_ohm`` is the fixed ohms range the readings are taken on (None:
    not known, or autorange); a reading above it by more than the usual
    over-range (``OVER_RANGE_FRACTION``) is withheld with ``Flag.OVER_RANGE``.
    Without it, the range of ``meter`` is used when that gives one.
    """

    sensor: SensorSpec = field(default_factory=SensorSpec)
    leads: Leads = field(default_factory=lambda: Leads(wiring=4))
    excitation: Excitation | None = None
    meter: MeterSpec | None = None
    adc: AdcSpec | None = None
    range_ohm: float | None = None

    def __post_init__(self) -> None:
        if self.range_ohm is not None and not (np.isfinite(self.range_ohm) and self.range_ohm > 0):
            raise InputError(f"meter range must be a positive resistance, got {self.range_ohm!r} ohm")

    @property
    def full_scale_ohm(self) -> float | None:
        """The largest reading the range can give (range plus over-range), or None when not known."""
        rng = self.range_ohm
        if rng is None and self.meter is not None:
            rng = self.meter.range_ohm
        return None if rng is None else rng * (1.0 + OVER_RANGE_FRACTION)

    def convert(
        self,
        measured_ohm: npt.ArrayLike,
        *,
        chamber_c: npt.ArrayLike | None = None,
        ambient_c: float = 20.0,
    ) -> Conversion:
        """Convert measured resistances to corrected temperatures with their budget.

        Args:
            measured_ohm: what the meter or board reports, in ohm.
            chamber_c: temperature of the lead sections inside the chamber;
                by default the sensor's own reading.
            ambient_c: temperature of the lead sections outside.
        """
        r_m = np.asarray(measured_ohm, dtype=np.float64)
        curve = self.sensor.curve
        flags = np.zeros(r_m.shape, dtype=FLAG_DTYPE)

        # 1. leads; the inside part depends on the result, so iterate: the
        # lead's sensitivity (≈0.4 %/K of a small resistance) makes two passes exact
        if chamber_c is not None:
            corr = np.broadcast_to(
                self.leads.correction_ohm(chamber_c=chamber_c, ambient_c=ambient_c), r_m.shape
            ).astype(np.float64)
        else:
            corr = np.broadcast_to(
                self.leads.correction_ohm(chamber_c=ambient_c, ambient_c=ambient_c), r_m.shape
            ).astype(np.float64)
            if _leads_follow_chamber(self.leads):
                for _ in range(2):
                    t_est, _ = curve.temperature(r_m - corr)
                    t_est = np.where(np.isnan(t_est), ambient_c, t_est)
                    corr = np.broadcast_to(
                        self.leads.correction_ohm(chamber_c=t_est, ambient_c=ambient_c), r_m.shape
                    ).astype(np.float64)
        r_s = r_m - corr
        leads_bad = np.isfinite(r_m) & (r_m > 0) & ~(r_s > 0)
        flags[leads_bad] |= FLAG_DTYPE(Flag.LEADS_EXCEED_SENSOR)
        full_scale = self.full_scale_ohm
        if full_scale is not None:
            # a number above what the range can show is not a measurement of the sensor
            over = np.isfinite(r_m) & (r_m > full_scale)
            flags[over] |= FLAG_DTYPE(Flag.OVER_RANGE)
            leads_bad = leads_bad | over

        # 2. Callendar–Van Dusen inverse
        t_ind, cvd_flags = curve.temperature(np.where(leads_bad, np.nan, r_s))
        flags |= np.where(leads_bad, FLAG_DTYPE(0), cvd_flags).astype(FLAG_DTYPE)
        valid = ~np.isnan(t_ind)
        t_safe = np.where(valid, t_ind, 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            sens = 1.0 / curve.slope(t_safe)  # ∂t/∂R, K/ohm

        # 3. self-heating
        rise = np.zeros(r_m.shape, dtype=np.float64)
        exc, diss = self.excitation, self.sensor.dissipation_w_per_k
        if exc is not None and diss is not None:
            with np.errstate(invalid="ignore", divide="ignore"):
                p = selfheating.power_w(
                    np.where(valid, r_s, np.nan), current_a=exc.current_a, voltage_v=exc.voltage_v
                )
                rise = np.where(valid, selfheating.temperature_rise_k(p, diss), 0.0)
            flags[rise > LARGE_SELF_HEATING_K] |= FLAG_DTYPE(Flag.LARGE_SELF_HEATING)
        t = t_ind - rise

        # 4. budget
        contributions = self._budget(r_m, r_s, t_safe - rise, sens, rise, flags, ambient_c)
        budget = combine(contributions)
        return Conversion(r_m, r_s, corr, t_ind, rise, t, flags, budget)

    def at_temperature(self, t_c: npt.ArrayLike, *, ambient_c: float = 20.0) -> Conversion:
        """What the chain gives for a sensor at ``t_c``: the reading it would get, converted.

        The instrument reads the sensor's resistance plus, on a 2-wire input,
        both leads; the budget of the result is the uncertainty the channel
        can reach at those temperatures (what ``check`` and the report show).
        """
        t = np.asarray(t_c, dtype=np.float64)
        r = self.sensor.curve.resistance(t)
        if self.leads.wiring == 2:
            r = r + self.leads.correction_ohm(chamber_c=t, ambient_c=ambient_c)
        return self.convert(r, ambient_c=ambient_c)

    def _budget(
        self,
        r_m: FloatArray,
        r_s: FloatArray,
        t: FloatArray,
        sens: FloatArray,
        rise: FloatArray,
        flags: npt.NDArray[np.uint16],
        ambient_c: float,
    ) -> list[Contribution]:
        out: list[Contribution] = []
        cal, tol = self.sensor.calibration, self.sensor.tolerance
        if cal is not None:
            out.append(
                normal(
                    "sensor_calibration",
                    f"calibration certificate {cal.certificate}".strip()
                    + f", U = {cal.expanded_uncertainty_c:g} K (k = {cal.k:g})",
                    np.full(t.shape, cal.expanded_uncertainty_c),
                    cal.k,
                    "K",
                )
            )
            outside = ~np.isnan(t) & ~within(t, cal.t_min_c, cal.t_max_c)
            flags[outside] |= FLAG_DTYPE(Flag.CALIBRATION_EXTRAPOLATED)
        elif tol is not None:
            out.append(
                rectangular(
                    "sensor_tolerance",
                    f"{getattr(tol, 'standard', '')} {tol.describe()}".strip(),
                    tol.bound_c(t),
                    "K",
                )
            )
            flags[~tol.in_range(t)] |= FLAG_DTYPE(Flag.OUTSIDE_CLASS_RANGE)
        else:
            flags |= FLAG_DTYPE(Flag.NO_SENSOR_SPEC)
        if self.meter is not None:
            m = self.meter
            out.append(
                rectangular(
                    "meter",
                    f"meter ±({m.pct_reading:g} % of reading + {m.pct_range:g} % of range)",
                    m.bound_ohm(r_m),
                    "ohm",
                    sens,
                )
            )
        if self.adc is not None:
            a = self.adc
            out.append(
                rectangular(
                    "adc_resolution",
                    f"{a.bits}-bit converter, ±½ step of {a.step_ohm:.3g} ohm",
                    np.full(r_m.shape, a.step_ohm / 2.0),
                    "ohm",
                    sens,
                )
            )
            if a.reference_tolerance_pct > 0:
                out.append(
                    rectangular(
                        "reference_resistor",
                        f"reference resistor {a.reference_ohm:g} ohm ±{a.reference_tolerance_pct:g} %",
                        a.reference_tolerance_pct / 100.0 * np.abs(r_s),
                        "ohm",
                        sens,
                    )
                )
        lead_bound = self.leads.bound_ohm(chamber_c=t, ambient_c=ambient_c)
        if np.any(np.asarray(lead_bound) > 0):
            out.append(
                rectangular(
                    "leads",
                    f"{self.leads.wiring}-wire lead resistance residual",
                    np.broadcast_to(lead_bound, r_m.shape),
                    "ohm",
                    sens,
                )
            )
        if self.excitation is not None and self.sensor.dissipation_w_per_k is not None:
            frac = self.excitation.self_heating_fraction
            out.append(
                rectangular(
                    "self_heating",
                    f"self-heating correction known to ±{frac:.0%}",
                    frac * rise,
                    "K",
                )
            )
        if not out:
            out.append(rectangular("none", "no uncertainty source given", np.zeros(r_m.shape), "K"))
        return out


def chain_of(
    curve: ResistanceCurve,
    *,
    tolerance: ToleranceClass | SensorTolerance | None = None,
    calibration: Calibration | None = None,
    dissipation_w_per_k: float | None = None,
    leads: Leads | None = None,
    current_a: float | None = None,
    voltage_v: float | None = None,
    meter: MeterSpec | None = None,
    adc: AdcSpec | None = None,
    range_ohm: float | None = None,
) -> MeasurementChain:
    """One channel's chain from its parts (the one place a station channel and ``soaklog convert`` build it)."""
    excitation = None
    if current_a is not None or voltage_v is not None:
        excitation = Excitation(current_a, voltage_v)
    sensor = SensorSpec(curve, tolerance, calibration, dissipation_w_per_k)
    return MeasurementChain(sensor, leads if leads is not None else Leads(4), excitation, meter, adc, range_ohm)
