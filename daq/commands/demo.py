"""``soaklog demo``: the simulated lab and the logger against it, accelerated."""

from __future__ import annotations

import argparse

from soaklog.cliargs import DEFAULT_DB
from soaklog.commands.common import Subparsers, positive, setup_logging

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``demo``."""
    p = sub.add_parser(
        "demo", help="the simulated lab and the logger against it, accelerated; no hardware, no config",
        description=(
            "Start a simulated environmental chamber (power modules cycled -40/+125 °C) with a scanning "
            "multimeter on loopback TCP and a serial RTD board on a pseudo-terminal, and log it with the "
            "real logger, faster than real time. Prints where the data is and what to run next."
        ),
    )
    p.add_argument("--headless", action="store_true", help="no dashboard: progress lines only")
    p.add_argument("--duration", type=positive("s"), metavar="S", help="stop after S seconds of your time (default: Ctrl-C)")
    p.add_argument("--db", metavar="PATH", default=DEFAULT_DB, help=f"database file (default {DEFAULT_DB})")
    p.add_argument("--speed", type=positive("×"), default=60.0, metavar="X",
                   help="chamber seconds per real second (default 60)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog demo``."""
    from soaklog.demo import main_demo

    setup_logging(args.debug)
    import logging

    logging.getLogger("soaklog").setLevel(logging.DEBUG if args.debug else logging.WARNING)
    return main_demo(args.db, args.duration, args.speed, args.headless)
