"""Station configuration: durations, the shipped station files, a corpus of broken files, warnings, chains, CLI."""

from __future__ import annotations

import copy
import dataclasses
import datetime as dt
import json
import math
import pathlib
import subprocess
import sys
import tomllib

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.config import ConfigProblems, StationConfig, load_config, parse_config, parse_duration
from soaklog.errors import ConfigError, InputError

ROOT = pathlib.Path(__file__).resolve().parents[1]
BROKEN = pathlib.Path(__file__).resolve().parent / "configs_broken"
TODAY = dt.date(2024, 7, 1)  # fixed, so the due-date warnings do not depend on the clock

# IEC 60751:2008, Callendar–Van Dusen coefficients (t >= 0 °C needs A and B only)
IEC_A = 3.9083e-3
IEC_B = -5.775e-7


def iec_resistance(t_c: float, r0_ohm: float = 100.0, a: float = IEC_A, b: float = IEC_B) -> float:
    """R(t) for t >= 0 °C from the published equation R = R0 (1 + A t + B t²)."""
    return r0_ohm * (1.0 + a * t_c + b * t_c * t_c)


def iec_temperature(r_ohm: float, r0_ohm: float = 100.0) -> float:
    """t for R >= R0: the root of the same quadratic, solved by hand here."""
    return (-IEC_A + math.sqrt(IEC_A * IEC_A - 4.0 * IEC_B * (1.0 - r_ohm / r0_ohm))) / (2.0 * IEC_B)


def problems_of(text: str, path: str = "/lab/station.toml") -> list[tuple[str, str]]:
    with pytest.raises(ConfigProblems) as info:
        parse_config(text, path, today=TODAY)
    assert info.value.problems, "ConfigProblems raised with an empty list"
    return info.value.problems


def assert_problems(got: list[tuple[str, str]], expected: list[tuple[str, str]]) -> None:
    """Every expected (key, fragment) is reported, each by a problem of its own, and nothing else."""
    left = list(got)
    for key, fragment in expected:
        match = next((p for p in left if p[0] == key and fragment in p[1]), None)
        assert match is not None, f"no problem {key!r} containing {fragment!r} in {got!r}"
        left.remove(match)
    assert not left, f"unexpected extra problems: {left!r}"


# ---------------------------------------------------------------- building blocks of small station files

STATION = '[station]\nname = "lab"\n'
METER = '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\n'
BOARD = '[[instrument]]\nname = "board"\ndriver = "serial-adc"\nport = "/dev/ttyUSB0"\n'
PT100 = '[[sensor]]\nname = "pt100"\nclass = "B"\n'
# a sensor no channel uses: its own problems cannot spread to a channel
SPARE = '[[sensor]]\nname = "spare"\nclass = "B"\n'
ON_METER = '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n'
ON_BOARD = (
    '[[channel]]\nname = "shelf"\ninstrument = "board"\ninput = "0"\nsensor = "pt100"\nlead = { ohms = 0.2 }\n'
)
VALID = STATION + METER + PT100 + ON_METER


def station(*, meter: str = "", board: str | None = None, sensor: str = "", channel: str = "") -> str:
    """The valid station with lines added to its meter, its sensor or its channel (and an unused board)."""
    extra_board = "" if board is None else BOARD + board
    return STATION + METER + meter + extra_board + PT100 + sensor + ON_METER + channel


def cal(extra: str = "", u_c: float = 0.05) -> str:
    """A calibration record line for a sensor."""
    return f'calibration = {{ certificate = "C-1", expanded_uncertainty_c = {u_c}{extra} }}\n'


def test_the_building_blocks_make_a_valid_station():
    cfg = parse_config(VALID + BOARD + ON_BOARD + SPARE, "/lab/station.toml", today=TODAY)
    assert isinstance(cfg, StationConfig)
    assert [c.name for c in cfg.channels] == ["air", "shelf"]
    assert [i.driver for i in cfg.instruments] == ["scpi", "serial-adc"]


# ---------------------------------------------------------------- parse_duration

# SI Brochure, 9th ed. (2019), table 8 (non-SI units accepted for use with the SI):
# 1 min = 60 s, 1 h = 3600 s, 1 d = 86 400 s; table 7: milli = 1e-3
@pytest.mark.parametrize(
    ("text", "seconds"),
    [
        ("500ms", 0.5),
        ("2s", 2.0),
        ("2sec", 2.0),
        ("0.5s", 0.5),
        (".25s", 0.25),
        ("15min", 900.0),
        ("1.5h", 5400.0),
        ("1000h", 3_600_000.0),
        ("7d", 604_800.0),
        (" 2 s ", 2.0),
        ("0s", 0.0),
    ],
)
def test_parse_duration_reads_a_number_and_a_unit(text, seconds):
    assert parse_duration(text) == pytest.approx(seconds, rel=1e-12)


@pytest.mark.parametrize(
    "text",
    [
        "2",        # no unit
        "",         # nothing
        "s",        # no number
        "2 weeks",  # unknown unit
        "2y",
        "5m",       # minutes or metres: ambiguous, so not accepted
        "-2s",      # negative
        "+2s",
        "2s5",
        "1e3s",
        "inf s",
        "nan s",
        "2 s s",
    ],
)
def test_parse_duration_rejects_text_that_is_not_a_duration(text):
    with pytest.raises(InputError, match="not a duration"):
        parse_duration(text)


@pytest.mark.parametrize("value", [2, 2.0, True, None, b"2s", ["2s"], {"s": 2}])
def test_parse_duration_rejects_values_that_are_not_text(value):
    with pytest.raises(InputError, match="a duration is text with a unit"):
        parse_duration(value)


_UNITS_S = {"ms": 1e-3, "s": 1.0, "min": 60.0, "h": 3600.0, "d": 86_400.0}  # SI Brochure, tables 7 and 8


@given(st.integers(min_value=0, max_value=10**7), st.sampled_from(sorted(_UNITS_S)))
def test_parse_duration_round_trips_whole_numbers(n, unit):
    assert parse_duration(f"{n}{unit}") == pytest.approx(n * _UNITS_S[unit], rel=1e-12)


@given(st.text(max_size=12))
def test_parse_duration_never_fails_other_than_with_input_error(text):
    try:
        s = parse_duration(text)
    except InputError:
        return
    assert math.isfinite(s) and s >= 0


# ---------------------------------------------------------------- the shipped station files

def test_demo_station_loads_with_eight_channels_on_two_instruments():
    cfg = load_config(ROOT / "configs" / "demo.toml", today=TODAY)
    assert len(cfg.channels) == 8
    assert len(cfg.instruments) == 2
    assert {c.instrument for c in cfg.channels} == {i.name for i in cfg.instruments}
    # the demo file says: database = "../soaklog-demo.db", relative to itself
    assert pathlib.Path(cfg.database) == (ROOT / "soaklog-demo.db").resolve()


def test_packaged_demo_is_byte_identical_to_configs_demo():
    assert (ROOT / "daq" / "data" / "demo.toml").read_bytes() == (ROOT / "configs" / "demo.toml").read_bytes()


