"""The simulated heater supply: SCPI over loopback TCP, tied to the chamber model's heater switch."""

from __future__ import annotations

import pytest
import pyvisa

from soaklog.simulators.clock import ManualClock
from soaklog.simulators.lab import Lab
from soaklog.simulators.supply import MAKER, MODEL, SupplySimulator
from soaklog.simulators.world import demo_world


@pytest.fixture
def lab():
    clock = ManualClock()
    with Lab(clock=clock, board=False, meter=False, control_port=None) as lab:
        yield lab, clock


@pytest.fixture
def session(lab):
    lab_, _ = lab
    rm = pyvisa.ResourceManager("@py")
    inst = rm.open_resource(lab_.addresses().supply_resource, read_termination="\n", write_termination="\n",
                            timeout=5000)
    yield inst
    inst.close()


def test_identity_is_an_invented_maker_in_the_ieee_488_2_form(session):
    # IEEE 488.2-1992, 10.14 (from memory): maker, model, serial number, firmware, comma separated
    fields = session.query("*IDN?").split(",")
    assert fields[:2] == [MAKER, MODEL] and len(fields) == 4


@pytest.mark.parametrize(("command", "reply"), [("OUTP OFF", "0"), ("OUTPut:STATe ON", "1"), ("OUTP 0", "0"),
                                               ("outp on", "1")])
def test_output_commands_in_long_short_and_numeric_forms(session, command, reply):
    # SCPI-1999 vol. 1, 6.2 and 7.3 (from memory): short/long forms, case-insensitive, ON|OFF|0|1 booleans
    session.write(command)
    assert session.query("OUTP?") == reply


def test_output_off_cuts_the_simulated_heater_and_the_chamber_cools(lab, session):
    lab_, clock = lab
    world = lab_.world
    world.set_runaway(True)  # controller stuck at full heat
    clock.advance(600.0)
    hot = world.status()["air_c"]
    session.write("OUTPut OFF")
    assert session.query("*OPC?") == "1"  # IEEE 488.2: the command before it has been carried out
    assert world.heater_supply_enabled is False
    clock.advance(600.0)
    st = world.status()
    assert st["heater_w"] == 0.0  # the supply feeds the heater: off means no heat whatever the controller says
    assert st["air_c"] < hot


def test_a_bad_parameter_is_queued_as_a_scpi_error_and_rst_turns_the_output_off(session):
    session.write("OUTP SOMETIMES")
    # SCPI-1999 vol. 2, ch. 21 (from memory): -224 "Illegal parameter value"; then 0,"No error"
    assert session.query("SYST:ERR?").startswith("-224,")
    assert session.query("SYST:ERR?") == '0,"No error"'
    session.write("OUTP ON")
    session.write("*RST")  # SCPI-1999 (from memory): the reset state of an output is off
    assert session.query("OUTP?") == "0"


def test_the_lab_lists_the_supply_and_its_control_commands(lab):
    lab_, _ = lab
    assert lab_.addresses().as_dict()["supply_resource"].endswith("::SOCKET")
    assert lab_.table.execute("supply output off").startswith("ok")  # the control port runs it at once
    assert lab_.world.heater_supply_enabled is False
    assert '"output": false' in lab_.table.execute("supply status")


def test_the_supply_listens_on_loopback_only():
    with pytest.raises(ValueError, match="loopback"):
        SupplySimulator(demo_world(), host="0.0.0.0")
