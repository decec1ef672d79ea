"""``soaklog status``: the newest value of every channel and the active alarms."""

from __future__ import annotations

import argparse
import json

from soaklog.cliargs import add_db_args, db_path
from soaklog.commands.common import Subparsers

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``status``."""
    p = sub.add_parser(
        "status", help="latest value of every channel and the active alarms",
        description="Print the newest reading of every channel of a run, the instruments and the active alarms.",
    )
    add_db_args(p)
    p.add_argument("--run", type=int, metavar="ID", help="run id (default: the newest)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog status``."""
    import time

    from soaklog.status import format_status, status_report
    from soaklog.store import StoreReader

    with StoreReader.open(db_path(args)) as store:
        rep = status_report(store, args.run, now_ms=int(time.time() * 1000))
    if args.json:
        print(json.dumps(rep, indent=2))
    else:
        print(format_status(rep))
    return 0
