"""``soaklog report``: the run report (matplotlib loads only when it runs)."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from typing import IO

from soaklog.cliargs import DEFAULT_DB, db_path
from soaklog.commands.common import Subparsers

__all__ = ["DEFAULT_OUT", "add_parser", "run", "terminal_progress"]

#: the same default as the other viewers: where `soaklog demo` writes
DEFAULT_OUT = "soaklog-report"


def add_parser(sub: Subparsers) -> argparse.ArgumentParser:
    """Add ``report``."""
    p = sub.add_parser(
        "report",
        help="the run report: profile conformance, chamber performance, alarms, plots",
        description=(
            "Write the report of a run: whether the samples saw the profile (dwells within tolerance, ramp "
            "rates, complete cycles) and every place they did not, with its time; chamber performance over "
            "stable periods (deviation, fluctuation, spatial variation, rate of change); per-channel figures, "
            "gaps and alarms. Writes one self-contained HTML page, a JSON summary, a CSV file per table and "
            "the plots as PNG. The profile is the [profile] table of the run's configuration unless --profile "
            "gives one."
        ),
        epilog=(
            "examples:\n"
            "  soaklog report                      # the newest run of the demo database\n"
            "  soaklog report --db station.db --run 3 --out reports/run3\n"
            "  soaklog report configs/station.toml --profile jedec-g.toml"
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("config", nargs="?", metavar="CONFIG", help="station file (its database is used)")
    p.add_argument("--db", metavar="PATH", help=f"database file (default: {DEFAULT_DB}, as the demo writes it)")
    p.add_argument("--run", type=int, metavar="ID", help="run id (default: the newest)")
    p.add_argument("--profile", metavar="FILE",
                   help="a TOML file with the profile to judge against (default: the run's own [profile])")
    p.add_argument("--out", metavar="DIR", default=DEFAULT_OUT, help=f"directory to write to (default {DEFAULT_OUT})")
    p.add_argument("--source", choices=("auto", "raw", "rollup"), default="auto",
                   help="analyse raw readings or the minute rollups (default: raw for runs up to 2 million readings)")
    p.set_defaults(func=run)
    return p


def terminal_progress(stream: IO[str] = sys.stderr) -> Callable[[int, int, str], None] | None:
    """A one-line progress bar on a terminal; None when ``stream`` is not one."""
    if not stream.isatty():
        return None

    def show(done: int, total: int, stage: str) -> None:
        frac = min(1.0, done / total) if total else 1.0
        bar = "#" * int(frac * 30)
        stream.write(f"\rreport [{bar:<30s}] {frac:5.1%} {stage:<10s}")
        stream.flush()
        if frac >= 1.0:
            stream.write("\n")

    return show


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog report``; prints what was written and the verdict."""
    from soaklog.report.build import make_report

    result = make_report(
        db_path(args), run_id=args.run, profile=args.profile, out_dir=args.out,
        progress=terminal_progress(), source=args.source,
    )
    v = result.summary["verdict"]
    run = result.summary["run"]
    print(f"run {run['id']} ({run['station']}): {v['summary']}")
    print(f"report: {result.html}")
    print(f"summary: {result.json}; tables: {len(result.csv)} CSV files; plots: {len(result.png)} PNG files "
          f"in {result.html.parent} ({result.elapsed_s:.1f} s)")
    return 0
