"""The SQLite store on real files: views, runs, rollups, windows, failures."""

from __future__ import annotations

import sqlite3

import numpy as np
import pytest
from testkit.store import old_store

from soaklog.errors import StorageError
from soaklog.store import STATUS_CODES, SampleBatch, StoreReader, StoreWriter

T0 = 1_764_633_600_000  # 2025-12-02T00:00:00Z in ms


def batch(ch_ids, t_ms, temps, *, status=None, raw=None):
    n = len(ch_ids)
    temps = np.asarray(temps, dtype=np.float64)
    st = np.zeros(n, dtype=np.int64) if status is None else np.asarray(status, dtype=np.int64)
    return SampleBatch(
        np.asarray(ch_ids, dtype=np.int64),
        np.asarray(t_ms, dtype=np.int64),
        np.full(n, 138.5) if raw is None else np.asarray(raw, dtype=np.float64),
        temps,
        np.where(np.isnan(temps), np.nan, 0.25),
        st,
        np.zeros(n, dtype=np.int64),
    )


@pytest.fixture
def store(tmp_path):
    s = StoreWriter.open(tmp_path / "station.db")
    yield s
    s.close()


def new_run(store, config="[station]\nname = 'a'\n", channels=("t1", "t2")):
    info = store.begin_run(config, now_ms=T0, station="a")
    ids = store.ensure_channels(info.run_id, [(c, c.upper(), "dmm1", "ohm") for c in channels])
    return info, ids


def test_public_views_have_the_contract_columns(store):
    # DESIGN.md database contract
    cols = [r[1] for r in store.connection.execute("PRAGMA table_info(readings_v)")]
    assert cols == ["run_id", "channel", "t_utc", "t_ms", "raw", "raw_unit", "temperature_c", "uncertainty_c",
                    "status", "flags"]
    cols = [r[1] for r in store.connection.execute("PRAGMA table_info(events_v)")]
    assert cols == ["run_id", "t_utc", "kind", "channel", "severity", "message"]
    cols = [r[1] for r in store.connection.execute("PRAGMA table_info(runs)")]
    assert cols[:4] == ["id", "started_utc", "ended_utc", "config"]


def test_readings_view_gives_iso_times_and_null_for_bad_readings(store):
    info, ids = new_run(store)
    store.write(info.run_id, batch([ids["t1"], ids["t2"]], [T0, T0], [100.123456, np.nan],
                                   status=[0, STATUS_CODES["open"]], raw=[138.55, np.nan]))
    rows = store.connection.execute(
        "SELECT channel, t_utc, raw, temperature_c, uncertainty_c, status FROM readings_v ORDER BY channel"
    ).fetchall()
    assert rows[0] == ("t1", "2025-12-02T00:00:00.000Z", 138.55, pytest.approx(100.123456, abs=1e-6), 0.25, "ok")
    assert rows[1] == ("t2", "2025-12-02T00:00:00.000Z", None, None, None, "open")


def test_same_config_continues_the_run_and_a_change_starts_a_new_one(store):
    info, ids = new_run(store)
    store.write(info.run_id, batch([ids["t1"]], [T0 + 5000], [20.0]))
    again = store.begin_run("[station]\nname = 'a'\n", now_ms=T0 + 60_000)
    assert again.continued and again.run_id == info.run_id and again.last_t_ms == T0 + 5000
    other = store.begin_run("[station]\nname = 'b'\n", now_ms=T0 + 120_000)
    assert not other.continued and other.run_id != info.run_id
    assert store.run().config == "[station]\nname = 'b'\n"


def test_migrations_are_safe_to_run_twice(tmp_path):
    p = tmp_path / "m.db"
    with StoreWriter.open(p) as s:
        v = s.schema_version()
    with StoreWriter.open(p) as s:
        assert s.migrate() == v
        assert s.integrity_check() == "ok"


