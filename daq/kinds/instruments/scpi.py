"""``driver = "scpi"``: a SCPI multimeter (with or without a scanner card) over VISA."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

from soaklog.errors import ConfigError, InputError
from soaklog.kinds import INSTRUMENTS
from soaklog.kinds.instruments import InstrumentKind
from soaklog.kinds.keys import Checker, Key, non_negative, positive

if TYPE_CHECKING:
    from soaklog.config import ChannelConfig, InstrumentConfig, SensorConfig
    from soaklog.drivers.base import Clock, Driver
    from soaklog.sensors.measurement import MeterSpec
    from soaklog.sensors.tc_chain import VoltSpec


def default_test_currents() -> dict[float, float]:
    """The measuring current per ohms range of a typical bench meter (the driver layer's one table)."""
    from soaklog.drivers.scpi_text import MeterProfile

    return dict(MeterProfile.test_current_a)


@INSTRUMENTS.register("scpi")
class ScpiMeterKind(InstrumentKind):
    name = "scpi"
    noun = "a multimeter"
    channel_range = True
    measures = frozenset({"ohm", "V"})
    keys: Mapping[str, Key] = {
        "resource": Key(str, "VISA resource string (TCPIP0::192.0.2.5::5025::SOCKET, USB0::…::INSTR, GPIB0::22::INSTR)",
                        required=True),
        "backend": Key(str, "pyvisa backend", default="@py"),
        "wiring": Key(int, "the meter's resistance function: 2 or 4 (wire)", default=4),
        "range_ohm": Key((float, str), "a fixed ohms range, or \"auto\"", default=1000.0),
        "nplc": Key(float, "integration time in power-line cycles", default=1.0),
        "offset_compensation": Key(bool, "measure with the current on and off", default=True),
        "test_current_a": Key(dict, "measuring current per range in A, keyed by range in ohm"),
        "accuracy": Key(dict, "ohms accuracy: { pct_reading = …, pct_range = … }"),
        "range_v": Key(float, "the DC volts range of thermocouple channels", default=0.1),
        "accuracy_dcv": Key(dict, "DC volts accuracy: { pct_reading = …, pct_range = … }"),
        "profile": Key(str, "the meter's SCPI dialect", default="generic"),
        "commands": Key(dict, "single SCPI command templates replacing the dialect's"),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any]:
        kw: dict[str, Any] = {}
        res = ck.get(d, key, "resource", str, required=True)
        if res is not None and "::" not in res:
            ck.bad(f"{key}.resource", f"must be a VISA resource string like TCPIP0::192.0.2.5::5025::SOCKET, got {res!r}")
        kw["resource"] = res or ""
        kw["backend"] = ck.get(d, key, "backend", str, default="@py") or "@py"
        kw["wiring"] = ck.get(d, key, "wiring", int, default=4,
                              check=lambda v: None if v in (2, 4) else f"a meter measures 2- or 4-wire, got {v!r}") or 4
        rng = d.get("range_ohm", 1000.0)
        if rng == "auto":
            kw["range_ohm"] = None
            ck.warn(f"{key}: autorange changes the test current with the range; a fixed range is better for RTDs")
        else:
            kw["range_ohm"] = ck.get(d, key, "range_ohm", float, default=1000.0, check=positive) or 1000.0
        kw["nplc"] = ck.get(d, key, "nplc", float, default=1.0,
                            check=lambda v: None if 0.001 <= v <= 1000 else f"must be within 0.001…1000, got {v!r}") or 1.0
        oc = ck.get(d, key, "offset_compensation", bool, default=True)
        kw["offset_compensation"] = True if oc is None else oc
        currents = default_test_currents()
        tc = d.get("test_current_a")
        if tc is not None:
            t = ck.table(tc, f"{key}.test_current_a")
            for rk, rv in t.items():
                try:
                    r = float(rk)
                except ValueError:
                    ck.bad(f"{key}.test_current_a.{rk}", "keys are ranges in ohm, like \"1000\"")
                    continue
                if not isinstance(rv, (int, float)) or isinstance(rv, bool) or not (math.isfinite(rv) and rv > 0):
                    ck.bad(f"{key}.test_current_a.{rk}", f"must be a positive current in A, got {rv!r}")
                    continue
                currents[r] = float(rv)
        kw["test_current_a"] = currents
        kw["accuracy_pct_reading"] = kw["accuracy_pct_range"] = None
        acc = d.get("accuracy")
        if acc is not None:
            a = ck.table(acc, f"{key}.accuracy")
            ck.unknown(a, f"{key}.accuracy", {"pct_reading", "pct_range"})
            kw["accuracy_pct_reading"] = ck.get(a, f"{key}.accuracy", "pct_reading", float, required=True, check=non_negative)
            kw["accuracy_pct_range"] = ck.get(a, f"{key}.accuracy", "pct_range", float, default=0.0, check=non_negative)
        kw["range_v"] = ck.get(d, key, "range_v", float, default=0.1, check=positive) or 0.1
        kw["dcv_pct_reading"] = kw["dcv_pct_range"] = None
        acc = d.get("accuracy_dcv")
        if acc is not None:
            a = ck.table(acc, f"{key}.accuracy_dcv")
            ck.unknown(a, f"{key}.accuracy_dcv", {"pct_reading", "pct_range"})
            kw["dcv_pct_reading"] = ck.get(a, f"{key}.accuracy_dcv", "pct_reading", float, required=True,
                                           check=non_negative)
            kw["dcv_pct_range"] = ck.get(a, f"{key}.accuracy_dcv", "pct_range", float, default=0.0, check=non_negative)
        kw["profile"] = ck.get(d, key, "profile", str, default="generic") or "generic"
        c = ck.table(d.get("commands", {}), f"{key}.commands")
        for ckey, cval in c.items():
            if not isinstance(cval, str):
                ck.bad(f"{key}.commands.{ckey}", f"must be text (a SCPI command), got {cval!r}")
        kw["commands"] = {k: v for k, v in c.items() if isinstance(v, str)}
        return kw

    def check_wiring(self, inst: InstrumentConfig, wiring: int) -> str | None:
        return None if wiring in (2, 4) else f"a multimeter measures 2- or 4-wire, not {wiring}-wire"

    def range_ohm(self, inst: InstrumentConfig, channel: ChannelConfig | None = None) -> float | None:
        if channel is not None and channel.quantity != "ohm":
            return None  # a volts channel (a thermocouple) has a volts range
        if channel is not None and channel.range_ohm is not None:
            return channel.range_ohm
        return inst.settings["range_ohm"]

    def current_a(self, inst: InstrumentConfig, channel: ChannelConfig | None = None) -> float | None:
        rng_ohm = self.range_ohm(inst, channel)
        if rng_ohm is None:
            return None
        table = inst.settings["test_current_a"]
        for rng in sorted(table):
            if rng_ohm <= rng:
                return table[rng]
        return None

    def range_v(self, inst: InstrumentConfig, channel: ChannelConfig) -> float:
        """The DC volts range of a thermocouple channel: its own, or the instrument's."""
        return float(channel.settings.get("range_v") or inst.settings["range_v"])

    def meter_spec(self, inst: InstrumentConfig, channel: ChannelConfig) -> MeterSpec | VoltSpec | None:
        s = inst.settings
        if channel.quantity == "V":
            from soaklog.sensors.tc_chain import VoltSpec

            # the range bounds an honest reading even when no accuracy is given
            return VoltSpec(s["dcv_pct_reading"] or 0.0, s["dcv_pct_range"] or 0.0, self.range_v(inst, channel))
        if s["accuracy_pct_reading"] is None:
            return None
        from soaklog.sensors.measurement import MeterSpec

        return MeterSpec(s["accuracy_pct_reading"], s["accuracy_pct_range"] or 0.0, self.range_ohm(inst, channel))

    def open_on_overload(self, inst: InstrumentConfig, channel: ChannelConfig, r_max_ohm: float) -> bool:
        # an overload is an open sensor only where the range holds the sensor's whole span
        if channel.quantity == "V":  # r_max_ohm is then the largest emf in V
            return 1.2 * self.range_v(inst, channel) >= r_max_ohm
        rng = self.range_ohm(inst, channel)
        return rng is not None and 1.2 * rng >= r_max_ohm

    def address(self, inst: InstrumentConfig) -> str:
        return inst.settings["resource"]

    def accuracy(self, inst: InstrumentConfig) -> str | None:
        s = inst.settings
        if s["accuracy_pct_reading"] is None:
            return None
        return f"±({s['accuracy_pct_reading']:g} % of reading + {s['accuracy_pct_range'] or 0:g} % of range)"

    def warnings(self, inst: InstrumentConfig, channel: ChannelConfig, sensor: SensorConfig, ck: Checker) -> None:
        if channel.quantity == "V":
            tc = sensor.curve
            e_lo, e_hi = tc.emf_limits_mv()  # type: ignore[attr-defined]
            rng_v = self.range_v(inst, channel)
            if max(abs(e_lo), abs(e_hi)) / 1000.0 > 1.2 * rng_v:
                ck.warn(f"channel {channel.name}: the {rng_v:g} V range of {inst.name} does not hold a {tc.label}'s "
                        f"whole emf ({max(abs(e_lo), abs(e_hi)):.3f} mV); hot readings will be over range")
            return
        rng = self.range_ohm(inst, channel)
        if rng is None:
            return
        curve = sensor.curve
        r_cold, r_hot = (float(curve.resistance(curve.t_min_c)), float(curve.resistance(min(curve.t_max_c, 850.0))))
        rising = r_hot > r_cold  # an NTC's resistance is highest at its cold end
        if max(r_cold, r_hot) > 1.2 * rng and (curve.r0_ohm > 1.2 * rng / 4 or not rising):
            t, _ = curve.temperature(1.2 * rng)
            t_over = float(t) if math.isfinite(float(t)) else (curve.t_max_c if rising else curve.t_min_c)
            ck.warn(f"channel {channel.name}: the {rng:g} ohm range of {inst.name} over-ranges "
                    f"{'above' if rising else 'below'} about {t_over:.0f} °C for this sensor")

    def driver(self, inst: InstrumentConfig, clock: Clock, channels: Sequence[ChannelConfig]) -> Driver:
        from soaklog.drivers.scpi_meter import ScpiMeter
        from soaklog.drivers.scpi_text import profile_named

        s = inst.settings
        key = f"instrument {inst.name}"
        try:
            profile = profile_named(s["profile"], s["commands"])
        except InputError as exc:
            raise ConfigError(str(exc), key=f"{key}.commands" if s["commands"] else f"{key}.profile") from None
        wiring = 4 if s["wiring"] == 4 else 2
        per_channel = {c.input: (c.leads.wiring, self.range_ohm(inst, c)) for c in channels if c.quantity == "ohm"}
        volts = {c.input: self.range_v(inst, c) for c in channels if c.quantity == "V"}
        try:
            return ScpiMeter(
                inst.name, s["resource"], [c.input for c in channels], wiring=wiring, range_ohm=s["range_ohm"],
                nplc=s["nplc"], offset_compensation=s["offset_compensation"], profile=profile,
                timeout_s=inst.timeout_s, backend=s["backend"], clock=clock, test_current_a=s["test_current_a"],
                channel_settings=per_channel, volt_channels=volts,
            )
        except InputError as exc:
            raise ConfigError(str(exc), key=key) from None
