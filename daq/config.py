"""Station configuration: TOML in, a validated, frozen model out (pure: no I/O but reading the file).

Validation happens before anything starts and reports every problem at once,
each located by file and key (``instrument[2].resource``). Durations carry
units (``"2s"``, ``"15min"``, ``"1000h"``).
"""

from __future__ import annotations

import datetime as _dt
import re
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from types import MappingProxyType
from pathlib import Path
from typing import Any

from soaklog.drivers.base import STATUSES
from soaklog.errors import ConfigError, InputError
from soaklog.kinds import ACTIONS, ALARM_RULES, INSTRUMENTS, SENSORS
from soaklog.kinds.actions import COMMON_KEYS as ACTION_COMMON_KEYS
from soaklog.kinds.actions import TRIGGERS, ActionKind
from soaklog.kinds.alarms import COMMON_KEYS as ALARM_COMMON_KEYS
from soaklog.kinds.alarms import SEVERITIES, AlarmContext, AlarmRuleKind
from soaklog.kinds.instruments import COMMON_KEYS, InstrumentKind
from soaklog.kinds.sensors import COMMON_KEYS as SENSOR_COMMON_KEYS
from soaklog.kinds.sensors import SensorKind
from soaklog.kinds.keys import Checker, non_negative, one_of, parse_duration, plain_date, positive
from soaklog.profile import Profile, read_profile
from soaklog.sensors.cvd import CvdCurve
from soaklog.sensors.leads import Conductor, Leads
from soaklog.sensors.measurement import MeasurementChain
from soaklog.sensors.tolerance import ToleranceClass

__all__ = [
    "parse_duration",
    "load_config",
    "parse_config",
    "StationConfig",
    "InstrumentConfig",
    "SensorConfig",
    "ChannelConfig",
    "AlarmConfig",
    "ActionConfig",
    "ConfigProblems",
]

# ---------------------------------------------------------------- the model


@dataclass(frozen=True)
class InstrumentConfig:
    """An ``[[instrument]]``: the keys every instrument has, and its kind's own ``settings`` (validated, defaults filled in)."""

    name: str
    driver: str
    interval_s: float
    timeout_s: float
    settings: Mapping[str, Any] = field(default_factory=dict)

    @property
    def kind(self) -> InstrumentKind:
        """The instrument kind its ``driver`` names (soaklog.kinds.INSTRUMENTS)."""
        return INSTRUMENTS[self.driver]

    @property
    def wiring(self) -> int:
        """The hook-up its channels have unless they say otherwise."""
        return self.kind.default_wiring(self)

    def range_ohm(self, channel: ChannelConfig | None = None) -> float | None:
        """The ohms range a channel is measured on (None: no range, or autorange)."""
        return self.kind.range_ohm(self, channel)

    def current_a(self, channel: ChannelConfig | None = None) -> float | None:
        """The measuring current through a channel's sensor (None: not known)."""
        return self.kind.current_a(self, channel)

    @property
    def address(self) -> str:
        return self.kind.address(self)


@dataclass(frozen=True)
class CalibrationRecord:
    certificate: str
    expanded_uncertainty_c: float
    k: float
    span_c: tuple[float, float]
    date: _dt.date | None
    due: _dt.date | None


@dataclass(frozen=True)
class SensorConfig:
    name: str
    curve: CvdCurve
    tolerance: ToleranceClass | None
    calibration: CalibrationRecord | None
    dissipation_w_per_k: float | None
    description: str = ""
    type: str = "pt"

    @property
    def kind(self) -> SensorKind:
        """The sensor kind its ``type`` names (soaklog.kinds.SENSORS)."""
        return SENSORS[self.type]


@dataclass(frozen=True)
class ChannelConfig:
    name: str
    label: str
    instrument: str
    input: str
    sensor: str
    leads: Leads
    excitation_a: float | None
    position: str = ""
    range_ohm: float | None = None  # a meter range for this channel alone (None: the instrument's)
    #: what the instrument measures on this input: "ohm" or "V" (its sensor kind's quantity)
    quantity: str = "ohm"
    #: the sensor kind's own channel settings (a thermocouple's cold junction, …)
    settings: Mapping[str, Any] = field(default_factory=lambda: MappingProxyType({}))


