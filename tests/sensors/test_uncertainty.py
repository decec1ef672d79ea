"""The GUM budget: worked by hand, and against the `uncertainties` library."""

from __future__ import annotations

import math

import numpy as np
import pytest
import uncertainties
from uncertainties import umath

from soaklog.sensors.cvd import IEC_60751
from soaklog.sensors.measurement import (
    AdcSpec,
    Calibration,
    MeasurementChain,
    MeterSpec,
    SensorSpec,
    decade_range_ohm,
)
from soaklog.sensors.tolerance import tolerance_class
from soaklog.sensors.uncertainty import RECTANGULAR, combine, normal, rectangular


def test_rectangular_divisor_is_root_three():
    # JCGM 100:2008, 4.3.7: a bound ±a with equal probability inside gives u = a/√3
    c = rectangular("x", "x", 0.3, "K")
    assert c.u_k == pytest.approx(0.3 / math.sqrt(3.0), rel=1e-15)
    assert RECTANGULAR == pytest.approx(1.7320508075688772)


def test_normal_contribution_divides_by_its_k():
    # JCGM 100:2008, 4.3.3: a stated U with coverage factor k gives u = U/k
    c = normal("cal", "cert", 0.05, 2.0, "K")
    assert c.u_k == pytest.approx(0.025)


def test_combination_is_root_sum_square():
    # JCGM 100:2008, 5.1.2 eq. (10), uncorrelated inputs: u_c² = Σ (c_i·u_i)²
    # 3-4-5 by construction: 0.3·√3 and 0.4·√3 as rectangular bounds give 0.3 and 0.4
    b = combine([
        rectangular("a", "a", 0.3 * math.sqrt(3), "K"),
        rectangular("b", "b", 0.4 * math.sqrt(3), "K"),
    ])
    assert b.combined_k == pytest.approx(0.5)
    assert b.expanded_k == pytest.approx(1.0)  # JCGM 100:2008, 6.3.3: k = 2


def test_class_a_pt100_with_meter_budget_worked_by_hand():
    """A 4-wire Pt100, class A (wire-wound), at 100 °C, meter ±(0.01 % rdg + 0.004 % range).

    Worked by hand:
      R(100 °C) = 138.5055 ohm                     IEC 60751:2008, table 1 (138.51 printed)
      dR/dt = R0·(A + 2·B·t) = 100·(3.9083e-3 − 2·5.775e-7·100) = 0.379280 ohm/K
      sensitivity c = 1/0.379280 = 2.636575 K/ohm                  (JCGM 100, 5.1.3)
      class A: ±(0.15 + 0.002·100) = ±0.35 K   IEC 60751:2008 table of classes
               u = 0.35/√3 = 0.202073 K                             (JCGM 100, 4.3.7)
      meter:   decade range 1 kΩ (138.5 ohm is beyond a 100 ohm range with 20 % over-range,
               common practice, no published source)
               ±(0.0001·138.5055 + 0.00004·1000) = ±0.053851 ohm
               u = 0.053851/√3 · 2.636575 = 0.081973 K
      u_c = √(0.202073² + 0.081973²) = 0.218066 K,  U = 2·u_c = 0.436132 K
    """
    chain = MeasurementChain(
        SensorSpec(tolerance=tolerance_class("A", "wire")),
        meter=MeterSpec(0.01, 0.004),
    )
    conv = chain.convert([138.5055])
    assert conv.temperature_c[0] == pytest.approx(100.0, abs=1e-4)
    parts = conv.budget.by_name()
    assert parts["sensor_tolerance"][0] == pytest.approx(0.202073, abs=2e-6)
    assert parts["meter"][0] == pytest.approx(0.081973, abs=2e-6)
    assert conv.uncertainty_c[0] == pytest.approx(0.218066, abs=2e-6)
    assert conv.expanded_uncertainty_c[0] == pytest.approx(0.436132, abs=4e-6)
    assert conv.flags[0] == 0


@pytest.mark.parametrize(
    "r_ohm, expected_range",
    [
        # common practice, no published source: decade ranges with 20 % over-range
        (80.0, 100.0),
        (119.9, 100.0),
        (138.5, 1000.0),
        (1385.0, 10000.0),
        (10.0, 100.0),
    ],
)
def test_decade_range_holds_the_reading(r_ohm, expected_range):
    assert decade_range_ohm(r_ohm) == expected_range


@pytest.mark.parametrize("t_true", [-150.0, -20.0, 0.0, 37.0, 150.0, 420.0, 800.0])
def test_linear_propagation_agrees_with_uncertainties_library(t_true):
    """The chain's u_c equals first-order propagation by the `uncertainties` package.

    Reference: the PyPI package `uncertainties` (linear error propagation with
    automatic derivatives), fed the meter's and the board's standard uncertainties
    in ohm and the calibration's in K. Above 0 °C the CVD inverse is the closed
    form, which `uncertainties` can differentiate; below 0 °C the sensitivity is
    checked by the same closed form's derivative on the quartic through a Newton step.
    """
    curve = IEC_60751
    r_true = float(curve.resistance(t_true))
    meter = MeterSpec(0.008, 0.002, range_ohm=1000.0)
    adc = AdcSpec(bits=16, reference_ohm=400.0, reference_tolerance_pct=0.01)
    cal = Calibration(0.04, 2.0)
    chain = MeasurementChain(SensorSpec(calibration=cal), meter=meter, adc=adc)
    conv = chain.convert([r_true])

    u_meter = float(meter.bound_ohm(r_true)) / math.sqrt(3)
    u_step = adc.step_ohm / 2 / math.sqrt(3)
    u_ref = 0.01e-2 * r_true / math.sqrt(3)
    r = uncertainties.ufloat(r_true, u_meter) + uncertainties.ufloat(0, u_step) + uncertainties.ufloat(0, u_ref)
    a, b, c = curve.a, curve.b, curve.c
    x = r / curve.r0_ohm - 1
    t = 2 * x / (a + umath.sqrt(a * a + 4 * b * x))
    if t_true < 0:
        # one Newton step on the quartic, differentiated by `uncertainties` too
        f = a * t + b * t**2 + c * (t - 100) * t**3 - x
        df = a + 2 * b * t + c * (4 * t**3 - 300 * t**2)
        t = t - f / df
        t = t - (a * t + b * t**2 + c * (t - 100) * t**3 - x) / (a + 2 * b * t + c * (4 * t**3 - 300 * t**2))
    t = t + uncertainties.ufloat(0, 0.02)  # the calibration, U = 0.04 K at k = 2
    assert conv.temperature_c[0] == pytest.approx(t.nominal_value, abs=1e-8)
    assert conv.uncertainty_c[0] == pytest.approx(t.std_dev, rel=1e-6)


def test_budget_lists_each_source_separately():
    chain = MeasurementChain(
        SensorSpec(tolerance=tolerance_class("B"), dissipation_w_per_k=0.003),
        meter=MeterSpec(0.01, 0.004),
        adc=AdcSpec(bits=24, reference_ohm=400.0, reference_tolerance_pct=0.02),
    )
    from soaklog.sensors.measurement import Excitation

    chain = MeasurementChain(chain.sensor, chain.leads, Excitation(current_a=1e-3), chain.meter, chain.adc)
    conv = chain.convert(np.array([119.397, 138.5055]))
    names = [c.name for c in conv.budget.contributions]
    assert names == ["sensor_tolerance", "meter", "adc_resolution", "reference_resistor", "self_heating"]
    total = np.sqrt(sum(c.u_k**2 for c in conv.budget.contributions))
    np.testing.assert_allclose(conv.uncertainty_c, total, rtol=1e-12)
