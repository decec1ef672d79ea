"""``soaklog bench``: the benchmark, every figure beside a baseline measured in the same run."""

from __future__ import annotations

import argparse

from soaklog.commands.common import Subparsers

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``bench``."""
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
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog bench`` and print its table (or ``--json``)."""
    import json

    from soaklog.bench import run_bench

    result = run_bench(quick=args.quick)
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    r = result

    def f(key: str, spec: str) -> str:
        v = r.get(key)
        return "—" if v is None else format(v, spec)

    def start(key: str) -> tuple[str, str]:
        s, mb = r.get(f"cli_{key}_s"), r.get(f"cli_{key}_max_rss_mb")
        value = "—" if s is None or mb is None else f"{s:.2f} s, {mb:.0f} MB"
        ratio = f"{f(f'cli_{key}_ratio_vs_python', '.1f')} × / {f(f'cli_{key}_rss_ratio_vs_python', '.1f')} ×"
        return value, ratio

    rows = [
        ("start-up: soaklog --version", start("version")[0],
         f"{start('version')[1]} a bare python -c pass ({f('cli_python_s', '.2f')} s, "
         f"{f('cli_python_max_rss_mb', '.0f')} MB)", "< 0.35 s, < 40 MB"),
        ("start-up: soaklog convert 100", start("convert")[0], f"{start('convert')[1]} the same", "< 0.35 s, < 40 MB"),
        ("soaklog run: launch → first stored reading", start("run_first_reading")[0],
         f"{start('run_first_reading')[1]} the same; of it imports {f('cli_run_imports_s', '.2f')} s, "
         f"commits every {f('cli_run_commit_interval_s', 'g')} s", ""),
        ("conversion, 10 M values over -200…850 °C", f"{f('convert_values_per_s', ',.0f')} /s",
         f"{f('convert_ratio_vs_numpy', '.2f')} × bare numpy quadratic (exact ≥ 0 °C only)", "≥ 0.5 ×"),
        ("thermocouple inverse, 10 M type K values over 0…500 °C", f"{f('tc_inverse_values_per_s', ',.0f')} /s",
         f"{f('tc_inverse_ratio_vs_numpy', '.2f')} × bare numpy polynomial of the same degree (±0.05 K)", "—"),
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