@dataclass(frozen=True)
class ActionConfig:
    """What to do when an alarm changes state (``on``: raised, cleared, acknowledged).

    ``kind`` names an action kind (soaklog.kinds.ACTIONS: log, program, scpi,
    serial_line, …); ``params`` are its settings as the kind read them.
    """

    kind: str
    on: tuple[str, ...]
    params: Mapping[str, Any]
    label: str = ""

    @property
    def name(self) -> str:
        """How the action is named in events: its label, or what it does."""
        return self.label or self.kind_of.describe(self.params)

    @property
    def kind_of(self) -> ActionKind:
        """The action kind its ``kind`` names (soaklog.kinds.ACTIONS)."""
        return ACTIONS[self.kind]


@dataclass(frozen=True)
class AlarmConfig:
    """An alarm rule as written, validated, with every default filled in (durations in seconds: ``on_delay_s``)."""

    name: str
    kind: str
    channels: tuple[str, ...]
    severity: str
    params: Mapping[str, Any]
    actions: tuple[ActionConfig, ...] = ()

    @property
    def kind_of(self) -> AlarmRuleKind:
        """The rule kind its ``kind`` names (soaklog.kinds.ALARM_RULES)."""
        return ALARM_RULES[self.kind]


@dataclass(frozen=True)
class StationConfig:
    path: str
    text: str
    station: str
    run_name: str
    database: str
    commit_interval_s: float
    ambient_c: float
    planned_duration_s: float | None
    instruments: tuple[InstrumentConfig, ...]
    sensors: tuple[SensorConfig, ...]
    channels: tuple[ChannelConfig, ...]
    alarms: tuple[AlarmConfig, ...]
    profile: Profile | None
    warnings: tuple[str, ...] = ()

    def instrument(self, name: str) -> InstrumentConfig:
        return next(i for i in self.instruments if i.name == name)

    def sensor(self, name: str) -> SensorConfig:
        return next(s for s in self.sensors if s.name == name)

    def chain(self, channel: ChannelConfig) -> MeasurementChain:
        """The measurement chain of one channel: sensor, leads, excitation, instrument spec."""
        sensor = self.sensor(channel.sensor)
        inst = self.instrument(channel.instrument)
        current = channel.excitation_a if channel.excitation_a is not None else inst.current_a(channel)
        if channel.quantity != "ohm":
            current = None  # nothing drives a current through a thermocouple
        chain = sensor.kind.chain(sensor, channel, current_a=current, meter=inst.kind.meter_spec(inst, channel),
                                  adc=inst.kind.adc_spec(inst, channel))
        if channel.quantity != "ohm":
            return chain
        rng = inst.range_ohm(channel)
        # a fixed range bounds what a reading can honestly be (over_range above it)
        return chain if rng is None or chain.range_ohm is not None else replace(chain, range_ohm=rng)


# ---------------------------------------------------------------- validation


class ConfigProblems(ConfigError):
    """Every problem found in one configuration file."""

    def __init__(self, file: str, problems: list[tuple[str, str]]) -> None:
        self.problems = problems
        lines = [f"{file}: {key}: {msg}" if key else f"{file}: {msg}" for key, msg in problems]
        super().__init__(
            f"{len(problems)} problem{'s' if len(problems) != 1 else ''} in the configuration:\n  "
            + "\n  ".join(lines),
            file=file,
            key=problems[0][0] if problems else None,
        )
        self.args = ("\n".join(lines),)

    def __str__(self) -> str:
        n = len(self.problems)
        head = f"{n} problem{'s' if n != 1 else ''} in {self.file}; nothing was started"
        return head + "\n" + "\n".join(
            f"  {self.file}: {key}: {msg}" if key else f"  {self.file}: {msg}" for key, msg in self.problems
        )


