"""Reading a station file's keys: every problem collected by file and key, durations with units (pure).

Every kind reads its section with a ``Checker``: a wrong type, a value out of
range or an unknown key becomes one problem located by key
(``instrument[2].resource``) and reading goes on, so a station file's
problems are all reported at once. ``Key`` declares a key for the family's
tables (name, type, default, what it means), from which unknown keys are
found and the station file's schema is made.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from soaklog.errors import InputError

__all__ = [
    "Checker",
    "Key",
    "DURATION",
    "parse_duration",
    "positive",
    "non_negative",
    "plain_date",
    "one_of",
]

_DURATION = re.compile(r"^\s*([0-9]+(?:\.[0-9]*)?|\.[0-9]+)\s*(ms|s|sec|min|h|d)\s*$")
_UNIT_S = {"ms": 1e-3, "s": 1.0, "sec": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}


def parse_duration(text: object) -> float:
    """Seconds from a duration with a unit: ``"500ms"``, ``"2s"``, ``"15min"``, ``"1000h"``, ``"7d"``.

    Raises:
        InputError: no unit, an unknown unit, or not a number.
    """
    if not isinstance(text, str):
        raise InputError(f"a duration is text with a unit, like \"2s\" or \"15min\"; got {text!r}")
    m = _DURATION.match(text)
    if not m:
        raise InputError(f"{text!r} is not a duration; write a number and a unit: ms, s, min, h, d (\"2s\", \"1000h\")")
    return float(m.group(1)) * _UNIT_S[m.group(2)]


class _Duration:
    """The type of a key written as a duration with a unit (``"2s"``)."""

    def __repr__(self) -> str:
        return "DURATION"


#: a key's type: text with a unit of time
DURATION: Any = _Duration()


@dataclass(frozen=True)
class Key:
    """One key of a section: its type(s), default, whether required, and what it means.

    ``type`` is a Python type or a tuple of them (``str``, ``int``, ``float``,
    ``bool``, ``list``, ``dict``, ``datetime.date``) or ``DURATION``.
    """

    type: Any
    doc: str = ""
    default: Any = None
    required: bool = False


def positive(v: float) -> str | None:
    return None if v > 0 else f"must be positive, got {v!r}"


def non_negative(v: float) -> str | None:
    return None if v >= 0 else f"must not be negative, got {v!r}"


def plain_date(v: _dt.date) -> str | None:
    return f"must be a date like 2027-01-31, without a time; got {v!r}" if isinstance(v, _dt.datetime) else None


def one_of(options: Any) -> Callable[[Any], str | None]:
    """A check that a value is one of ``options`` (a collection, or a callable giving one)."""

    def check(v: Any) -> str | None:
        opts = options() if callable(options) else options
        return None if v in opts else f"must be one of {', '.join(sorted(opts))}, got {v!r}"

    return check


class Checker:
    """Collects problems (by key) and warnings instead of stopping at the first."""

    def __init__(self) -> None:
        self.problems: list[tuple[str, str]] = []
        self.warnings: list[str] = []

    def bad(self, key: str, msg: str) -> None:
        self.problems.append((key, msg))

    def warn(self, msg: str) -> None:
        self.warnings.append(msg)

    def table(self, data: Any, key: str) -> dict[str, Any]:
        if not isinstance(data, dict):
            self.bad(key, f"must be a table, got {type(data).__name__}")
            return {}
        return data

    def unknown(self, data: Mapping[str, Any], key: str, allowed: set[str] | Mapping[str, Any]) -> None:
        allowed = set(allowed)
        for k in data:
            if k not in allowed:
                close = _closest(k, allowed)
                hint = f"; did you mean {close!r}?" if close else f"; allowed: {', '.join(sorted(allowed))}"
                self.bad(f"{key}.{k}" if key else k, f"unknown key{hint}")

    def get(
        self,
        data: Mapping[str, Any],
        key: str,
        name: str,
        kind: type | tuple[type, ...],
        *,
        default: Any = None,
        required: bool = False,
        check: Callable[[Any], str | None] | None = None,
    ) -> Any:
        where = f"{key}.{name}" if key else name
        if name not in data:
            if required:
                self.bad(where, "is required")
            return default
        value = data[name]
        kinds = kind if isinstance(kind, tuple) else (kind,)
        if float in kinds and isinstance(value, int) and not isinstance(value, bool):
            value = float(value)
        if isinstance(value, bool) and bool not in kinds:
            self.bad(where, f"must be {_kind_name(kinds)}, got {value!r}")
            return default
        if not isinstance(value, kinds):
            self.bad(where, f"must be {_kind_name(kinds)}, got {value!r}")
            return default
        if isinstance(value, float) and not math.isfinite(value):
            self.bad(where, f"must be a finite number, got {value!r}")
            return default
        if check is not None:
            msg = check(value)
            if msg:
                self.bad(where, msg)
                return default
        return value

    def duration(self, data: Mapping[str, Any], key: str, name: str, *, default: str | None,
                 minimum_s: float = 0.0) -> float | None:
        where = f"{key}.{name}" if key else name
        raw = data.get(name, default)
        if raw is None:
            return None
        try:
            s = parse_duration(raw)
        except InputError as exc:
            self.bad(where, str(exc))
            return None
        if s <= minimum_s:
            self.bad(where, f"must be longer than {minimum_s:g} s, got {raw!r}")
            return None
        return s

    def delay(self, data: Mapping[str, Any], key: str, name: str, default_s: float) -> float:
        """A duration that may be zero (a delay), in seconds."""
        if name not in data:
            return default_s
        try:
            return parse_duration(data[name])
        except InputError as exc:
            self.bad(f"{key}.{name}", str(exc))
            return default_s

    def names(self, data: Mapping[str, Any], key: str, one: str, many: str, what: str) -> list[str]:
        """Names given as ``one = "a"`` and/or ``many = ["b", "c"]`` (a channel and channels, …)."""
        out: list[str] = []
        if one in data:
            v = self.get(data, key, one, str)
            out += [v] if v else []
        if many in data:
            vs = data[many]
            if not isinstance(vs, list) or not all(isinstance(x, str) for x in vs):
                self.bad(f"{key}.{many}", f"must be a list of {what} names, got {vs!r}")
            else:
                out += vs
        return out


def _kind_name(kinds: tuple[type, ...]) -> str:
    names = {str: "text", int: "an integer", float: "a number", bool: "true or false", list: "a list", dict: "a table"}
    return " or ".join(names.get(k, k.__name__) for k in kinds)


def _closest(word: str, options: set[str]) -> str | None:
    import difflib

    m = difflib.get_close_matches(word, sorted(options), n=1, cutoff=0.75)
    return m[0] if m else None
