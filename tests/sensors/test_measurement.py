"""The whole chain: leads, curve, self-heating and flags, against worked examples."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751
from soaklog.sensors.flags import Flag, flag_names
from soaklog.sensors.leads import Conductor, Leads
from soaklog.sensors.measurement import (
    Calibration,
    Excitation,
    MeasurementChain,
    MeterSpec,
    SensorSpec,
)
from soaklog.sensors.tolerance import tolerance_class


def test_two_wire_subtracts_both_conductors():
    # IEC 60751:2008 table 1: 100 °C -> 138.51 ohm (equation value 138.5055);
    # 2-wire adds both conductors: 138.5055 + 2·0.5 = 139.5055 ohm measured
    chain = MeasurementChain(leads=Leads.from_lead_ohms(2, 0.5))
    conv = chain.convert([139.5055])
    assert conv.lead_correction_ohm[0] == pytest.approx(1.0)
    assert conv.temperature_c[0] == pytest.approx(100.0, abs=1e-4)


def test_uncorrected_two_wire_error_is_what_the_trade_quotes():
    # common practice, no published source: 1 ohm of lead in a Pt100 reads about
    # 2.6 K high near 0 °C (1 / 0.385 ohm/K)
    plain = MeasurementChain().convert([100.0 + 1.0])
    assert plain.temperature_c[0] == pytest.approx(1.0 / 0.39083, rel=0.01)


def test_copper_lead_inside_chamber_follows_the_sensor_temperature():
    # a 2-wire Pt100 at 150 °C, 24 AWG copper, 2 m inside the chamber, 3 m outside at 20 °C.
    # ASTM B258: 24 AWG d = 0.127·92^(12/39) mm = 0.5106 mm, area 0.20477 mm²
    # IEC 60028: 1/58 ohm·mm²/m at 20 °C, α20 = 0.00393 /K
    area = math.pi / 4 * (0.127 * 92 ** (12 / 39)) ** 2
    per_m_20 = (1 / 58) / area
    inside = 2 * per_m_20 * (1 + 0.00393 * (150 - 20))
    outside = 3 * per_m_20
    r_sensor = float(IEC_60751.resistance(150.0))
    measured = r_sensor + 2 * (inside + outside)
    chain = MeasurementChain(leads=Leads(2, Conductor(awg=24, inside_length_m=2, outside_length_m=3)))
    conv = chain.convert([measured])
    assert conv.temperature_c[0] == pytest.approx(150.0, abs=1e-4)
    # the same with the chamber temperature given explicitly
    conv2 = chain.convert([measured], chamber_c=150.0)
    assert conv2.temperature_c[0] == pytest.approx(150.0, abs=1e-6)


def test_self_heating_is_subtracted():
    # 1 mA through 138.5055 ohm: P = I²R = 138.5 µW; δ = 2 mW/K: ΔT = 0.06925 K (IEC 60751 self-heating clause)
    chain = MeasurementChain(
        SensorSpec(dissipation_w_per_k=2e-3), excitation=Excitation(current_a=1e-3)
    )
    conv = chain.convert([138.5055])
    assert conv.self_heating_k[0] == pytest.approx(138.5055e-6 / 2e-3, rel=1e-9)
    assert conv.temperature_c[0] == pytest.approx(100.0 - 0.0692528, abs=1e-5)


def test_pt1000_on_a_1ma_range_self_heats_visibly():
    # the trap from REFERENCES: 1 mA into a Pt1000 at 100 °C is 1.385 mW; at 2 mW/K that is 0.69 K
    chain = MeasurementChain(
        SensorSpec(IEC_60751.with_r0(1000), dissipation_w_per_k=2e-3),
        excitation=Excitation(current_a=1e-3),
    )
    conv = chain.convert([1385.055])
    assert conv.self_heating_k[0] == pytest.approx(0.6925, abs=1e-3)
    assert "large_self_heating" in flag_names(conv.flags[0])


def test_voltage_excitation_uses_v_squared_over_r():
    chain = MeasurementChain(
        SensorSpec(dissipation_w_per_k=5e-3), excitation=Excitation(voltage_v=0.1)
    )
    conv = chain.convert([100.0])
    # P = V²/R = 0.01/100 = 100 µW; ΔT = 100e-6 / 5e-3 = 0.02 K
    assert conv.self_heating_k[0] == pytest.approx(0.02)


@pytest.mark.parametrize(
    "r_ohm, flag",
    [
        (15.0, Flag.OUT_OF_RANGE),  # below R(−200 °C) = 18.52 ohm, IEC 60751 table 1
        (400.0, Flag.OUT_OF_RANGE),  # above R(850 °C) = 390.48 ohm, IEC 60751 table 1
        (float("nan"), Flag.INVALID_INPUT),
        (0.0, Flag.INVALID_INPUT),
    ],
)
def test_no_temperature_is_invented(r_ohm, flag):
    conv = MeasurementChain().convert([r_ohm])
    assert math.isnan(conv.temperature_c[0])
    assert math.isnan(conv.expanded_uncertainty_c[0])
    assert conv.flags[0] & flag


def test_leads_larger_than_the_reading_give_no_temperature():
    conv = MeasurementChain(leads=Leads.from_lead_ohms(2, 60.0)).convert([100.0])
    assert math.isnan(conv.temperature_c[0])
    assert "leads_exceed_sensor" in flag_names(conv.flags[0])
    assert "out_of_range" not in flag_names(conv.flags[0])


def test_missing_sensor_spec_is_flagged_and_its_uncertainty_withheld():
    conv = MeasurementChain().convert([100.0])
    assert "no_sensor_spec" in flag_names(conv.flags[0])
    assert conv.temperature_c[0] == 0.0  # the temperature stands
    # an ideal meter and no sensor would add up to 0 K: not an honest uncertainty, so none
    assert math.isnan(conv.expanded_uncertainty_c[0]) and math.isnan(conv.uncertainty_c[0])
    # with a meter the budget has a part, but still not the sensor: withheld all the same
    with_meter = MeasurementChain(meter=MeterSpec(0.01, 0.004, 1000.0)).convert([100.0])
    assert math.isnan(with_meter.expanded_uncertainty_c[0])
    assert with_meter.budget.expanded_k[0] > 0  # the partial budget is still there to show


@pytest.mark.parametrize(("r0", "r_ohm"), [
    # IEC 60751:2008, 4.2 with A = 3.9083e-3, B = -5.775e-7: R(850 °C)/R0 = 1 + 850·A + 850²·B
    # = 3.90481125 exactly (hand arithmetic: 3.322055 - 0.41724375), written as decimals
    (100.0, 390.481125), (500.0, 1952.405625), (1000.0, 3904.81125),
    # R(-200 °C)/R0 with C = -4.183e-12: 1 - 0.78166 - 0.0231 + (-4.183e-12)(-300)(-8e6) = 0.1852008
    (100.0, 18.52008), (500.0, 92.6004), (1000.0, 185.2008),
])
def test_the_ends_of_the_iec_range_convert(r0, r_ohm):
    # no IEC 60751 class reaches 850 °C; a calibration over the whole range does
    cal = Calibration(0.5, 2.0, -200.0, 850.0)
    conv = MeasurementChain(SensorSpec(curve=IEC_60751.with_r0(r0), calibration=cal)).convert([r_ohm])
    assert conv.flags[0] == 0, flag_names(conv.flags[0])
    assert conv.temperature_c[0] in (850.0, -200.0)


def test_class_range_ends_are_inclusive():
    # IEC 60751:2008 table 4: class B (film) applies over -50…500 °C; R(500 °C) = 280.9775 ohm
    # (1 + 500·3.9083e-3 − 250000·5.775e-7 = 2.809775, hand arithmetic)
    conv = MeasurementChain(SensorSpec(tolerance=tolerance_class("B", "film"))).convert([280.9775])
    assert "outside_class_range" not in flag_names(conv.flags[0])
    assert math.isclose(conv.temperature_c[0], 500.0, abs_tol=1e-9)


def test_a_reading_over_the_meters_range_is_withheld():
    # 148 ohm on a 100 ohm range: above the 120 % a bench meter shows (common practice, no published source)
    chain = MeasurementChain(SensorSpec(tolerance=tolerance_class("B")), range_ohm=100.0)
    conv = chain.convert([119.0, 148.0])
    assert flag_names(conv.flags[1]) == ["over_range"]
    assert math.isnan(conv.temperature_c[1]) and math.isnan(conv.expanded_uncertainty_c[1])
    assert conv.flags[0] == 0 and math.isclose(conv.temperature_c[0], 48.9, abs_tol=0.1)
    # the meter's own range serves when the chain is given none
    via_meter = MeasurementChain(meter=MeterSpec(0.01, 0.004, 100.0)).convert([148.0])
    assert "over_range" in flag_names(via_meter.flags[0])


def test_tolerance_class_range_is_flagged():
    # IEC 60751:2008: class AA film applies over 0…150 °C only
    chain = MeasurementChain(SensorSpec(tolerance=tolerance_class("AA", "film")))
    conv = chain.convert(IEC_60751.resistance(np.array([50.0, 200.0])))
    assert flag_names(conv.flags[0]) == []
    assert flag_names(conv.flags[1]) == ["outside_class_range"]


def test_calibration_supersedes_class_and_flags_extrapolation():
    cal = Calibration(0.03, 2.0, t_min_c=-40.0, t_max_c=180.0, certificate="C-0042")
    chain = MeasurementChain(SensorSpec(tolerance=tolerance_class("B"), calibration=cal))
    conv = chain.convert(IEC_60751.resistance(np.array([100.0, 250.0])))
    assert conv.uncertainty_c[0] == pytest.approx(0.015)
    assert [c.name for c in conv.budget.contributions] == ["sensor_calibration"]
    assert flag_names(conv.flags[1]) == ["calibration_extrapolated"]


def test_bad_excitation_is_refused():
    with pytest.raises(InputError, match="current or as a voltage"):
        Excitation(current_a=1e-3, voltage_v=1.0)
    with pytest.raises(InputError, match="positive"):
        Excitation(current_a=-1e-3)


@settings(max_examples=200, deadline=None)
@given(
    t=st.floats(-199.0, 849.0),
    lead=st.floats(0.0, 5.0),
    current_ma=st.floats(0.1, 2.0),
    diss_mw=st.floats(0.5, 50.0),
)
def test_chain_recovers_the_true_temperature(t, lead, current_ma, diss_mw):
    """Simulate a 2-wire, self-heated reading of a known temperature and convert it back.

    The sensor sits at t + ΔT where ΔT = I²R/δ (IEC 60751 self-heating), found by
    fixed-point iteration here; the meter sees that resistance plus both leads.
    """
    i, d = current_ma * 1e-3, diss_mw * 1e-3
    t_sensor = t
    for _ in range(50):
        t_sensor = t + i * i * float(IEC_60751.resistance(t_sensor)) / d
    measured = float(IEC_60751.resistance(t_sensor)) + 2 * lead
    chain = MeasurementChain(
        SensorSpec(dissipation_w_per_k=d),
        Leads.from_lead_ohms(2, lead),
        Excitation(current_a=i),
    )
    conv = chain.convert([measured])
    if t_sensor > 850.0:
        assert math.isnan(conv.temperature_c[0])
    else:
        assert conv.temperature_c[0] == pytest.approx(t, abs=1e-6)
