"""Profiles: the demo's, common test standards expressed in the keys, and bad input named by key."""

from __future__ import annotations

import tomllib

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.demo import demo_config_text
from soaklog.errors import InputError
from soaklog.report.build import load_profile_file
from soaklog.profile import parse_profile, profile_channels
from soaklog.kinds.profiles.cycle import CycleProfile
from soaklog.kinds.profiles.soak import SoakProfile


def test_the_demo_profile() -> None:
    p = parse_profile(tomllib.loads(demo_config_text())["profile"])
    assert isinstance(p, CycleProfile)
    assert (p.low.nominal_c, p.high.nominal_c, p.cycles) == (-40.0, 125.0, 1000)
    assert (p.high.lo_c, p.high.hi_c, p.low.lo_c, p.low.hi_c) == (122.0, 128.0, -43.0, -37.0)
    assert p.dwell_high_s == p.dwell_low_s == 900.0
    # only a nominal ramp is given: ±20 % of it, as IEC 60068-2-14 Nb allows (from memory)
    assert p.ramp_k_per_min == 10.0 and p.ramp_tolerance_k_per_min == pytest.approx(2.0)


def test_jedec_jesd22_a104_condition_g_soak_mode_2() -> None:
    # JESD22-A104 (from memory): condition G is −40 °C / +125 °C; the sample must reach each extreme and may
    # exceed it by up to 10 K (+10/−0 at the top, +0/−10 at the bottom); soak mode 2 is 5 min
    p = parse_profile({
        "kind": "cycle", "name": "JESD22-A104 condition G, soak mode 2", "low_c": -40.0, "high_c": 125.0,
        "high_tolerance_k": [0.0, 10.0], "low_tolerance_k": [10.0, 0.0], "dwell": "5min", "cycles": 1000,
    })
    assert isinstance(p, CycleProfile)
    assert (p.high.lo_c, p.high.hi_c) == (125.0, 135.0)
    assert (p.low.lo_c, p.low.hi_c) == (-50.0, -40.0)
    assert p.dwell_high_s == 300.0 and p.ramp_k_per_min is None
    assert "JESD22-A104" in p.name


def test_iec_60068_2_2_dry_heat_soak() -> None:
    # IEC 60068-2-2 test Bb (from memory): e.g. +125 °C for 1000 h, ±2 K, gradual change ≤ 1 K/min over 5 min
    p = parse_profile({"kind": "soak", "temperature_c": 125.0, "duration": "1000h", "tolerance_k": 2.0,
                       "ramp_max_k_per_min": 1.0, "rate_window": "5min"})
    assert isinstance(p, SoakProfile)
    assert (p.band.lo_c, p.band.hi_c, p.duration_s) == (123.0, 127.0, 3_600_000.0)
    assert p.ramp_max_k_per_min == 1.0 and p.rate_window_s == 300.0


def test_iec_60068_2_14_nb_and_na() -> None:
    # Nb (from memory): a specified rate, e.g. 3 ± 0.6 K/min; Na: transfer between chambers within 3 min
    nb = parse_profile({"kind": "cycle", "low_c": -40.0, "high_c": 85.0, "ramp_k_per_min": 3.0, "dwell": "3h",
                        "cycles": 5, "tolerance_k": 3.0})
    assert isinstance(nb, CycleProfile) and nb.ramp_tolerance_k_per_min == pytest.approx(0.6)
    na = parse_profile({"kind": "cycle", "low_c": -40.0, "high_c": 85.0, "dwell": "3h", "cycles": 5,
                        "tolerance_k": 3.0, "transition_max": "3min"})
    assert isinstance(na, CycleProfile) and na.transition_max_s == 180.0


def test_asymmetric_soak_band() -> None:
    p = parse_profile({"kind": "soak", "temperature_c": 150.0, "duration": "168h",
                       "tolerance_below_k": 0.0, "tolerance_above_k": 5.0})
    assert isinstance(p, SoakProfile) and (p.band.lo_c, p.band.hi_c) == (150.0, 155.0)