def test_rollups_agree_with_the_raw_readings(store):
    info, ids = new_run(store)
    rng = np.random.default_rng(7)
    n = 3 * 3600
    temps = 85.0 + rng.normal(0, 0.2, n)
    temps[::97] = np.nan
    for start in range(0, n, 500):
        sl = slice(start, start + 500)
        k = temps[sl].shape[0]
        store.write(info.run_id, batch([ids["t1"]] * k, T0 + 1000 * np.arange(start, start + k), temps[sl],
                                       status=np.where(np.isnan(temps[sl]), STATUS_CODES["timeout"], 0)))
    (s1,) = [r for r in store.summary(info.run_id) if r.channel == "t1"]
    good = temps[~np.isnan(temps)]
    assert s1.readings == n
    assert s1.without_temperature == int(np.isnan(temps).sum())
    assert s1.min_c == pytest.approx(good.min(), abs=1e-6)
    assert s1.max_c == pytest.approx(good.max(), abs=1e-6)
    assert s1.mean_c == pytest.approx(good.mean(), abs=1e-6)
    # a 1-hour window from the raw rows, the whole run from the rollups: the same mean
    tr_raw = store.trend(ids["t1"], T0, T0 + 3600_000 - 1)
    assert tr_raw.source == "raw" and len(tr_raw.t_ms) == 3600
    tr_roll = store.trend(ids["t1"], T0, T0 + n * 1000, max_points=90)
    assert tr_roll.source == "rollup" and len(tr_roll.t_ms) <= 90
    assert np.nanmean(tr_roll.mean_c) == pytest.approx(good.mean(), abs=0.01)


def test_window_is_exact_at_its_edges(store):
    info, ids = new_run(store)
    store.write(info.run_id, batch([ids["t1"]] * 300, T0 + 1000 * np.arange(300), np.arange(300.0)))
    w = store.raw_window(ids["t1"], T0 + 59_000, T0 + 121_000)
    t, temp = w.t_ms, w.temperature_c
    assert t[0] == T0 + 59_000 and t[-1] == T0 + 121_000 and len(t) == 63
    np.testing.assert_allclose(temp, np.arange(59.0, 122.0), atol=1e-6)


def test_a_second_run_with_earlier_clock_does_not_mix_windows(store):
    # an accelerated demo can stamp a later run earlier than the last one; windows stay per run
    a, ida = new_run(store, config="a")
    store.write(a.run_id, batch([ida["t1"]] * 120, T0 + 1000 * np.arange(120), np.full(120, 1.0)))
    b, idb = new_run(store, config="b")
    store.write(b.run_id, batch([idb["t1"]] * 120, T0 + 1000 * np.arange(120), np.full(120, 2.0)))
    temp_b = store.raw_window(idb["t1"], T0, T0 + 119_000).temperature_c
    assert len(temp_b) == 120 and np.all(temp_b == 2.0)


def test_reader_sees_commits_and_does_not_block_the_writer(tmp_path):
    p = tmp_path / "w.db"
    w = StoreWriter.open(p)
    info, ids = new_run(w)
    r = StoreReader.open(p)
    w.write(info.run_id, batch([ids["t1"]], [T0], [1.0]))
    assert r.latest(info.run_id)[0].temperature_c == 1.0
    w.write(info.run_id, batch([ids["t1"]], [T0 + 1000], [2.0]))
    assert r.latest(info.run_id)[0].temperature_c == 2.0
    with pytest.raises(sqlite3.OperationalError):
        r.connection.execute("INSERT INTO events (run_id, t_ms, kind, message) VALUES (1, 0, 'x', 'y')")
    r.close()
    w.close()


def test_readonly_open_of_a_missing_file_says_what_to_do(tmp_path):
    with pytest.raises(StorageError, match="no database"):
        StoreReader.open(tmp_path / "nothing.db")


