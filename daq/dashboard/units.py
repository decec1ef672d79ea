"""Display units and the short number formats the dashboard shows (°C inside, °C/K/°F on screen)."""

from __future__ import annotations

import math
from datetime import datetime
from typing import Literal

import numpy as np
import numpy.typing as npt

__all__ = [
    "DIFFERENCE_SYMBOL",
    "SYMBOL",
    "UNITS",
    "Unit",
    "difference_to_unit",
    "fmt_age",
    "fmt_difference",
    "fmt_elapsed",
    "fmt_hours",
    "fmt_rate",
    "fmt_temperature",
    "next_unit",
    "parse_utc_ms",
    "to_unit",
]

Unit = Literal["C", "K", "F"]
UNITS: tuple[Unit, ...] = ("C", "K", "F")
SYMBOL: dict[Unit, str] = {"C": "°C", "K": "K", "F": "°F"}
#: a temperature difference (uncertainty, rate) in each display unit
DIFFERENCE_SYMBOL: dict[Unit, str] = {"C": "K", "K": "K", "F": "°F"}

# SI Brochure (9th ed., 2019), 2.3.1: t/°C = T/K − 273.15.
_KELVIN_OFFSET = 273.15
# NIST SP 811 (2008), B.9: t/°F = 1.8 · t/°C + 32.
_F_PER_K = 1.8
_F_OFFSET = 32.0


def next_unit(unit: Unit) -> Unit:
    """The unit the unit key switches to after ``unit``."""
    return UNITS[(UNITS.index(unit) + 1) % len(UNITS)]


def to_unit(value_c: float | npt.NDArray[np.float64], unit: Unit) -> float | npt.NDArray[np.float64]:
    """A temperature in °C shown in ``unit`` (display only: nothing is stored in K or °F)."""
    if unit == "C":
        return value_c
    if unit == "K":
        return value_c + _KELVIN_OFFSET
    return value_c * _F_PER_K + _F_OFFSET


def difference_to_unit(value_k: float | npt.NDArray[np.float64], unit: Unit) -> float | npt.NDArray[np.float64]:
    """A temperature difference (K) shown in ``unit``: the same number in °C and K, ×1.8 in °F."""
    return value_k * _F_PER_K if unit == "F" else value_k


def _missing(x: float | None) -> bool:
    return x is None or (isinstance(x, float) and not math.isfinite(x))


def fmt_temperature(value_c: float | None, unit: Unit, *, decimals: int = 3) -> str:
    """A temperature in ``unit`` with fixed decimals, or an em dash when there is none."""
    if _missing(value_c):
        return "—"
    assert value_c is not None
    return f"{float(to_unit(value_c, unit)):.{decimals}f}"


def fmt_difference(value_k: float | None, unit: Unit, *, decimals: int = 3) -> str:
    if _missing(value_k):
        return "—"
    assert value_k is not None
    return f"{float(difference_to_unit(value_k, unit)):.{decimals}f}"


def fmt_rate(rate_k_per_min: float | None, unit: Unit) -> str:
    """A rate of change per minute, signed, two decimals; a capped form when it is huge."""
    if _missing(rate_k_per_min):
        return "—"
    assert rate_k_per_min is not None
    r = float(difference_to_unit(rate_k_per_min, unit))
    if abs(r) >= 1000.0:
        return ">+999" if r > 0 else "<-999"
    # a rate that rounds to zero is shown without a sign: "-0.00" reads as a trend
    if round(r, 2) == 0.0:
        return "0.00"
    return f"{r:+.2f}"


def fmt_age(age_s: float | None) -> str:
    """How long ago, in the largest unit that keeps it short: ``4 s``, ``12 min``, ``3.5 h``, ``9 d``."""
    if _missing(age_s):
        return "—"
    assert age_s is not None
    a = max(0.0, float(age_s))
    if a < 100:
        return f"{a:.0f} s"
    if a < 100 * 60:
        return f"{a / 60:.0f} min"
    if a < 48 * 3600:
        return f"{a / 3600:.1f} h"
    return f"{a / 86400:.0f} d"


def fmt_elapsed(seconds: float | None) -> str:
    """A duration as hours:minutes:seconds with unbounded hours (``1049:59:59``)."""
    if _missing(seconds):
        return "—"
    assert seconds is not None
    s = int(max(0.0, float(seconds)))
    return f"{s // 3600:d}:{s % 3600 // 60:02d}:{s % 60:02d}"


def parse_utc_ms(text: str | None) -> int | None:
    """Milliseconds since the epoch from the store's ISO 8601 UTC text (``…Z``); None if there is none."""
    if not text:
        return None
    try:
        return round(datetime.fromisoformat(text).timestamp() * 1000)
    except ValueError:
        return None


def fmt_hours(seconds: float | None) -> str:
    """A planned duration in hours (``1050 h``), or minutes below an hour (``45 min``)."""
    if _missing(seconds):
        return "—"
    assert seconds is not None
    if seconds < 3600:
        return f"{seconds / 60:.0f} min"
    h = seconds / 3600
    return f"{h:.0f} h" if abs(h - round(h)) < 1e-9 else f"{h:.1f} h"
