"""Fixtures for the alarm tests: the simulated lab (with its heater supply) and the logger against it."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from testkit.lab import LabRun


@pytest.fixture
def alarm_lab(lab_run: Callable[..., LabRun]) -> Callable[..., LabRun]:
    """``lab_run`` with the heater supply's address in the station file, at 120x by default;
    ``extra`` is more of the station file (alarms), checked as the file is."""
    return lambda speed=120.0, extra="": lab_run(speed, supply=True, extra=extra)
