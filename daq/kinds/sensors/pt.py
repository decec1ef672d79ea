"""``type = "pt"``: a platinum RTD (Pt100, Pt500, Pt1000 …) by Callendar–Van Dusen, IEC 60751."""

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
    from soaklog.sensors.measurement import AdcSpec, MeasurementChain, MeterSpec



def _coefficients(ck: Checker, value: Any, key: str) -> tuple[float, float, float] | None:
    if (
        not isinstance(value, list) or len(value) != 3
        or not all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in value)
    ):
        ck.bad(key, f"must be three numbers [A, B, C], got {value!r}")
        return None
    return float(value[0]), float(value[1]), float(value[2])


@SENSORS.register("pt")
class PlatinumRtd(SensorKind):
    name = "pt"
    keys: Mapping[str, Key] = {
        "r0_ohm": Key(float, "resistance at 0 °C (100, 500, 1000, or a calibrated value)", default=100.0),
        "curve": Key(str, "a named older curve instead of IEC 60751"),
        "coefficients": Key(list, "the sensor's own Callendar–Van Dusen [A, B, C]"),
        "class": Key(str, "IEC 60751 tolerance class: AA, A, B, C, F0.1 … F0.6, W0.1 … W0.6"),
        "element": Key(str, "film or wire: where a thermometer class applies"),
        "dissipation_mw_per_k": Key(float, "dissipation constant in its mounting, mW/K"),
        "calibration": Key(dict, "a calibration certificate: certificate, expanded_uncertainty_c, k, span_c, date, due"),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str, name: str | None, description: str,
             today: _dt.date) -> SensorConfig | None:
        from soaklog.config import CalibrationRecord, SensorConfig
        from soaklog.sensors.curves import named_curve
        from soaklog.sensors.cvd import IEC_60751, CvdCurve
        from soaklog.sensors.tolerance import tolerance_class

        r0 = ck.get(d, key, "r0_ohm", float, default=100.0, check=positive)
        curve: CvdCurve | None = IEC_60751
        if "curve" in d and "coefficients" in d:
            ck.bad(f"{key}.coefficients", "give curve or coefficients, not both")
        elif "curve" in d:
            cname = ck.get(d, key, "curve", str)
            try:
                curve = named_curve(cname) if cname else None
            except InputError as exc:
                ck.bad(f"{key}.curve", str(exc))
                curve = None
        elif "coefficients" in d:
            co = _coefficients(ck, d["coefficients"], f"{key}.coefficients")
            curve = None
            if co is not None:
                try:
                    curve = CvdCurve(a=co[0], b=co[1], c=co[2], name=f"sensor {name} coefficients")
                except ValueError as exc:
                    ck.bad(f"{key}.coefficients", str(exc))
        tol = None
        if "class" in d:
            cls = ck.get(d, key, "class", str)
            element = ck.get(d, key, "element", str)
            if element is not None and element.strip().lower() not in ("film", "wire"):
                ck.bad(f"{key}.element", f"must be 'film' or 'wire', got {element!r}")
            elif cls:
                try:
                    tol = tolerance_class(cls, element)
                except InputError as exc:
                    ck.bad(f"{key}.class", str(exc))
        elif "element" in d:
            ck.bad(f"{key}.element", "only qualifies a class; give class too")
        diss = ck.get(d, key, "dissipation_mw_per_k", float, check=positive)
        cal: CalibrationRecord | None = None
        if "calibration" in d:
            ckey = f"{key}.calibration"
            cal = read_calibration(ck, d["calibration"], ckey, name, today, (-200.0, 850.0),
                                   extra=frozenset({"coefficients", "r0_ohm"}))
            c = d["calibration"] if isinstance(d["calibration"], dict) else {}
            if "coefficients" in c:
                co = _coefficients(ck, c["coefficients"], f"{ckey}.coefficients")
                if co is not None:
                    try:
                        curve = CvdCurve(a=co[0], b=co[1], c=co[2], name=f"calibration {cal.certificate if cal else ''}")
                    except ValueError as exc:
                        ck.bad(f"{ckey}.coefficients", str(exc))
                        curve = None
            if "r0_ohm" in c:
                r0 = ck.get(c, ckey, "r0_ohm", float, check=positive) or r0
        if name is None or curve is None or r0 is None:
            return None
        return SensorConfig(name, curve.with_r0(r0), tol, cal, None if diss is None else diss / 1000.0,
                            description, type=self.name)

    def chain(self, sensor: SensorConfig, channel: ChannelConfig, *, current_a: float | None,
              meter: MeterSpec | None, adc: AdcSpec | None) -> MeasurementChain:
        from soaklog.sensors.measurement import chain_of

        return chain_of(sensor.curve, tolerance=sensor.tolerance, calibration=calibration_of(sensor),
                        dissipation_w_per_k=sensor.dissipation_w_per_k, leads=channel.leads, current_a=current_a,
                        meter=meter, adc=adc)

    def warnings(self, sensor: SensorConfig, channel: ChannelConfig, current_a: float | None, ck: Checker) -> None:
        s, c, current = sensor, channel, current_a
        if c.leads.wiring == 2 and s.tolerance is not None and s.tolerance.a_c <= 0.15:
            ck.warn(
                f"channel {c.name}: 2-wire with a class {s.tolerance.name} sensor: the lead residual will swamp "
                "the sensor's tolerance; use 3- or 4-wire"
            )
        if current is not None and s.dissipation_w_per_k is None and s.curve.r0_ohm >= 500 and current >= 0.5e-3:
            ck.warn(
                f"channel {c.name}: a Pt{s.curve.r0_ohm:g} at {current * 1e3:g} mA self-heats visibly and no "
                "dissipation constant is given to correct it; give dissipation_mw_per_k or use a range with a lower test current"
            )
        elif current is not None and s.dissipation_w_per_k is not None:
            rise = current * current * float(s.curve.r0_ohm) / s.dissipation_w_per_k
            if rise > 0.1:
                ck.warn(
                    f"channel {c.name}: self-heating about {rise:.2f} K at 0 °C with {current * 1e3:g} mA; "
                    "it is corrected, but its uncertainty grows with it"
                )
        if s.tolerance is None and s.calibration is None:
            ck.warn(f"sensor {s.name}: no class or calibration: its uncertainty leaves the sensor out")
