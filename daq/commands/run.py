"""``soaklog run``: the logger service in the foreground.

Only the service's own modules load (config, pipeline, alarms, store, drivers):
no dashboard, no plotting, no simulator, so the first reading is limited by
the instruments, not by imports.
"""

from __future__ import annotations

import argparse
import sys

from soaklog.commands.common import SAFETY_NOTE, Subparsers, positive, setup_logging

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``run``."""
    p = sub.add_parser(
        "run", help="the logger service in the foreground (as a service manager runs it)",
        description=(
            "Run the logger for a station file in the foreground until SIGTERM/SIGINT (or --duration). "
            "The same configuration continues the newest run, recording the gap; a changed one starts a "
            "new run. Logs go to stderr."
        ),
    )
    p.add_argument("config", metavar="CONFIG", help="station file (TOML)")
    p.add_argument("--duration", type=positive("s"), metavar="S", help="stop after S seconds")
    p.add_argument("--new-run", action="store_true", help="start a new run even if the configuration is unchanged")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog run``."""
    from soaklog.config import load_config
    from soaklog.service import Service

    cfg = load_config(args.config)
    setup_logging(args.debug)
    for w in cfg.warnings:
        print(f"soaklog: warning: {w}", file=sys.stderr)
    print(f"soaklog: {SAFETY_NOTE}", file=sys.stderr)
    return Service(cfg, new_run=args.new_run).run(args.duration)
