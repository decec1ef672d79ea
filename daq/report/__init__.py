"""The run report: profile conformance, chamber performance, alarms, plots (`soaklog report`)."""

from __future__ import annotations

from soaklog.report.build import ReportResult, load_profile_file, make_report
from soaklog.report.profile import Band, CycleProfile, Profile, SoakProfile, parse_profile

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
