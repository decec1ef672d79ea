"""The simulated SCPI meter, reached the way a driver reaches it: pyvisa-py over loopback TCP.

Instrument facts are checked against IEEE 488.2-1992 and SCPI-1999 (clause
numbers from memory of those documents); measurement facts against Ohm's law,
IEC 60751 values and the common practice of bench meters, named beside each
value.
"""

from __future__ import annotations

import json
import math
import statistics
import time
from collections.abc import Callable, Iterator, Mapping

import pyvisa
import pytest
from hypothesis import given
from hypothesis import strategies as st
from testkit import wait_for
from pyvisa.constants import StatusCode

from soaklog.simulators.dmm import DmmSimulator
from soaklog.simulators.dmm_bench import bench_dmm
from soaklog.simulators.plant import OPEN_OHM, FixedPlant, Terminal

# IEC 60751:2008 table 1 (Pt100): 0 °C -> 100.00 ohm, 100 °C -> 138.51 ohm
# (138.5055 from the equation); the rest are plain values in a Pt100's span.
PT100_0C = 100.0
PT100_100C = 138.5055
LEAD_OHM = 0.25
SCAN_VALUES = {f"pt{i:02d}": 100.0 + 2.5 * i for i in range(20)}
SCAN_MAP = {101 + i: f"pt{i:02d}" for i in range(20)}

Connect = Callable[..., tuple[DmmSimulator, pyvisa.resources.MessageBasedResource]]


class RecordingPlant:
    """A fixed plant that remembers the measuring currents it was asked with."""

    def __init__(self, values: Mapping[str, float]) -> None:
        self._values = dict(values)
        self.currents_a: list[float] = []

    def channels(self) -> list[str]:
        return list(self._values)

    def terminal(self, channel: str, *, wiring: int, current_a: float) -> Terminal:
        self.currents_a.append(current_a)
        return Terminal(self._values[channel], 0.0)


class SelfHeatingPlant(RecordingPlant):
    """A Pt1000 near 0 °C warmed by its measuring current: ΔT = I²R/δ, ΔR = R0·α·ΔT."""

    # IEC 60751:2008: alpha = 0.00385 /K (mean 0..100 °C); dissipation constant
    # 2 mW/K, typical of small film elements (common practice, no published source)
    ALPHA_PER_K = 0.00385
    DELTA_W_PER_K = 2e-3

    def terminal(self, channel: str, *, wiring: int, current_a: float) -> Terminal:
        self.currents_a.append(current_a)
        r0 = self._values[channel]
        heating_k = current_a**2 * r0 / self.DELTA_W_PER_K
        return Terminal(r0 * (1.0 + self.ALPHA_PER_K * heating_k), 0.0)


@pytest.fixture(scope="module")
def rm() -> Iterator[pyvisa.ResourceManager]:
    # Sessions are closed per test; the manager is not, since pyvisa shares one
    # per backend with every other module of the run.
    yield pyvisa.ResourceManager("@py")


@pytest.fixture
def connect(rm: pyvisa.ResourceManager) -> Iterator[Connect]:
    """Start a simulator and open a pyvisa-py session to it; both are closed afterwards."""
    opened: list[tuple[DmmSimulator, list[pyvisa.resources.MessageBasedResource]]] = []

    def _connect(
        plant: object | None = None,
        channel_map: Mapping[int, str] | None = None,
        *,
        timeout_ms: int = 2000,
        **options: object,
    ) -> tuple[DmmSimulator, pyvisa.resources.MessageBasedResource]:
        settings: dict[str, object] = {"time_scale": 0.0, "seed": 7}
        settings.update(options)
        sim = DmmSimulator(
            plant if plant is not None else FixedPlant(SCAN_VALUES, lead_ohm=LEAD_OHM),  # type: ignore[arg-type]
            channel_map if channel_map is not None else SCAN_MAP,
            **settings,  # type: ignore[arg-type]
        ).start()
        inst = open_session(rm, sim, timeout_ms)
        opened.append((sim, [inst]))
        return sim, inst

    yield _connect
    for sim, sessions in opened:
        for inst in sessions:
            inst.close()
        sim.close()


Session = pyvisa.resources.MessageBasedResource