_Checker = Checker
_positive = positive
_non_negative = non_negative
_plain_date = plain_date


_TOP_KEYS = {"station", "run", "instrument", "sensor", "channel", "alarm", "profile"}
_STATION_KEYS = {"name", "database", "commit_interval", "ambient_c"}
_RUN_KEYS = {"name", "planned_duration"}
_CHANNEL_KEYS = {
    "name", "label", "instrument", "input", "sensor", "wiring", "lead", "imbalance_ohm", "excitation_ma",
    "position", "range_ohm",
}
_LEAD_KEYS = {"ohms", "awg", "mm2", "class", "inside_m", "outside_m", "tolerance", "imbalance_fraction"}


def load_config(path: str | Path, *, today: _dt.date | None = None) -> StationConfig:
    """Read and validate a station file.

    Raises:
        ConfigProblems: every problem found, by file and key.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigProblems(str(p), [("", "file not found")]) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigProblems(str(p), [("", f"cannot read: {exc}")]) from exc
    return parse_config(text, str(p), today=today)


def parse_config(text: str, path: str = "<config>", *, today: _dt.date | None = None) -> StationConfig:
    """Validate configuration text; ``path`` names it in messages and anchors relative paths."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigProblems(path, [("", f"not valid TOML: {exc}")]) from exc
    ck = _Checker()
    ck.unknown(data, "", _TOP_KEYS)
    base = Path(path).parent if path != "<config>" else Path.cwd()

    st = ck.table(data.get("station", {}), "station")
    ck.unknown(st, "station", _STATION_KEYS)
    station = ck.get(st, "station", "name", str, required=True) or ""
    db = ck.get(st, "station", "database", str, default="soaklog.db") or "soaklog.db"
    database = str((base / db).resolve()) if not Path(db).is_absolute() else db
    commit_s = ck.duration(st, "station", "commit_interval", default="1s") or 1.0
    if commit_s > 1.0:
        ck.bad("station.commit_interval", f"must be at most 1 s (readings are committed at least once a second), got {commit_s:g} s")
    ambient = ck.get(st, "station", "ambient_c", float, default=20.0)

    rn = ck.table(data.get("run", {}), "run")
    ck.unknown(rn, "run", _RUN_KEYS)
    run_name = ck.get(rn, "run", "name", str, default="") or ""
    planned = ck.duration(rn, "run", "planned_duration", default=None)

    instruments = _instruments(ck, data.get("instrument", []))
    sensors = _sensors(ck, data.get("sensor", []), today or _dt.date.today())
    inst_by_name = {i.name: i for i in instruments}
    sens_by_name = {s.name: s for s in sensors}
    channels = _channels(ck, data.get("channel", []), inst_by_name, sens_by_name,
                         _declared(data.get("instrument")), _declared(data.get("sensor")))
    alarms = _alarms(ck, data.get("alarm", []), {c.name for c in channels}, instruments, channels)
    profile = _profile(ck, data.get("profile"), {c.name for c in channels}, path)

    if not channels and not ck.problems:
        ck.bad("channel", "no channels: add at least one [[channel]]")
    _metrology_warnings(ck, instruments, sensors, channels)
    if ck.problems:
        raise ConfigProblems(path, ck.problems)
    return StationConfig(
        path=path, text=text, station=station, run_name=run_name, database=database,
        commit_interval_s=commit_s, ambient_c=ambient, planned_duration_s=planned,
        instruments=tuple(instruments), sensors=tuple(sensors), channels=tuple(channels),
        alarms=tuple(alarms), profile=profile, warnings=tuple(ck.warnings),
    )


