"""The chamber world: the Plant interface, threads, control commands and the truth log."""

from __future__ import annotations

import json
import math
import threading
from pathlib import Path

import pytest

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751, temperature
from soaklog.sensors.tolerance import tolerance_class
from soaklog.simulators.chamber import ChamberModel, ChamberParams, Position
from soaklog.simulators.clock import ManualClock
from soaklog.simulators.control import ControlServer, send_control
from soaklog.simulators.plant import OPEN_OHM, Terminal
from soaklog.simulators.profiles import Soak
from soaklog.simulators.sensors import SHORT_OHM, SimSensor
from soaklog.simulators.world import (
    DEMO_BOARD_CHANNELS,
    DEMO_CHANNELS,
    DEMO_METER_CHANNELS,
    ChamberWorld,
    demo_world,
)

DEMO_NAMES = [
    "air-supply",
    "air-return",
    "shelf-1-front",
    "module-3-case",
    "module-6-case",
    "shelf-2-rear",
    "door-corner",
    "fixture-plate",
]


@pytest.fixture
def clock() -> ManualClock:
    return ManualClock()


@pytest.fixture
def world(clock: ManualClock) -> ChamberWorld:
    return demo_world(seed=5, clock=clock)


# ---------------------------------------------------------------- the demo scenario


def test_demo_has_eight_named_channels_split_between_meter_and_board(world: ChamberWorld) -> None:
    assert world.channels() == DEMO_NAMES
    assert DEMO_METER_CHANNELS == tuple(DEMO_NAMES[:5])
    assert DEMO_BOARD_CHANNELS == tuple(DEMO_NAMES[5:])
    kinds = {(c.r0_ohm, c.tolerance_class, c.element, c.wiring) for c in DEMO_CHANNELS}
    assert kinds == {(100.0, "A", "wire", 4), (1000.0, "B", "film", 2), (100.0, "B", "film", 3)}
    for c in DEMO_CHANNELS:
        sensor = world.sensor(c.channel)
        assert (sensor.tolerance, sensor.element, sensor.wiring) == (c.tolerance_class, c.element, c.wiring)


def test_demo_profile_is_minus_40_to_125_with_10_k_per_min_and_15_min_dwells(world: ChamberWorld) -> None:
    profile = world.model.profile
    assert profile is not None
    # by hand: 23 → 125 °C at 10 K/min is 612 s, then 900 s at 125 °C
    assert float(profile.setpoint_c(612.0)) == 125.0
    assert profile.phase(1000.0).label == "dwell high"
    # JESD22-A104 condition G is −40 °C / +125 °C (from memory of JESD22-A104)
    assert float(profile.setpoint_c(2502.0 + 10.0)) == -40.0
    # 1000 cycles of 63 min, less the shorter first ramp: about 1050 h (by hand)
    assert profile.duration_s / 3600.0 == pytest.approx(1050.0, abs=1.0)


def test_4_wire_class_a_reading_at_start_is_23_c_within_class_and_self_heating(world: ChamberWorld) -> None:
    term = world.terminal("air-supply", wiring=4, current_a=1e-3)
    assert isinstance(term, Terminal) and term.t_s == 0.0
    t_read = float(temperature(term.ohm, IEC_60751)[0])
    # IEC 60751:2008 class A: ±(0.15 + 0.002·|t|) = ±0.196 K at 23 °C; self-heating
    # I²R/δ = 1e-6 · 109 / 0.010 = 0.011 K (by hand); noise 0.03 K, allow 5 σ
    assert abs(t_read - 23.0) <= 0.196 + 0.011 + 0.15
    assert tolerance_class("A", "wire").bound_c(23.0) == pytest.approx(0.196)