def open_session(rm: pyvisa.ResourceManager, sim: DmmSimulator, timeout_ms: int) -> Session:
    inst = rm.open_resource(sim.resource, read_termination="\n", write_termination="\n", timeout=timeout_ms)
    assert isinstance(inst, pyvisa.resources.MessageBasedResource)
    return inst


def values(reply: str) -> list[float]:
    return [float(v) for v in reply.split(",")]


# --- identity and IEEE 488.2 common commands ---------------------------------


def test_identity_has_the_four_ieee_fields(connect: Connect) -> None:
    sim, inst = connect(serial="SIM-4711")
    fields = inst.query("*IDN?").split(",")
    # IEEE 488.2-1992, 10.14 (from memory): manufacturer, model, serial number,
    # firmware level, separated by commas
    assert len(fields) == 4
    assert all(f.strip() for f in fields)
    assert fields[0] == "Larchmere Instruments"  # our invented maker
    assert fields[2] == "SIM-4711"
    assert sim.identity == ",".join(fields)


def test_scpi_version_is_1999(connect: Connect) -> None:
    _, inst = connect()
    # SCPI-1999 vol. 2, SYSTem:VERSion? (from memory): YYYY.V of the SCPI standard followed
    assert inst.query("SYST:VERS?") == "1999.0"


@pytest.mark.parametrize(
    ("query", "reply"),
    [
        ("*OPC?", "1"),  # IEEE 488.2-1992, 10.19 (from memory): "1" when all operations are done
        ("*TST?", "0"),  # IEEE 488.2-1992, 10.38 (from memory): 0 means the self-test passed
        ("*ESE?", "0"),  # IEEE 488.2-1992, 10.11: the enable registers power on cleared
        ("*SRE?", "0"),
    ],
)
def test_common_queries(connect: Connect, query: str, reply: str) -> None:
    _, inst = connect()
    assert inst.query(query) == reply


def test_power_on_sets_pon_and_reading_esr_clears_it(connect: Connect) -> None:
    _, inst = connect()
    # IEEE 488.2-1992, 11.5.1.1.2 (from memory): power on sets bit 7; *ESR? clears (10.12)
    assert int(inst.query("*ESR?")) == 128
    assert int(inst.query("*ESR?")) == 0


def test_errors_set_their_event_status_bits(connect: Connect) -> None:
    _, inst = connect()
    inst.query("*ESR?")
    inst.write("FOO:BAR")
    # IEEE 488.2-1992, 11.5.1.1.4 (from memory): a command error sets bit 5
    assert int(inst.query("*ESR?")) == 1 << 5
    inst.write("FRES:NPLC 1000")
    # ... and an execution error (here -222) bit 4 (11.5.1.1.5)
    assert int(inst.query("*ESR?")) == 1 << 4


def test_status_byte_reports_a_queued_error_and_the_summaries(connect: Connect) -> None:
    _, inst = connect()
    inst.write("*CLS")
    assert int(inst.query("*STB?")) == 0
    inst.write("FOO")
    # SCPI-1999 vol. 1, 9.1 (from memory): bit 2 is set while the error queue is not empty
    assert int(inst.query("*STB?")) & (1 << 2)
    inst.write("*ESE 32;*SRE 32")
    # IEEE 488.2-1992, 11.2.1: bit 5 ESB (ESR & ESE), bit 6 MSS (STB & SRE)
    assert int(inst.query("*STB?")) == (1 << 2) | (1 << 5) | (1 << 6)
    inst.write("*CLS")
    assert int(inst.query("*STB?")) == 0


def test_sre_bit_6_cannot_be_set(connect: Connect) -> None:
    _, inst = connect()
    inst.write("*SRE 255")
    # IEEE 488.2-1992, 11.3.2.3 (from memory): bit 6 of the enable register is ignored
    assert int(inst.query("*SRE?")) == 255 - 64


def test_register_value_out_of_range_is_minus_222(connect: Connect) -> None:
    _, inst = connect()
    inst.write("*ESE 256")
    assert inst.query("SYST:ERR?").startswith('-222,"Data out of range')
    assert inst.query("*ESE?") == "0"


# --- the error queue ---------------------------------------------------------


