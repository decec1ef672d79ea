"""Fixtures every test folder may use; the helpers themselves live in the ``testkit`` package."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from testkit.factories import closing_all
from testkit.lab import LabRun


@pytest.fixture
def lab_run(tmp_path: Path) -> Iterator[Callable[..., LabRun]]:
    """Start the simulated lab and the real logger in ``tmp_path``: ``lab_run(speed=30.0, supply=…, truth=…)``."""
    with closing_all(lambda speed=30.0, **options: LabRun(tmp_path, speed, **options)) as start:
        yield start
