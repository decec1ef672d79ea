"""Display units and number formats."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from soaklog.dashboard.units import (
    UNITS,
    difference_to_unit,
    fmt_age,
    fmt_elapsed,
    fmt_hours,
    fmt_rate,
    fmt_temperature,
    next_unit,
    parse_utc_ms,
    to_unit,
)


@pytest.mark.parametrize(
    ("celsius", "unit", "expected"),
    [
        (0.0, "K", 273.15),  # SI Brochure, 9th ed. (2019), 2.3.1: 0 °C = 273.15 K
        (-273.15, "K", 0.0),  # SI Brochure: absolute zero
        (0.0, "F", 32.0),  # NIST SP 811 (2008), B.9: ice point 32 °F
        (100.0, "F", 212.0),  # NIST SP 811: steam point at 1 atm, 212 °F
        (-40.0, "F", -40.0),  # NIST SP 811 formula: the scales cross at -40
        (125.0, "F", 257.0),  # NIST SP 811: 1.8 * 125 + 32
        (25.0, "C", 25.0),
    ],
)
def test_temperatures_convert_for_display(celsius, unit, expected):
    assert to_unit(celsius, unit) == pytest.approx(expected, abs=1e-12)


@pytest.mark.parametrize(
    ("kelvin", "unit", "expected"),
    [(1.0, "K", 1.0), (1.0, "C", 1.0), (1.0, "F", 1.8), (-0.5, "F", -0.9)],  # NIST SP 811, B.9: 1 K = 1.8 °F (difference)
)
def test_differences_convert_without_offset(kelvin, unit, expected):
    assert difference_to_unit(kelvin, unit) == pytest.approx(expected)


@given(st.floats(min_value=-200.0, max_value=850.0, allow_nan=False))
def test_each_unit_reads_back_to_celsius(t_c):
    # inverse of NIST SP 811 B.9 and SI Brochure 2.3.1, written out here independently
    assert (to_unit(t_c, "K") - 273.15) == pytest.approx(t_c, abs=1e-9)
    assert ((to_unit(t_c, "F") - 32.0) / 1.8) == pytest.approx(t_c, abs=1e-9)


def test_unit_key_cycles_through_all_three():
    seen = ["C"]
    for _ in range(3):
        seen.append(next_unit(seen[-1]))
    assert seen == ["C", "K", "F", "C"]
    assert set(UNITS) == {"C", "K", "F"}


def test_arrays_convert_elementwise():
    out = to_unit(np.array([0.0, 100.0], dtype=np.float64), "F")
    assert out.tolist() == pytest.approx([32.0, 212.0])  # NIST SP 811, B.9


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [(23.4567, "C", "23.457"), (None, "C", "—"), (math.nan, "K", "—"), (0.0, "K", "273.150"), (100.0, "F", "212.000")],
)
def test_temperature_text(value, unit, text):
    assert fmt_temperature(value, unit) == text


@pytest.mark.parametrize(
    ("rate", "unit", "text"),
    [(0.5, "C", "+0.50"), (-10.0, "C", "-10.00"), (-0.001, "C", "0.00"), (1.0, "F", "+1.80"), (5000.0, "C", ">+999"),
     (None, "C", "—")],
)
def test_rate_text(rate, unit, text):
    assert fmt_rate(rate, unit) == text


@pytest.mark.parametrize(
    ("age_s", "text"),
    [(4.2, "4 s"), (99.0, "99 s"), (600.0, "10 min"), (3 * 3600.0, "3.0 h"), (9 * 86400.0, "9 d"), (None, "—"),
     (-3.0, "0 s")],
)
def test_age_text(age_s, text):
    assert fmt_age(age_s) == text


def test_elapsed_and_planned_text():
    assert fmt_elapsed(1050 * 3600 - 1) == "1049:59:59"
    assert fmt_elapsed(61.9) == "0:01:01"
    assert fmt_hours(1050 * 3600.0) == "1050 h"
    assert fmt_hours(45 * 60.0) == "45 min"


def test_store_times_parse_to_milliseconds():
    # 1 800 000 000 s since 1970-01-01T00:00:00Z is 2027-01-15T08:00:00Z (POSIX time, 86 400 s a day)
    assert parse_utc_ms("2027-01-15T08:00:00.000Z") == 1_800_000_000_000
    assert parse_utc_ms("2027-01-15T08:00:00.250Z") == 1_800_000_000_250
    assert parse_utc_ms(None) is None
    assert parse_utc_ms("yesterday") is None
