"""The dashboard's reader on a real store: what it reads equals what is stored, and it reads only what changed."""

from __future__ import annotations

import sqlite3

import numpy as np
import pytest
from testkit.dashboard import (
    AIR_RATE_K_PER_MIN,
    NOW_MS,
    PLATE_SILENT_S,
    SHELF_C,
    START_MS,
    U_C,
    frozen_clock,
)

from soaklog.dashboard.records import TrendRequest
from soaklog.dashboard.source import StoreSource, submit_operator_action
from soaklog.errors import StorageError
from soaklog.store import SampleBatch, StoreWriter


def _view_latest(db, run_id=1):
    """Each channel's newest row and its min/max, from the public view readings_v (the README's contract)."""
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
    try:
        rows = con.execute("SELECT channel, t_utc, temperature_c, uncertainty_c, status FROM readings_v "
                           "WHERE run_id = ? ORDER BY t_utc", (run_id,)).fetchall()
    finally:
        con.close()
    newest = {r[0]: r[2:] for r in rows}  # the last row of each channel in time order
    temps: dict[str, list[float]] = {}
    for r in rows:
        if r[2] is not None:
            temps.setdefault(r[0], []).append(r[2])
    return newest, {k: (min(v), max(v)) for k, v in temps.items()}


def test_channel_values_equal_the_stored_readings(fixture_db):
    src = StoreSource(fixture_db, clock=frozen_clock())
    snap = src.poll()
    src.close()
    newest, extremes = _view_latest(fixture_db)
    assert {c.name for c in snap.channels} == set(newest)
    for c in snap.channels:
        temp, u, status = newest[c.name]
        assert c.status == status
        assert c.temperature_c == (None if temp is None else pytest.approx(temp, abs=1e-6))
        assert c.uncertainty_c == (None if u is None else pytest.approx(u, abs=1e-4))
        lo, hi = extremes[c.name]
        assert (c.min_c, c.max_c) == (pytest.approx(lo, abs=1e-6), pytest.approx(hi, abs=1e-6))


def test_rate_of_change_is_the_slope_of_the_readings(fixture_db):
    snap = StoreSource(fixture_db, clock=frozen_clock()).poll()
    rows = {c.name: c for c in snap.channels}
    # the fixture writes air rising at 0.5 K/min and the shelf constant (testkit.dashboard, by construction)
    assert rows["air"].rate_k_per_min == pytest.approx(AIR_RATE_K_PER_MIN, abs=1e-3)
    assert rows["shelf"].rate_k_per_min == pytest.approx(0.0, abs=1e-9)
    assert rows["door"].rate_k_per_min is None  # reads open: no rate
    assert rows["air"].uncertainty_c == pytest.approx(U_C)
    assert rows["shelf"].temperature_c == pytest.approx(SHELF_C)
    assert rows["plate"].last_ok_ms == NOW_MS - PLATE_SILENT_S * 1000


def test_reads_only_new_events_and_changed_requests(fixture_db):
    src = StoreSource(fixture_db, clock=frozen_clock())
    first = src.poll()
    assert [e.kind for e in first.events] == ["service_start", "sensor_fault"]
    assert src.poll().events == ()
    with StoreWriter.open(fixture_db) as w:
        w.add_event(1, NOW_MS, "gap", "logger restarted after a gap of 3.0 s", severity="warning")
    assert [e.message for e in src.poll().events] == ["logger restarted after a gap of 3.0 s"]
    rid = submit_operator_action(str(fixture_db), "acknowledge", target="air-high:air", now_ms=NOW_MS, actor="t")
    pending = src.poll().actions
    assert [(a.id, a.kind, a.applied_ms) for a in pending] == [(rid, "acknowledge", None)]
    # still pending: read again, so that its outcome is seen when it comes
    assert [a.id for a in src.poll().actions] == [rid]
    with StoreWriter.open(fixture_db) as w:
        w.mark_operator_action(rid, now_ms=NOW_MS + 500, outcome="applied: acknowledged air-high:air")
    done = src.poll().actions
    assert [(a.id, a.outcome) for a in done] == [(rid, "applied: acknowledged air-high:air")]
    assert src.poll().actions == ()
    src.close()


