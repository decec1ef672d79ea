"""The live terminal dashboard (Textual): ``soaklog dash`` and the demo's default view."""

from __future__ import annotations

from soaklog.dashboard.app import DashboardApp, run_dashboard, run_dashboard_live
from soaklog.dashboard.cli import add_parser

__all__ = ["DashboardApp", "add_parser", "run_dashboard", "run_dashboard_live"]
