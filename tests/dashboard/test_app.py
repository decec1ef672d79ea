"""The dashboard app driven by keys (Textual's run_test and Pilot) on a store with known readings."""

from __future__ import annotations

import sqlite3
import threading

import pytest
from testkit import wait_until
from testkit.dashboard import NOW_MS, START_MS, frozen_clock, screen_text

from soaklog.dashboard.app import DashboardApp
from soaklog.dashboard.screens import (
    GLOBAL_KEYS,
    VIEW_KEYS,
    AlarmsView,
    GraphView,
    InstrumentsView,
    ProbesView,
)
from soaklog.dashboard.widgets import (
    AlarmBoard,
    ChannelBoard,
    InstrumentBoard,
    RequestLine,
    TrendPanel,
)
from soaklog.store import StoreReader, StoreWriter


def _app(db, **kw):
    kw.setdefault("clock", frozen_clock())
    kw.setdefault("refresh_s", 0.2)
    kw.setdefault("actor", "tester@bench (dashboard)")
    return DashboardApp(db, **kw)


async def _started(pilot, app, reads=2):
    await wait_until(pilot, lambda: app.reads >= reads, what="the first reads of the file")
    await pilot.pause()


def _cell(board, row, col):
    return board.get_cell(row, col).plain.strip()


def _stored(db):
    """Newest reading and min/max per channel, from the public view readings_v."""
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
    try:
        rows = con.execute("SELECT channel, t_utc, temperature_c, uncertainty_c, status FROM readings_v "
                           "WHERE run_id = 1 ORDER BY t_utc").fetchall()
    finally:
        con.close()
    newest = {r[0]: r for r in rows}
    ext: dict[str, list[float]] = {}
    for r in rows:
        if r[2] is not None:
            ext.setdefault(r[0], []).append(r[2])
    return newest, {k: (min(v), max(v)) for k, v in ext.items()}