def _profile(ck: _Checker, raw: Any, channel_names: set[str], path: str) -> Profile | None:
    """The ``[profile]``, read by its kind (soaklog.kinds.profiles); its problems by key, with the rest."""
    if raw is None:
        return None
    if not isinstance(raw, dict):
        ck.bad("profile", f"must be a table, got {type(raw).__name__}")
        return None
    profile, problems = read_profile(raw, where=path)
    for key, msg in problems:
        ck.bad(f"profile.{key}" if key else "profile", msg)
    if profile is not None:
        for key, chosen in (("sample_channels", profile.sample_channels), ("chamber_channels", profile.chamber_channels)):
            for c in chosen or ():
                if c not in channel_names:
                    ck.bad(f"profile.{key}", f"no channel named {c!r}")
    return profile


def _array(ck: _Checker, value: Any, key: str) -> list[Any]:
    if not isinstance(value, list):
        ck.bad(key, f"must be an array of tables ([[{key}]]), got {type(value).__name__}")
        return []
    return value


def _unique_name(ck: _Checker, seen: set[str], name: str | None, key: str) -> None:
    if name is None:
        return
    if not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9_.\-]*", name):
        ck.bad(f"{key}.name", f"use letters, digits, '-', '_' or '.', starting with a letter or digit; got {name!r}")
    if name in seen:
        ck.bad(f"{key}.name", f"{name!r} is used twice")
    seen.add(name)


def _instruments(ck: _Checker, raw: Any) -> list[InstrumentConfig]:
    out: list[InstrumentConfig] = []
    seen: set[str] = set()
    for i, item in enumerate(_array(ck, raw, "instrument")):
        key = f"instrument[{i + 1}]"
        d = ck.table(item, key)
        name = ck.get(d, key, "name", str, required=True)
        _unique_name(ck, seen, name, key)
        driver = ck.get(d, key, "driver", str, required=True, check=one_of(INSTRUMENTS.names))
        interval = ck.duration(d, key, "interval", default="2s")
        timeout = ck.duration(d, key, "timeout", default="5s")
        kind = INSTRUMENTS.get(driver) if driver is not None else None
        if kind is None:
            # an unknown driver: which other keys belong to it cannot be told
            ck.unknown(d, key, set(COMMON_KEYS).union(*(k.keys for _, k in INSTRUMENTS.items())))
            continue
        ck.unknown(d, key, set(COMMON_KEYS) | set(kind.keys))
        settings = kind.read(ck, d, key)
        if name is None or interval is None or timeout is None:
            continue
        out.append(InstrumentConfig(name=name, driver=driver, interval_s=interval, timeout_s=timeout,
                                    settings=MappingProxyType(settings)))
    return out


def _sensors(ck: _Checker, raw: Any, today: _dt.date) -> list[SensorConfig]:
    out: list[SensorConfig] = []
    seen: set[str] = set()
    for i, item in enumerate(_array(ck, raw, "sensor")):
        key = f"sensor[{i + 1}]"
        d = ck.table(item, key)
        name = ck.get(d, key, "name", str, required=True)
        _unique_name(ck, seen, name, key)
        stype = ck.get(d, key, "type", str, default="pt", check=one_of(SENSORS.names))
        kind = SENSORS.get(stype) if stype is not None else None
        if kind is None:
            ck.unknown(d, key, set(SENSOR_COMMON_KEYS).union(*(k.keys for _, k in SENSORS.items())))
            continue
        ck.unknown(d, key, set(SENSOR_COMMON_KEYS) | set(kind.keys))
        description = ck.get(d, key, "description", str, default="") or ""
        sensor = kind.read(ck, d, key, name, description, today)
        if sensor is not None:
            out.append(sensor)
    return out


def _declared(raw: Any) -> set[str]:
    """Names of the items of an array of tables, valid or not (a broken item is not an unknown one)."""
    if not isinstance(raw, list):
        return set()
    return {d["name"] for d in raw if isinstance(d, dict) and isinstance(d.get("name"), str)}


