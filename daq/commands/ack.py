"""``soaklog ack``: acknowledge alarms through the running logger.

The command itself (queue the request, wait for the logger's outcome) is
:func:`soaklog.alarms_cli.cmd_ack`, loaded when the command runs.
"""

from __future__ import annotations

import argparse

from soaklog.cliargs import DEFAULT_DB
from soaklog.commands.common import Subparsers

__all__ = ["DEFAULT_WAIT_S", "add_parser", "run"]

#: how long ``ack`` waits for the logger to apply the request (it does so every commit interval, ≤ 1 s)
DEFAULT_WAIT_S = 10.0


def add_parser(sub: Subparsers) -> argparse.ArgumentParser:
    """Add ``ack``."""
    p = sub.add_parser(
        "ack", help="acknowledge alarms (the running logger applies it and records who and when)",
        description=(
            "Acknowledge one alarm (its id, such as air-over-temperature:air-supply, or a rule name for all of "
            "its channels) or --all. A latched alarm whose condition has gone is reset. The request goes "
            "through the store's operator actions table: the running logger applies it, records it with the "
            "time, who and the note in events_v, and this command prints what it did. An acknowledgement "
            "never clears an alarm whose condition is still there."
        ),
    )
    p.add_argument("alarm", nargs="?", metavar="ALARM", help="alarm id or rule name (see soaklog status)")
    p.add_argument("config", nargs="?", metavar="CONFIG", help="station file (its database is used)")
    p.add_argument("--all", action="store_true", help="every alarm that waits for an acknowledgement")
    p.add_argument("--note", default="", metavar="TEXT", help="a note recorded with the acknowledgement")
    p.add_argument("--db", metavar="PATH", help=f"database file (default: {DEFAULT_DB}, as the demo writes it)")
    p.add_argument("--actor", metavar="NAME", help="who acknowledges (default: user@host)")
    p.add_argument("--wait", type=float, default=DEFAULT_WAIT_S, metavar="S",
                   help=f"seconds to wait for the logger to apply it (default {DEFAULT_WAIT_S:g}; 0: do not wait)")
    p.set_defaults(func=run)
    return p


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog ack``."""
    from soaklog.alarms_cli import cmd_ack

    return cmd_ack(args)
