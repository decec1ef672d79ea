"""The station commands as a user runs them: demo, status, export, simulate, probe — subprocesses."""

from __future__ import annotations

import csv
import io
import json
import re
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def soaklog(*args: str, timeout: float = 120) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "soaklog", *args], capture_output=True, text=True, timeout=timeout)


@pytest.fixture(scope="module")
def demo_db(short_demo) -> Path:
    db, p = short_demo  # the session's one short demo (tests/conftest.py)
    assert str(db) in p.stdout
    assert "soaklog status --db" in p.stdout  # tells the user what to run next
    assert "not a safety device" in p.stdout
    return db


def test_demo_stores_corrected_readings_a_user_can_query_through_the_views(demo_db):
    with sqlite3.connect(demo_db) as c:
        rows = c.execute("SELECT channel, t_utc, raw, raw_unit, temperature_c, uncertainty_c, status FROM readings_v").fetchall()
        kinds = [r[0] for r in c.execute("SELECT kind FROM events_v")]
        config = c.execute("SELECT config FROM runs").fetchone()[0]
    assert len(rows) >= 40
    assert {r[0] for r in rows} >= {"air-supply", "module-3-case", "fixture-plate"}
    ok = [r for r in rows if r[6] == "ok"]
    assert len(ok) == len(rows)
    assert all(re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z", r[1]) for r in rows)
    # the chamber starts at the lab's 23 °C and ramps at 10 K/min; 6 s at 60× is 6 min of chamber time
    assert all(-45.0 < r[4] < 130.0 for r in ok)
    assert all(0.05 < r[5] < 2.0 for r in ok)
    assert kinds[0] == "service_start" and kinds[-1] == "service_stop"
    assert "[[channel]]" in config and "TCPIP0::127.0.0.1::" in config  # the configuration in force


def test_status_json_contract(demo_db):
    p = soaklog("status", "--db", str(demo_db), "--json")
    assert p.returncode == 0, p.stderr
    rep = json.loads(p.stdout)
    assert len(rep["channels"]) == 8
    for ch in rep["channels"]:
        assert {"id", "temperature_c", "status", "t_utc"} <= set(ch)  # DESIGN.md status --json contract
        assert ch["status"] == "ok"
    assert isinstance(rep["alarms"], list)


def test_export_csv_has_iso_times_units_and_every_reading(demo_db):
    p = soaklog("export", "--db", str(demo_db))
    assert p.returncode == 0, p.stderr
    lines = p.stdout.splitlines()
    assert lines[0].startswith("# soaklog export") and "degC" in lines[0]
    rows = list(csv.DictReader(io.StringIO("\n".join(lines[1:]))))
    with sqlite3.connect(demo_db) as c:
        n = c.execute("SELECT COUNT(*) FROM readings_v").fetchone()[0]
    assert len(rows) == n
    assert rows[0]["t_utc"].endswith("Z") and rows[0]["raw_unit"] == "ohm"
    p = soaklog("export", "--db", str(demo_db), "--format", "jsonl")
    first = json.loads(p.stdout.splitlines()[0])
    assert set(first) == {"t_utc", "t_ms", "channel", "raw", "raw_unit", "temperature_c", "uncertainty_c", "status",
                          "flags"}
    assert isinstance(first["t_ms"], int) and isinstance(first["flags"], list)
    assert set(rows[0]) >= {"t_ms", "flags"}


def test_status_of_a_missing_database_says_what_to_do(tmp_path):
    p = soaklog("status", "--db", str(tmp_path / "none.db"))
    assert p.returncode == 1
    assert "no database" in p.stderr and p.stdout == ""


@pytest.fixture
def simulated_meter():
    p = subprocess.Popen([sys.executable, "-m", "soaklog", "simulate", "dmm"], stdout=subprocess.PIPE,
                         stderr=subprocess.DEVNULL, text=True)
    resource = control = None
    deadline = time.monotonic() + 20
    while (resource is None or control is None) and time.monotonic() < deadline:
        line = p.stdout.readline()
        if m := re.match(r"meter\s+(\S+)", line):
            resource = m.group(1)
        if m := re.match(r"control\s+(\S+)\s+(\d+)", line):
            control = (m.group(1), int(m.group(2)))
    assert resource and control
    yield resource, control
    p.send_signal(signal.SIGINT)
    assert p.wait(timeout=10) == 0
    p.stdout.close()


def test_probe_diagnoses_a_live_a_dead_and_a_faulty_meter(simulated_meter):
    from soaklog.simulators.control import send_control

    resource, control = simulated_meter
    p = soaklog("probe", resource, "--channels", "101,102", "--four-wire")
    assert p.returncode == 0, p.stdout + p.stderr
    assert "Larchmere" in p.stdout and "ohm" in p.stdout
    port = int(resource.split("::")[2])
    dead = soaklog("probe", f"TCPIP0::127.0.0.1::{port + 1 if port < 65535 else port - 1}::SOCKET")
    assert dead.returncode == 1 and "nothing is listening" in dead.stdout
    assert send_control(control, "meter fault mute").startswith("ok")
    mute = soaklog("probe", resource, "--timeout", "0.5")
    assert mute.returncode == 1 and "termination" in mute.stdout
    assert send_control(control, "meter clear").startswith("ok")
    assert soaklog("probe", resource).returncode == 0


def test_the_service_unit_runs_soaklog_run_on_a_station_file():
    unit = (ROOT / "configs" / "soaklog@.service").read_text()
    (exec_start,) = [line for line in unit.splitlines() if line.startswith("ExecStart=")]
    assert re.fullmatch(r"ExecStart=\S*soaklog run /etc/soaklog/%i\.toml", exec_start)
    assert "Restart=on-failure" in unit and "KillSignal=SIGTERM" in unit
    # the command it runs exists and takes a station file
    p = soaklog("run", "--help")
    assert p.returncode == 0 and "CONFIG" in p.stdout