STATION_FILES = sorted((ROOT / "configs").glob("*.toml"))


def test_configs_folder_holds_the_demo():
    assert ROOT / "configs" / "demo.toml" in STATION_FILES


@pytest.mark.parametrize("path", STATION_FILES, ids=lambda p: p.name)
def test_every_station_file_in_configs_is_valid(path):
    cfg = load_config(path, today=TODAY)
    assert cfg.channels
    for channel in cfg.channels:
        cfg.chain(channel)  # every channel gets a chain, not an error at run time


def test_station_config_is_frozen():
    cfg = parse_config(VALID, "/lab/station.toml", today=TODAY)
    with pytest.raises(dataclasses.FrozenInstanceError):
        cfg.station = "other"  # type: ignore[misc]


# ---------------------------------------------------------------- the corpus of broken files (tests/configs_broken/)

def _expected_in(path: pathlib.Path) -> list[tuple[str, str]]:
    """The file's own list of expected problems: ``# problem: KEY -> FRAGMENT`` (KEY ``(file)``: no key)."""
    out = []
    for line in path.read_text(encoding="utf-8").splitlines():
        if line.startswith("# problem:"):
            key, fragment = line[len("# problem:"):].split("->", 1)
            key = key.strip()
            out.append(("" if key == "(file)" else key, fragment.strip()))
    return out


BROKEN_FILES = sorted(BROKEN.glob("*.toml"))


def test_broken_corpus_has_its_files_and_a_file_with_many_problems():
    names = {p.name for p in BROKEN_FILES}
    assert {"many_problems.toml", "syntax_error.toml", "unknown_keys.toml", "wrong_types.toml"} <= names
    assert max(len(_expected_in(p)) for p in BROKEN_FILES) >= 5


@pytest.mark.parametrize("path", BROKEN_FILES, ids=lambda p: p.name)
def test_broken_file_reports_every_problem_at_once(path):
    expected = _expected_in(path)
    assert expected, f"{path.name} lists no '# problem:' lines"
    with pytest.raises(ConfigProblems) as info:
        load_config(path, today=TODAY)
    exc = info.value
    assert_problems(exc.problems, expected)
    n = len(expected)
    assert str(exc).startswith(f"{n} problem{'s' if n != 1 else ''} in {path}; nothing was started")
    for key, _ in expected:
        assert (f"{path}: {key}: " if key else f"{path}: ") in str(exc)
    assert isinstance(exc, ConfigError) and exc.exit_code == 2
    assert exc.file == str(path)


# ---------------------------------------------------------------- the corpus of broken texts (inline)

def case(id_: str, text: str, *expected: tuple[str, str]):
    return pytest.param(text, list(expected), id=id_)