def test_2_wire_pt1000_reads_its_26_awg_leads(world: ChamberWorld) -> None:
    term = world.terminal("module-3-case", wiring=2, current_a=1e-3)
    truth = world.truth("module-3-case")
    assert truth["wiring"] == 2 and truth["current_a"] == 1e-3
    leads = term.ohm - float(truth["element_ohm"])  # type: ignore[arg-type]
    # from memory of NBS Handbook 100 (Copper Wire Tables): 26 AWG 40.81 ohm/1000 ft at 20 °C
    # = 0.133 89 ohm/m; two conductors of 2 m + 6 m at 23 °C:
    # 2 · 8 · 0.133 89 · (1 + 0.00393·3) = 2.167 ohm (IEC 60028 α20, by hand);
    # each conductor is drawn within ±1 % of that
    assert leads == pytest.approx(2.167, rel=0.012)


def test_the_world_advances_lazily_to_the_clock(world: ChamberWorld, clock: ManualClock) -> None:
    clock.advance(1400.5)
    assert world.now_s() == 1400.0  # whole 1 s steps
    status = world.status()
    assert status["phase"] == "dwell high" and status["cycle"] == 1
    term = world.terminal("air-return", wiring=4, current_a=1e-3)
    assert term.t_s == 1400.0
    # 800 s into the high dwell the air is within ±0.5 K of 125 °C (common practice, no published source)
    assert abs(float(status["air_c"]) - 125.0) < 0.5  # type: ignore[arg-type]


def test_same_seed_same_readings_other_seed_other_readings() -> None:
    def readings(seed: int) -> list[float]:
        clock = ManualClock()
        world = demo_world(seed=seed, clock=clock)
        out = []
        for _ in range(20):
            clock.advance(30.0)
            out += [world.terminal(ch, wiring=4, current_a=1e-3).ohm for ch in DEMO_METER_CHANNELS[:3]]
        return out

    assert readings(1) == readings(1)
    assert readings(1) != readings(2)


# ---------------------------------------------------------------- threads


def test_several_instrument_threads_can_read_while_the_clock_runs(
    world: ChamberWorld, clock: ManualClock
) -> None:
    errors: list[BaseException] = []
    stop = threading.Event()

    def instrument(channels: tuple[str, ...], wiring: int) -> None:
        last_t = -1.0
        try:
            for _ in range(150):
                for ch in channels:
                    term = world.terminal(ch, wiring=wiring, current_a=1e-3)
                    assert math.isfinite(term.ohm) and term.ohm > 10.0
                    assert term.t_s >= last_t
                    last_t = term.t_s
        except BaseException as exc:  # noqa: BLE001 - reported to the main thread
            errors.append(exc)

    def ticker() -> None:
        # bounded: the instruments must not chase a clock that races ahead without limit
        for _ in range(500):
            if stop.is_set():
                return
            clock.advance(2.0)

    threads = [threading.Thread(target=instrument, args=(DEMO_METER_CHANNELS, 4)) for _ in range(3)]
    threads += [threading.Thread(target=instrument, args=(DEMO_BOARD_CHANNELS, 3)) for _ in range(3)]
    tick = threading.Thread(target=ticker)
    tick.start()
    for th in threads:
        th.start()
    for th in threads:
        th.join(timeout=30)
    stop.set()
    tick.join(timeout=30)
    assert not errors, errors[:1]
    assert world.now_s() > 0.0


# ---------------------------------------------------------------- control commands


def test_fault_open_short_and_clear(world: ChamberWorld) -> None:
    table = world.commands()
    assert table.execute("fault open air-supply") == "ok open air-supply"
    assert world.terminal("air-supply", wiring=4, current_a=1e-3).ohm == OPEN_OHM
    assert world.faults() == {"air-supply": "open"}
    assert table.execute("clear air-supply") == "ok cleared air-supply"
    assert math.isfinite(world.terminal("air-supply", wiring=4, current_a=1e-3).ohm)
    assert table.execute("fault short air-return").startswith("ok")
    assert world.terminal("air-return", wiring=4, current_a=1e-3).ohm == SHORT_OHM
    # a short on 2- or 3-wire shows the leads only: far below the lowest Pt100
    # value (IEC 60751:2008 table 1: −200 °C -> 18.52 ohm)
    assert world.terminal("air-return", wiring=2, current_a=1e-3).ohm < 2.0
    table.execute("fault short door-corner")
    assert abs(world.terminal("door-corner", wiring=3, current_a=1e-3).ohm) < 0.05


