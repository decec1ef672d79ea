"""Named platinum RTD curves: IEC 60751 and the older α curves still met in the field.

Each entry is a Callendar–Van Dusen coefficient set for a nominal R0 of
100 ohm (use ``CvdCurve.with_r0`` for a Pt500, a Pt1000 or a calibrated R0).
A curve is known by its α = (R100 − R0) / (100 °C · R0), which for the
Callendar–Van Dusen equation is A + 100·B, and by its R(100 °C). Coefficient
sets in circulation are often attached to the wrong α, so each set kept here
gives its stated α to the stated digits and its published R(100 °C)
(tests/sensors/test_curves.py checks both); a set that does not is left out.
"""

from __future__ import annotations

from soaklog.errors import InputError
from soaklog.sensors.cvd import IEC_60751, CvdCurve

__all__ = ["NAMED_CURVES", "CURVE_DESCRIPTIONS", "named_curve", "curve_names"]

# National Instruments, SCXI-1503 User Manual, table 4-1 "Platinum RTD Types":
# TCR 3911 "US Industrial Standard, American": A = 3.9692e-3, B = -5.8495e-7,
# C = -4.233e-12 (alpha = A + 100·B = 0.0039107, i.e. 0.003911).
_ALPHA_3911 = CvdCurve(a=3.9692e-3, b=-5.8495e-7, c=-4.233e-12, name="alpha 0.003911 (US industrial)")

# same table: TCR 3920 "US Industrial Standard D-100, American": A = 3.9787e-3,
# B = -5.8686e-7, C = -4.167e-12 (alpha = 0.0039200; R(100 °C) = 139.20 ohm,
# as Minco's note on alpha curves gives for an 0.00392 probe).
_ALPHA_3920 = CvdCurve(a=3.9787e-3, b=-5.8686e-7, c=-4.167e-12, name="alpha 0.003920 (older American)")

# from memory of instrument manuals listing the alpha = 0.003926 curve:
# A = 3.9848e-3, B = -5.870e-7, C = -4.0e-12 (alpha = 0.0039261, R(100 °C) = 139.26 ohm).
_ALPHA_3926 = CvdCurve(
    a=3.9848e-3, b=-5.870e-7, c=-4.0e-12, name="alpha 0.003926 (older US laboratory grade)"
)

# Not included: the alpha = 0.003916 curve (old JIS C 1604-1981, "JPt100"). The set
# circulated for it (A = 3.9739e-3, B = -5.870e-7, C = -4.4e-12, e.g. the same NI
# table) gives alpha = 0.0039152 and R(100 °C) = 139.152 ohm, not the 0.003916 and
# R100/R0 = 1.3916 of JIS C 1604; no set found that gives both.

#: the registry: our own short key -> coefficient set (R0 = 100 ohm)
NAMED_CURVES: dict[str, CvdCurve] = {
    "iec60751": IEC_60751,
    "alpha3911": _ALPHA_3911,
    "alpha3920": _ALPHA_3920,
    "alpha3926": _ALPHA_3926,
}

#: one line per key: what the curve is and where its coefficients come from
CURVE_DESCRIPTIONS: dict[str, str] = {
    "iec60751": (
        "IEC 60751:2008 (also EN 60751, ASTM E1137, JIS C 1604:1997), alpha = 0.00385055, "
        "R(100 °C) = 138.5055 ohm (table 1: 138.51), -200…850 °C"
    ),
    "alpha3911": (
        "older US industrial curve, alpha = 0.003911, R(100 °C) = 139.11 ohm; coefficients "
        "from the NI SCXI-1503 user manual, table 4-1"
    ),
    "alpha3920": (
        "older American curve (NI: 'US Industrial Standard D-100'), alpha = 0.003920, "
        "R(100 °C) = 139.20 ohm; coefficients from the NI SCXI-1503 user manual, table 4-1"
    ),
    "alpha3926": (
        "older US laboratory-grade curve, alpha = 0.003926, R(100 °C) = 139.26 ohm; "
        "coefficients as listed in instrument manuals (recalled, not re-checked at source)"
    ),
}


def curve_names() -> list[str]:
    """Every key of the registry, IEC 60751 first."""
    return list(NAMED_CURVES)


def named_curve(name: str) -> CvdCurve:
    """The coefficient set registered under ``name`` (case and spaces ignored).

    Raises:
        InputError: ``name`` is not a registered curve.
    """
    key = "".join(str(name).split()).lower()
    try:
        return NAMED_CURVES[key]
    except KeyError:
        raise InputError(
            f"unknown RTD curve {name!r}; known curves: {', '.join(NAMED_CURVES)}; "
            "or give the coefficients A, B, C of the sensor's certificate"
        ) from None