BROKEN_TEXTS = [
    # TOML syntax
    case("toml-unclosed-string", STATION.replace('"lab"', '"lab') + METER, ("", "not valid TOML")),
    case("toml-key-given-twice", STATION + 'name = "again"\n' + METER + PT100 + ON_METER, ("", "not valid TOML")),
    case("toml-table-twice", STATION + "[station]\n" + METER, ("", "not valid TOML")),
    case("toml-value-with-unit", STATION + "ambient_c = 23 °C\n" + METER, ("", "not valid TOML")),
    case("toml-array-unclosed", VALID.replace('class = "B"', "coefficients = [3.9e-3, -5.8e-7"), ("", "not valid TOML")),
    # unknown keys, with a suggestion where one is close
    case("unknown-top-level", VALID + "[chanel]\n", ("chanel", "unknown key; did you mean 'channel'?")),
    case("unknown-station-key", STATION + 'comit_interval = "1s"\n' + METER + PT100 + ON_METER,
         ("station.comit_interval", "did you mean 'commit_interval'?")),
    case("unknown-run-key", VALID + '[run]\nplaned_duration = "10h"\n',
         ("run.planed_duration", "did you mean 'planned_duration'?")),
    case("unknown-instrument-key", station(meter="rang_ohm = 100.0\n"),
         ("instrument[1].rang_ohm", "did you mean 'range_ohm'?")),
    case("unknown-accuracy-key", station(meter="accuracy = { pct_rdg = 0.01 }\n"),
         ("instrument[1].accuracy.pct_rdg", "did you mean 'pct_reading'?"),
         ("instrument[1].accuracy.pct_reading", "is required")),
    case("unknown-calibration-key",
         station(sensor='calibration = { certficate = "C-1", expanded_uncertainty_c = 0.05 }\n'),
         ("sensor[1].calibration.certficate", "did you mean 'certificate'?"),
         ("sensor[1].calibration.certificate", "is required")),
    case("unknown-channel-key", VALID + "exitation_ma = 0.1\n", ("channel[1].exitation_ma", "did you mean 'excitation_ma'?")),
    case("unknown-key-nothing-close", VALID + 'colour = "red"\n',
         ("channel[1].colour", "unknown key; allowed: excitation_ma, imbalance_ohm, input, instrument")),
    # wrong types
    case("text-for-number-ambient", STATION + 'ambient_c = "23"\n' + METER + PT100 + ON_METER,
         ("station.ambient_c", "must be a number, got '23'")),
    case("text-for-number-range", station(meter='range_ohm = "1000"\n'),
         ("instrument[1].range_ohm", "must be a number, got '1000'")),
    case("text-for-number-dissipation", station(sensor='dissipation_mw_per_k = "10"\n'),
         ("sensor[1].dissipation_mw_per_k", "must be a number, got '10'")),
    case("number-for-duration-commit", STATION + "commit_interval = 1\n" + METER + PT100 + ON_METER,
         ("station.commit_interval", 'a duration is text with a unit, like "2s"')),
    case("number-for-duration-planned", VALID + "[run]\nplanned_duration = 1000\n",
         ("run.planned_duration", "a duration is text with a unit")),
    case("number-for-duration-interval", station(board="interval = 5\n"),
         ("instrument[2].interval", "a duration is text with a unit")),
    case("float-for-duration-timeout", station(board="timeout = 2.5\n"),
         ("instrument[2].timeout", "a duration is text with a unit")),
    case("bool-for-int-bits", station(board="bits = true\n"),
         ("instrument[2].bits", "must be an integer, got True")),
    case("bool-for-int-wiring", VALID + "wiring = true\n", ("channel[1].wiring", "must be an integer, got True")),
    case("bool-for-number-range", station(meter="range_ohm = true\n"),
         ("instrument[1].range_ohm", "must be a number, got True")),
    case("float-for-int-baudrate", station(board="baudrate = 9600.0\n"),
         ("instrument[2].baudrate", "must be an integer, got 9600.0")),
    case("int-for-bool", station(meter="offset_compensation = 1\n"),
         ("instrument[1].offset_compensation", "must be true or false, got 1")),
    case("number-for-text", STATION + METER.replace('"TCPIP0::127.0.0.1::5025::SOCKET"', "5025") + PT100 + ON_METER,
         ("instrument[1].resource", "must be text, got 5025")),
    case("text-for-list", VALID + SPARE + 'coefficients = "3.9083e-3, -5.775e-7, -4.183e-12"\n',
         ("sensor[2].coefficients", "must be three numbers [A, B, C]")),
    case("two-coefficients", VALID + SPARE + "coefficients = [3.9083e-3, -5.775e-7]\n",
         ("sensor[2].coefficients", "must be three numbers [A, B, C]")),
    case("table-for-array", STATION + "[instrument]\nname = \"x\"\n",
         ("instrument", "must be an array of tables ([[instrument]])")),
    # missing required keys
    case("no-station-name", METER + PT100 + ON_METER, ("station.name", "is required")),
    case("no-instrument-name", STATION + METER.replace('name = "meter"\n', "") + PT100,
         ("instrument[1].name", "is required")),
    case("no-driver", VALID + '[[instrument]]\nname = "spare-meter"\n', ("instrument[2].driver", "is required")),
    case("no-resource", STATION + METER.replace('resource = "TCPIP0::127.0.0.1::5025::SOCKET"\n', "") + PT100 + ON_METER,
         ("instrument[1].resource", "is required")),
    case("no-port", STATION + METER + BOARD.replace('port = "/dev/ttyUSB0"\n', "") + PT100 + ON_METER,
         ("instrument[2].port", "is required")),
    case("no-sensor-name", VALID + '[[sensor]]\nclass = "A"\n', ("sensor[2].name", "is required")),
    case("no-channel-input", VALID.replace('input = "101"\n', ""), ("channel[1].input", "is required")),
    case("empty-channel-input", VALID.replace('input = "101"', 'input = ""'), ("channel[1].input", "is required")),
    case("no-channel-sensor", VALID.replace('sensor = "pt100"\n', ""), ("channel[1].sensor", "is required")),
    case("no-calibration-uncertainty", station(sensor='calibration = { certificate = "C-1" }\n'),
         ("sensor[1].calibration.expanded_uncertainty_c", "is required")),
    case("no-channels", STATION + METER + PT100, ("channel", "no channels: add at least one [[channel]]")),
    # references to things the file does not define
    case("unknown-instrument", VALID.replace('instrument = "meter"', 'instrument = "dmm"'),
         ("channel[1].instrument", "no instrument named 'dmm'; known: meter")),
    case("unknown-sensor", VALID.replace('sensor = "pt100"', 'sensor = "pt1000"'),
         ("channel[1].sensor", "no sensor named 'pt1000'; known: pt100")),
    case("alarm-unknown-channel", VALID + '[[alarm]]\nname = "hot"\nkind = "high"\nlimit_c = 130.0\nchannels = ["door"]\n',
         ("alarm[1].channels", "no channel named 'door'")),
    # duplicates
    case("duplicate-instrument", VALID + METER.replace("127.0.0.1", "127.0.0.2"), ("instrument[2].name", "'meter' is used twice")),
    case("duplicate-sensor", VALID + PT100, ("sensor[2].name", "'pt100' is used twice")),
    case("duplicate-channel", VALID + ON_METER.replace('"101"', '"102"'), ("channel[2].name", "'air' is used twice")),
    case("duplicate-input", VALID + ON_METER.replace('"air"', '"door"'),
         ("channel[2].input", "input 101 of meter is used by another channel")),
    case("duplicate-input-number-and-text", VALID + ON_METER.replace('"air"', '"door"').replace('"101"', "101"),
         ("channel[2].input", "input 101 of meter is used by another channel")),
    case("name-with-a-space", VALID.replace('name = "air"', 'name = "air supply"'),
         ("channel[1].name", "use letters, digits, '-', '_' or '.'")),
    # impossible values
    case("negative-range", station(meter="range_ohm = -1000.0\n"),
         ("instrument[1].range_ohm", "must be positive, got -1000.0")),
    case("infinite-range", station(meter="range_ohm = inf\n"),
         ("instrument[1].range_ohm", "must be a finite number, got inf")),
    case("channel-wiring-5", VALID + "wiring = 5\n", ("channel[1].wiring", "must be 2, 3 or 4, got 5")),
    case("meter-wiring-5", station(meter="wiring = 5\n"),
         ("instrument[1].wiring", "a meter measures 2- or 4-wire, got 5")),
    case("three-wire-on-a-meter", VALID + "wiring = 3\nlead = { ohms = 0.2 }\n",
         ("channel[1].wiring", "a multimeter measures 2- or 4-wire, not 3-wire")),
    case("commit-interval-over-1s", STATION + 'commit_interval = "2s"\n' + METER + PT100 + ON_METER,
         ("station.commit_interval", "must be at most 1 s")),
    case("commit-interval-zero", STATION + 'commit_interval = "0ms"\n' + METER + PT100 + ON_METER,
         ("station.commit_interval", "must be longer than 0 s")),
    case("interval-zero", station(board='interval = "0s"\n'),
         ("instrument[2].interval", "must be longer than 0 s")),
    case("nplc-zero", station(meter="nplc = 0\n"), ("instrument[1].nplc", "must be within 0.001…1000")),
    case("nplc-huge", station(meter="nplc = 5000\n"), ("instrument[1].nplc", "must be within 0.001…1000")),
    case("bits-4", station(board="bits = 4\n"), ("instrument[2].bits", "must be 8…24 (the board's counts), got 4")),
    case("bits-40", station(board="bits = 40\n"), ("instrument[2].bits", "must be 8…24 (the board's counts), got 40")),
    case("negative-reference", station(board="reference_ohm = -400.0\n"),
         ("instrument[2].reference_ohm", "must be positive")),
    case("negative-meter-accuracy", station(meter="accuracy = { pct_reading = -0.01 }\n"),
         ("instrument[1].accuracy.pct_reading", "must not be negative")),
    case("negative-test-current", station(meter='test_current_a = { "1000" = -1e-3 }\n'),
         ("instrument[1].test_current_a.1000", "must be a positive current in A")),
    case("test-current-key-not-a-range", station(meter='test_current_a = { "low" = 1e-3 }\n'),
         ("instrument[1].test_current_a.low", "keys are ranges in ohm")),
    case("resource-not-visa", STATION + METER.replace("TCPIP0::127.0.0.1::5025::SOCKET", "192.0.2.5") + PT100 + ON_METER,
         ("instrument[1].resource", "must be a VISA resource string")),
    case("unknown-driver", VALID + '[[instrument]]\nname = "spare"\ndriver = "gpib"\n',
         ("instrument[2].driver", "must be one of scpi, serial-adc, got 'gpib'")),
    case("calibration-span-reversed",
         station(sensor=cal(", span_c = [150.0, -50.0]")),
         ("sensor[1].calibration.span_c", "with low < high")),
    case("calibration-span-empty",
         station(sensor=cal(", span_c = [50, 50]")),
         ("sensor[1].calibration.span_c", "with low < high")),
    case("calibration-negative-uncertainty",
         station(sensor=cal(u_c=-0.05)),
         ("sensor[1].calibration.expanded_uncertainty_c", "must not be negative")),
    case("calibration-k-zero",
         station(sensor=cal(", k = 0")),
         ("sensor[1].calibration.k", "must be positive")),
    case("negative-dissipation", station(sensor="dissipation_mw_per_k = -3.0\n"),
         ("sensor[1].dissipation_mw_per_k", "must be positive, got -3.0")),
    case("zero-r0", station(sensor="r0_ohm = 0.0\n"), ("sensor[1].r0_ohm", "must be positive")),
    # dR/dt = R0 (A + 2 B t) < 0 above t = -A / (2 B) = 195 °C for B = -1e-5: not a rising curve
    case("falling-curve", VALID + SPARE + "coefficients = [3.9083e-3, -1e-5, 0.0]\n",
         ("sensor[2].coefficients", "do not give a rising curve")),
    case("negative-a", VALID + SPARE + "coefficients = [-3.9083e-3, -5.775e-7, -4.183e-12]\n",
         ("sensor[2].coefficients", "coefficient A must be positive")),
    case("falling-calibration-curve",
         VALID + SPARE + cal(", coefficients = [3.9e-3, -1e-5, 0.0]"),
         ("sensor[2].calibration.coefficients", "do not give a rising curve")),
    case("curve-and-coefficients", VALID + SPARE + 'curve = "iec60751"\ncoefficients = [3.9083e-3, -5.775e-7, -4.183e-12]\n',
         ("sensor[2].coefficients", "give curve or coefficients, not both")),
    case("unknown-class", VALID.replace('class = "B"', 'class = "Q"'), ("sensor[1].class", "unknown tolerance class 'Q'")),
    case("class-element-contradict", VALID.replace('class = "B"', 'class = "F0.3"\nelement = "wire"'),
         ("sensor[1].class", "is a film class, not wire")),
    case("element-without-class", VALID.replace('class = "B"', 'element = "film"'),
         ("sensor[1].element", "only qualifies a class")),
    case("unknown-curve", VALID + SPARE + 'curve = "pt385"\n', ("sensor[2].curve", "unknown RTD curve 'pt385'")),
    case("not-platinum", VALID.replace('class = "B"', 'class = "B"\ntype = "ni"'),
         ("sensor[1].type", "got 'ni'")),
    case("zero-excitation", VALID + "excitation_ma = 0.0\n", ("channel[1].excitation_ma", "must be positive")),
    case("range-on-a-board-channel", STATION + BOARD + PT100 + ON_BOARD + "range_ohm = 100.0\n",
         ("channel[1].range_ohm", "a range applies to a multimeter channel")),
    case("imbalance-on-four-wire", VALID + "imbalance_ohm = 0.01\n", ("channel[1].imbalance_ohm", "applies to 3-wire channels only")),
    case("imbalance-on-two-wire", VALID + "wiring = 2\nimbalance_ohm = 0.01\nlead = { ohms = 0.2 }\n",
         ("channel[1].lead", "applies to 3-wire only")),
    case("lead-tolerance-over-1", VALID + "wiring = 2\nlead = { ohms = 0.2, tolerance = 2.0 }\n",
         ("channel[1].lead.tolerance", "a fraction 0…1, got 2.0")),
    case("lead-negative-ohms", VALID + "wiring = 2\nlead = { ohms = -0.2 }\n", ("channel[1].lead.ohms", "must not be negative")),
    case("lead-unknown-gauge", VALID + "wiring = 2\nlead = { awg = 99, inside_m = 2.0 }\n", ("channel[1].lead", "outside 0…40")),
    case("lead-without-length", VALID + "wiring = 2\nlead = { awg = 24 }\n", ("channel[1].lead", "needs a length")),
    case("alarm-unknown-kind", VALID + '[[alarm]]\nname = "hot"\nkind = "hotter"\nchannel = "air"\n',
         ("alarm[1].kind", "must be one of")),
    # a lead missing where the wiring needs one
    case("two-wire-without-lead", VALID + "wiring = 2\n", ("channel[1].lead", "a 2-wire channel needs its lead")),
    case("three-wire-without-lead", STATION + BOARD + PT100 + ON_BOARD.replace("lead = { ohms = 0.2 }\n", ""),
         ("channel[1].lead", "a 3-wire channel needs its lead")),
]


