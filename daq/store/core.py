"""The SQLite store: schema, migrations, the batched writer, read queries and public views.

The only module with SQL. One file per station, WAL mode. Internal tables are
free to change through numbered migrations; the public face is the views
``readings_v`` and ``events_v`` and the table ``runs`` (documented in the
README), so that any SQLite tool can read a run's file.

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

import sqlite3
from pathlib import Path

import sqlite_utils

from soaklog.errors import StorageError

from soaklog.store.alarms import AlarmStoreMixin
from soaklog.store.reader import ReadingMixin
from soaklog.store.schema import MIGRATIONS, SCHEMA_VERSION, STATUS_CODES, statements
from soaklog.store.writer import WritingMixin

__all__ = ["Store"]


# ---------------------------------------------------------------- the store


class Store(AlarmStoreMixin, WritingMixin, ReadingMixin):
    """One station's SQLite file, for the service (writer) or a viewer (read-only).

    Not thread-safe: each thread opens its own ``Store``.
    """

    def __init__(self, conn: sqlite3.Connection, path: str, *, readonly: bool) -> None:
        self._conn = conn
        self.path = path
        self.readonly = readonly
        self.db = sqlite_utils.Database(conn)

    # ------------------------------------------------------------ opening

    @classmethod
    def open(cls, path: str | Path, *, readonly: bool = False, timeout_s: float = 10.0) -> Store:
        """Open (and for a writer, create and migrate) the store at ``path``.

        Raises:
            StorageError: the file cannot be opened, is not a soaklog store,
                or (read-only) does not exist.
        """
        p = str(path)
        try:
            if readonly:
                if not Path(p).exists():
                    raise StorageError(f"no database at {p}: start the logger first, or give --db")
                conn = sqlite3.connect(
                    f"file:{Path(p).resolve()}?mode=ro", uri=True, timeout=timeout_s,
                    isolation_level=None, check_same_thread=False,
                )
            else:
                Path(p).parent.mkdir(parents=True, exist_ok=True)
                conn = sqlite3.connect(p, timeout=timeout_s, isolation_level=None, check_same_thread=False)
                conn.execute("PRAGMA journal_mode=WAL")
                conn.execute("PRAGMA synchronous=NORMAL")
            conn.execute("PRAGMA foreign_keys=OFF")
        except sqlite3.Error as exc:
            raise StorageError(f"cannot open database {p}: {exc}") from exc
        store = cls(conn, p, readonly=readonly)
        if not readonly:
            store.migrate()
        else:
            store._check_schema()
        return store

    def close(self) -> None:
        try:
            self._conn.close()
        except sqlite3.Error:
            pass

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @property
    def connection(self) -> sqlite3.Connection:
        return self._conn

    def schema_version(self) -> int:
        return int(self._conn.execute("PRAGMA user_version").fetchone()[0])

    def _check_schema(self) -> None:
        try:
            v = self.schema_version()
            has_runs = self._conn.execute(
                "SELECT 1 FROM sqlite_master WHERE type='table' AND name='runs'"
            ).fetchone()
        except sqlite3.Error as exc:
            raise StorageError(f"{self.path} is not a readable SQLite file: {exc}") from exc
        if not has_runs or v < 1:
            raise StorageError(f"{self.path} is not a soaklog database (no runs table)")
        if v > SCHEMA_VERSION:
            raise StorageError(
                f"{self.path} has schema version {v}, newer than this soaklog ({SCHEMA_VERSION}); upgrade soaklog"
            )

    def migrate(self) -> int:
        """Apply the numbered migrations not yet applied; safe to run twice."""
        try:
            current = self.schema_version()
            if current > SCHEMA_VERSION:
                raise StorageError(
                    f"{self.path} has schema version {current}, newer than this soaklog "
                    f"({SCHEMA_VERSION}); upgrade soaklog"
                )
            for version, sql in MIGRATIONS:
                if version <= current:
                    continue
                self._conn.execute("BEGIN IMMEDIATE")
                try:
                    for stmt in statements(sql):
                        self._conn.execute(stmt)
                    if version == 1:
                        self._conn.executemany(
                            "INSERT OR IGNORE INTO statuses (code, name) VALUES (?, ?)",
                            [(c, n) for n, c in STATUS_CODES.items()],
                        )
                    self._conn.execute(f"PRAGMA user_version = {int(version)}")
                    self._conn.execute("COMMIT")
                except BaseException:
                    self._conn.execute("ROLLBACK")
                    raise
            # statuses added after a file was made
            self._conn.executemany(
                "INSERT OR IGNORE INTO statuses (code, name) VALUES (?, ?)",
                [(c, n) for n, c in STATUS_CODES.items()],
            )
        except sqlite3.Error as exc:
            raise StorageError(f"cannot prepare database {self.path}: {exc}") from exc
        return self.schema_version()