async def test_probes_show_the_stored_values_with_marks_on_abnormal_rows(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        board = app.screen.query_one(ChannelBoard)
        newest, ext = _stored(fixture_db)
        for name, (_ch, _t, temp, u, status) in newest.items():
            assert _cell(board, name, "temp") == ("—" if temp is None else f"{temp:.3f}")
            assert _cell(board, name, "u") == ("—" if u is None else f"{u:.3f}")
            lo, hi = ext[name]
            assert (_cell(board, name, "min"), _cell(board, name, "max")) == (f"{lo:.2f}", f"{hi:.2f}")
            if status != "ok":
                assert _cell(board, name, "status") == status
        # abnormal rows read without colour: a mark and a word
        marks = {n: (_cell(board, n, "mark"), _cell(board, n, "status")) for n in newest}
        assert marks == {"air": ("!!", "ALARM"), "shelf": ("", "ok"), "door": ("!!", "open"),
                         "plate": ("!!", "stale")}
        assert _cell(board, "plate", "age") == "10 min"
        assert _cell(board, "air", "rate") == "+0.50"
        text = screen_text(app)
        assert "fixture-bench" in text and "run 1: fixture cycling run" in text
        assert "elapsed 3:00:00 of 100 h planned (3.0 %)" in text
        # testkit.dashboard: the cycle plan at 3 h: 3402 s + 3780 s = cycle 3 starts at 7182 s, its dwell low at 10 062 s
        assert "plan dwell low · cycle 3 of 10 · set point -40.0 °C" in text
        assert "!! 1 alarm to acknowledge (a)" in text
        assert "not a safety device" in text
        for label in ("Air supply", "Shelf 1 front", "Door corner", "Fixture plate"):
            assert label in text


@pytest.mark.parametrize(("presses", "temp", "u"), [
    (1, "386.150", "0.120"),  # SI Brochure 2.3.1: 113 °C = 386.15 K; a difference is the same in K
    (2, "235.400", "0.216"),  # NIST SP 811 B.9: 1.8 * 113 + 32 = 235.4 °F; 0.12 K = 0.216 °F
    (3, "113.000", "0.120"),
])
async def test_unit_key_changes_the_display_only(fixture_db, presses, temp, u):
    app = _app(fixture_db)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        for _ in range(presses):
            await pilot.press("u")
        await pilot.pause()
        board = app.screen.query_one(ChannelBoard)
        assert (_cell(board, "air", "temp"), _cell(board, "air", "u")) == (temp, u)
    with StoreReader.open(fixture_db) as st:
        assert st.latest(1)[0].temperature_c == pytest.approx(113.0)  # 23 + 0.5 K/min * 180 min


async def test_window_key_changes_the_plotted_range(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(100, 30)) as pilot:
        await _started(pilot, app)
        await pilot.press("enter")  # the highlighted channel (air) on the Graph
        assert isinstance(app.screen, GraphView)
        panel = app.screen.query_one("#trend", TrendPanel)

        def plotted(window):
            return lambda: panel.window == window and panel.data_range_ms is not None

        await wait_until(pilot, plotted("10min"), what="the 10-minute trend")
        first, last = panel.data_range_ms
        assert last == NOW_MS and NOW_MS - 600_000 <= first <= NOW_MS - 590_000  # air is read every 10 s
        await pilot.press("w")
        await wait_until(pilot, plotted("1h"), what="the 1-hour trend")
        first, last = panel.data_range_ms
        assert NOW_MS - 3_600_000 <= first <= NOW_MS - 3_590_000 and last == NOW_MS
        await pilot.press("w")
        await wait_until(pilot, plotted("24h"), what="the 24-hour trend")
        assert {s.source for s in panel.series} == {"rollup"}
        first, _last = panel.data_range_ms
        assert first < START_MS + 60_000  # the whole 3-hour run is inside 24 h
        await pilot.press("W", "W")
        await wait_until(pilot, plotted("10min"), what="back to 10 minutes")


async def test_acknowledge_key_queues_an_operator_request_in_the_store(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        await pilot.press("a")
        assert isinstance(app.screen, AlarmsView)
        board = app.screen.query_one(AlarmBoard)
        await wait_until(pilot, lambda: board.selected_alarm is not None, what="the alarm list")
        # what waits for an acknowledgement comes first
        assert board.selected_alarm.id == "air-high:air"
        await pilot.press("k")

        def queued():
            with StoreReader.open(fixture_db) as st:
                return st.operator_actions()

        await wait_until(pilot, lambda: len(queued()) == 1, what="the request in the store")
        (req,) = queued()
        assert (req.kind, req.target, req.actor, req.t_ms) == (
            "acknowledge", "air-high:air", "tester@bench (dashboard)", NOW_MS)
        assert req.applied_ms is None  # no logger runs on this file: nobody applied it
        line = app.screen.query_one(RequestLine)
        await wait_until(pilot, lambda: "waiting for the logger" in str(line.render()), what="the request line")
        # an alarm already acknowledged is not asked again
        await pilot.press("down", "k")
        await pilot.pause(0.3)
        assert len(queued()) == 1


async def test_shelve_and_note_from_the_keyboard(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        await pilot.press("a")
        await wait_until(pilot, lambda: app.screen.query_one(AlarmBoard).selected_alarm is not None, what="alarms")
        await pilot.press("down", "s")  # shelve door-fault:door; choices: 15 min, 1 h, …
        await pilot.press("down", "enter")
        await pilot.press("n")
        await pilot.press(*"cable ok", "enter")

        def queued():
            with StoreReader.open(fixture_db) as st:
                return st.operator_actions()

        await wait_until(pilot, lambda: len(queued()) == 2, what="two requests")
        shelve, note = queued()
        assert (shelve.kind, shelve.target, shelve.until_ms - shelve.t_ms) == (
            "shelve", "door-fault:door", 3_600_000)
        assert (note.kind, note.target, note.note) == ("note", "door-fault:door", "cable ok")


async def test_acknowledge_all_asks_for_each_alarm_that_waits(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        await pilot.press("a", "K")

        def queued():
            with StoreReader.open(fixture_db) as st:
                return [(a.kind, a.target) for a in st.operator_actions()]

        await wait_until(pilot, lambda: len(queued()) >= 1, what="the requests")
        await pilot.pause(0.2)
        assert queued() == [("acknowledge", "air-high:air")]  # the fixture has one alarm waiting


async def test_instruments_view_shows_the_lost_board(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        await pilot.press("i")
        assert isinstance(app.screen, InstrumentsView)
        board = app.screen.query_one(InstrumentBoard)
        await wait_until(pilot, lambda: board.row_count == 2, what="the instruments")
        assert (_cell(board, "board", "mark"), _cell(board, "board", "state")) == ("!!", "LOST")
        assert (_cell(board, "board", "reads"), _cell(board, "board", "errors")) == ("2041", "3")
        assert _cell(board, "meter", "state") == "connected"
        text = screen_text(app)
        assert "no frame within 3.0 s" in text


async def test_help_lists_every_key_the_views_answer_to(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        await pilot.press("question_mark")
        await pilot.pause()
        listed = {k for k, _ in GLOBAL_KEYS} | {k for keys in VIEW_KEYS.values() for k, _ in keys}
        words = {w for k in listed for w in k.split()}
        # the bindings the dashboard declares itself (not those Textual's widgets bring)
        bound = {b.key for b in DashboardApp.__dict__["BINDINGS"]}
        for view in (ProbesView, GraphView, AlarmsView, InstrumentsView):
            bound |= {b.key for b in view.__dict__.get("BINDINGS", [])}
        names = {"question_mark": "?"}
        missing = {names.get(k, k) for k in bound} - words - {"ctrl+c"}  # ctrl+c quits too, as a terminal expects
        assert missing == set()
        await pilot.press("escape")
        assert isinstance(app.screen, ProbesView)


async def test_a_large_terminal_shows_more(fixture_db):
    app = _app(fixture_db)
    async with app.run_test(size=(160, 50)) as pilot:
        await _started(pilot, app)
        mini = app.screen.query_one("#mini", TrendPanel)
        await wait_until(pilot, lambda: mini.data_range_ms is not None, what="the highlighted channel's trend")
        text = screen_text(app)
        assert "Raw" in text and "143.5050 ohm" in text  # the fixture's raw value: 100 + 0.385 * 113 ohm
        assert "last 10 min" in text
        assert "every chamber needs its own independent over-temperature cut-out" in text


async def test_a_finished_run_opens_for_review(fixture_db):
    with StoreWriter.open(fixture_db) as w:
        w.end_run(1, now_ms=NOW_MS + 1000)
    app = _app(fixture_db, clock=frozen_clock(NOW_MS + 86_400_000 * 40))
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        text = screen_text(app)
        assert "[ENDED]" in text and "review of a finished run" in text
        # no logger will apply a request on an ended run (it refuses those queued while none ran)
        await pilot.press("a", "k")
        await pilot.pause(0.3)
    with StoreReader.open(fixture_db) as st:
        assert st.operator_actions() == []


async def test_setting_the_stop_event_closes_the_app(fixture_db):
    stop = threading.Event()
    app = _app(fixture_db, stop_event=stop)
    async with app.run_test(size=(80, 24)) as pilot:
        await _started(pilot, app)
        stop.set()
        await wait_until(pilot, lambda: not app.is_running, what="the app to close")
