"""Alarm action kinds: what an alarm's action may say, and how it runs (see soaklog.kinds).

An action kind is one module of this folder. It declares its keys (beside
``kind``, ``on`` and ``name``, which every action has), reads and validates
them by file and key, names itself in events, and runs: ``run(params,
fields, ctx)`` gets the validated settings, the alarm's fields (``alarm``,
``state``, ``message``, …) and what the runner lends it (a pyvisa resource
manager, the serial ports it holds open), and returns an outcome and a short
detail. It runs on its own worker thread (``soaklog.actions.ActionRunner``)
with its own time limit; it never raises for trouble out there — a failure is
an outcome, recorded as an event.

An interlock action is a second line behind the chamber's own
over-temperature protection, best effort: its outcome is recorded, never
assumed.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, ClassVar, Literal

from soaklog.kinds.keys import DURATION, Checker, Key, parse_duration

__all__ = [
    "ActionKind",
    "ActionContext",
    "Outcome",
    "COMMON_KEYS",
    "TRIGGERS",
    "MAX_ACTION_TIMEOUT_S",
    "read_timeout",
    "short",
]

Outcome = Literal["done", "failed", "timed_out"]

#: the alarm state changes an action can fire on
TRIGGERS: tuple[str, ...] = ("raised", "cleared", "acknowledged")

#: keys every action has, whatever its kind
COMMON_KEYS: Mapping[str, Key] = {
    "kind": Key(str, "the action's kind", required=True),
    "on": Key((str, list), "the state changes it fires on: raised, cleared, acknowledged", default=["raised"]),
    "name": Key(str, "how it is named in events (default: what it does)", default=""),
}

#: the longest an action may run (a hung program is killed at its limit)
MAX_ACTION_TIMEOUT_S = 600.0
_DETAIL_CHARS = 300


def short(text: str) -> str:
    """An outcome's detail: one line, cut to a readable length."""
    text = " ".join(text.split())
    return text if len(text) <= _DETAIL_CHARS else text[: _DETAIL_CHARS - 1] + "…"


def read_timeout(ck: Checker, d: Mapping[str, Any], key: str, default: str) -> float:
    """An action's ``timeout`` key, in seconds, at most ``MAX_ACTION_TIMEOUT_S``."""
    s = ck.duration(d, key, "timeout", default=default) or parse_duration(default)
    if s > MAX_ACTION_TIMEOUT_S:
        ck.bad(f"{key}.timeout", f"must be at most {MAX_ACTION_TIMEOUT_S:g} s, got {s:g} s")
    return s


#: a timeout key, for the kinds that have one
TIMEOUT_KEY = Key(DURATION, f"how long it may run (at most {MAX_ACTION_TIMEOUT_S:g} s)")


@dataclass(frozen=True)
class ActionContext:
    """What the runner lends an action while it runs.

    Attributes:
        resource_manager: a pyvisa resource manager to use (None: the backend's own).
        hold_port: opens a serial port once and holds it, its control line preset:
            ``hold_port(url, baudrate, line, state) -> (port or None, why not)``.
    """

    resource_manager: Any = None
    hold_port: Callable[[str, int, str, bool], tuple[Any, str]] | None = None


class ActionKind:
    """The base of every action kind."""

    name: ClassVar[str] = ""
    #: the kind's own keys (besides ``COMMON_KEYS``)
    keys: ClassVar[Mapping[str, Key]] = {}

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any] | None:
        """The kind's settings from its table, problems to ``ck`` by key; None when it cannot run at all."""
        return {}

    def describe(self, params: Mapping[str, Any]) -> str:
        """What it does, in a few words (its name in events when the file gives none)."""
        return self.name

    def time_limit_s(self, params: Mapping[str, Any]) -> float:
        """How long one run may take at most (the runner waits that long for it on the way out)."""
        return float(params.get("timeout_s", 0.0))

    def run(self, params: Mapping[str, Any], fields: Mapping[str, str], ctx: ActionContext) -> tuple[Outcome, str]:
        """Do it once; the outcome and a short detail. Never raises for trouble out there."""
        raise NotImplementedError(f"{type(self).__name__} does nothing")
