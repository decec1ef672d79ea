"""ITS-90 reference and deviation functions: the Table 1 self-test, the inverses, an SPRT through a channel's chain."""

from __future__ import annotations

import math

import numpy as np
import pytest

from soaklog.errors import InputError
from soaklog.sensors.flags import flag_names
from soaklog.sensors.its90 import B, D, Deviation, SprtCurve, _poly, wr, wr_inverse_k
from soaklog.sensors.measurement import Calibration, MeasurementChain, SensorSpec

# ITS-90 (Metrologia 27, 1990) Table 1: the defining fixed points and their Wr(T90),
# from memory of the table (the self-test below is what checks memory and coefficients together)
TABLE_1 = [
    ("e-H2 triple point", 13.8033, 0.00119007),
    ("Ne triple point", 24.5561, 0.00844974),
    ("O2 triple point", 54.3584, 0.09171804),
    ("Ar triple point", 83.8058, 0.21585975),
    ("Hg triple point", 234.3156, 0.84414211),
    ("H2O triple point", 273.16, 1.00000000),
    ("Ga melting point", 302.9146, 1.11813889),
    ("In freezing point", 429.7485, 1.60980185),
    ("Sn freezing point", 505.078, 1.89279768),
    ("Zn freezing point", 692.677, 2.56891730),
    ("Al freezing point", 933.473, 3.37600860),
    ("Ag freezing point", 1234.93, 4.28642053),
]


@pytest.mark.parametrize(("point", "t_k", "w_r"), TABLE_1)
def test_table_1_self_test(point, t_k, w_r) -> None:
    # the coefficients must reproduce every tabulated Wr to 1e-8
    assert abs(float(wr(t_k)) - w_r) <= 0.5e-8, point


def test_the_low_function_meets_the_triple_point_to_1e8() -> None:
    # below 273.16 K: ln Wr(273.16 K) = ΣAi, which the published coefficients make −1.0e-8, so the
    # low function gives 0.99999999 there: within 1e-8 of 1, as the scale's two functions are meant to join
    from soaklog.sensors.its90 import A

    assert abs(math.exp(sum(A)) - 1.0) <= 1e-8 * (1 + 1e-6)


@pytest.mark.parametrize("t_k", [14.0, 20.0, 54.0, 90.0, 200.0, 273.0, 273.16, 300.0, 500.0, 900.0, 1234.0])
def test_inverse_is_exact_and_the_published_inverses_are_within_their_stated_equivalence(t_k) -> None:
    w = float(wr(t_k))
    assert float(wr_inverse_k(w)) == pytest.approx(t_k, abs=1e-9)
    # ITS-90, 3.3.1 and 3.3.2: the B and D inverses are equivalent to within 0.1 mK and 0.13 mK
    if w < 1.0:
        t_b = 273.16 * float(_poly(B, np.asarray((w ** (1 / 6) - 0.65) / 0.35)))
        assert abs(t_b - t_k) <= 0.1e-3
    else:
        t_d = float(_poly(D, np.asarray((w - 2.64) / 1.64))) + 273.15
        assert abs(t_d - t_k) <= 0.13e-3


def test_a_deviation_function_worked_by_hand() -> None:
    # a certificate's sub-range 7 with a = −1.5e-4, b = 2.0e-5 (an invented but typical thermometer):
    # at the Zn point Wr = 2.56891730 (Table 1); W solves W − Wr = a(W−1) + b(W−1)²: with x = W − 1,
    # b·x² + (a − 1)·x + (Wr − 1) = 0 → x = 1.56870... (hand: quadratic formula, the small root)
    dev = Deviation(7, a=-1.5e-4, b=2.0e-5)
    sprt = SprtCurve(25.5, above=dev)
    a, b, wr_zn = -1.5e-4, 2.0e-5, 2.56891730
    x = ((1 - a) - math.sqrt((1 - a) ** 2 - 4 * b * (wr_zn - 1))) / (2 * b)
    r = 25.5 * (1 + x)
    # Table 1 gives Wr to 8 decimals (±5e-9): R to ±1.3e-7 ohm, T90 to ±1.3 µK (dW/dT ≈ 0.0038 /K)
    assert float(sprt.resistance(692.677 - 273.15)) == pytest.approx(r, rel=3e-9)
    t, f = sprt.temperature(r)
    assert int(f) == 0 and float(t) == pytest.approx(419.527, abs=2e-6)


def test_sub_range_4_below_the_triple_point() -> None:
    # a4(W − 1) + b4(W − 1)·ln W at the Hg point, Wr = 0.84414211 (Table 1), solved by fixed-point
    # iteration written out here (the Ar point is the sub-range's very end, which Table 1's rounding
    # may put a microkelvin outside)
    a4, b4 = -2.0e-4, 1.0e-5
    w = 0.84414211
    for _ in range(50):
        w = 0.84414211 + a4 * (w - 1) + b4 * (w - 1) * math.log(w)
    sprt = SprtCurve(25.0, below=Deviation(4, a=a4, b=b4), above=Deviation(11, a=-1e-4))
    t, f = sprt.temperature(25.0 * w)
    assert int(f) == 0 and float(t) == pytest.approx(234.3156 - 273.15, abs=2e-6)  # Table 1's 8 decimals
    # outside: colder than the Ar point, hotter than the Ga point
    t, f = sprt.temperature([25.0 * 0.2, 25.0 * 1.2])
    assert [flag_names(int(x)) for x in f] == [["out_of_range"], ["out_of_range"]]


def test_an_sprt_goes_through_a_channels_chain() -> None:
    sprt = SprtCurve(25.5, below=Deviation(4, a=-1.2e-4, b=-3e-6), above=Deviation(7, a=-1.1e-4, b=1.5e-5, c=-2e-6))
    chain = MeasurementChain(SensorSpec(curve=sprt, calibration=Calibration(0.003, 2.0, -189.3442, 660.323, "SPRT-1")))
    temps = np.array([-150.0, -20.0, 0.01, 150.0, 600.0])
    conv = chain.convert(sprt.resistance(temps))
    assert np.max(np.abs(conv.temperature_c - temps)) < 1e-8
    assert not conv.flags.any() and np.allclose(conv.expanded_uncertainty_c, 0.003)


@pytest.mark.parametrize(("kw", "words"), [
    ({"subrange": 6}, "sub-range must be one of"),
    ({"subrange": 10, "b": 1e-5}, "no coefficient b"),
])
def test_a_deviation_function_takes_only_what_its_sub_range_admits(kw, words) -> None:
    with pytest.raises(InputError, match=words):
        Deviation(**kw)
