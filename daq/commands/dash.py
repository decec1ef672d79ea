"""``soaklog dash``: the live dashboard of a station's file (Textual loads only when it runs)."""

from __future__ import annotations

import argparse

from soaklog.cliargs import DEFAULT_DB, db_path
from soaklog.commands.common import Subparsers

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> argparse.ArgumentParser:
    """Add ``dash``."""
    p: argparse.ArgumentParser = sub.add_parser(
        "dash", help="the live dashboard of a station's file (keyboard first; ? lists the keys)",
        description=(
            "Show a station's run live in the terminal: every channel now, trends with the planned set "
            "point and alarm limits, alarms to acknowledge, shelve or annotate, and the instruments. "
            "Reads the file read-only (any number of dashboards can watch one file); a finished run's "
            "file opens for review with no logger running. Press ? for the keys, q to quit. "
            "Software alarms are not a safety device."
        ),
    )
    p.add_argument("config", nargs="?", metavar="CONFIG", help="station file (its database is used)")
    p.add_argument("--db", metavar="PATH", help=f"database file (default: {DEFAULT_DB}, as the demo writes it)")
    p.add_argument("--run", type=int, metavar="ID", help="run id (default: the newest, following new runs)")
    p.set_defaults(func=run)
    return p


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog dash``."""
    from soaklog.dashboard.app import run_dashboard

    return run_dashboard(db_path(args), run_id=args.run)
