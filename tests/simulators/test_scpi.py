"""The SCPI parser, error queue and status bytes, checked against IEEE 488.2-1992 and SCPI-1999.

Clause numbers are quoted from memory of those documents; the documents were
not at hand while writing these tests.
"""

from __future__ import annotations

import math
import re

import pytest
from hypothesis import given
from hypothesis import strategies as st

from soaklog.simulators import scpi
from soaklog.simulators.scpi import Command, CommandTree, ErrorQueue, ScpiError

TREE = CommandTree(
    [
        "*IDN?",
        "*RST",
        "*CLS",
        "CONFigure:FRESistance",
        "CONFigure:RESistance",
        "CONFigure?",
        "READ?",
        "[SENSe:]FRESistance:NPLCycles",
        "[SENSe:]FRESistance:NPLCycles?",
        "[SENSe:]FRESistance:RANGe[:UPPer]",
        "[SENSe:]FRESistance:RANGe:AUTO",
        "SYSTem:ERRor[:NEXT]?",
        "SYSTem:VERSion?",
        "ROUTe:SCAN",
    ]
)

CONF_FRES = "CONFigure:FRESistance"
NPLC = "[SENSe:]FRESistance:NPLCycles"
RANGE = "[SENSe:]FRESistance:RANGe[:UPPer]"
ERR = "SYSTem:ERRor[:NEXT]?"


def resolved(message: str) -> list[str | int]:
    """Each unit as the pattern it matched, or the error code it raised."""
    return [item.pattern if isinstance(item, Command) else item.code for item in scpi.parse_message(message, TREE)]


# --- headers ------------------------------------------------------------------


@pytest.mark.parametrize(
    ("message", "pattern"),
    [
        # SCPI-1999 vol. 1, 6.2.1 (from memory): short form = the capitals,
        # long form = the whole word, either accepted in any case
        ("CONF:FRES", CONF_FRES),
        ("CONFIGURE:FRESISTANCE", CONF_FRES),
        ("configure:fresistance", CONF_FRES),
        ("Conf:FResistance", CONF_FRES),
        ("CONFIGURE:FRES", CONF_FRES),
        # SCPI-1999 vol. 1, 6.2.5 (from memory): a bracketed node may be left out
        ("SENS:FRES:NPLC 10", NPLC),
        ("FRES:NPLC 10", NPLC),
        ("sense:fresistance:nplcycles 10", NPLC),
        ("FRES:RANG 100", RANGE),
        ("FRES:RANG:UPP 100", RANGE),
        ("SYST:ERR?", ERR),
        ("SYST:ERR:NEXT?", ERR),
        ("system:error:next?", ERR),
        # IEEE 488.2-1992, 7.6.1.2: a leading colon names the root
        (":SYST:ERR?", ERR),
        # IEEE 488.2-1992, 7.6.2: common command headers, any case
        ("*idn?", "*IDN?"),
    ],
)
def test_headers_match_short_and_long_forms_in_any_case(message: str, pattern: str) -> None:
    assert resolved(message) == [pattern]


@pytest.mark.parametrize(
    "message",
    [
        # SCPI-1999 vol. 1, 6.2.1 (from memory): only the short and the long
        # form are valid, nothing in between and nothing longer
        "CONFIG:FRES",
        "CON:FRES",
        "CONFIGURES:FRES",
        "FOO?",
        "SENS:NPLC 10",
        # the set form of a query-only header, and the query of a set-only one
        "*IDN",
        "SYST:ERR",
        "CONF:FRES?",
        "ROUT:SCAN?",
    ],
)
def test_unknown_headers_are_minus_113(message: str) -> None:
    # SCPI-1999 vol. 2, ch. 21 (from memory): -113 "Undefined header"
    assert resolved(message) == [-113]


