"""Fixtures that start things: each made through a factory and all closed afterwards, last first."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any, TypeVar

T = TypeVar("T")


@contextmanager
def closing_all(make: Callable[..., T], close: Callable[[T], Any] | None = None) -> Iterator[Callable[..., T]]:
    """Yield a factory that calls ``make`` and remembers what it made; close each one on the way out.

    Use in a fixture: ``with closing_all(lambda speed=30.0: LabRun(tmp_path, speed)) as start: yield start``.
    ``close`` defaults to the object's own ``close()``.
    """
    made: list[T] = []

    def factory(*args: Any, **kwargs: Any) -> T:
        thing = make(*args, **kwargs)
        made.append(thing)
        return thing

    try:
        yield factory
    finally:
        for thing in reversed(made):
            close(thing) if close is not None else thing.close()  # type: ignore[attr-defined]
