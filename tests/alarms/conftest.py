"""Fixtures for the alarm tests: the simulated lab (with its heater supply) and the logger against it."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from alarmlab import AlarmLab


@pytest.fixture
def alarm_lab(tmp_path: Path) -> Iterator[Callable[..., AlarmLab]]:
    labs: list[AlarmLab] = []

    def start(speed: float = 120.0, extra: str = "") -> AlarmLab:
        lab = AlarmLab(tmp_path, speed, extra)
        labs.append(lab)
        return lab

    yield start
    for lab in labs:
        lab.stop()
