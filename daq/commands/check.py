"""``soaklog check``: validate a station file and print what it would log (starts nothing)."""

from __future__ import annotations

import argparse
import json

from soaklog.commands.common import SAFETY_NOTE, Subparsers

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``check``."""
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
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog check``."""
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