def test_undefined_header_then_no_error(connect: Connect) -> None:
    _, inst = connect()
    inst.write("FOO:BAR 1")
    # SCPI-1999 vol. 2, ch. 21 (from memory): -113 "Undefined header"; an
    # empty queue answers 0,"No error"
    assert inst.query("SYST:ERR?").startswith('-113,"Undefined header')
    assert inst.query("SYST:ERR?") == '0,"No error"'


def test_out_of_range_value_is_minus_222(connect: Connect) -> None:
    _, inst = connect()
    inst.write("SENS:FRES:NPLC 1000")
    assert inst.query("SYST:ERR:NEXT?").startswith('-222,"Data out of range')
    inst.write("CONF:FRES 5E6")  # above the 1 Mohm range and its 20 % over-range
    assert inst.query("SYST:ERR?").startswith('-222,"Data out of range')


@pytest.mark.parametrize(
    ("message", "code"),
    [
        ("*IDN? 1", -108),  # -108 "Parameter not allowed"
        ("FRES:NPLC", -109),  # -109 "Missing parameter"
        ("FRES:OCOM MAYBE", -224),  # -224 "Illegal parameter value"
        ("ROUT:SCAN (@101:1O5)", -102),  # -102 "Syntax error"
        ("FETC?", -230),  # -230 "Data corrupt or stale": nothing measured yet
    ],
)
def test_errors_carry_standard_codes(connect: Connect, message: str, code: int) -> None:
    # codes: SCPI-1999 vol. 2, ch. 21 (from memory)
    _, inst = connect()
    inst.write(message)
    assert int(inst.query("SYST:ERR?").split(",")[0]) == code


def test_queue_overflow_keeps_the_oldest_and_ends_with_minus_350(connect: Connect) -> None:
    _, inst = connect(error_queue_size=4)
    for _ in range(6):
        inst.write("FOO")
    inst.write("FRES:NPLC 1000")
    codes = [int(inst.query("SYST:ERR?").split(",")[0]) for _ in range(5)]
    # SCPI-1999 vol. 2, ch. 21 (from memory): overflow replaces the newest entry with -350
    assert codes == [-113, -113, -113, -350, 0]


def test_cls_empties_the_error_queue(connect: Connect) -> None:
    _, inst = connect()
    inst.write("FOO;*CLS")  # the command error drops *CLS: the error stays
    assert inst.query("SYST:ERR?").startswith("-113")
    inst.write("FOO")
    inst.write("*CLS")
    # SCPI-1999 vol. 1, 4.1.3.2 (from memory): *CLS clears the error/event queue
    assert inst.query("SYST:ERR?") == '0,"No error"'


def test_a_non_ascii_message_is_an_invalid_character(connect: Connect) -> None:
    _, inst = connect()
    inst.write_raw(b"CONF:FRES \xb5\n")
    # IEEE 488.2-1992, 7.4.1.2 (from memory): 7-bit ASCII; -101 "Invalid character"
    assert inst.query("SYST:ERR?").startswith('-101,"Invalid character')


# --- syntax over the wire ----------------------------------------------------


@pytest.mark.parametrize(
    ("setting", "query"),
    [
        ("CONF:FRES 100,(@101)", "SENS:FRES:RANG? (@101)"),
        ("CONFIGURE:FRESISTANCE 100,(@101)", "sense:fresistance:range? (@101)"),
        ("configure:fresistance 100 OHM,(@101)", "FRES:RANG? (@101)"),
        ("conf:fres 0.1 KOHM,(@101)", ":FRESistance:RANGe:UPPer? (@101)"),
    ],
)
def test_short_and_long_forms_reach_the_same_setting(connect: Connect, setting: str, query: str) -> None:
    _, inst = connect()
    inst.write(setting)
    assert float(inst.query(query)) == 100.0
    assert inst.query("SYST:ERR?") == '0,"No error"'


def test_semicolons_join_commands_and_replies(connect: Connect) -> None:
    sim, inst = connect()
    # IEEE 488.2-1992, 8.4.1 (from memory): ';' separates the response units of one message
    assert inst.query("*IDN?;SYST:VERS?") == f"{sim.identity};1999.0"
    # IEEE 488.2-1992 annex A (from memory): RANG continues the SENS:FRES path
    inst.write("SENS:FRES:NPLC 100;RANG 1000;:ROUT:SCAN (@101:103)")
    assert inst.query("FRES:NPLC?;RANG?") == "+1.00000000E+02;+1.00000000E+03"
    assert inst.query("ROUT:SCAN?") == "(@101:103)"


