"""One-off conversions at the bench (`soaklog convert`): options in, records out."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751, CvdCurve
from soaklog.sensors.flags import flag_names
from soaklog.sensors.leads import Conductor, Leads
from soaklog.sensors.measurement import (
    AdcSpec,
    Calibration,
    Conversion,
    MeasurementChain,
    MeterSpec,
    chain_of,
)
from soaklog.sensors.tolerance import tolerance_class

__all__ = ["ConvertOptions", "parse_ohms", "build_chain", "convert_records", "describe_chain"]


@dataclass(frozen=True)
class ConvertOptions:
    """What `soaklog convert` was told, in SI units."""

    r0_ohm: float = 100.0
    coefficients: tuple[float, float, float] | None = None
    curve: str | None = None
    wiring: int = 4
    lead_ohm: float | None = None
    lead_awg: str | None = None
    lead_mm2: float | None = None
    lead_class: int | None = None
    lead_inside_m: float = 0.0
    lead_outside_m: float = 0.0
    imbalance_ohm: float = 0.0
    chamber_c: float | None = None
    ambient_c: float = 20.0
    current_a: float | None = None
    voltage_v: float | None = None
    dissipation_w_per_k: float | None = None
    tolerance_class: str | None = None
    element: str | None = None
    cal_uncertainty_c: float | None = None
    cal_k: float = 2.0
    cal_span_c: tuple[float, float] | None = None
    meter_accuracy_pct: tuple[float, float] | None = None
    meter_range_ohm: float | None = None
    adc_bits: int | None = None
    reference_ohm: float | None = None
    reference_tolerance_pct: float = 0.0


def parse_ohms(texts: Sequence[str]) -> list[float]:
    """Resistances from the command line; every bad one is named at once.

    Raises:
        InputError: a value is not a finite number, or is negative.
    """
    values: list[float] = []
    bad: list[str] = []
    for text in texts:
        try:
            v = float(text)
        except ValueError:
            bad.append(f"{text!r} is not a number")
            continue
        if not math.isfinite(v):
            bad.append(f"{text!r} is not a finite resistance")
        elif v < 0:
            bad.append(f"{text!r} is negative; a resistance is ≥ 0 ohm")
        else:
            values.append(v)
    if bad:
        raise InputError("bad resistance: " + "; ".join(bad))
    if not values:
        raise InputError("give at least one resistance in ohm")
    return values


def _curve(opts: ConvertOptions) -> CvdCurve:
    if opts.curve is not None and opts.coefficients is not None:
        raise InputError("give --curve or --coefficients, not both")
    if opts.curve is not None:
        from soaklog.sensors.curves import named_curve

        base = named_curve(opts.curve)
    elif opts.coefficients is not None:
        a, b, c = opts.coefficients
        try:
            base = CvdCurve(a=a, b=b, c=c, name="user coefficients")
        except ValueError as exc:
            raise InputError(f"--coefficients {a},{b},{c}: {exc}") from exc
    else:
        base = IEC_60751
    if not (math.isfinite(opts.r0_ohm) and opts.r0_ohm > 0):
        raise InputError(f"--r0 must be a positive resistance, got {opts.r0_ohm!r}")
    return base.with_r0(opts.r0_ohm)


def _leads(opts: ConvertOptions) -> Leads:
    if opts.wiring not in (2, 3, 4):
        raise InputError(f"--wiring must be 2, 3 or 4, got {opts.wiring!r}")
    copper = opts.lead_awg is not None or opts.lead_mm2 is not None
    if opts.wiring == 4:
        return Leads(4)
    if opts.lead_ohm is not None and copper:
        raise InputError("give the lead as --lead-ohms or as a copper gauge with lengths, not both")
    if opts.lead_class is not None and opts.lead_mm2 is None:
        raise InputError("--lead-class qualifies a metric cross-section: give --lead-mm2 too")
    if opts.lead_ohm is not None:
        conductor = Conductor.fixed(opts.lead_ohm)
    elif copper:
        conductor = Conductor(
            awg=opts.lead_awg,
            area_mm2=opts.lead_mm2,
            inside_length_m=opts.lead_inside_m,
            outside_length_m=opts.lead_outside_m,
            lead_class=opts.lead_class,
        )
    else:
        raise InputError(
            f"--wiring {opts.wiring} needs the lead resistance: --lead-ohms (one conductor) "
            "or --lead-awg/--lead-mm2 with --lead-inside-m/--lead-outside-m"
        )
    return Leads(opts.wiring, conductor, imbalance_ohm=opts.imbalance_ohm)  # type: ignore[arg-type]


def build_chain(opts: ConvertOptions) -> MeasurementChain:
    """The measurement chain the options describe.

    Raises:
        InputError: contradictory or impossible options, named.
    """
    curve = _curve(opts)
    tol = None
    if opts.tolerance_class is not None:
        tol = tolerance_class(opts.tolerance_class, opts.element)
    elif opts.element is not None:
        raise InputError("--element only qualifies a --class; give the class too")
    cal = None
    if opts.cal_uncertainty_c is not None:
        lo, hi = opts.cal_span_c or (curve.t_min_c, curve.t_max_c)
        cal = Calibration(opts.cal_uncertainty_c, opts.cal_k, lo, hi)
    elif opts.cal_span_c is not None:
        raise InputError("--cal-span needs --cal-uncertainty")
    if opts.dissipation_w_per_k is not None and opts.current_a is None and opts.voltage_v is None:
        raise InputError("--dissipation-mw-per-k needs the excitation: --current-ma or --voltage-v")
    meter = None
    if opts.meter_accuracy_pct is not None:
        meter = MeterSpec(*opts.meter_accuracy_pct, range_ohm=opts.meter_range_ohm)
    adc = None
    if opts.adc_bits is not None or opts.reference_ohm is not None:
        if opts.adc_bits is None or opts.reference_ohm is None:
            raise InputError("a ratiometric board needs both --adc-bits and --reference-ohms")
        adc = AdcSpec(opts.adc_bits, opts.reference_ohm, opts.reference_tolerance_pct)
    return chain_of(curve, tolerance=tol, calibration=cal, dissipation_w_per_k=opts.dissipation_w_per_k,
             leads=_leads(opts), current_a=opts.current_a, voltage_v=opts.voltage_v, meter=meter, adc=adc,
             range_ohm=opts.meter_range_ohm)


def _num(x: float) -> float | None:
    return None if not math.isfinite(x) else float(x)


def convert_records(
    ohms: Sequence[float], opts: ConvertOptions
) -> tuple[MeasurementChain, Conversion, list[dict[str, Any]]]:
    """Convert, and the JSON-ready records (one per input, DESIGN.md contract)."""
    chain = build_chain(opts)
    conv = chain.convert(
        np.asarray(ohms, dtype=np.float64), chamber_c=opts.chamber_c, ambient_c=opts.ambient_c
    )
    u = conv.uncertainty_c
    big_u = conv.expanded_uncertainty_c
    records: list[dict[str, Any]] = []
    for i, r in enumerate(ohms):
        has_t = not math.isnan(conv.temperature_c[i])
        budget = [
            {
                "name": c.name,
                "description": c.description,
                "distribution": c.distribution,
                "value": _num(np.broadcast_to(c.value, conv.temperature_c.shape)[i]),
                "unit": c.unit,
                "divisor": c.divisor,
                "sensitivity_k_per_unit": _num(
                    np.broadcast_to(c.sensitivity, conv.temperature_c.shape)[i]
                ),
                "standard_uncertainty_c": _num(np.broadcast_to(c.u_k, conv.temperature_c.shape)[i]),
            }
            for c in conv.budget.contributions
        ] if has_t else []
        records.append(
            {
                "ohms": float(r),
                "sensor_ohms": _num(conv.sensor_ohm[i]),
                "lead_correction_ohms": _num(conv.lead_correction_ohm[i]),
                "self_heating_k": _num(conv.self_heating_k[i]),
                "temperature_c": _num(conv.temperature_c[i]),
                "standard_uncertainty_c": _num(u[i]),
                "expanded_uncertainty_c": _num(big_u[i]),
                "coverage_factor": conv.budget.k,
                "flags": flag_names(conv.flags[i]),
                "budget": budget,
            }
        )
    return chain, conv, records


def describe_chain(chain: MeasurementChain) -> list[str]:
    """The measurement chain in words, one line per element, for the human output."""
    s = chain.sensor
    c = s.curve
    lines = [
        f"sensor     R0 = {c.r0_ohm:g} ohm, {c.name} (A = {c.a:.6g}, B = {c.b:.6g}, C = {c.c:.6g}), "
        f"valid {c.t_min_c:g}…{c.t_max_c:g} °C",
    ]
    if s.calibration is not None:
        cal = s.calibration
        lines.append(
            f"vouched by calibration U = {cal.expanded_uncertainty_c:g} K (k = {cal.k:g}) over "
            f"{cal.t_min_c:g}…{cal.t_max_c:g} °C"
        )
    elif s.tolerance is not None:
        lines.append(f"vouched by {s.tolerance.describe()}")
    else:
        lines.append("vouched by nothing given: the uncertainty leaves out the sensor (--class or --cal-uncertainty)")
    ld = chain.leads
    if ld.wiring == 4:
        lines.append("leads      4-wire: no lead correction")
    else:
        cond = ld.conductor
        what = (
            f"{cond.fixed_ohm:g} ohm per conductor"
            if cond is not None and cond.fixed_ohm is not None
            else f"copper {cond.cross_section_mm2:.4g} mm²"
            + (f" IEC 60228 class {cond.lead_class} (×{cond.class_factor:.4f} nominal, ±{cond.class_spread:.1%})"
               if cond.lead_class is not None else "")
            + f", {cond.inside_length_m:g} m inside + {cond.outside_length_m:g} m outside"
            if cond is not None
            else "?"
        )
        lines.append(f"leads      {ld.wiring}-wire, {what}")
    if chain.excitation is not None:
        e = chain.excitation
        src = f"{e.current_a * 1e3:g} mA" if e.current_a is not None else f"{e.voltage_v:g} V"
        if s.dissipation_w_per_k is not None:
            lines.append(f"excitation {src}, dissipation {s.dissipation_w_per_k * 1e3:g} mW/K: self-heating corrected")
        else:
            lines.append(f"excitation {src}, no dissipation constant: self-heating not corrected")
    if chain.meter is not None:
        m = chain.meter
        rng = f"{m.range_ohm:g} ohm range" if m.range_ohm else "decade range holding the reading"
        lines.append(f"meter      ±({m.pct_reading:g} % of reading + {m.pct_range:g} % of range), {rng}")
    elif chain.adc is None:
        lines.append("meter      taken as ideal (give --meter-accuracy to include it)")
    if chain.full_scale_ohm is not None:
        lines.append(f"range      readings above {chain.full_scale_ohm:g} ohm are over range (no temperature)")
    if chain.adc is not None:
        a = chain.adc
        lines.append(
            f"board      {a.bits}-bit ratiometric, reference {a.reference_ohm:g} ohm ±{a.reference_tolerance_pct:g} %"
        )
    return lines
