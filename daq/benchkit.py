"""What the benchmarks share: the station file they log (``soaklog.bench`` and ``soaklog.report.bench`` use it).

Its own module so that neither benchmark imports the other.
"""

from __future__ import annotations

__all__ = ["station_text"]


def station_text(n_channels: int, database: str, *, interval: str = "1s") -> str:
    """A station file of ``n_channels`` 4-wire Pt100 class A channels on one scanning meter."""
    lines = [
        '[station]', 'name = "bench"', f'database = "{database}"', "",
        "[[instrument]]", 'name = "meter"', 'driver = "scpi"',
        'resource = "TCPIP0::127.0.0.1::1::SOCKET"', f'interval = "{interval}"', "range_ohm = 1000.0",
        "accuracy = { pct_reading = 0.01, pct_range = 0.004 }", "",
        "[[sensor]]", 'name = "pt100"', 'class = "A"', 'element = "wire"', "dissipation_mw_per_k = 10.0", "",
    ]
    for i in range(n_channels):
        lines += ["[[channel]]", f'name = "ch{i + 1:02d}"', 'instrument = "meter"', f'input = "{101 + i}"',
                  'sensor = "pt100"', ""]
    return "\n".join(lines)