def test_a_header_outside_the_path_is_undefined(connect: Connect) -> None:
    _, inst = connect()
    inst.write("CONF:FRES;READ?")  # READ? is taken as CONF:READ?
    assert inst.query("SYST:ERR?").startswith("-113")


def test_configuration_query_names_function_range_and_resolution(connect: Connect) -> None:
    _, inst = connect()
    inst.write("CONF:FRES 100,(@101);:CONF:RES 10000,(@102)")
    reply = inst.query("CONF? (@101,102)")
    first, second = reply.split('","')
    assert first.startswith('"FRES +1.00000000E+02,')
    assert second.startswith("RES +1.00000000E+04,")


# --- measuring ---------------------------------------------------------------


def test_four_wire_reading_is_the_sensor_resistance(connect: Connect) -> None:
    plant = FixedPlant({"pt": PT100_100C}, lead_ohm=LEAD_OHM)
    _, inst = connect(plant, {101: "pt"}, noise_scale=0.0, thermal_emf_v=0.0)
    # 4-wire: the sense leads carry no current, so lead resistance drops out
    # (IEC 60751:2008, 5.3 connection configurations, from memory)
    assert float(inst.query("MEAS:FRES? (@101)")) == pytest.approx(PT100_100C, abs=1e-6)


def test_two_wire_reading_adds_both_leads(connect: Connect) -> None:
    plant = FixedPlant({"pt": PT100_100C}, lead_ohm=LEAD_OHM)
    _, inst = connect(plant, {101: "pt"}, noise_scale=0.0, thermal_emf_v=0.0)
    # 2-wire: both leads are in series with the sensor (Ohm's law)
    assert float(inst.query("MEAS:RES? (@101)")) == pytest.approx(PT100_100C + 2 * LEAD_OHM, abs=1e-6)


def test_readings_are_written_as_nr3(connect: Connect) -> None:
    plant = FixedPlant({"pt": PT100_100C})
    _, inst = connect(plant, {101: "pt"}, noise_scale=0.0, thermal_emf_v=0.0)
    # IEEE 488.2-1992, 8.7.4 (from memory): NR3, here with nine significant digits
    assert inst.query("MEAS:FRES? (@101)") == "+1.38505500E+02"


@pytest.mark.parametrize(("ocomp", "offset_ohm"), [("OFF", 10e-6 / 1e-3), ("ON", 0.0)])
def test_offset_compensation_removes_the_thermal_emf(connect: Connect, ocomp: str, offset_ohm: float) -> None:
    plant = FixedPlant({"pt": PT100_0C})
    _, inst = connect(plant, {101: "pt"}, noise_scale=0.0, thermal_emf_v=10e-6)
    inst.write(f"CONF:FRES 100,(@101);:FRES:OCOM {ocomp}")
    # Ohm's law: 10 µV of thermal EMF at the 1 mA test current reads as 10 mohm;
    # offset compensation (current on minus current off) cancels it
    assert float(inst.query("READ?")) - PT100_0C == pytest.approx(offset_ohm, abs=1e-9)


def test_twenty_channel_scan_in_one_reply(connect: Connect) -> None:
    _, inst = connect(noise_scale=0.0, thermal_emf_v=0.0)
    inst.write("CONF:FRES AUTO,DEF,(@101:120)")
    inst.write("ROUT:SCAN (@101:120)")
    assert inst.query("ROUT:SCAN?") == "(@101:120)"
    readings = values(inst.query("READ?"))
    assert readings == pytest.approx([SCAN_VALUES[SCAN_MAP[n]] for n in range(101, 121)], abs=1e-6)


def test_scan_order_is_the_order_written(connect: Connect) -> None:
    _, inst = connect(noise_scale=0.0, thermal_emf_v=0.0)
    inst.write("ROUT:SCAN (@105,101,110)")
    expected = [SCAN_VALUES[SCAN_MAP[n]] for n in (105, 101, 110)]
    assert values(inst.query("READ?")) == pytest.approx(expected, abs=1e-6)


