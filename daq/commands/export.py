"""``soaklog export``: a run's readings as CSV or JSON lines."""

from __future__ import annotations

import argparse
import sys

from soaklog.cliargs import add_db_args, db_path
from soaklog.commands.common import Subparsers

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``export``."""
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
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog export``."""
    from soaklog.export import export_run, parse_time, terminal_progress
    from soaklog.store import StoreReader

    from_ms = parse_time(args.from_t) if args.from_t else None
    to_ms = parse_time(args.to_t) if args.to_t else None
    with StoreReader.open(db_path(args)) as store:
        if args.out:
            with open(args.out, "w", encoding="utf-8", newline="") as fh:
                n = export_run(store, fh, run_id=args.run, fmt=args.format, from_ms=from_ms, to_ms=to_ms,
                               progress=terminal_progress())
            print(f"soaklog: {n} readings written to {args.out}", file=sys.stderr)
        else:
            export_run(store, sys.stdout, run_id=args.run, fmt=args.format, from_ms=from_ms, to_ms=to_ms)
    return 0
