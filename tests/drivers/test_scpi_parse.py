"""The pure side of the SCPI meter driver: replies, error entries, channel lists, profiles, back-off.

Reply formats are checked against IEEE 488.2-1992 and SCPI-1999 (clause
numbers from memory of those documents), named beside each case.
"""

from __future__ import annotations

import math
import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.errors import InputError
from soaklog.drivers.base import STATUSES
from soaklog.drivers.scpi_meter import (
    PROFILES,
    Backoff,
    MeterProfile,
    format_channel_list,
    parse_error_entry,
    parse_reply,
    profile_named,
)

T_UTC_S = 1_800_000_000.0
THREE = ("101", "102", "103")


def statuses(text: str, channels: tuple[str, ...] = THREE) -> list[str]:
    return [r.status for r in parse_reply(text, channels, T_UTC_S)]


# --- one reply, one reading per channel ---------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # IEEE 488.2-1992, 8.7.4 (from memory): NR3 response data, as 34401A-style meters send
        ("+1.00000000E+02,+1.38505500E+02,+1.19397300E+02", [100.0, 138.5055, 119.3973]),
        # NR1 and NR2 are response numbers too (IEEE 488.2-1992, 8.7.2 and 8.7.3, from memory)
        ("100,138.5055,.5", [100.0, 138.5055, 0.5]),
        # whitespace around a number and the line end are not part of it
        (" 1.0e2 , 2E+0,3\n", [100.0, 2.0, 3.0]),
        # zero ohm is a short, which the pipeline (not the driver) judges
        ("0,+0.0,-0.0", [0.0, 0.0, 0.0]),
    ],
)
def test_numbers_become_ok_readings_in_channel_order(text: str, expected: list[float]) -> None:
    readings = parse_reply(text, THREE, T_UTC_S, current_a=1e-3, wiring=4)
    assert [r.channel for r in readings] == list(THREE)
    assert [r.status for r in readings] == ["ok"] * 3
    assert [r.value for r in readings] == pytest.approx(expected, rel=1e-12)
    assert all(r.t_utc_s == T_UTC_S and r.unit == "ohm" for r in readings)
    assert all(r.current_a == 1e-3 and r.wiring == 4 for r in readings)


@pytest.mark.parametrize(
    ("field", "status"),
    [
        # SCPI-1999 vol. 1, 7.2.1 (from memory): +9.9E37 is an over-range reading,
        # -9.9E37 its negative counterpart, 9.91E37 not-a-number
        ("+9.90000000E+37", "overload"),
        ("9.9E37", "overload"),
        ("-9.90000000E+37", "overload"),
        ("+9.91000000E+37", "error"),
        ("9.91E37", "error"),
        # past every real reading and past the float range: still an overload, never a value
        ("1E999", "overload"),
        # a negative resistance is not something a passive sensor has (Ohm's law)
        ("-1.5", "out_of_range"),
        ("-1E-9", "out_of_range"),
    ],
)
def test_special_values_become_statuses_without_a_value(field: str, status: str) -> None:
    readings = parse_reply(f"100.0,{field},101.0", THREE, T_UTC_S)
    assert [r.status for r in readings] == ["ok", status, "ok"]
    assert math.isnan(readings[1].value)
    assert readings[1].reason
    assert readings[0].value == 100.0 and readings[2].value == 101.0


@pytest.mark.parametrize(
    ("text", "shown"),
    [
        ("100.0,101.0", "got 2"),  # one value short
        ("100.0,101.0,102.0,103.0", "got 4"),  # one too many
        ("", "got 0"),
        ("100.0,,102.0", "not a number"),
        ("100.0,nan,102.0", "'nan'"),  # float() would take it; SCPI never sends it
        ("100.0,inf,102.0", "'inf'"),
        ("100.0,1_000,102.0", "'1_000'"),
        ("100.0,0x10,102.0", "'0x10'"),
        ("100.0,12 OHM,102.0", "'12 OHM'"),  # a suffix is program data, not response data
        ("100.0,١٢,102.0", "not a number"),  # IEEE 488.2 data is 7-bit ASCII; float() reads these digits
        ('-113,"Undefined header"', "Undefined header"),  # an error entry where a scan was due
        ("Larchmere Instruments,LM-2470,SIM-0001", "Larchmere"),  # a late *IDN? answer
    ],
)
def test_a_reply_that_does_not_fit_makes_every_channel_garbage(text: str, shown: str) -> None:
    readings = parse_reply(text, THREE, T_UTC_S)
    assert [r.status for r in readings] == ["garbage"] * 3
    assert all(math.isnan(r.value) for r in readings)
    assert shown in readings[0].reason