def test_initiate_then_fetch_returns_the_same_readings_twice(connect: Connect) -> None:
    _, inst = connect()
    inst.write("ROUT:SCAN (@101:104)")
    inst.write("INIT")
    first = inst.query("FETC?")
    assert len(values(first)) == 4
    assert inst.query("FETC?") == first


def test_closed_channel_is_measured_alone(connect: Connect) -> None:
    _, inst = connect(noise_scale=0.0, thermal_emf_v=0.0)
    inst.write("ROUT:CLOS (@105)")
    assert inst.query("ROUT:CLOS? (@105,106)") == "1,0"
    assert values(inst.query("READ?")) == pytest.approx([SCAN_VALUES[SCAN_MAP[105]]], abs=1e-6)


def test_unknown_channel_is_an_illegal_value_and_changes_nothing(connect: Connect) -> None:
    _, inst = connect()
    inst.write("ROUT:SCAN (@101:103)")
    inst.write("ROUT:SCAN (@101,999)")
    assert inst.query("SYST:ERR?").startswith('-224,"Illegal parameter value')
    assert inst.query("ROUT:SCAN?") == "(@101:103)"
    inst.write("ROUT:CLOS (@121)")
    assert inst.query("SYST:ERR?").startswith("-224")


def test_open_sensor_reads_overload(connect: Connect) -> None:
    plant = FixedPlant({"ok": PT100_0C, "open": OPEN_OHM})
    _, inst = connect(plant, {101: "ok", 102: "open"})
    inst.write("ROUT:SCAN (@101,102)")
    reply = inst.query("READ?").split(",")
    # SCPI-1999 vol. 1, 7.2.1 (from memory): overload is sent as +9.9E37
    assert reply[1] == "+9.90000000E+37"
    assert float(reply[0]) == pytest.approx(PT100_0C, abs=0.01)


@pytest.mark.parametrize(
    ("ohm", "overload"),
    [
        # 20 % over-range on the 100 ohm range (common practice, no published source)
        (119.0, False),
        (121.0, True),
    ],
)
def test_fixed_range_overloads_above_120_percent(connect: Connect, ohm: float, overload: bool) -> None:
    plant = FixedPlant({"r": ohm})
    _, inst = connect(plant, {101: "r"}, noise_scale=0.0, thermal_emf_v=0.0)
    reading = float(inst.query("MEAS:FRES? 100,(@101)"))
    assert (reading == 9.9e37) is overload
    if not overload:
        assert reading == pytest.approx(ohm, abs=1e-6)


@pytest.mark.parametrize(
    ("range_ohm", "current_a"),
    [
        # typical test currents of bench meters per range (common practice, no
        # published source; see the meter's data sheet)
        (100, 1e-3),
        (1000, 1e-3),
        (10000, 1e-4),
        (100000, 1e-5),
        (1000000, 5e-6),
    ],
)
def test_fixed_range_sets_the_test_current(connect: Connect, range_ohm: int, current_a: float) -> None:
    plant = RecordingPlant({"pt1000": 1000.0})  # IEC 60751: Pt1000, R0 = 1000 ohm at 0 °C
    _, inst = connect(plant, {101: "pt1000"})
    inst.query(f"MEAS:FRES? {range_ohm},(@101)")
    assert plant.currents_a[-1] == pytest.approx(current_a)


@pytest.mark.parametrize(
    ("ohm", "range_ohm", "current_a"),
    [
        # IEC 60751:2008 table 1 ×10 for Pt1000: 0 °C -> 1000.0 ohm, 100 °C -> 1385.055 ohm;
        # 1385 ohm is past 120 % of the 1 kohm range, so autorange moves up and the
        # current drops (ranges and currents: common practice, no published source)
        (1000.0, 1000.0, 1e-3),
        (1385.055, 10000.0, 1e-4),
        (PT100_100C, 1000.0, 1e-3),
        (PT100_0C, 100.0, 1e-3),
        (50_000.0, 100_000.0, 1e-5),
    ],
)
def test_autorange_picks_the_range_and_so_the_current(
    connect: Connect, ohm: float, range_ohm: float, current_a: float
) -> None:
    plant = RecordingPlant({"s": ohm})
    _, inst = connect(plant, {101: "s"}, noise_scale=0.0, thermal_emf_v=0.0)
    inst.write("CONF:FRES AUTO,(@101)")
    assert float(inst.query("READ?")) == pytest.approx(ohm, abs=1e-6)
    assert float(inst.query("FRES:RANG? (@101)")) == range_ohm
    assert inst.query("FRES:RANG:AUTO? (@101)") == "1"
    assert plant.currents_a[-1] == pytest.approx(current_a)


