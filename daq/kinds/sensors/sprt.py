"""``type = "sprt"``: a standard (or calibrated) platinum resistance thermometer read through ITS-90.

Its certificate gives R(273.16 K) and the deviation-function coefficients of
one sub-range below the triple point of water and/or one above (ITS-90,
3.3.1.4 and 3.3.2); its calibration's uncertainty vouches for it.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.errors import InputError
from soaklog.kinds import SENSORS
from soaklog.kinds.keys import Checker, Key, positive
from soaklog.kinds.sensors import SensorKind, calibration_of, read_calibration

if TYPE_CHECKING:
    from soaklog.config import ChannelConfig, SensorConfig
    from soaklog.sensors.its90 import Deviation
    from soaklog.sensors.measurement import AdcSpec, MeasurementChain, MeterSpec

_DEV_KEYS = {"subrange", "a", "b", "c"}


def _deviation(ck: Checker, value: Any, key: str) -> Deviation | None:
    from soaklog.sensors.its90 import Deviation

    t = ck.table(value, key)
    ck.unknown(t, key, _DEV_KEYS)
    sub = ck.get(t, key, "subrange", int, required=True)
    co = {n: ck.get(t, key, n, float, default=0.0) or 0.0 for n in ("a", "b", "c")}
    if sub is None or not all(math.isfinite(v) for v in co.values()):
        return None
    try:
        return Deviation(sub, **co)
    except InputError as exc:
        ck.bad(key, str(exc))
        return None


@SENSORS.register("sprt")
class StandardPrt(SensorKind):
    name = "sprt"
    keys: Mapping[str, Key] = {
        "r_tpw_ohm": Key(float, "R(273.16 K) from the certificate", required=True),
        "below": Key(dict, "deviation function under 0.01 °C: { subrange = 4, a = …, b = … }"),
        "above": Key(dict, "deviation function over 0.01 °C: { subrange = 7, a = …, b = …, c = … }"),
        "dissipation_mw_per_k": Key(float, "dissipation constant in its mounting, mW/K"),
        "calibration": Key(dict, "the certificate: certificate, expanded_uncertainty_c, k, span_c, date, due"),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str, name: str | None, description: str,
             today: _dt.date) -> SensorConfig | None:
        from soaklog.config import SensorConfig
        from soaklog.sensors.its90 import SprtCurve

        r_tpw = ck.get(d, key, "r_tpw_ohm", float, required=True, check=positive)
        below = _deviation(ck, d["below"], f"{key}.below") if "below" in d else None
        above = _deviation(ck, d["above"], f"{key}.above") if "above" in d else None
        if "below" not in d and "above" not in d:
            ck.bad(key, "an SPRT needs its certificate's deviation function: below = { … } and/or above = { … }")
        curve = None
        if r_tpw is not None and (below is not None or above is not None):
            try:
                curve = SprtCurve(r_tpw, below, above, name=f"ITS-90, sub-ranges "
                                  f"{'/'.join(str(x.subrange) for x in (below, above) if x is not None)}")
            except InputError as exc:
                ck.bad(f"{key}.below", str(exc))
        diss = ck.get(d, key, "dissipation_mw_per_k", float, check=positive)
        cal = None
        if "calibration" in d and curve is not None:
            cal = read_calibration(ck, d["calibration"], f"{key}.calibration", name, today, (curve.t_min_c, curve.t_max_c))
        if name is None or curve is None:
            return None
        return SensorConfig(name, curve, None, cal, None if diss is None else diss / 1000.0, description,  # type: ignore[arg-type]
                            type=self.name)

    def chain(self, sensor: SensorConfig, channel: ChannelConfig, *, current_a: float | None,
              meter: MeterSpec | None, adc: AdcSpec | None) -> MeasurementChain:
        from soaklog.sensors.measurement import chain_of

        return chain_of(sensor.curve, calibration=calibration_of(sensor), dissipation_w_per_k=sensor.dissipation_w_per_k,
                        leads=channel.leads, current_a=current_a, meter=meter, adc=adc)

    def warnings(self, sensor: SensorConfig, channel: ChannelConfig, current_a: float | None, ck: Checker) -> None:
        if sensor.calibration is None:
            ck.warn(f"sensor {sensor.name}: an SPRT without its calibration's uncertainty: its readings will carry none")
        if channel.leads.wiring != 4:
            ck.warn(f"channel {channel.name}: an SPRT is read 4-wire; {channel.leads.wiring}-wire leads swamp it")
