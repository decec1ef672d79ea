"""Fixtures for the dashboard tests (the helpers live in testkit.dashboard; ``lab_run`` in tests/conftest.py)."""

from __future__ import annotations

from pathlib import Path

import pytest
from testkit.dashboard import write_fixture


@pytest.fixture
def fixture_db(tmp_path: Path) -> Path:
    """A store with 3 h of known readings on four channels (see testkit.dashboard.write_fixture)."""
    path = tmp_path / "fixture.db"
    write_fixture(path)
    return path
