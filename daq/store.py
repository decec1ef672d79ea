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

import hashlib
import json
import math
import sqlite3
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
import sqlite_utils

from daq.errors import StorageError

__all__ = [
    "Store",
    "SampleBatch",
    "RunInfo",
    "ChannelInfo",
    "STATUS_CODES",
    "status_code",
    "status_name",
    "iso_utc",
    "SCHEMA_VERSION",
]

#: reading statuses as stored (0 = ok takes no space in a SQLite record)
STATUS_CODES: dict[str, int] = {
    "ok": 0,
    "open": 1,
    "short": 2,
    "overload": 3,
    "out_of_range": 4,
    "timeout": 5,
    "lost": 6,
    "garbage": 7,
    "checksum": 8,
    "error": 9,
    "invalid": 10,
    "stale": 11,
}
_STATUS_NAMES = {v: k for k, v in STATUS_CODES.items()}

TEMP_SCALE = 1_000_000  # stored temperature: micro-degrees Celsius
U_SCALE = 10_000  # stored expanded uncertainty: units of 0.1 mK


def status_code(name: str) -> int:
    try:
        return STATUS_CODES[name]
    except KeyError:
        raise StorageError(f"unknown reading status {name!r}") from None


def status_name(code: int) -> str:
    return _STATUS_NAMES.get(int(code), f"status_{int(code)}")


def iso_utc(t_ms: int | float | None) -> str | None:
    """ISO 8601 UTC with milliseconds and a Z, as the public views give it."""
    if t_ms is None:
        return None
    dt = datetime.fromtimestamp(t_ms / 1000.0, tz=UTC)
    return dt.strftime("%Y-%m-%dT%H:%M:%S.") + f"{dt.microsecond // 1000:03d}Z"


# ---------------------------------------------------------------- schema

_ISO = "strftime('%Y-%m-%dT%H:%M:%fZ', {col} / 1000.0, 'unixepoch')"