def test_disk_full_raises_storage_error_and_stores_nothing_of_the_batch(store):
    info, ids = new_run(store)
    store.write(info.run_id, batch([ids["t1"]], [T0], [1.0]))
    pages = store.connection.execute("PRAGMA page_count").fetchone()[0]
    store.connection.execute(f"PRAGMA max_page_count = {pages}")
    big = batch([ids["t1"]] * 20_000, T0 + 1000 + np.arange(20_000), np.full(20_000, 3.0))
    with pytest.raises(StorageError, match="full"):
        store.write(info.run_id, big)
    assert store.connection.execute("SELECT COUNT(*) FROM samples").fetchone()[0] == 1
    store.connection.execute("PRAGMA max_page_count = 1073741823")
    store.write(info.run_id, big)
    assert store.connection.execute("SELECT COUNT(*) FROM samples").fetchone()[0] == 20_001


def test_events_view(store):
    info, ids = new_run(store)
    store.add_event(info.run_id, T0, "service_start", "logger started")
    store.add_event(info.run_id, T0 + 1000, "instrument_lost", "dmm1 lost", severity="warning", ch=ids["t1"])
    rows = store.connection.execute("SELECT t_utc, kind, channel, severity, message FROM events_v").fetchall()
    assert rows == [
        ("2025-12-02T00:00:00.000Z", "service_start", None, "info", "logger started"),
        ("2025-12-02T00:00:01.000Z", "instrument_lost", "t1", "warning", "dmm1 lost"),
    ]


def test_a_version_2_file_upgrades_and_its_totals_come_from_the_rollups(tmp_path):
    """Migration 3 adds running totals to an existing file and fills them from its minute rollups."""
    p = tmp_path / "old.db"
    conn = old_store(p, 2)
    conn.execute("INSERT INTO channels (id, run_id, name) VALUES (1, 1, 't1')")
    conn.executemany(
        "INSERT INTO rollup_1m (ch, minute, n, n_bad, t_min, t_max, t_sum, u_max) VALUES (1, ?, ?, ?, ?, ?, ?, ?)",
        [(0, 60, 0, 19.0, 21.0, 1200.0, 0.3), (1, 60, 2, 18.5, 22.0, 1160.0, 0.4)],
    )
    conn.execute("INSERT INTO latest (ch, t_ms, status, flags, t_min_c, t_max_c) VALUES (1, 119000, 0, 0, 18.5, 22.0)")
    conn.close()
    with StoreWriter.open(p) as s:
        assert s.schema_version() >= 3
        (row,) = s.summary(1)
    # worked by hand: 120 readings, 2 without temperature, mean = (1200 + 1160) / 118
    assert row.readings == 120 and row.without_temperature == 2
    assert row.mean_c == pytest.approx(2360.0 / 118.0)
    assert row.max_u_c == 0.4 and row.min_c == 18.5 and row.max_c == 22.0


def test_a_file_missing_a_table_is_a_storage_error_that_names_what_and_where(tmp_path):
    """A reader never lets sqlite3.Error out: viewers catch StorageError alone (issue 11)."""
    p = tmp_path / "damaged.db"
    with StoreWriter.open(p) as w:
        info, ids = new_run(w)
        w.write(info.run_id, batch([ids["t1"]] * 3, T0 + 1000 * np.arange(3), np.full(3, 20.0)))
    with sqlite3.connect(p) as conn:  # damage it as another program could
        conn.execute("DROP TABLE latest")
        conn.execute("DROP TABLE minute_index")
    with StoreReader.open(p) as r:
        assert r.run().id == info.run_id  # what is still there reads
        with pytest.raises(StorageError, match=r"cannot read the latest readings from .*damaged\.db: no such table: latest"):
            r.latest(info.run_id)
        with pytest.raises(StorageError, match=r"cannot read readings from .*damaged\.db: no such table: minute_index"):
            next(r.iter_readings(info.run_id))  # a generator: translated while iterated
        with pytest.raises(StorageError, match="no such table"):
            r.summary(info.run_id)


