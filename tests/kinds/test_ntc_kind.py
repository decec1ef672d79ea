"""``type = "ntc"``: a thermistor in a station file, through check and the pipeline."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pytest

from soaklog.config import ConfigProblems, parse_config
from soaklog.drivers.base import RawReading
from soaklog.pipeline import Pipeline
from soaklog.sensors.flags import flag_names
from soaklog.status import check_report

STATION = """
[station]
name = "bench"
[[instrument]]
name = "dmm"
driver = "scpi"
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
range_ohm = 1000000.0
[[sensor]]
name = "bead"
type = "ntc"
{keys}
[[channel]]
name = "inlet"
instrument = "dmm"
input = "101"
sensor = "bead"
"""

BETA = 'r25_ohm = 10000.0\nbeta_k = 3950.0\nr25_tolerance_pct = 1.0\nbeta_tolerance_pct = 1.0'


def test_a_beta_thermistor_converts_with_its_tolerance_in_the_budget() -> None:
    cfg = parse_config(STATION.format(keys=BETA))
    pipe = Pipeline(cfg, {"inlet": 1})
    # R(0 °C) = 33 620.60 ohm and 1e300 ohm (test_ntc.py, worked by hand; and a broken reading)
    batch = pipe.convert("dmm", [[RawReading("101", 0.0, 33620.60), RawReading("101", 1.0, 1e6)]])
    assert batch.temp_c[0] == pytest.approx(0.0, abs=2e-5)
    # ±1 % R25 and ±1 % β at 0 °C: 0.417926 K (worked by hand in test_ntc_curve.py), rectangular, k = 2
    assert batch.u_c[0] == pytest.approx(2 * 0.417926 / math.sqrt(3), rel=1e-4)
    # 1 MΩ (inside the 1 MΩ range) is colder than −40 °C: not a temperature
    assert math.isnan(batch.temp_c[1]) and flag_names(int(batch.flags[1])) == ["out_of_range"]


def test_steinhart_hart_coefficients_and_a_range_of_its_own() -> None:
    # the 10K3A1 coefficients (from memory of makers' application notes, as in test_ntc.py)
    cfg = parse_config(STATION.format(keys='steinhart_hart = [1.129241e-3, 2.341077e-4, 8.775468e-8]\n'
                                           'range_c = [0.0, 70.0]'))
    chain = cfg.chain(cfg.channels[0])
    conv = chain.convert(np.asarray([10_000.0, 40_000.0]))
    # 10 kΩ is 25 °C on that curve to within its fit (a few mK); 40 kΩ is about −5 °C: outside 0…70
    assert float(conv.temperature_c[0]) == pytest.approx(25.0, abs=0.01)
    assert flag_names(int(conv.flags[0])) == ["no_sensor_spec"] and math.isnan(conv.expanded_uncertainty_c[0])
    assert "out_of_range" in flag_names(int(conv.flags[1])) and math.isnan(conv.temperature_c[1])


@pytest.mark.parametrize(("keys", "where", "words"), [
    ("r25_ohm = 10000.0", "sensor[1].beta_k", "is required"),
    ('steinhart_hart = [1.1e-3, 2.3e-4]', "sensor[1].steinhart_hart", "three numbers"),
    ('steinhart_hart = [1.1e-3, -2.3e-4, 0.0]', "sensor[1].steinhart_hart", "b > 0"),
    ('steinhart_hart = [1.1e-3, 2.3e-4, 0.0]\nbeta_k = 3950.0', "sensor[1].beta_k", "not both"),
    (BETA + "\nrange_c = [80.0, 20.0]", "sensor[1].range_c", "low < high"),
    ('r25_ohm = 10000.0\nbeta_k = 3950.0\nbeta_tolerance_pct = 1.0', "sensor[1].beta_tolerance_pct", "r25_tolerance_pct"),
    (BETA + '\nclass = "A"', "sensor[1].class", "unknown key"),
])
def test_its_keys_are_checked_by_file_and_key(keys, where, words) -> None:
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION.format(keys=keys), "/lab/bench.toml")
    assert any(k == where and words in m for k, m in info.value.problems), info.value.problems


def test_check_shows_the_thermistor_channel_and_its_uncertainty(tmp_path) -> None:
    cfg = parse_config(STATION.format(keys=BETA))
    rep = check_report(cfg)
    (ch,) = rep["channels"]
    assert ch["sensor_label"] == "NTC 10k"
    assert any(u["expanded_uncertainty_c"] is not None for u in ch["uncertainty_at"])
    path = tmp_path / "bench.toml"
    path.write_text(STATION.format(keys=BETA), encoding="utf-8")
    p = subprocess.run([sys.executable, "-m", "soaklog", "check", str(path)], capture_output=True, text=True,
                       timeout=60)
    assert p.returncode == 0, p.stderr
    assert "bead (NTC 10k)" in p.stdout and "thermistor tolerance ±1 % R25, ±1 % β" in p.stdout


def test_a_range_that_over_ranges_the_cold_end_is_pointed_out() -> None:
    # R(−40 °C) ≈ 402 kΩ (test_ntc_curve.py) on a 100 kΩ range: the meter over-ranges when cold
    cfg = parse_config(STATION.format(keys=BETA).replace("range_ohm = 1000000.0", "range_ohm = 100000.0"))
    assert any("over-ranges below" in w for w in cfg.warnings), cfg.warnings


def test_a_station_file_mixes_pt_ntc_thermocouple_and_sprt() -> None:
    """The issue's "done when": one station with each kind; check gives each channel's uncertainty."""
    text = """
