"""The `soaklog` command line: parse, call one library function, format."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from daq import __version__
from daq.errors import SoaklogError

__all__ = ["main", "build_parser"]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="soaklog",
        description="Unattended RTD temperature logger for environmental test chambers.",
    )
    parser.add_argument("--version", action="version", version=f"soaklog {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    parser.add_subparsers(dest="command", metavar="COMMAND")
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
