"""`soaklog convert` as a user runs it: a subprocess, its output and exit status."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest


def soaklog(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "soaklog", *args], capture_output=True, text=True, timeout=60
    )


def test_json_contract_fields():
    # IEC 60751:2008 table 1: 138.51 ohm <-> 100 °C (equation value 138.5055)
    p = soaklog("convert", "138.5055", "100", "--class", "B", "--json")
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    assert [r["ohms"] for r in out] == [138.5055, 100.0]
    assert out[0]["temperature_c"] == pytest.approx(100.0, abs=1e-4)
    assert out[1]["temperature_c"] == pytest.approx(0.0, abs=1e-9)
    # IEC 60751:2008 class B: ±(0.3 + 0.005|t|); rectangular, u = bound/√3, U = 2u (JCGM 100)
    assert out[0]["expanded_uncertainty_c"] == pytest.approx(2 * 0.8 / 3**0.5, rel=1e-6)
    assert out[1]["expanded_uncertainty_c"] == pytest.approx(2 * 0.3 / 3**0.5, rel=1e-6)
    assert out[0]["flags"] == [] and out[1]["flags"] == []
    assert out[0]["budget"][0]["name"] == "sensor_tolerance"


def test_out_of_range_gives_null_and_flag():
    # 400 ohm is above R(850 °C) = 390.48 ohm, IEC 60751:2008 table 1
    p = soaklog("convert", "400", "--json")
    assert p.returncode == 0
    (rec,) = json.loads(p.stdout)
    assert rec["temperature_c"] is None
    assert rec["expanded_uncertainty_c"] is None
    assert "out_of_range" in rec["flags"]


def test_lead_ohms_is_one_conductor():
    # 2-wire: both conductors subtracted: 139.5055 − 2·0.5 = 138.5055 ohm -> 100 °C (IEC 60751 table 1)
    p = soaklog("convert", "139.5055", "--wiring", "2", "--lead-ohms", "0.5", "--json")
    (rec,) = json.loads(p.stdout)
    assert rec["temperature_c"] == pytest.approx(100.0, abs=1e-4)


def test_self_heating_uses_measured_sensor_resistance():
    # P = I²·R = (1 mA)²·138.5055 ohm = 138.5 µW; δ = 2 mW/K -> ΔT = 0.06925 K
    p = soaklog("convert", "138.5055", "--current-ma", "1", "--dissipation-mw-per-k", "2", "--json")
    (rec,) = json.loads(p.stdout)
    assert rec["self_heating_k"] == pytest.approx(0.0692528, abs=1e-6)
    assert rec["temperature_c"] == pytest.approx(100.0 - 0.0692528, abs=1e-5)


def test_meter_spec_is_rectangular_rss_k2():
    # meter ±(0.01 % rdg + 0.004 % of 1 kΩ) at 138.5055 ohm = ±0.053851 ohm; u = /√3;
    # × 1/(dR/dt) = 1/0.37928 K/ohm; class A wire ±0.35 K /√3; RSS; k = 2 -> 0.436132 K
    # (worked by hand in tests/sensors/test_uncertainty.py)
    p = soaklog(
        "convert", "138.5055", "--class", "A", "--element", "wire",
        "--meter-accuracy", "0.01,0.004", "--json",
    )
    (rec,) = json.loads(p.stdout)
    assert rec["expanded_uncertainty_c"] == pytest.approx(0.436132, abs=4e-6)


def test_pt1000():
    # IEC 60751:2008 table 1 ×10 for R0 = 1000 ohm: 1385.06 ohm at 100 °C
    p = soaklog("convert", "1385.055", "--r0", "1000", "--json")
    (rec,) = json.loads(p.stdout)
    assert rec["temperature_c"] == pytest.approx(100.0, abs=1e-4)


@pytest.mark.parametrize("bad", ["abc", "-5", "nan", "inf", "1,2"])
def test_bad_resistance_exits_2_with_one_line(bad):
    p = soaklog("convert", "100", bad)
    assert p.returncode == 2
    assert p.stdout == ""
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1 and bad in lines[0]


def test_bad_option_exits_2():
    p = soaklog("convert", "100", "--class", "Z9")
    assert p.returncode == 2 and p.stdout == ""
    assert "unknown tolerance class" in p.stderr
    p = soaklog("convert", "100", "--wiring", "2")
    assert p.returncode == 2 and "--lead-ohms" in p.stderr


def test_human_table_has_units_and_flags():
    p = soaklog("convert", "138.5055", "15", "--class", "B", "--budget")
    assert p.returncode == 0, p.stderr
    assert "°C" in p.stdout and "ohm" in p.stdout
    assert "100.0000" in p.stdout
    assert "out_of_range" in p.stdout
    assert "sensor_tolerance" in p.stdout  # the budget breakdown


def test_a_negative_value_after_an_option_is_a_value():
    # the README writes --cal-span -50,150; argparse alone takes "-50,150" for an option
    p = soaklog("convert", "138.5055", "--cal-uncertainty", "0.1", "--cal-span", "-50,150", "--json")
    assert p.returncode == 0, p.stderr
    (rec,) = json.loads(p.stdout)
    assert rec["flags"] == []  # 100 °C is inside -50…150
    p = soaklog("convert", "60.2558", "--cal-uncertainty", "0.1", "--cal-span", "-50,150", "--json")
    # IEC 60751:2008 table 1: -100 °C -> 60.26 ohm: outside the span
    assert json.loads(p.stdout)[0]["flags"] == ["calibration_extrapolated"]


def test_over_the_meter_range_gives_null_and_flag():
    # 148 ohm on a 100 ohm range: above the 120 % a meter shows (common practice, no published source)
    p = soaklog("convert", "119", "148", "--meter-range", "100", "--class", "B", "--json")
    assert p.returncode == 0, p.stderr
    ok, over = json.loads(p.stdout)
    assert ok["flags"] == [] and ok["temperature_c"] is not None
    assert over["flags"] == ["over_range"]
    assert over["temperature_c"] is None and over["expanded_uncertainty_c"] is None


def test_no_sensor_spec_gives_a_temperature_and_no_uncertainty():
    p = soaklog("convert", "138.5055", "--json")
    (rec,) = json.loads(p.stdout)
    assert rec["temperature_c"] == pytest.approx(100.0, abs=1e-4)  # IEC 60751:2008 table 1: 138.51 ohm
    assert rec["expanded_uncertainty_c"] is None and rec["flags"] == ["no_sensor_spec"]


def test_lead_class_widens_the_lead_correction():
    # 2-wire, 0.5 mm² class 5, 10 m: midway between nominal 10/58/0.5 and 10·39.0/1000 ohm
    # (IEC 60028; IEC 60228 class 5 maximum from memory), two conductors
    p = soaklog("convert", "140", "--wiring", "2", "--lead-mm2", "0.5", "--lead-class", "5",
                "--lead-outside-m", "10", "--json")
    assert p.returncode == 0, p.stderr
    (rec,) = json.loads(p.stdout)
    assert rec["lead_correction_ohms"] == pytest.approx(2 * (10 / 58 / 0.5 + 0.39) / 2, rel=1e-9)
    bad = soaklog("convert", "140", "--wiring", "2", "--lead-awg", "24", "--lead-class", "5", "--lead-outside-m", "1")
    assert bad.returncode == 2 and "--lead-mm2" in bad.stderr
