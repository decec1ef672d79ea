"""The pipeline on a parsed station file: what reaches the record for each kind of reading."""

from __future__ import annotations

import math

import pytest

from soaklog.config import parse_config
from soaklog.drivers.base import RawReading
from soaklog.pipeline import Pipeline
from soaklog.records import STATUS_CODES
from soaklog.sensors.flags import flag_names

STATION = """
[station]
name = "bench"
[[instrument]]
name = "dmm"
driver = "scpi"
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
range_ohm = 100.0
[[sensor]]
name = "bare"
[[sensor]]
name = "classed"
class = "A"
[[channel]]
name = "no-spec"
instrument = "dmm"
input = "101"
sensor = "bare"
[[channel]]
name = "class-a"
instrument = "dmm"
input = "102"
sensor = "classed"
[[channel]]
name = "flex-lead"
instrument = "dmm"
input = "103"
sensor = "classed"
wiring = 2
lead = {{ mm2 = 0.5, class = {lead_class}, outside_m = 10.0 }}
"""


def convert(readings: list[RawReading], lead_class: int = 5):
    cfg = parse_config(STATION.format(lead_class=lead_class))
    pipe = Pipeline(cfg, {c.name: i + 1 for i, c in enumerate(cfg.channels)})
    batch = pipe.convert("dmm", [readings])
    names = {i + 1: c.name for i, c in enumerate(cfg.channels)}
    return {names[int(c)]: (t, u, int(s), flag_names(f))
            for c, t, u, s, f in zip(batch.ch, batch.temp_c, batch.u_c, batch.status, batch.flags, strict=True)}


def test_no_sensor_spec_keeps_the_temperature_and_withholds_its_uncertainty() -> None:
    # IEC 60751:2008 table 1: 100 ohm is 0 °C
    out = convert([RawReading("101", 0.0, 100.0), RawReading("102", 0.0, 100.0)])
    t, u, status, flags = out["no-spec"]
    assert t == 0.0 and math.isnan(u) and status == STATUS_CODES["ok"] and flags == ["no_sensor_spec"]
    t, u, status, flags = out["class-a"]
    # IEC 60751:2008 class A: ±(0.15 + 0.002|t|) K, rectangular, U = 2·0.15/√3 (JCGM 100)
    assert u == pytest.approx(2 * 0.15 / math.sqrt(3)) and flags == []


def test_a_reading_over_the_stations_range_is_overload_with_its_flag() -> None:
    # 148 ohm on the station's 100 ohm range: over the 120 % a bench meter shows (common practice)
    out = convert([RawReading("102", 0.0, 148.0), RawReading("101", 0.0, 119.0)])
    t, u, status, flags = out["class-a"]
    assert math.isnan(t) and math.isnan(u) and status == STATUS_CODES["overload"] and flags == ["over_range"]
    assert out["no-spec"][2] == STATUS_CODES["ok"]


def test_the_station_files_lead_class_sets_the_lead_correction() -> None:
    # 2-wire, 0.5 mm² class 5, 10 m per conductor: midway between 10/58/0.5 ohm (IEC 60028) and
    # 10 m · 39.0 ohm/km (IEC 60228 class 5 maximum, from memory), both conductors, at 20 °C ambient
    pair_ohm = 2 * (10.0 / 58.0 / 0.5 + 0.39) / 2
    out = convert([RawReading("103", 0.0, 100.0 + pair_ohm)])
    assert out["flex-lead"][0] == pytest.approx(0.0, abs=1e-9)
    # class 1 is closer to nominal: the same reading reads warmer
    assert convert([RawReading("103", 0.0, 100.0 + pair_ohm)], lead_class=1)["flex-lead"][0] > 0.05


def test_a_bad_lead_class_is_reported_by_file_and_key() -> None:
    from soaklog.config import ConfigProblems

    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION.format(lead_class=3), "/lab/bench.toml")
    assert any(k == "channel[3].lead.class" and "1, 2 or 5" in m for k, m in info.value.problems)
