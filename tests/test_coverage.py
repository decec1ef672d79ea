"""End to end, a check that can fail: many simulated sensors read by the logger's own metrology, and how many
readings lie within their stored U.

The sensors come from ``soaklog.simulators.truth``, written afresh from the
standards (no formula shared with ``soaklog.sensors``), each deviating by a
normal draw whose standard deviation is the budget's for its class, leads,
self-heating and meter. The station file describes them honestly; the
logger's pipeline converts the readings. About 95 % (k = 2) should lie within
U. The twin changes one fact the station file states — the dissipation
constant — and the check must then fail.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from soaklog.config import parse_config
from soaklog.drivers.base import RawScan
from soaklog.pipeline import Pipeline
from soaklog.simulators.truth import SensorDraw, draw_readings

N = 4000
STATION = """
[station]
name = "coverage"
ambient_c = 20.0
[[instrument]]
name = "dmm"
driver = "scpi"
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
range_ohm = 1000.0
wiring = 2
accuracy = {{ pct_reading = 0.01, pct_range = 0.004 }}
[[sensor]]
name = "pt"
class = "A"
dissipation_mw_per_k = {diss_mw}
[[channel]]
name = "c"
instrument = "dmm"
input = "101"
sensor = "pt"
wiring = 2
lead = {{ ohms = 0.5 }}
excitation_ma = 2.0
"""


def coverage(draw: SensorDraw, stated_dissipation_mw_per_k: float, seed: int = 14) -> float:
    rng = np.random.default_rng(seed)
    t_true = rng.uniform(0.0, 150.0, N)  # inside class A (film: −30…300 °C, IEC 60751:2008 table 4)
    ohms = draw_readings(draw, t_true, rng)
    cfg = parse_config(STATION.format(diss_mw=stated_dissipation_mw_per_k))
    pipe = Pipeline(cfg, {"c": 1})
    scan = RawScan(("101",) * N, 0.0, ohms, np.zeros(N, dtype=np.int8), current_a=2e-3)
    batch = pipe.convert("dmm", [scan])
    assert np.all(np.isfinite(batch.temp_c)) and np.all(np.isfinite(batch.u_c))
    return float(np.mean(np.abs(batch.temp_c - t_true) <= batch.u_c))


def test_about_95_percent_of_readings_lie_within_their_stored_uncertainty() -> None:
    frac = coverage(SensorDraw(), stated_dissipation_mw_per_k=2.0)
    # k = 2 on a combination of rectangular and normal parts: about 95 %; 90–99 % accepts the sampling
    # spread of 4000 readings and the shape of the combined distribution (common practice, no published source)
    assert 0.90 <= frac <= 0.99, frac


def test_the_same_check_fails_when_the_station_states_a_wrong_dissipation_constant() -> None:
    # the sensor really dissipates 0.5 mW/K (poorly coupled) while the station file says 2 mW/K:
    # its self-heating (about 1.1 K at 2 mA) is corrected as 0.28 K, and the check must see it
    wrong = dataclasses.replace(SensorDraw(), dissipation_w_per_k=0.5e-3)
    frac = coverage(wrong, stated_dissipation_mw_per_k=2.0)
    assert frac < 0.90, frac


def test_the_same_check_fails_when_the_leads_are_not_what_the_station_says() -> None:
    # each conductor really 0.8 ohm while the station file says 0.5: 0.6 ohm of pair left in, about 1.5 K
    wrong = dataclasses.replace(SensorDraw(), lead_ohm_nominal=0.8)
    assert coverage(wrong, stated_dissipation_mw_per_k=2.0) < 0.90


def test_the_truth_shares_no_code_with_the_metrology() -> None:
    import ast
    import pathlib

    import soaklog.simulators.truth as truth

    tree = ast.parse(pathlib.Path(truth.__file__).read_text(encoding="utf-8"))
    imported = {n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)} | {
        a.name for n in ast.walk(tree) if isinstance(n, ast.Import) for a in n.names}
    assert not any(m and m.startswith("soaklog") for m in imported), imported
    # and its curve is IEC 60751's: 100 °C -> 138.5055 ohm (IEC 60751:2008 table 1: 138.51),
    # -100 °C -> 60.2558 ohm (table 1: 60.26; equation value by hand 60.25584)
    assert abs(float(truth.pt_resistance(100.0)) - 138.5055) < 1e-9
    assert abs(float(truth.pt_resistance(-100.0)) - 60.25584) < 1e-9
    # IEC 60028: 1 m of 1 mm² copper at 20 °C is 1/58 ohm
    assert abs(truth.copper_ohm(1.0, 1.0) - 1 / 58) < 1e-15
