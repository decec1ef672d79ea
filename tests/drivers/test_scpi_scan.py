"""The columnar scan parser and per-channel wiring and ranges, against the simulated meter."""

from __future__ import annotations

import math

import numpy as np
import pytest
from testkit.drivers import LEAD_OHM
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.drivers.base import RawScan
from soaklog.drivers.scpi_meter import parse_reply, parse_scan
from soaklog.simulators.plant import FixedPlant

CH = ("101", "102", "103")


@pytest.mark.parametrize(
    "text",
    [
        "+1.38505500E+02,+1.00000000E+02,+1.19397000E+02",  # the every-day case
        "+1.38505500E+02,+9.90000000E+37,+1.0E+02",  # SCPI-1999: +9.9E37 is an overload
        "+1.38505500E+02,-1.0E+00,+1.0E+02",  # negative: out of range
        "+1.38505500E+02,+9.91000000E+37,+1.0E+02",  # SCPI-1999: 9.91E37 is not-a-number
        "+1.38505500E+02,+1.0E+02",  # one value short: the whole scan is garbage
        "+1.3850E+02,nan,+1.0E+02",  # float() would take it; SCPI does not (IEEE 488.2, 8.7)
        "",
    ],
)
def test_columnar_parse_gives_what_the_record_parser_gives(text):
    scan = parse_scan(text, CH, 10.0, current_a=1e-3, wiring=4)
    assert isinstance(scan, RawScan)
    ref = parse_reply(text, CH, 10.0, current_a=1e-3, wiring=4)
    for got, want in zip(scan, ref, strict=True):
        assert got.status == want.status
        assert got.reason == want.reason
        assert (math.isnan(got.value) and math.isnan(want.value)) or got.value == want.value
        if want.status == "ok":
            assert got.current_a == want.current_a and got.wiring == want.wiring


@settings(max_examples=300, deadline=None)
@given(st.text(alphabet=st.sampled_from(list("0123456789+-.,eE 9n")), max_size=60))
def test_columnar_parse_never_raises_and_agrees_on_random_replies(text):
    scan = parse_scan(text, CH, 0.0)
    ref = parse_reply(text, CH, 0.0)
    assert [r.status for r in scan] == [r.status for r in ref]
    for got, want in zip(scan, ref, strict=True):
        assert (math.isnan(got.value) and math.isnan(want.value)) or got.value == want.value


def test_one_meter_scans_mixed_wiring_and_ranges(start_sim, make_meter):
    """Pt100s 4-wire on the 1 kΩ range and a Pt1000 2-wire on the 10 kΩ range, in one scan.

    IEC 60751:2008 table 1: Pt100 at 100 °C 138.51 ohm (equation 138.5055); Pt1000 ×10.
    2-wire adds both leads (Ohm's law); the test current follows the range:
    1 mA on 1 kΩ, 100 µA on 10 kΩ (common practice, no published source).
    """
    plant = FixedPlant({"a": 138.5055, "b": 119.397, "c": 1385.055}, lead_ohm=LEAD_OHM)
    sim = start_sim(plant, {101: "a", 102: "b", 103: "c"})
    meter = make_meter(sim.resource, CH, channel_settings={"103": (2, 10_000.0)})
    meter.open()
    scan = meter.read_scan()
    assert [r.status for r in scan] == ["ok"] * 3
    np.testing.assert_allclose([r.value for r in scan], [138.5055, 119.397, 1385.055 + 2 * LEAD_OHM], rtol=1e-7)
    assert [r.wiring for r in scan] == [4, 4, 2]
    assert [r.current_a for r in scan] == [1e-3, 1e-3, 1e-4]
    status = sim.status()["channels"]
    assert status["103"]["current_a"] == pytest.approx(1e-4)


def test_a_session_closed_under_the_driver_is_lost_then_reconnected(start_sim, make_meter, clock):
    """pyvisa raises InvalidSession on a closed session: the driver must reconnect, not stop."""
    sim = start_sim()
    meter = make_meter(sim.resource)
    meter.open()
    assert meter.read_scan()[0].status == "ok"
    meter._inst.close()  # what closing pyvisa's shared resource manager elsewhere does to us
    assert meter.read_scan()[0].status == "lost"
    clock.advance(10.0)  # past the back-off
    assert [r.status for r in meter.read_scan()] == ["ok"] * len(meter.channels)
