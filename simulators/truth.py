"""What a sensor really does, written afresh from the standards and independent of ``soaklog.sensors``.

The end-to-end coverage test draws many simulated sensors here and asks the
logger's own metrology to read them: the two must not share a formula, or an
error in one would hide in both. So the forms differ on purpose:

- Callendar–Van Dusen (IEC 60751:2008, 4.2) as a ``numpy.polynomial``
  polynomial in t, its C term expanded (C·t³·(t − 100) = C·t⁴ − 100·C·t³);
- copper (IEC 60028: 1/58 ohm·mm²/m and 0.00393 /K at 20 °C) as the
  conductance of a length, inverted;
- self-heating as the fixed point of T = t + I²·R(T)/δ, solved by bisection;
- each sensor's deviation from its class drawn from a normal distribution
  with the standard deviation the budget gives the class (bound/√3: a
  rectangular bound's, JCGM 100:2008, 4.3.7), and the meter's error likewise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import Polynomial

__all__ = ["pt_resistance", "copper_ohm", "SensorDraw", "draw_readings"]

# IEC 60751:2008, 4.2 (copied from the standard, not from soaklog.sensors.cvd)
_A, _B, _C = 3.9083e-3, -5.775e-7, -4.183e-12
_ABOVE = Polynomial([1.0, _A, _B])
_BELOW = Polynomial([1.0, _A, _B, -100.0 * _C, _C])


def pt_resistance(t_c: np.ndarray, r0_ohm: float = 100.0) -> np.ndarray:
    """IEC 60751 R(t) for any R0, t in °C."""
    t = np.asarray(t_c, dtype=np.float64)
    return r0_ohm * np.where(t >= 0.0, _ABOVE(t), _BELOW(t))


def copper_ohm(length_m: float, area_mm2: float, t_c: float = 20.0) -> float:
    """IEC 60028 annealed copper: conductance 58 S·m/mm² at 20 °C, α20 = 0.00393 /K."""
    conductance_s = 58.0 * area_mm2 / length_m
    return (1.0 / conductance_s) * (1.0 + 0.00393 * (t_c - 20.0))


@dataclass(frozen=True)
class SensorDraw:
    """The population of simulated sensors and how they are wired and read."""

    r0_ohm: float = 100.0
    class_a_c: float = 0.15            # IEC 60751 class A: ±(0.15 + 0.002·|t|) K
    class_b_per_c: float = 0.002
    lead_ohm_nominal: float = 0.5      # one conductor, as the station file states it
    lead_fraction: float = 0.10        # the 2-wire pair known to ±10 % (the budget's bound)
    current_a: float = 2e-3
    dissipation_w_per_k: float = 2e-3  # what the sensor really has in its mounting
    self_heating_fraction: float = 0.5  # the dissipation constant known to ±50 % (the budget's bound)
    meter_pct_reading: float = 0.01
    meter_pct_range: float = 0.004
    meter_range_ohm: float = 1000.0


def _self_heated(t_c: np.ndarray, r0: float, current_a: float, delta_w_per_k: np.ndarray) -> np.ndarray:
    """The element's temperature T with T = t + I²·R(T)/δ, by bisection (T lies in [t, t + 50 K])."""
    lo = np.asarray(t_c, dtype=np.float64).copy()
    hi = lo + 50.0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        f = mid - t_c - current_a * current_a * pt_resistance(mid, r0) / delta_w_per_k
        lo = np.where(f < 0.0, mid, lo)
        hi = np.where(f < 0.0, hi, mid)
    return 0.5 * (lo + hi)


def draw_readings(draw: SensorDraw, t_true_c: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """What a 2-wire meter reads from each simulated sensor at its true temperature, in ohm."""
    t = np.asarray(t_true_c, dtype=np.float64)
    n = t.shape[0]
    # the sensor's own deviation, as if at t + e (normal, σ = class bound/√3)
    sigma_class = (draw.class_a_c + draw.class_b_per_c * np.abs(t)) / math.sqrt(3.0)
    e_sensor = rng.normal(0.0, 1.0, n) * sigma_class
    # the dissipation constant really in force: the stated one, off by a normal draw (σ = 50 %/√3)
    delta = draw.dissipation_w_per_k * np.maximum(
        0.2, 1.0 + rng.normal(0.0, draw.self_heating_fraction / math.sqrt(3.0), n))
    t_element = _self_heated(t + e_sensor, draw.r0_ohm, draw.current_a, delta)
    r_sensor = pt_resistance(t_element, draw.r0_ohm)
    # the pair of conductors: nominal ±10 % (σ = 10 %/√3)
    pair = 2.0 * draw.lead_ohm_nominal * (1.0 + rng.normal(0.0, draw.lead_fraction / math.sqrt(3.0), n))
    r_measured = r_sensor + pair
    bound = draw.meter_pct_reading / 100.0 * r_measured + draw.meter_pct_range / 100.0 * draw.meter_range_ohm
    return r_measured + rng.normal(0.0, 1.0, n) * bound / math.sqrt(3.0)
