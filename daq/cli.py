"""The `soaklog` command line: parse, call one library function, format."""

from __future__ import annotations

import argparse
import json
import math
import sys
from collections.abc import Callable, Sequence
from typing import Any

from soaklog import __version__
from soaklog.cliargs import DEFAULT_DB, add_db_args, db_path
from soaklog.errors import InputError, SoaklogError

__all__ = ["main", "build_parser"]

SAFETY_NOTE = (
    "soaklog is a logger, not a safety device: every chamber needs its own independent "
    "over-temperature protection, set and tested per its maker's manual and the applicable "
    "standards (IEC 61010-2-010 for laboratory heating equipment)."
)


class _Parser(argparse.ArgumentParser):
    """argparse with the project's exit status for bad usage (2) and a one-line message."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.exit(2, f"{self.prog}: {message} (see {self.prog} --help)\n")


def _floats(count: int, what: str) -> Callable[[str], tuple[float, ...]]:
    def parse(text: str) -> tuple[float, ...]:
        parts = [p.strip() for p in text.split(",")]
        try:
            values = tuple(float(p) for p in parts)
        except ValueError:
            values = ()
        if len(values) != count or not all(math.isfinite(v) for v in values):
            raise argparse.ArgumentTypeError(f"expected {what}, got {text!r}")
        return values

    return parse


def _positive(unit: str) -> Callable[[str], float]:
    def parse(text: str) -> float:
        try:
            v = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a number of {unit}, got {text!r}") from None
        if not (math.isfinite(v) and v > 0):
            raise argparse.ArgumentTypeError(f"expected a positive number of {unit}, got {text!r}")
        return v

    return parse


def _finite(unit: str) -> Callable[[str], float]:
    def parse(text: str) -> float:
        try:
            v = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a number of {unit}, got {text!r}") from None
        if not math.isfinite(v):
            raise argparse.ArgumentTypeError(f"expected a finite number of {unit}, got {text!r}")
        return v

    return parse


def _nonneg(unit: str) -> Callable[[str], float]:
    finite = _finite(unit)

    def parse(text: str) -> float:
        v = finite(text)
        if v < 0:
            raise argparse.ArgumentTypeError(f"expected a non-negative number of {unit}, got {text!r}")
        return v

    return parse


# ---------------------------------------------------------------- convert


def _add_convert(sub: argparse._SubParsersAction[_Parser]) -> None:
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
    g.add_argument("--r0", type=_positive("ohm"), default=100.0, metavar="OHMS",
                   help="resistance at 0 °C (default 100: Pt100; 500, 1000 …)")
    g.add_argument("--coefficients", type=_floats(3, "A,B,C"), metavar="A,B,C",
                   help="Callendar–Van Dusen coefficients (default IEC 60751: 3.9083e-3,-5.775e-7,-4.183e-12)")
    g.add_argument("--curve", metavar="NAME", help="a named curve instead of coefficients (see --list-curves)")
    g.add_argument("--list-curves", action="store_true", help="list the named curves and exit")
    g.add_argument("--class", dest="tolerance_class", metavar="NAME",
                   help="IEC 60751 tolerance class: AA, A, B, C, F0.1 … F0.6, W0.1 … W0.6")
    g.add_argument("--element", choices=("film", "wire"),
                   help="element type, which sets where AA/A/B/C apply (default: the narrower film range)")
    g.add_argument("--cal-uncertainty", type=_nonneg("K"), metavar="K",
                   help="the sensor's calibration: expanded uncertainty from its certificate, in K")
    g.add_argument("--cal-k", type=_positive("(coverage factor)"), default=2.0, metavar="K",
                   help="coverage factor of --cal-uncertainty (default 2)")
    g.add_argument("--cal-span", type=_floats(2, "TMIN,TMAX in °C"), metavar="TMIN,TMAX",
                   help="range of the calibration points; readings outside are flagged")
    g = p.add_argument_group("wiring and leads")
    g.add_argument("--wiring", type=int, choices=(2, 3, 4), default=4, help="2-, 3- or 4-wire (default 4)")
    g.add_argument("--lead-ohms", type=_nonneg("ohm"), metavar="OHMS",
                   help="resistance of ONE conductor (2-wire subtracts both)")
    g.add_argument("--lead-awg", metavar="GAUGE", help="copper conductor gauge, AWG (e.g. 24)")
    g.add_argument("--lead-mm2", type=_positive("mm²"), metavar="MM2", help="copper conductor cross-section in mm²")
    g.add_argument("--lead-inside-m", type=_nonneg("m"), default=0.0, metavar="M",
                   help="conductor length inside the chamber (at chamber temperature)")
    g.add_argument("--lead-outside-m", type=_nonneg("m"), default=0.0, metavar="M",
                   help="conductor length outside the chamber (at --ambient-c)")
    g.add_argument("--imbalance-ohms", type=_finite("ohm"), default=0.0, metavar="OHMS",
                   help="3-wire: known residual imbalance between the two conductors")
    g.add_argument("--chamber-c", type=_finite("°C"), metavar="T",
                   help="temperature of the leads inside the chamber (default: the reading itself)")
    g.add_argument("--ambient-c", type=_finite("°C"), default=20.0, metavar="T",
                   help="temperature of the leads outside (default 20)")
    g = p.add_argument_group("excitation and self-heating")
    g.add_argument("--current-ma", type=_positive("mA"), metavar="MA", help="measuring current in mA")
    g.add_argument("--voltage-v", type=_positive("V"), metavar="V", help="excitation voltage across the sensor")
    g.add_argument("--dissipation-mw-per-k", type=_positive("mW/K"), metavar="MW",
                   help="dissipation constant of the sensor in its mounting, mW/K")
    g = p.add_argument_group("instrument")
    g.add_argument("--meter-accuracy", type=_floats(2, "PCT_READING,PCT_RANGE"), metavar="PCT_RDG,PCT_RNG",
                   help="meter ohms accuracy ±(%% of reading + %% of range), e.g. 0.01,0.004 (default: ideal)")
    g.add_argument("--meter-range", type=_positive("ohm"), metavar="OHMS",
                   help="meter range in ohm (default: the decade range holding the reading)")
    g.add_argument("--adc-bits", type=int, metavar="N", help="ratiometric board: converter resolution in bits")
    g.add_argument("--reference-ohms", type=_positive("ohm"), metavar="OHMS", help="ratiometric board: reference resistor")
    g.add_argument("--reference-tolerance-pct", type=_nonneg("%"), default=0.0, metavar="PCT",
                   help="ratiometric board: reference resistor tolerance in %%")
    g = p.add_argument_group("output")
    g.add_argument("--budget", action="store_true", help="print the uncertainty budget of each reading")
    g.add_argument("--json", action="store_true", help="print JSON (one object per reading)")
    p.set_defaults(func=_cmd_convert)


def _cmd_convert(args: argparse.Namespace) -> int:
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
    "no_sensor_spec": "no --class or --cal-uncertainty: the uncertainty covers the measurement only, not the sensor",
    "calibration_extrapolated": "outside the span of the calibration points",
    "large_self_heating": "self-heating correction above 0.1 K: lower the current or check the dissipation constant",
    "leads_exceed_sensor": "the lead correction is at least the measured value; no temperature given",
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
    rows.append(("combined u_c", "", "", "", "", f"{rec['standard_uncertainty_c']:.4f}", "root-sum-square"))
    rows.append(("expanded U", "", "", "", "", f"{rec['expanded_uncertainty_c']:.4f}", "k = 2"))
    widths = [max(len(r[i]) for r in [head, *rows]) for i in range(len(head) - 1)]
    lines = [title]
    for r in [head, *rows]:
        cells = [r[i].ljust(widths[i]) if i < 2 else r[i].rjust(widths[i]) for i in range(len(widths))]
        lines.append(("  " + "  ".join(cells) + "  " + r[-1]).rstrip())
    return "\n".join(lines)


# ---------------------------------------------------------------- bench


def _add_bench(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "bench",
        help="the benchmark: figures and ratios against baselines measured in the same run",
        description=(
            "Measure soaklog's figures on this machine, each beside a baseline measured in "
            "the same run, and print the ratios."
        ),
    )
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--quick", action="store_true", help="fewer repeats (a smoke run)")
    p.set_defaults(func=_cmd_bench)


def _cmd_bench(args: argparse.Namespace) -> int:
    from soaklog.bench import run_bench

    result = run_bench(quick=args.quick)
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    r = result

    def f(key: str, spec: str) -> str:
        v = r.get(key)
        return "—" if v is None else format(v, spec)

    rows = [
        ("conversion, 10 M values over -200…850 °C", f"{f('convert_values_per_s', ',.0f')} /s",
         f"{f('convert_ratio_vs_numpy', '.2f')} × bare numpy quadratic (exact ≥ 0 °C only)", "≥ 0.5 ×"),
        ("ingest: parse → pipeline → store", f"{f('ingest_readings_per_s', ',.0f')} readings/s",
         f"{f('ingest_ratio_vs_executemany', '.2f')} × bare executemany, same rows and schema", "≥ 100 000/s, ≥ 0.5 ×"),
        ("storage per reading (rollups, index)", f"{f('bytes_per_reading', '.1f')} bytes", "", "≤ 40"),
        (f"2000-point trend of a {f('trend_hours', 'g')}-hour run", f"{f('trend_query_ms', '.1f')} ms",
         f"10-minute raw window {f('trend_raw_10min_ms', '.1f')} ms", "≤ 50 ms"),
        ("whole-run summary, 32 channels", f"{f('summary_32ch_ms', '.0f')} ms", "", ""),
        (f"memory growth, {f('memory_hours', 'g')} h accelerated, 32 ch @ 1 Hz", f"{f('memory_growth_mb', '+.1f')} MB",
         f"peak {f('memory_peak_mb', '.0f')} MB resident", "≤ 5 MB over 24 h"),
        ("service CPU, 32 ch @ 1 Hz, real time", f"{f('service_cpu_pct_of_core', '.1f')} % of a core", "", "≤ 5 %"),
        (f"run report, {f('report_hours', 'g')} h × 32 channels", f"{f('report_s', '.1f')} s",
         f"{f('report_cycles_found', 'g')} cycles found", "≤ 60 s for 1000 h"),
        ("alarm latency, faulty reading → action", f"{1000 * (r.get('alarm_latency_median_s') or float('nan')):.0f} ms",
         f"max {1000 * (r.get('alarm_latency_max_s') or float('nan')):.0f} ms", ""),
        ("chamber model, 1000 h at 1 s steps", f"{f('chamber_1000h_projected_s', '.1f')} s", "", "< 60 s"),
        ("simulated meter, *IDN? over loopback", f"{f('dmm_queries_per_s', ',.0f')} queries/s",
         f"{f('dmm_ratio_vs_raw_socket', '.2f')} × a bare socket", "≥ 2000/s"),
        ("driver overhead above bare READ?, 20 ch", f"{100 * (r.get('driver_overhead_20ch') or float('nan')):+.0f} %",
         f"1 channel {100 * (r.get('driver_overhead_1ch') or float('nan')):+.0f} %", "< 20 %"),
    ]
    w0 = max(len(x[0]) for x in rows)
    w1 = max(len(x[1]) for x in rows)
    print("soaklog bench — this machine, this run" + (" (quick: smaller runs, noisier)" if r.get("quick") else ""))
    for name, value, base, target in rows:
        print(f"  {name:<{w0}}  {value:>{w1}}  {('target ' + target) if target else '':<22}  {base}")
    if r["not_measured"]:
        print(f"  not measured: {', '.join(r['not_measured'])}")
    return 0


# ---------------------------------------------------------------- station commands



def _setup_logging(debug: bool) -> None:
    import logging

    logging.basicConfig(
        level=logging.DEBUG if debug else logging.INFO,
        format="%(asctime)s soaklog %(levelname)s %(message)s",
        stream=sys.stderr,
    )






def _add_check(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "check", help="validate a station file and print what it would log",
        description=(
            "Validate a station configuration (every problem at once, by file and key), then print "
            "the instruments and channels it would log, the uncertainty each channel can reach, and "
            "the warnings a metrologist would give. Starts nothing."
        ),
    )
    p.add_argument("config", metavar="CONFIG", help="station file (TOML)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--test-actions", action="store_true",
                   help="fire every alarm action once (program, SCPI command, serial line) to prove the wiring")
    p.set_defaults(func=_cmd_check)


def _cmd_check(args: argparse.Namespace) -> int:
    from soaklog.config import load_config
    from soaklog.status import check_report, format_check

    cfg = load_config(args.config)
    rep = check_report(cfg)
    if args.json:
        print(json.dumps(rep, indent=2))
    else:
        print(format_check(rep, SAFETY_NOTE))
    if args.test_actions:
        from soaklog.alarms_cli import test_actions

        print()
        return test_actions(cfg)
    return 0


def _add_run(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "run", help="the logger service in the foreground (as a service manager runs it)",
        description=(
            "Run the logger for a station file in the foreground until SIGTERM/SIGINT (or --duration). "
            "The same configuration continues the newest run, recording the gap; a changed one starts a "
            "new run. Logs go to stderr."
        ),
    )
    p.add_argument("config", metavar="CONFIG", help="station file (TOML)")
    p.add_argument("--duration", type=_positive("s"), metavar="S", help="stop after S seconds")
    p.add_argument("--new-run", action="store_true", help="start a new run even if the configuration is unchanged")
    p.set_defaults(func=_cmd_run)


def _cmd_run(args: argparse.Namespace) -> int:
    from soaklog.config import load_config
    from soaklog.service import Service

    cfg = load_config(args.config)
    _setup_logging(args.debug)
    for w in cfg.warnings:
        print(f"soaklog: warning: {w}", file=sys.stderr)
    print(f"soaklog: {SAFETY_NOTE}", file=sys.stderr)
    return Service(cfg, new_run=args.new_run).run(args.duration)


def _add_status(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "status", help="latest value of every channel and the active alarms",
        description="Print the newest reading of every channel of a run, the instruments and the active alarms.",
    )
    add_db_args(p)
    p.add_argument("--run", type=int, metavar="ID", help="run id (default: the newest)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_status)


def _cmd_status(args: argparse.Namespace) -> int:
    import time

    from soaklog.status import format_status, status_report
    from soaklog.store import Store

    with Store.open(db_path(args), readonly=True) as store:
        rep = status_report(store, args.run, now_ms=int(time.time() * 1000))
    if args.json:
        print(json.dumps(rep, indent=2))
    else:
        print(format_status(rep))
    return 0


def _add_export(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "export", help="export a run's readings as CSV or JSON lines",
        description=(
            "Write a run's readings, in time order, as CSV (ISO 8601 UTC times, units in the header) "
            "or JSON lines. Streams: any run length exports in bounded memory."
        ),
    )
    add_db_args(p)
    p.add_argument("--run", type=int, metavar="ID", help="run id (default: the newest)")
    p.add_argument("--format", choices=("csv", "jsonl"), default="csv", help="output format (default csv)")
    p.add_argument("--from", dest="from_t", metavar="T", help="first time, ISO 8601 (UTC if no zone)")
    p.add_argument("--to", dest="to_t", metavar="T", help="last time, ISO 8601")
    p.add_argument("--out", metavar="FILE", help="write to FILE instead of standard output")
    p.set_defaults(func=_cmd_export)


def _cmd_export(args: argparse.Namespace) -> int:
    from soaklog.export import export_run, parse_time, terminal_progress
    from soaklog.store import Store

    from_ms = parse_time(args.from_t) if args.from_t else None
    to_ms = parse_time(args.to_t) if args.to_t else None
    with Store.open(db_path(args), readonly=True) as store:
        if args.out:
            with open(args.out, "w", encoding="utf-8", newline="") as fh:
                n = export_run(store, fh, run_id=args.run, fmt=args.format, from_ms=from_ms, to_ms=to_ms,
                               progress=terminal_progress())
            print(f"soaklog: {n} readings written to {args.out}", file=sys.stderr)
        else:
            export_run(store, sys.stdout, run_id=args.run, fmt=args.format, from_ms=from_ms, to_ms=to_ms)
    return 0


def _add_demo(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "demo", help="the simulated lab and the logger against it, accelerated; no hardware, no config",
        description=(
            "Start a simulated environmental chamber (power modules cycled -40/+125 °C) with a scanning "
            "multimeter on loopback TCP and a serial RTD board on a pseudo-terminal, and log it with the "
            "real logger, faster than real time. Prints where the data is and what to run next."
        ),
    )
    p.add_argument("--headless", action="store_true", help="no dashboard: progress lines only")
    p.add_argument("--duration", type=_positive("s"), metavar="S", help="stop after S seconds of your time (default: Ctrl-C)")
    p.add_argument("--db", metavar="PATH", default=DEFAULT_DB, help=f"database file (default {DEFAULT_DB})")
    p.add_argument("--speed", type=_positive("×"), default=60.0, metavar="X",
                   help="chamber seconds per real second (default 60)")
    p.set_defaults(func=_cmd_demo)


def _cmd_demo(args: argparse.Namespace) -> int:
    from soaklog.demo import main_demo

    _setup_logging(args.debug)
    import logging

    logging.getLogger("soaklog").setLevel(logging.DEBUG if args.debug else logging.WARNING)
    return main_demo(args.db, args.duration, args.speed, args.headless)


def _add_simulate(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "simulate", help="run one simulator standalone and print where it listens",
        description=(
            "Run a simulator in the foreground until SIGINT/SIGTERM: 'dmm' a SCPI multimeter with a "
            "scanner card on loopback TCP (prints its VISA resource string), 'adc' the serial RTD board "
            "on a pseudo-terminal (prints the device path), 'chamber' the whole simulated lab: the "
            "chamber with both instruments measuring it. Faults are injected at run time through the "
            "printed control port (one text command per line, e.g. 'fault runaway', 'meter fault mute')."
        ),
    )
    p.add_argument("which", choices=("dmm", "adc", "chamber"), help="what to simulate")
    p.add_argument("--port", type=int, default=0, metavar="N", help="multimeter TCP port (default: a free one)")
    p.add_argument("--supply-port", type=int, default=0, metavar="N",
                   help="chamber: the heater supply's TCP port (default: a free one)")
    p.add_argument("--link", metavar="PATH", help="board: keep a symlink at PATH to the pseudo-terminal")
    p.add_argument("--control-port", type=int, default=0, metavar="N", help="fault control port (default: a free one)")
    p.add_argument("--speed", type=_positive("×"), default=1.0, metavar="X", help="chamber seconds per real second (default 1)")
    p.add_argument("--seed", type=int, default=20261201, metavar="N", help="seed of every random draw")
    p.add_argument("--rate", type=_positive("Hz"), default=1.0, metavar="HZ", help="board frames per second (default 1)")
    p.add_argument("--truth", metavar="FILE", help="write the simulator's truth (JSON lines) to FILE")
    p.add_argument("--fault", action="append", default=[], metavar="CMD",
                   help="a control command to apply at start, e.g. --fault 'fault open air-return' (repeatable)")
    p.set_defaults(func=_cmd_simulate)


def _cmd_simulate(args: argparse.Namespace) -> int:
    import signal
    import threading

    from soaklog.simulators.lab import Lab

    if args.link and args.which == "dmm":
        raise InputError("--link applies to the board (adc or chamber)")
    lab = Lab(
        seed=args.seed, speed=args.speed, meter=args.which in ("dmm", "chamber"),
        board=args.which in ("adc", "chamber"), meter_port=args.port, board_link=args.link,
        control_port=args.control_port, truth_log=args.truth, board_rate_hz=args.rate,
        supply_port=args.supply_port,
        truth_log_interval_s=1.0 if args.truth else None,
    )
    stop = threading.Event()
    for sig in (signal.SIGTERM, signal.SIGINT):
        signal.signal(sig, lambda *_: stop.set())
    with lab:
        for cmd in args.fault:
            reply = lab.table.execute(cmd)
            print(f"{cmd}: {reply}", flush=True)
            if not reply.startswith("ok"):
                return 2
        a = lab.addresses()
        if a.meter_resource:
            print(f"meter   {a.meter_resource}", flush=True)
        if a.board_device:
            print(f"board   {a.board_device}" + (f"  (link {a.board_link})" if a.board_link else ""), flush=True)
        if getattr(a, "supply_resource", None):
            print(f"supply  {a.supply_resource}  (the heater supply: OUTPut ON|OFF)", flush=True)
        if a.control:
            print(f"control {a.control[0]} {a.control[1]}", flush=True)
        print(f"chamber seed {args.seed}, {args.speed:g}× real time; Ctrl-C stops", flush=True)
        stop.wait()
    return 0


def _add_probe(sub: argparse._SubParsersAction[_Parser]) -> None:
    p = sub.add_parser(
        "probe", help="talk to one instrument once: identity, one reading per channel, error queue",
        description=(
            "Open one SCPI instrument by its VISA resource string (TCPIP0::HOST::PORT::SOCKET, USB…, "
            "GPIB0::22::INSTR, ASRL/dev/ttyUSB0::INSTR), print its identity, one resistance reading per "
            "channel and its error queue, or a plain diagnosis of why it cannot talk. Never resets it. "
            "Exit status 0 when it could talk, 1 when it could not."
        ),
    )
    p.add_argument("resource", metavar="RESOURCE", help="VISA resource string")
    p.add_argument("--channels", metavar="LIST", help="scanner channels, e.g. 101,102,103 (default: the front terminals)")
    p.add_argument("--four-wire", action="store_true", help="measure 4-wire resistance (default 2-wire)")
    p.add_argument("--timeout", type=_positive("s"), default=3.0, metavar="S", help="answer timeout (default 3 s)")
    p.add_argument("--backend", default="@py", metavar="NAME", help="pyvisa backend (default @py, pure Python)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_probe)


def _cmd_probe(args: argparse.Namespace) -> int:
    import dataclasses

    from soaklog.drivers.probe import format_probe, probe

    channels = [c.strip() for c in args.channels.split(",") if c.strip()] if args.channels else None
    result = probe(args.resource, channels=channels, four_wire=args.four_wire, timeout_s=args.timeout,
                   backend=args.backend)
    if args.json:
        d = dataclasses.asdict(result)
        d["ok"] = result.ok
        print(json.dumps(d, indent=2, default=str, allow_nan=True).replace("NaN", "null"))
    else:
        print(format_probe(result))
    return result.exit_code


# ---------------------------------------------------------------- main


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="soaklog",
        description="Unattended RTD temperature logger for environmental test chambers.",
        epilog=SAFETY_NOTE,
    )
    parser.add_argument("--version", action="version", version=f"soaklog {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    _add_demo(sub)
    _add_run(sub)
    _add_check(sub)
    _add_status(sub)
    _add_convert(sub)
    _add_export(sub)
    from soaklog.alarms_cli import add_ack_parser
    from soaklog.dashboard.cli import add_parser as _add_dash
    from soaklog.report.cli import add_parser as _add_report

    _add_dash(sub)
    add_ack_parser(sub)
    _add_report(sub)
    _add_simulate(sub)
    _add_probe(sub)
    _add_bench(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        return int(args.func(args) or 0)
    except SoaklogError as exc:
        if args.debug:
            raise
        print(f"soaklog: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        return 130
