"""What the run's configuration says should happen: the planned set point, phase and alarm limits.

The dashboard reads the configuration text stored with the run (``runs.config``)
with the station file's own parser (``soaklog.config``, what ``soaklog check``
validated) and draws from it: the ``[profile]``'s planned set point,
``[run] planned_duration``, the ``[[alarm]]`` entries that carry a
``limit_c``, and each instrument's scan interval (to tell a stale channel). The
plan is counted from the run's start; the logger does not record where the
chamber's own programme stands, so the phase shown is the planned one.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from soaklog.config import ConfigProblems, parse_config
from soaklog.errors import InputError
from soaklog.profile import PlannedProfile, Profile, parse_profile, planned_setpoint

__all__ = ["Limit", "PlannedProfile", "RunPlan", "planned_profile", "run_plan"]

@dataclass(frozen=True)
class Limit:
    """An alarm limit to draw on a trend: one ``[[alarm]]`` entry with a ``limit_c``."""

    alarm: str
    kind: str
    limit_c: float
    channels: tuple[str, ...]
    severity: str

    def applies_to(self, channel: str) -> bool:
        return "*" in self.channels or channel in self.channels


@dataclass(frozen=True)
class RunPlan:
    """Everything the dashboard takes from a run's configuration text (all optional)."""

    planned_duration_s: float | None = None
    profile: PlannedProfile | None = None
    limits: tuple[Limit, ...] = ()
    intervals_s: Mapping[str, float] = field(default_factory=dict)
    problem: str = ""

    def limits_for(self, channel: str) -> tuple[Limit, ...]:
        return tuple(lim for lim in self.limits if lim.applies_to(channel))


def planned_profile(profile: Profile | Mapping[str, Any] | None, *, ambient_c: float = 23.0) -> PlannedProfile | None:
    """The planned set point of a profile (parsed, or a ``[profile]`` table); None when there is none to draw."""
    if profile is None:
        return None
    if isinstance(profile, Mapping):
        try:
            profile = parse_profile(profile)
        except InputError:
            return None
    return planned_setpoint(profile, ambient_c=ambient_c)


def run_plan(config_text: str) -> RunPlan:
    """The plan in a run's stored configuration, read by the station file's own parser.

    A configuration that does not validate gives an empty plan with ``problem`` set.
    """
    try:
        cfg = parse_config(config_text, "the run's configuration")
    except ConfigProblems as exc:
        first = exc.problems[0] if exc.problems else ("", "")
        return RunPlan(problem=f"{first[0]}: {first[1]}" if first[0] else first[1])
    limits = tuple(
        Limit(a.name, a.kind, float(a.params["limit_c"]), tuple(a.channels), a.severity)
        for a in cfg.alarms if "limit_c" in a.params
    )
    intervals = {i.name: i.interval_s for i in cfg.instruments}
    return RunPlan(cfg.planned_duration_s, planned_profile(cfg.profile, ambient_c=cfg.ambient_c), limits, intervals)
