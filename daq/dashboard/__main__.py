"""``python -m soaklog.dashboard [--db PATH | CONFIG] [--run ID]``: the same command as ``soaklog dash``."""

from __future__ import annotations

import argparse
import sys

from soaklog.dashboard.cli import add_parser
from soaklog.errors import SoaklogError


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m soaklog.dashboard")
    sub = parser.add_subparsers(dest="command")
    add_parser(sub)
    args = parser.parse_args(["dash", *(sys.argv[1:] if argv is None else argv)])
    try:
        return int(args.func(args))
    except SoaklogError as exc:
        print(f"soaklog: {exc}", file=sys.stderr)
        return exc.exit_code


if __name__ == "__main__":
    raise SystemExit(main())