_MIGRATIONS: list[tuple[int, str]] = [
    (
        1,
        f"""
        CREATE TABLE IF NOT EXISTS runs (
            id INTEGER PRIMARY KEY,
            started_utc TEXT NOT NULL,
            ended_utc TEXT,
            config TEXT NOT NULL,
            config_sha256 TEXT NOT NULL,
            station TEXT NOT NULL DEFAULT '',
            name TEXT NOT NULL DEFAULT '',
            software TEXT NOT NULL DEFAULT '',
            config_path TEXT NOT NULL DEFAULT ''
        );
        CREATE TABLE IF NOT EXISTS channels (
            id INTEGER PRIMARY KEY,
            run_id INTEGER NOT NULL REFERENCES runs(id),
            name TEXT NOT NULL,
            label TEXT NOT NULL DEFAULT '',
            instrument TEXT NOT NULL DEFAULT '',
            raw_unit TEXT NOT NULL DEFAULT 'ohm',
            meta TEXT NOT NULL DEFAULT '{{}}',
            UNIQUE (run_id, name)
        );
        CREATE TABLE IF NOT EXISTS statuses (
            code INTEGER PRIMARY KEY,
            name TEXT NOT NULL UNIQUE
        );
        CREATE TABLE IF NOT EXISTS samples (
            ch INTEGER NOT NULL,
            t_ms INTEGER NOT NULL,
            raw REAL,
            temp_uc INTEGER,
            u_e4 INTEGER,
            status INTEGER NOT NULL DEFAULT 0,
            flags INTEGER NOT NULL DEFAULT 0
        );
        CREATE TABLE IF NOT EXISTS minute_index (
            run_id INTEGER NOT NULL,
            minute INTEGER NOT NULL,
            first_rowid INTEGER NOT NULL,
            PRIMARY KEY (run_id, minute)
        ) WITHOUT ROWID;
        CREATE TABLE IF NOT EXISTS rollup_1m (
            ch INTEGER NOT NULL,
            minute INTEGER NOT NULL,
            n INTEGER NOT NULL,
            n_bad INTEGER NOT NULL,
            t_min REAL,
            t_max REAL,
            t_sum REAL,
            u_max REAL,
            PRIMARY KEY (ch, minute)
        ) WITHOUT ROWID;
        CREATE TABLE IF NOT EXISTS latest (
            ch INTEGER PRIMARY KEY,
            t_ms INTEGER NOT NULL,
            raw REAL,
            temp_c REAL,
            u_c REAL,
            status INTEGER NOT NULL,
            flags INTEGER NOT NULL,
            last_ok_ms INTEGER,
            last_ok_temp_c REAL,
            t_min_c REAL,
            t_max_c REAL
        );
        CREATE TABLE IF NOT EXISTS events (
            id INTEGER PRIMARY KEY,
            run_id INTEGER NOT NULL,
            t_ms INTEGER NOT NULL,
            kind TEXT NOT NULL,
            ch INTEGER,
            severity TEXT NOT NULL DEFAULT 'info',
            message TEXT NOT NULL,
            data TEXT NOT NULL DEFAULT '{{}}'
        );
        CREATE INDEX IF NOT EXISTS events_run_t ON events (run_id, t_ms);
        CREATE TABLE IF NOT EXISTS instruments (
            run_id INTEGER NOT NULL,
            name TEXT NOT NULL,
            updated_ms INTEGER NOT NULL,
            connected INTEGER NOT NULL,
            identity TEXT NOT NULL DEFAULT '',
            health TEXT NOT NULL DEFAULT '{{}}',
            PRIMARY KEY (run_id, name)
        );
        CREATE VIEW IF NOT EXISTS readings_v AS
            SELECT c.run_id AS run_id,
                   c.name AS channel,
                   {_ISO.format(col="s.t_ms")} AS t_utc,
                   s.raw AS raw,
                   c.raw_unit AS raw_unit,
                   s.temp_uc / {TEMP_SCALE}.0 AS temperature_c,
                   s.u_e4 / {U_SCALE}.0 AS uncertainty_c,
                   COALESCE(st.name, 'status_' || s.status) AS status
            FROM samples s
            JOIN channels c ON c.id = s.ch
            LEFT JOIN statuses st ON st.code = s.status;
        CREATE VIEW IF NOT EXISTS events_v AS
            SELECT e.run_id AS run_id,
                   {_ISO.format(col="e.t_ms")} AS t_utc,
                   e.kind AS kind,
                   c.name AS channel,
                   e.severity AS severity,
                   e.message AS message
            FROM events e
            LEFT JOIN channels c ON c.id = e.ch
            ORDER BY e.t_ms, e.id;
        """,
    ),
    (
        2,
        """
        CREATE TABLE IF NOT EXISTS operator_actions (
            id INTEGER PRIMARY KEY,
            t_ms INTEGER NOT NULL,
            kind TEXT NOT NULL,
            target TEXT NOT NULL DEFAULT '',
            note TEXT NOT NULL DEFAULT '',
            actor TEXT NOT NULL DEFAULT '',
            until_ms INTEGER,
            applied_ms INTEGER,
            outcome TEXT
        );
        """,
    ),
]

SCHEMA_VERSION = _MIGRATIONS[-1][0]


# ---------------------------------------------------------------- records


@dataclass(frozen=True)
class RunInfo:
    """The run a service writes into, and how it got it."""

    run_id: int
    continued: bool
    last_t_ms: int | None
    config_sha256: str


@dataclass(frozen=True)
class ChannelInfo:
    id: int
    run_id: int
    name: str
    label: str
    instrument: str
    raw_unit: str