@pytest.mark.parametrize(
    ("message", "code"),
    [
        # IEEE 488.2-1992, 7.6.1.4 (from memory): at most 12 characters a mnemonic
        ("CONFIGURATIONS:FRES", -112),
        # IEEE 488.2-1992, 7.4.1.2 (from memory): 7-bit ASCII only
        ("CONF:FRÉS", -101),
        ("CONF::FRES", -102),
        ("CONF:FR-ES", -102),
        ("*ID-N?", -102),
    ],
)
def test_malformed_headers_are_command_errors(message: str, code: int) -> None:
    assert resolved(message) == [code]


@pytest.mark.parametrize(
    ("message", "expected"),
    [
        ("*RST;*CLS", ["*RST", "*CLS"]),
        # IEEE 488.2-1992 annex A (from memory): a header without a leading
        # colon continues from the path the previous header left
        ("SENS:FRES:NPLC 10;RANG 100", [NPLC, RANGE]),
        ("FRES:NPLC 10;RANG:AUTO 1", [NPLC, "[SENSe:]FRESistance:RANGe:AUTO"]),
        ("CONF:FRES;READ?", [CONF_FRES, -113]),
        ("CONF:FRES;:READ?", [CONF_FRES, "READ?"]),
        ("SYST:ERR?;SYST:ERR?", [ERR, -113]),
        ("SYST:ERR?;:SYST:ERR?", [ERR, ERR]),
        ("SYST:ERR?;VERS?", [ERR, "SYSTem:VERSion?"]),
        # ... and common commands leave that path alone
        ("FRES:NPLC 1;*CLS;RANG 100", [NPLC, "*CLS", RANGE]),
        # every new message starts at the root
        ("READ?", ["READ?"]),
        # IEEE 488.2-1992, 7.7.5: a ';' inside string data does not split
        ('ROUT:SCAN "a;b";*CLS', ["ROUTe:SCAN", "*CLS"]),
        # a command error drops the rest of the message (common practice, no published rule)
        ("FOO;*RST", [-113]),
        # an empty unit before the terminator carries nothing (common practice)
        ("*RST;", ["*RST"]),
        ("", []),
    ],
)
def test_compound_messages_follow_the_header_path_rules(message: str, expected: list[str | int]) -> None:
    assert resolved(message) == expected


@pytest.mark.parametrize(
    ("message", "params", "query"),
    [
        ("CONF:FRES 100,DEF,(@101:105,108)", ("100", "DEF", "(@101:105,108)"), False),
        ("CONF:FRES   AUTO , MIN", ("AUTO", "MIN"), False),
        ("CONF:FRES\t(@101)", ("(@101)",), False),
        ("CONF:FRES", (), False),
        ("CONF?", (), True),
        ("FRES:NPLC? MAX", ("MAX",), True),
        ('ROUT:SCAN "x,y",1', ('"x,y"', "1"), False),
    ],
)
def test_parameters_split_on_top_level_commas_and_queries_end_in_a_question_mark(
    message: str, params: tuple[str, ...], query: bool
) -> None:
    # IEEE 488.2-1992, 7.4.2 (from memory): ',' separates program data; white
    # space separates the header from the data; a query header ends in '?'
    [command] = scpi.parse_message(message, TREE)
    assert isinstance(command, Command)
    assert command.params == params
    assert command.query is query


@given(st.text(max_size=80))
def test_no_exception_escapes_the_message_parser(message: str) -> None:
    for item in scpi.parse_message(message, TREE):
        assert isinstance(item, (Command, ScpiError))


def test_a_header_pattern_needs_a_required_node() -> None:
    with pytest.raises(ValueError, match="no required node"):
        CommandTree(["[SENSe]"])


# --- parameters ---------------------------------------------------------------


