"""``python -m soaklog.dashboard [--db PATH | CONFIG] [--run ID]``: the same command as ``soaklog dash``."""

from __future__ import annotations

import sys

from soaklog.cli import main as cli_main


def main(argv: list[str] | None = None) -> int:
    """``soaklog dash`` with these arguments, through the CLI's one error path."""
    return cli_main(["dash", *(sys.argv[1:] if argv is None else argv)])


if __name__ == "__main__":
    raise SystemExit(main())
