"""The ``soaklog`` command line: build the parser from the command modules, run one, handle errors once.

Each command lives in its own module of :mod:`soaklog.commands`, whose top
level imports only the standard library; what a command uses (numpy, the
store, pyvisa, Textual, matplotlib, the simulators) loads inside the function
that runs it. So ``soaklog --version`` and ``soaklog convert --help`` load
none of them, and each command loads only its own.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence
from importlib import import_module

from soaklog import __version__
from soaklog.commands.common import SAFETY_NOTE, Parser
from soaklog.errors import SoaklogError

__all__ = ["COMMANDS", "SAFETY_NOTE", "build_parser", "main"]

#: the modules of :mod:`soaklog.commands`, in the order ``soaklog --help`` lists the commands
COMMANDS = ("demo", "run", "check", "status", "convert", "export", "dash", "ack", "report", "simulate", "probe", "bench")


def build_parser() -> Parser:
    """The ``soaklog`` parser with every command of :data:`COMMANDS`."""
    parser = Parser(
        prog="soaklog",
        description="Unattended RTD temperature logger for environmental test chambers.",
        epilog=SAFETY_NOTE,
    )
    parser.add_argument("--version", action="version", version=f"soaklog {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)
    for name in COMMANDS:
        import_module(f"soaklog.commands.{name}").add_parser(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; the only place the CLI turns a :class:`SoaklogError` into a line and an exit status."""
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
    except KeyboardInterrupt:
        return 130