def test_the_reason_shows_a_long_reply_cut_short() -> None:
    text = "x" * 5000
    reason = parse_reply(text, THREE, T_UTC_S)[0].reason
    assert len(reason) < 200
    assert "xxxx" in reason


def test_no_channels_no_readings() -> None:
    assert parse_reply("100.0", (), T_UTC_S) == []


# --- garbage from Hypothesis: nothing escapes, nothing is invented -------------

_FIELDS = st.one_of(
    st.text(max_size=12),
    st.sampled_from(["nan", "NaN", "inf", "-inf", "1e999", "9.9E37", "9.91E37", "-0", "", " ", "1_0", "0x1F", "١٢"]),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.floats(min_value=-1e6, max_value=1e6).map(lambda v: f"{v:+.8E}"),
)


def _check(text: str, channels: list[str]) -> None:
    readings = parse_reply(text, channels, T_UTC_S)
    assert len(readings) == len(channels)
    fields = text.strip().split(",")
    for i, r in enumerate(readings):
        assert r.status in STATUSES
        if r.ok:
            # an ok value is finite, not negative, and is exactly the number in its own field
            assert math.isfinite(r.value) and r.value >= 0
            assert len(fields) == len(channels)
            assert r.value == float(fields[i])
        else:
            assert math.isnan(r.value)


@settings(max_examples=300, deadline=None)
@given(text=st.text(max_size=200), n=st.integers(min_value=1, max_value=5))
def test_any_text_is_parsed_without_exception(text: str, n: int) -> None:
    _check(text, [str(101 + i) for i in range(n)])


@settings(max_examples=300, deadline=None)
@given(fields=st.lists(_FIELDS, min_size=1, max_size=6), n=st.integers(min_value=1, max_value=6))
def test_number_like_garbage_invents_no_number(fields: list[str], n: int) -> None:
    _check(",".join(fields), [str(101 + i) for i in range(n)])


@settings(max_examples=200, deadline=None)
@given(values=st.lists(st.floats(min_value=0.0, max_value=9e37, allow_nan=False), min_size=1, max_size=20))
def test_nr3_values_round_trip(values: list[float]) -> None:
    # IEEE 488.2-1992, 8.7.4 (from memory): NR3 with a sign, mantissa and exponent
    text = ",".join(f"{v:+.17E}" for v in values)
    readings = parse_reply(text, [str(101 + i) for i in range(len(values))], T_UTC_S)
    assert [r.status for r in readings] == ["ok"] * len(values)
    assert [r.value for r in readings] == values


# --- error queue entries ---------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "entry"),
    [
        # SCPI-1999 vol. 2, ch. 21 (from memory): <code>,"<description>"; 0 means the queue is empty
        ('0,"No error"', (0, "No error")),
        ('+0,"No error"', (0, "No error")),
        ('-113,"Undefined header"', (-113, "Undefined header")),
        ('-222,"Data out of range; NPLC 1000"', (-222, "Data out of range; NPLC 1000")),
        ("-350", (-350, "")),
    ],
)
def test_error_entries(text: str, entry: tuple[int, str]) -> None:
    assert parse_error_entry(text) == entry


@pytest.mark.parametrize("text", ["", "No error", "+1.0E+02", "\x00\x01"])
def test_what_is_not_an_error_entry(text: str) -> None:
    assert parse_error_entry(text) is None


# --- channel lists ---------------------------------------------------------------


@pytest.mark.parametrize(
    ("channels", "text"),
    [
        # SCPI-1999 vol. 1, 8.3.2 (from memory): (@...) with ',' between entries, ':' for a range
        (["101"], "(@101)"),
        ([str(n) for n in range(101, 121)], "(@101:120)"),
        (["101", "102", "103", "110", "112", "113"], "(@101:103,110,112:113)"),
        (["105", "101", "110"], "(@105,101,110)"),  # scan order is kept, not sorted
        (["A1", "A2"], "(@A1,A2)"),
    ],
)
def test_channel_lists(channels: list[str], text: str) -> None:
    assert format_channel_list(channels) == text


# --- profiles --------------------------------------------------------------------


