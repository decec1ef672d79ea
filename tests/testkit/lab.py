"""The lab run: the simulated lab (meter, board, heater supply) and the real logger writing into a folder.

One class for the service, alarm and dashboard tests (and the live dashboard's script in test_tmux.py).
The logger runs on an ``AcceleratedClock`` driven by the lab's simulated clock, so a test that wants
chamber minutes waits ``minutes / speed`` of wall time; a condition is waited for with ``wait_for``.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from testkit.clocks import EPOCH_UTC_S


class LabRun:
    """A started lab and a started logger on the demo scenario, writing ``station.db`` into ``folder``.

    Args:
        folder: where the database, the station file, the board's link and the truth log go.
        speed: simulated seconds per wall second.
        supply: fill the heater supply's address into the station file (the interlock actions use it).
        truth: write the simulation's truth log (``truth()`` reads it back).
        extra: more of the station file (alarms), appended and checked as the file is.
    """

    EPOCH_UTC_S = EPOCH_UTC_S

    def __init__(self, folder: Path, speed: float = 30.0, *, supply: bool = False, truth: bool = False,
                 extra: str = "") -> None:
        from soaklog.clock import AcceleratedClock
        from soaklog.demo import build_demo_config
        from soaklog.simulators.lab import Lab

        self.folder = Path(folder)
        self.speed = speed
        self.truth_path = self.folder / "truth.jsonl" if truth else None
        self.lab = Lab(speed=speed, board_link=str(self.folder / "board"), control_port=None,
                       truth_log=self.truth_path).start()
        self._stopped = False
        addr = self.lab.addresses()
        self.config = build_demo_config(addr.meter_resource or "", str(self.folder / "board"),
                                        str(self.folder / "station.db"), where=str(self.folder / "demo.toml"),
                                        supply_resource=addr.supply_resource if supply else None)
        if extra:
            from soaklog.config import parse_config

            self.config = parse_config(self.config.text + extra, self.config.path)
        self.clock = AcceleratedClock(self.lab.world.clock, speed=speed, epoch_utc_s=EPOCH_UTC_S)
        self.service: Any = None
        self.start_service(new_run=True)

    @property
    def database(self) -> str:
        return self.config.database

    def start_service(self, *, new_run: bool = False) -> None:
        """Start a logger (again, after ``service.stop()``, to test a restart) against the running lab."""
        from soaklog.service import Service

        self.service = Service(self.config, clock=self.clock, new_run=new_run)
        self.run_id = self.service.start()

    def sim_s(self) -> float:
        """The simulated chamber time (seconds since the lab started)."""
        return float(self.lab.world.clock.now_s())

    def set_chamber_speed(self, speed: float) -> None:
        """Run the simulated chamber at ``speed`` from now on (no jump in its time).

        The logger's clock keeps waiting ``interval / self.speed`` at a time and looks again, so a chamber
        slowed below ``self.speed`` is followed exactly (a few more wake-ups per scan). A test slows the
        chamber where it races the logger, so a loaded machine's lag costs the chamber seconds, not minutes.
        """
        assert speed <= self.speed, "the logger's clock oversleeps a chamber faster than the speed it started with"
        self.lab.world.clock.set_speed(speed)  # type: ignore[attr-defined]

    def truth(self) -> list[dict[str, object]]:
        assert self.truth_path is not None, "start the LabRun with truth=True"
        return [json.loads(line) for line in self.truth_path.read_text().splitlines() if line.strip()]

    def events(self, kind: str | None = None) -> list[Any]:
        """The run's stored events (``EventRow``), of one ``kind`` or all."""
        from soaklog.store import StoreReader

        with StoreReader.open(self.config.database) as store:
            ev = store.events(self.run_id)
        return [e for e in ev if kind is None or e.kind == kind]

    def alarms(self) -> dict[str, Any]:
        """The run's stored alarm points (``AlarmRow``) by id."""
        from soaklog.store import StoreReader

        with StoreReader.open(self.config.database) as store:
            return {a.id: a for a in store.alarms(self.run_id)}

    def stop(self) -> None:
        if self._stopped:
            return
        self._stopped = True
        if self.service is not None:
            self.service.stop()
        self.lab.close()

    close = stop