@pytest.mark.parametrize(("text", "expected"), BROKEN_TEXTS)
def test_broken_text_is_reported_by_key(text, expected):
    assert_problems(problems_of(text), expected)


def test_a_syntax_error_names_its_line():
    # the line and column come from Python's tomllib
    (problem,) = problems_of(STATION + "ambient_c = 23 °C\n")
    assert problem[0] == ""
    assert "(at line 3" in problem[1]


def test_problems_name_the_file_and_say_nothing_started():
    text = STATION + 'commit_interval = "2s"\n' + METER + "nplc = 0\n" + PT100 + "r0_ohm = 0.0\n" + ON_METER + "wiring = 5\n"
    with pytest.raises(ConfigProblems) as info:
        parse_config(text, "/lab/station.toml", today=TODAY)
    lines = str(info.value).splitlines()
    assert lines[0] == "4 problems in /lab/station.toml; nothing was started"
    assert [ln.split(": ")[1] for ln in lines[1:]] == [
        "station.commit_interval", "instrument[1].nplc", "sensor[1].r0_ohm", "channel[1].wiring",
    ]
    assert info.value.key == "station.commit_interval"


def test_one_problem_is_singular():
    with pytest.raises(ConfigProblems, match=r"^1 problem in /lab/station.toml; nothing was started"):
        parse_config(VALID + "wiring = 5\n", "/lab/station.toml", today=TODAY)


def test_same_input_number_on_two_instruments_is_fine():
    cfg = parse_config(
        STATION + METER + BOARD + PT100 + ON_METER.replace('"101"', '"0"') + ON_BOARD, "/lab/s.toml", today=TODAY
    )
    assert [(c.instrument, c.input) for c in cfg.channels] == [("meter", "0"), ("board", "0")]


def test_missing_file_is_a_problem():
    with pytest.raises(ConfigProblems, match="file not found"):
        load_config("/nonexistent/station.toml")


# ---------------------------------------------------------------- bugs found by these tests, since fixed

def test_calibration_due_as_a_datetime_is_a_problem_not_a_crash():
    text = VALID.replace(
        'class = "B"\n', 'class = "B"\n' + cal(", due = 2020-01-01T00:00:00")
    )
    try:
        cfg = parse_config(text, "/lab/station.toml", today=TODAY)
    except ConfigProblems as exc:
        assert exc.problems[0][0] == "sensor[1].calibration.due"
    else:
        assert any("was due 2020-01-01" in w for w in cfg.warnings)


@pytest.mark.parametrize(
    ("text", "key"),
    [
        pytest.param(station(meter="interval = 10\n"), "instrument[1].interval", id="instrument"),
        pytest.param(station(sensor='curve = "pt385"\n'), "sensor[1].curve", id="sensor"),
    ],
)
def test_a_broken_item_does_not_make_its_users_unknown(text, key):
    assert [k for k, _ in problems_of(text)] == [key]


