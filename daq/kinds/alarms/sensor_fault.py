"""``kind = "sensor_fault"``: a channel whose readings say the sensor itself is bad (open, short, …)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from soaklog.kinds import ALARM_RULES
from soaklog.kinds.alarms import (
    FAULT_STATUSES,
    NOTHING,
    READING_STATUSES,
    AlarmContext,
    AlarmRuleKind,
    KindDefaults,
    Moment,
    Signals,
)
from soaklog.kinds.keys import Checker, Key

if TYPE_CHECKING:
    from soaklog.alarms import Rule


@ALARM_RULES.register("sensor_fault")
class SensorFault(AlarmRuleKind):
    name = "sensor_fault"
    # a bad sensor is reported at once and cleared after a minute of good readings
    defaults = KindDefaults(None, "", 0.0, 0.0, 60.0, False, True, "high")
    keys: Mapping[str, Key] = {
        "statuses": Key(list, "the reading statuses that count as a fault", default=sorted(FAULT_STATUSES)),
    }
    settings: Mapping[str, Any] = {"statuses": FAULT_STATUSES}

    def read_settings(self, ck: Checker, d: Mapping[str, Any], key: str, ctx: AlarmContext, p: dict[str, Any]) -> None:
        sts = d.get("statuses", sorted(FAULT_STATUSES))
        if not isinstance(sts, list) or not sts or not all(isinstance(x, str) for x in sts):
            ck.bad(f"{key}.statuses", f"must be a list of reading statuses, got {sts!r}")
            return
        bad = [x for x in sts if x not in READING_STATUSES or x == "ok"]
        if bad:
            ck.bad(f"{key}.statuses", f"unknown status {bad[0]!r}; known: "
                   f"{', '.join(sorted(READING_STATUSES - {'ok'}))}")
        else:
            p["statuses"] = tuple(sts)

    def judge(self, rule: Rule, m: Moment, signals: Signals) -> tuple[bool | None, float | None]:
        if m.sample is None:
            return NOTHING
        return m.sample.status in rule.settings["statuses"], None

    def describe(self, rule: Rule, source: str, value: float | None, active: bool) -> str:
        return f"{source}: sensor fault" if active else f"{source}: sensor reads again"