@dataclass(frozen=True)
class SampleBatch:
    """Readings to store, columnar; every array has one entry per reading.

    ``temp_c`` and ``u_c`` are NaN where the reading has no temperature.
    ``u_c`` is the expanded uncertainty (k = 2).
    """

    ch: npt.NDArray[np.int64]
    t_ms: npt.NDArray[np.int64]
    raw: npt.NDArray[np.float64]
    temp_c: npt.NDArray[np.float64]
    u_c: npt.NDArray[np.float64]
    status: npt.NDArray[np.int64]
    flags: npt.NDArray[np.int64]

    def __len__(self) -> int:
        return int(self.ch.shape[0])

    @staticmethod
    def concat(batches: Sequence[SampleBatch]) -> SampleBatch:
        return SampleBatch(
            *(np.concatenate([getattr(b, f) for b in batches]) for f in _BATCH_FIELDS)
        )


_BATCH_FIELDS = ("ch", "t_ms", "raw", "temp_c", "u_c", "status", "flags")


def config_digest(config_text: str) -> str:
    return hashlib.sha256(config_text.encode("utf-8")).hexdigest()


def _nullable_ints(values: npt.NDArray[np.float64], scale: int) -> list[int | None]:
    """Scaled, rounded integers, with None where the value is NaN (stored as NULL)."""
    bad = ~np.isfinite(values)
    ints = np.rint(np.where(bad, 0.0, values) * scale).astype(np.int64).tolist()
    for i in np.flatnonzero(bad).tolist():
        ints[i] = None
    return ints


def _nullable_floats(values: npt.NDArray[np.float64]) -> list[float | None]:
    out = values.tolist()
    for i in np.flatnonzero(~np.isfinite(values)).tolist():
        out[i] = None
    return out


# ---------------------------------------------------------------- the store


