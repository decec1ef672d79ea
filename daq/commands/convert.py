"""``soaklog convert``: resistance readings to temperature at the bench, with corrections and uncertainty."""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from typing import Any

from soaklog.commands.common import Subparsers, finite, floats, nonneg, positive
from soaklog.errors import InputError

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``convert``."""
    p = sub.add_parser(
        "convert",
        help="convert resistance readings to temperature, with corrections and uncertainty",
        description=(
            "Convert one or more RTD resistance readings to temperature (Callendar–Van Dusen, "
            "IEC 60751), with lead-wire and self-heating corrections and an expanded "
            "uncertainty (GUM, k = 2) with its budget."
        ),
        epilog=(
            "examples:\n"
            "  soaklog convert 138.5055\n"
            "  soaklog convert 1385.1 --r0 1000 --class A --element film\n"
            "  soaklog convert 140.2 --wiring 2 --lead-ohms 0.84 --current-ma 1 --dissipation-mw-per-k 2\n"
            "  soaklog convert 119.4 --meter-accuracy 0.01,0.004 --class B --json"
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("ohms", nargs="+", metavar="OHMS", help="measured resistance(s) in ohm")
    g = p.add_argument_group("sensor")
    g.add_argument("--r0", type=positive("ohm"), default=100.0, metavar="OHMS",
                   help="resistance at 0 °C (default 100: Pt100; 500, 1000 …)")
    g.add_argument("--coefficients", type=floats(3, "A,B,C"), metavar="A,B,C",
                   help="Callendar–Van Dusen coefficients (default IEC 60751: 3.9083e-3,-5.775e-7,-4.183e-12)")
    g.add_argument("--curve", metavar="NAME", help="a named curve instead of coefficients (see --list-curves)")
    g.add_argument("--list-curves", action="store_true", help="list the named curves and exit")
    g.add_argument("--class", dest="tolerance_class", metavar="NAME",
                   help="IEC 60751 tolerance class: AA, A, B, C, F0.1 … F0.6, W0.1 … W0.6")
    g.add_argument("--element", choices=("film", "wire"),
                   help="element type, which sets where AA/A/B/C apply (default: the narrower film range)")
    g.add_argument("--cal-uncertainty", type=nonneg("K"), metavar="K",
                   help="the sensor's calibration: expanded uncertainty from its certificate, in K")
    g.add_argument("--cal-k", type=positive("(coverage factor)"), default=2.0, metavar="K",
                   help="coverage factor of --cal-uncertainty (default 2)")
    g.add_argument("--cal-span", type=floats(2, "TMIN,TMAX in °C"), metavar="TMIN,TMAX",
                   help="range of the calibration points; readings outside are flagged")
    g = p.add_argument_group("wiring and leads")
    g.add_argument("--wiring", type=int, choices=(2, 3, 4), default=4, help="2-, 3- or 4-wire (default 4)")
    g.add_argument("--lead-ohms", type=nonneg("ohm"), metavar="OHMS",
                   help="resistance of ONE conductor (2-wire subtracts both)")
    g.add_argument("--lead-awg", metavar="GAUGE", help="copper conductor gauge, AWG (e.g. 24)")
    g.add_argument("--lead-mm2", type=positive("mm²"), metavar="MM2", help="copper conductor cross-section in mm²")
    g.add_argument("--lead-class", type=int, choices=(1, 2, 5), metavar="1|2|5",
                   help="IEC 60228 conductor class of --lead-mm2 (1 solid, 2 stranded, 5 flexible): the lead is "
                        "taken between the nominal resistivity and the class's maximum")
    g.add_argument("--lead-inside-m", type=nonneg("m"), default=0.0, metavar="M",
                   help="conductor length inside the chamber (at chamber temperature)")
    g.add_argument("--lead-outside-m", type=nonneg("m"), default=0.0, metavar="M",
                   help="conductor length outside the chamber (at --ambient-c)")
    g.add_argument("--imbalance-ohms", type=finite("ohm"), default=0.0, metavar="OHMS",
                   help="3-wire: known residual imbalance between the two conductors")
    g.add_argument("--chamber-c", type=finite("°C"), metavar="T",
                   help="temperature of the leads inside the chamber (default: the reading itself)")
    g.add_argument("--ambient-c", type=finite("°C"), default=20.0, metavar="T",
                   help="temperature of the leads outside (default 20)")
    g = p.add_argument_group("excitation and self-heating")
    g.add_argument("--current-ma", type=positive("mA"), metavar="MA", help="measuring current in mA")
    g.add_argument("--voltage-v", type=positive("V"), metavar="V", help="excitation voltage across the sensor")
    g.add_argument("--dissipation-mw-per-k", type=positive("mW/K"), metavar="MW",
                   help="dissipation constant of the sensor in its mounting, mW/K")
    g = p.add_argument_group("instrument")
    g.add_argument("--meter-accuracy", type=floats(2, "PCT_READING,PCT_RANGE"), metavar="PCT_RDG,PCT_RNG",
                   help="meter ohms accuracy ±(%% of reading + %% of range), e.g. 0.01,0.004 (default: ideal)")
    g.add_argument("--meter-range", type=positive("ohm"), metavar="OHMS",
                   help="the meter's fixed range in ohm: a reading above 120 %% of it is over range (no "
                        "temperature), and --meter-accuracy's %% of range is of it (default: the decade range "
                        "holding the reading)")
    g.add_argument("--adc-bits", type=int, metavar="N", help="ratiometric board: converter resolution in bits")
    g.add_argument("--reference-ohms", type=positive("ohm"), metavar="OHMS", help="ratiometric board: reference resistor")
    g.add_argument("--reference-tolerance-pct", type=nonneg("%"), default=0.0, metavar="PCT",
                   help="ratiometric board: reference resistor tolerance in %%")
    g = p.add_argument_group("output")
    g.add_argument("--budget", action="store_true", help="print the uncertainty budget of each reading")
    g.add_argument("--json", action="store_true", help="print JSON (one object per reading)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog convert``: numpy and the metrology load here, not when the parser is built."""
    import json

    from soaklog.convert import ConvertOptions, convert_records, describe_chain, parse_ohms

    if args.list_curves:
        from soaklog.sensors.curves import NAMED_CURVES

        for key, curve in NAMED_CURVES.items():
            print(f"{key:14s} alpha = {curve.alpha:.6f}  {curve.name}")
        return 0
    if args.voltage_v is not None and args.current_ma is not None:
        raise InputError("give --current-ma or --voltage-v, not both")
    ohms = parse_ohms(args.ohms)
    opts = ConvertOptions(
        r0_ohm=args.r0,
        coefficients=args.coefficients,
        curve=args.curve,
        wiring=args.wiring,
        lead_ohm=args.lead_ohms,
        lead_awg=args.lead_awg,
        lead_mm2=args.lead_mm2,
        lead_class=args.lead_class,
        lead_inside_m=args.lead_inside_m,
        lead_outside_m=args.lead_outside_m,
        imbalance_ohm=args.imbalance_ohms,
        chamber_c=args.chamber_c,
        ambient_c=args.ambient_c,
        current_a=None if args.current_ma is None else args.current_ma / 1000.0,
        voltage_v=args.voltage_v,
        dissipation_w_per_k=None if args.dissipation_mw_per_k is None else args.dissipation_mw_per_k / 1000.0,
        tolerance_class=args.tolerance_class,
        element=args.element,
        cal_uncertainty_c=args.cal_uncertainty,
        cal_k=args.cal_k,
        cal_span_c=args.cal_span,
        meter_accuracy_pct=args.meter_accuracy,
        meter_range_ohm=args.meter_range,
        adc_bits=args.adc_bits,
        reference_ohm=args.reference_ohms,
        reference_tolerance_pct=args.reference_tolerance_pct,
    )
    chain, _conv, records = convert_records(ohms, opts)
    if args.json:
        print(json.dumps(records, indent=2, allow_nan=False))
        return 0
    for line in describe_chain(chain):
        print(line)
    print()
    print(_convert_table(records))
    if args.budget:
        for rec in records:
            print()
            print(_budget_table(rec))
    notes = sorted({f for rec in records for f in rec["flags"]})
    if notes:
        print()
        for name in notes:
            print(f"{name}: {_FLAG_HELP.get(name, '')}")
    return 0


