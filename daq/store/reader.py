"""The store's reader: runs, latest values, events, alarms, windows, trends, summaries, streams.

Viewers open it read-only and never hold a transaction open: every query is
fetched whole. Every ``sqlite3.Error`` leaves as a ``StorageError`` that says
what could not be read and from which file.
"""

from __future__ import annotations

import functools
import json
import math
import sqlite3
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import sqlite_utils

from soaklog.errors import StorageError
from soaklog.store.core import connect, translated
from soaklog.store.records import (
    AlarmRow,
    ChannelInfo,
    ChannelSummary,
    EventRow,
    InstrumentRow,
    LatestRow,
    OperatorAction,
    RawWindow,
    ReadingChunk,
    RunRow,
    Trend,
)
from soaklog.store.schema import SCHEMA_VERSION, TEMP_SCALE, U_SCALE, status_name

__all__ = ["StoreReader"]

_RUN_COLUMNS = "id, started_utc, ended_utc, config, config_sha256, station, name, software, config_path"
_ACTION_COLUMNS = "id, t_ms, kind, target, note, actor, until_ms, applied_ms, outcome"


class StoreReader:
    """One station's SQLite file, for reading. Not thread-safe: each thread opens its own."""

    def __init__(self, conn: sqlite3.Connection, path: str) -> None:
        self._conn = conn
        self.path = path
        self.db = sqlite_utils.Database(conn)

    @classmethod
    def open(cls, path: str | Path, *, timeout_s: float = 10.0) -> StoreReader:
        """Open the store at ``path`` read-only.

        Raises:
            StorageError: the file does not exist, cannot be opened, or is
                not a soaklog store this version can read.
        """
        reader = cls(connect(str(path), readonly=True, timeout_s=timeout_s), str(path))
        try:
            reader._check_schema()
        except BaseException:
            reader.close()
            raise
        return reader

    def close(self) -> None:
        try:
            self._conn.close()
        except sqlite3.Error:
            pass  # closing what cannot be closed leaves nothing to do

    def __enter__(self) -> StoreReader:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @property
    def connection(self) -> sqlite3.Connection:
        """The SQLite connection, for tests and for the benchmark's bare-SQLite baseline."""
        return self._conn

    @translated("read the schema version of")
    def schema_version(self) -> int:
        return int(self._conn.execute("PRAGMA user_version").fetchone()[0])

    def _check_schema(self) -> None:
        try:
            v = int(self._conn.execute("PRAGMA user_version").fetchone()[0])
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

    @translated("check the integrity of")
    def integrity_check(self) -> str:
        return str(self._conn.execute("PRAGMA integrity_check").fetchone()[0])

    # ------------------------------------------------------------ runs and channels

    @translated("read the run from")
    def run(self, run_id: int | None = None) -> RunRow:
        """One run's row (the newest when ``run_id`` is None).

        Raises:
            StorageError: no such run (or no run yet).
        """
        if run_id is None:
            rows = list(self.db.query(f"SELECT {_RUN_COLUMNS} FROM runs ORDER BY id DESC LIMIT 1"))
        else:
            rows = list(self.db.query(f"SELECT {_RUN_COLUMNS} FROM runs WHERE id = ?", [run_id]))
        if not rows:
            raise StorageError(
                f"no run {run_id} in {self.path}" if run_id is not None else f"no run yet in {self.path}"
            )
        return RunRow(**rows[0])

    @translated("read the channels from")
    def channels(self, run_id: int) -> list[ChannelInfo]:
        rows = self._conn.execute(
            "SELECT id, run_id, name, label, instrument, raw_unit FROM channels WHERE run_id = ? ORDER BY id",
            (run_id,),
        ).fetchall()
        return [ChannelInfo(int(r[0]), int(r[1]), r[2], r[3], r[4], r[5]) for r in rows]

    # ------------------------------------------------------------ the small tables, read whole

    @translated("read the latest readings from")
    def latest(self, run_id: int) -> list[LatestRow]:
        """Each channel's newest reading, newest good one, and min/max since the run started."""
        rows = self._conn.execute(
            "SELECT c.id, c.name, c.label, c.instrument, c.raw_unit, l.t_ms, l.raw, l.temp_c, l.u_c, "
            "l.status, l.flags, l.last_ok_ms, l.last_ok_temp_c, l.t_min_c, l.t_max_c "
            "FROM channels c LEFT JOIN latest l ON l.ch = c.id WHERE c.run_id = ? ORDER BY c.id",
            (run_id,),
        ).fetchall()
        return [
            LatestRow(
                ch=int(r[0]), channel=r[1], label=r[2], instrument=r[3], raw_unit=r[4], t_ms=r[5], raw=r[6],
                temperature_c=r[7], uncertainty_c=r[8], status="no_data" if r[9] is None else status_name(r[9]),
                flags=r[10] or 0, last_ok_ms=r[11], last_ok_temperature_c=r[12], min_c=r[13], max_c=r[14],
            )
            for r in rows
        ]

    @translated("read the events from")
    def events(self, run_id: int, *, after_id: int = 0, limit: int = 10_000) -> list[EventRow]:
        """The run's events after ``after_id``, oldest first, at most ``limit``."""
        rows = self._conn.execute(
            "SELECT e.id, e.t_ms, e.kind, c.name, e.severity, e.message, e.data, e.ch FROM events e "
            "LEFT JOIN channels c ON c.id = e.ch WHERE e.run_id = ? AND e.id > ? ORDER BY e.id LIMIT ?",
            (run_id, after_id, limit),
        ).fetchall()
        return [
            EventRow(t_ms=r[1], kind=r[2], message=r[5], severity=r[4], ch=r[7], data=_json_object(r[6]),
                     id=r[0], channel=r[3])
            for r in rows
        ]

    @translated("read the alarm states from")
    def alarms(self, run_id: int, *, active_only: bool = False) -> list[AlarmRow]:
        """The run's alarm points and their states (empty until the alarm engine has stored any).

        States (ANSI/ISA-18.2): ``normal``, ``unacknowledged``, ``acknowledged``,
        ``returned_unacknowledged``, ``latched``, ``shelved``, ``out_of_service``.
        ``active_only`` leaves out the points in ``normal``.
        """
        has = self._conn.execute(
            "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'alarm_states'"
        ).fetchone()
        if not has:  # a file made before alarms were stored
            return []
        where = " AND a.state != 'normal'" if active_only else ""
        rows = self._conn.execute(
            "SELECT a.id, a.rule, a.kind, a.source, a.ch, a.state, a.severity, a.condition, a.acked, a.since_ms, "
            "a.shelved_until_ms, a.value, a.message, c.name FROM alarm_states a LEFT JOIN channels c ON c.id = a.ch "
            f"WHERE a.run_id = ?{where} ORDER BY a.rowid",
            (run_id,),
        ).fetchall()
        return [
            AlarmRow(r[0], r[1], r[2], r[3], r[4], r[5], r[6], bool(r[7]), bool(r[8]), r[9], r[10], r[11], r[12],
                     channel=r[13])
            for r in rows
        ]

    @translated("read the instruments from")
    def instruments(self, run_id: int) -> list[InstrumentRow]:
        rows = self._conn.execute(
            "SELECT name, updated_ms, connected, identity, health FROM instruments WHERE run_id = ? ORDER BY name",
            (run_id,),
        ).fetchall()
        return [InstrumentRow(r[0], int(r[1]), bool(r[2]), r[3] or "", _json_object(r[4])) for r in rows]

    @translated("read the operator requests from")
    def pending_operator_actions(self) -> list[OperatorAction]:
        """Operator requests the service has not applied yet, oldest first."""
        rows = self._conn.execute(
            f"SELECT {_ACTION_COLUMNS} FROM operator_actions WHERE applied_ms IS NULL ORDER BY id"
        ).fetchall()
        return [OperatorAction(*r) for r in rows]

    @translated("read the operator requests from")
    def operator_actions(self, *, after_id: int = 0, limit: int = 10_000) -> list[OperatorAction]:
        """Every operator request after ``after_id``, with what became of it."""
        rows = self._conn.execute(
            f"SELECT {_ACTION_COLUMNS} FROM operator_actions WHERE id > ? ORDER BY id LIMIT ?", (after_id, limit),
        ).fetchall()
        return [OperatorAction(*r) for r in rows]

    @translated("read the run summary from")
    def summary(self, run_id: int) -> list[ChannelSummary]:
        """Per channel over the whole run: count, readings without temperature, min, max, mean, largest U.

        Kept as running totals by the writer, so a 1000-hour run costs what a new one costs.
        """
        rows = self._conn.execute(
            "SELECT c.name, l.n, l.n_bad, l.t_min_c, l.t_max_c, l.t_sum, l.u_max "
            "FROM channels c LEFT JOIN latest l ON l.ch = c.id WHERE c.run_id = ? ORDER BY c.id",
            (run_id,),
        ).fetchall()
        out = []
        for name, n, bad, tmin, tmax, tsum, umax in rows:
            good = (n or 0) - (bad or 0)
            out.append(ChannelSummary(
                channel=name, readings=n or 0, without_temperature=bad or 0, min_c=tmin, max_c=tmax,
                mean_c=(tsum / good) if good and tsum is not None else None, max_u_c=umax,
            ))
        return out

    # ------------------------------------------------------------ windows of the long table

    @translated("read the run's time span from")
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

    @translated("read readings from")
    def raw_window(self, ch: int, from_ms: int, to_ms: int) -> RawWindow:
        """One channel's readings in ``[from_ms, to_ms]``: time (ms), temperature (°C, NaN if none), U (K)."""
        lo, hi = self._rowid_range(self._run_of(ch), from_ms, to_ms)
        rows = self._conn.execute(
            "SELECT t_ms, temp_uc, u_e4 FROM samples WHERE rowid >= ? AND rowid < ? AND ch = ? "
            "AND t_ms >= ? AND t_ms <= ?",
            (lo, hi, ch, from_ms, to_ms),
        ).fetchall()
        if not rows:
            empty = np.empty(0, dtype=np.float64)
            return RawWindow(empty.astype(np.int64), empty, empty.copy())
        arr = np.array(rows, dtype=np.float64)  # None -> nan
        return RawWindow(arr[:, 0].astype(np.int64), arr[:, 1] / TEMP_SCALE, arr[:, 2] / U_SCALE)

    @translated("read a trend from")
    def trend(self, ch: int, from_ms: int, to_ms: int, *, max_points: int = 2000) -> Trend:
        """A channel's trend over a window with at most ``max_points`` buckets.

        Short windows come from the raw readings; long ones from the minute
        rollups, aggregated into buckets of whole minutes (mean, min and max
        of each bucket), so a 1000-hour window costs what 2000 rows cost.
        """
        span_ms = max(1, to_ms - from_ms)
        raw_points_estimate = span_ms / 1000.0
        if raw_points_estimate <= 4 * max_points:
            w = self.raw_window(ch, from_ms, to_ms)
            return Trend("raw", w.t_ms, w.temperature_c, w.temperature_c, w.temperature_c)
        minutes = max(1, math.ceil(span_ms / 60_000 / max_points))
        rows = self._conn.execute(
            "SELECT (minute / ?) AS b, SUM(n - n_bad), MIN(t_min), MAX(t_max), SUM(t_sum) FROM rollup_1m "
            "WHERE ch = ? AND minute >= ? AND minute <= ? GROUP BY b ORDER BY b",
            (minutes, ch, from_ms // 60_000, to_ms // 60_000),
        ).fetchall()
        if not rows:
            empty = np.empty(0, dtype=np.float64)
            return Trend("rollup", empty.astype(np.int64), empty, empty.copy(), empty.copy())
        arr = np.array(rows, dtype=np.float64)
        n_good = arr[:, 1]
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = np.where(n_good > 0, arr[:, 4] / n_good, np.nan)
        t_mid = ((arr[:, 0] * minutes + minutes / 2.0) * 60_000).astype(np.int64)
        return Trend("rollup", t_mid, mean, arr[:, 2], arr[:, 3])

    @translated("read readings from")
    def iter_readings(
        self, run_id: int, *, from_ms: int | None = None, to_ms: int | None = None, batch: int = 50_000
    ) -> Iterator[ReadingChunk]:
        """Stream the run's readings in time order, in chunks, without a long read transaction."""
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
                f"SELECT rowid, ch, t_ms, raw, temp_uc, u_e4, status, flags FROM samples WHERE rowid >= ? AND rowid < ? "
                f"AND ch IN ({ids}) AND t_ms >= ? AND t_ms <= ? ORDER BY rowid LIMIT ?",
                (cursor, hi, lo_ms, hi_ms, batch),
            ).fetchall()
            if not rows:
                return
            cursor = int(rows[-1][0]) + 1
            _rid, ch, t, raw, temp, u, st, fl = zip(*rows, strict=True)
            info = [chans[c] for c in ch]
            yield ReadingChunk(
                t_ms=list(t), channel=[c.name for c in info], raw=list(raw), raw_unit=[c.raw_unit for c in info],
                temperature_c=[None if v is None else v / TEMP_SCALE for v in temp],
                uncertainty_c=[None if v is None else v / U_SCALE for v in u],
                status=[status_name(s) for s in st],
                flags=[_flag_names(f or 0) for f in fl],
            )


def _json_object(text: str | None) -> dict[str, Any]:
    """A stored JSON object (``{}`` for none, or for anything that is not an object)."""
    value = json.loads(text or "{}")
    return value if isinstance(value, dict) else {}


@functools.lru_cache(maxsize=256)
def _flag_names_cached(bits: int) -> tuple[str, ...]:
    from soaklog.sensors.flags import flag_names

    return tuple(flag_names(bits))


def _flag_names(bits: int) -> list[str]:
    """A reading's flag names (a fresh list: the caller may keep it)."""
    return list(_flag_names_cached(int(bits)))