def test_generic_profile_speaks_scpi_1999() -> None:
    p = PROFILES["generic"]
    values = {"range": "1000", "channels": "(@101:120)", "nplc": "1", "state": "ON"}
    # SCPI-1999 vol. 2 (from memory): CONFigure:FRESistance <range>,<resolution>,<channel list>
    # and [SENSe:]FRESistance:NPLCycles; ROUTe:SCAN <channel list>; IEEE 488.2 *IDN?, *RST, *CLS
    assert p.render(p.configure_4w, **values) == "CONF:FRES 1000,(@101:120)"
    assert p.render(p.configure_2w, **values) == "CONF:RES 1000,(@101:120)"
    assert p.render(p.nplc_4w, **values) == "SENS:FRES:NPLC 1,(@101:120)"
    assert p.render(p.scan, **values) == "ROUT:SCAN (@101:120)"
    assert (p.identify, p.reset, p.clear, p.read, p.error_query) == ("*IDN?", "*RST", "*CLS", "READ?", "SYST:ERR?")


def test_commands_override_single_templates() -> None:
    p = profile_named("generic", {"read": "FETC?", "nplc_4w": "FRES:NPLC {nplc}"})
    assert p.read == "FETC?"
    assert p.nplc_4w == "FRES:NPLC {nplc}"
    assert p.configure_4w == PROFILES["generic"].configure_4w


@pytest.mark.parametrize(
    ("name", "commands", "match"),
    [
        ("nonesuch", {}, "unknown meter profile"),
        ("generic", {"reed": "READ?"}, "unknown command name"),
        ("generic", {"nplc_4w": "FRES:NPLC {speed}"}, "placeholders"),
        ("generic", {"nplc_4w": "FRES:NPLC {nplc"}, "malformed"),
    ],
)
def test_bad_profiles_are_refused(name: str, commands: dict[str, str], match: str) -> None:
    with pytest.raises(InputError, match=match):
        profile_named(name, commands)


@pytest.mark.parametrize(
    ("range_ohm", "current_a"),
    [
        # typical bench meter test currents per range (common practice, no published
        # source; REFERENCES.md: about 1 mA on 100 ohm and 1 kohm, about 100 uA on 10 kohm)
        (100.0, 1e-3),
        (1000.0, 1e-3),
        (500.0, 1e-3),  # 500 ohm is measured on the 1 kohm range
        (10_000.0, 100e-6),
        (None, None),  # autorange: the current depends on the range the meter picks
        (1e9, None),  # past the table: unknown
    ],
)
def test_test_current_follows_the_range(range_ohm: float | None, current_a: float | None) -> None:
    assert MeterProfile("x").current_for_range(range_ohm) == current_a


# --- back-off --------------------------------------------------------------------


def test_backoff_doubles_up_to_its_cap() -> None:
    # capped exponential back-off (common practice, no published source)
    b = Backoff(initial_s=1.0, factor=2.0, max_s=60.0)
    assert [b.delay_s(n) for n in range(1, 9)] == [1, 2, 4, 8, 16, 32, 60, 60]


@pytest.mark.parametrize("kwargs", [{"initial_s": -1.0}, {"factor": 0.5}, {"initial_s": 10.0, "max_s": 1.0}])
def test_bad_backoff_is_refused(kwargs: dict[str, float]) -> None:
    with pytest.raises(InputError, match=re.escape("back-off")):
        Backoff(**kwargs)


def test_volts_channels_may_be_negative_and_resistances_may_not() -> None:
    from soaklog.drivers.scpi_text import parse_scan

    # a thermocouple below its cold junction reads a negative emf; a negative resistance is a wiring fault
    scan = parse_scan("-1.234E-03,+1.0E+02,-5.0E+00", ["101", "102", "103"], 0.0,
                      current_a=[None, 1e-3, 1e-3], wiring=[None, 4, 4], signed=[True, False, False])
    assert [r.status for r in scan] == ["ok", "ok", "out_of_range"]
    assert scan[0].value == -1.234e-3 and scan[0].current_a is None
    # SCPI-1999 overload (either sign) is an overload on a volts channel too
    scan = parse_scan("-9.9E37,+9.9E37", ["101", "102"], 0.0, signed=[True, True])
    assert [r.status for r in scan] == ["overload", "overload"]
    # the fast path takes an all-good signed scan whole
    scan = parse_scan("-1.0E-03,+2.0E-03", ["101", "102"], 0.0, signed=[True, True])
    assert [r.status for r in scan] == ["ok", "ok"]


def test_the_profiles_configure_dc_volts_per_channel() -> None:
    from soaklog.drivers.scpi_text import PROFILES

    p = PROFILES["generic"]
    # SCPI-1999 CONFigure:VOLTage:DC with a range and a channel list
    assert p.render(p.configure_dcv, range="0.1", channels="(@102:104)", nplc="1", state="OFF") == \
        "CONF:VOLT:DC 0.1,(@102:104)"
