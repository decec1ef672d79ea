"""IEC 60751 tolerance classes: ±(a + b·|t|) and the range where each applies.

IEC 60751:2008, 5.1.3 (tables 3 and 4) defines resistor classes for
wire-wound (W) and film (F) elements and thermometer classes AA, A, B, C whose
range depends on the element inside. The tolerance is a bound (a limit of
permissible deviation), which the uncertainty budget treats as rectangular.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.sensors.flags import within

__all__ = ["ToleranceClass", "TOLERANCE_CLASSES", "tolerance_class", "class_names"]

Element = Literal["film", "wire"]


@dataclass(frozen=True)
class ToleranceClass:
    """One tolerance class with its validity range."""

    name: str
    a_c: float
    b_per_c: float
    t_min_c: float
    t_max_c: float
    element: Element

    #: where the class comes from, for a budget's line
    standard = "IEC 60751"

    def bound_c(self, t_c: npt.ArrayLike) -> npt.NDArray[np.float64]:
        """Half-width of the permitted deviation in kelvin at ``t_c``: a + b·|t|."""
        t = np.asarray(t_c, dtype=np.float64)
        return self.a_c + self.b_per_c * np.abs(t)

    def in_range(self, t_c: npt.ArrayLike) -> npt.NDArray[np.bool_]:
        """Whether the class applies at ``t_c``, ends inclusive (NaN is not in range)."""
        return within(t_c, self.t_min_c, self.t_max_c)

    def describe(self) -> str:
        return (
            f"class {self.name} ({self.element}): ±({self.a_c:g} + {self.b_per_c:g}·|t|) °C "
            f"over {self.t_min_c:g}…{self.t_max_c:g} °C"
        )


# IEC 60751:2008, table 3 (resistors) and table 4 (thermometers): the tolerance
# a + b·|t| of each class and the range of validity for wire-wound and film
# elements. Values from memory of the standard's tables; tests check them
# against the same published figures.
_TOL = {"0.1": (0.10, 0.0017), "0.15": (0.15, 0.0020), "0.3": (0.30, 0.0050), "0.6": (0.60, 0.0100)}
# resistor classes (table 3): the bare element's range
_W_RESISTOR_RANGE = {"0.1": (-100.0, 350.0), "0.15": (-100.0, 450.0), "0.3": (-196.0, 660.0), "0.6": (-196.0, 660.0)}
_F_RESISTOR_RANGE = {"0.1": (0.0, 150.0), "0.15": (-30.0, 300.0), "0.3": (-50.0, 500.0), "0.6": (-50.0, 600.0)}
# thermometer classes (table 4): the assembled thermometer's range, by element inside
_WIRE_RANGE = {"0.1": (-50.0, 250.0), "0.15": (-100.0, 450.0), "0.3": (-196.0, 600.0), "0.6": (-196.0, 600.0)}
_FILM_RANGE = {"0.1": (0.0, 150.0), "0.15": (-30.0, 300.0), "0.3": (-50.0, 500.0), "0.6": (-50.0, 600.0)}
_THERMOMETER = {"AA": "0.1", "A": "0.15", "B": "0.3", "C": "0.6"}


def _build() -> dict[tuple[str, Element], ToleranceClass]:
    out: dict[tuple[str, Element], ToleranceClass] = {}
    for key, (a, b) in _TOL.items():
        out[(f"W{key}", "wire")] = ToleranceClass(f"W{key}", a, b, *_W_RESISTOR_RANGE[key], "wire")
        out[(f"F{key}", "film")] = ToleranceClass(f"F{key}", a, b, *_F_RESISTOR_RANGE[key], "film")
    for name, key in _THERMOMETER.items():
        a, b = _TOL[key]
        out[(name, "wire")] = ToleranceClass(name, a, b, *_WIRE_RANGE[key], "wire")
        out[(name, "film")] = ToleranceClass(name, a, b, *_FILM_RANGE[key], "film")
    return out


TOLERANCE_CLASSES = _build()


def class_names() -> list[str]:
    """Every accepted class name, thermometer classes first."""
    return list(_THERMOMETER) + [f"F{k}" for k in _TOL] + [f"W{k}" for k in _TOL]


def tolerance_class(name: str, element: str | None = None) -> ToleranceClass:
    """Look up a class by name (case-insensitive).

    Resistor classes (F…, W…) carry their element type. A thermometer class
    (AA, A, B, C) applies over a range that depends on the element inside; when
    ``element`` is not given, the film range is used, which is the narrower of
    the two for every class and so never claims a tolerance where it may not
    hold.

    Raises:
        InputError: an unknown class or element, or a resistor class whose
            letter contradicts the element given.
    """
    key = name.strip().upper().replace(" ", "")  # IEC 60751 prints "F 0.3"
    if element is not None:
        element = element.strip().lower()
    if element is not None and element not in ("film", "wire"):
        raise InputError(f"element must be 'film' or 'wire', got {element!r}")
    if key in _THERMOMETER:
        return TOLERANCE_CLASSES[(key, element or "film")]
    if key[:1] in ("F", "W") and key[1:] in _TOL:
        own: Element = "film" if key[0] == "F" else "wire"
        if element is not None and element != own:
            raise InputError(f"class {key} is a {own} class, not {element}")
        return TOLERANCE_CLASSES[(key, own)]
    raise InputError(f"unknown tolerance class {name!r}; known: {', '.join(class_names())}")