_FLAG_HELP = {
    "out_of_range": "outside the curve's range (IEC 60751: −200…850 °C); no temperature given",
    "invalid_input": "not a usable resistance; no temperature given",
    "outside_class_range": "the tolerance class does not apply at this temperature; its bound is used as an estimate",
    "no_sensor_spec": "no --class or --cal-uncertainty: no uncertainty is given (its budget would leave out the sensor)",
    "calibration_extrapolated": "outside the span of the calibration points",
    "large_self_heating": "self-heating correction above 0.1 K: lower the current or check the dissipation constant",
    "leads_exceed_sensor": "the lead correction is at least the measured value; no temperature given",
    "over_range": "above what the meter's range can show (120 % of --meter-range); no temperature given",
}


def _fmt(x: float | None, spec: str) -> str:
    return "—" if x is None else format(x, spec)


def _convert_table(records: list[dict[str, Any]]) -> str:
    head = ("measured", "sensor", "leads", "self-heat", "temperature", "U (k=2)", "flags")
    units = ("ohm", "ohm", "ohm", "K", "°C", "K", "")
    rows = [
        (
            _fmt(r["ohms"], ".4f"),
            _fmt(r["sensor_ohms"], ".4f"),
            _fmt(r["lead_correction_ohms"], ".4f"),
            _fmt(r["self_heating_k"], ".4f"),
            _fmt(r["temperature_c"], ".4f"),
            _fmt(r["expanded_uncertainty_c"], ".4f"),
            ", ".join(r["flags"]) or "ok",
        )
        for r in records
    ]
    widths = [max(len(head[i]), len(units[i]), *(len(row[i]) for row in rows)) for i in range(len(head))]

    def line(cells: Sequence[str]) -> str:
        nums = "  ".join(c.rjust(w) for c, w in zip(cells[:-1], widths[:-1], strict=True))
        return f"{nums}  {cells[-1]}".rstrip()

    return "\n".join([line(head), line(units), *(line(row) for row in rows)])


