"""The dashboard's reader: one read-only store, read a little at each refresh.

Each ``poll`` reads the small tables whole (``latest``, ``instruments``, the
alarm states) and only what is new in the long ones (events after the last id
seen, operator requests from the oldest one still pending), plus the trend a
view asks for (raw readings after the last one held for short windows; the
minute rollups, re-read now and then, for long ones). Every query is fetched
whole, so no read transaction stays open between refreshes and any number of
dashboards can watch one file while the logger writes it.
"""

from __future__ import annotations

import getpass
import socket
import time
from collections import deque
from collections.abc import Callable
from pathlib import Path

import numpy as np

from soaklog.dashboard.plan import RunPlan, run_plan
from soaklog.dashboard.records import (
    WINDOW_S,
    ActionRow,
    AlarmRow,
    ChannelRow,
    EventRow,
    InstrumentRow,
    RunView,
    Snapshot,
    TrendRequest,
    TrendSeries,
    order_alarms,
)
from soaklog.dashboard.units import parse_utc_ms
from soaklog.store import InstrumentRow as StoredInstrument
from soaklog.store import LatestRow, StoreReader, StoreWriter, Trend

__all__ = ["RATE_WINDOW_S", "StoreSource", "default_actor", "submit_operator_action"]

#: the rate of change is the least-squares slope of the good readings in this window
RATE_WINDOW_S = 120.0
#: re-read a short window from this far before the newest point held: a commit
#: can carry a scan stamped a little before the previous commit's newest one
_OVERLAP_MS = 15_000
#: long windows come from the minute rollups, which change once a minute
_ROLLUP_REREAD_S = 15.0
_RUN_REREAD_S = 5.0
_FIRST_EVENTS = 2000


def default_actor() -> str:
    """Who an operator request comes from: ``user@host (dashboard)``."""
    try:
        user = getpass.getuser()
    except (KeyError, OSError):
        user = "operator"
    return f"{user}@{socket.gethostname()} (dashboard)"


def submit_operator_action(
    db_path: str, kind: str, *, now_ms: int, target: str = "", note: str = "", actor: str = "",
    until_ms: int | None = None,
) -> int:
    """Queue one operator request in the store (the logger applies it); returns its id.

    The dashboard's reader is read-only, so this opens the file for writing
    just long enough for one row.

    Raises:
        StorageError: the file cannot be written (read-only media, another soaklog version).
    """
    store = StoreWriter.open(db_path)
    try:
        return store.add_operator_action(kind, target=target, note=note, actor=actor, now_ms=now_ms,
                                         until_ms=until_ms)
    finally:
        store.close()


class _Trend:
    """A held trend of one channel over one window."""

    def __init__(self, window: str) -> None:
        self.window = window
        self.t = np.empty(0, dtype=np.int64)
        self.mean = np.empty(0, dtype=np.float64)
        self.lo = np.empty(0, dtype=np.float64)
        self.hi = np.empty(0, dtype=np.float64)
        self.source = ""
        self.read_at = -1e18

    def replace(self, tr: Trend) -> None:
        self.t = np.asarray(tr.t_ms, dtype=np.int64)
        self.mean = np.asarray(tr.mean_c, dtype=np.float64)
        self.lo = np.asarray(tr.min_c, dtype=np.float64)
        self.hi = np.asarray(tr.max_c, dtype=np.float64)
        self.source = tr.source

    def extend(self, tr: Trend, from_ms: int) -> None:
        keep = self.t < from_ms
        self.t = np.concatenate([self.t[keep], np.asarray(tr.t_ms, dtype=np.int64)])
        self.mean = np.concatenate([self.mean[keep], np.asarray(tr.mean_c, dtype=np.float64)])
        self.lo = np.concatenate([self.lo[keep], np.asarray(tr.min_c, dtype=np.float64)])
        self.hi = np.concatenate([self.hi[keep], np.asarray(tr.max_c, dtype=np.float64)])
        self.source = tr.source

    def trim(self, from_ms: int) -> None:
        keep = self.t >= from_ms
        if not np.all(keep):
            self.t, self.mean, self.lo, self.hi = self.t[keep], self.mean[keep], self.lo[keep], self.hi[keep]