def _channels(
    ck: _Checker,
    raw: Any,
    instruments: Mapping[str, InstrumentConfig],
    sensors: Mapping[str, SensorConfig],
    declared_instruments: set[str] = frozenset(),  # type: ignore[assignment]
    declared_sensors: set[str] = frozenset(),  # type: ignore[assignment]
) -> list[ChannelConfig]:
    out: list[ChannelConfig] = []
    seen: set[str] = set()
    inputs: set[tuple[str, str]] = set()
    keys_of: dict[str, str] = {}
    for i, item in enumerate(_array(ck, raw, "channel")):
        key = f"channel[{i + 1}]"
        d = ck.table(item, key)
        sensor_name = d.get("sensor")
        skind = sensors[sensor_name].kind if isinstance(sensor_name, str) and sensor_name in sensors else None
        # a channel may have the keys its sensor's kind adds (a thermocouple's cold junction)
        ck.unknown(d, key, _CHANNEL_KEYS | set(skind.channel_keys if skind is not None else
                                                 set().union(*(k.channel_keys for _, k in SENSORS.items()))))
        name = ck.get(d, key, "name", str, required=True)
        _unique_name(ck, seen, name, key)
        inst = ck.get(d, key, "instrument", str, required=True)
        if inst is not None and inst not in instruments and inst not in declared_instruments:
            ck.bad(f"{key}.instrument", f"no instrument named {inst!r}; known: {', '.join(instruments) or 'none'}")
        icfg = instruments.get(inst or "")
        inp = d.get("input")
        if isinstance(inp, int) and not isinstance(inp, bool):
            inp = str(inp)
        if not isinstance(inp, str) or not inp:
            ck.bad(f"{key}.input", f"is required: the instrument's input (\"101\" on a scanner card, \"0\" on a board), got {inp!r}")
            inp = None
        elif icfg is not None and (msg := icfg.kind.check_input(icfg, inp)):
            ck.bad(f"{key}.input", msg)
        elif inst is not None and (inst, inp) in inputs:
            ck.bad(f"{key}.input", f"input {inp} of {inst} is used by another channel")
        if inst is not None and inp is not None:
            inputs.add((inst, inp))
        sensor = ck.get(d, key, "sensor", str, required=True)
        if sensor is not None and sensor not in sensors and sensor not in declared_sensors:
            ck.bad(f"{key}.sensor", f"no sensor named {sensor!r}; known: {', '.join(sensors) or 'none'}")
        quantity = skind.quantity if skind is not None else "ohm"
        if icfg is not None and quantity not in icfg.kind.measures:
            ck.bad(f"{key}.sensor", f"sensor {sensor} is measured in {quantity}; {inst} is {icfg.kind.noun} "
                                    f"that measures {', '.join(sorted(icfg.kind.measures))} only")
        if quantity != "ohm":
            # a voltage is measured across two wires with no current: no wiring, leads or excitation
            for k in ("wiring", "lead", "imbalance_ohm", "excitation_ma", "range_ohm"):
                if k in d:
                    ck.bad(f"{key}.{k}", f"does not apply to a sensor measured in {quantity}")
            wiring: int | None = 4
            leads: Leads | None = Leads(4)
        else:
            default_wiring = icfg.wiring if icfg is not None else 4
            wiring = ck.get(d, key, "wiring", int, default=default_wiring,
                            check=lambda v: None if v in (2, 3, 4) else f"must be 2, 3 or 4, got {v!r}")
            if icfg is not None and wiring is not None and (msg := icfg.kind.check_wiring(icfg, wiring)):
                ck.bad(f"{key}.wiring", msg)
            leads = _leads(ck, d, key, wiring)
        settings = skind.read_channel(ck, d, key) if skind is not None else {}
        ma = ck.get(d, key, "excitation_ma", float, check=_positive) if quantity == "ohm" else None
        ch_range = ck.get(d, key, "range_ohm", float, check=_positive) if quantity == "ohm" else None
        if ch_range is not None and icfg is not None and not icfg.kind.channel_range:
            ck.bad(f"{key}.range_ohm", f"a range applies to a multimeter channel; {inst} is {icfg.kind.noun}")
        if name is None or inst is None or inp is None or sensor is None or leads is None \
                or inst not in instruments or sensor not in sensors:
            continue
        out.append(ChannelConfig(
            name=name, label=ck.get(d, key, "label", str, default=name) or name, instrument=inst, input=inp,
            sensor=sensor, leads=leads, excitation_a=None if ma is None else ma / 1000.0,
            position=ck.get(d, key, "position", str, default="") or "", range_ohm=ch_range,
            quantity=quantity, settings=MappingProxyType(settings),
        ))
        keys_of[name] = key
    by_name = {c.name: c for c in out}
    for c in out:
        sensors[c.sensor].kind.check_links(ck, c, keys_of[c.name], by_name, sensors)
    return out


