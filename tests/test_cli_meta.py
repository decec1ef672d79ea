"""Every command has help text and is documented in the README (STYLE.md, 10)."""

from __future__ import annotations

import argparse
import pathlib
import subprocess
import sys

from soaklog.cli import build_parser

ROOT = pathlib.Path(__file__).resolve().parents[1]


def _commands() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return dict(sub.choices)


def test_every_command_has_help_and_is_in_the_readme():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    commands = _commands()
    assert "convert" in commands
    for name, p in commands.items():
        assert p.description, f"{name} has no description"
        assert f"soaklog {name}" in readme, f"`soaklog {name}` is not in the README"


def test_python_m_daq_is_the_same_entry_point():
    p = subprocess.run([sys.executable, "-m", "soaklog", "--help"], capture_output=True, text=True)
    assert p.returncode == 0
    assert "convert" in p.stdout
    assert "not a safety device" in p.stdout


def test_no_command_prints_help_and_exits_2():
    p = subprocess.run([sys.executable, "-m", "soaklog"], capture_output=True, text=True)
    assert p.returncode == 2
    assert "usage" in p.stdout


def test_ci_runs_the_readme_test_command():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    blocks = [b.split("```", 1)[0].strip() for b in readme.split("```sh\n")[1:]]
    assert len(blocks) >= 2, "the README gives two set-up commands"
    test_command = blocks[1]
    assert "pytest" in test_command
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert test_command in ci.splitlines()
