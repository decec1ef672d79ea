"""Thermocouple channels on the SCPI meter: DC volts beside resistance channels, through pyvisa-py to the simulated meter."""

from __future__ import annotations

import math

from soaklog.simulators.plant import FixedPlant

# card 101: a Pt100 at 100 °C (IEC 60751:2008 table 1: 138.51 ohm; equation value 138.5055);
# 102 and 103: thermocouple emfs, one below its cold junction (negative); 104: an open thermocouple
VALUES = {"pt": 138.5055, "tc-a": 3.096e-3, "tc-b": -1.25e-3, "tc-open": math.inf}
MAP = {101: "pt", 102: "tc-a", 103: "tc-b", 104: "tc-open"}


def test_volts_channels_are_configured_and_read_beside_resistance(start_sim, make_meter) -> None:
    sim = start_sim(FixedPlant(VALUES), MAP)
    meter = make_meter(sim.resource, ("101", "102", "103", "104"), range_ohm=1000.0, wiring=4,
                       volt_channels={"102": 0.1, "103": 0.1, "104": 0.1})
    meter.open()
    scan = list(meter.read_scan())
    by = {r.channel: r for r in scan}
    assert by["101"].status == "ok" and by["101"].value == 138.5055 and by["101"].current_a == 1e-3
    assert by["102"].status == "ok" and by["102"].value == 3.096e-3 and by["102"].current_a is None
    assert by["103"].status == "ok" and by["103"].value == -1.25e-3  # negative: an emf, not a fault
    assert by["104"].status == "overload"  # the open thermocouple; the pipeline makes it "open"
    status = sim.status()
    assert status["channels"]["102"]["function"] == "VOLT"  # the meter was told CONF:VOLT:DC
    assert status["channels"]["101"]["function"] == "FRES"


def test_a_station_with_a_thermocouple_reads_it_through_its_cold_junction(start_sim) -> None:
    from testkit import ManualClock

    from soaklog.config import parse_config
    from soaklog.pipeline import Pipeline
    from soaklog.records import STATUS_CODES

    # Pt100 terminal block at 25 °C: 109.73465625 ohm (IEC 60751 by hand: 100·(1 + 0.0977075 − 0.0003609375));
    # type K junction at 100 °C against it: E(100) − E(25) = 4.0962 − 1.0002 mV (NIST reference function;
    # 4.096 and 1.000 mV from memory of the Monograph 175 table)
    sim = start_sim(FixedPlant({"block": 109.73465625, "tc": 3.0960e-3, "open": math.inf}),
                    {101: "block", 102: "tc", 103: "open"})
    text = f"""
[station]
name = "s"
[[instrument]]
name = "dmm"
driver = "scpi"
resource = "{sim.resource}"
range_ohm = 1000.0
[[sensor]]
name = "rtd"
class = "A"
[[sensor]]
name = "k"
type = "thermocouple"
tc_type = "K"
class = 2
[[channel]]
name = "block"
instrument = "dmm"
input = "101"
sensor = "rtd"
[[channel]]
name = "centre"
instrument = "dmm"
input = "102"
sensor = "k"
cold_junction = {{ channel = "block" }}
[[channel]]
name = "corner"
instrument = "dmm"
input = "103"
sensor = "k"
cold_junction = {{ channel = "block" }}
"""
    cfg = parse_config(text)
    inst = cfg.instruments[0]
    driver = inst.kind.driver(inst, ManualClock(), cfg.channels)
    try:
        driver.open()
        scan = driver.read_scan()
    finally:
        driver.close()
    batch = Pipeline(cfg, {"block": 1, "centre": 2, "corner": 3}).convert("dmm", [scan])
    temp = dict(zip(batch.ch.tolist(), batch.temp_c.tolist(), strict=True))
    status = dict(zip(batch.ch.tolist(), batch.status.tolist(), strict=True))
    assert abs(temp[1] - 25.0) < 1e-6
    assert abs(temp[2] - 100.0) < 0.01  # voltages added: E(25 °C) + 3.096 mV
    assert status[3] == STATUS_CODES["open"]