class StoreSource:
    """Reads one run of a store for the dashboard (open it in the thread that polls it).

    Args:
        db_path: the station's SQLite file; opened read-only.
        run_id: the run to show; None follows the newest run (and moves to a
            new one when the logger starts it).
        clock: UTC now in seconds (frozen in tests; the service's clock in the demo).
        run_reread_s: how often the run's row is read again (to see it end, or a new run begin).
    """

    def __init__(self, db_path: str | Path, *, run_id: int | None = None,
                 clock: Callable[[], float] = time.time, run_reread_s: float = _RUN_REREAD_S) -> None:
        self.db_path = str(Path(db_path).resolve())
        self._store = StoreReader.open(self.db_path)
        self._wanted_run = run_id
        self._clock = clock
        self._run_reread_s = run_reread_s
        self._seq = 0
        self._run: RunView | None = None
        self._run_read_at = -1e18
        self._last_event_id = 0
        self._action_cursor = 0
        self._history: dict[str, deque[tuple[int, float]]] = {}
        self._last_ok: dict[str, int | None] = {}
        self._trends: dict[str, _Trend] = {}

    def close(self) -> None:
        self._store.close()

    # ------------------------------------------------------------ one refresh

    def poll(self, request: TrendRequest | None = None) -> Snapshot:
        """Read what changed since the last poll.

        Raises:
            StorageError: the file cannot be read (or holds no run).
        """
        reset = self._refresh_run()
        run = self._run
        assert run is not None
        rid = run.run_id
        latest = self._store.latest(rid)
        newest = max((c.t_ms for c in latest if c.t_ms is not None), default=None)
        clock_ms = int(self._clock() * 1000)
        live = run.ended_ms is None
        # never before the run's start or its newest reading: an accelerated logger's file runs
        # ahead of the wall clock, and ages then count from the newest reading
        if not live:
            now_ms = max(run.ended_ms or 0, newest or 0, run.started_ms or 0)
        else:
            now_ms = max(clock_ms, newest or 0, run.started_ms or 0)
        if reset:
            self._seed_history(latest, now_ms)
        channels = tuple(self._channel_row(c) for c in latest)
        instruments = tuple(self._instrument_row(i) for i in self._store.instruments(rid))
        alarms = tuple(order_alarms([AlarmRow.from_store(a) for a in self._store.alarms(rid)]))
        events = self._new_events(rid, first=reset)
        if any(e.kind in ("service_start", "service_stop", "gap") for e in events):
            self._run_read_at = -1e18
        actions = self._new_actions()
        trends: tuple[TrendSeries, ...] = ()
        t_from = t_to = None
        if request is not None and request.channels:
            t_from, t_to = self._window(request, run, now_ms)
            trends = self._read_trends(request, latest, t_from, t_to)
        self._seq += 1
        problem = run.plan.problem
        return Snapshot(
            seq=self._seq, now_ms=now_ms, run=run, live=live, channels=channels, instruments=instruments,
            alarms=alarms, events=events, actions=actions, trend_request=request, trends=trends,
            trend_from_ms=t_from, trend_to_ms=t_to, reset=reset, problem=problem,
        )

    # ------------------------------------------------------------ the run

    def _refresh_run(self) -> bool:
        """Re-read the run row now and then; True when the run shown is new (or first)."""
        mono = time.monotonic()
        if self._run is not None and mono - self._run_read_at < self._run_reread_s:
            return False
        self._run_read_at = mono
        row = self._store.run(self._wanted_run)
        rid = row.id
        changed = self._run is None or self._run.run_id != rid
        plan = run_plan(row.config or "") if changed or self._run is None else self._run.plan
        self._run = RunView(
            run_id=rid, station=row.station or "", name=row.name or "",
            started_ms=parse_utc_ms(row.started_utc), ended_ms=parse_utc_ms(row.ended_utc),
            database=self.db_path, plan=plan if isinstance(plan, RunPlan) else RunPlan(),
        )
        if changed:
            self._last_event_id = 0
            self._history.clear()
            self._last_ok.clear()
            self._trends.clear()
        return changed

    # ------------------------------------------------------------ channels

    def _seed_history(self, latest: list[LatestRow], now_ms: int) -> None:
        """The rate of change needs a little history: read the last window once, at the start."""
        lo = now_ms - int(RATE_WINDOW_S * 1000)
        for c in latest:
            w = self._store.raw_window(c.ch, lo, now_ms)
            good = np.isfinite(w.temperature_c)
            self._history[c.channel] = deque(zip(w.t_ms[good].tolist(), w.temperature_c[good].tolist(), strict=True))
            self._last_ok[c.channel] = c.last_ok_ms

    def _rate(self, name: str, last_ok_ms: int | None, last_ok_c: float | None) -> float | None:
        hist = self._history.setdefault(name, deque())
        if last_ok_ms is not None and last_ok_c is not None and (not hist or last_ok_ms > hist[-1][0]):
            hist.append((int(last_ok_ms), float(last_ok_c)))
        if not hist:
            return None
        cut = hist[-1][0] - int(RATE_WINDOW_S * 1000)
        while hist and hist[0][0] < cut:
            hist.popleft()
        if len(hist) < 2:
            return None
        arr = np.asarray(hist, dtype=np.float64)
        t_min = (arr[:, 0] - arr[-1, 0]) / 60_000.0
        if np.ptp(t_min) <= 0:
            return None
        slope = np.polyfit(t_min, arr[:, 1], 1)[0]
        return float(slope)

    def _channel_row(self, c: LatestRow) -> ChannelRow:
        ok = c.status == "ok"
        rate = self._rate(c.channel, c.last_ok_ms, c.last_ok_temperature_c)
        return ChannelRow(
            name=c.channel, label=c.label or c.channel, instrument=c.instrument or "",
            temperature_c=c.temperature_c, uncertainty_c=c.uncertainty_c, status=c.status,
            t_ms=c.t_ms, last_ok_ms=c.last_ok_ms, min_c=c.min_c, max_c=c.max_c,
            rate_k_per_min=rate if ok else None, raw=c.raw, raw_unit=c.raw_unit or "", ch=c.ch,
        )

    # ------------------------------------------------------------ the rest

    @staticmethod
    def _instrument_row(i: StoredInstrument) -> InstrumentRow:
        h = i.health

        def count(key: str) -> int | None:
            v = h.get(key)
            return int(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else None

        def ms(key: str) -> int | None:
            v = h.get(key)
            return int(float(v) * 1000) if isinstance(v, (int, float)) and not isinstance(v, bool) else None

        return InstrumentRow(
            name=i.name, connected=i.connected, identity=str(i.identity or h.get("identity") or ""),
            updated_ms=i.updated_ms, last_ok_ms=ms("last_ok_utc_s"), reads=count("reads"), errors=count("errors"),
            timeouts=count("timeouts"), reconnects=count("reconnects"), bad_frames=count("bad_frames"),
            last_error=str(h.get("last_error") or ""), last_error_ms=ms("last_error_utc_s"),
        )

    def _new_events(self, run_id: int, *, first: bool) -> tuple[EventRow, ...]:
        out: deque[EventRow] = deque(maxlen=_FIRST_EVENTS if first else None)
        while True:
            rows = self._store.events(run_id, after_id=self._last_event_id, limit=5000)
            for e in rows:
                out.append(EventRow(e.id, e.t_ms, e.kind, e.channel or "", e.severity or "", e.message or ""))
            if rows:
                self._last_event_id = rows[-1].id
            if len(rows) < 5000:
                break
        return tuple(out)

    def _new_actions(self) -> tuple[ActionRow, ...]:
        rows = self._store.operator_actions(after_id=self._action_cursor)
        out = tuple(
            ActionRow(r.id, r.t_ms, r.kind, r.target or "", r.note or "", r.actor or "", r.until_ms, r.applied_ms,
                      r.outcome)
            for r in rows
        )
        pending = [a.id for a in out if a.applied_ms is None]
        if pending:
            self._action_cursor = min(pending) - 1
        elif out:
            self._action_cursor = out[-1].id
        return out

    # ------------------------------------------------------------ trends

    def _window(self, request: TrendRequest, run: RunView, now_ms: int) -> tuple[int, int]:
        span = WINDOW_S[request.window]
        if span is None:
            start = run.started_ms
            if start is None:
                start = self._store.time_span(run.run_id)[0] or now_ms - 600_000
            return int(min(start, now_ms - 1000)), int(now_ms)
        return int(now_ms - span * 1000), int(now_ms)

    def _read_trends(self, request: TrendRequest, latest: list[LatestRow], t_from: int,
                     t_to: int) -> tuple[TrendSeries, ...]:
        by_name = {c.channel: c for c in latest}
        wanted = [n for n in request.channels if n in by_name]
        for name in list(self._trends):
            if name not in wanted:
                del self._trends[name]
        out = []
        mono = time.monotonic()
        short = WINDOW_S[request.window] is not None and (WINDOW_S[request.window] or 0) <= 3600
        for name in wanted:
            ch = by_name[name].ch
            held = self._trends.get(name)
            if held is None or held.window != request.window:
                held = _Trend(request.window)
                held.replace(self._store.trend(ch, t_from, t_to))
                held.read_at = mono
                self._trends[name] = held
            elif short:
                start = max(t_from, int(held.t[-1]) - _OVERLAP_MS) if held.t.size else t_from
                held.extend(self._store.trend(ch, start, t_to), start)
                held.trim(t_from)
            elif mono - held.read_at >= _ROLLUP_REREAD_S:
                held.replace(self._store.trend(ch, t_from, t_to))
                held.read_at = mono
            c = by_name[name]
            out.append(TrendSeries(name, c.label or name, held.t, held.mean, held.lo, held.hi, held.source))
        return tuple(out)