class Store:
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
            for version, sql in _MIGRATIONS:
                if version <= current:
                    continue
                self._conn.execute("BEGIN IMMEDIATE")
                try:
                    for stmt in _statements(sql):
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

    # ------------------------------------------------------------ runs and channels

    def begin_run(
        self,
        config_text: str,
        *,
        now_ms: int,
        station: str = "",
        name: str = "",
        software: str = "",
        config_path: str = "",
        new_run: bool = False,
    ) -> RunInfo:
        """Continue the newest run if its configuration is the same text, else start a new one.

        A continued run is re-opened (``ended_utc`` cleared); the caller records
        the gap from ``last_t_ms`` as an event.
        """
        digest = config_digest(config_text)
        row = self._conn.execute(
            "SELECT id, config_sha256 FROM runs ORDER BY id DESC LIMIT 1"
        ).fetchone()
        if row is not None and row[1] == digest and not new_run:
            run_id = int(row[0])
            last = self._conn.execute(
                "SELECT MAX(l.t_ms) FROM latest l JOIN channels c ON c.id = l.ch WHERE c.run_id = ?",
                (run_id,),
            ).fetchone()[0]
            self._conn.execute("UPDATE runs SET ended_utc = NULL WHERE id = ?", (run_id,))
            return RunInfo(run_id, True, None if last is None else int(last), digest)
        cur = self._conn.execute(
            "INSERT INTO runs (started_utc, config, config_sha256, station, name, software, config_path) "
            "VALUES (?, ?, ?, ?, ?, ?, ?)",
            (iso_utc(now_ms), config_text, digest, station, name, software, config_path),
        )
        return RunInfo(int(cur.lastrowid or 0), False, None, digest)

    def end_run(self, run_id: int, *, now_ms: int) -> None:
        self._conn.execute("UPDATE runs SET ended_utc = ? WHERE id = ?", (iso_utc(now_ms), run_id))

    def ensure_channels(
        self, run_id: int, channels: Sequence[tuple[str, str, str, str]]
    ) -> dict[str, int]:
        """Channel ids for ``(name, label, instrument, raw_unit)`` entries, creating what is missing."""
        for name, label, instrument, unit in channels:
            self._conn.execute(
                "INSERT INTO channels (run_id, name, label, instrument, raw_unit) VALUES (?, ?, ?, ?, ?) "
                "ON CONFLICT (run_id, name) DO UPDATE SET label = excluded.label, "
                "instrument = excluded.instrument, raw_unit = excluded.raw_unit",
                (run_id, name, label, instrument, unit),
            )
        rows = self._conn.execute("SELECT name, id FROM channels WHERE run_id = ?", (run_id,)).fetchall()
        return {str(n): int(i) for n, i in rows}

    def runs(self) -> list[dict[str, Any]]:
        return list(self.db.query(
            "SELECT id, started_utc, ended_utc, station, name, config_sha256, config_path FROM runs ORDER BY id"
        ))

    def run(self, run_id: int | None = None) -> dict[str, Any]:
        """One run's row (the newest when ``run_id`` is None)."""
        if run_id is None:
            rows = list(self.db.query("SELECT * FROM runs ORDER BY id DESC LIMIT 1"))
        else:
            rows = list(self.db.query("SELECT * FROM runs WHERE id = ?", [run_id]))
        if not rows:
            raise StorageError(
                f"no run {run_id} in {self.path}" if run_id is not None else f"no run yet in {self.path}"
            )
        return rows[0]

    def channels(self, run_id: int) -> list[ChannelInfo]:
        rows = self._conn.execute(
            "SELECT id, run_id, name, label, instrument, raw_unit FROM channels WHERE run_id = ? ORDER BY id",
            (run_id,),
        ).fetchall()
        return [ChannelInfo(int(r[0]), int(r[1]), r[2], r[3], r[4], r[5]) for r in rows]

    # ------------------------------------------------------------ writing

    def write(self, run_id: int, batch: SampleBatch) -> None:
        """Store a batch in one transaction: samples, minute index, rollups, latest.

        Raises:
            StorageError: the write failed (disk full, I/O error); nothing of
                the batch is stored, so the caller can keep it and retry.
        """
        n = len(batch)
        if n == 0:
            return
        order = np.argsort(batch.t_ms, kind="stable")
        if not np.all(order == np.arange(n)):
            batch = SampleBatch(*(getattr(batch, f)[order] for f in _BATCH_FIELDS))
        ch = batch.ch.tolist()
        t_ms = batch.t_ms.tolist()
        raw = _nullable_floats(batch.raw)
        temp = _nullable_ints(batch.temp_c, TEMP_SCALE)
        unc = _nullable_ints(batch.u_c, U_SCALE)
        status = batch.status.tolist()
        flags = batch.flags.tolist()
        rollups = _rollups(batch)
        latest = _latest(batch)
        conn = self._conn
        try:
            conn.execute("BEGIN IMMEDIATE")
            try:
                conn.executemany(
                    "INSERT INTO samples (ch, t_ms, raw, temp_uc, u_e4, status, flags) VALUES (?, ?, ?, ?, ?, ?, ?)",
                    zip(ch, t_ms, raw, temp, unc, status, flags, strict=True),
                )
                last_rowid = int(conn.execute("SELECT last_insert_rowid()").fetchone()[0])
                first_rowid = last_rowid - n + 1
                minutes = batch.t_ms // 60_000
                starts = np.flatnonzero(np.r_[True, minutes[1:] != minutes[:-1]])
                conn.executemany(
                    "INSERT OR IGNORE INTO minute_index (run_id, minute, first_rowid) VALUES (?, ?, ?)",
                    [(run_id, int(minutes[i]), first_rowid + int(i)) for i in starts],
                )
                conn.executemany(
                    "INSERT INTO rollup_1m (ch, minute, n, n_bad, t_min, t_max, t_sum, u_max) "
                    "VALUES (?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT (ch, minute) DO UPDATE SET "
                    "n = n + excluded.n, n_bad = n_bad + excluded.n_bad, "
                    "t_min = CASE WHEN t_min IS NULL OR excluded.t_min < t_min THEN excluded.t_min ELSE t_min END, "
                    "t_max = CASE WHEN t_max IS NULL OR excluded.t_max > t_max THEN excluded.t_max ELSE t_max END, "
                    "t_sum = COALESCE(t_sum, 0) + COALESCE(excluded.t_sum, 0), "
                    "u_max = CASE WHEN u_max IS NULL OR excluded.u_max > u_max THEN excluded.u_max ELSE u_max END",
                    rollups,
                )
                conn.executemany(
                    "INSERT INTO latest (ch, t_ms, raw, temp_c, u_c, status, flags, last_ok_ms, last_ok_temp_c, t_min_c, t_max_c) "
                    "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT (ch) DO UPDATE SET "
                    "t_ms = excluded.t_ms, raw = excluded.raw, temp_c = excluded.temp_c, u_c = excluded.u_c, "
                    "status = excluded.status, flags = excluded.flags, "
                    "last_ok_ms = COALESCE(excluded.last_ok_ms, last_ok_ms), "
                    "last_ok_temp_c = CASE WHEN excluded.last_ok_ms IS NULL THEN last_ok_temp_c ELSE excluded.last_ok_temp_c END, "
                    "t_min_c = CASE WHEN t_min_c IS NULL OR excluded.t_min_c < t_min_c THEN excluded.t_min_c ELSE t_min_c END, "
                    "t_max_c = CASE WHEN t_max_c IS NULL OR excluded.t_max_c > t_max_c THEN excluded.t_max_c ELSE t_max_c END",
                    latest,
                )
                conn.execute("COMMIT")
            except BaseException:
                if conn.in_transaction:
                    conn.execute("ROLLBACK")
                raise
        except sqlite3.Error as exc:
            raise StorageError(f"cannot write {n} readings to {self.path}: {exc}") from exc

    def add_event(
        self,
        run_id: int,
        t_ms: int,
        kind: str,
        message: str,
        *,
        severity: str = "info",
        ch: int | None = None,
        data: dict[str, Any] | None = None,
    ) -> int:
        try:
            cur = self._conn.execute(
                "INSERT INTO events (run_id, t_ms, kind, ch, severity, message, data) VALUES (?, ?, ?, ?, ?, ?, ?)",
                (run_id, int(t_ms), kind, ch, severity, message, json.dumps(data or {}, sort_keys=True)),
            )
        except sqlite3.Error as exc:
            raise StorageError(f"cannot record event {kind!r} in {self.path}: {exc}") from exc
        return int(cur.lastrowid or 0)

    def set_instrument(
        self, run_id: int, name: str, *, now_ms: int, connected: bool, identity: str, health: dict[str, Any]
    ) -> None:
        try:
            self._conn.execute(
                "INSERT INTO instruments (run_id, name, updated_ms, connected, identity, health) "
                "VALUES (?, ?, ?, ?, ?, ?) ON CONFLICT (run_id, name) DO UPDATE SET "
                "updated_ms = excluded.updated_ms, connected = excluded.connected, "
                "identity = excluded.identity, health = excluded.health",
                (run_id, name, int(now_ms), int(connected), identity, json.dumps(health, sort_keys=True, default=str)),
            )
        except sqlite3.Error as exc:
            raise StorageError(f"cannot record instrument {name!r} in {self.path}: {exc}") from exc

    def checkpoint(self) -> None:
        try:
            self._conn.execute("PRAGMA wal_checkpoint(PASSIVE)").fetchall()
        except sqlite3.Error:
            pass

    # ------------------------------------------------------------ reading

    def latest(self, run_id: int) -> list[dict[str, Any]]:
        """Each channel's newest reading, newest good one, and min/max since the run started."""
        rows = self._conn.execute(
            "SELECT c.id, c.name, c.label, c.instrument, c.raw_unit, l.t_ms, l.raw, l.temp_c, l.u_c, "
            "l.status, l.flags, l.last_ok_ms, l.last_ok_temp_c, l.t_min_c, l.t_max_c "
            "FROM channels c LEFT JOIN latest l ON l.ch = c.id WHERE c.run_id = ? ORDER BY c.id",
            (run_id,),
        ).fetchall()
        out = []
        for r in rows:
            out.append({
                "ch": int(r[0]), "id": r[1], "label": r[2], "instrument": r[3], "raw_unit": r[4],
                "t_ms": r[5], "t_utc": iso_utc(r[5]), "raw": r[6], "temperature_c": r[7],
                "uncertainty_c": r[8], "status": "no_data" if r[9] is None else status_name(r[9]),
                "flags": r[10] or 0, "last_ok_ms": r[11], "last_ok_temperature_c": r[12],
                "min_c": r[13], "max_c": r[14],
            })
        return out

    def events(self, run_id: int, *, after_id: int = 0, limit: int = 10_000) -> list[dict[str, Any]]:
        rows = self._conn.execute(
            "SELECT e.id, e.t_ms, e.kind, c.name, e.severity, e.message, e.data FROM events e "
            "LEFT JOIN channels c ON c.id = e.ch WHERE e.run_id = ? AND e.id > ? ORDER BY e.id LIMIT ?",
            (run_id, after_id, limit),
        ).fetchall()
        return [
            {"id": r[0], "t_ms": r[1], "t_utc": iso_utc(r[1]), "kind": r[2], "channel": r[3],
             "severity": r[4], "message": r[5], "data": json.loads(r[6] or "{}")}
            for r in rows
        ]

    def instruments(self, run_id: int) -> list[dict[str, Any]]:
        rows = self._conn.execute(
            "SELECT name, updated_ms, connected, identity, health FROM instruments WHERE run_id = ? ORDER BY name",
            (run_id,),
        ).fetchall()
        return [
            {"name": r[0], "updated_ms": r[1], "connected": bool(r[2]), "identity": r[3],
             "health": json.loads(r[4] or "{}")}
            for r in rows
        ]

    def time_span(self, run_id: int) -> tuple[int | None, int | None]:
        """First and last time stamp (ms) of the run's readings."""
        row = self._conn.execute(
            "SELECT first_rowid FROM minute_index WHERE run_id = ? ORDER BY minute LIMIT 1", (run_id,)
        ).fetchone()
        if row is None:
            return None, None
        first = self._conn.execute("SELECT t_ms FROM samples WHERE rowid = ?", (int(row[0]),)).fetchone()
        last = self._conn.execute(
            "SELECT MAX(l.t_ms) FROM latest l JOIN channels c ON c.id = l.ch WHERE c.run_id = ?", (run_id,)
        ).fetchone()[0]
        return (None if first is None else int(first[0])), (None if last is None else int(last))

    def _run_of(self, ch: int) -> int:
        row = self._conn.execute("SELECT run_id FROM channels WHERE id = ?", (ch,)).fetchone()
        if row is None:
            raise StorageError(f"no channel with id {ch} in {self.path}")
        return int(row[0])

    def _rowid_at_minute(self, run_id: int, minute: int) -> int:
        row = self._conn.execute(
            "SELECT first_rowid FROM minute_index WHERE run_id = ? AND minute >= ? ORDER BY minute LIMIT 1",
            (run_id, minute),
        ).fetchone()
        if row is None:
            row = self._conn.execute("SELECT COALESCE(MAX(rowid), 0) + 1 FROM samples").fetchone()
        return int(row[0])

    def _rowid_range(self, run_id: int, from_ms: int, to_ms: int) -> tuple[int, int]:
        """Rowids that can hold the run's readings in [from_ms, to_ms] (a superset, by whole minutes)."""
        lo = self._rowid_at_minute(run_id, from_ms // 60_000)
        hi = self._rowid_at_minute(run_id, to_ms // 60_000 + 1)
        return lo, hi

    def raw_window(
        self, ch: int, from_ms: int, to_ms: int
    ) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.float64], npt.NDArray[np.float64]]:
        """One channel's readings in a window: time (ms), temperature (°C, NaN if none), U (K)."""
        lo, hi = self._rowid_range(self._run_of(ch), from_ms, to_ms)
        rows = self._conn.execute(
            "SELECT t_ms, temp_uc, u_e4 FROM samples WHERE rowid >= ? AND rowid < ? AND ch = ? "
            "AND t_ms >= ? AND t_ms <= ?",
            (lo, hi, ch, from_ms, to_ms),
        ).fetchall()
        if not rows:
            empty = np.empty(0)
            return empty.astype(np.int64), empty, empty
        arr = np.array(rows, dtype=np.float64)  # None -> nan
        return arr[:, 0].astype(np.int64), arr[:, 1] / TEMP_SCALE, arr[:, 2] / U_SCALE

    def trend(self, ch: int, from_ms: int, to_ms: int, *, max_points: int = 2000) -> dict[str, Any]:
        """A channel's trend over a window with at most ``max_points`` buckets.

        Short windows come from the raw readings; long ones from the minute
        rollups, aggregated into buckets of whole minutes (mean, min and max
        of each bucket), so a 1000-hour window costs what 2000 rows cost.
        """
        span_ms = max(1, to_ms - from_ms)
        raw_points_estimate = span_ms / 1000.0
        if raw_points_estimate <= 4 * max_points:
            t, temp, _u = self.raw_window(ch, from_ms, to_ms)
            return {"source": "raw", "t_ms": t, "mean_c": temp, "min_c": temp, "max_c": temp}
        minutes = max(1, math.ceil(span_ms / 60_000 / max_points))
        rows = self._conn.execute(
            "SELECT (minute / ?) AS b, SUM(n - n_bad), MIN(t_min), MAX(t_max), SUM(t_sum) FROM rollup_1m "
            "WHERE ch = ? AND minute >= ? AND minute <= ? GROUP BY b ORDER BY b",
            (minutes, ch, from_ms // 60_000, to_ms // 60_000),
        ).fetchall()
        if not rows:
            empty = np.empty(0)
            return {"source": "rollup", "t_ms": empty.astype(np.int64), "mean_c": empty, "min_c": empty, "max_c": empty}
        arr = np.array(rows, dtype=np.float64)
        n_good = arr[:, 1]
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = np.where(n_good > 0, arr[:, 4] / n_good, np.nan)
        t_mid = ((arr[:, 0] * minutes + minutes / 2.0) * 60_000).astype(np.int64)
        return {"source": "rollup", "t_ms": t_mid, "mean_c": mean, "min_c": arr[:, 2], "max_c": arr[:, 3]}

    def summary(self, run_id: int) -> list[dict[str, Any]]:
        """Per channel over the whole run, from the rollups: count, bad, min, max, mean."""
        rows = self._conn.execute(
            "SELECT c.name, SUM(r.n), SUM(r.n_bad), MIN(r.t_min), MAX(r.t_max), SUM(r.t_sum), MAX(r.u_max) "
            "FROM channels c LEFT JOIN rollup_1m r ON r.ch = c.id WHERE c.run_id = ? GROUP BY c.id ORDER BY c.id",
            (run_id,),
        ).fetchall()
        out = []
        for name, n, bad, tmin, tmax, tsum, umax in rows:
            good = (n or 0) - (bad or 0)
            out.append({
                "channel": name, "readings": n or 0, "without_temperature": bad or 0,
                "min_c": tmin, "max_c": tmax, "mean_c": (tsum / good) if good else None, "max_u_c": umax,
            })
        return out

    def iter_readings(
        self, run_id: int, *, from_ms: int | None = None, to_ms: int | None = None, batch: int = 50_000
    ) -> Iterator[list[tuple[Any, ...]]]:
        """Stream the run's readings in time order, in chunks, without a long read transaction.

        Yields lists of ``(t_ms, channel, raw, raw_unit, temperature_c, uncertainty_c, status)``.
        """
        chans = {c.id: c for c in self.channels(run_id)}
        if not chans:
            return
        lo_ms = from_ms if from_ms is not None else 0
        hi_ms = to_ms if to_ms is not None else 2**62
        lo, hi = self._rowid_range(run_id, lo_ms, min(hi_ms, 2**50))
        ids = ",".join(str(i) for i in chans)
        cursor = lo
        while cursor < hi:
            rows = self._conn.execute(
                f"SELECT rowid, ch, t_ms, raw, temp_uc, u_e4, status FROM samples WHERE rowid >= ? AND rowid < ? "
                f"AND ch IN ({ids}) AND t_ms >= ? AND t_ms <= ? ORDER BY rowid LIMIT ?",
                (cursor, hi, lo_ms, hi_ms, batch),
            ).fetchall()
            if not rows:
                return
            cursor = int(rows[-1][0]) + 1
            out = []
            for _rid, ch, t, raw, temp, u, st in rows:
                c = chans[ch]
                out.append((
                    t, c.name, raw, c.raw_unit,
                    None if temp is None else temp / TEMP_SCALE,
                    None if u is None else u / U_SCALE,
                    status_name(st),
                ))
            yield out

    def integrity_check(self) -> str:
        return str(self._conn.execute("PRAGMA integrity_check").fetchone()[0])

    def bytes_on_disk(self) -> int:
        total = 0
        for suffix in ("", "-wal"):
            p = Path(self.path + suffix)
            if p.exists():
                total += p.stat().st_size
        return total


def _statements(sql: str) -> list[str]:
    """Split a migration script into statements (none of ours holds a ';' inside)."""
    return [s.strip() for s in sql.split(";") if s.strip()]


def _rollups(batch: SampleBatch) -> list[tuple[int, int, int, int, float | None, float | None, float | None, float | None]]:
    """Per (channel, minute) aggregates of a batch, ready for the upsert."""
    minutes = batch.t_ms // 60_000
    keys = batch.ch * (1 << 40) + minutes
    uniq, inv = np.unique(keys, return_inverse=True)
    m = uniq.shape[0]
    good = np.isfinite(batch.temp_c)
    temp = np.where(good, batch.temp_c, 0.0)
    n = np.bincount(inv, minlength=m)
    n_good = np.bincount(inv, weights=good.astype(np.float64), minlength=m)
    t_sum = np.bincount(inv, weights=temp, minlength=m)
    t_min = np.full(m, np.inf)
    t_max = np.full(m, -np.inf)
    u_max = np.full(m, -np.inf)
    np.minimum.at(t_min, inv[good], batch.temp_c[good])
    np.maximum.at(t_max, inv[good], batch.temp_c[good])
    ug = good & np.isfinite(batch.u_c)
    np.maximum.at(u_max, inv[ug], batch.u_c[ug])
    ch = (uniq >> 40).tolist()
    mins = (uniq & ((1 << 40) - 1)).tolist()
    out = []
    for i in range(m):
        has = n_good[i] > 0
        out.append((
            int(ch[i]), int(mins[i]), int(n[i]), int(n[i] - n_good[i]),
            float(t_min[i]) if has else None,
            float(t_max[i]) if has else None,
            float(t_sum[i]) if has else None,
            float(u_max[i]) if np.isfinite(u_max[i]) else None,
        ))
    return out


def _latest(batch: SampleBatch) -> list[tuple[Any, ...]]:
    """Each channel's last reading in the batch, its last good one and the batch's min/max."""
    out = []
    good = np.isfinite(batch.temp_c)
    for ch in np.unique(batch.ch).tolist():
        idx = np.flatnonzero(batch.ch == ch)
        last = int(idx[-1])
        g = idx[good[idx]]
        last_ok_ms = int(batch.t_ms[g[-1]]) if g.size else None
        last_ok_t = float(batch.temp_c[g[-1]]) if g.size else None
        tmin = float(batch.temp_c[g].min()) if g.size else None
        tmax = float(batch.temp_c[g].max()) if g.size else None
        t = batch.temp_c[last]
        u = batch.u_c[last]
        r = batch.raw[last]
        out.append((
            int(ch), int(batch.t_ms[last]),
            float(r) if np.isfinite(r) else None,
            float(t) if np.isfinite(t) else None,
            float(u) if np.isfinite(u) else None,
            int(batch.status[last]), int(batch.flags[last]),
            last_ok_ms, last_ok_t, tmin, tmax,
        ))
    return out