def test_lead_given_as_ohms_and_as_gauge_with_lengths_is_a_problem():
    problems = problems_of(VALID + "wiring = 2\nlead = { ohms = 0.2, awg = 24, inside_m = 2.0 }\n")
    assert problems[0][0].startswith("channel[1].lead")


def test_bad_element_is_reported_at_its_own_key():
    (problem,) = problems_of(VALID.replace('class = "B"', 'class = "B"\nelement = "glass"'))
    assert problem[0] == "sensor[1].element"


def test_infinite_test_current_is_a_problem():
    problems = problems_of(station(meter='test_current_a = { "1000" = inf }\n'))
    assert problems[0][0] == "instrument[1].test_current_a.1000"


# ---------------------------------------------------------------- no exception but ConfigProblems escapes (Hypothesis)

_MODEL = {
    "station": {"name": "lab", "database": "lab.db", "commit_interval": "1s", "ambient_c": 23.0},
    "run": {"name": "fuzz", "planned_duration": "10h"},
    "instrument": [
        {"name": "meter", "driver": "scpi", "resource": "TCPIP0::127.0.0.1::5025::SOCKET", "interval": "2s",
         "range_ohm": 1000.0, "nplc": 1.0, "accuracy": {"pct_reading": 0.01, "pct_range": 0.004}},
        {"name": "board", "driver": "serial-adc", "port": "/dev/ttyUSB0", "bits": 24, "reference_ohm": 400.0,
         "excitation_ma": 0.25},
    ],
    "sensor": [
        {"name": "pt100", "class": "A", "element": "wire", "dissipation_mw_per_k": 5.0,
         "calibration": {"certificate": "C-1", "expanded_uncertainty_c": 0.05, "span_c": [-50.0, 150.0],
                         "due": dt.date(2030, 1, 1)}},
        {"name": "pt1000", "r0_ohm": 1000.0, "class": "B", "curve": "iec60751"},
    ],
    "channel": [
        {"name": "air", "instrument": "meter", "input": "101", "sensor": "pt100"},
        {"name": "case", "instrument": "meter", "input": "102", "sensor": "pt1000", "wiring": 2, "range_ohm": 10000.0,
         "lead": {"awg": 26, "inside_m": 2.0, "outside_m": 6.0}},
        {"name": "shelf", "instrument": "board", "input": "0", "sensor": "pt100", "lead": {"ohms": 0.2}},
    ],
    "alarm": [{"name": "hot", "kind": "high", "channels": ["air"], "limit_c": 130.0}],
}

_TARGETS = [
    ("station", "name"), ("station", "database"), ("station", "commit_interval"), ("station", "ambient_c"),
    ("run", "planned_duration"),
    ("instrument", 0, "name"), ("instrument", 0, "driver"), ("instrument", 0, "resource"), ("instrument", 0, "interval"),
    ("instrument", 0, "wiring"), ("instrument", 0, "range_ohm"), ("instrument", 0, "nplc"), ("instrument", 0, "accuracy"),
    ("instrument", 0, "test_current_a"), ("instrument", 0, "offset_compensation"),
    ("instrument", 1, "driver"), ("instrument", 1, "port"), ("instrument", 1, "bits"), ("instrument", 1, "wiring"),
    ("instrument", 1, "reference_ohm"), ("instrument", 1, "excitation_ma"),
    ("sensor", 0, "name"), ("sensor", 0, "class"), ("sensor", 0, "element"), ("sensor", 0, "r0_ohm"),
    ("sensor", 0, "coefficients"), ("sensor", 0, "dissipation_mw_per_k"), ("sensor", 0, "calibration"),
    ("sensor", 0, "calibration", "span_c"), ("sensor", 0, "calibration", "due"), ("sensor", 0, "calibration", "k"),
    ("sensor", 1, "curve"),
    ("channel", 0, "instrument"), ("channel", 0, "input"), ("channel", 0, "sensor"), ("channel", 0, "wiring"),
    ("channel", 0, "excitation_ma"), ("channel", 1, "lead"), ("channel", 1, "lead", "awg"), ("channel", 1, "range_ohm"),
    ("channel", 2, "lead", "ohms"), ("channel", 2, "imbalance_ohm"), ("alarm", 0, "channels"),
]

# magnitudes up to 1e9 and the non-finite values: near 1e308 an accepted R0 (it has no upper bound) overflows numpy
# in the warning code, a RuntimeWarning that pytest's filterwarnings=error turns into an exception
_FLOATS = st.one_of(st.floats(min_value=-1e9, max_value=1e9), st.sampled_from([math.nan, math.inf, -math.inf]))
_SCALARS = st.one_of(
    st.integers(min_value=-10**6, max_value=10**6),
    _FLOATS,
    st.booleans(),
    st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=10),
    st.sampled_from(["", "2s", "0s", "auto", "scpi", "serial-adc", "meter", "pt100", "A", "F0.3", "film", "iec60751", "101"]),
    st.dates(),  # TOML local dates (a datetime is refused: see the test above)
    st.times(),
)
_VALUES = st.one_of(
    st.none(),  # delete the key
    _SCALARS,
    st.lists(st.one_of(st.integers(-1000, 1000), _FLOATS), max_size=4),
    # finite values in tables: an infinite test current is the known bug of test_infinite_test_current_is_a_problem
    st.dictionaries(st.sampled_from(["ohms", "awg", "1000", "pct_reading", "x"]),
                    st.one_of(_SCALARS.filter(lambda v: not (isinstance(v, float) and math.isinf(v)))), max_size=3),
)


def _literal(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, (dt.date, dt.time)):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(_literal(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{json.dumps(k)} = {_literal(x)}" for k, x in v.items()) + " }"
    raise TypeError(v)


def _document(model: dict) -> str:
    lines: list[str] = []
    for name, value in model.items():
        for table in value if isinstance(value, list) else [value]:
            lines.append(f"[[{name}]]" if isinstance(value, list) else f"[{name}]")
            lines.extend(f"{json.dumps(k)} = {_literal(v)}" for k, v in table.items())
    return "\n".join(lines) + "\n"


def test_fuzz_model_is_a_valid_station_and_the_writer_is_faithful():
    text = _document(_MODEL)
    assert tomllib.loads(text) == _MODEL
    cfg = parse_config(text, "/lab/station.toml", today=TODAY)
    assert len(cfg.channels) == 3


@settings(max_examples=250, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(_TARGETS), _VALUES), min_size=1, max_size=3))
def test_any_value_anywhere_gives_a_station_or_problems_never_a_crash(changes):
    model = copy.deepcopy(_MODEL)
    for path, value in changes:
        node = model
        for step in path[:-1]:
            node = node[step] if isinstance(node, list) or step in node else None
            if not isinstance(node, (dict, list)):
                break
        else:
            if isinstance(node, dict):
                if value is None:
                    node.pop(path[-1], None)
                else:
                    node[path[-1]] = value
    try:
        cfg = parse_config(_document(model), "/lab/station.toml", today=TODAY)
    except ConfigProblems as exc:
        assert exc.problems
        assert all(isinstance(k, str) and isinstance(m, str) and m for k, m in exc.problems)
        return
    for channel in cfg.channels:
        cfg.chain(channel)


