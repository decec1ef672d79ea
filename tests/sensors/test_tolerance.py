"""IEC 60751 tolerance classes against the published tables.

Thermometer classes AA, A, B (both element types): WIKA operating instructions
for resistance thermometers (TR series), which reproduce the DIN EN 60751
(= IEC 60751:2008) table of classes. Class C and the resistor classes W…/F…:
from memory of IEC 60751:2008, 5.1.2 (resistors) and 5.1.3 (thermometers).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from soaklog.errors import InputError
from soaklog.sensors.tolerance import TOLERANCE_CLASSES, class_names, tolerance_class

# (a, b) of the tolerance ±(a + b·|t|) in °C
# WIKA TR operating instructions (DIN EN 60751): AA ±(0.10 + 0.0017|t|),
# A ±(0.15 + 0.0020|t|), B ±(0.30 + 0.0050|t|); C ±(0.6 + 0.01|t|) from memory
# of IEC 60751:2008, 5.1.3. The resistor classes W/F x carry the same a, b as
# AA, A, B, C for x = 0.1, 0.15, 0.3, 0.6 (from memory of IEC 60751:2008, 5.1.2).
AB = {"0.1": (0.10, 0.0017), "0.15": (0.15, 0.0020), "0.3": (0.30, 0.0050), "0.6": (0.60, 0.0100)}

# name, element, t_min_c, t_max_c, a, b
THERMOMETER_CLASSES = [
    # WIKA TR operating instructions (DIN EN 60751): wire-wound (W) / thin-film (F) ranges
    ("AA", "wire", -50.0, 250.0, *AB["0.1"]),
    ("AA", "film", 0.0, 150.0, *AB["0.1"]),
    ("A", "wire", -100.0, 450.0, *AB["0.15"]),
    ("A", "film", -30.0, 300.0, *AB["0.15"]),
    ("B", "wire", -196.0, 600.0, *AB["0.3"]),
    ("B", "film", -50.0, 500.0, *AB["0.3"]),
    # from memory of IEC 60751:2008, 5.1.3
    ("C", "wire", -196.0, 600.0, *AB["0.6"]),
    ("C", "film", -50.0, 600.0, *AB["0.6"]),
]

# from memory of IEC 60751:2008, 5.1.2 (tolerance classes for resistors): the
# wire-wound resistor ranges are wider than those of the thermometer classes
# built from them (W 0.1 to +350 °C, W 0.3 and W 0.6 to +660 °C)
RESISTOR_CLASSES = [
    ("W0.1", "wire", -100.0, 350.0, *AB["0.1"]),
    ("F0.1", "film", 0.0, 150.0, *AB["0.1"]),
    ("W0.15", "wire", -100.0, 450.0, *AB["0.15"]),
    ("F0.15", "film", -30.0, 300.0, *AB["0.15"]),
    ("W0.3", "wire", -196.0, 660.0, *AB["0.3"]),
    ("F0.3", "film", -50.0, 500.0, *AB["0.3"]),
    ("W0.6", "wire", -196.0, 660.0, *AB["0.6"]),
    ("F0.6", "film", -50.0, 600.0, *AB["0.6"]),
]



def _ranged(rows: list[tuple[str, str, float, float, float, float]]) -> list[object]:
    """The rows as pytest params, named by class and element."""
    return [pytest.param(*row, id=f"{row[0]}-{row[1]}") for row in rows]


ALL_ROWS = THERMOMETER_CLASSES + RESISTOR_CLASSES
ALL_IDS = [f"{r[0]}-{r[1]}" for r in ALL_ROWS]


# ---------------------------------------------------------------------------
# Tolerance values a + b|t|
# ---------------------------------------------------------------------------


@pytest.mark.parametrize(("name", "element", "t_min", "t_max", "a", "b"), ALL_ROWS, ids=ALL_IDS)
def test_bound_is_a_plus_b_abs_t(
    name: str, element: str, t_min: float, t_max: float, a: float, b: float
) -> None:
    cls = tolerance_class(name, element)
    temps = np.array([t_min, t_max, 0.0, 0.5 * (t_min + t_max), -t_min, 100.0], dtype=np.float64)
    expected = a + b * np.abs(temps)
    got = cls.bound_c(temps)
    assert got.dtype == np.float64 and got.shape == temps.shape
    np.testing.assert_allclose(got, expected, rtol=0, atol=1e-12)
    assert (cls.a_c, cls.b_per_c) == pytest.approx((a, b), abs=1e-15)


# printed tolerance values in °C at selected temperatures, JIS C 1604:1997
# (the Japanese counterpart of IEC 60751, as reproduced by Yamari Industries,
# "測温抵抗体のJIS規格"), classes A and B; the 650 °C class B entry (printed
# there as ±33.6) is left out as a misprint
PRINTED_A = {
    -200: 0.55, -100: 0.35, 0: 0.15, 100: 0.35, 200: 0.55, 300: 0.75, 400: 0.95, 500: 1.15, 600: 1.35,
}  # fmt: skip
PRINTED_B = {-200: 1.3, -100: 0.8, 0: 0.3, 100: 0.8, 200: 1.3, 300: 1.8, 400: 2.3, 500: 2.8, 600: 3.3}


@pytest.mark.parametrize(("t_c", "tol_c"), sorted(PRINTED_A.items()))
def test_class_a_bound_matches_printed_values(t_c: int, tol_c: float) -> None:
    for name in ("A", "W0.15", "F0.15"):
        assert float(tolerance_class(name).bound_c(t_c)) == pytest.approx(tol_c, abs=1e-9)


@pytest.mark.parametrize(("t_c", "tol_c"), sorted(PRINTED_B.items()))
def test_class_b_bound_matches_printed_values(t_c: int, tol_c: float) -> None:
    for name in ("B", "W0.3", "F0.3"):
        assert float(tolerance_class(name).bound_c(t_c)) == pytest.approx(tol_c, abs=1e-9)


def test_bound_at_zero_in_ohm_for_a_pt100() -> None:
    # instrumentationforum.com "RTD standards" (IEC 60751 classes): at 0 °C class AA
    # is 100.00 ± 0.04 ohm, A ± 0.06 ohm, B ± 0.12 ohm; 0.39083 ohm/K is R0·A of
    # IEC 60751:2008, 4.2
    for name, ohm in (("AA", 0.04), ("A", 0.06), ("B", 0.12)):
        assert float(tolerance_class(name).bound_c(0.0)) * 0.39083 == pytest.approx(ohm, abs=0.005)


# ---------------------------------------------------------------------------
# Validity ranges
# ---------------------------------------------------------------------------


@pytest.mark.parametrize(("name", "element", "t_min", "t_max", "a", "b"), _ranged(ALL_ROWS))
def test_range_of_validity(name: str, element: str, t_min: float, t_max: float, a: float, b: float) -> None:
    cls = tolerance_class(name, element)
    assert (cls.t_min_c, cls.t_max_c) == (t_min, t_max)
    assert cls.element == element


@pytest.mark.parametrize(("name", "element", "t_min", "t_max", "a", "b"), _ranged(ALL_ROWS))
def test_in_range_at_and_just_beyond_the_limits(
    name: str, element: str, t_min: float, t_max: float, a: float, b: float
) -> None:
    cls = tolerance_class(name, element)
    at_limits = cls.in_range(np.array([t_min, t_max, 0.5 * (t_min + t_max)]))
    beyond = cls.in_range(np.array([t_min - 1e-6, t_max + 1e-6, t_min - 50.0, t_max + 50.0]))
    assert at_limits.dtype == np.bool_
    assert at_limits.tolist() == [True, True, True]
    assert beyond.tolist() == [False, False, False, False]


def test_nan_is_never_in_range() -> None:
    for name in class_names():
        assert not bool(tolerance_class(name).in_range(math.nan))


def test_in_range_keeps_shape() -> None:
    t = np.linspace(-60.0, 160.0, 12).reshape(3, 4)
    assert tolerance_class("AA").in_range(t).shape == (3, 4)


# ---------------------------------------------------------------------------
# Lookup
# ---------------------------------------------------------------------------


def test_thermometer_class_without_element_uses_the_film_range() -> None:
    # documented: the narrower (film) range, so no tolerance is claimed where it may not hold
    for name, element, t_min, t_max, _, _ in THERMOMETER_CLASSES:
        if element == "film":
            cls = tolerance_class(name)
            assert cls.element == "film"
            assert (cls.t_min_c, cls.t_max_c) == (t_min, t_max)


def test_film_range_lies_inside_wire_range_for_every_thermometer_class() -> None:
    # a fact of the published table, on which the default above relies
    rows = {(n, e): (lo, hi) for n, e, lo, hi, _, _ in THERMOMETER_CLASSES}
    for name in ("AA", "A", "B", "C"):
        (flo, fhi), (wlo, whi) = rows[(name, "film")], rows[(name, "wire")]
        assert wlo <= flo and fhi <= whi


@pytest.mark.parametrize(
    ("given", "name", "element"),
    [("aa", "AA", "film"), (" b ", "B", "film"), ("f0.3", "F0.3", "film"), ("w0.15", "W0.15", "wire")],
)
def test_names_are_case_insensitive(given: str, name: str, element: str) -> None:
    cls = tolerance_class(given)
    assert (cls.name, cls.element) == (name, element)


def test_resistor_class_carries_its_own_element() -> None:
    assert tolerance_class("W0.3").element == "wire"
    assert tolerance_class("F0.3").element == "film"
    assert tolerance_class("W0.3", "wire").element == "wire"
    assert tolerance_class("F0.3", "film").element == "film"


def test_class_names_lists_every_class_once() -> None:
    names = class_names()
    assert names[:4] == ["AA", "A", "B", "C"]  # documented: thermometer classes first
    assert sorted(names) == sorted(
        ["AA", "A", "B", "C", "F0.1", "F0.15", "F0.3", "F0.6", "W0.1", "W0.15", "W0.3", "W0.6"]
    )
    for name in names:
        assert tolerance_class(name).name == name


def test_registry_holds_both_elements_of_thermometer_classes_and_one_of_resistor_classes() -> None:
    keys = set(TOLERANCE_CLASSES)
    assert len(keys) == 16
    for name in ("AA", "A", "B", "C"):
        assert {(name, "film"), (name, "wire")} <= keys
    for x in ("0.1", "0.15", "0.3", "0.6"):
        assert (f"F{x}", "film") in keys and (f"W{x}", "wire") in keys
        assert (f"F{x}", "wire") not in keys and (f"W{x}", "film") not in keys


@pytest.mark.parametrize("name", ["D", "AAA", "1/3 B", "F0.2", "W0.05", "X0.1", "F", "W", "0.1", "", "B1"])
def test_unknown_class_raises_input_error_listing_known(name: str) -> None:
    with pytest.raises(InputError) as info:
        tolerance_class(name)
    message = str(info.value)
    assert repr(name) in message
    assert "AA" in message and "W0.6" in message


@pytest.mark.parametrize(
    ("name", "element"), [("F0.1", "wire"), ("F0.6", "wire"), ("W0.1", "film"), ("W0.3", "film")]
)
def test_element_contradicting_the_class_letter_raises(name: str, element: str) -> None:
    with pytest.raises(InputError, match=name):
        tolerance_class(name, element)


@pytest.mark.parametrize("element", ["thin-film", "wound", "", "ceramic"])
def test_unknown_element_raises(element: str) -> None:
    with pytest.raises(InputError, match="element"):
        tolerance_class("A", element)


def test_input_error_is_a_value_error() -> None:
    # callers that only know ValueError still catch it
    with pytest.raises(ValueError):
        tolerance_class("Z")