@pytest.mark.parametrize(
    ("token", "unit", "expected"),
    [
        # IEEE 488.2-1992, 7.7.2 (from memory): NR1, NR2 and NR3 forms
        ("100", None, 100.0),
        ("+1.5E+2", None, 150.0),
        ("1e3", None, 1000.0),
        (".5", None, 0.5),
        ("-2.", None, -2.0),
        ("1.0E-3", None, 1e-3),
        # IEEE 488.2-1992, 7.7.3 table 7-1 (from memory): suffix multipliers,
        # K kilo, M milli, MA mega, U micro; case does not matter
        ("100 OHM", "OHM", 100.0),
        ("10 KOHM", "OHM", 1e4),
        ("10kohm", "OHM", 1e4),
        ("2 MAOHM", "OHM", 2e6),
        ("100 UOHM", "OHM", 1e-4),
        ("500 MOHM", "OHM", 5e8),
        # ... except that MOHM means megaohm, not milliohm (same clause, from memory)
        ("1 MOHM", "OHM", 1e6),
        ("1 mohm", "OHM", 1e6),
        # SCPI-1999 vol. 1, 7.2.1.1 (from memory): MINimum, MAXimum, DEFault
        ("MIN", None, "MIN"),
        ("minimum", None, "MIN"),
        ("MAX", "OHM", "MAX"),
        ("Default", None, "DEF"),
    ],
)
def test_numeric_parameters_with_suffixes_and_keywords(token: str, unit: str | None, expected: float | str) -> None:
    value = scpi.parse_numeric(token, unit=unit)
    if isinstance(expected, str):
        assert value == expected
    else:
        assert value == pytest.approx(expected, rel=1e-12)


def test_mega_suffix_exception_is_only_for_ohm_and_hertz() -> None:
    # IEEE 488.2-1992, 7.7.3 (from memory): "MHZ" is megahertz; "MV" stays millivolt
    assert scpi.parse_numeric("3 MHZ", unit="HZ") == pytest.approx(3e6)
    assert scpi.parse_numeric("3 MV", unit="V") == pytest.approx(3e-3)


@pytest.mark.parametrize(
    ("token", "unit", "code"),
    [
        ("1.2.3", None, -121),  # -121 "Invalid character in number"
        ("12abc!", None, -121),
        ("10 KV", "OHM", -131),  # -131 "Invalid suffix"
        ("10 OHM", None, -138),  # -138 "Suffix not allowed"
        ('"10"', None, -104),  # -104 "Data type error": a string
        ("(@101)", None, -104),
        ("", None, -109),  # -109 "Missing parameter"
        ("BANANA", None, -224),  # -224 "Illegal parameter value"
        ("MINI", None, -224),  # neither short nor long form
        ("1e999", None, -123),  # -123 "Exponent too large"
    ],
)
def test_bad_numeric_parameters_raise_the_standard_codes(token: str, unit: str | None, code: int) -> None:
    # codes: SCPI-1999 vol. 2, ch. 21 (from memory)
    with pytest.raises(ScpiError) as info:
        scpi.parse_numeric(token, unit=unit)
    assert info.value.code == code


@given(st.text(max_size=30))
def test_numeric_parser_raises_only_scpi_errors(token: str) -> None:
    try:
        scpi.parse_numeric(token, unit="OHM")
    except ScpiError:
        pass


@pytest.mark.parametrize(
    ("token", "expected"),
    [
        # SCPI-1999 vol. 1, 7.3 (from memory): ON/OFF, or a number rounded to an
        # integer, nonzero meaning true
        ("ON", True),
        ("off", False),
        ("1", True),
        ("0", False),
        ("0.4", False),
        ("0.6", True),
        ("-1", True),
    ],
)
def test_boolean_parameters(token: str, expected: bool) -> None:
    assert scpi.parse_boolean(token) is expected


@pytest.mark.parametrize(("token", "code"), [("YES", -224), ("", -109), ("1 OHM", -138)])
def test_bad_boolean_parameters(token: str, code: int) -> None:
    with pytest.raises(ScpiError) as info:
        scpi.parse_boolean(token)
    assert info.value.code == code


