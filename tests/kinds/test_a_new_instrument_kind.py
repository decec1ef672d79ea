"""A new instrument kind is one module: this file is that module, and nothing else in soaklog changes.

The kind below, ``constant``, is a stand-in instrument that reports one fixed
resistance on every input (a decade box on a bench, say). Registered here, a
station file can name it, ``soaklog check``'s parser validates its keys by
file and key, and the real logger converts and stores its readings.
"""

from __future__ import annotations

import math
import sqlite3
import time
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import pytest

from soaklog.config import ChannelConfig, ConfigProblems, InstrumentConfig, parse_config
from soaklog.drivers.base import Clock, Driver, Health, RawReading
from soaklog.kinds import INSTRUMENTS
from soaklog.kinds.instruments import InstrumentKind
from soaklog.kinds.keys import Checker, Key, positive
from soaklog.service import Service


class ConstantDriver:
    """Every input reads ``ohms``, stamped by the clock."""

    def __init__(self, name: str, inputs: Sequence[str], ohms: float, clock: Clock) -> None:
        self.name = name
        self._inputs = tuple(inputs)
        self._ohms = ohms
        self._clock = clock
        self._health = Health()

    def open(self) -> None:
        self._health.connected = True

    def close(self) -> None:
        self._health.connected = False

    def read_scan(self) -> list[RawReading]:
        t = self._clock.utc_s()
        return [RawReading(i, t, self._ohms) for i in self._inputs]

    def health(self) -> dict[str, object]:
        return self._health.snapshot()


class ConstantKind(InstrumentKind):
    name = "constant"
    noun = "a constant source"
    keys: Mapping[str, Key] = {"ohms": Key(float, "the resistance every input reads", required=True)}

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any]:
        return {"ohms": ck.get(d, key, "ohms", float, required=True, check=positive)}

    def driver(self, inst: InstrumentConfig, clock: Clock, channels: Sequence[ChannelConfig]) -> Driver:
        return ConstantDriver(inst.name, [c.input for c in channels], inst.settings["ohms"], clock)


STATION = """
[station]
name = "bench"
database = "{db}"
[[instrument]]
name = "box"
driver = "constant"
interval = "0.2s"
{ohms}
[[sensor]]
name = "pt"
class = "A"
[[channel]]
name = "fixture"
instrument = "box"
input = "1"
sensor = "pt"
"""


@pytest.fixture
def constant_kind():
    with INSTRUMENTS.added("constant", ConstantKind) as kind:
        yield kind
    assert "constant" not in INSTRUMENTS


def test_a_station_file_can_name_the_new_kind_and_its_keys_are_checked(constant_kind, tmp_path: Path) -> None:
    cfg = parse_config(STATION.format(db=tmp_path / "x.db", ohms="ohms = 138.5055"))
    assert cfg.instruments[0].kind is constant_kind
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION.format(db=tmp_path / "x.db", ohms="ohms = -1.0\nohm = 3"))
    assert ("instrument[1].ohms", "must be positive, got -1.0") in info.value.problems
    assert any(k == "instrument[1].ohm" and "did you mean 'ohms'" in m for k, m in info.value.problems)


def test_without_its_module_the_kind_is_unknown(tmp_path: Path) -> None:
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION.format(db=tmp_path / "x.db", ohms="ohms = 138.5055"))
    (problem,) = [m for k, m in info.value.problems if k == "instrument[1].driver"]
    assert "'constant'" in problem and "scpi" in problem


def test_the_logger_stores_the_new_kind_s_readings_converted(constant_kind, tmp_path: Path) -> None:
    db = tmp_path / "bench.db"
    cfg = parse_config(STATION.format(db=db, ohms="ohms = 138.5055"))
    service = Service(cfg, new_run=True)
    service.start()
    deadline = time.monotonic() + 30.0
    rows: list[tuple[float, str]] = []
    try:
        while time.monotonic() < deadline and len(rows) < 3:
            time.sleep(0.1)
            with sqlite3.connect(f"file:{db}?mode=ro", uri=True) as con:
                rows = con.execute("SELECT temperature_c, status FROM readings_v WHERE channel = 'fixture'").fetchall()
    finally:
        service.stop()
    assert len(rows) >= 3
    # IEC 60751:2008 table 1: 138.5055 ohm is 100 °C for a Pt100 (R0 = 100 ohm)
    assert all(status == "ok" and math.isclose(t, 100.0, abs_tol=1e-4) for t, status in rows)
