"""The whole report on a simulated cycling run whose profile is known, written through the real store.

The chamber model is driven through three demo cycles (−40/+125 °C, 10 K/min,
15 min set-point dwells) and back to 23 °C, with the door opened for 2 min at
5000 s, inside cycle 2's high dwell (see conftest). The readings go into a
real SQLite store through the real writer; the report reads them back.
"""

from __future__ import annotations

import base64
import csv
import json
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest
from testkit.report import DOOR_S, SIM_CYCLES, T0_MS, SimRun

from soaklog.report import make_report
from soaklog.report.build import TABLE_COLUMNS, ReportResult
from soaklog.store import iso_utc

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # the PNG specification (ISO/IEC 15948): the 8-byte file signature


def _utc(t_s: float) -> str:
    return iso_utc(T0_MS + t_s * 1000.0) or ""


def test_the_known_number_of_cycles_is_found(sim_report: ReportResult) -> None:
    v = sim_report.summary["verdict"]
    # the profile driven into the simulator has 3 cycles, and the run holds all of them
    assert v["complete_cycles"] == SIM_CYCLES and v["planned_cycles"] == SIM_CYCLES
    cycles = sim_report.summary["tables"]["cycles"]
    assert [c["cycle"] for c in cycles] == [1, 2, 3] and all(c["complete"] for c in cycles)


def test_air_ramps_at_the_set_point_rate(sim_report: ReportResult) -> None:
    # the set point ramps at 10 K/min (the simulated profile); the supply air follows it closely, so its
    # 10–90 % rate on every cycle ramp is within 1 K/min of that
    ramps = [r for r in sim_report.summary["tables"]["ramps"] if not r["from_start"]]
    # six ramps in three cycles; the first (from the lab's 23 °C) is reported but not judged
    assert len(ramps) == 2 * SIM_CYCLES - 1
    for r in ramps:
        assert r["fastest_channel"] in {"air-supply", "air-return", "door-corner", "shelf-1-front"}
        assert abs(r["fastest_k_per_min"] - 10.0) < 1.0


def test_air_dwell_matches_the_set_point_dwell(sim_report: ReportResult) -> None:
    # the set point dwells 900 s; the air enters ±3 K about 18 s (3 K at 10 K/min) before the ramp ends and
    # leaves it about as long after the next ramp starts: ~15.6 min, counted in whole 20 s buckets
    rows = [r for r in sim_report.summary["tables"]["dwell_channels"] if r["channel"] == "air-supply"]
    assert len(rows) == 2 * SIM_CYCLES
    for r in rows:
        if (r["cycle"], r["level"]) == (2, "high"):
            assert r["in_tolerance_min"] < 13.0  # the door took its share
        else:
            assert 15.0 <= r["in_tolerance_min"] <= 16.3, r


def test_the_door_opening_is_reported_at_its_time(sim_report: ReportResult) -> None:
    devs = sim_report.summary["tables"]["deviations"]
    air = [d for d in devs if d["kind"] == "excursion" and d["channel"] == "air-supply"]
    (d,) = air  # the door is the only thing that knocks the supply air out of its band
    assert d["cycle"] == 2 and d["phase"] == "dwell high, cycle 2"
    # the open door loses G_door·(T_air − T_lab) ≈ 120 W/K × 100 K = 12 kW from 15 kJ/K of air: ~0.8 K/s, so
    # the air is 3 K down within about 4 s; readings come every 10 s, so the first one out of the band is the
    # first after the door opened (5000 s): 5010 s, timed again from the raw readings (the buckets are 20 s)
    assert d["start_utc"] == _utc(DOOR_S + 10.0)
    assert d["resolution_s"] <= 10.0
    assert d["value"] < 122.0  # below the band 125 ± 3 K


def test_the_demo_dwell_is_too_short_for_the_module_cases(sim_report: ReportResult) -> None:
    # the set point dwells 15 min, and the module cases (τ ≈ 200 s behind the air) spend only part of it
    # within ±3 K: every finished dwell is short, and it is the slow channels that are named
    short = [d for d in sim_report.summary["tables"]["deviations"] if d["kind"] == "dwell_short"]
    assert len(short) == 2 * SIM_CYCLES
    assert {d["channel"] for d in short} <= {"module-3-case", "module-6-case", "fixture-plate"}
    assert sim_report.summary["verdict"]["result"] == "not_met"