@pytest.mark.parametrize(
    ("token", "expected"),
    [
        # SCPI-1999 vol. 1, 8.3.2 (from memory): (@first:last,single,...)
        ("(@101:105,108)", (101, 102, 103, 104, 105, 108)),
        ("(@101)", (101,)),
        ("( @ 101 , 102 )", (101, 102)),
        ("(@101:120)", tuple(range(101, 121))),
        ("(@105:103)", (105, 104, 103)),
        ("(@)", ()),
    ],
)
def test_channel_lists_expand_in_the_order_written(token: str, expected: tuple[int, ...]) -> None:
    assert scpi.is_channel_list(token)
    assert scpi.parse_channel_list(token) == expected


@pytest.mark.parametrize("token", ["(101)", "@101", "(@10a)", "(@101:)", "(@101,,102)", "(@101"])
def test_malformed_channel_lists_are_syntax_errors(token: str) -> None:
    with pytest.raises(ScpiError) as info:
        scpi.parse_channel_list(token)
    assert info.value.code == -102


def test_an_overlong_channel_list_is_too_much_data() -> None:
    with pytest.raises(ScpiError) as info:
        scpi.parse_channel_list("(@1:100000)")
    assert info.value.code == -223  # -223 "Too much data"


@pytest.mark.parametrize(
    ("channels", "text"),
    [
        (range(101, 121), "(@101:120)"),
        ([101, 103], "(@101,103)"),
        ([101, 102, 105, 106, 107, 110], "(@101:102,105:107,110)"),
        ([], "(@)"),
    ],
)
def test_channel_lists_are_written_with_ranges(channels: list[int], text: str) -> None:
    assert scpi.format_channel_list(channels) == text


@given(st.lists(st.integers(min_value=1, max_value=9999), max_size=40))
def test_channel_lists_round_trip(channels: list[int]) -> None:
    assert scpi.parse_channel_list(scpi.format_channel_list(channels)) == tuple(channels)


# --- responses ----------------------------------------------------------------

NR3 = re.compile(r"[+-]\d\.\d{8}E[+-]\d{2,3}\Z")


@pytest.mark.parametrize(
    ("value", "text"),
    [
        # IEC 60751:2008 table 1: Pt100 at 100 °C -> 138.5055 ohm, written NR3
        # (IEEE 488.2-1992, 8.7.4, from memory) with nine significant digits
        (138.5055, "+1.38505500E+02"),
        (1000.0, "+1.00000000E+03"),
        (0.0, "+0.00000000E+00"),
        (-0.125, "-1.25000000E-01"),
        # SCPI-1999 vol. 1, 7.2.1 (from memory): INFinity is sent as 9.9E37,
        # NAN as 9.91E37
        (math.inf, "+9.90000000E+37"),
        (-math.inf, "-9.90000000E+37"),
        (math.nan, "+9.91000000E+37"),
    ],
)
def test_numbers_are_written_as_nr3(value: float, text: str) -> None:
    assert scpi.format_number(value) == text
    assert NR3.match(text)


@given(st.floats(min_value=-1e30, max_value=1e30, allow_nan=False))
def test_nr3_round_trip_keeps_nine_significant_digits(value: float) -> None:
    text = scpi.format_number(value)
    assert NR3.match(text)
    assert float(text) == pytest.approx(value, rel=5e-9, abs=1e-300)


# --- the error queue ----------------------------------------------------------


@pytest.mark.parametrize(
    ("code", "text"),
    [
        # SCPI-1999 vol. 2, ch. 21 (from memory): standard codes and texts
        (0, "No error"),
        (-100, "Command error"),
        (-102, "Syntax error"),
        (-108, "Parameter not allowed"),
        (-109, "Missing parameter"),
        (-113, "Undefined header"),
        (-222, "Data out of range"),
        (-224, "Illegal parameter value"),
        (-350, "Queue overflow"),
        (-410, "Query INTERRUPTED"),
        # a code without its own text takes its class's (same chapter)
        (-199, "Command error"),
        (-299, "Execution error"),
    ],
)
def test_error_codes_carry_the_standard_texts(code: int, text: str) -> None:
    assert scpi.error_text(code) == text


