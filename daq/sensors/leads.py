"""Lead-wire corrections for 2-, 3- and 4-wire RTD hook-ups, and their residual bounds.

What the instrument reads, with R_c1, R_c2, R_c3 the resistances of the
conductors (c1 alone at one end of the element, c2 and c3 at the other):

    2-wire:  R_measured = R_t + R_c1 + R_c2        (both conductors in series)
    3-wire:  R_measured = R_t + R_c1 − R_c3        (the bridge or meter takes
                                                    one conductor off again)
    4-wire:  R_measured = R_t                      (no current in the sense pair)

A 2-wire reading is therefore corrected by the resistance of two conductors, a
3-wire reading by the residual imbalance R_c1 − R_c3 when it is known (it is
what a 3-wire reading shows with the element end shorted), and a 4-wire
reading not at all. What is left after the correction is given as a
rectangular half-width for the uncertainty budget (JCGM 100:2008, 4.3.7).

Copper conductors are described by gauge and length, split between the part
inside the chamber (at the chamber temperature) and the part outside (at the
ambient temperature), with the resistivity and temperature coefficient of
annealed copper from IEC 60028.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Literal

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.sensors.flags import FLAG_DTYPE, Flag

__all__ = [
    "COPPER_RESISTIVITY_20C_OHM_MM2_PER_M",
    "COPPER_ALPHA_20C_PER_K",
    "REFERENCE_TEMPERATURE_C",
    "DEFAULT_TWO_WIRE_TOLERANCE",
    "DEFAULT_THREE_WIRE_IMBALANCE",
    "Wiring",
    "awg_diameter_mm",
    "awg_area_mm2",
    "copper_resistance_ohm",
    "Conductor",
    "Leads",
    "IEC_60228_MAX_OHM_PER_KM",
    "iec_60228_max_ohm_per_m",
]

FloatArray = npt.NDArray[np.float64]
Wiring = Literal[2, 3, 4]

# IEC 60028 (International Standard of Resistance for Copper): annealed copper
# at 20 °C has a volume resistivity of 1/58 Ω·mm²/m and a constant-mass
# temperature coefficient of resistance of 0.00393 /K at 20 °C.
COPPER_RESISTIVITY_20C_OHM_MM2_PER_M = 1.0 / 58.0
COPPER_ALPHA_20C_PER_K = 0.00393
#: the temperature the IEC 60028 values refer to, and the default ambient
REFERENCE_TEMPERATURE_C = 20.0

# Default rectangular half-width of the resistance of a 2-wire pair, as a
# fraction of the computed or stated resistance. Common practice, no published
# source; it sums the usual contributions: conductor cross-section within its
# product tolerance (ASTM B258 / IEC 60228 sizes are nominal: about ±2 % of
# area), stranding and lay lengthening (about 2 %), a lead temperature known
# only to ±10 K (0.00393 /K · 10 K ≈ 4 %), and terminations. Lower it when the
# pair was measured in place at the temperature of the test.
DEFAULT_TWO_WIRE_TOLERANCE = 0.10

# Default rectangular half-width of the unknown imbalance R_c1 − R_c3 of a
# 3-wire hook-up, as a fraction of one conductor's resistance. Common practice,
# no published source: the two conductors of one cable share gauge, length and
# temperature, so only their cross-section tolerance and the terminations
# differ. Lower it when the imbalance was measured and entered as imbalance_ohm.
DEFAULT_THREE_WIRE_IMBALANCE = 0.05

# The linear copper law is applied over the range of the RTD equation
# (IEC 60751: −200…850 °C); outside it a lead temperature is a mistake.
_LEAD_T_MIN_C = -200.0
_LEAD_T_MAX_C = 850.0

# IEC 60228 (conductors of insulated cables), tables 1 to 3: the MAXIMUM resistance
# at 20 °C of plain annealed copper conductors, in ohm/km, by nominal cross-section
# in mm² and conductor class (1 solid, 2 stranded, 5 flexible). From memory of
# IEC 60228:2004, not checked against the document here: the ratios to the nominal
# 1/58 ohm·mm²/m (about 1.05 for classes 1 and 2, 1.13 for class 5) are what the
# correction uses, and they are the well-known part; check a value before
# relying on it for a specific cable.
IEC_60228_MAX_OHM_PER_KM: dict[int, dict[float, float]] = {
    1: {0.5: 36.0, 0.75: 24.5, 1.0: 18.1, 1.5: 12.1, 2.5: 7.41, 4.0: 4.61, 6.0: 3.08, 10.0: 1.83},
    2: {0.5: 36.0, 0.75: 24.5, 1.0: 18.1, 1.5: 12.1, 2.5: 7.41, 4.0: 4.61, 6.0: 3.08, 10.0: 1.83},
    5: {0.5: 39.0, 0.75: 26.0, 1.0: 19.5, 1.5: 13.3, 2.5: 7.98, 4.0: 4.95, 6.0: 3.30, 10.0: 1.91},
}


def iec_60228_max_ohm_per_m(lead_class: int, area_mm2: float) -> float:
    """The IEC 60228 maximum resistance at 20 °C, ohm/m, of a class 1, 2 or 5 copper conductor.

    Raises:
        InputError: a class other than 1, 2, 5, or a cross-section that is
            not one of the class's nominal sizes.
    """
    table = IEC_60228_MAX_OHM_PER_KM.get(lead_class) if not isinstance(lead_class, bool) else None
    if table is None:
        raise InputError(f"IEC 60228 conductor class must be 1 (solid), 2 (stranded) or 5 (flexible), "
                         f"got {lead_class!r}")
    for size, ohm_per_km in table.items():
        if math.isclose(size, float(area_mm2), rel_tol=1e-9):
            return ohm_per_km / 1000.0
    raise InputError(f"{area_mm2!r} mm² is not a nominal IEC 60228 size; give one of "
                     f"{', '.join(f'{a:g}' for a in table)} mm²")


_AWG_MIN = -3  # 0000 (4/0)
_AWG_MAX = 40
_AWG_ZEROS = {"0": 0, "00": -1, "000": -2, "0000": -3, "1/0": 0, "2/0": -1, "3/0": -2, "4/0": -3}
_AWG_SUFFIX = re.compile(r"\s*(awg|ga|gauge)?\s*$", re.IGNORECASE)


def _gauge_index(awg: object) -> FloatArray:
    """The ASTM B258 index n (0000 → −3, 00 → −1, 24 → 24) for gauge names or numbers."""
    if isinstance(awg, str):
        text = _AWG_SUFFIX.sub("", awg.strip())
        if text in _AWG_ZEROS:
            return np.asarray(_AWG_ZEROS[text], dtype=np.float64)
        if re.fullmatch(r"[1-9][0-9]?", text):
            return _gauge_index(int(text))
        raise InputError(
            f"AWG size {awg!r} is not a gauge name; use a number 0…40 or "
            "'00', '000', '0000' (also written '2/0', '3/0', '4/0')"
        )
    if isinstance(awg, bool):
        raise InputError(f"AWG size {awg!r} is not a gauge number; use 0…40 or '4/0'…'00'")
    n = np.asarray(awg, dtype=np.float64)
    bad = ~np.isfinite(n) | (n != np.round(n)) | (n < 0) | (n > _AWG_MAX)
    if np.any(bad):
        first = n[bad].flat[0] if n.ndim else n
        raise InputError(
            f"AWG size {first!r} is outside 0…{_AWG_MAX} or not a whole number; "
            "give larger sizes as '00', '000', '0000' (or '2/0', '3/0', '4/0')"
        )
    return n


def awg_diameter_mm(awg: int | str | npt.ArrayLike) -> FloatArray:
    """Diameter in mm of a solid round wire of American Wire Gauge ``awg``.

    ASTM B258 defines the sizes geometrically between 0000 (0.4600 in) and 36
    (0.0050 in), 39 steps apart: d = 0.127 mm · 92^((36 − n)/39), with n = 0,
    −1, −2, −3 for 0, 00, 000, 0000. The value is the defining formula, not
    the rounded figure of a printed table.

    Args:
        awg: gauge numbers 0…40 (scalar or array), or one name such as
            ``"24"``, ``"00"``, ``"4/0"`` or ``"22 AWG"``.

    Raises:
        InputError: a size that is not a gauge.
    """
    n = _gauge_index(awg)
    return 0.127 * np.power(92.0, (36.0 - n) / 39.0)


def awg_area_mm2(awg: int | str | npt.ArrayLike) -> FloatArray:
    """Cross-section in mm² of a solid round wire of American Wire Gauge ``awg``."""
    d = awg_diameter_mm(awg)
    return (math.pi / 4.0) * d * d


def _check_lead_temperature(t: FloatArray, what: str) -> None:
    out = np.isfinite(t) & ((t < _LEAD_T_MIN_C) | (t > _LEAD_T_MAX_C))
    if np.any(out):
        first = float(t[out].flat[0]) if t.ndim else float(t)
        raise InputError(
            f"{what} {first:g} °C is outside {_LEAD_T_MIN_C:g}…{_LEAD_T_MAX_C:g} °C, "
            "where the lead correction applies; check the unit (°C expected)"
        )


def copper_resistance_ohm(
    length_m: npt.ArrayLike,
    area_mm2: npt.ArrayLike,
    temperature_c: npt.ArrayLike = REFERENCE_TEMPERATURE_C,
) -> FloatArray:
    """Resistance in ohm of annealed copper of ``length_m`` and ``area_mm2`` at ``temperature_c``.

    R = ρ20 · L / A · (1 + α20 · (T − 20 °C)), with ρ20 and α20 from IEC 60028.
    Arguments broadcast; a NaN temperature gives NaN.

    Raises:
        InputError: a negative or non-finite length, a cross-section that is
            not positive, or a temperature outside −200…850 °C.
    """
    length = np.asarray(length_m, dtype=np.float64)
    area = np.asarray(area_mm2, dtype=np.float64)
    t = np.asarray(temperature_c, dtype=np.float64)
    if np.any(~np.isfinite(length) | (length < 0)):
        raise InputError(f"conductor length must be finite and ≥ 0 m, got {length_m!r}")
    if np.any(~np.isfinite(area) | (area <= 0)):
        raise InputError(f"conductor cross-section must be finite and > 0 mm², got {area_mm2!r}")
    _check_lead_temperature(t, "lead temperature")
    r20 = COPPER_RESISTIVITY_20C_OHM_MM2_PER_M * length / area
    return r20 * (1.0 + COPPER_ALPHA_20C_PER_K * (t - REFERENCE_TEMPERATURE_C))


def _finite_nonnegative(value: float | None, name: str, *, optional: bool = False) -> None:
    if value is None and optional:
        return
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise InputError(f"{name} must be a number, got {value!r}")
    if not (math.isfinite(value) and value >= 0):
        raise InputError(f"{name} must be finite and ≥ 0, got {value!r}")


@dataclass(frozen=True)
class Conductor:
    """One conductor's run from the instrument terminal to the sensor element.

    Give either ``fixed_ohm`` (a resistance measured or stated, at whatever
    temperature, and taken as constant), or a copper cross-section (``awg`` or
    ``area_mm2``) with the length inside the chamber (at the chamber
    temperature) and outside it (at the ambient temperature).

    Attributes:
        fixed_ohm: the conductor's resistance in ohm, constant.
        awg: American Wire Gauge size (``24``, ``"4/0"``), for copper.
        area_mm2: metric cross-section in mm² (0.5, 0.75, 1.0 …), for copper.
        inside_length_m: length inside the chamber, in m.
        outside_length_m: length outside the chamber, in m.
    """

    fixed_ohm: float | None = None
    awg: int | str | None = None
    area_mm2: float | None = None
    inside_length_m: float = 0.0
    outside_length_m: float = 0.0
    lead_class: int | None = None

    def __post_init__(self) -> None:
        if self.lead_class is not None:
            if self.area_mm2 is None:
                raise InputError("an IEC 60228 conductor class applies to a metric cross-section: give area_mm2 "
                                 "(an AWG size or a fixed resistance has no class)")
            iec_60228_max_ohm_per_m(self.lead_class, self.area_mm2)  # raises on a bad class or size
        _finite_nonnegative(self.fixed_ohm, "conductor resistance fixed_ohm (ohm)", optional=True)
        _finite_nonnegative(self.inside_length_m, "inside_length_m (m)")
        _finite_nonnegative(self.outside_length_m, "outside_length_m (m)")
        _finite_nonnegative(self.area_mm2, "area_mm2", optional=True)
        given = [n for n in ("fixed_ohm", "awg", "area_mm2") if getattr(self, n) is not None]
        if len(given) != 1:
            raise InputError(
                "describe a conductor by exactly one of fixed_ohm (ohm), awg or area_mm2, "
                f"got {', '.join(given) if given else 'none'}"
            )
        if self.fixed_ohm is not None:
            if self.inside_length_m or self.outside_length_m:
                raise InputError(
                    f"conductor given as fixed_ohm={self.fixed_ohm!r} ohm also has lengths; "
                    "give either a resistance or a gauge with lengths, not both"
                )
            return
        if self.area_mm2 is not None and self.area_mm2 == 0:
            raise InputError("area_mm2 must be > 0 mm², got 0")
        if self.awg is not None:
            if np.ndim(self.awg) != 0:
                raise InputError(f"awg must be one gauge size, got {self.awg!r}")
            _gauge_index(self.awg)  # raises on a bad size
        if self.inside_length_m + self.outside_length_m == 0:
            raise InputError(
                "a copper conductor needs a length: "
                "give inside_length_m and/or outside_length_m (m)"
            )

    @property
    def class_factor(self) -> float:
        """The conductor's resistance over the nominal copper's: 1, or the middle of nominal…IEC 60228 maximum.

        With a class given, the real conductor lies somewhere between the
        nominal resistivity (1/58 ohm·mm²/m over the nominal area) and the
        class's maximum (stranded and flexible conductors are made to that
        maximum, up to about 13 % above nominal for class 5): the correction
        takes the middle and ``class_spread`` the half-width.
        """
        if self.lead_class is None or self.area_mm2 is None:
            return 1.0
        nominal = COPPER_RESISTIVITY_20C_OHM_MM2_PER_M / self.area_mm2
        return 0.5 * (1.0 + iec_60228_max_ohm_per_m(self.lead_class, self.area_mm2) / nominal)

    @property
    def class_spread(self) -> float:
        """Half-width of nominal…maximum as a fraction of the middle (0 without a class)."""
        if self.lead_class is None or self.area_mm2 is None:
            return 0.0
        f = self.class_factor
        return (f - 1.0) / f

    @classmethod
    def fixed(cls, ohm: float) -> Conductor:
        """A conductor of known, constant resistance ``ohm`` (as ``--lead-ohms`` gives it)."""
        return cls(fixed_ohm=ohm)

    @property
    def cross_section_mm2(self) -> float | None:
        """The copper cross-section in mm², or None for a fixed resistance."""
        if self.area_mm2 is not None:
            return float(self.area_mm2)
        if self.awg is not None:
            return float(awg_area_mm2(self.awg))
        return None

    def conductor_ohm(
        self,
        chamber_c: npt.ArrayLike | None = None,
        ambient_c: npt.ArrayLike = REFERENCE_TEMPERATURE_C,
    ) -> FloatArray:
        """Resistance in ohm of this conductor: inside part at ``chamber_c``, rest at ``ambient_c``.

        A rough chamber temperature is enough (the sensor's own reading, or the
        set point): 1 m of 24 AWG changes by 0.33 mΩ/K.

        Raises:
            InputError: the conductor runs inside the chamber and no
                ``chamber_c`` was given, or a temperature is out of range.
        """
        ambient = np.asarray(ambient_c, dtype=np.float64)
        chamber = None if chamber_c is None else np.asarray(chamber_c, dtype=np.float64)
        shape = ambient.shape if chamber is None else np.broadcast_shapes(
            ambient.shape, chamber.shape
        )
        if self.fixed_ohm is not None:
            return np.full(shape, self.fixed_ohm, dtype=np.float64)
        area = self.cross_section_mm2
        factor = self.class_factor
        outside = factor * copper_resistance_ohm(self.outside_length_m, area, ambient)
        if self.inside_length_m == 0:
            return np.broadcast_to(outside, shape).astype(np.float64)
        if chamber is None:
            raise InputError(
                f"the conductor runs {self.inside_length_m:g} m inside the chamber; give chamber_c "
                "(the chamber temperature in °C, e.g. the sensor's reading)"
            )
        inside = factor * copper_resistance_ohm(self.inside_length_m, area, chamber)
        return np.asarray(inside + outside, dtype=np.float64)


@dataclass(frozen=True)
class Leads:
    """How a sensor is wired to the instrument, and the lead correction that follows.

    Attributes:
        wiring: 2, 3 or 4 wires.
        conductor: one conductor's run (all conductors are taken alike);
            required for 2- and 3-wire, ignored for 4-wire.
        imbalance_ohm: known residual R_c1 − R_c3 of a 3-wire hook-up (what a
            3-wire reading shows with the element end shorted); may be negative.
        tolerance: 2-wire only: half-width of the residual as a fraction of the
            pair's resistance.
        imbalance_fraction: 3-wire only: half-width of the unknown imbalance as
            a fraction of one conductor's resistance.
    """

    wiring: Wiring = 4
    conductor: Conductor | None = None
    imbalance_ohm: float = 0.0
    tolerance: float = DEFAULT_TWO_WIRE_TOLERANCE
    imbalance_fraction: float = DEFAULT_THREE_WIRE_IMBALANCE

    def __post_init__(self) -> None:
        if isinstance(self.wiring, bool) or not isinstance(self.wiring, (int, np.integer)) or (
            self.wiring not in (2, 3, 4)
        ):
            raise InputError(f"wiring must be 2, 3 or 4 (wires), got {self.wiring!r}")
        if self.conductor is not None and not isinstance(self.conductor, Conductor):
            raise InputError(
                f"conductor must be a Conductor, got {self.conductor!r}; "
                "for a resistance use Conductor.fixed(ohm) or Leads.from_lead_ohms"
            )
        if self.wiring in (2, 3) and self.conductor is None:
            raise InputError(
                f"{self.wiring}-wire needs the lead resistance: give a conductor "
                "(the resistance of ONE conductor, or its gauge and lengths)"
            )
        if isinstance(self.imbalance_ohm, bool) or not (
            isinstance(self.imbalance_ohm, (int, float, np.integer, np.floating))
            and math.isfinite(self.imbalance_ohm)
        ):
            raise InputError(
                f"imbalance_ohm must be a finite resistance, got {self.imbalance_ohm!r}"
            )
        if self.imbalance_ohm != 0 and self.wiring != 3:
            raise InputError(
                f"imbalance_ohm={self.imbalance_ohm!r} applies to 3-wire only, "
                f"but wiring is {self.wiring}"
            )
        for name in ("tolerance", "imbalance_fraction"):
            value = getattr(self, name)
            _finite_nonnegative(value, name)
            if value > 1:
                raise InputError(f"{name} is a fraction (0.10 for 10 %), got {value!r}")

    @classmethod
    def from_lead_ohms(cls, wiring: Wiring, lead_ohms: float, **kwargs: float) -> Leads:
        """Leads from the resistance of ONE conductor (the ``--lead-ohms`` meaning)."""
        return cls(wiring=wiring, conductor=Conductor.fixed(lead_ohms), **kwargs)

    def _one_conductor_ohm(
        self, chamber_c: npt.ArrayLike | None, ambient_c: npt.ArrayLike
    ) -> FloatArray:
        assert self.conductor is not None  # guaranteed for 2- and 3-wire by __post_init__
        return self.conductor.conductor_ohm(chamber_c, ambient_c)

    def _shape(self, chamber_c: npt.ArrayLike | None, ambient_c: npt.ArrayLike) -> tuple[int, ...]:
        shapes = [np.shape(ambient_c)] + ([] if chamber_c is None else [np.shape(chamber_c)])
        return np.broadcast_shapes(*shapes)

    def correction_ohm(
        self,
        chamber_c: npt.ArrayLike | None = None,
        ambient_c: npt.ArrayLike = REFERENCE_TEMPERATURE_C,
    ) -> FloatArray:
        """Resistance in ohm to SUBTRACT from the measured value to remove the leads.

        2-wire: both conductors, 2·R_c; 3-wire: the known imbalance
        R_c1 − R_c3 (nominally 0); 4-wire: 0.
        """
        if self.wiring == 2:
            return 2.0 * self._one_conductor_ohm(chamber_c, ambient_c)
        return np.full(
            self._shape(chamber_c, ambient_c),
            self.imbalance_ohm if self.wiring == 3 else 0.0,
            dtype=np.float64,
        )

    def bound_ohm(
        self,
        chamber_c: npt.ArrayLike | None = None,
        ambient_c: npt.ArrayLike = REFERENCE_TEMPERATURE_C,
    ) -> FloatArray:
        """Half-width in ohm of the rectangular residual left after the correction.

        The uncertainty budget takes bound/√3 as the standard uncertainty
        (JCGM 100:2008, 4.3.7). 2-wire: (``tolerance`` + the conductor's
        IEC 60228 class spread) · 2·R_c; 3-wire: ``imbalance_fraction`` · R_c
        (the two conductors of one cable share their class); 4-wire: 0.
        """
        if self.wiring == 2:
            spread = 0.0 if self.conductor is None else self.conductor.class_spread
            return (self.tolerance + spread) * 2.0 * self._one_conductor_ohm(chamber_c, ambient_c)
        if self.wiring == 3:
            return self.imbalance_fraction * self._one_conductor_ohm(chamber_c, ambient_c)
        return np.zeros(self._shape(chamber_c, ambient_c), dtype=np.float64)

    def apply(
        self,
        measured_ohm: npt.ArrayLike,
        chamber_c: npt.ArrayLike | None = None,
        ambient_c: npt.ArrayLike = REFERENCE_TEMPERATURE_C,
    ) -> tuple[FloatArray, npt.NDArray[np.uint16]]:
        """The element's resistance (measured − correction) and a flag array beside it.

        Where the correction is not smaller than what was measured the value is
        NaN with ``Flag.LEADS_EXCEED_SENSOR``: no invented temperature.
        """
        measured = np.asarray(measured_ohm, dtype=np.float64)
        r = measured - self.correction_ohm(chamber_c, ambient_c)
        # a NaN correction (no chamber temperature) leaves NaN for the curve to flag
        exceeded = np.isfinite(r) & (r <= 0)
        flags = np.where(exceeded, FLAG_DTYPE(Flag.LEADS_EXCEED_SENSOR), FLAG_DTYPE(0))
        return np.where(exceeded, np.nan, r).astype(np.float64), flags.astype(FLAG_DTYPE)
