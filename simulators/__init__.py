"""Stand-ins for hardware: a chamber, a SCPI multimeter on TCP, a serial ADC board on a pty.

They are real programs (``soaklog simulate …``) reached through the same stacks as
real instruments: pyvisa-py over TCP and pyserial on a pseudo-terminal.
"""

from __future__ import annotations

__all__: list[str] = []
