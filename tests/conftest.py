"""Fixtures every test folder may use; the helpers themselves live in the ``testkit`` package."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from pathlib import Path

import subprocess
import sys

import pytest
from testkit.factories import closing_all
from testkit.lab import LabRun


@pytest.fixture
def lab_run(tmp_path: Path) -> Iterator[Callable[..., LabRun]]:
    """Start the simulated lab and the real logger in ``tmp_path``: ``lab_run(speed=30.0, supply=…, truth=…)``."""
    with closing_all(lambda speed=30.0, **options: LabRun(tmp_path, speed, **options)) as start:
        yield start


#: how long the shared demo runs (wall seconds at its default 60x: 6 min of chamber time)
DEMO_DURATION_S = 6


@pytest.fixture(scope="session")
def short_demo(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, subprocess.CompletedProcess[str]]:
    """One ``soaklog demo --headless`` run for the whole session (read only by its users): its database and output."""
    db = tmp_path_factory.mktemp("demo") / "demo.db"
    p = subprocess.run([sys.executable, "-m", "soaklog", "demo", "--headless", "--duration", str(DEMO_DURATION_S),
                        "--db", str(db)], capture_output=True, text=True, timeout=180)
    assert p.returncode == 0, p.stderr
    return db, p