@pytest.mark.parametrize(
    ("table", "words"),
    [
        ({"kind": "ramp"}, ["kind"]),
        ({}, ["kind"]),
        ({"kind": "cycle", "low_c": 0.0, "high_c": 100.0, "dwel": "10min", "cycles": 1, "tolerance_k": 2.0},
         ["dwel", "did you mean 'dwell'", "dwell: is required"]),
        ({"kind": "cycle", "low_c": 0.0, "high_c": 100.0, "dwell": "10min", "tolerance_k": 2.0}, ["cycles"]),
        ({"kind": "cycle", "low_c": 0.0, "high_c": 100.0, "dwell": "10min", "cycles": 0, "tolerance_k": 2.0},
         ["cycles", "≥ 1"]),
        ({"kind": "cycle", "low_c": 100.0, "high_c": 0.0, "dwell": "10min", "cycles": 1, "tolerance_k": 2.0},
         ["low_c", "below high_c"]),
        ({"kind": "cycle", "low_c": 0.0, "high_c": 4.0, "dwell": "10min", "cycles": 1, "tolerance_k": 3.0},
         ["overlaps"]),
        ({"kind": "cycle", "low_c": 0.0, "high_c": 100.0, "dwell": "10", "cycles": 1, "tolerance_k": 2.0},
         ["dwell", "unit"]),
        ({"kind": "cycle", "low_c": 0.0, "high_c": 100.0, "dwell": "10min", "cycles": 1,
          "high_tolerance_k": [1.0], "low_tolerance_k": [1.0, 1.0]}, ["high_tolerance_k", "[below, above]"]),
        ({"kind": "cycle", "low_c": 0.0, "high_c": 100.0, "dwell": "10min", "cycles": 1}, ["tolerance_k"]),
        ({"kind": "soak", "temperature_c": "hot", "duration": "1h", "tolerance_k": 2.0}, ["temperature_c"]),
        ({"kind": "soak", "temperature_c": 85.0, "duration": "1h", "tolerance_k": -2.0}, ["tolerance_k", "positive"]),
        ({"kind": "soak", "temperature_c": 85.0, "duration": "1h", "tolerance_k": 2.0, "sample_channels": []},
         ["sample_channels"]),
        ({"kind": "soak", "temperature_c": 85.0, "duration": "1h", "tolerance_k": 2.0, "ramp_tolerance_k_per_min": 1},
         ["ramp_tolerance_k_per_min", "unknown key"]),
    ],
)
def test_bad_profiles_are_refused_by_key(table: dict[str, object], words: list[str]) -> None:
    with pytest.raises(InputError) as exc:
        parse_profile(table, where="test.toml")
    msg = str(exc.value)
    assert "test.toml" in msg or "kind" in msg
    for w in words:
        assert w in msg, (w, msg)


@given(st.dictionaries(st.sampled_from(["kind", "low_c", "high_c", "dwell", "cycles", "tolerance_k",
                                        "temperature_c", "duration", "sample_channels", "high_tolerance_k"]),
                       st.one_of(st.none(), st.booleans(), st.integers(-5, 2000), st.floats(allow_nan=True),
                                 st.text(max_size=8), st.lists(st.floats(0, 20), max_size=3),
                                 st.sampled_from(["cycle", "soak", "15min", "1000h"]))))
@settings(max_examples=300, deadline=None)
def test_any_table_gives_a_profile_or_an_input_error(table: dict[str, object]) -> None:
    table = {k: v for k, v in table.items() if v is not None}
    try:
        p = parse_profile(table)
    except InputError:
        return
    assert p.kind in ("cycle", "soak")


def test_sample_channels_must_exist() -> None:
    p = parse_profile({"kind": "soak", "temperature_c": 85.0, "duration": "1h", "tolerance_k": 2.0,
                       "sample_channels": ["module-3-case", "nowhere"]})
    with pytest.raises(InputError, match="'nowhere'"):
        profile_channels(p, ["air-supply", "module-3-case"])
    p2 = parse_profile({"kind": "soak", "temperature_c": 85.0, "duration": "1h", "tolerance_k": 2.0,
                        "sample_channels": ["module-3-case"]})
    assert profile_channels(p2, ["air-supply", "module-3-case"]) == (("module-3-case",), ("air-supply", "module-3-case"))


def test_profile_file_with_or_without_a_table(tmp_path) -> None:  # noqa: ANN001
    a = tmp_path / "a.toml"
    a.write_text('[profile]\nkind = "soak"\ntemperature_c = 85.0\nduration = "2h"\ntolerance_k = 2.0\n')
    b = tmp_path / "b.toml"
    b.write_text('kind = "soak"\ntemperature_c = 85.0\nduration = "2h"\ntolerance_k = 2.0\n')
    assert load_profile_file(a) == load_profile_file(a)
    pa, pb = load_profile_file(a), load_profile_file(b)
    assert isinstance(pa, SoakProfile) and isinstance(pb, SoakProfile) and pa.band == pb.band
    with pytest.raises(InputError, match="no profile file"):
        load_profile_file(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("kind = ")
    with pytest.raises(InputError, match="not valid TOML"):
        load_profile_file(bad)
