"""``kind = "soak"``: hold one temperature within a band for a time (IEC 60068-2-2 dry heat, a 1000-hour soak)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

from soaklog.kinds import PROFILES
from soaklog.profile import Band, PlannedProfile, ProfileBase, duration, fmt_s, number


@dataclass(frozen=True)
class SoakProfile(ProfileBase):
    """Hold ``band.nominal_c``: the samples within the band for at least ``duration_s``."""

    band: Band
    duration_s: float
    kind: Literal["soak"] = "soak"

    @property
    def setpoints_c(self) -> tuple[float, ...]:
        return (self.band.nominal_c,)

    def describe(self) -> str:
        return f"soak at {self.band.describe()} for {fmt_s(self.duration_s)}"


@PROFILES.register("soak")
class SoakKind:
    name = "soak"
    #: ``temperature_c``, ``duration`` (the time the samples must spend within
    #: tolerance), ``tolerance_k`` or ``tolerance_below_k`` / ``tolerance_above_k``
    keys = frozenset({"temperature_c", "duration", "tolerance_below_k", "tolerance_above_k"})

    def read(self, p: Any, data: Mapping[str, Any], common: Mapping[str, Any], tol: float | None) -> SoakProfile | None:
        t = number(p, data, "temperature_c", required=True)
        dur = duration(p, data, "duration", required=True)
        below = number(p, data, "tolerance_below_k", minimum=0.0)
        above = number(p, data, "tolerance_above_k", minimum=0.0)
        below = tol if below is None else below
        above = tol if above is None else above
        if below is None or above is None:
            p.bad("tolerance_k", "is required (or both tolerance_below_k and tolerance_above_k)")
        if t is None or dur is None or below is None or above is None:
            return None
        return SoakProfile(band=Band(t, below, above), duration_s=dur, **common)

    def planned(self, profile: SoakProfile, *, ambient_c: float) -> PlannedProfile:
        t = profile.band.nominal_c
        tol = profile.band.below_k if profile.band.below_k == profile.band.above_k else None
        return PlannedProfile("soak", t, t, t, None, 0.0, profile.duration_s, 1, tol)