def test_a_locked_file_is_a_storage_error_for_every_write(tmp_path):
    p = tmp_path / "locked.db"
    w = StoreWriter.open(p, timeout_s=0.05)
    info, ids = new_run(w)
    other = sqlite3.connect(p, isolation_level=None, timeout=0.05)
    other.execute("BEGIN IMMEDIATE")  # another writer holds the file
    try:
        with pytest.raises(StorageError, match=r"cannot record the run in .*locked\.db: database is locked"):
            w.begin_run("[station]\nname = 'other'\n", now_ms=T0)
        with pytest.raises(StorageError, match=r"cannot write 1 readings to .*locked\.db: database is locked"):
            w.write(info.run_id, batch([ids["t1"]], [T0], [1.0]))
        with pytest.raises(StorageError, match="database is locked"):
            w.add_event(info.run_id, T0, "service_start", "logger started")
    finally:
        other.execute("ROLLBACK")
        other.close()
    w.write(info.run_id, batch([ids["t1"]], [T0], [1.0]))  # and all is well once it lets go
    assert w.latest(info.run_id)[0].temperature_c == 1.0
    w.close()


def test_readings_view_names_every_flag_and_withholds_what_it_must(store):
    from soaklog.sensors.flags import Flag

    info, ids = new_run(store)
    flags = [0, int(Flag.NO_SENSOR_SPEC), int(Flag.OUTSIDE_CLASS_RANGE | Flag.LARGE_SELF_HEATING),
             int(Flag.OVER_RANGE)]
    b = SampleBatch(
        np.full(4, ids["t1"], dtype=np.int64), np.arange(4, dtype=np.int64) * 1000 + T0,
        np.array([138.5, 138.5, 250.0, 148.0]), np.array([100.0, 100.0, 420.0, np.nan]),
        np.array([0.25, np.nan, 3.5, np.nan]),
        np.array([0, 0, 0, STATUS_CODES["overload"]], dtype=np.int64), np.array(flags, dtype=np.int64),
    )
    store.write(info.run_id, b)
    rows = store.connection.execute(
        "SELECT t_ms, typeof(t_ms), temperature_c, uncertainty_c, status, flags FROM readings_v ORDER BY t_ms"
    ).fetchall()
    assert [r[0] for r in rows] == [T0, T0 + 1000, T0 + 2000, T0 + 3000] and rows[0][1] == "integer"
    assert rows[0][3:] == (0.25, "ok", "")
    # no sensor specification: a temperature, but no uncertainty (NULL, never 0) and the flag that says why
    assert rows[1][2] == pytest.approx(100.0) and rows[1][3] is None and rows[1][5] == "no_sensor_spec"
    assert rows[2][5] == "outside_class_range,large_self_heating"  # bit order, as convert --json lists them
    assert rows[3][2:] == (None, None, "overload", "over_range")
    # the export's reader gives the same names, as lists
    (chunk,) = list(store.iter_readings(info.run_id))
    assert chunk.flags == [[], ["no_sensor_spec"], ["outside_class_range", "large_self_heating"], ["over_range"]]


def test_a_version_4_file_gains_flags_and_t_ms_and_the_migration_runs_twice(tmp_path):
    p = tmp_path / "v4.db"
    conn = old_store(p, 4)
    conn.execute("INSERT INTO statuses (code, name) VALUES (0, 'ok')")
    conn.execute("INSERT INTO channels (id, run_id, name) VALUES (1, 1, 't1')")
    # written by an older soaklog: flag bit 8 (no_sensor_spec) and U stored as 0
    conn.execute(f"INSERT INTO samples (ch, t_ms, raw, temp_uc, u_e4, status, flags) VALUES (1, {T0}, 100.0, 0, 0, 0, 8)")
    assert [r[1] for r in conn.execute("PRAGMA table_info(readings_v)")][-1] == "status"
    conn.close()
    for _ in range(2):
        with StoreWriter.open(p) as s:
            assert s.schema_version() == 5
            row = s.connection.execute("SELECT t_ms, flags, uncertainty_c FROM readings_v").fetchone()
            assert s.integrity_check() == "ok"
    # the old row keeps what it was written with; its flag now shows
    assert row == (T0, "no_sensor_spec", 0.0)
