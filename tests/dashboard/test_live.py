"""The dashboard on a store filled by the real logger against the simulated lab (as the demo runs them)."""

from __future__ import annotations

import sqlite3

import pytest
from testkit import wait_for, wait_until

from soaklog.dashboard.app import DashboardApp
from soaklog.dashboard.widgets import AlarmBoard, ChannelBoard, RequestLine
from soaklog.store import StoreReader


def _all_channels_read(db: str, n: int) -> bool:
    try:
        with StoreReader.open(db) as st:
            rows = st.latest(st.run().id)
    except Exception:  # noqa: BLE001 - the file may not be there yet
        return False
    return len(rows) == n and all(r.t_ms is not None for r in rows)


def _newest_from_view(db: str, run_id: int) -> dict[str, tuple]:
    """Each channel's newest (temperature, U, status), from the public view readings_v."""
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
    try:
        rows = con.execute("SELECT channel, temperature_c, uncertainty_c, status FROM readings_v "
                           "WHERE run_id = ? ORDER BY t_utc", (run_id,)).fetchall()
    finally:
        con.close()
    return {r[0]: r[1:] for r in rows}


async def test_values_shown_equal_those_the_logger_stored(lab_run):
    run = lab_run(speed=30.0)
    n = len(run.config.channels)
    wait_for(lambda: _all_channels_read(run.database, n), 60, "a reading of every channel")
    app = DashboardApp(run.database, refresh_s=0.2)
    async with app.run_test(size=(120, 40)) as pilot:
        await wait_until(pilot, lambda: app.reads >= 2, what="the first reads")
        board = app.screen.query_one(ChannelBoard)
        first = {c.name: board.get_cell(c.name, "temp").plain for c in app.snapshot.channels}
        # live: the shown values move as the logger writes
        await wait_until(pilot, lambda: {c.name: board.get_cell(c.name, "temp").plain
                                         for c in app.snapshot.channels} != first, timeout_s=30,
                         what="new values on screen")
        # every view opens while the logger writes, then back to the channels
        for key in ("g", "w", "w", "w", "a", "i", "question_mark", "escape", "p"):
            await pilot.press(key)
            await pilot.pause(0.1)
        run.stop()
        await pilot.press("r")
        await wait_until(pilot, lambda: app.snapshot is not None and not app.snapshot.live, timeout_s=30,
                         what="the ended run")
        await pilot.press("r")
        await pilot.pause(0.5)
        stored = _newest_from_view(run.database, run.run_id)
        assert len(stored) == n
        for name, (temp, u, status) in stored.items():
            shown_t = board.get_cell(name, "temp").plain.strip()
            shown_u = board.get_cell(name, "u").plain.strip()
            # shown to 1 mK; the view holds temperatures in steps of 1 µK and U in steps of 0.1 mK
            # (daq/store/schema.py), so a value on a rounding edge may show one digit apart
            assert (shown_t == "—") == (temp is None)
            assert (shown_u == "—") == (u is None)
            if temp is not None:
                assert float(shown_t) == pytest.approx(temp, abs=0.0005 + 1e-6)
            if u is not None:
                assert float(shown_u) == pytest.approx(u, abs=0.0005 + 1e-4)
            assert board.get_cell(name, "status").plain.strip() in (status, "ALARM")


async def test_an_alarm_acknowledged_with_keys_is_applied_by_the_logger(lab_run):
    run = lab_run(speed=30.0)
    wait_for(lambda: _all_channels_read(run.database, len(run.config.channels)), 60, "readings")
    run.lab.world.set_fault("door-corner", "open")

    def door_alarm() -> dict | None:
        with StoreReader.open(run.database) as st:
            rows = [a for a in st.alarms(run.run_id) if a.channel == "door-corner" and a.state != "normal"]
        return rows[0] if rows else None

    wait_for(lambda: door_alarm() is not None, 60, "the sensor-fault alarm on door-corner")
    alarm = door_alarm()
    assert alarm.state == "unacknowledged"
    app = DashboardApp(run.database, refresh_s=0.2, actor="tester (dashboard)")
    async with app.run_test(size=(100, 30)) as pilot:
        await wait_until(pilot, lambda: app.reads >= 2, what="the first reads")
        await pilot.press("a")
        board = app.screen.query_one(AlarmBoard)
        await wait_until(pilot, lambda: any(a.id == alarm.id for a in board.alarms), what="the alarm listed")
        while board.selected_alarm is not None and board.selected_alarm.id != alarm.id:
            await pilot.press("down")
        await pilot.press("k")
        line = app.screen.query_one(RequestLine)
        await wait_until(pilot, lambda: "applied" in str(line.render()), timeout_s=30,
                         what="the logger's outcome on screen")
    with StoreReader.open(run.database) as st:
        (req,) = st.operator_actions()
        state = next(a for a in st.alarms(run.run_id) if a.id == alarm.id)
        kinds = [e.kind for e in st.events(run.run_id)]
    assert (req.kind, req.target, req.actor) == ("acknowledge", alarm.id, "tester (dashboard)")
    assert req.outcome.startswith("applied")
    # ANSI/ISA-18.2: acknowledging an active alarm leaves it active, acknowledged
    assert state.acked is True and state.state in ("acknowledged", "normal")
    assert "alarm_acknowledged" in kinds
