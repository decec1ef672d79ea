"""``type = "ntc"``: an NTC thermistor by the β equation or Steinhart–Hart (Deep-Sea Research 15, 1968).

Its equation is used over a stated range only (``range_c``; a reading outside
it is ``out_of_range``, never an extrapolation), and a data sheet's tolerance
(±% of R25, ±% of β) becomes a temperature bound in the budget.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.errors import InputError
from soaklog.kinds import SENSORS
from soaklog.kinds.keys import Checker, Key, non_negative, positive
from soaklog.kinds.sensors import SensorKind, calibration_of, read_calibration, read_span

if TYPE_CHECKING:
    from soaklog.config import ChannelConfig, SensorConfig
    from soaklog.sensors.measurement import AdcSpec, MeasurementChain, MeterSpec

#: a thermistor self-heats visibly above this rise; the same 0.1 K as ``LARGE_SELF_HEATING_K``
#: (common practice, no published source)
_RISE_WARN_K = 0.1
#: dissipation constant assumed for a warning only, when none is given: a small epoxy bead in still
#: air is about 1 mW/K (common practice, no published source; give the data sheet's in its mounting)
_ASSUMED_DISSIPATION_W_PER_K = 1e-3


@SENSORS.register("ntc")
class NtcThermistor(SensorKind):
    name = "ntc"
    keys: Mapping[str, Key] = {
        "r25_ohm": Key(float, "resistance at 25 °C (with beta_k)"),
        "beta_k": Key(float, "β in kelvin (B25/85 or B25/50 from the data sheet)"),
        "steinhart_hart": Key(list, "Steinhart–Hart [A, B, C] instead of r25_ohm and beta_k"),
        "range_c": Key(list, "[low, high] °C over which the equation is used", default=[-40.0, 125.0]),
        "r25_tolerance_pct": Key(float, "± % of R25 (data sheet)"),
        "beta_tolerance_pct": Key(float, "± % of β (data sheet)", default=0.0),
        "dissipation_mw_per_k": Key(float, "dissipation constant in its mounting, mW/K"),
        "calibration": Key(dict, "a calibration certificate: certificate, expanded_uncertainty_c, k, span_c, date, due"),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str, name: str | None, description: str,
             today: _dt.date) -> SensorConfig | None:
        from soaklog.config import SensorConfig
        from soaklog.sensors.ntc import DEFAULT_NTC_RANGE_C, BetaNtc, NtcCurve, NtcTolerance, SteinhartHart

        model: SteinhartHart | BetaNtc | None = None
        if "steinhart_hart" in d:
            if "beta_k" in d:
                ck.bad(f"{key}.beta_k", "give steinhart_hart or r25_ohm with beta_k, not both")
            co = d["steinhart_hart"]
            if (not isinstance(co, list) or len(co) != 3 or not all(
                    isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in co)):
                ck.bad(f"{key}.steinhart_hart", f"must be three numbers [A, B, C], got {co!r}")
            else:
                try:
                    model = SteinhartHart(float(co[0]), float(co[1]), float(co[2]))
                except InputError as exc:
                    ck.bad(f"{key}.steinhart_hart", str(exc))
        else:
            r25 = ck.get(d, key, "r25_ohm", float, required=True, check=positive)
            beta = ck.get(d, key, "beta_k", float, required=True, check=positive)
            if r25 is not None and beta is not None:
                model = BetaNtc(r0_ohm=r25, t0_c=25.0, beta_k=beta)
        lo, hi = read_span(ck, d, key, "range_c", DEFAULT_NTC_RANGE_C)
        curve = None
        if model is not None:
            try:
                curve = NtcCurve(model, lo, hi, name=f"NTC {'Steinhart–Hart' if isinstance(model, SteinhartHart) else 'β'}")
            except InputError as exc:
                ck.bad(f"{key}.range_c", str(exc))
        tol = None
        r_pct = ck.get(d, key, "r25_tolerance_pct", float, check=non_negative)
        b_pct = ck.get(d, key, "beta_tolerance_pct", float, default=0.0, check=non_negative)
        if r_pct is None and "beta_tolerance_pct" in d:
            ck.bad(f"{key}.beta_tolerance_pct", "qualifies r25_tolerance_pct; give that too")
        if r_pct is not None and curve is not None:
            tol = NtcTolerance(curve, r_pct, b_pct or 0.0)
        diss = ck.get(d, key, "dissipation_mw_per_k", float, check=positive)
        cal = None
        if "calibration" in d:
            cal = read_calibration(ck, d["calibration"], f"{key}.calibration", name, today, (lo, hi))
        if name is None or curve is None:
            return None
        return SensorConfig(name, curve, tol, cal, None if diss is None else diss / 1000.0, description,
                            type=self.name)

    def chain(self, sensor: SensorConfig, channel: ChannelConfig, *, current_a: float | None,
              meter: MeterSpec | None, adc: AdcSpec | None) -> MeasurementChain:
        from soaklog.sensors.measurement import chain_of

        return chain_of(sensor.curve, tolerance=sensor.tolerance, calibration=calibration_of(sensor),
                        dissipation_w_per_k=sensor.dissipation_w_per_k, leads=channel.leads, current_a=current_a,
                        meter=meter, adc=adc)

    def warnings(self, sensor: SensorConfig, channel: ChannelConfig, current_a: float | None, ck: Checker) -> None:
        curve = sensor.curve
        if current_a is not None:
            # the most power goes in at the cold end, where an NTC's resistance is highest
            r_max = float(curve.resistance(curve.t_min_c))
            diss = sensor.dissipation_w_per_k or _ASSUMED_DISSIPATION_W_PER_K
            rise = current_a * current_a * r_max / diss
            if rise > _RISE_WARN_K:
                given = "" if sensor.dissipation_w_per_k else " (taking 1 mW/K, as none is given)"
                ck.warn(f"channel {channel.name}: thermistor {sensor.name} at {current_a * 1e3:g} mA self-heats up to "
                        f"{rise:.2f} K at {curve.t_min_c:g} °C{given}; use a range with a lower test current")
        if sensor.tolerance is None and sensor.calibration is None:
            ck.warn(f"sensor {sensor.name}: no r25_tolerance_pct or calibration: its readings will carry no uncertainty")
