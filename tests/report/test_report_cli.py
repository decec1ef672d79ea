"""`soaklog report` as a user runs it: after a short headless demo, as a subprocess."""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path

import pytest

from soaklog.commands.report import add_parser

REPORT = [sys.executable, "-m", "soaklog", "report"]


def test_the_parser_has_help_and_the_documented_options() -> None:
    p = argparse.ArgumentParser(prog="soaklog")
    sub = p.add_subparsers(dest="command")
    rp = add_parser(sub)
    assert rp.description and "HTML" in rp.description
    a = p.parse_args(["report", "--db", "x.db", "--run", "3", "--profile", "p.toml", "--out", "o"])
    assert (a.db, a.run, a.profile, a.out, a.source) == ("x.db", 3, "p.toml", "o", "auto")


def test_report_after_a_short_demo(short_demo, tmp_path: Path) -> None:
    db, _ = short_demo  # the session's one short demo (tests/conftest.py)
    out = tmp_path / "report"
    p = subprocess.run(REPORT + ["--db", str(db), "--out", str(out)], capture_output=True, text=True,
                       timeout=120)
    assert p.returncode == 0, p.stderr
    assert "report-run1.html" in p.stdout
    html = (out / "report-run1.html").read_text(encoding="utf-8")
    assert 'id="verdict"' in html and "Profile" in html
    summary = json.loads((out / "report-run1.json").read_text(encoding="utf-8"))
    # the demo declares its profile in the station file: 1000 cycles, of which a few minutes hold none
    assert summary["verdict"]["planned_cycles"] == 1000
    assert summary["verdict"]["result"] in ("incomplete", "not_met")
    assert summary["run"]["channels"] == 8 and summary["run"]["readings"] > 0
    assert (out / "report-run1-overview.png").read_bytes()[:4] == b"\x89PNG"


def test_a_missing_database_exits_1_with_one_line(tmp_path: Path) -> None:
    p = subprocess.run(REPORT + ["--db", str(tmp_path / "none.db"), "--out", str(tmp_path)],
                       capture_output=True, text=True, timeout=60)
    assert p.returncode == 1
    assert "no database" in p.stderr and "Traceback" not in p.stderr


def test_a_bad_profile_exits_2(tmp_path: Path) -> None:
    from testkit.report import build_sim_store

    run = build_sim_store(tmp_path / "sim.db", door_s=None)
    bad = tmp_path / "bad.toml"
    bad.write_text('kind = "cycle"\nlow_c = 0.0\n')
    p = subprocess.run(REPORT + ["--db", str(run.db), "--profile", str(bad), "--out", str(tmp_path / "o")],
                       capture_output=True, text=True, timeout=60)
    assert p.returncode == 2
    assert "high_c" in p.stderr and "cycles" in p.stderr


@pytest.mark.parametrize("args", [["--source", "both"], ["--run", "x"]])
def test_bad_options_are_usage_errors(args: list[str]) -> None:
    p = subprocess.run(REPORT + args, capture_output=True, text=True, timeout=60)
    assert p.returncode == 2
