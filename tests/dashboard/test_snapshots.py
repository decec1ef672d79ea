"""Each view as an SVG screenshot, kept as a regression fixture (fixed data, frozen clock).

These fixtures are pictures of the dashboard as reviewed by eye, not outside
references: they catch an unintended change of layout or wording. After an
intended change, look at the new pictures and keep them with

    SOAKLOG_UPDATE_SNAPSHOTS=1 python -m pytest -q tests/dashboard/test_snapshots.py

Each picture also holds the fixture's known values, checked in its text.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from testkit import wait_until
from testkit.dashboard import frozen_clock, screen_text

from soaklog.dashboard.app import DashboardApp
from soaklog.dashboard.widgets import TrendPanel

SNAPSHOTS = Path(__file__).with_name("snapshots")
UPDATE = os.environ.get("SOAKLOG_UPDATE_SNAPSHOTS") == "1"

# (name, terminal size, keys pressed, text the picture must hold: the fixture's values)
CASES = [
    ("probes_80x24", (80, 24), [], ["113.000", "25.000", "!!", "open", "stale", "+0.50", "10 min"]),
    ("graph_80x24", (80, 24), ["enter"], ["[x] Air supply", "last 10 min", "high 130.0", "now 113.00"]),
    ("alarms_80x24", (80, 24), ["a"], ["active, not acked", "active, acked", "critical", "sensor_fault"]),
    ("instruments_80x24", (80, 24), ["i"], ["LOST", "connected", "2041", "no frame within 3.0 s"]),
    ("help_80x24", (80, 24), ["question_mark"], ["acknowledge", "esc"]),
    ("probes_160x50", (160, 50), [], ["143.5050 ohm", "last 10 min", "independent over-temperature cut-out"]),
]


@pytest.mark.parametrize(("name", "size", "keys", "holds"), CASES, ids=[c[0] for c in CASES])
async def test_view_looks_as_kept(fixture_db, tmp_path, name, size, keys, holds):
    app = DashboardApp(fixture_db, clock=frozen_clock(), refresh_s=0.1, shown_path="fixture.db",
                       actor="tester (dashboard)")
    async with app.run_test(size=size) as pilot:
        await wait_until(pilot, lambda: app.reads >= 3, what="reads of the file")
        for key in keys:
            await pilot.press(key)
        start = app.reads
        await wait_until(pilot, lambda: app.reads >= start + 3, what="the view to settle")
        for panel in app.screen.query(TrendPanel):
            if panel.display and panel.t_from_ms is None and name.startswith(("graph", "probes_160")):
                await wait_until(pilot, lambda p=panel: p.t_from_ms is not None, what="the trend")
        await pilot.pause()
        text = screen_text(app)
        svg = app.export_screenshot()
    for h in holds:
        assert h in text, f"{name}: {h!r} not on screen"
    kept = SNAPSHOTS / f"{name}.svg"
    if UPDATE or not kept.exists():
        if not UPDATE:
            pytest.fail(f"no kept picture {kept}; run with SOAKLOG_UPDATE_SNAPSHOTS=1 to keep this one")
        kept.write_text(svg, encoding="utf-8")
        (SNAPSHOTS / f"{name}.txt").write_text(text, encoding="utf-8")
        return
    if svg != kept.read_text(encoding="utf-8"):
        new = tmp_path / f"{name}.svg"
        new.write_text(svg, encoding="utf-8")
        old_text = (SNAPSHOTS / f"{name}.txt").read_text(encoding="utf-8") if (SNAPSHOTS / f"{name}.txt").exists() else ""
        pytest.fail(f"{name} differs from the kept picture {kept} (new one: {new}).\n"
                    f"kept:\n{old_text}\nnow:\n{text}")
