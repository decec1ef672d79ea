"""The reading half of the store: runs, latest values, events, windows, trends, summaries, streams.

Viewers never hold a transaction open: every query is fetched whole.
"""

from __future__ import annotations

import json
import math
import sqlite3
import functools
import inspect
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any, TypeVar, cast

import numpy as np
import numpy.typing as npt
import sqlite_utils

from soaklog.errors import StorageError

from soaklog.store.schema import TEMP_SCALE, U_SCALE, iso_utc, status_name

__all__ = ["ReadingMixin", "translated"]

_F = TypeVar("_F", bound=Callable[..., Any])


def translated(what: str) -> Callable[[_F], _F]:
    """Turn a ``sqlite3.Error`` raised by the method into a ``StorageError`` naming ``what`` and the file."""

    def wrap(fn: _F) -> _F:
        if inspect.isgeneratorfunction(fn):
            @functools.wraps(fn)
            def gen(self: Any, *args: Any, **kwargs: Any) -> Any:
                try:
                    yield from fn(self, *args, **kwargs)
                except sqlite3.Error as exc:
                    raise StorageError(f"cannot read {what} from {self.path}: {exc}") from exc

            return cast(_F, gen)

        @functools.wraps(fn)
        def call(self: Any, *args: Any, **kwargs: Any) -> Any:
            try:
                return fn(self, *args, **kwargs)
            except sqlite3.Error as exc:
                raise StorageError(f"cannot read {what} from {self.path}: {exc}") from exc

        return cast(_F, call)

    return wrap


class ReadingMixin:
    """Methods of ``Store`` that only read."""

    _conn: sqlite3.Connection
    path: str
    db: sqlite_utils.Database

    # ------------------------------------------------------------ reading

    @translated("the latest readings")
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

    @translated("the events")
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

    @translated("the operator requests")
    def pending_operator_actions(self) -> list[dict[str, Any]]:
        """Operator requests the service has not applied yet, oldest first."""
        rows = self._conn.execute(
            "SELECT id, t_ms, kind, target, note, actor, until_ms FROM operator_actions "
            "WHERE applied_ms IS NULL ORDER BY id"
        ).fetchall()
        return [
            {"id": r[0], "t_ms": r[1], "kind": r[2], "target": r[3], "note": r[4], "actor": r[5], "until_ms": r[6]}
            for r in rows
        ]

    @translated("the operator requests")
    def operator_actions(self, *, after_id: int = 0, limit: int = 10_000) -> list[dict[str, Any]]:
        """Every operator request with what became of it."""
        rows = self._conn.execute(
            "SELECT id, t_ms, kind, target, note, actor, until_ms, applied_ms, outcome FROM operator_actions "
            "WHERE id > ? ORDER BY id LIMIT ?", (after_id, limit),
        ).fetchall()
        keys = ("id", "t_ms", "kind", "target", "note", "actor", "until_ms", "applied_ms", "outcome")
        return [dict(zip(keys, r, strict=True)) for r in rows]

    @translated("the alarm states")
    def alarms(self, run_id: int, *, active_only: bool = False) -> list[dict[str, Any]]:
        """The run's alarms and their states (empty until the alarm engine has stored any).

        Each: ``id``, ``rule``, ``channel``, ``state``, ``severity``, ``message``,
        ``since_utc``, ``acked``, ``shelved_until_utc``. States (ANSI/ISA-18.2):
        ``normal``, ``unacknowledged``, ``acknowledged``, ``returned_unacknowledged``,
        ``latched``, ``shelved``, ``out_of_service``.
        """
        has = self._conn.execute(
            "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'alarm_states'"
        ).fetchone()
        if not has:
            return []
        return self._alarm_rows(run_id, active_only=active_only)

    def _alarm_rows(self, run_id: int, *, active_only: bool) -> list[dict[str, Any]]:
        raise NotImplementedError("the alarm_states table exists but this soaklog cannot read it")

    @translated("the instruments")
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

    @translated("the run's time span")
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

    @translated("readings")
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

    @translated("a trend")
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

    @translated("the run summary")
    def summary(self, run_id: int) -> list[dict[str, Any]]:
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
            out.append({
                "channel": name, "readings": n or 0, "without_temperature": bad or 0,
                "min_c": tmin, "max_c": tmax, "mean_c": (tsum / good) if good and tsum is not None else None,
                "max_u_c": umax,
            })
        return out

    @translated("readings")
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

    @translated("the integrity check")
    def integrity_check(self) -> str:
        return str(self._conn.execute("PRAGMA integrity_check").fetchone()[0])

    def bytes_on_disk(self) -> int:
        total = 0
        for suffix in ("", "-wal"):
            p = Path(self.path + suffix)
            if p.exists():
                total += p.stat().st_size
        return total


