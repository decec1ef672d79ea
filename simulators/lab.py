"""The simulated lab: one chamber world behind a SCPI multimeter and a serial RTD board, and its heater supply.

``soaklog simulate chamber`` and ``soaklog demo`` run this: both instruments
measure the same chamber, as in a real lab; a programmable supply (SCPI on
loopback TCP) feeds the chamber's heater, so an interlock action that switches
it off really cools the chamber. One loopback control port takes faults for
all of them (``world …``, ``meter …``, ``board …``, ``supply …``, or a bare
world command such as ``fault runaway``).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from soaklog.simulators.clock import SimTime
from soaklog.simulators.control import CommandTable, ControlError, ControlServer
from soaklog.simulators.world import DEMO_BOARD_CHANNELS, DEMO_METER_CHANNELS, ChamberWorld, demo_world

__all__ = ["Lab", "LabAddresses", "METER_CHANNEL_MAP", "BOARD_CHANNEL_MAP"]

#: the demo's scanner card inputs: 101, 102, … in DEMO_CHANNELS order
METER_CHANNEL_MAP = {101 + i: name for i, name in enumerate(DEMO_METER_CHANNELS)}
#: the demo's board inputs: 0, 1, 2 …
BOARD_CHANNEL_MAP: Sequence[str] = tuple(DEMO_BOARD_CHANNELS)


@dataclass(frozen=True)
class LabAddresses:
    meter_resource: str | None
    board_device: str | None
    board_link: str | None
    control: tuple[str, int] | None
    supply_resource: str | None = None

    def as_dict(self) -> dict[str, object]:
        return {
            "meter_resource": self.meter_resource,
            "board_device": self.board_device,
            "board_link": self.board_link,
            "control": None if self.control is None else f"{self.control[0]}:{self.control[1]}",
            "supply_resource": self.supply_resource,
        }


class Lab:
    """World + instruments + control port, started and closed together."""

    def __init__(
        self,
        *,
        seed: int = 20261201,
        speed: float = 1.0,
        clock: SimTime | None = None,
        meter: bool = True,
        board: bool = True,
        meter_port: int = 0,
        board_link: str | None = None,
        control_port: int | None = 0,
        truth_log: str | Path | None = None,
        truth_log_interval_s: float | None = None,
        board_rate_hz: float = 1.0,
        cycles: int = 1000,
        supply: bool = True,
        supply_port: int = 0,
    ) -> None:
        from soaklog.simulators.adc import AdcBoardSimulator
        from soaklog.simulators.dmm import DmmSimulator
        from soaklog.simulators.supply import SupplySimulator

        self.speed = speed
        self.world: ChamberWorld = demo_world(
            seed, speed, clock=clock, cycles=cycles, truth_log=truth_log, truth_log_interval_s=truth_log_interval_s
        )
        # instrument timing (NPLC, frame rate) runs on the chamber's time line
        scale = 1.0 / speed
        self.meter = DmmSimulator(self.world, METER_CHANNEL_MAP, port=meter_port, time_scale=scale, seed=seed) if meter else None
        self.board = (
            AdcBoardSimulator(self.world, BOARD_CHANNEL_MAP, rate_hz=board_rate_hz, time_scale=speed,
                              seed=seed, link_path=board_link)
            if board else None
        )
        self.supply = SupplySimulator(self.world, port=supply_port) if supply else None
        self._control_port = control_port
        self.control: ControlServer | None = None
        self.table = self._table()

    def _table(self) -> CommandTable:
        table = CommandTable()
        world = self.world.commands()
        parts: dict[str, CommandTable] = {"world": world}
        if self.meter is not None:
            parts["meter"] = self.meter.commands()
        if self.board is not None:
            parts["board"] = self.board.commands()
        if self.supply is not None:
            parts["supply"] = self.supply.commands()
        for prefix, sub in parts.items():
            table.register(prefix, lambda args, sub=sub, prefix=prefix: _forward(sub, prefix, args))
        for name in world.names():
            if name not in parts:
                table.register(name, lambda args, name=name: _forward(world, "world", [name, *args]))
        table.register("addresses", lambda args: json.dumps(self.addresses().as_dict()))
        return table

    def start(self) -> Lab:
        if self.meter is not None:
            self.meter.start()
        if self.board is not None:
            self.board.start()
        if self.supply is not None:
            self.supply.start()
        if self._control_port is not None:
            self.control = ControlServer(self.table, port=self._control_port).start()
        return self

    def addresses(self) -> LabAddresses:
        return LabAddresses(
            self.meter.resource if self.meter is not None else None,
            self.board.device_path if self.board is not None else None,
            self.board.link_path if self.board is not None else None,
            self.control.address if self.control is not None else None,
            self.supply.resource if self.supply is not None else None,
        )

    def close(self) -> None:
        if self.control is not None:
            self.control.close()
            self.control = None
        if self.board is not None:
            self.board.close()
        if self.meter is not None:
            self.meter.close()
        if self.supply is not None:
            self.supply.close()
        self.world.close()

    def __enter__(self) -> Lab:
        return self.start()

    def __exit__(self, *exc: object) -> None:
        self.close()


def _forward(table: CommandTable, prefix: str, args: Sequence[str]) -> str:
    if not args:
        raise ControlError(f"{prefix}: give a command; known: {', '.join(table.names())}")
    reply = table.execute(" ".join(args))
    if reply.startswith("ok"):
        return reply[2:].strip()
    raise ControlError(f"{prefix}: {reply[5:].strip() if reply.startswith('error') else reply}")
