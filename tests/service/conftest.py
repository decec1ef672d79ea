"""Fixtures for the logger service: the simulated lab and the real logger against it."""

from __future__ import annotations

import json
import time
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

from soaklog.clock import AcceleratedClock
from soaklog.demo import build_demo_config
from soaklog.service import Service
from soaklog.simulators.lab import Lab

EPOCH_UTC_S = 1_800_000_000.0


def wait_for(condition: Callable[[], bool], timeout_s: float = 20.0, what: str = "condition") -> None:
    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out waiting for {what}")
        time.sleep(0.05)


class LabRun:
    """A started lab and a started service writing into ``tmp_path``."""

    def __init__(self, tmp_path: Path, speed: float) -> None:
        self.truth_path = tmp_path / "truth.jsonl"
        self.lab = Lab(speed=speed, board_link=str(tmp_path / "board"), control_port=None,
                       truth_log=self.truth_path).start()
        addr = self.lab.addresses()
        self.config = build_demo_config(addr.meter_resource or "", str(tmp_path / "board"),
                                        str(tmp_path / "station.db"), where=str(tmp_path / "demo.toml"))
        self.clock = AcceleratedClock(self.lab.world.clock, speed=speed, epoch_utc_s=EPOCH_UTC_S)
        self.service = Service(self.config, clock=self.clock, new_run=True)
        self.run_id = self.service.start()

    def truth(self) -> list[dict[str, object]]:
        return [json.loads(line) for line in self.truth_path.read_text().splitlines() if line.strip()]

    def stop(self) -> None:
        self.service.stop()
        self.lab.close()


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