def test_autorange_follows_a_changing_input(connect: Connect) -> None:
    plant = FixedPlant({"s": 1000.0})
    _, inst = connect(plant, {101: "s"}, noise_scale=0.0, thermal_emf_v=0.0)
    inst.write("CONF:FRES AUTO,(@101)")
    ranges = []
    for ohm in (1000.0, 50_000.0, 90.0, OPEN_OHM, 1000.0):
        plant.set("s", ohm)
        reading = float(inst.query("READ?"))
        assert reading == (9.9e37 if math.isinf(ohm) else pytest.approx(ohm, abs=1e-6))
        ranges.append(float(inst.query("FRES:RANG?")))
    assert ranges == [1e3, 1e5, 1e2, 1e6, 1e3]


def test_pt1000_self_heats_on_the_1_ma_range(connect: Connect) -> None:
    plant = SelfHeatingPlant({"pt1000": 1000.0})
    _, inst = connect(plant, {101: "pt1000"}, noise_scale=0.0, thermal_emf_v=0.0)
    on_1k = float(inst.query("MEAS:FRES? 1000,(@101)"))
    on_10k = float(inst.query("MEAS:FRES? 10000,(@101)"))
    # ΔT = I²R/δ: 1 mA in 1000 ohm is 1 mW, 0.5 K at δ = 2 mW/K; 100 µA is 10 µW,
    # 0.005 K; each kelvin is R0·α = 3.85 ohm (IEC 60751:2008, α = 0.00385 /K)
    expected = 1000.0 * 0.00385 * ((1e-3) ** 2 * 1000.0 - (1e-4) ** 2 * 1000.0) / 2e-3
    assert on_1k - on_10k == pytest.approx(expected, rel=1e-3)


def test_noise_falls_as_nplc_rises(connect: Connect) -> None:
    plant = FixedPlant({"pt": PT100_0C})
    _, inst = connect(plant, {101: "pt"}, seed=11)
    spreads = {}
    for nplc in (0.02, 100):
        inst.write(f"CONF:FRES 100,(@101);:FRES:NPLC {nplc}")
        spreads[nplc] = statistics.stdev(float(inst.query("READ?")) for _ in range(40))
    # white noise averaged over the integration time falls as 1/sqrt(time)
    # (statistics of the mean): 5000 times longer is about 70 times quieter
    assert spreads[100] > 0
    assert spreads[0.02] > 10 * spreads[100]


def test_reading_time_is_nplc_over_line_frequency(connect: Connect) -> None:
    time_scale = 0.01
    _, inst = connect(time_scale=time_scale)
    inst.write("CONF:FRES 1000,(@101:105);:FRES:NPLC 100")
    started = time.monotonic()
    inst.query("READ?")
    elapsed_s = time.monotonic() - started
    # one PLC at 50 Hz is 20 ms by definition: 5 readings × 100 PLC × 20 ms = 10 s,
    # scaled by time_scale; a lower bound, so the machine's speed does not matter
    assert elapsed_s >= 5 * 100 / 50 * time_scale


def test_offset_compensation_doubles_the_reading_time(connect: Connect) -> None:
    time_scale = 0.01
    _, inst = connect(time_scale=time_scale)
    inst.write("CONF:FRES 1000,(@101:102);:FRES:NPLC 100;OCOM ON")
    started = time.monotonic()
    inst.query("READ?")
    # two integrations per reading, current on and off (common practice)
    assert time.monotonic() - started >= 2 * 2 * 100 / 50 * time_scale


def test_rst_restores_defaults_but_keeps_the_error_queue(connect: Connect) -> None:
    _, inst = connect()
    inst.write("CONF:FRES 100,(@101:104);:FRES:NPLC 100;:FOO")
    inst.write("*RST")
    assert inst.query("ROUT:SCAN?") == "(@)"
    assert float(inst.query("FRES:NPLC? (@101)")) == 10.0
    assert inst.query("FRES:RANG:AUTO? (@101)") == "1"
    # IEEE 488.2-1992, 10.32 (from memory): *RST does not touch the status or error queue
    assert inst.query("SYST:ERR?").startswith("-113")


