"""soaklog: an unattended RTD temperature logger for environmental test chambers."""

from __future__ import annotations

__all__ = ["__version__"]

__version__ = "0.1.0"