[station]
name = "lab"
[[instrument]]
name = "dmm"
driver = "scpi"
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
range_ohm = 1000.0
[[sensor]]
name = "pt"
class = "A"
[[sensor]]
name = "bead"
type = "ntc"
r25_ohm = 10000.0
beta_k = 3950.0
r25_tolerance_pct = 1.0
[[sensor]]
name = "k"
type = "thermocouple"
tc_type = "K"
class = 1
[[sensor]]
name = "ref"
type = "sprt"
r_tpw_ohm = 25.5
below = { subrange = 4, a = -1.2e-4, b = -3e-6 }
above = { subrange = 7, a = -1.1e-4, b = 1.5e-5, c = -2e-6 }
calibration = { certificate = "C-1", expanded_uncertainty_c = 0.003 }
[[channel]]
name = "block"
instrument = "dmm"
input = "101"
sensor = "pt"
[[channel]]
name = "bead"
instrument = "dmm"
input = "102"
sensor = "bead"
range_ohm = 1000000.0
[[channel]]
name = "tc"
instrument = "dmm"
input = "103"
sensor = "k"
cold_junction = { channel = "block" }
[[channel]]
name = "reference"
instrument = "dmm"
input = "104"
sensor = "ref"
"""
    cfg = parse_config(text)
    rep = check_report(cfg)
    for ch in rep["channels"]:
        at_100 = next(u for u in ch["uncertainty_at"] if u["t_c"] == 100.0)
        assert at_100["expanded_uncertainty_c"] is not None, ch["name"]
    ref = next(c for c in rep["channels"] if c["name"] == "reference")
    assert next(u for u in ref["uncertainty_at"] if u["t_c"] == 100.0)["expanded_uncertainty_c"] == pytest.approx(0.003)


@pytest.mark.parametrize(("keys", "where", "words"), [
    ("r_tpw_ohm = 25.5", "sensor[1]", "deviation function"),
    ("r_tpw_ohm = 25.5\nabove = { subrange = 10, a = 1e-4, b = 1e-5 }", "sensor[1].above", "no coefficient b"),
    ("above = { subrange = 7, a = 1e-4 }", "sensor[1].r_tpw_ohm", "is required"),
])
def test_sprt_keys_are_checked_by_file_and_key(keys, where, words) -> None:
    text = STATION.format(keys="").replace('type = "ntc"', f'type = "sprt"\n{keys}')
    with pytest.raises(ConfigProblems) as info:
        parse_config(text, "/lab/bench.toml")
    assert any(k == where and words in m for k, m in info.value.problems), info.value.problems