def test_fault_stuck_freezes_the_reading(world: ChamberWorld, clock: ManualClock) -> None:
    clock.advance(300.0)  # ramping up at 10 K/min
    table = world.commands()
    assert table.execute("fault stuck shelf-1-front") == "ok stuck shelf-1-front"
    frozen = world.terminal("shelf-1-front", wiring=4, current_a=1e-3).ohm
    clock.advance(120.0)  # 20 K later
    assert world.terminal("shelf-1-front", wiring=4, current_a=1e-3).ohm == frozen
    assert world.terminal("air-return", wiring=4, current_a=1e-3).ohm > frozen + 5.0
    table.execute("clear")
    assert world.terminal("shelf-1-front", wiring=4, current_a=1e-3).ohm > frozen + 5.0


def test_fault_drift_moves_the_reading(world: ChamberWorld, clock: ManualClock) -> None:
    table = world.commands()
    clock.advance(1200.0)
    assert table.execute("fault drift air-return 3.6").startswith("ok drift air-return")
    base = float(world.truth("air-return")["element_c"])  # type: ignore[arg-type]
    clock.advance(100.0)  # still in the dwell: 0.1 K of drift at 3.6 K/h
    t = world.truth("air-return")
    shown = float(temperature(float(t["element_ohm"]), world.sensor("air-return").curve)[0])  # type: ignore[arg-type]
    assert shown - float(t["element_c"]) == pytest.approx(0.1, abs=1e-6)  # type: ignore[arg-type]
    assert abs(float(t["element_c"]) - base) < 0.5  # type: ignore[arg-type]


def test_runaway_door_heater_and_cooler_commands(world: ChamberWorld, clock: ManualClock) -> None:
    table = world.commands()
    clock.advance(1200.0)  # settled in the high dwell
    assert table.execute("fault runaway") == "ok runaway"
    clock.advance(60.0)  # about 0.3 K/s: well above the set point, below the 155 °C cut-out
    status = json.loads(table.execute("status")[3:])
    assert status["runaway"] is True
    assert status["air_c"] > 130.0 and status["heater_w"] == 5000.0
    assert table.execute("heater off") == "ok heater supply off"
    clock.advance(60.0)
    status = world.status()
    assert status["heater_supply_enabled"] is False and status["heater_w"] == 0.0
    assert table.execute("heater on") == "ok heater supply on"
    assert table.execute("clear runaway") == "ok cleared runaway"
    assert table.execute("fault door 60") == "ok door open 60 s"
    assert world.status()["door_open"] is True
    clock.advance(61.0)
    assert world.status()["door_open"] is False
    assert table.execute("fault cooler") == "ok cooler failed"
    assert world.status()["cooler_failed"] is True
    assert table.execute("clear all") == "ok cleared all"
    status = world.status()
    assert not (status["cooler_failed"] or status["runaway"] or status["door_open"] or status["faults"])


def test_the_cutout_latches_in_a_runaway_nobody_stops(world: ChamberWorld, clock: ManualClock) -> None:
    table = world.commands()
    clock.advance(1200.0)
    table.execute("fault runaway")
    clock.advance(1800.0)
    status = world.status()
    assert status["cutout_tripped"] is True and status["heater_w"] == 0.0
    assert table.execute("clear cutout") == "ok cleared cutout"


def test_truth_command_replies_json(world: ChamberWorld) -> None:
    world.terminal("fixture-plate", wiring=3, current_a=5e-4)
    reply = world.commands().execute("truth fixture-plate")
    assert reply.startswith("ok ")
    truth = json.loads(reply[3:])
    assert truth["channel"] == "fixture-plate" and truth["position"] == "fixture-plate"
    assert truth["wiring"] == 3 and truth["current_a"] == 5e-4
    assert set(truth) >= {"t_s", "true_c", "element_c", "element_ohm", "terminal_ohm"}