# ---------------------------------------------------------------- warnings (never fatal)

def _warnings(text: str, today: dt.date = TODAY) -> tuple[str, ...]:
    cfg = parse_config(text, "/lab/station.toml", today=today)
    assert cfg.channels  # a warning never stops loading
    return cfg.warnings


# IEC 60751:2008 tolerance classes (from memory of its tables): AA ±(0.10 + 0.0017|t|), A ±(0.15 + 0.002|t|),
# B ±(0.3 + 0.005|t|), C ±(0.6 + 0.01|t|); F/W0.1, 0.15, 0.3, 0.6 the same a-values for film and wire elements
@pytest.mark.parametrize(
    ("cls", "warns"),
    [("AA", True), ("A", True), ("F0.1", True), ("W0.15", True), ("B", False), ("C", False), ("F0.3", False)],
)
def test_two_wire_with_a_close_tolerance_class_warns(cls, warns):
    text = VALID.replace('class = "B"', f'class = "{cls}"\ndissipation_mw_per_k = 10.0') + "wiring = 2\nlead = { ohms = 0.2 }\n"
    got = [w for w in _warnings(text) if "2-wire with a class" in w]
    if warns:
        (w,) = got
        assert w.startswith("channel air: 2-wire with a class ")
        assert "use 3- or 4-wire" in w
    else:
        assert got == []


def _pt1000(channel_extra: str = "", sensor_extra: str = "", meter_range: float = 1000.0) -> str:
    return (STATION + METER + f"range_ohm = {meter_range}\n" + '[[sensor]]\nname = "pt1000"\nr0_ohm = 1000.0\nclass = "B"\n'
            + sensor_extra + ON_METER.replace('"pt100"', '"pt1000"') + channel_extra)


def test_pt1000_at_1_ma_without_dissipation_constant_warns():
    # 1 kΩ range -> 1 mA (common practice, no published source, as in DEFAULT_TEST_CURRENT_A)
    (w,) = [w for w in _warnings(_pt1000()) if "self-heats" in w]
    assert w.startswith("channel air: a Pt1000 at 1 mA self-heats visibly")
    assert "give dissipation_mw_per_k" in w


def test_pt1000_at_100_ua_does_not_warn_about_self_heating():
    # 10 kΩ range -> 100 µA (common practice, no published source)
    for text in (_pt1000(meter_range=10000.0), _pt1000(channel_extra="range_ohm = 10000.0\n")):
        assert not [w for w in _warnings(text) if "self-heat" in w]


def test_known_self_heating_over_a_tenth_of_a_kelvin_warns_with_its_size():
    # ΔT = P/δ with P = I²R (IEC 60751 self-heating clause, from memory): (1 mA)² · 1000 Ω / 3 mW/K = 0.33 K
    rise_k = (1e-3) ** 2 * 1000.0 / 3e-3
    (w,) = [w for w in _warnings(_pt1000(sensor_extra="dissipation_mw_per_k = 3.0\n")) if "self-heating about" in w]
    assert f"self-heating about {rise_k:.2f} K at 0 °C with 1 mA" in w


def test_range_that_over_ranges_warns_where_it_begins():
    # a decade range reads to 120 % of itself (common practice, no published source); on the 100 ohm range a Pt100
    # reaches 120 ohm at the root of the IEC 60751 equation (about 51.6 °C; table 1: 119.78 ohm at 51 °C, from memory)
    t_c = iec_temperature(120.0)
    text = STATION + METER + "range_ohm = 100.0\n" + PT100 + "dissipation_mw_per_k = 10.0\n" + ON_METER
    (w,) = [w for w in _warnings(text) if "over-ranges" in w]
    assert w == f"channel air: the 100 ohm range of meter over-ranges above about {t_c:.0f} °C for this sensor"


def test_pt100_on_the_1_kohm_range_does_not_over_range():
    # IEC 60751:2008 table 1: 390.48 ohm at 850 °C, well inside 1 kΩ
    assert not [w for w in _warnings(VALID) if "over-ranges" in w]


@pytest.mark.parametrize(
    ("due", "warns"),
    [(dt.date(2024, 6, 30), True), (dt.date(2024, 7, 1), False), (dt.date(2025, 1, 1), False)],
)
def test_calibration_past_its_due_date_warns(due, warns):
    text = VALID.replace(
        'class = "B"\n', cal(f", due = {due.isoformat()}")
    )
    got = [w for w in _warnings(text, today=dt.date(2024, 7, 1)) if "was due" in w]
    if warns:
        assert got == [f"sensor[1].calibration.due: calibration of pt100 was due {due.isoformat()}; "
                       "its uncertainty may no longer hold"]
    else:
        assert got == []


def test_sensor_without_class_or_calibration_warns():
    text = VALID.replace('class = "B"\n', "")
    assert "sensor pt100: no class or calibration: its uncertainty leaves the sensor out" in _warnings(text)
    assert not [w for w in _warnings(VALID) if "no class or calibration" in w]


def test_autorange_warns():
    text = station(meter='range_ohm = "auto"\n')
    (w,) = [w for w in _warnings(text) if "autorange" in w]
    assert w.startswith("instrument[1]: autorange changes the test current")


def test_autorange_leaves_the_range_and_the_current_open():
    cfg = parse_config(station(meter='range_ohm = "auto"\n'), "/lab/station.toml", today=TODAY)
    assert cfg.instruments[0].range_ohm() is None
    assert cfg.chain(cfg.channels[0]).excitation is None


def test_lead_on_a_four_wire_channel_is_ignored_with_a_warning():
    assert "channel[1].lead: ignored for a 4-wire channel" in _warnings(VALID + "lead = { ohms = 0.2 }\n")


def test_many_warnings_at_once_still_load():
    text = (
        STATION + METER + "range_ohm = 100.0\n"
        + '[[sensor]]\nname = "ref"\nclass = "A"\n'
        + '[[sensor]]\nname = "bare"\n'
        + '[[sensor]]\nname = "old"\nclass = "B"\n'
        + cal(", due = 2020-01-01")
        + ON_METER.replace('"pt100"', '"ref"') + "wiring = 2\nlead = { ohms = 0.2 }\n"
        + ON_METER.replace('"air"', '"door"').replace('"101"', '"102"').replace('"pt100"', '"bare"')
        + ON_METER.replace('"air"', '"case"').replace('"101"', '"103"').replace('"pt100"', '"old"')
    )
    cfg = parse_config(text, "/lab/station.toml", today=TODAY)
    assert [c.name for c in cfg.channels] == ["air", "door", "case"]
    for fragment in ("2-wire with a class A", "over-ranges", "was due 2020-01-01", "no class or calibration"):
        assert any(fragment in w for w in cfg.warnings), fragment


