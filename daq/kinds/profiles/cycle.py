"""``kind = "cycle"``: ramp and dwell between two extremes a number of times (JESD22-A104, IEC 60068-2-14)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

from soaklog.kinds import PROFILES
from soaklog.profile import Band, PlannedProfile, ProfileBase, duration, fmt_s, number, pair

#: the ramp-rate tolerance when only a nominal rate is given: ±20 % of it, as
#: IEC 60068-2-14 test Nb allows (1 ± 0.2, 3 ± 0.6, 5 ± 1 K/min; from memory)
DEFAULT_RAMP_TOLERANCE_FRACTION = 0.2


@dataclass(frozen=True)
class CycleProfile(ProfileBase):
    """Cycle between ``low`` and ``high`` ``cycles`` times, dwelling within tolerance at each."""

    low: Band
    high: Band
    cycles: int
    dwell_high_s: float
    dwell_low_s: float
    ramp_k_per_min: float | None
    ramp_tolerance_k_per_min: float | None
    transition_max_s: float | None
    kind: Literal["cycle"] = "cycle"

    @property
    def span_k(self) -> float:
        return self.high.nominal_c - self.low.nominal_c

    @property
    def setpoints_c(self) -> tuple[float, ...]:
        return (self.low.nominal_c, self.high.nominal_c)

    def describe(self) -> str:
        ramp = f", ramps {self.ramp_k_per_min:g} K/min" if self.ramp_k_per_min is not None else ""
        if self.dwell_high_s == self.dwell_low_s:
            dwell = f"dwell {fmt_s(self.dwell_high_s)}"
        else:
            dwell = f"dwell {fmt_s(self.dwell_high_s)} high, {fmt_s(self.dwell_low_s)} low"
        return (f"{self.cycles} cycles between {self.low.describe()} and {self.high.describe()}, "
                f"{dwell}{ramp}")


@PROFILES.register("cycle")
class CycleKind:
    name = "cycle"
    #: ``low_c``, ``high_c``, ``cycles``, ``dwell`` (or ``dwell_high`` and ``dwell_low``),
    #: ``ramp_k_per_min`` with ``ramp_tolerance_k_per_min``, ``transition_max``,
    #: ``tolerance_k`` or ``high_tolerance_k = [below, above]`` and ``low_tolerance_k``
    keys = frozenset({
        "low_c", "high_c", "cycles", "dwell", "dwell_high", "dwell_low", "ramp_k_per_min",
        "ramp_tolerance_k_per_min", "transition_max", "high_tolerance_k", "low_tolerance_k",
    })

    def read(self, p: Any, data: Mapping[str, Any], common: Mapping[str, Any], tol: float | None) -> CycleProfile | None:
        low = number(p, data, "low_c", required=True)
        high = number(p, data, "high_c", required=True)
        cycles = data.get("cycles")
        if cycles is None:
            p.bad("cycles", "is required (the number of cycles planned)")
        elif isinstance(cycles, bool) or not isinstance(cycles, int) or cycles < 1:
            p.bad("cycles", f"must be a whole number ≥ 1, got {cycles!r}")
            cycles = None
        dwell = duration(p, data, "dwell", allow_zero=True)
        dwell_high = duration(p, data, "dwell_high", default=dwell, allow_zero=True)
        dwell_low = duration(p, data, "dwell_low", default=dwell, allow_zero=True)
        if dwell_high is None or dwell_low is None:
            p.bad("dwell", "is required (or both dwell_high and dwell_low)")
        ramp = number(p, data, "ramp_k_per_min", positive=True)
        ramp_tol = number(p, data, "ramp_tolerance_k_per_min", minimum=0.0)
        if ramp_tol is not None and ramp is None:
            p.bad("ramp_tolerance_k_per_min", "needs ramp_k_per_min, the nominal rate it is a tolerance of")
        if ramp is not None and ramp_tol is None:
            ramp_tol = DEFAULT_RAMP_TOLERANCE_FRACTION * ramp
        transition = duration(p, data, "transition_max")
        hi_pair = pair(p, data, "high_tolerance_k")
        lo_pair = pair(p, data, "low_tolerance_k")
        if tol is None and (hi_pair is None or lo_pair is None):
            p.bad("tolerance_k", "is required (or both high_tolerance_k and low_tolerance_k)")
        if low is not None and high is not None and not low < high:
            p.bad("low_c", f"must be below high_c ({high:g} °C), got {low:g} °C")
            return None
        if low is None or high is None or not isinstance(cycles, int) or dwell_high is None or dwell_low is None:
            return None
        hb = hi_pair if hi_pair is not None else (tol, tol)
        lb = lo_pair if lo_pair is not None else (tol, tol)
        if hb[0] is None or lb[0] is None:
            return None
        high_band = Band(high, float(hb[0]), float(hb[1]))  # type: ignore[arg-type]
        low_band = Band(low, float(lb[0]), float(lb[1]))  # type: ignore[arg-type]
        if high_band.lo_c <= low_band.hi_c:
            p.bad("tolerance_k", f"the high band {high_band.describe()} overlaps the low band "
                  f"{low_band.describe()}; narrow the tolerances")
            return None
        return CycleProfile(
            low=low_band, high=high_band, cycles=cycles, dwell_high_s=dwell_high, dwell_low_s=dwell_low,
            ramp_k_per_min=ramp, ramp_tolerance_k_per_min=ramp_tol, transition_max_s=transition, **common,
        )

    def planned(self, profile: CycleProfile, *, ambient_c: float) -> PlannedProfile:
        tol = None
        if profile.high.below_k == profile.high.above_k == profile.low.below_k == profile.low.above_k:
            tol = profile.high.below_k
        return PlannedProfile("cycle", ambient_c, profile.low.nominal_c, profile.high.nominal_c,
                              profile.ramp_k_per_min, profile.dwell_low_s, profile.dwell_high_s, profile.cycles, tol)