# --- connections and faults --------------------------------------------------


def test_a_second_connection_is_served_too(connect: Connect, rm: pyvisa.ResourceManager) -> None:
    sim, inst = connect()
    other = open_session(rm, sim, 2000)
    try:
        assert other.query("*IDN?") == sim.identity
        assert inst.query("*IDN?") == sim.identity
        other.close()
        assert inst.query("SYST:VERS?") == "1999.0"
    finally:
        other.close()


def test_drop_closes_the_connection_and_a_new_one_works(connect: Connect, rm: pyvisa.ResourceManager) -> None:
    sim, inst = connect(timeout_ms=300)
    assert inst.query("*IDN?") == sim.identity
    assert sim.commands().execute("fault drop") == "ok drop 1"
    wait_for(lambda: sim.status()["connections"] == 0)
    # STACK.md: pyvisa-py does not notice the close; the next query times out
    with pytest.raises(pyvisa.errors.VisaIOError):
        inst.query("*IDN?")
    fresh = open_session(rm, sim, 2000)
    try:
        assert fresh.query("*IDN?") == sim.identity
    finally:
        fresh.close()


def test_mute_times_out_and_clear_recovers(connect: Connect) -> None:
    sim, inst = connect(timeout_ms=300)
    assert sim.commands().execute("fault mute") == "ok mute"
    with pytest.raises(pyvisa.errors.VisaIOError) as info:
        inst.query("*IDN?")
    assert info.value.error_code == StatusCode.error_timeout
    assert sim.commands().execute("clear") == "ok cleared"
    # a muted message is not run, so no late answer is left to shift the next one
    assert inst.query("*IDN?") == sim.identity


def test_late_answers_slowly_but_correctly(connect: Connect) -> None:
    sim, inst = connect(timeout_ms=2000)
    assert sim.commands().execute("fault late 0.2") == "ok late 0.2"
    started = time.monotonic()
    assert inst.query("*IDN?") == sim.identity
    assert time.monotonic() - started >= 0.2


def test_an_answer_later_than_the_timeout_shifts_the_replies(connect: Connect) -> None:
    sim, inst = connect(timeout_ms=300)
    sim.fault_late(0.5)
    with pytest.raises(pyvisa.errors.VisaIOError):
        inst.query("*IDN?")
    sim.clear_faults()
    inst.timeout = 2000
    # STACK.md: the late answer comes back to the next query, off by one from then on
    assert inst.query("SYST:VERS?") == sim.identity
    assert inst.read() == "1999.0"


def test_garbage_is_not_ascii_and_clear_recovers(connect: Connect) -> None:
    sim, inst = connect()
    assert sim.commands().execute("fault garbage") == "ok garbage"
    # STACK.md: pyvisa raises UnicodeDecodeError for bytes that are not ASCII
    with pytest.raises(UnicodeDecodeError):
        inst.query("*IDN?")
    inst.write("*IDN?")
    raw = inst.read_raw()
    assert raw.endswith(b"\n")
    assert any(b > 0x7F for b in raw)
    sim.clear_faults()
    assert inst.query("*IDN?") == sim.identity


def test_reset_is_a_power_up(connect: Connect) -> None:
    sim, inst = connect()
    inst.query("*ESR?")
    inst.write("CONF:FRES 100,(@101:104);:FRES:NPLC 100;:FOO")
    assert inst.query("*OPC?") == "1"  # the write has been run before the reset
    assert sim.commands().execute("fault reset") == "ok reset"
    assert inst.query("SYST:ERR?") == '0,"No error"'
    assert inst.query("ROUT:SCAN?") == "(@)"
    assert float(inst.query("FRES:NPLC? (@101)")) == 10.0
    # IEEE 488.2-1992, 11.5.1.1.2 (from memory): power-on sets PON, bit 7, alone
    assert int(inst.query("*ESR?")) == 128


