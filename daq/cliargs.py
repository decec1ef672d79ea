"""What several commands share on the command line: which database file to use."""

from __future__ import annotations

import argparse

from soaklog.errors import InputError

__all__ = ["DEFAULT_DB", "add_db_args", "db_path"]

#: where `soaklog demo` writes, and where the viewers look when told nothing
DEFAULT_DB = "soaklog-demo.db"


def add_db_args(p: argparse.ArgumentParser) -> None:
    """``[CONFIG]`` (its database is used) and ``--db PATH``."""
    p.add_argument("config", nargs="?", metavar="CONFIG", help="station file (its database is used)")
    p.add_argument("--db", metavar="PATH", help=f"database file (default: {DEFAULT_DB}, as the demo writes it)")


def db_path(args: argparse.Namespace) -> str:
    """The database a command was pointed at: ``--db``, a station file's, or the demo's."""
    if args.db and args.config:
        raise InputError("give a CONFIG or --db, not both")
    if args.db:
        return str(args.db)
    if args.config:
        from soaklog.config import load_config

        return load_config(args.config).database
    return DEFAULT_DB
