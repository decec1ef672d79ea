"""Helpers for the alarm tests: the simulated lab (with its heater supply) and the logger against it."""

from __future__ import annotations

import time
from collections.abc import Callable
from pathlib import Path

from soaklog.clock import AcceleratedClock
from soaklog.config import parse_config
from soaklog.demo import build_demo_config
from soaklog.service import Service
from soaklog.store import AlarmRow, EventRow, StoreReader
from soaklog.simulators.lab import Lab

EPOCH_UTC_S = 1_800_000_000.0


def wait_for(condition: Callable[[], object], timeout_s: float = 30.0, what: str = "condition") -> None:
    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out waiting for {what}")
        time.sleep(0.05)


class AlarmLab:
    """A started lab and a started logger on the demo scenario, the heater supply's address filled in."""

    def __init__(self, tmp_path: Path, speed: float, extra: str = "") -> None:
        self.tmp_path = tmp_path
        self.speed = speed
        self.lab = Lab(speed=speed, board_link=str(tmp_path / "board"), control_port=None).start()
        addr = self.lab.addresses()
        self.config = build_demo_config(addr.meter_resource or "", str(tmp_path / "board"),
                                        str(tmp_path / "station.db"), where=str(tmp_path / "demo.toml"),
                                        supply_resource=addr.supply_resource)
        if extra:  # more of the station file (alarms), checked as the file is
            self.config = parse_config(self.config.text + extra, self.config.path)
        self.clock = AcceleratedClock(self.lab.world.clock, speed=speed, epoch_utc_s=EPOCH_UTC_S)
        self.service: Service | None = None
        self.start_service(new_run=True)

    def start_service(self, *, new_run: bool = False) -> None:
        self.service = Service(self.config, clock=self.clock, new_run=new_run)
        self.run_id = self.service.start()

    def events(self, kind: str | None = None) -> list[EventRow]:
        with StoreReader.open(self.config.database) as store:
            ev = store.events(self.run_id)
        return [e for e in ev if kind is None or e.kind == kind]

    def alarms(self) -> dict[str, AlarmRow]:
        with StoreReader.open(self.config.database) as store:
            return {a.id: a for a in store.alarms(self.run_id)}

    def stop(self) -> None:
        if self.service is not None:
            self.service.stop()
        self.lab.close()