def test_status_reports_faults_and_configuration(connect: Connect) -> None:
    sim, inst = connect()
    inst.write("ROUT:SCAN (@101:103)")
    assert inst.query("*OPC?") == "1"  # the write has been run before we look
    table = sim.commands()
    table.execute("fault late 0.01")
    table.execute("fault garbage")
    reply = table.execute("status")
    assert reply.startswith("ok ")
    status = json.loads(reply[3:])
    assert status["faults"] == ["garbage", "late"]
    assert status["late_s"] == 0.01
    assert status["scan"] == [101, 102, 103]
    assert status["channels"]["101"]["sensor"] == "pt00"
    assert table.execute("clear") == "ok cleared"
    assert json.loads(table.execute("status")[3:])["faults"] == []
    assert inst.query("*IDN?") == sim.identity


@pytest.mark.parametrize(
    "line",
    [
        "fault",
        "fault nonsense",
        "fault late",
        "fault late soon",
        "fault late -1",
        "fault mute now",
        "clear all",
        "status x",
    ],
)
def test_bad_control_commands_are_refused(connect: Connect, line: str) -> None:
    sim, _ = connect()
    assert sim.commands().execute(line).startswith("error ")
    assert sim.active_faults() == []


# --- construction ------------------------------------------------------------


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"channel_map": {101: "nope"}}, "does not have"),
        ({"channel_map": {}}, "empty"),
        ({"channel_map": {0: "pt00"}}, "positive integer"),
        ({"host": "192.0.2.1"}, "loopback"),  # RFC 5737 documentation address
        ({"time_scale": -1.0}, "time_scale"),
        ({"serial": "A,B"}, "serial"),
    ],
)
def test_bad_construction_is_refused(kwargs: dict[str, object], match: str) -> None:
    options: dict[str, object] = {"channel_map": SCAN_MAP}
    options.update(kwargs)
    channel_map = options.pop("channel_map")
    with pytest.raises(ValueError, match=match):
        DmmSimulator(FixedPlant(SCAN_VALUES), channel_map, **options)  # type: ignore[arg-type]


def test_resource_names_the_loopback_port(connect: Connect) -> None:
    sim, _ = connect()
    host, port = sim.address
    assert sim.resource == f"TCPIP0::127.0.0.1::{port}::SOCKET"
    assert host == "127.0.0.1"


# --- the benchmark (run for its shape here, not timed) -----------------------


def test_benchmark_reports_its_figures_and_leaves_other_sessions_alone(connect: Connect) -> None:
    sim, inst = connect()
    result = bench_dmm(n=50, warmup=5)
    assert result["queries"] == 50
    assert result["queries_per_s"] > 0
    assert result["raw_socket_queries_per_s"] > 0
    ratio = result["queries_per_s"] / result["raw_socket_queries_per_s"]
    assert result["ratio_vs_raw_socket"] == pytest.approx(ratio)
    assert result["meets_target"] is (result["queries_per_s"] >= result["target_queries_per_s"])
    assert inst.query("*IDN?") == sim.identity


# --- bad input never escapes as an exception ---------------------------------


@pytest.fixture(scope="module")
def bare_sim() -> Iterator[DmmSimulator]:
    """A simulator driven through ``execute`` only, no client."""
    sim = DmmSimulator(FixedPlant(SCAN_VALUES, lead_ohm=LEAD_OHM), SCAN_MAP, time_scale=0.0, seed=3)
    yield sim
    sim.close()


WORDS = st.sampled_from(
    ["CONF:FRES", "MEAS:RES?", "READ?", "ROUT:SCAN", "FRES:NPLC", "RANG", "*ESE", "SYST:ERR?", "(@101:1", "(@999)",
     "MAX", "1e9", "-1", "ON", '"x', ";", ",", ":", "?", " ", "\t", "\xb5"]
)  # fmt: skip


@given(st.one_of(st.text(max_size=60), st.lists(WORDS, max_size=12).map("".join)))
def test_no_message_makes_the_simulator_raise(bare_sim: DmmSimulator, message: str) -> None:
    reply = bare_sim.execute(message.encode("utf-8", "replace"))
    assert reply is None or reply.isascii()
    # -300 is what an unexpected Python exception inside a handler becomes
    codes = []
    while (code := int(str(bare_sim.execute(":SYST:ERR?")).split(",")[0])) != 0:
        codes.append(code)
    assert -300 not in codes
    assert all(-499 <= c <= -100 for c in codes)
