"""Waiting in tests: poll a condition against a deadline (never a bare sleep standing in for a condition)."""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

#: how long a test waits for something the machine only has to get round to: generous, because the suite
#: must pass on 2 loaded cores with a second copy of itself running beside it (DEVELOPERS.md, "Tests");
#: a test's own bound on speed belongs in its assertions, not in this deadline
DEFAULT_TIMEOUT_S = 60.0


def wait_for(condition: Callable[[], object], timeout_s: float = DEFAULT_TIMEOUT_S, what: str = "condition",
             every_s: float = 0.02) -> None:
    """Poll ``condition`` until it is true; fail naming ``what`` at the deadline."""
    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out after {timeout_s} s waiting for {what}")
        time.sleep(every_s)


async def wait_until(pilot: Any, condition: Callable[[], bool], *, timeout_s: float = DEFAULT_TIMEOUT_S,
                     what: str = "condition") -> None:
    """Let a Textual app run (through its ``pilot``) until ``condition`` holds, failing at the deadline."""
    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out after {timeout_s} s waiting for {what}")
        await pilot.pause(0.02)
