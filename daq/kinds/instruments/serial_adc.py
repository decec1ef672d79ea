"""``driver = "serial-adc"``: a ratiometric RTD board on a serial port (its protocol in soaklog.drivers.adcframe)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

from soaklog.errors import ConfigError, InputError
from soaklog.kinds import INSTRUMENTS
from soaklog.kinds.instruments import InstrumentKind
from soaklog.kinds.keys import Checker, Key, non_negative, positive

if TYPE_CHECKING:
    from soaklog.config import ChannelConfig, InstrumentConfig
    from soaklog.drivers.base import Clock, Driver
    from soaklog.sensors.measurement import AdcSpec

#: the board's inputs are numbered 0…63 (soaklog.drivers.adcframe.MAX_CHANNELS)
_MAX_INPUT = 63


@INSTRUMENTS.register("serial-adc")
class SerialAdcKind(InstrumentKind):
    name = "serial-adc"
    noun = "a serial-adc board"
    keys: Mapping[str, Key] = {
        "port": Key(str, "device path or pyserial URL (/dev/ttyUSB0, socket://host:port)", required=True),
        "baudrate": Key(int, "serial speed", default=115200),
        "wiring": Key(int, "the board's hook-up: 2, 3 or 4 (wire)", default=3),
        "reference_ohm": Key(float, "the board's reference resistor", default=400.0),
        "bits": Key(int, "the ADC's resolution", default=24),
        "reference_tolerance_pct": Key(float, "tolerance of the reference resistor in %", default=0.0),
        "excitation_ma": Key(float, "excitation current in mA", default=0.25),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any]:
        kw: dict[str, Any] = {}
        kw["port"] = ck.get(d, key, "port", str, required=True) or ""
        kw["baudrate"] = ck.get(d, key, "baudrate", int, default=115200,
                                check=lambda v: None if v > 0 else "must be positive") or 115200
        kw["wiring"] = ck.get(d, key, "wiring", int, default=3,
                              check=lambda v: None if v in (2, 3, 4) else f"must be 2, 3 or 4, got {v!r}") or 3
        kw["reference_ohm"] = ck.get(d, key, "reference_ohm", float, default=400.0, check=positive) or 400.0
        kw["bits"] = ck.get(d, key, "bits", int, default=24,
                            check=lambda v: None if 8 <= v <= 24 else f"must be 8…24 (the board's counts), got {v!r}") or 24
        kw["reference_tolerance_pct"] = ck.get(d, key, "reference_tolerance_pct", float, default=0.0,
                                               check=non_negative) or 0.0
        ma = ck.get(d, key, "excitation_ma", float, default=0.25, check=positive)
        kw["excitation_a"] = (ma or 0.25) / 1000.0
        return kw

    def check_input(self, inst: InstrumentConfig, inp: str) -> str | None:
        if inp.isdigit() and 0 <= int(inp) <= _MAX_INPUT:
            return None
        return f"a board input is a number 0…{_MAX_INPUT}, got {inp!r}"

    def current_a(self, inst: InstrumentConfig, channel: ChannelConfig | None = None) -> float | None:
        return inst.settings["excitation_a"]

    def adc_spec(self, inst: InstrumentConfig, channel: ChannelConfig) -> AdcSpec | None:
        from soaklog.sensors.measurement import AdcSpec

        s = inst.settings
        return AdcSpec(s["bits"], s["reference_ohm"], s["reference_tolerance_pct"])

    def address(self, inst: InstrumentConfig) -> str:
        return inst.settings["port"]

    def accuracy(self, inst: InstrumentConfig) -> str | None:
        s = inst.settings
        return f"{s['bits']}-bit ratiometric, reference {s['reference_ohm']:g} ohm ±{s['reference_tolerance_pct']:g} %"

    def driver(self, inst: InstrumentConfig, clock: Clock, channels: Sequence[ChannelConfig]) -> Driver:
        from soaklog.drivers.serial_adc import SerialAdc

        s = inst.settings
        try:
            # two frames per scan interval (and per timeout), within the board's 0.1…50 frames/s,
            # so that every scan finds a frame it has not returned
            rate_hz = min(50.0, max(0.1, 2.0 / inst.interval_s, 2.0 / inst.timeout_s))
            return SerialAdc(
                inst.name, s["port"], [c.input for c in channels], baudrate=s["baudrate"], timeout_s=inst.timeout_s,
                reference_ohm=s["reference_ohm"], bits=s["bits"], excitation_a=s["excitation_a"],
                wiring=s["wiring"], rate_hz=rate_hz, clock=clock,
            )
        except (InputError, ZeroDivisionError) as exc:
            raise ConfigError(str(exc), key=f"instrument {inst.name}") from None
