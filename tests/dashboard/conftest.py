"""Fixtures for the dashboard tests (the helpers live in dashfixtures.py)."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from dashfixtures import LabRun, write_fixture


@pytest.fixture
def fixture_db(tmp_path: Path) -> Path:
    """A store with 3 h of known readings on four channels (see dashfixtures.write_fixture)."""
    path = tmp_path / "fixture.db"
    write_fixture(path)
    return path


@pytest.fixture
def lab_run(tmp_path: Path) -> Iterator[Callable[..., LabRun]]:
    runs: list[LabRun] = []

    def start(speed: float = 30.0) -> LabRun:
        r = LabRun(tmp_path, speed)
        runs.append(r)
        return r

    yield start
    for r in runs:
        r.stop()