def _leads(ck: _Checker, d: Mapping[str, Any], key: str, wiring: int | None) -> Leads | None:
    if wiring is None:
        return None
    lead = d.get("lead")
    imb = ck.get(d, key, "imbalance_ohm", float, default=0.0)
    if wiring == 4:
        if lead is not None:
            ck.warnings.append(f"{key}.lead: ignored for a 4-wire channel")
        if imb:
            ck.bad(f"{key}.imbalance_ohm", "applies to 3-wire channels only")
        return Leads(4)
    if lead is None:
        ck.bad(f"{key}.lead", f"a {wiring}-wire channel needs its lead: {{ ohms = … }} (one conductor) or {{ awg = …, inside_m = …, outside_m = … }}")
        return None
    lk = f"{key}.lead"
    t = ck.table(lead, lk)
    ck.unknown(t, lk, _LEAD_KEYS)
    kw: dict[str, Any] = {}
    for name in ("tolerance", "imbalance_fraction"):
        if name in t:
            kw[name] = ck.get(t, lk, name, float, check=lambda v: None if 0 <= v <= 1 else f"a fraction 0…1, got {v!r}")
    try:
        if "ohms" in t and any(k in t for k in ("awg", "mm2", "class", "inside_m", "outside_m")):
            ck.bad(lk, "give the lead as ohms (one conductor) or as a copper gauge with lengths, not both")
            return None
        if "ohms" in t:
            ohm = ck.get(t, lk, "ohms", float, check=_non_negative)
            if ohm is None:
                return None
            conductor = Conductor.fixed(ohm)
        else:
            awg = t.get("awg")
            mm2 = ck.get(t, lk, "mm2", float, check=_positive)
            conductor = Conductor(
                awg=awg if isinstance(awg, (int, str)) and not isinstance(awg, bool) else None,
                area_mm2=mm2,
                inside_length_m=ck.get(t, lk, "inside_m", float, default=0.0, check=_non_negative) or 0.0,
                outside_length_m=ck.get(t, lk, "outside_m", float, default=0.0, check=_non_negative) or 0.0,
                # IEC 60228 conductor class of a metric cross-section (1 solid, 2 stranded, 5 flexible)
                lead_class=ck.get(t, lk, "class", int,
                                  check=lambda v: None if v in (1, 2, 5) else f"an IEC 60228 class: 1, 2 or 5, got {v!r}"),
            )
        return Leads(wiring, conductor, imbalance_ohm=imb or 0.0, **{k: v for k, v in kw.items() if v is not None})  # type: ignore[arg-type]
    except InputError as exc:
        ck.bad(lk, str(exc))
        return None


#: every status a stored reading can have (the store's list; a test keeps them equal)
_READING_STATUSES = frozenset(STATUSES)