def test_an_empty_queue_answers_no_error() -> None:
    # SCPI-1999 vol. 2, ch. 21 (from memory): 0,"No error" when nothing is queued
    q = ErrorQueue()
    assert q.pop_formatted() == '0,"No error"'
    assert q.pop() == (0, "No error")


def test_errors_come_out_oldest_first_with_their_detail() -> None:
    q = ErrorQueue()
    q.push(-113, "FOO")
    q.push(-222)
    assert q.pop_formatted() == '-113,"Undefined header;FOO"'
    assert q.pop() == (-222, "Data out of range")
    assert q.pop_formatted() == '0,"No error"'


def test_a_full_queue_ends_with_queue_overflow() -> None:
    # SCPI-1999 vol. 2, ch. 21 (from memory): the newest entry of a full queue
    # is replaced by -350; the oldest are kept
    q = ErrorQueue(capacity=3)
    for code in (-113, -222, -224, -109, -102):
        q.push(code)
    assert q.codes() == [-113, -222, -350]
    assert [q.pop()[0] for _ in range(4)] == [-113, -222, -350, 0]


def test_after_overflow_a_read_makes_room_again() -> None:
    q = ErrorQueue(capacity=2)
    for code in (-113, -222, -224):
        q.push(code)
    q.pop()
    q.push(-109)
    assert q.codes() == [-350, -109]


def test_detail_text_stays_ascii_and_quotes_are_not_doubled() -> None:
    # IEEE 488.2-1992, 8.7.8 (from memory): string response data is ASCII in double quotes
    q = ErrorQueue()
    q.push(-113, 'CONF:FRÉS "x"')
    text = q.pop_formatted()
    assert text.isascii()
    assert text.count('"') == 2


def test_queue_capacity_must_leave_room_for_the_overflow_entry() -> None:
    with pytest.raises(ValueError, match="at least 2"):
        ErrorQueue(capacity=1)


# --- status registers ---------------------------------------------------------


@pytest.mark.parametrize(
    ("code", "bit"),
    [
        # IEEE 488.2-1992, 11.5.1.1 (from memory): command error bit 5,
        # execution error bit 4, device-dependent error bit 3, query error bit 2
        (-113, 5),
        (-102, 5),
        (-222, 4),
        (-224, 4),
        (-350, 3),
        (-410, 2),
    ],
)
def test_errors_set_their_event_status_bit(code: int, bit: int) -> None:
    assert scpi.esr_bit(code) == 1 << bit


def test_no_error_sets_no_bit() -> None:
    assert scpi.esr_bit(0) == 0


@pytest.mark.parametrize(("code", "ends"), [(-113, True), (-109, True), (-222, False), (-350, False)])
def test_only_command_errors_end_the_message(code: int, ends: bool) -> None:
    assert scpi.ends_message(code) is ends


def test_status_registers_power_on_and_summaries() -> None:
    regs = scpi.StatusRegisters()
    # IEEE 488.2-1992, 11.5.1.1.2 (from memory): power-on sets PON, bit 7
    assert regs.read_esr() == 128
    # ... and *ESR? clears the register (10.12)
    assert regs.read_esr() == 0
    regs.record_error(-222)
    assert regs.status_byte(errors_queued=True, message_available=False) == 1 << 2
    regs.ese = 1 << 4
    # IEEE 488.2-1992, 11.2.1 (from memory): ESB, bit 5, summarises ESR & ESE
    assert regs.status_byte(errors_queued=False, message_available=False) == 1 << 5
    regs.sre = 1 << 5
    # ... and MSS, bit 6, summarises STB & SRE
    assert regs.status_byte(errors_queued=False, message_available=True) == (1 << 4) | (1 << 5) | (1 << 6)
