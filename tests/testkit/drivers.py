"""Shared values of the driver tests: the simulated meter's scan, its leads, short timeouts and back-off."""

from __future__ import annotations

from soaklog.drivers.scpi_meter import Backoff

#: one conductor's resistance; the plant adds it twice in 2-wire mode
LEAD_OHM = 0.25
#: twenty distinct values in a Pt100's span, so a shifted reply cannot pass for a right one
SCAN_VALUES = {f"pt{i:02d}": 100.0 + 2.5 * i for i in range(20)}
SCAN_MAP = {101 + i: f"pt{i:02d}" for i in range(20)}
CHANNELS = tuple(str(n) for n in SCAN_MAP)
#: short timeouts and back-off keep the fault tests fast
TIMEOUT_S = 0.3
BACKOFF = Backoff(initial_s=0.05, factor=2.0, max_s=0.2)
