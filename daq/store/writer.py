"""The store's writer: schema and migrations, runs, channels, the batched sample writer, events, alarm states.

The service is the only writer of a station's file; viewers write only an
operator's request (``add_operator_action``), which the service applies and
records. The writer reads back what it wrote (it is a ``StoreReader`` too).
Every ``sqlite3.Error`` leaves as a ``StorageError`` that says what could not
be written and to which file.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from soaklog.errors import StorageError
from soaklog.sensors.flags import Flag
from soaklog.store.core import Transaction, connect, translated
from soaklog.store.reader import StoreReader
from soaklog.store.records import BATCH_FIELDS, AlarmRow, EventRow, RunInfo, SampleBatch, config_digest
from soaklog.store.schema import MIGRATIONS, SCHEMA_VERSION, STATUS_CODES, TEMP_SCALE, U_SCALE, iso_utc, statements

__all__ = ["StoreWriter"]


class StoreWriter(StoreReader):
    """One station's SQLite file, for the service: created and migrated on opening. Not thread-safe."""

    @classmethod
    def open(cls, path: str | Path, *, timeout_s: float = 10.0) -> StoreWriter:
        """Open (creating and migrating when needed) the store at ``path``.

        Raises:
            StorageError: the file cannot be opened or created, is not a
                soaklog store, or is newer than this soaklog.
        """
        writer = cls(connect(str(path), readonly=False, timeout_s=timeout_s), str(path))
        try:
            writer.migrate()
        except BaseException:
            writer.close()
            raise
        return writer

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
                with Transaction(self._conn):
                    for stmt in statements(sql):
                        self._conn.execute(stmt)
                    self._conn.execute(f"PRAGMA user_version = {int(version)}")
            # every status and flag this soaklog knows, also those added after a file was made
            self._conn.executemany(
                "INSERT OR IGNORE INTO statuses (code, name) VALUES (?, ?)",
                [(c, n) for n, c in STATUS_CODES.items()],
            )
            self._conn.executemany(
                "INSERT OR IGNORE INTO flag_names (bit, name) VALUES (?, ?)",
                [(int(f), f.label) for f in Flag],
            )
        except sqlite3.Error as exc:
            raise StorageError(f"cannot prepare database {self.path}: {exc}") from exc
        return self.schema_version()

    # ------------------------------------------------------------ runs and channels

    @translated("record the run in")
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

    @translated("record the end of the run in")
    def end_run(self, run_id: int, *, now_ms: int) -> None:
        self._conn.execute("UPDATE runs SET ended_utc = ? WHERE id = ?", (iso_utc(now_ms), run_id))

    @translated("record the channels in")
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
            batch = SampleBatch(*(getattr(batch, f)[order] for f in BATCH_FIELDS))
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
                    "INSERT INTO latest (ch, t_ms, raw, temp_c, u_c, status, flags, last_ok_ms, last_ok_temp_c, "
                    "t_min_c, t_max_c, n, n_bad, t_sum, u_max) "
                    "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT (ch) DO UPDATE SET "
                    "n = n + excluded.n, n_bad = n_bad + excluded.n_bad, "
                    "t_sum = COALESCE(t_sum, 0) + COALESCE(excluded.t_sum, 0), "
                    "u_max = CASE WHEN u_max IS NULL OR excluded.u_max > u_max THEN excluded.u_max ELSE u_max END, "
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

    def add_operator_action(
        self, kind: str, *, target: str = "", note: str = "", actor: str = "", now_ms: int, until_ms: int | None = None
    ) -> int:
        """Queue an operator's request (acknowledge, shelve, unshelve, note) for the service to apply.

        Viewers write only here: the service is the only writer of alarm
        states, and records what it did with each request (``outcome``).
        """
        try:
            cur = self._conn.execute(
                "INSERT INTO operator_actions (t_ms, kind, target, note, actor, until_ms) VALUES (?, ?, ?, ?, ?, ?)",
                (int(now_ms), kind, target, note, actor, until_ms),
            )
        except sqlite3.Error as exc:
            raise StorageError(f"cannot record the operator's {kind!r} in {self.path}: {exc}") from exc
        return int(cur.lastrowid or 0)

    def mark_operator_action(self, action_id: int, *, now_ms: int, outcome: str) -> None:
        """Record that the service applied (or refused) an operator's request."""
        try:
            self._conn.execute(
                "UPDATE operator_actions SET applied_ms = ?, outcome = ? WHERE id = ?", (int(now_ms), outcome, action_id)
            )
        except sqlite3.Error as exc:
            raise StorageError(f"cannot record the outcome of operator action {action_id} in {self.path}: {exc}") from exc

    # ------------------------------------------------------------ alarms

    def save_alarm_states(self, run_id: int, rows: Sequence[AlarmRow], *, now_ms: int) -> None:
        """Insert or update the given alarm points' states, in one transaction."""
        if not rows:
            return
        params = [
            (run_id, r.id, r.rule, r.kind, r.source, r.ch, r.state, r.severity, int(r.condition), int(r.acked),
             r.since_ms, r.shelved_until_ms, r.value, r.message, int(now_ms))
            for r in rows
        ]
        try:
            with Transaction(self._conn):
                self._conn.executemany(
                    "INSERT INTO alarm_states (run_id, id, rule, kind, source, ch, state, severity, condition, acked, "
                    "since_ms, shelved_until_ms, value, message, updated_ms) "
                    "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT (run_id, id) DO UPDATE SET "
                    "rule = excluded.rule, kind = excluded.kind, source = excluded.source, ch = excluded.ch, "
                    "state = excluded.state, severity = excluded.severity, condition = excluded.condition, "
                    "acked = excluded.acked, since_ms = excluded.since_ms, shelved_until_ms = excluded.shelved_until_ms, "
                    "value = excluded.value, message = excluded.message, updated_ms = excluded.updated_ms",
                    params,
                )
        except sqlite3.Error as exc:
            raise StorageError(f"cannot record {len(rows)} alarm states in {self.path}: {exc}") from exc

    def add_events(self, run_id: int, events: Sequence[EventRow]) -> list[int]:
        """Record several events in one transaction; their ids, in order."""
        if not events:
            return []
        ids: list[int] = []
        try:
            with Transaction(self._conn):
                for e in events:
                    cur = self._conn.execute(
                        "INSERT INTO events (run_id, t_ms, kind, ch, severity, message, data) VALUES (?, ?, ?, ?, ?, ?, ?)",
                        (run_id, int(e.t_ms), e.kind, e.ch, e.severity, e.message,
                         json.dumps(dict(e.data or {}), sort_keys=True, default=str)),
                    )
                    ids.append(int(cur.lastrowid or 0))
        except sqlite3.Error as exc:
            raise StorageError(f"cannot record {len(events)} events in {self.path}: {exc}") from exc
        return ids

    def checkpoint(self) -> None:
        """Copy the WAL back into the file when no reader is in the way (PASSIVE never waits)."""
        try:
            self._conn.execute("PRAGMA wal_checkpoint(PASSIVE)").fetchall()
        except sqlite3.Error:
            pass  # an optimisation only: the next checkpoint catches up



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
    """Each channel's last reading in the batch, its last good one, and the batch's totals."""
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
        tsum = float(batch.temp_c[g].sum()) if g.size else None
        ug = batch.u_c[g]
        ug = ug[np.isfinite(ug)]
        umax = float(ug.max()) if ug.size else None
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
            int(idx.size), int(idx.size - g.size), tsum, umax,
        ))
    return out


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


