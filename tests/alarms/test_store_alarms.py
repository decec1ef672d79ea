"""Alarm states and alarm events in the store (real SQLite files), and the `alarms()` contract."""

from __future__ import annotations

from dataclasses import replace

import pytest
from testkit.store import old_store

from soaklog.errors import StorageError
from soaklog.store import AlarmRow, EventRow, StoreReader, StoreWriter

CONTRACT = {"id", "rule", "channel", "state", "severity", "message", "since_utc", "acked", "shelved_until_utc"}


def _store(tmp_path):
    s = StoreWriter.open(tmp_path / "a.db")
    run = s.begin_run("config", now_ms=0).run_id
    ids = s.ensure_channels(run, [("air", "Air", "meter", "ohm"), ("shelf", "Shelf", "meter", "ohm")])
    return s, run, ids


def test_a_schema_3_file_gets_the_alarm_table_and_reads_no_alarms(tmp_path):
    from soaklog.store.schema import SCHEMA_VERSION

    p = tmp_path / "old.db"
    conn = old_store(p, 3)
    conn.close()
    with StoreReader.open(p) as s:
        assert s.alarms(1) == []  # an old file read as it is: no alarm table yet
    with StoreWriter.open(p) as s:  # brought to the newest schema (the alarm table came with 4)
        assert s.schema_version() == SCHEMA_VERSION >= 4
        assert s.alarms(1) == []
    with StoreWriter.open(p) as s:  # migrations are safe to run twice
        assert s.schema_version() == SCHEMA_VERSION


def test_alarm_states_round_trip_and_the_alarms_contract(tmp_path):
    s, run, ids = _store(tmp_path)
    rows = [
        AlarmRow("hot:air", "hot", "high", "air", ids["air"], "unacknowledged", "high", True, False, 1_800_000_000_000,
                 None, 131.5, "air 131.50 °C above the high limit 130.00 °C"),
        AlarmRow("hot:shelf", "hot", "high", "shelf", ids["shelf"], "normal", "high", False, True, None, None, None, ""),
        AlarmRow("gone:meter", "gone", "instrument_lost", "meter", None, "shelved", "high", True, False,
                 1_800_000_000_000, 1_800_000_600_000, None, "instrument meter lost"),
    ]
    s.save_alarm_states(run, rows, now_ms=1)
    every = s.alarms(run)
    # read back as saved, with the channel's name filled in
    assert [replace(a, channel=None) for a in every] == rows
    assert [a.id for a in every] == ["hot:air", "hot:shelf", "gone:meter"]
    assert all(CONTRACT <= set(a.as_json()) for a in every)
    hot = every[0].as_json()
    assert (hot["channel"], hot["state"], hot["acked"], hot["since_utc"]) == ("air", "unacknowledged", False,
                                                                             "2027-01-15T08:00:00.000Z")
    # 1 800 000 000 s after the Unix epoch is 2027-01-15T08:00:00Z (date arithmetic, 20833 days + 8 h)
    assert every[2].channel is None and every[2].shelved_until_utc == "2027-01-15T08:10:00.000Z"
    assert [a.id for a in s.alarms(run, active_only=True)] == ["hot:air", "gone:meter"]
    # an update replaces the row
    s.save_alarm_states(run, [replace(rows[0], state="acknowledged", acked=True)], now_ms=2)
    assert s.alarms(run)[0].state == "acknowledged"
    s.close()


def test_alarm_events_are_in_events_v_with_their_channel(tmp_path):
    s, run, ids = _store(tmp_path)
    got = s.add_events(run, [
        EventRow(1_000, "alarm_raised", "air 131 °C above 130 °C", "critical", ids["air"], {"alarm": "hot:air"}),
        EventRow(2_000, "action_done", "heater supply off for hot:air: done", "info", ids["air"]),
        EventRow(3_000, "alarm_note", "note: door opened"),
    ])
    assert len(got) == 3
    rows = s.connection.execute("SELECT kind, channel, severity, message FROM events_v").fetchall()
    assert rows == [("alarm_raised", "air", "critical", "air 131 °C above 130 °C"),
                    ("action_done", "air", "info", "heater supply off for hot:air: done"),
                    ("alarm_note", None, "info", "note: door opened")]
    first = s.events(run)[0]
    assert (first.data, first.channel, first.t_utc) == ({"alarm": "hot:air"}, "air", "1970-01-01T00:00:01.000Z")
    s.close()


def test_a_full_disk_is_a_storage_error_and_nothing_half_written(tmp_path):
    s, run, _ids = _store(tmp_path)
    conn = s.connection
    conn.execute(f"PRAGMA max_page_count = {conn.execute('PRAGMA page_count').fetchone()[0]}")
    with pytest.raises(StorageError):
        s.add_events(run, [EventRow(i, "alarm_note", "x" * 4000) for i in range(50)])
    conn.execute("PRAGMA max_page_count = 1073741823")
    assert s.events(run) == []
    s.close()
