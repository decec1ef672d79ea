"""A new sensor kind is one module: this file is that module, and nothing else in soaklog changes.

The kind below, ``cu-linear``, is a copper resistance thermometer taken as
linear, R(t) = R0·(1 + α·t): a winding-temperature sensor of the kind found in
motors and transformers. It reads its own keys, builds its channel's chain
(the Callendar–Van Dusen machinery with B = C = 0 is exactly that line) and the
station file's channels, leads and meters work with it unchanged.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Mapping
from typing import Any

import numpy as np
import pytest

from soaklog.config import ChannelConfig, ConfigProblems, SensorConfig, parse_config
from soaklog.kinds import SENSORS
from soaklog.kinds.keys import Checker, Key, positive
from soaklog.kinds.sensors import SensorKind
from soaklog.sensors.cvd import CvdCurve
from soaklog.sensors.measurement import AdcSpec, MeasurementChain, MeterSpec, chain_of

#: α of copper resistance thermometers, 0.00427 /K (from memory of the Cu10 winding-sensor curve
#: in use in industry; IEC 60028's 0.00393 /K at 20 °C is the same metal referred to 20 °C)
ALPHA_CU = 0.00427


class LinearCopper(SensorKind):
    name = "cu-linear"
    keys: Mapping[str, Key] = {
        "r0_ohm": Key(float, "resistance at 0 °C", default=10.0),
        "alpha_per_k": Key(float, "temperature coefficient", default=ALPHA_CU),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str, name: str | None, description: str,
             today: dt.date) -> SensorConfig | None:
        r0 = ck.get(d, key, "r0_ohm", float, default=10.0, check=positive)
        alpha = ck.get(d, key, "alpha_per_k", float, default=ALPHA_CU, check=positive)
        if name is None or r0 is None or alpha is None:
            return None
        curve = CvdCurve(a=alpha, b=0.0, c=0.0, name=f"linear copper α = {alpha:g}/K").with_r0(r0)
        return SensorConfig(name, curve, None, None, None, description, type=self.name)

    def chain(self, sensor: SensorConfig, channel: ChannelConfig, *, current_a: float | None,
              meter: MeterSpec | None, adc: AdcSpec | None) -> MeasurementChain:
        return chain_of(sensor.curve, leads=channel.leads, meter=meter, adc=adc)


STATION = """
[station]
name = "bench"
[[instrument]]
name = "meter"
driver = "scpi"
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
range_ohm = 100.0
[[sensor]]
name = "winding"
type = "cu-linear"
{keys}
[[channel]]
name = "motor-winding"
instrument = "meter"
input = "101"
sensor = "winding"
"""


@pytest.fixture
def copper():
    with SENSORS.added("cu-linear", LinearCopper) as kind:
        yield kind
    assert "cu-linear" not in SENSORS


def test_a_station_file_can_use_the_new_sensor_kind(copper) -> None:
    cfg = parse_config(STATION.format(keys="r0_ohm = 10.0"))
    chain = cfg.chain(cfg.channels[0])
    conv = chain.convert(np.asarray([14.27], dtype=np.float64))
    # R(t) = R0·(1 + α·t): 10 ohm·(1 + 0.00427·100) = 14.27 ohm at 100 °C (arithmetic from the definition)
    assert math.isclose(float(conv.temperature_c[0]), 100.0, abs_tol=1e-9)


def test_its_keys_are_checked_by_file_and_key(copper) -> None:
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION.format(keys="r0_ohm = -10.0\nclass = \"A\""), "/lab/bench.toml")
    assert ("sensor[1].r0_ohm", "must be positive, got -10.0") in info.value.problems
    # a key of another kind (the platinum class) is not one of this kind's
    assert any(k == "sensor[1].class" and "unknown key" in m for k, m in info.value.problems)


def test_without_its_module_the_type_is_unknown() -> None:
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION.format(keys=""))
    known = ", ".join(SENSORS.names())  # the built-in kinds, without the test's own
    assert "cu-linear" not in known and "pt" in known
    assert ("sensor[1].type", f"must be one of {known}, got 'cu-linear'") in info.value.problems
