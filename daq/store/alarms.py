"""The alarm half of the store: alarm states (one row per alarm point and run) and alarm events.

The service is the only writer. Alarm events go into the ``events`` table
(kinds ``alarm_raised``, ``alarm_cleared``, ``alarm_acknowledged``,
``alarm_shelved``, ``alarm_unshelved``, ``alarm_note``, ``action_done``,
``action_failed``, ``action_timed_out`` …), so ``events_v`` tells the whole story.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from soaklog.errors import StorageError
from soaklog.store.reader import translated
from soaklog.store.schema import iso_utc

__all__ = ["AlarmStoreMixin", "AlarmRow", "EventRow"]


@dataclass(frozen=True)
class AlarmRow:
    """One alarm point's state as stored (times in UTC milliseconds)."""

    id: str
    rule: str
    kind: str
    source: str
    ch: int | None
    state: str
    severity: str
    condition: bool
    acked: bool
    since_ms: int | None
    shelved_until_ms: int | None
    value: float | None
    message: str


@dataclass(frozen=True)
class EventRow:
    """One event to store: time (UTC ms), kind, message, and optionally channel id, severity and data."""

    t_ms: int
    kind: str
    message: str
    severity: str = "info"
    ch: int | None = None
    data: dict[str, Any] | None = None


class AlarmStoreMixin:
    """Methods of ``Store`` for alarm states and alarm events."""

    _conn: sqlite3.Connection
    path: str

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
            with self._transaction():
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
            with self._transaction():
                for e in events:
                    cur = self._conn.execute(
                        "INSERT INTO events (run_id, t_ms, kind, ch, severity, message, data) VALUES (?, ?, ?, ?, ?, ?, ?)",
                        (run_id, int(e.t_ms), e.kind, e.ch, e.severity, e.message,
                         json.dumps(e.data or {}, sort_keys=True, default=str)),
                    )
                    ids.append(int(cur.lastrowid or 0))
        except sqlite3.Error as exc:
            raise StorageError(f"cannot record {len(events)} events in {self.path}: {exc}") from exc
        return ids

    @translated("the alarm states")
    def alarm_states(self, run_id: int) -> list[AlarmRow]:
        """The run's stored alarm points (a restarted service continues from them)."""
        if not self._has_alarm_table():
            return []
        rows = self._conn.execute(
            "SELECT id, rule, kind, source, ch, state, severity, condition, acked, since_ms, shelved_until_ms, value, "
            "message FROM alarm_states WHERE run_id = ? ORDER BY rowid", (run_id,),
        ).fetchall()
        return [
            AlarmRow(r[0], r[1], r[2], r[3], r[4], r[5], r[6], bool(r[7]), bool(r[8]), r[9], r[10], r[11], r[12])
            for r in rows
        ]

    def _alarm_rows(self, run_id: int, *, active_only: bool) -> list[dict[str, Any]]:
        """The ``alarms()`` contract: id, rule, channel, state, severity, message, since_utc, acked, shelved_until_utc."""
        where = " AND a.state != 'normal'" if active_only else ""
        rows = self._conn.execute(
            "SELECT a.id, a.rule, c.name, a.source, a.kind, a.state, a.severity, a.message, a.since_ms, a.acked, "
            "a.shelved_until_ms, a.condition, a.value FROM alarm_states a LEFT JOIN channels c ON c.id = a.ch "
            f"WHERE a.run_id = ?{where} ORDER BY a.rowid",
            (run_id,),
        ).fetchall()
        return [
            {"id": r[0], "rule": r[1], "channel": r[2], "source": r[3], "kind": r[4], "state": r[5],
             "severity": r[6], "message": r[7], "since_utc": iso_utc(r[8]), "acked": bool(r[9]),
             "shelved_until_utc": iso_utc(r[10]), "condition": bool(r[11]), "value": r[12]}
            for r in rows
        ]

    def _has_alarm_table(self) -> bool:
        return self._conn.execute(
            "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'alarm_states'"
        ).fetchone() is not None

    def _transaction(self) -> _Transaction:
        return _Transaction(self._conn)


class _Transaction:
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
