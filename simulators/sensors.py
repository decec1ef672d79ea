"""Simulated platinum RTDs: their own curve, leads, self-heating and faults, as an instrument sees them.

A simulated sensor is what a real one is to the logger: an element whose
resistance follows its *own* Callendar–Van Dusen curve (an R0 and an A a
little off nominal, inside its tolerance class), warmed above its
surroundings by the measuring current, and reached through copper
conductors whose resistance the instrument sees according to how it
measures. The conductors of one sensor are numbered as in
``daq.sensors.leads``: c1 alone at one end of the element, c2 and c3 at the
other, c4 (4-wire only) beside c1.

What an instrument input reads, by the instrument's mode and the conductors
installed (a meter set to more wires than the sensor has measures with its
extra terminals joined to the nearest conductor):

    instrument 2-wire, or a 2-wire sensor:      R_e + R_c1 + R_c2
    instrument 3-wire on a 3- or 4-wire sensor: R_e + R_c1 − R_c3
    instrument 4-wire on a 3-wire sensor:       R_e + R_c1
    instrument 4-wire on a 4-wire sensor:       R_e

Self-heating: the element sits ΔT = I²·R_e(T_e)/δ above its surroundings
(IEC 60751:2008 self-heating clause; ``daq.sensors.selfheating``), and
R_e depends on T_e, so T_e = T + I²·R(T_e)/δ is solved as a fixed point. The
iteration contracts by I²·dR/dT/δ per step (about 2e-3 for a Pt1000 at 1 mA
with δ = 2 mW/K), so a few steps reach 1e-12 K.

Faults: open (``OPEN_OHM`` in every mode), short (the element bridged by a
few tens of milliohm: the instrument reads the leads), stuck (the reading
frozen: the sensor keeps the conditions of the moment it stuck) and drift (the
element's resistance creeping as if it were warmer by a rate in K/h).
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass
from typing import Literal

import numpy as np

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751, CvdCurve, resistance
from soaklog.sensors.leads import Conductor
from soaklog.sensors.tolerance import tolerance_class
from soaklog.simulators.plant import OPEN_OHM

__all__ = [
    "SHORT_OHM",
    "Fault",
    "FaultState",
    "Reading",
    "SimSensor",
]

#: resistance of a shorted element (a solder bridge or crushed sheath): tens of milliohm
SHORT_OHM = 0.02

_FIXED_POINT_TOL_K = 1e-12
_FIXED_POINT_MAX = 60
# a rise beyond this is no measurement: the iteration is diverging
_RUNAWAY_RISE_K = 200.0
# IEC 60028's copper law is used over the RTD equation's range (−200…850 °C);
# a runaway chamber may drive its air beyond: the leads are then taken at the end
_LEAD_T_MIN_C = -200.0
_LEAD_T_MAX_C = 850.0


class Fault(enum.Enum):
    """A sensor fault the world can inject."""

    NONE = "none"
    OPEN = "open"
    SHORT = "short"
    STUCK = "stuck"
    DRIFT = "drift"


@dataclass(frozen=True)
class FaultState:
    """A fault and the facts of its moment.

    Attributes:
        kind: which fault.
        since_s: simulated time it began.
        true_c, chamber_c: the sensor's surroundings when it began (a stuck
            sensor keeps them).
        drift_k_per_h: drift rate, for ``Fault.DRIFT``.
    """

    kind: Fault = Fault.NONE
    since_s: float = 0.0
    true_c: float = math.nan
    chamber_c: float = math.nan
    drift_k_per_h: float = 0.0


NO_FAULT = FaultState()


@dataclass(frozen=True)
class Reading:
    """One look at a sensor: the truth behind a terminal resistance.

    Attributes:
        true_c: temperature of the sensor's surroundings (its position).
        element_c: temperature of the element, self-heating included.
        element_ohm: resistance of the element (``OPEN_OHM`` when open).
        terminal_ohm: what the instrument input reads, leads included per its mode.
        fault: the fault in force ("none" when healthy).
    """

    true_c: float
    element_c: float
    element_ohm: float
    terminal_ohm: float
    fault: str = "none"


def _number(value: object, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise InputError(f"{what} must be a number, got {value!r}")
    return float(value)


def _check_wiring(wiring: object, what: str) -> int:
    if isinstance(wiring, bool) or not isinstance(wiring, (int, np.integer)) or wiring not in (2, 3, 4):
        raise InputError(f"{what} must be 2, 3 or 4 (wires), got {wiring!r}")
    return int(wiring)


@dataclass(frozen=True)
class SimSensor:
    """One simulated RTD.

    Attributes:
        name: the channel name instruments use.
        position: the chamber position it sits at (``simulators.chamber.Position``).
        curve: its own Callendar–Van Dusen curve (R0 and coefficients as
            the element really is, not as the data sheet says).
        wiring: conductors installed: 2, 3 or 4.
        leads: one conductor's run, from the terminals to the element
            (inside part at the chamber air temperature); None for ideal leads.
        lead_mismatch: relative deviation of conductors c1…c4 from ``leads``
            (0.01 is 1 % more resistance); gives a 3-wire hook-up its imbalance.
        dissipation_w_per_k: δ in its medium, in W/K.
        tolerance: the tolerance class it was bought as, for the record.
        element: "wire" or "film", for the record.
    """

    name: str
    position: str
    curve: CvdCurve = IEC_60751
    wiring: Literal[2, 3, 4] = 4
    leads: Conductor | None = None
    lead_mismatch: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)
    dissipation_w_per_k: float = 0.005
    tolerance: str | None = None
    element: Literal["wire", "film"] | None = None

    def __post_init__(self) -> None:
        for key in ("name", "position"):
            value = getattr(self, key)
            if not isinstance(value, str) or not value.strip():
                raise InputError(f"sensor {key} must be a non-empty string, got {value!r}")
        if not isinstance(self.curve, CvdCurve):
            raise InputError(f"sensor {self.name!r}: curve must be a CvdCurve, got {self.curve!r}")
        _check_wiring(self.wiring, f"sensor {self.name!r}: wiring")
        if self.leads is not None and not isinstance(self.leads, Conductor):
            raise InputError(f"sensor {self.name!r}: leads must be a Conductor or None, got {self.leads!r}")
        mismatch = tuple(self.lead_mismatch)
        if len(mismatch) != 4 or not all(
            math.isfinite(_number(m, "lead_mismatch")) and -0.5 < m < 0.5 for m in mismatch
        ):
            raise InputError(
                f"sensor {self.name!r}: lead_mismatch must be four fractions within ±0.5, "
                f"got {self.lead_mismatch!r}"
            )
        delta = _number(self.dissipation_w_per_k, f"sensor {self.name!r}: dissipation_w_per_k")
        if not (math.isfinite(delta) and delta > 0):
            raise InputError(
                f"sensor {self.name!r}: dissipation constant must be finite and > 0 W/K, "
                f"got {self.dissipation_w_per_k!r} (a data sheet's mW/K divided by 1000)"
            )

    # ------------------------------------------------------------ construction

    @classmethod
    def within_class(
        cls,
        name: str,
        position: str,
        rng: np.random.Generator,
        *,
        r0_ohm: float = 100.0,
        tolerance_class_name: str = "B",
        element: Literal["wire", "film"] = "film",
        wiring: Literal[2, 3, 4] = 4,
        leads: Conductor | None = None,
        dissipation_w_per_k: float = 0.005,
        share_of_class: float = 0.7,
        lead_mismatch_fraction: float = 0.01,
    ) -> SimSensor:
        """A sensor whose curve deviates from nominal by a random amount inside its class.

        The class bound is a + b·|t| (IEC 60751:2008, 5.1.3). The deviation is
        drawn as an offset δ0 at 0 °C within ±share·a (R0 off by R0·A·δ0) and
        a relative error of A within ±share·b (which moves the reading by
        about share·b·t), so the sum stays within share·(a + b·|t|) over the
        class's range. The conductors get a mismatch within
        ±``lead_mismatch_fraction`` each (cross-section tolerances, common
        practice, no published source). Draws are made from ``rng`` in a
        fixed order: one generator state, one sensor.
        """
        tol = tolerance_class(tolerance_class_name, element)
        if not 0.0 <= share_of_class <= 1.0:
            raise InputError(f"share_of_class must be within 0…1, got {share_of_class!r}")
        nominal = IEC_60751.with_r0(r0_ohm)
        offset_k = rng.uniform(-share_of_class * tol.a_c, share_of_class * tol.a_c)
        rel_a = rng.uniform(-share_of_class * tol.b_per_c, share_of_class * tol.b_per_c)
        mismatch = rng.uniform(-lead_mismatch_fraction, lead_mismatch_fraction, 4)
        curve = CvdCurve(
            r0_ohm=nominal.r0_ohm * (1.0 + nominal.a * offset_k),
            a=nominal.a * (1.0 + rel_a),
            b=nominal.b,
            c=nominal.c,
            name=f"{name}: drawn within class {tol.name} ({element})",
        )
        return cls(
            name=name,
            position=position,
            curve=curve,
            wiring=wiring,
            leads=leads,
            lead_mismatch=(float(mismatch[0]), float(mismatch[1]), float(mismatch[2]), float(mismatch[3])),
            dissipation_w_per_k=dissipation_w_per_k,
            tolerance=tol.name,
            element=element,
        )

    # ------------------------------------------------------------ physics

    def element_c(self, true_t_c: float, current_a: float, offset_k: float = 0.0) -> float:
        """Element temperature with self-heating: the fixed point of T_e = T + I²·R(T_e + offset)/δ.

        Raises:
            InputError: a non-finite temperature or current, or a current so
                large that the element would run away thermally.
        """
        t = _number(true_t_c, "true_t_c")
        i = _number(current_a, "current_a")
        if not (math.isfinite(t) and math.isfinite(i)):
            raise InputError(f"true_t_c and current_a must be finite, got {true_t_c!r}, {current_a!r}")
        k = i * i / self.dissipation_w_per_k
        if k == 0.0:
            return t
        te = t
        for _ in range(_FIXED_POINT_MAX):
            nxt = t + k * float(resistance(te + offset_k, self.curve))
            if abs(nxt - te) <= _FIXED_POINT_TOL_K * max(1.0, abs(nxt)):
                return nxt
            if not abs(nxt - t) < _RUNAWAY_RISE_K:
                break
            te = nxt
        raise InputError(
            f"sensor {self.name!r}: {current_a:g} A heats the element without bound "
            f"(δ = {self.dissipation_w_per_k:g} W/K); use a measuring current of about 1 mA or less"
        )

    def conductor_ohms(self, chamber_c: float, ambient_c: float) -> tuple[float, float, float, float]:
        """Resistances of conductors c1…c4 in ohm (0 where not installed or leads are ideal)."""
        if self.leads is None:
            return (0.0, 0.0, 0.0, 0.0)
        inside = min(max(chamber_c, _LEAD_T_MIN_C), _LEAD_T_MAX_C)
        outside = min(max(ambient_c, _LEAD_T_MIN_C), _LEAD_T_MAX_C)
        r = float(self.leads.conductor_ohm(inside, outside))
        m = self.lead_mismatch
        out = [r * (1.0 + m[j]) if j < self.wiring else 0.0 for j in range(4)]
        return (out[0], out[1], out[2], out[3])

    def lead_ohm(self, chamber_c: float, ambient_c: float, *, wiring: int) -> float:
        """Resistance the leads add to the reading in the instrument's mode ``wiring``."""
        mode = _check_wiring(wiring, "instrument wiring")
        c1, c2, c3, _ = self.conductor_ohms(chamber_c, ambient_c)
        if mode == 2 or self.wiring == 2:
            return c1 + c2
        if mode == 3:
            return c1 - c3
        return c1 if self.wiring == 3 else 0.0

    def read(
        self,
        true_t_c: float,
        chamber_c: float,
        ambient_c: float,
        *,
        wiring: int,
        current_a: float,
        t_s: float = 0.0,
        fault: FaultState = NO_FAULT,
    ) -> Reading:
        """The full truth at one moment: surroundings, element and terminals.

        Args:
            true_t_c: temperature at the sensor's position.
            chamber_c: chamber air temperature (for the leads inside).
            ambient_c: laboratory temperature (for the leads outside).
            wiring: the instrument's mode: 2, 3 or 4.
            current_a: the measuring current.
            t_s: simulated time now (for drift).
            fault: the fault in force.
        """
        mode = _check_wiring(wiring, "instrument wiring")
        i = _number(current_a, "current_a")
        kind = fault.kind
        if kind is Fault.STUCK:
            true_t_c, chamber_c = fault.true_c, fault.chamber_c
        offset = 0.0
        if kind is Fault.DRIFT:
            offset = fault.drift_k_per_h * max(t_s - fault.since_s, 0.0) / 3600.0
        if kind is Fault.OPEN:
            te = _number(true_t_c, "true_t_c")
            return Reading(te, te, OPEN_OHM, OPEN_OHM, kind.value)
        leads = self.lead_ohm(chamber_c, ambient_c, wiring=mode)
        if kind is Fault.SHORT:
            te = _number(true_t_c, "true_t_c")
            return Reading(te, te, SHORT_OHM, SHORT_OHM + leads, kind.value)
        te = self.element_c(true_t_c, i, offset)
        r_e = float(resistance(te + offset, self.curve))
        return Reading(float(true_t_c), te, r_e, r_e + leads, kind.value)

    def terminal_ohm(
        self,
        true_t_c: float,
        chamber_c: float,
        ambient_c: float,
        *,
        wiring: int,
        current_a: float,
        t_s: float = 0.0,
        fault: FaultState = NO_FAULT,
    ) -> float:
        """What the instrument input reads in ohm (see ``read``)."""
        return self.read(
            true_t_c, chamber_c, ambient_c, wiring=wiring, current_a=current_a, t_s=t_s, fault=fault
        ).terminal_ohm
