"""What the command modules share: the parser class, argument types, the safety note, logging set-up.

Standard library only: every command module imports this at its top.
"""

from __future__ import annotations

import argparse
import math
import re
import sys
from collections.abc import Callable

__all__ = ["SAFETY_NOTE", "Parser", "floats", "positive", "finite", "nonneg", "setup_logging"]

SAFETY_NOTE = (
    "soaklog is a logger, not a safety device: every chamber needs its own independent "
    "over-temperature protection, set and tested per its maker's manual and the applicable "
    "standards (IEC 61010-2-010 for laboratory heating equipment)."
)

#: what ``add_parser(sub)`` receives: the ``soaklog`` sub-parsers action
Subparsers = argparse._SubParsersAction  # type: ignore[type-arg]


#: a number or a comma-separated list of numbers that starts with a minus sign
#: (``-50``, ``-50,150``, ``-1.5e-3,2``): a value, never an option
_NEGATIVE_VALUES = re.compile(r"^-(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?(?:,\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)*$")


class Parser(argparse.ArgumentParser):
    """argparse with the project's exit status for bad usage (2) and a one-line message.

    A value that starts with a minus sign and is made of numbers
    (``--cal-span -50,150``) is taken as a value: argparse alone takes
    ``-50,150`` for an unknown option.
    """

    def _parse_optional(self, arg_string: str):  # type: ignore[no-untyped-def]
        if _NEGATIVE_VALUES.match(arg_string):
            return None
        return super()._parse_optional(arg_string)

    def error(self, message: str) -> None:  # type: ignore[override]
        self.exit(2, f"{self.prog}: {message} (see {self.prog} --help)\n")


def floats(count: int, what: str) -> Callable[[str], tuple[float, ...]]:
    """An argument type: ``count`` finite numbers separated by commas."""

    def parse(text: str) -> tuple[float, ...]:
        parts = [p.strip() for p in text.split(",")]
        try:
            values = tuple(float(p) for p in parts)
        except ValueError:
            values = ()
        if len(values) != count or not all(math.isfinite(v) for v in values):
            raise argparse.ArgumentTypeError(f"expected {what}, got {text!r}")
        return values

    return parse


def positive(unit: str) -> Callable[[str], float]:
    """An argument type: a finite number above zero, in ``unit``."""

    def parse(text: str) -> float:
        try:
            v = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a number of {unit}, got {text!r}") from None
        if not (math.isfinite(v) and v > 0):
            raise argparse.ArgumentTypeError(f"expected a positive number of {unit}, got {text!r}")
        return v

    return parse


def finite(unit: str) -> Callable[[str], float]:
    """An argument type: a finite number, in ``unit``."""

    def parse(text: str) -> float:
        try:
            v = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a number of {unit}, got {text!r}") from None
        if not math.isfinite(v):
            raise argparse.ArgumentTypeError(f"expected a finite number of {unit}, got {text!r}")
        return v

    return parse


def nonneg(unit: str) -> Callable[[str], float]:
    """An argument type: a finite number not below zero, in ``unit``."""
    fin = finite(unit)

    def parse(text: str) -> float:
        v = fin(text)
        if v < 0:
            raise argparse.ArgumentTypeError(f"expected a non-negative number of {unit}, got {text!r}")
        return v

    return parse


def setup_logging(debug: bool) -> None:
    """Log lines to stderr, as a service manager collects them; DEBUG with ``--debug``."""
    import logging

    logging.basicConfig(
        level=logging.DEBUG if debug else logging.INFO,
        format="%(asctime)s soaklog %(levelname)s %(message)s",
        stream=sys.stderr,
    )
