"""The live terminal dashboard (Textual): ``soaklog dash`` and the demo's default view."""

from __future__ import annotations

from daq.dashboard.app import DashboardApp, run_dashboard, run_dashboard_live
from daq.dashboard.cli import add_parser

__all__ = ["DashboardApp", "add_parser", "run_dashboard", "run_dashboard_live"]