# ---------------------------------------------------------------- the database path

def _write(folder: pathlib.Path, text: str, name: str = "station.toml") -> pathlib.Path:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def _with_database(db: str) -> str:
    return VALID.replace('name = "lab"\n', f'name = "lab"\ndatabase = {json.dumps(db)}\n', 1)


@pytest.mark.parametrize(
    ("db", "where"),
    [("run.db", "site/run.db"), ("data/run.db", "site/data/run.db"), ("../run.db", "run.db"), ("./a/../b.db", "site/b.db")],
)
def test_relative_database_path_is_taken_from_the_config_folder(tmp_path, monkeypatch, db, where):
    path = _write(tmp_path / "site", _with_database(db))
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    assert pathlib.Path(load_config(path).database) == (tmp_path / where).resolve()


def test_relative_config_path_and_relative_database(tmp_path, monkeypatch):
    _write(tmp_path / "site", _with_database("run.db"))
    monkeypatch.chdir(tmp_path)
    assert pathlib.Path(load_config("site/station.toml").database) == (tmp_path / "site" / "run.db").resolve()


def test_absolute_database_path_is_kept(tmp_path):
    db = tmp_path / "store" / "run.db"
    path = _write(tmp_path / "site", _with_database(str(db)))
    assert load_config(path).database == str(db)


def test_default_database_lies_beside_the_config(tmp_path):
    path = _write(tmp_path / "site", VALID)
    assert pathlib.Path(load_config(path).database).parent == (tmp_path / "site").resolve()


# ---------------------------------------------------------------- the measurement chain of a channel

def _chain(text: str, channel: int = 0):
    cfg = parse_config(text, "/lab/station.toml", today=TODAY)
    return cfg.chain(cfg.channels[channel])


ACCURATE_METER = METER + "accuracy = { pct_reading = 0.01, pct_range = 0.004 }\n"


# test currents per range: common practice, no published source (as in DEFAULT_TEST_CURRENT_A):
# about 1 mA on the 100 ohm and 1 kΩ ranges, 100 µA on 10 kΩ
@pytest.mark.parametrize(
    ("meter_extra", "channel_extra", "current_a", "range_ohm"),
    [
        pytest.param("range_ohm = 100.0\n", "", 1e-3, 100.0, id="100-ohm-range"),
        pytest.param("range_ohm = 1000.0\n", "", 1e-3, 1000.0, id="1k-range"),
        pytest.param("range_ohm = 10000.0\n", "", 100e-6, 10000.0, id="10k-range"),
        pytest.param("range_ohm = 1000.0\n", "range_ohm = 10000.0\n", 100e-6, 10000.0, id="channel-range-over-instrument"),
        pytest.param("range_ohm = 10000.0\n", "range_ohm = 1000.0\n", 1e-3, 1000.0, id="channel-range-down"),
        pytest.param("range_ohm = 1000.0\n", "excitation_ma = 0.2\n", 0.2e-3, 1000.0, id="channel-current-given"),
        pytest.param('range_ohm = 1000.0\ntest_current_a = { "1000" = 0.5e-3 }\n', "", 0.5e-3, 1000.0,
                     id="meter-data-sheet-current"),
    ],
)
def test_meter_channel_current_follows_its_range(meter_extra, channel_extra, current_a, range_ohm):
    chain = _chain(STATION + ACCURATE_METER + meter_extra + PT100 + ON_METER + channel_extra)
    assert chain.excitation is not None
    assert chain.excitation.current_a == pytest.approx(current_a, rel=1e-12)
    assert chain.meter is not None and chain.meter.range_ohm == range_ohm
    assert chain.adc is None


def test_serial_board_channel_gets_the_board_excitation_and_converter():
    chain = _chain(STATION + BOARD + "excitation_ma = 0.5\nbits = 20\nreference_ohm = 402.0\nreference_tolerance_pct = 0.02\n"
                   + PT100 + ON_BOARD)
    assert chain.excitation is not None and chain.excitation.current_a == pytest.approx(0.5e-3, rel=1e-12)
    assert chain.adc is not None
    assert (chain.adc.bits, chain.adc.reference_ohm, chain.adc.reference_tolerance_pct) == (20, 402.0, 0.02)
    assert chain.meter is None
    assert chain.leads.wiring == 3  # a board's default hook-up
    assert chain.leads.conductor is not None and chain.leads.conductor.fixed_ohm == 0.2


def test_a_channel_excitation_overrides_the_board():
    chain = _chain(STATION + BOARD + "excitation_ma = 0.5\n" + PT100 + ON_BOARD + "excitation_ma = 0.1\n")
    assert chain.excitation is not None and chain.excitation.current_a == pytest.approx(0.1e-3, rel=1e-12)


def test_meter_without_accuracy_has_no_meter_term():
    assert _chain(VALID).meter is None


def test_calibration_supersedes_the_class():
    text = VALID.replace(
        'class = "B"\n', 'class = "B"\n' + cal(", k = 2.0, span_c = [-50, 50]", u_c=0.04)
    )
    chain = _chain(text)
    assert chain.sensor.calibration is not None and chain.sensor.calibration.certificate == "C-1"
    # IEC 60751:2008: a Pt100 reads 100.000 ohm at 0 °C and 138.5055 ohm at 100 °C
    conv = chain.convert(np.array([100.0, 138.5055], dtype=np.float64))
    budget = conv.budget.by_name()
    assert "sensor_tolerance" not in budget
    # JCGM 100:2008 (GUM) 4.3.3: a quoted expanded uncertainty over its coverage factor, U/k = 0.04/2 K
    np.testing.assert_allclose(budget["sensor_calibration"], [0.02, 0.02], rtol=1e-12)
    assert conv.temperature_c[1] == pytest.approx(100.0, abs=1e-3)
    from soaklog.sensors.flags import Flag

    assert not conv.flags[0] & Flag.CALIBRATION_EXTRAPOLATED  # 0 °C is inside [-50, 50]
    assert conv.flags[1] & Flag.CALIBRATION_EXTRAPOLATED      # 100 °C is not


def test_without_calibration_the_class_is_the_sensor_term():
    chain = _chain(VALID)
    budget = chain.convert(np.array([100.0], dtype=np.float64)).budget.by_name()
    # IEC 60751 class B at 0 °C: ±0.3 K, read as rectangular: u = 0.3/√3 (JCGM 100:2008, 4.3.7)
    np.testing.assert_allclose(budget["sensor_tolerance"], [0.3 / math.sqrt(3.0)], rtol=1e-9)
    assert "sensor_calibration" not in budget


