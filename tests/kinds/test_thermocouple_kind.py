"""``type = "thermocouple"``: a station file mixing thermocouples with their cold-junction RTD, through check and the pipeline."""

from __future__ import annotations

import math

import pytest

from soaklog.config import ConfigProblems, parse_config
from soaklog.drivers.base import RawReading
from soaklog.pipeline import Pipeline
from soaklog.records import STATUS_CODES
from soaklog.sensors.flags import flag_names
from soaklog.status import check_report, format_check

STATION = """
[station]
name = "survey"
[[instrument]]
name = "dmm"
driver = "scpi"
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
range_ohm = 1000.0
range_v = 0.1
accuracy_dcv = {{ pct_reading = 0.005, pct_range = 0.004 }}
[[sensor]]
name = "block"
class = "A"
[[sensor]]
name = "tc-k"
type = "thermocouple"
tc_type = "K"
class = 1
[[channel]]
name = "terminal-block"
instrument = "dmm"
input = "101"
sensor = "block"
[[channel]]
name = "centre"
instrument = "dmm"
input = "102"
sensor = "tc-k"
cold_junction = {cold}
"""

BLOCK = '{ channel = "terminal-block" }'
# R(25 °C) of a Pt100 by IEC 60751: 100·(1 + 25·3.9083e-3 − 625·5.775e-7) = 109.73465625 ohm (hand arithmetic:
# 0.0977075 − 0.0003609375 = 0.0973465625)
R_25C = 109.73465625
# type K: E(100 °C) = 4.096 mV, E(25 °C) = 1.000 mV (from memory of NIST Monograph 175 table; the
# reference function gives 4.0962 and 1.0002 mV): a junction at 100 °C with the block at 25 °C reads 3.096 mV
E_100_MINUS_25_V = (4.096230218723254 - 1.000210) / 1000.0


def convert(readings, cold=BLOCK):
    cfg = parse_config(STATION.format(cold=cold))
    pipe = Pipeline(cfg, {c.name: i + 1 for i, c in enumerate(cfg.channels)})
    return cfg, pipe, pipe.convert("dmm", [readings])


def test_voltages_are_added_with_the_cold_junction_from_the_rtd_channel() -> None:
    _, _, b = convert([RawReading("101", 10.0, R_25C), RawReading("102", 10.0, 3.096e-3, "V")])
    assert b.temp_c[0] == pytest.approx(25.0, abs=1e-9)
    # 3.096 mV + E(25 °C) = 4.0962 mV → 100.0 °C (adding temperatures, 75.7 + 25, would be 0.6 K off)
    assert b.temp_c[1] == pytest.approx(100.0, abs=0.01)
    assert flag_names(int(b.flags[1])) == [] and b.status[1] == STATUS_CODES["ok"]
    # type K class 1 at 100 °C: ±1.5 K (IEC 60584-1, from memory), rectangular → 0.866 K; the block's own U
    # (class A at 25 °C: ±0.2 K → U = 0.231 K) enters through S(25)/S(100) ≈ 0.97; the meter adds a little
    assert 2 * 1.5 / math.sqrt(3) < b.u_c[1] < 2 * 1.5 / math.sqrt(3) + 0.05


def test_no_cold_junction_reading_withholds_the_thermocouple() -> None:
    _, _, b = convert([RawReading("102", 10.0, 3.096e-3, "V")])
    assert math.isnan(b.temp_c[0]) and flag_names(int(b.flags[0])) == ["no_cold_junction"]
    assert b.status[0] == STATUS_CODES["invalid"]


def test_a_cold_junction_from_an_earlier_scan_serves_within_its_age() -> None:
    cfg, pipe, _ = convert([RawReading("101", 10.0, R_25C)])
    b = pipe.convert("dmm", [[RawReading("102", 14.0, 3.096e-3, "V")]])  # 4 s later: within 3 × 2 s
    assert b.temp_c[0] == pytest.approx(100.0, abs=0.01)
    b = pipe.convert("dmm", [[RawReading("102", 20.0, 3.096e-3, "V")]])  # 10 s later: too old
    assert flag_names(int(b.flags[0])) == ["no_cold_junction"]


def test_an_ice_point_and_a_negative_emf() -> None:
    # −3.554 mV is −100 °C for type K against 0 °C (from memory of NIST Monograph 175 table)
    _, _, b = convert([RawReading("102", 1.0, -3.554e-3, "V")], cold="{ fixed_c = 0.0, expanded_uncertainty_c = 0.02 }")
    assert b.temp_c[0] == pytest.approx(-100.0, abs=0.02)
    # class 1 does not reach below −40 °C (IEC 60584-1, from memory): qualified, not withheld
    assert flag_names(int(b.flags[0])) == ["outside_class_range"]


def test_an_overload_is_an_open_thermocouple() -> None:
    _, _, b = convert([RawReading("101", 1.0, R_25C), RawReading("102", 1.0, math.nan, "V", "overload")])
    assert b.status[1] == STATUS_CODES["open"] and math.isnan(b.temp_c[1])


@pytest.mark.parametrize(("cold", "where", "words"), [
    ('{ channel = "nowhere" }', "channel[2].cold_junction.channel", "no channel named"),
    ('{ channel = "centre" }', "channel[2].cold_junction.channel", "its own cold junction"),
    ("{ fixed_c = 0.0 }", "channel[2].cold_junction.expanded_uncertainty_c", "is required"),
    ('{ fixed_c = 0.0, channel = "terminal-block" }', "channel[2].cold_junction", "exactly one"),
    ("{ instrument = true }", "channel[2].cold_junction.expanded_uncertainty_c", "is required"),
])
def test_cold_junction_problems_by_file_and_key(cold, where, words) -> None:
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION.format(cold=cold), "/lab/survey.toml")
    assert any(k == where and words in m for k, m in info.value.problems), info.value.problems


def test_a_thermocouple_channel_has_no_wiring_and_needs_its_cold_junction() -> None:
    text = STATION.format(cold=BLOCK).replace('cold_junction = { channel = "terminal-block" }', "wiring = 2")
    with pytest.raises(ConfigProblems) as info:
        parse_config(text)
    keys = [k for k, _ in info.value.problems]
    assert "channel[2].wiring" in keys and "channel[2].cold_junction" in keys
    bad_type = STATION.format(cold=BLOCK).replace('tc_type = "K"', 'tc_type = "X"')
    with pytest.raises(ConfigProblems) as info:
        parse_config(bad_type)
    assert any(k == "sensor[2].tc_type" for k, _ in info.value.problems)


def test_check_shows_the_thermocouple_and_its_uncertainty() -> None:
    cfg = parse_config(STATION.format(cold=BLOCK))
    rep = check_report(cfg)
    tc = rep["channels"][1]
    assert tc["sensor_label"] == "type K" and tc["wiring"] is None
    assert all(u["expanded_uncertainty_c"] is not None for u in tc["uncertainty_at"])
    text = format_check(rep, "safety")
    assert "cold junction measured by channel terminal-block" in text