def test_channel_table_agrees_with_the_store(sim_run: SimRun, sim_report: ReportResult) -> None:
    from soaklog.store import StoreReader

    rows = {r["channel"]: r for r in sim_report.summary["tables"]["channels"]}
    with StoreReader.open(sim_run.db) as st:
        summary = {s.channel: s for s in st.summary(1)}
    for name, s in summary.items():
        assert rows[name]["readings"] == s.readings
        assert rows[name]["min_c"] == pytest.approx(s.min_c, abs=1e-4)
        assert rows[name]["max_c"] == pytest.approx(s.max_c, abs=1e-4)
    # the air alarm (high, 130 °C in the demo configuration) is never reached in a good run
    assert rows["air-supply"]["high_limit_c"] == 130.0 and rows["air-supply"]["above_at_most_min"] == 0.0


class _Page(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.images: list[str] = []
        self.plots: list[str] = []
        self.tables: dict[str, int] = {}
        self.links: list[str] = []
        self.scripts = 0

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        if tag == "img":
            self.images.append(a.get("src") or "")
        if tag == "figure" and a.get("data-plot"):
            self.plots.append(a["data-plot"] or "")
        if a.get("data-table"):
            self.tables[a["data-table"] or ""] = int(a.get("data-rows") or 0)
        if tag == "link" or (tag in ("script", "iframe")):
            self.links.append(tag)
        if tag in ("a", "link") and (a.get("href") or "").startswith(("http:", "https:", "//")):
            self.links.append(a.get("href") or "")


def test_html_opens_and_holds_every_plot(sim_report: ReportResult) -> None:
    page = _Page()
    page.feed(sim_report.html.read_text(encoding="utf-8"))
    page.close()
    assert sorted(page.plots) == sorted(sim_report.summary["plots"])
    assert set(sim_report.summary["plots"]) == {"overview", "cycles", "spread", "by_cycle", "closeups"}
    assert len(page.images) == len(page.plots)
    for src in page.images:
        assert src.startswith("data:image/png;base64,")
        assert base64.b64decode(src.split(",", 1)[1])[:8] == PNG_SIGNATURE
    assert page.links == []  # self-contained: no scripts, no style sheets, no outside addresses
    for p in sim_report.png:
        assert p.read_bytes()[:8] == PNG_SIGNATURE


def test_html_tables_hold_the_json_rows(sim_report: ReportResult) -> None:
    page = _Page()
    page.feed(sim_report.html.read_text(encoding="utf-8"))
    tables = sim_report.summary["tables"]
    for name in ("deviations", "cycles", "dwells", "ramps", "channels", "performance", "sensors", "wiring"):
        assert page.tables[name] == len(tables[name]), name
    html = sim_report.html.read_text(encoding="utf-8")
    for d in tables["deviations"]:
        assert d["start_utc"] in html


def _same(json_value: Any, text: str) -> bool:
    if json_value is None:
        return text == ""
    if isinstance(json_value, bool):
        return text == ("yes" if json_value else "no")
    if isinstance(json_value, float):
        return float(text) == json_value
    if isinstance(json_value, int):
        return int(text) == json_value
    return text == str(json_value)


def test_json_summary_matches_the_csv_tables(sim_report: ReportResult) -> None:
    summary = json.loads(sim_report.json.read_text(encoding="utf-8"))
    assert summary["verdict"] == json.loads(json.dumps(sim_report.summary["verdict"]))
    by_name = {p.name.removeprefix("report-run1-").removesuffix(".csv"): p for p in sim_report.csv}
    assert set(by_name) == set(TABLE_COLUMNS)
    for name, columns in TABLE_COLUMNS.items():
        with by_name[name].open(encoding="utf-8", newline="") as fh:
            rows = list(csv.DictReader(fh))
        assert list(rows[0].keys()) if rows else True
        assert len(rows) == len(summary["tables"][name]), name
        for j, c in zip(summary["tables"][name], rows, strict=True):
            for col in columns:
                assert _same(j.get(col), c[col]), (name, col, j.get(col), c[col])
    v = summary["verdict"]
    assert v["deviations"] == len(summary["tables"]["deviations"])
    assert v["by_kind"] == {k: sum(1 for d in summary["tables"]["deviations"] if d["kind"] == k)
                            for k in v["by_kind"]}


def test_rollups_give_the_same_findings(sim_run: SimRun, sim_report: ReportResult, tmp_path: Path) -> None:
    # the minute rollups (as a 1000-hour run is read) find the same cycles and the same door, timed again
    # from the raw readings; dwell times agree to the minute they are counted in
    r = make_report(sim_run.db, out_dir=tmp_path, source="rollup")
    assert r.summary["report"]["data_source"] == "rollup" and r.summary["report"]["resolution_s"] == 60.0
    assert r.summary["verdict"]["complete_cycles"] == SIM_CYCLES
    door_raw = [d for d in sim_report.summary["tables"]["deviations"]
                if d["kind"] == "excursion" and d["channel"] == "air-supply"]
    door_min = [d for d in r.summary["tables"]["deviations"]
                if d["kind"] == "excursion" and d["channel"] == "air-supply"]
    assert [d["start_utc"] for d in door_min] == [d["start_utc"] for d in door_raw]
    for a, b in zip(sim_report.summary["tables"]["dwells"], r.summary["tables"]["dwells"], strict=True):
        assert abs(a["in_tolerance_min"] - b["in_tolerance_min"]) <= 1.0 + 1e-9
        # whole minutes fully within tolerance never count more than 20 s buckets do
        assert b["in_tolerance_min"] <= a["in_tolerance_min"] + 1e-9


def test_a_profile_file_overrides_the_configuration(sim_run: SimRun, tmp_path: Path) -> None:
    prof = tmp_path / "air.toml"
    prof.write_text(
        '[profile]\nkind = "cycle"\nname = "air only"\nlow_c = -40.0\nhigh_c = 125.0\nramp_k_per_min = 10.0\n'
        'dwell = "14min"\ncycles = 3\ntolerance_k = 3.0\nsample_channels = ["air-supply", "air-return"]\n'
    )
    r = make_report(sim_run.db, out_dir=tmp_path / "out", profile=prof)
    v = r.summary["verdict"]
    assert v["profile_source"] == str(prof) and v["sample_channels"] == ["air-supply", "air-return"]
    # with the air as the sample, the dwells are long enough; only the door remains
    kinds = {d["kind"] for d in r.summary["tables"]["deviations"]}
    assert kinds == {"excursion", "dwell_short"} or kinds == {"excursion"}
    assert all(d["cycle"] == 2 for d in r.summary["tables"]["deviations"])


def test_a_run_without_a_profile_still_reports(tmp_path: Path) -> None:
    import numpy as np

    from soaklog.store import SampleBatch, StoreWriter

    db = tmp_path / "plain.db"
    with StoreWriter.open(db) as st:
        info = st.begin_run('[station]\nname = "bare"\n', now_ms=T0_MS)
        ids = st.ensure_channels(info.run_id, [("a", "", "m", "ohm"), ("b", "", "m", "ohm")])
        t = T0_MS + np.arange(0, 600_000, 10_000, dtype=np.int64)
        for ch in ids.values():
            st.write(info.run_id, SampleBatch(np.full(t.size, ch), t, np.full(t.size, np.nan), np.full(t.size, 21.0),
                                              np.full(t.size, 0.2), np.zeros(t.size, np.int64),
                                              np.zeros(t.size, np.int64)))
    r = make_report(db, out_dir=tmp_path / "out")
    assert r.summary["verdict"]["result"] == "no_profile"
    assert set(r.summary["plots"]) == {"overview", "spread"}
    assert "[profile]" in r.summary["verdict"]["summary"]


def test_progress_is_reported_to_the_end(sim_run: SimRun, tmp_path: Path) -> None:
    seen: list[tuple[int, int, str]] = []
    make_report(sim_run.db, out_dir=tmp_path, progress=lambda d, t, s: seen.append((d, t, s)))
    assert seen and seen[-1][0] == seen[-1][1]
    assert [d for d, _t, _s in seen] == sorted(d for d, _t, _s in seen)


def test_a_run_with_a_profile_but_no_readings(tmp_path: Path) -> None:
    from soaklog.demo import demo_config_text
    from soaklog.store import StoreWriter

    db = tmp_path / "empty.db"
    with StoreWriter.open(db) as st:
        info = st.begin_run(demo_config_text(), now_ms=T0_MS)
        st.ensure_channels(info.run_id, [("air-supply", "", "meter", "ohm")])
    r = make_report(db, out_dir=tmp_path / "out")
    assert r.summary["verdict"]["result"] == "no_data"
    assert r.summary["plots"] == {} and r.html.exists()


def test_a_gap_is_listed_with_its_cause(tmp_path: Path) -> None:
    import numpy as np

    from soaklog.store import SampleBatch, StoreWriter

    # readings every 10 s for 10 min, none for the next 5 min (the logger was stopped), then 10 min more
    db = tmp_path / "gap.db"
    with StoreWriter.open(db) as st:
        info = st.begin_run('[station]\nname = "gappy"\n', now_ms=T0_MS)
        ids = st.ensure_channels(info.run_id, [("a", "", "m", "ohm")])
        t = T0_MS + np.concatenate([np.arange(0, 600_000, 10_000), np.arange(900_000, 1_500_000, 10_000)])
        n = t.size
        st.write(info.run_id, SampleBatch(np.full(n, ids["a"]), t.astype(np.int64), np.full(n, np.nan),
                                          np.full(n, 20.0), np.full(n, 0.2), np.zeros(n, np.int64),
                                          np.zeros(n, np.int64)))
        st.add_event(info.run_id, T0_MS + 600_000, "service_stop", "logger stopped")
        st.add_event(info.run_id, T0_MS + 900_000, "gap", "logger restarted after a gap of 300.0 s; run continues")
    r = make_report(db, out_dir=tmp_path / "out")
    (g,) = r.summary["tables"]["gaps"]
    # the last reading before is at 590 s, the first after at 900 s
    assert g["start_utc"] == _utc(590.0) and g["end_utc"] == _utc(900.0) and g["duration_s"] == 310.0
    assert "logger stopped" in g["cause"] and "restarted" in g["cause"]
    (row,) = r.summary["tables"]["channels"]
    assert row["readings"] == 120


def test_configuration_in_force_shows_coefficients_and_the_calibration_record(tmp_path: Path) -> None:
    import numpy as np

    from soaklog.store import SampleBatch, StoreWriter

    # a station whose sensor has its own coefficients and a calibration certificate (invented values)
    text = (
        '[station]\nname = "cal-lab"\n'
        '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\n'
        'interval = "10s"\n'
        '[[sensor]]\nname = "ref"\ncoefficients = [3.9080e-3, -5.780e-7, -4.20e-12]\n'
        'calibration = { certificate = "CAL-2026-117", expanded_uncertainty_c = 0.03, k = 2.0, '
        'span_c = [-50.0, 200.0], date = 2026-03-02, due = 2027-03-02 }\n'
        '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "ref"\n'
        '[profile]\nkind = "soak"\ntemperature_c = 85.0\nduration = "1h"\ntolerance_k = 2.0\n'
    )
    db = tmp_path / "cal.db"
    with StoreWriter.open(db) as st:
        info = st.begin_run(text, now_ms=T0_MS, station="cal-lab")
        ids = st.ensure_channels(info.run_id, [("air", "", "meter", "ohm")])
        t = T0_MS + np.arange(0, 1_800_000, 10_000, dtype=np.int64)
        n = t.size
        st.write(info.run_id, SampleBatch(np.full(n, ids["air"]), t, np.full(n, np.nan), np.full(n, 85.2),
                                          np.full(n, 0.1), np.zeros(n, np.int64), np.zeros(n, np.int64)))
    r = make_report(db, out_dir=tmp_path / "out")
    (s,) = r.summary["tables"]["sensors"]
    assert (s["a"], s["b"], s["c"]) == (3.9080e-3, -5.780e-7, -4.20e-12)
    assert s["certificate"] == "CAL-2026-117" and s["cal_uncertainty_k"] == 0.03 and s["cal_k"] == 2.0
    assert (s["cal_date"], s["cal_due"]) == ("2026-03-02", "2027-03-02")
    html = r.html.read_text(encoding="utf-8")
    assert "CAL-2026-117" in html and "3.908" in html
    # half an hour at 85.2 °C of a one-hour soak: no deviation, not finished
    assert r.summary["verdict"]["result"] == "incomplete"
    (row,) = r.summary["tables"]["channels"]
    assert row["completeness_pct"] == 100.0  # 180 readings every 10 s over 1790 s: all the interval promises
