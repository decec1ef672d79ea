"""The store's connection: opening the file, and turning every ``sqlite3.Error`` into a ``StorageError``.

One file per station, WAL mode. Internal tables are free to change through
numbered migrations; the public face is the views ``readings_v`` and
``events_v`` and the table ``runs`` (documented in the README), so that any
SQLite tool can read a run's file.

Storage layout, chosen for a 1000-hour, 32-channel, 1 Hz run (115 M readings):

- ``samples`` is a rowid table appended in time order with no secondary index:
  the time stamp is an integer of milliseconds, the temperature an integer of
  micro-degrees Celsius, the expanded uncertainty an integer of 0.1 mK. That
  keeps a reading near 35 bytes on disk. (1 µK and 0.1 mK are far below any
  uncertainty a Pt RTD reaches, so nothing is lost; the raw value is kept as an
  8-byte float, as the instrument gave it.)
- ``minute_index`` maps each minute to the first rowid written in it, so a
  time window becomes a rowid range without an index on every row.
- ``rollup_1m`` keeps per channel per minute: count, min, max, sum, largest U
  and the count of readings without a temperature, so long windows and whole-run
  summaries never touch the raw rows.
- ``latest`` keeps each channel's newest reading and its newest good one.

Readers open the file read-only and never hold a transaction open (that would
stop checkpoints and grow the WAL): every query is fetched whole.
"""

from __future__ import annotations

import functools
import inspect
import sqlite3
from collections.abc import Callable
from pathlib import Path
from typing import Any, Protocol, TypeVar, cast

from soaklog.errors import StorageError

__all__ = ["connect", "translated", "Transaction"]

_F = TypeVar("_F", bound=Callable[..., Any])


class _HasPath(Protocol):
    path: str


def connect(path: str, *, readonly: bool, timeout_s: float) -> sqlite3.Connection:
    """A connection in autocommit mode (transactions are explicit); read-only ones never create the file.

    Raises:
        StorageError: the file cannot be opened, or (read-only) does not exist.
    """
    try:
        if readonly:
            if not Path(path).exists():
                raise StorageError(f"no database at {path}: start the logger first, or give --db")
            conn = sqlite3.connect(
                f"file:{Path(path).resolve()}?mode=ro", uri=True, timeout=timeout_s,
                isolation_level=None, check_same_thread=False,
            )
        else:
            Path(path).parent.mkdir(parents=True, exist_ok=True)
            conn = sqlite3.connect(path, timeout=timeout_s, isolation_level=None, check_same_thread=False)
            conn.execute("PRAGMA journal_mode=WAL")
            conn.execute("PRAGMA synchronous=NORMAL")
        conn.execute("PRAGMA foreign_keys=OFF")
    except sqlite3.Error as exc:
        raise StorageError(f"cannot open database {path}: {exc}") from exc
    except OSError as exc:
        raise StorageError(f"cannot open database {path}: {exc}") from exc
    return conn


def translated(doing: str) -> Callable[[_F], _F]:
    """Make a store method raise ``StorageError("cannot <doing> <file>: <sqlite's reason>")`` for any ``sqlite3.Error``.

    ``doing`` ends with the preposition the file name follows: ``"read the events of"``.
    Generator methods are translated while they are iterated.
    """

    def wrap(fn: _F) -> _F:
        if inspect.isgeneratorfunction(fn):
            @functools.wraps(fn)
            def gen(self: _HasPath, *args: Any, **kwargs: Any) -> Any:
                try:
                    yield from fn(self, *args, **kwargs)
                except sqlite3.Error as exc:
                    raise StorageError(f"cannot {doing} {self.path}: {exc}") from exc

            return cast(_F, gen)

        @functools.wraps(fn)
        def call(self: _HasPath, *args: Any, **kwargs: Any) -> Any:
            try:
                return fn(self, *args, **kwargs)
            except sqlite3.Error as exc:
                raise StorageError(f"cannot {doing} {self.path}: {exc}") from exc

        return cast(_F, call)

    return wrap


class Transaction:
    """BEGIN IMMEDIATE … COMMIT, rolled back on any error (the connection is in autocommit mode)."""

    def __init__(self, conn: sqlite3.Connection) -> None:
        self._conn = conn

    def __enter__(self) -> None:
        self._conn.execute("BEGIN IMMEDIATE")

    def __exit__(self, exc_type: object, *rest: object) -> None:
        if exc_type is None:
            self._conn.execute("COMMIT")
        elif self._conn.in_transaction:
            self._conn.execute("ROLLBACK")
