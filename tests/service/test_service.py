"""The logger against the simulated lab, through the real stacks (pyvisa-py on TCP, pyserial on a pty)."""

from __future__ import annotations

import bisect
from collections import defaultdict

import numpy as np
from testkit import EPOCH_UTC_S, wait_for

from soaklog.store import StoreReader


def test_stored_temperatures_agree_with_the_truth_within_their_uncertainty(lab_run):
    """At least 95 % of readings lie within their expanded uncertainty (k = 2) of the simulator's truth.

    The truth is the simulator's true temperature at the sensor's position at
    the moment the instrument measured it (JCGM 100:2008, 6.2: U at k = 2 is
    meant to cover about 95 %). Sensors are drawn inside their IEC 60751 class
    and leads and self-heating are simulated; the logger knows only the class,
    the wiring and the data-sheet dissipation constant.
    """
    run = lab_run(speed=30.0, truth=True)
    wait_for(lambda: run.service.stats.stored >= 150, 60, "150 stored readings")
    run.service.stop()
    truth = defaultdict(list)
    for rec in run.truth():
        truth[rec["channel"]].append((EPOCH_UTC_S + float(rec["t_s"]), float(rec["true_c"])))
    for series in truth.values():
        series.sort()
    with StoreReader.open(run.config.database) as store:
        rows = store.connection.execute(
            "SELECT channel, t_utc, temperature_c, uncertainty_c, status FROM readings_v WHERE run_id = ?",
            (run.run_id,),
        ).fetchall()
    assert len(rows) >= 150
    assert {r[4] for r in rows} == {"ok"}
    from datetime import datetime

    inside = 0
    for channel, t_utc, temp, u, _status in rows:
        t = datetime.fromisoformat(t_utc.replace("Z", "+00:00")).timestamp()
        series = truth[channel]
        times = [s[0] for s in series]
        i = bisect.bisect_left(times, t)
        near = [series[j] for j in (i - 1, i) if 0 <= j < len(series)]
        true_c = min(near, key=lambda s: abs(s[0] - t))[1]
        inside += abs(temp - true_c) <= u
    assert inside / len(rows) >= 0.95, f"{inside} of {len(rows)} within U"


def test_an_instrument_lost_and_back_is_recorded_and_the_others_keep_logging(lab_run):
    run = lab_run(speed=30.0)
    svc = run.service
    wait_for(lambda: svc.stats.per_instrument.get("meter", 0) >= 5 * 5, 30, "five meter scans")
    board_before = svc.stats.per_instrument.get("board", 0)
    run.lab.meter.fault_mute()
    wait_for(lambda: svc.stats.per_instrument.get("board", 0) >= board_before + 15, 30, "board readings while meter mute")
    run.lab.meter.clear_faults()
    with StoreReader.open(run.config.database) as store:
        wait_for(lambda: any(e.kind == "instrument_recovered" for e in store.events(run.run_id)), 30,
                 "recovery event")
        kinds = [e.kind for e in store.events(run.run_id)]
        statuses = dict(store.connection.execute(
            "SELECT status, COUNT(*) FROM readings_v WHERE channel = 'air-supply' GROUP BY status").fetchall())
        board_ok = store.connection.execute(
            "SELECT COUNT(*) FROM readings_v WHERE channel = 'door-corner' AND status = 'ok'").fetchone()[0]
    assert kinds.index("instrument_lost") < kinds.index("instrument_recovered")
    assert statuses.get("timeout", 0) + statuses.get("lost", 0) >= 1
    assert statuses.get("ok", 0) >= 5
    assert board_ok >= board_before // 3


def test_disk_full_keeps_readings_in_memory_and_stores_them_when_space_returns(lab_run):
    run = lab_run(speed=30.0)
    svc = run.service
    wait_for(lambda: svc.stats.stored >= 20, 30, "first readings")
    conn = svc.store.connection
    pages = conn.execute("PRAGMA page_count").fetchone()[0]
    conn.execute(f"PRAGMA max_page_count = {pages}")  # the file may not grow: a full disk
    wait_for(lambda: svc.stats.storage_failures >= 2, 30, "refused writes")
    assert svc.stats.buffered > 0
    conn.execute("PRAGMA max_page_count = 1073741823")
    wait_for(lambda: svc.stats.buffered == 0 and svc.stats.commits > 0, 30, "buffer flushed")
    svc.stop()
    assert svc.stats.dropped == 0
    assert svc.stats.stored == svc.stats.readings
    with StoreReader.open(run.config.database) as store:
        n = store.connection.execute("SELECT COUNT(*) FROM readings_v WHERE run_id = ?", (run.run_id,)).fetchone()[0]
        kinds = [e.kind for e in store.events(run.run_id)]
    assert n == svc.stats.readings
    assert "storage_recovered" in kinds


def test_scans_follow_their_schedule_without_drift(lab_run):
    """Slot k starts at t0 + k·interval: the mean spacing of stored scans is the interval."""
    run = lab_run(speed=30.0)
    wait_for(lambda: run.service.stats.per_instrument.get("meter", 0) >= 5 * 15, 60, "15 meter scans")
    run.service.stop()
    with StoreReader.open(run.config.database) as store:
        ch = next(c.id for c in store.channels(run.run_id) if c.name == "air-supply")
        t = store.raw_window(ch, 0, 2**62).t_ms
    steps = np.diff(t) / 1000.0
    assert len(steps) >= 14
    # the demo meter scans every 10 s of chamber time
    assert np.median(steps) == __import__("pytest").approx(10.0, abs=0.5)
    # no drift: each scan sits on its slot t0 + k·10 s. A loaded machine makes a scan late (off its slot by its
    # lateness) or skips a slot (never bunches them); the median offset of the last third of the scans from
    # their slots is that of the first third, where a scheduler drifting 0.1 s a scan would be over 1 s off
    slot = np.round((t - t[0]) / 10_000.0)
    assert (np.diff(slot) >= 1).all()
    off_s = (t - t[0] - slot * 10_000.0) / 1000.0
    third = len(off_s) // 3
    assert abs(np.median(off_s[-third:]) - np.median(off_s[:third])) <= 1.0, off_s