@pytest.mark.parametrize(
    ("line", "reply_start"),
    [
        ("fault open nowhere", "error unknown channel 'nowhere'"),
        ("fault open", "error usage: fault open CH"),
        ("fault melt air-supply", "error unknown fault 'melt'"),
        ("fault door soon", "error door open SECONDS must be a number"),
        ("fault door -5", "error door open SECONDS must be ≥ 0"),
        ("fault drift air-supply fast", "error drift rate K_PER_H must be a number"),
        ("heater maybe", "error usage: heater on|off"),
        ("clear nothing-here", "error nothing called 'nothing-here'"),
        ("truth", "error usage: truth CH"),
        ("explode", "error unknown command 'explode'"),
    ],
)
def test_bad_commands_are_refused_with_a_reason(world: ChamberWorld, line: str, reply_start: str) -> None:
    assert world.commands().execute(line).startswith(reply_start)


def test_commands_over_the_loopback_control_port(world: ChamberWorld) -> None:
    with ControlServer(world.commands()) as server:
        assert send_control(server.address, "channels") == "ok " + " ".join(DEMO_NAMES)
        assert send_control(server.address, "fault open module-6-case") == "ok open module-6-case"
    assert world.terminal("module-6-case", wiring=2, current_a=1e-3).ohm == OPEN_OHM


# ---------------------------------------------------------------- truth log


def test_truth_log_has_one_line_per_terminal_call(tmp_path: Path, clock: ManualClock) -> None:
    path = tmp_path / "truth.jsonl"
    with demo_world(seed=3, clock=clock, truth_log=path) as world:
        for _ in range(10):
            clock.advance(1.0)
            world.terminal("air-supply", wiring=4, current_a=1e-3)
        world.set_fault("air-supply", "open")
        world.terminal("air-supply", wiring=4, current_a=1e-3)
        # the stored temperature a logger would compute, from the 4-wire reading and
        # the sensor's own curve, equals the element's temperature (self-heating included)
        term = world.terminal("air-return", wiring=4, current_a=1e-3)
        own = world.sensor("air-return").curve
        logged_c = float(temperature(term.ohm, own)[0])
    lines = [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]
    assert len(lines) == 12
    assert [ln["t_s"] for ln in lines[:10]] == [float(k) for k in range(1, 11)]
    assert lines[10]["terminal_ohm"] is None and lines[10]["fault"] == "open"
    assert lines[11]["element_c"] == pytest.approx(logged_c, abs=1e-9)
    assert lines[11]["element_c"] > lines[11]["true_c"]  # self-heating warms the element


def test_truth_log_interval_writes_at_most_one_line_per_channel_per_interval(
    tmp_path: Path, clock: ManualClock
) -> None:
    path = tmp_path / "truth.jsonl"
    world = demo_world(seed=3, clock=clock, truth_log=path, truth_log_interval_s=5.0)
    for _ in range(20):  # 0 … 19 s, one call per second on two channels
        world.terminal("air-supply", wiring=4, current_a=1e-3)
        world.terminal("door-corner", wiring=3, current_a=1e-3)
        clock.advance(1.0)
    world.close()
    lines = [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]
    by_channel = {ch: [ln["t_s"] for ln in lines if ln["channel"] == ch] for ch in ("air-supply", "door-corner")}
    assert by_channel == {"air-supply": [0.0, 5.0, 10.0, 15.0], "door-corner": [0.0, 5.0, 10.0, 15.0]}


# ---------------------------------------------------------------- construction


def test_a_sensor_at_an_unknown_position_is_refused() -> None:
    model = ChamberModel(ChamberParams(), Soak(50.0, 100.0), (Position("a"),))
    with pytest.raises(InputError):
        ChamberWorld(model, [SimSensor("s", "b")], ManualClock())
    with pytest.raises(InputError):
        ChamberWorld(model, [SimSensor("s", "a"), SimSensor("s", "a")], ManualClock())


def test_unknown_channel_is_a_key_error(world: ChamberWorld) -> None:
    with pytest.raises(KeyError):
        world.terminal("nowhere", wiring=4, current_a=1e-3)
    with pytest.raises(InputError):
        world.terminal("air-supply", wiring=5, current_a=1e-3)
