"""``kind = "flatline"``: a channel whose reading has not moved beyond its noise for a set time — a stuck sensor.

A sensor can fail without an open or a short: a frozen transmitter, a board
that repeats its last conversion, an element that came loose and sits in
still air. Its readings stay ``ok`` and plausible, and no limit ever trips.
A live sensor in a working chamber never reads the same to a hundredth of a
kelvin for half an hour: the controller's own cycling and the air's
turbulence move it by tenths (common practice, no published source).

The rule anchors on a good reading and measures how long the readings stay
within ``band_k`` of it; a reading further away is the sensor moving, and the
anchor moves to it (so noise inside the band never clears a raised alarm, and
one step outside it does). A reading that is not ok forgets the anchor: the
time starts again from the next good one (a faulty sensor is the business of
``sensor_fault``). ``for`` is itself the delay: no on-delay by default.

Set ``band_k`` above the readout's own noise (about three standard
deviations of a channel held still): a meter whose noise alone exceeds the
band never reports a flat line.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import NOTHING, AlarmContext, AlarmRuleKind, KindDefaults, Moment, Signals, good
from soaklog.kinds.keys import DURATION, Checker, Key, positive

if TYPE_CHECKING:
    from soaklog.alarms import Rule

#: a reading within this of its anchor has not moved: 0.01 K, about the resolution of a good RTD
#: readout and a tenth of a chamber's usual fluctuation (common practice, no published source)
DEFAULT_BAND_K = 0.01
#: how long a reading may stay flat (common practice, no published source)
DEFAULT_FOR = "30min"
DEFAULT_FOR_S = 1800.0


@ALARM_RULES.register("flatline")
class Flatline(AlarmRuleKind):
    name = "flatline"
    # severity medium: the channel may still be right (a very stable dwell on a coarse readout)
    defaults = KindDefaults(None, "", 0.0, 0.0, 0.0, False, True, "medium")
    keys: Mapping[str, Key] = {
        "band_k": Key(float, "readings within this of each other have not moved, K", default=DEFAULT_BAND_K),
        "for": Key(DURATION, "how long a reading may stay within its band", default=DEFAULT_FOR),
    }
    settings: Mapping[str, Any] = {"band_k": DEFAULT_BAND_K, "for_s": DEFAULT_FOR_S}

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        band = ck.get(d, key, "band_k", float, default=DEFAULT_BAND_K, check=positive)
        p["band_k"] = DEFAULT_BAND_K if band is None else band
        p["for_s"] = ck.duration(d, key, "for", default=DEFAULT_FOR) or DEFAULT_FOR_S

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        s, mem = m.sample, m.memory
        if s is None:
            return NOTHING
        if not good(s):
            mem.clear()  # a fault restarts the time
            return NOTHING
        anchor = mem.get("anchor_c")
        if anchor is None or abs(s.temperature_c - anchor) > float(rule.settings["band_k"]):
            mem["anchor_c"], mem["since_s"] = s.temperature_c, s.t_s
        flat_s = s.t_s - mem["since_s"]
        return flat_s >= float(rule.settings["for_s"]), flat_s

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        band = rule.settings["band_k"]
        if active:
            return f"{source}: reading flat within ±{band:g} K for {value:.0f} s (limit {rule.settings['for_s']:g} s): stuck sensor?"
        return f"{source}: reading moves again"
