"""``type = "thermocouple"``: a letter-designated thermocouple (B, E, J, K, N, R, S, T) by the NIST ITS-90 functions.

The instrument measures its emf in volts; its channel says where the cold
junction's temperature comes from (``cold_junction``): another channel (an
RTD or thermistor on the terminal block), the instrument's own reference, or
a fixed temperature (an ice point). The voltages are added, and the cold
junction's uncertainty enters the budget with its sensitivity.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.errors import InputError
from soaklog.kinds import SENSORS
from soaklog.kinds.keys import Checker, Key, non_negative, positive
from soaklog.kinds.sensors import SensorKind, calibration_of, read_calibration

if TYPE_CHECKING:
    from soaklog.config import ChannelConfig, SensorConfig
    from soaklog.sensors.measurement import AdcSpec, MeterSpec
    from soaklog.sensors.tc_chain import ThermocoupleChain

_CJ_KEYS = {"channel", "fixed_c", "instrument", "expanded_uncertainty_c", "k", "max_age"}
#: a cold-junction reading older than this many of its instrument's intervals is not used
#: (the terminal block drifts slowly; common practice, no published source)
CJ_MAX_AGE_INTERVALS = 3.0


@SENSORS.register("thermocouple")
class ThermocoupleKind(SensorKind):
    name = "thermocouple"
    quantity = "V"
    keys: Mapping[str, Key] = {
        "tc_type": Key(str, "the letter: B, E, J, K, N, R, S or T", required=True),
        "class": Key((str, int), "IEC 60584-1 tolerance class: 1, 2 or 3"),
        "calibration": Key(dict, "a calibration certificate: certificate, expanded_uncertainty_c, k, span_c, date, due"),
    }
    channel_keys: Mapping[str, Key] = {
        "cold_junction": Key(dict, "{ channel = \"…\" } | { fixed_c = 0.0, expanded_uncertainty_c = … } | "
                                   "{ instrument = true, expanded_uncertainty_c = … }", required=True),
        "range_v": Key(float, "a fixed DC volts range for this channel (0.1 for most thermocouples)"),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str, name: str | None, description: str,
             today: _dt.date) -> SensorConfig | None:
        from soaklog.config import SensorConfig
        from soaklog.sensors.thermocouple import Thermocouple, tc_tolerance

        letter = ck.get(d, key, "tc_type", str, required=True)
        tc = None
        if letter is not None:
            try:
                tc = Thermocouple(letter.strip().upper())
            except InputError as exc:
                ck.bad(f"{key}.tc_type", str(exc))
        tol = None
        if "class" in d and tc is not None:
            cls = ck.get(d, key, "class", (str, int))
            if cls is not None:
                try:
                    tol = tc_tolerance(tc.type, str(cls))
                except InputError as exc:
                    ck.bad(f"{key}.class", str(exc))
        cal = None
        if "calibration" in d and tc is not None:
            cal = read_calibration(ck, d["calibration"], f"{key}.calibration", name, today,
                                   (tc.inverse_t_min_c, tc.inverse_t_max_c))
        if name is None or tc is None:
            return None
        return SensorConfig(name, tc, tol, cal, None, description, type=self.name)  # type: ignore[arg-type]

    def read_channel(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any]:
        from soaklog.kinds.keys import parse_duration
        from soaklog.sensors.tc_chain import ColdJunction

        out: dict[str, Any] = {}
        rng = ck.get(d, key, "range_v", float, check=positive)
        if rng is not None:
            out["range_v"] = rng
        if "cold_junction" not in d:
            ck.bad(f"{key}.cold_junction", "a thermocouple channel needs its cold junction: { channel = \"…\" }, "
                                           "{ fixed_c = 0.0, expanded_uncertainty_c = … } or "
                                           "{ instrument = true, expanded_uncertainty_c = … }")
            return out
        ckey = f"{key}.cold_junction"
        t = ck.table(d["cold_junction"], ckey)
        ck.unknown(t, ckey, _CJ_KEYS)
        given = [k for k in ("channel", "fixed_c", "instrument") if k in t]
        if len(given) != 1:
            ck.bad(ckey, f"give exactly one of channel, fixed_c or instrument, got {', '.join(given) or 'none'}")
            return out
        u = ck.get(t, ckey, "expanded_uncertainty_c", float, check=non_negative)
        k = ck.get(t, ckey, "k", float, default=2.0, check=positive) or 2.0
        if "max_age" in t:
            try:
                out["cold_junction_max_age_s"] = parse_duration(t["max_age"])
            except InputError as exc:
                ck.bad(f"{ckey}.max_age", str(exc))
        try:
            if "channel" in t:
                ch = ck.get(t, ckey, "channel", str)
                if u is not None:
                    ck.bad(f"{ckey}.expanded_uncertainty_c", "a channel's cold junction takes that channel's own "
                                                             "uncertainty; leave this out")
                if ch:
                    out["cold_junction"] = ColdJunction("channel", channel=ch)
            elif "fixed_c" in t:
                fixed = ck.get(t, ckey, "fixed_c", float)
                if u is None:
                    ck.bad(f"{ckey}.expanded_uncertainty_c", "is required: how well the fixed temperature is known")
                elif fixed is not None:
                    out["cold_junction"] = ColdJunction("fixed", fixed_c=fixed, expanded_uncertainty_c=u, k=k)
            else:
                if ck.get(t, ckey, "instrument", bool) is not True:
                    ck.bad(f"{ckey}.instrument", "must be true (the instrument's own reference junction)")
                elif u is None:
                    ck.bad(f"{ckey}.expanded_uncertainty_c", "is required: the instrument's reference-junction "
                                                             "accuracy from its data sheet")
                else:
                    out["cold_junction"] = ColdJunction("instrument", expanded_uncertainty_c=u, k=k)
        except InputError as exc:
            ck.bad(ckey, str(exc))
        return out

    def check_links(self, ck: Checker, channel: ChannelConfig, key: str,
                    channels: Mapping[str, ChannelConfig], sensors: Mapping[str, SensorConfig]) -> None:
        cj = channel.settings.get("cold_junction")
        if cj is None or cj.source != "channel":
            return
        other = channels.get(cj.channel)
        where = f"{key}.cold_junction.channel"
        if other is None:
            ck.bad(where, f"no channel named {cj.channel!r}")
        elif other.name == channel.name:
            ck.bad(where, "a thermocouple cannot be its own cold junction")
        elif sensors[other.sensor].kind.quantity != "ohm":
            ck.bad(where, f"channel {other.name} is not a temperature of the terminal block (it measures "
                          f"{sensors[other.sensor].kind.quantity}); name an RTD or thermistor channel")

    def chain(self, sensor: SensorConfig, channel: ChannelConfig, *, current_a: float | None,
              meter: MeterSpec | None, adc: AdcSpec | None) -> ThermocoupleChain:
        from soaklog.sensors.tc_chain import ThermocoupleChain, VoltSpec

        volts = meter if isinstance(meter, VoltSpec) else None
        return ThermocoupleChain(sensor.curve, channel.settings["cold_junction"],  # type: ignore[arg-type]
                                 tolerance=sensor.tolerance, calibration=calibration_of(sensor),  # type: ignore[arg-type]
                                 meter=volts, range_v=channel.settings.get("range_v"))

    def warnings(self, sensor: SensorConfig, channel: ChannelConfig, current_a: float | None, ck: Checker) -> None:
        if sensor.tolerance is None and sensor.calibration is None:
            ck.warn(f"sensor {sensor.name}: no class or calibration: its readings will carry no uncertainty")
        cj = channel.settings.get("cold_junction")
        if cj is not None and cj.source == "fixed" and abs((cj.fixed_c or 0.0)) > 0.0 and cj.fixed_c is not None \
                and not -50.0 <= cj.fixed_c <= 100.0:
            ck.warn(f"channel {channel.name}: a cold junction held at {cj.fixed_c:g} °C is unusual; check the unit")