def test_calibration_coefficients_and_r0_supersede_the_named_curve():
    # a certificate's own coefficients and R0 (invented for the test); the resistance at 100 °C is worked here by hand
    a, b, r0 = 3.9050e-3, -5.80e-7, 100.12
    text = VALID.replace(
        'class = "B"',
        f'class = "B"\ncurve = "iec60751"\ncalibration = {{ certificate = "C-2", expanded_uncertainty_c = 0.02, '
        f"r0_ohm = {r0}, coefficients = [{a}, {b}, -4.2e-12] }}",
    )
    chain = _chain(text)
    assert chain.sensor.curve.r0_ohm == r0
    conv = chain.convert(np.array([iec_resistance(100.0, r0, a, b)], dtype=np.float64))
    assert conv.temperature_c[0] == pytest.approx(100.0, abs=1e-6)


def test_sensor_r0_sets_a_pt1000():
    chain = _chain(_pt1000(meter_range=10000.0))
    # IEC 60751:2008: R(100 °C) = 138.5055 ohm for a Pt100, ten times that for a Pt1000
    conv = chain.convert(np.array([1385.055], dtype=np.float64))
    assert conv.indicated_c[0] == pytest.approx(100.0, abs=1e-3)


# ---------------------------------------------------------------- through the command line (subprocess)

def _soaklog(*args: str, cwd: pathlib.Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "soaklog", *args], capture_output=True, text=True, cwd=cwd, timeout=60)


def _bad_station(tmp_path: pathlib.Path) -> tuple[pathlib.Path, pathlib.Path]:
    db = tmp_path / "must-not-exist.db"
    path = _write(tmp_path, _with_database(str(db)) + "wiring = 5\n", "bad.toml")
    return path, db


def test_cli_check_bad_config_exits_2_with_file_and_key_on_stderr(tmp_path):
    path, _ = _bad_station(tmp_path)
    p = _soaklog("check", str(path), cwd=tmp_path)
    assert p.returncode == 2
    assert p.stdout == ""
    assert f"1 problem in {path}; nothing was started" in p.stderr
    assert f"{path}: channel[1].wiring: must be 2, 3 or 4, got 5" in p.stderr
    assert "Traceback" not in p.stderr


def test_cli_check_lists_every_problem_of_a_broken_file(tmp_path):
    path = BROKEN / "many_problems.toml"
    p = _soaklog("check", str(path), cwd=tmp_path)
    assert p.returncode == 2
    assert p.stdout == ""
    expected = _expected_in(path)
    assert f"{len(expected)} problems in {path}" in p.stderr
    for key, fragment in expected:
        assert f"{path}: {key}: " in p.stderr and fragment in p.stderr


@pytest.mark.parametrize("mistake", ["validation", "syntax"])
def test_cli_run_bad_config_exits_2_and_creates_no_database(tmp_path, mistake):
    path, db = _bad_station(tmp_path)
    if mistake == "syntax":
        path.write_text(path.read_text(encoding="utf-8") + "[station\n", encoding="utf-8")
    p = _soaklog("run", str(path), cwd=tmp_path)
    assert p.returncode == 2
    assert str(path) in p.stderr and "nothing was started" in p.stderr
    assert not db.exists()
    assert sorted(x.name for x in tmp_path.iterdir()) == ["bad.toml"]  # no database, journal or log file anywhere


@pytest.mark.parametrize("command", ["check", "run"])
def test_cli_missing_config_exits_2_file_not_found(tmp_path, command):
    p = _soaklog(command, str(tmp_path / "absent.toml"), cwd=tmp_path)
    assert p.returncode == 2
    assert "file not found" in p.stderr
    assert str(tmp_path / "absent.toml") in p.stderr
    assert list(tmp_path.iterdir()) == []


def test_cli_check_demo_is_valid(tmp_path):
    path = ROOT / "configs" / "demo.toml"
    p = _soaklog("check", str(path), cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    assert p.stdout.startswith(f"{path}: valid.")
    assert list(tmp_path.iterdir()) == []  # check starts nothing


def test_cli_check_prints_warnings_and_exits_0(tmp_path):
    path = _write(tmp_path, VALID.replace('class = "B"\n', ""))
    p = _soaklog("check", str(path), cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    assert "warnings:" in p.stdout
    assert "sensor pt100: no class or calibration" in p.stdout


def test_a_board_input_is_a_number_the_protocol_can_carry():
    # the board protocol carries 1 to 64 channels, numbered 0…63 (README: the board's protocol)
    text = (
        '[station]\nname = "s"\n[[instrument]]\nname = "b"\ndriver = "serial-adc"\nport = "/dev/null"\n'
        '[[sensor]]\nname = "p"\nclass = "B"\n'
        '[[channel]]\nname = "c"\ninstrument = "b"\ninput = "A1"\nsensor = "p"\nlead = { ohms = 0.1 }\n'
    )
    with pytest.raises(ConfigProblems) as exc:
        parse_config(text, "/lab/s.toml")
    assert exc.value.problems == [("channel[1].input", "a board input is a number 0…63, got 'A1'")]


# ---------------------------------------------------------------- the profile: one parser, checked by `check`


@pytest.mark.parametrize(
    ("profile", "key", "words"),
    [
        ('kind = "cycle"\nlow_c = -40.0\nhigh_c = 125.0\ndwel = "15min"\ncycles = 3\ntolerance_k = 3.0',
         "profile.dwel", "did you mean 'dwell'?"),
        ('kind = "cycle"\nlow_c = -40.0\nhigh_c = 125.0\ndwell = "-15min"\ncycles = 3\ntolerance_k = 3.0',
         "profile.dwell", "not a duration"),
        ('kind = "ramp"\nlow_c = -40.0', "profile.kind", "must be one of cycle, soak"),
        ('kind = "soak"\ntemperature_c = 125.0\nduration = "1000h"', "profile.tolerance_k", "is required"),
        ('kind = "soak"\ntemperature_c = 125.0\nduration = "1h"\ntolerance_k = 2.0\nsample_channels = ["nowhere"]',
         "profile.sample_channels", "no channel named 'nowhere'"),
    ],
)
def test_a_bad_profile_is_refused_by_file_and_key(profile: str, key: str, words: str) -> None:
    with pytest.raises(ConfigProblems) as info:
        parse_config(VALID + "\n[profile]\n" + profile + "\n", "/lab/station.toml", today=TODAY)
    assert any(k == key and words in m for k, m in info.value.problems), info.value.problems
    assert f"/lab/station.toml: {key}: " in str(info.value)


def test_the_demo_profile_is_parsed_once_for_check_the_dashboard_and_the_report() -> None:
    from soaklog.dashboard.plan import run_plan
    from soaklog.demo import demo_config_text

    cfg = parse_config(demo_config_text(), "demo.toml", today=TODAY)
    assert cfg.profile is not None and cfg.profile.kind == "cycle"
    # configs/demo.toml: low_c = -40.0, high_c = 125.0, cycles = 1000, dwell = "15min", tolerance_k = 3.0
    assert (cfg.profile.low.nominal_c, cfg.profile.high.nominal_c, cfg.profile.cycles) == (-40.0, 125.0, 1000)
    assert cfg.profile.dwell_high_s == cfg.profile.dwell_low_s == 900.0
    plan = run_plan(demo_config_text())
    assert plan.profile is not None and (plan.profile.low_c, plan.profile.high_c) == (-40.0, 125.0)
