"""``probe``: one conversation with an instrument, and a plain diagnosis when there is none.

Against the project's simulated meter over loopback TCP, a bare socket server
that ends its lines wrongly, and the pyvisa-sim YAML meter in this folder.
"""

from __future__ import annotations

import socket
import threading
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
import pyvisa
from testkit.drivers import CHANNELS, LEAD_OHM, SCAN_MAP, SCAN_VALUES

from soaklog.drivers.probe import FRONT, ProbeResult, format_probe, probe
from soaklog.simulators.dmm import DmmSimulator
from soaklog.simulators.plant import OPEN_OHM, FixedPlant

StartSim = Callable[..., DmmSimulator]
YAML = Path(__file__).with_name("meter.yaml")
SHORT_S = 0.3


def test_probe_reads_identity_and_each_channel(start_sim: StartSim) -> None:
    sim = start_sim()
    result = probe(sim.resource, channels=CHANNELS[:3], four_wire=True, timeout_s=1.0)
    assert result.ok and result.exit_code == 0
    assert result.identity == sim.identity
    assert [r.channel for r in result.readings] == ["101", "102", "103"]
    # 4-wire: the plant's own values (the leads drop out)
    assert [r.value for r in result.readings] == pytest.approx([SCAN_VALUES[SCAN_MAP[n]] for n in (101, 102, 103)])
    assert result.errors == () and result.errors_read
    text = format_probe(result)
    assert sim.identity in text and "talks (exit 0)" in text and "102.5 ohm  (4-wire)" in text


def test_two_wire_probe_includes_the_leads(start_sim: StartSim) -> None:
    sim = start_sim()
    result = probe(sim.resource, channels=["101"], timeout_s=1.0)
    # 2-wire: both leads in series with the sensor (Ohm's law)
    assert result.readings[0].value == pytest.approx(SCAN_VALUES["pt00"] + 2 * LEAD_OHM)
    assert result.readings[0].wiring == 2


def test_probe_without_channels_takes_one_reading(start_sim: StartSim) -> None:
    sim = start_sim()
    result = probe(sim.resource, four_wire=True, timeout_s=1.0)
    assert result.ok
    assert [r.channel for r in result.readings] == [FRONT]
    # the simulated meter measures its first card channel when none is named (its docstring)
    assert result.readings[0].value == pytest.approx(SCAN_VALUES["pt00"])


def test_an_overload_is_noted_and_still_talks(start_sim: StartSim) -> None:
    sim = start_sim(FixedPlant({"pt": 100.0, "open": OPEN_OHM}), {101: "pt", 102: "open"})
    result = probe(sim.resource, channels=["101", "102"], four_wire=True, timeout_s=1.0)
    assert result.ok
    assert [r.status for r in result.readings] == ["ok", "overload"]
    assert any("102: overload" in n for n in result.notes)


def test_error_queue_entries_are_listed(start_sim: StartSim) -> None:
    sim = start_sim()
    rm = pyvisa.ResourceManager("@py")
    other = rm.open_resource(sim.resource, read_termination="\n", write_termination="\n", timeout=1000)
    try:
        other.write("FOO:BAR")  # leaves -113 in the meter's queue
        assert other.query("*OPC?") == "1"
    finally:
        other.close()
    result = probe(sim.resource, timeout_s=1.0)
    assert result.ok  # it talks; the entries are news, not a failure
    # SCPI-1999 vol. 2, ch. 21 (from memory): -113 "Undefined header"
    assert len(result.errors) == 1 and result.errors[0].startswith('-113,"Undefined header')
    assert "error queue held 1 entry" in " ".join(result.notes)
    assert "-113" in format_probe(result)


def test_nothing_listening_says_connection_refused(dead_resource: str) -> None:
    result = probe(dead_resource, timeout_s=SHORT_S)
    assert not result.ok and result.exit_code == 1
    port = dead_resource.split("::")[2]
    assert f"nothing is listening at 127.0.0.1:{port} (connection refused)" in result.problem
    assert result.identity is None
    assert "could not talk (exit 1)" in format_probe(result)


@pytest.fixture
def wrong_line_end() -> Iterator[str]:
    """A server that answers every line with an identity ending in a carriage return only."""
    server = socket.create_server(("127.0.0.1", 0))
    conns: list[socket.socket] = []

    def serve() -> None:
        try:
            conn, _ = server.accept()
        except OSError:
            return
        conns.append(conn)
        with conn:
            while conn.recv(1024):
                conn.sendall(b"Nobody,Model,0,0\r")

    thread = threading.Thread(target=serve, daemon=True)
    thread.start()
    yield f"TCPIP0::127.0.0.1::{server.getsockname()[1]}::SOCKET"
    for conn in conns:
        try:
            conn.shutdown(socket.SHUT_RDWR)
        except OSError:
            pass
    server.close()
    thread.join(timeout=2.0)


def test_a_wrong_line_end_is_diagnosed_as_termination(wrong_line_end: str) -> None:
    result = probe(wrong_line_end, timeout_s=SHORT_S)
    assert not result.ok
    assert "no answer to *IDN?" in result.problem and "termination" in result.problem


def test_a_silent_instrument_is_a_timeout(start_sim: StartSim) -> None:
    sim = start_sim()
    sim.fault_mute()
    result = probe(sim.resource, timeout_s=SHORT_S)
    assert result.exit_code == 1
    assert f"within {SHORT_S:g} s" in result.problem


def test_garbage_is_diagnosed(start_sim: StartSim) -> None:
    sim = start_sim()
    sim.fault_garbage()
    result = probe(sim.resource, timeout_s=SHORT_S)
    assert result.exit_code == 1
    assert "not ASCII" in result.problem


def test_a_late_identity_is_a_timeout(start_sim: StartSim) -> None:
    sim = start_sim()
    sim.fault_late(2 * SHORT_S)
    result = probe(sim.resource, channels=["101", "102"], timeout_s=SHORT_S)
    assert result.identity is None and result.exit_code == 1
    assert "no answer to *IDN?" in result.problem


def test_a_reading_that_times_out_stops_the_probe(start_sim: StartSim) -> None:
    # 10 PLC at 50 Hz is 0.2 s of integration (one PLC is 20 ms by definition);
    # at time_scale 5 a reading takes 1 s, past the 0.3 s timeout
    sim = start_sim(time_scale=5.0)
    result = probe(sim.resource, channels=["101", "102"], timeout_s=SHORT_S)
    assert result.identity == sim.identity
    assert [r.status for r in result.readings] == ["timeout", "timeout"]
    assert result.exit_code == 1 and "MEAS:RES? (@101)" in result.problem
    assert not result.errors_read and "(not read)" in format_probe(result)


def test_probe_against_the_pyvisa_sim_meter() -> None:
    result = probe("TCPIP0::127.0.0.1::5025::SOCKET", channels=["101", "102"], four_wire=True, backend=f"{YAML}@sim")
    assert result.ok
    assert result.identity == "Quarrybank Test Works,QT-30,YAML-0001,0.1"
    # meter.yaml: IEC 60751:2008 table 1, Pt100 at 0 °C and 100 °C
    assert [r.value for r in result.readings] == pytest.approx([100.0, 138.5055])


def test_an_unknown_backend_is_a_problem_not_an_exception() -> None:
    result = probe("TCPIP0::127.0.0.1::5025::SOCKET", backend="@nonesuch")
    assert isinstance(result, ProbeResult) and result.exit_code == 1
    assert "cannot load the VISA backend '@nonesuch'" in result.problem