def _alarms(
    ck: _Checker, raw: Any, channel_names: set[str], instruments: Sequence[InstrumentConfig] = (),
    channels: Sequence[ChannelConfig] = (),
) -> list[AlarmConfig]:
    """The ``[[alarm]]`` tables: the keys every rule has here, its kind's own keys read by the kind."""
    out: list[AlarmConfig] = []
    seen: set[str] = set()
    intervals = {i.name: i.interval_s for i in instruments}
    inst_of_channel = {c.name: c.instrument for c in channels}
    for i, item in enumerate(_array(ck, raw, "alarm")):
        key = f"alarm[{i + 1}]"
        d = ck.table(item, key)
        name = ck.get(d, key, "name", str, required=True)
        _unique_name(ck, seen, name, key)
        kind_name = ck.get(d, key, "kind", str, required=True, check=one_of(ALARM_RULES.names))
        kind = ALARM_RULES.get(kind_name) if kind_name is not None else None
        sev = ck.get(d, key, "severity", str, default=kind.defaults.severity if kind else "high",
                     check=one_of(SEVERITIES))
        chans = ck.names(d, key, "channel", "channels", "channel")
        for c in chans:
            if c not in channel_names and c != "*":
                ck.bad(f"{key}.channels", f"no channel named {c!r}")
        if kind is None or kind_name is None:
            # an unknown kind: which other keys belong to it cannot be told
            continue
        ck.unknown(d, key, set(ALARM_COMMON_KEYS) | set(kind.keys))
        kd = kind.defaults
        p: dict[str, Any] = {}
        p["on_delay_s"] = ck.delay(d, key, "on_delay", kd.on_delay_s)
        p["off_delay_s"] = ck.delay(d, key, "off_delay", kd.off_delay_s)
        for flag, default in (("latch", kd.latch), ("shelvable", kd.shelvable), ("in_service", True)):
            v = ck.get(d, key, flag, bool, default=default)
            p[flag] = default if v is None else v
        if "description" in d:
            p["description"] = ck.get(d, key, "description", str, default="") or ""
        watched = tuple(sorted(channel_names)) if "*" in chans else tuple(chans)
        ctx = AlarmContext(frozenset(channel_names), tuple(chans), watched, intervals, inst_of_channel)
        p.update(kind.read(ck, d, key, ctx))
        actions = _actions(ck, d.get("actions", []), f"{key}.actions") if "actions" in d else []
        if name is None or sev is None:
            continue
        out.append(AlarmConfig(name, kind_name, tuple(chans), sev, p, tuple(actions)))
    return out


def _actions(ck: _Checker, raw: Any, key: str) -> list[ActionConfig]:
    """An alarm's actions: the keys every action has here, its kind's own keys read by the kind."""
    out: list[ActionConfig] = []
    if not isinstance(raw, list):
        ck.bad(key, f"must be a list of tables ([[alarm.actions]] or [{{ kind = \"log\" }}]), got {type(raw).__name__}")
        return out
    for j, item in enumerate(raw):
        k = f"{key}[{j + 1}]"
        d = ck.table(item, k)
        kind_name = ck.get(d, k, "kind", str, required=True, check=one_of(ACTIONS.names))
        kind = ACTIONS.get(kind_name) if kind_name is not None else None
        if kind is None or kind_name is None:
            continue
        ck.unknown(d, k, set(ACTION_COMMON_KEYS) | set(kind.keys))
        on = d.get("on", ["raised"])
        if isinstance(on, str):
            on = [on]
        if not isinstance(on, list) or not on or not all(isinstance(x, str) and x in TRIGGERS for x in on):
            ck.bad(f"{k}.on", f"must be one or more of {', '.join(sorted(TRIGGERS))}, got {d.get('on')!r}")
            on = ["raised"]
        label = ck.get(d, k, "name", str, default="") or ""
        p = kind.read(ck, d, k)
        if p is not None:
            out.append(ActionConfig(kind_name, tuple(dict.fromkeys(on)), p, label))
    return out


def _metrology_warnings(
    ck: _Checker, instruments: list[InstrumentConfig], sensors: list[SensorConfig], channels: list[ChannelConfig]
) -> None:
    """What a metrologist would point out before a run (these never stop it): each kind says its own."""
    inst = {i.name: i for i in instruments}
    sens = {s.name: s for s in sensors}
    for c in channels:
        s, i = sens.get(c.sensor), inst.get(c.instrument)
        if s is None or i is None:
            continue
        current = c.excitation_a if c.excitation_a is not None else i.current_a(c)
        i.kind.warnings(i, c, s, ck)
        s.kind.warnings(s, c, current, ck)
