"""The live terminal dashboard (Textual): ``soaklog dash`` (parser: :mod:`soaklog.commands.dash`) and the demo's default view."""

from __future__ import annotations

from soaklog.dashboard.app import DashboardApp, run_dashboard, run_dashboard_live

__all__ = ["DashboardApp", "run_dashboard", "run_dashboard_live"]