def _budget_table(rec: dict[str, Any]) -> str:
    t = rec["temperature_c"]
    title = f"budget for {rec['ohms']:g} ohm" + ("" if t is None else f" (t = {t:.4f} °C)")
    if not rec["budget"]:
        return f"{title}: no temperature, no budget"
    head = ("source", "distribution", "bound or U", "divisor", "sensitivity", "u(t) K", "what")
    rows = [
        (
            c["name"],
            c["distribution"],
            f"{c['value']:.4g} {c['unit']}",
            f"{c['divisor']:.4g}",
            f"{c['sensitivity_k_per_unit']:.4g} K/{c['unit']}",
            f"{c['standard_uncertainty_c']:.4f}",
            c["description"],
        )
        for c in rec["budget"]
    ]
    if rec["expanded_uncertainty_c"] is None:
        rows.append(("expanded U", "", "", "", "", "—", "withheld: " + ", ".join(rec["flags"])))
    else:
        rows.append(("combined u_c", "", "", "", "", f"{rec['standard_uncertainty_c']:.4f}", "root-sum-square"))
        rows.append(("expanded U", "", "", "", "", f"{rec['expanded_uncertainty_c']:.4f}", "k = 2"))
    widths = [max(len(r[i]) for r in [head, *rows]) for i in range(len(head) - 1)]
    lines = [title]
    for r in [head, *rows]:
        cells = [r[i].ljust(widths[i]) if i < 2 else r[i].rjust(widths[i]) for i in range(len(widths))]
        lines.append(("  " + "  ".join(cells) + "  " + r[-1]).rstrip())
    return "\n".join(lines)
