"""The run report: profile conformance, chamber performance, alarms, plots (`soaklog report`)."""

from __future__ import annotations

from soaklog.report.build import ReportResult, load_profile_file, make_report
from soaklog.profile import Band, Profile, parse_profile
from soaklog.kinds.profiles.cycle import CycleProfile
from soaklog.kinds.profiles.soak import SoakProfile

__all__ = [
    "Band",
    "CycleProfile",
    "Profile",
    "ReportResult",
    "SoakProfile",
    "load_profile_file",
    "make_report",
    "parse_profile",
]