def test_no_read_transaction_is_left_open_so_the_writer_can_checkpoint(fixture_db):
    src = StoreSource(fixture_db, clock=frozen_clock())
    src.poll(TrendRequest(("air", "shelf"), "run"))
    other = StoreSource(fixture_db, clock=frozen_clock())  # several dashboards on one file
    other.poll(TrendRequest(("air",), "10min"))
    with StoreWriter.open(fixture_db) as w:
        w.write(1, SampleBatch(np.array([1], np.int64), np.array([NOW_MS + 1000], np.int64), np.array([130.0]),
                               np.array([23.0]), np.array([0.1]), np.zeros(1, np.int64), np.zeros(1, np.int64)))
        # SQLite, "PRAGMA wal_checkpoint": the first column is 1 when a reader kept the checkpoint from finishing
        busy, _log, _done = w.connection.execute("PRAGMA wal_checkpoint(TRUNCATE)").fetchone()
    assert busy == 0
    assert not src._store.connection.in_transaction
    src.close()
    other.close()


def test_a_finished_run_is_shown_as_at_its_end(fixture_db):
    with StoreWriter.open(fixture_db) as w:
        w.end_run(1, now_ms=NOW_MS + 5000)
    # long after the run, on another machine: ages count from the run's end, not from today
    snap = StoreSource(fixture_db, clock=frozen_clock(NOW_MS + 30 * 86_400_000)).poll()
    assert snap.live is False
    assert snap.now_ms == NOW_MS + 5000


def test_an_accelerated_file_clock_ahead_of_the_wall_clock_counts_from_the_newest_reading(fixture_db):
    snap = StoreSource(fixture_db, clock=frozen_clock(START_MS)).poll()
    assert snap.now_ms == NOW_MS


@pytest.mark.parametrize(("window", "source", "span_ms"), [
    ("10min", "raw", 600_000), ("1h", "raw", 3_600_000), ("24h", "rollup", None), ("run", "rollup", None),
])
def test_trend_windows_read_raw_or_rollups(fixture_db, window, source, span_ms):
    snap = StoreSource(fixture_db, clock=frozen_clock()).poll(TrendRequest(("air",), window))
    (tr,) = snap.trends
    assert tr.source == source
    assert snap.trend_to_ms == NOW_MS
    if span_ms is not None:
        assert snap.trend_from_ms == NOW_MS - span_ms
        assert tr.t_ms.min() >= NOW_MS - span_ms
    else:
        assert snap.trend_from_ms <= START_MS
    # the values are the fixture's ramp (rollup buckets hold the mean of each minute's readings)
    good = np.isfinite(tr.mean_c)
    expected = 23.0 + AIR_RATE_K_PER_MIN * (tr.t_ms[good] - START_MS) / 60_000.0
    np.testing.assert_allclose(tr.mean_c[good], expected, atol=0.5 * AIR_RATE_K_PER_MIN + 1e-6)


def test_a_short_window_read_in_steps_equals_one_fresh_read(fixture_db):
    clock_ms = [NOW_MS]
    src = StoreSource(fixture_db, clock=lambda: clock_ms[0] / 1000.0)
    req = TrendRequest(("air",), "10min")
    src.poll(req)
    with StoreWriter.open(fixture_db) as w:
        for k in range(1, 7):
            t = NOW_MS + k * 10_000
            w.write(1, SampleBatch(np.array([1], np.int64), np.array([t], np.int64), np.array([140.0]),
                                   np.array([113.0 + k / 12]), np.array([U_C]), np.zeros(1, np.int64),
                                   np.zeros(1, np.int64)))
    clock_ms[0] = NOW_MS + 60_000
    stepped = src.poll(req).trends[0]
    fresh = StoreSource(fixture_db, clock=lambda: clock_ms[0] / 1000.0).poll(req).trends[0]
    np.testing.assert_array_equal(stepped.t_ms, fresh.t_ms)
    np.testing.assert_allclose(stepped.mean_c, fresh.mean_c)
    src.close()


def test_the_newest_run_is_followed(fixture_db):
    src = StoreSource(fixture_db, clock=frozen_clock(), run_reread_s=0.0)
    assert src.poll().run.run_id == 1
    with StoreWriter.open(fixture_db) as w:
        info = w.begin_run("[station]\nname = 'second'\n", now_ms=NOW_MS + 1000, station="second", new_run=True)
    snap = src.poll()
    assert snap.run.run_id == info.run_id and snap.reset
    assert snap.channels == ()
    pinned = StoreSource(fixture_db, run_id=1, clock=frozen_clock(), run_reread_s=0.0).poll()
    assert pinned.run.run_id == 1


def test_a_missing_file_is_a_storage_error(tmp_path):
    with pytest.raises(StorageError, match="no database"):
        StoreSource(tmp_path / "nothing.db")
