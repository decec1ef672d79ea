"""Station configuration: TOML in, a validated, frozen model out (pure: no I/O but reading the file).

Validation happens before anything starts and reports every problem at once,
each located by file and key (``instrument[2].resource``). Durations carry
units (``"2s"``, ``"15min"``, ``"1000h"``).
"""

from __future__ import annotations

import datetime as _dt
import math
import re
import tomllib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from soaklog.errors import ConfigError, InputError
from soaklog.sensors.cvd import IEC_60751, CvdCurve
from soaklog.sensors.leads import Conductor, Leads
from soaklog.sensors.measurement import (
    AdcSpec,
    Calibration,
    Excitation,
    MeasurementChain,
    MeterSpec,
    SensorSpec,
)
from soaklog.sensors.tolerance import ToleranceClass, tolerance_class

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
    "DEFAULT_TEST_CURRENT_A",
]

_DURATION = re.compile(r"^\s*([0-9]+(?:\.[0-9]*)?|\.[0-9]+)\s*(ms|s|sec|min|h|d)\s*$")
_UNIT_S = {"ms": 1e-3, "s": 1.0, "sec": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}

#: measuring current per ohms range of a typical bench DMM (common practice, no
#: published source: check the meter's data sheet; override per instrument)
DEFAULT_TEST_CURRENT_A: dict[float, float] = {
    100.0: 1e-3,
    1_000.0: 1e-3,
    10_000.0: 100e-6,
    100_000.0: 10e-6,
    1_000_000.0: 5e-6,
}


def parse_duration(text: object) -> float:
    """Seconds from a duration with a unit: ``"500ms"``, ``"2s"``, ``"15min"``, ``"1000h"``, ``"7d"``.

    Raises:
        InputError: no unit, an unknown unit, or not a number.
    """
    if not isinstance(text, str):
        raise InputError(f"a duration is text with a unit, like \"2s\" or \"15min\"; got {text!r}")
    m = _DURATION.match(text)
    if not m:
        raise InputError(f"{text!r} is not a duration; write a number and a unit: ms, s, min, h, d (\"2s\", \"1000h\")")
    return float(m.group(1)) * _UNIT_S[m.group(2)]


# ---------------------------------------------------------------- the model


@dataclass(frozen=True)
class InstrumentConfig:
    name: str
    driver: str  # "scpi" | "serial-adc"
    interval_s: float
    timeout_s: float
    resource: str = ""
    backend: str = "@py"
    port: str = ""
    baudrate: int = 115200
    wiring: int = 4  # scpi: 2 or 4 (the meter's mode); serial-adc: the board's hook-up
    range_ohm: float | None = 1000.0
    nplc: float = 1.0
    offset_compensation: bool = True
    test_current_a: Mapping[float, float] = field(default_factory=lambda: dict(DEFAULT_TEST_CURRENT_A))
    accuracy_pct_reading: float | None = None
    accuracy_pct_range: float | None = None
    profile: str = "generic"
    commands: Mapping[str, str] = field(default_factory=dict)
    reference_ohm: float = 400.0
    bits: int = 24
    reference_tolerance_pct: float = 0.0
    excitation_a: float = 250e-6

    def current_for_range(self, range_ohm: float | None = None) -> float | None:
        """The measuring current on a range (the instrument's by default; None on autorange)."""
        if self.driver != "scpi":
            return self.excitation_a
        rng_ohm = self.range_ohm if range_ohm is None else range_ohm
        if rng_ohm is None:
            return None
        for rng in sorted(self.test_current_a):
            if rng_ohm <= rng:
                return self.test_current_a[rng]
        return None


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


@dataclass(frozen=True)
class ActionConfig:
    """What to do when an alarm changes state (``on``: raised, cleared, acknowledged).

    ``kind`` is log, program (``argv``, ``timeout_s``), scpi (``resource``,
    ``commands``, ``backend``, ``timeout_s``, ``check_errors``, ``verify``) or
    serial_line (``port``, ``line``, ``state``, ``baudrate``).
    """

    kind: str
    on: tuple[str, ...]
    params: Mapping[str, Any]
    label: str = ""

    @property
    def name(self) -> str:
        """How the action is named in events: its label, or what it does."""
        if self.label:
            return self.label
        p = self.params
        if self.kind == "program":
            return "program " + " ".join(p.get("argv", ()))[:80]
        if self.kind == "scpi":
            return f"scpi {'; '.join(p.get('commands', ()))} to {p.get('resource', '')}"
        if self.kind == "serial_line":
            return f"{'set' if p.get('state') else 'clear'} {str(p.get('line', '')).upper()} of {p.get('port', '')}"
        return "log"


@dataclass(frozen=True)
class AlarmConfig:
    """An alarm rule as written, validated, with every default filled in (durations in seconds: ``on_delay_s``)."""

    name: str
    kind: str
    channels: tuple[str, ...]
    severity: str
    params: Mapping[str, Any]
    actions: tuple[ActionConfig, ...] = ()


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
    profile: Mapping[str, Any]
    warnings: tuple[str, ...] = ()

    def instrument(self, name: str) -> InstrumentConfig:
        return next(i for i in self.instruments if i.name == name)

    def sensor(self, name: str) -> SensorConfig:
        return next(s for s in self.sensors if s.name == name)

    def chain(self, channel: ChannelConfig) -> MeasurementChain:
        """The measurement chain of one channel: sensor, leads, excitation, instrument spec."""
        sensor = self.sensor(channel.sensor)
        inst = self.instrument(channel.instrument)
        cal = None
        if sensor.calibration is not None:
            c = sensor.calibration
            cal = Calibration(c.expanded_uncertainty_c, c.k, c.span_c[0], c.span_c[1], c.certificate)
        spec = SensorSpec(sensor.curve, sensor.tolerance, cal, sensor.dissipation_w_per_k)
        rng = channel.range_ohm if channel.range_ohm is not None else inst.range_ohm
        current = channel.excitation_a if channel.excitation_a is not None else inst.current_for_range(rng)
        excitation = Excitation(current_a=current) if current is not None else None
        meter = None
        adc = None
        if inst.driver == "scpi" and inst.accuracy_pct_reading is not None:
            meter = MeterSpec(inst.accuracy_pct_reading, inst.accuracy_pct_range or 0.0, rng)
        if inst.driver == "serial-adc":
            adc = AdcSpec(inst.bits, inst.reference_ohm, inst.reference_tolerance_pct)
        return MeasurementChain(spec, channel.leads, excitation, meter, adc)


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


class _Checker:
    """Collects problems instead of stopping at the first."""

    def __init__(self) -> None:
        self.problems: list[tuple[str, str]] = []
        self.warnings: list[str] = []

    def bad(self, key: str, msg: str) -> None:
        self.problems.append((key, msg))

    def table(self, data: Any, key: str) -> dict[str, Any]:
        if not isinstance(data, dict):
            self.bad(key, f"must be a table, got {type(data).__name__}")
            return {}
        return data

    def unknown(self, data: Mapping[str, Any], key: str, allowed: set[str]) -> None:
        for k in data:
            if k not in allowed:
                close = _closest(k, allowed)
                hint = f"; did you mean {close!r}?" if close else f"; allowed: {', '.join(sorted(allowed))}"
                self.bad(f"{key}.{k}" if key else k, f"unknown key{hint}")

    def get(
        self,
        data: Mapping[str, Any],
        key: str,
        name: str,
        kind: type | tuple[type, ...],
        *,
        default: Any = None,
        required: bool = False,
        check: Callable[[Any], str | None] | None = None,
    ) -> Any:
        where = f"{key}.{name}" if key else name
        if name not in data:
            if required:
                self.bad(where, "is required")
            return default
        value = data[name]
        kinds = kind if isinstance(kind, tuple) else (kind,)
        if float in kinds and isinstance(value, int) and not isinstance(value, bool):
            value = float(value)
        if isinstance(value, bool) and bool not in kinds:
            self.bad(where, f"must be {_kind_name(kinds)}, got {value!r}")
            return default
        if not isinstance(value, kinds):
            self.bad(where, f"must be {_kind_name(kinds)}, got {value!r}")
            return default
        if isinstance(value, float) and not math.isfinite(value):
            self.bad(where, f"must be a finite number, got {value!r}")
            return default
        if check is not None:
            msg = check(value)
            if msg:
                self.bad(where, msg)
                return default
        return value

    def duration(self, data: Mapping[str, Any], key: str, name: str, *, default: str | None, minimum_s: float = 0.0) -> float | None:
        where = f"{key}.{name}" if key else name
        raw = data.get(name, default)
        if raw is None:
            return None
        try:
            s = parse_duration(raw)
        except InputError as exc:
            self.bad(where, str(exc))
            return None
        if s <= minimum_s:
            self.bad(where, f"must be longer than {minimum_s:g} s, got {raw!r}")
            return None
        return s


def _kind_name(kinds: tuple[type, ...]) -> str:
    names = {str: "text", int: "an integer", float: "a number", bool: "true or false", list: "a list", dict: "a table"}
    return " or ".join(names.get(k, k.__name__) for k in kinds)


def _closest(word: str, options: set[str]) -> str | None:
    import difflib

    m = difflib.get_close_matches(word, sorted(options), n=1, cutoff=0.75)
    return m[0] if m else None


def _plain_date(v: _dt.date) -> str | None:
    return f"must be a date like 2027-01-31, without a time; got {v!r}" if isinstance(v, _dt.datetime) else None


def _positive(v: float) -> str | None:
    return None if v > 0 else f"must be positive, got {v!r}"


def _non_negative(v: float) -> str | None:
    return None if v >= 0 else f"must not be negative, got {v!r}"


_TOP_KEYS = {"station", "run", "instrument", "sensor", "channel", "alarm", "profile"}
_STATION_KEYS = {"name", "database", "commit_interval", "ambient_c"}
_RUN_KEYS = {"name", "planned_duration"}
_INSTRUMENT_KEYS = {
    "name", "driver", "resource", "backend", "port", "baudrate", "interval", "timeout", "wiring",
    "range_ohm", "nplc", "offset_compensation", "test_current_a", "accuracy", "profile", "commands",
    "reference_ohm", "bits", "reference_tolerance_pct", "excitation_ma",
}
_SENSOR_KEYS = {
    "name", "type", "r0_ohm", "curve", "coefficients", "class", "element", "dissipation_mw_per_k",
    "calibration", "description",
}
_CAL_KEYS = {"certificate", "date", "due", "expanded_uncertainty_c", "k", "span_c", "r0_ohm", "coefficients"}
_CHANNEL_KEYS = {
    "name", "label", "instrument", "input", "sensor", "wiring", "lead", "imbalance_ohm", "excitation_ma",
    "position", "range_ohm",
}
_LEAD_KEYS = {"ohms", "awg", "mm2", "inside_m", "outside_m", "tolerance", "imbalance_fraction"}
_ALARM_KEYS_COMMON = {"name", "kind", "channel", "channels", "severity"}
_DRIVERS = {"scpi", "serial-adc"}


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
    profile = ck.table(data.get("profile", {}), "profile")

    if not channels and not ck.problems:
        ck.bad("channel", "no channels: add at least one [[channel]]")
    _metrology_warnings(ck, instruments, sensors, channels)
    if ck.problems:
        raise ConfigProblems(path, ck.problems)
    return StationConfig(
        path=path, text=text, station=station, run_name=run_name, database=database,
        commit_interval_s=commit_s, ambient_c=ambient, planned_duration_s=planned,
        instruments=tuple(instruments), sensors=tuple(sensors), channels=tuple(channels),
        alarms=tuple(alarms), profile=dict(profile), warnings=tuple(ck.warnings),
    )


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


def _instruments(ck: _Checker, raw: Any, ) -> list[InstrumentConfig]:
    out: list[InstrumentConfig] = []
    seen: set[str] = set()
    for i, item in enumerate(_array(ck, raw, "instrument")):
        key = f"instrument[{i + 1}]"
        d = ck.table(item, key)
        ck.unknown(d, key, _INSTRUMENT_KEYS)
        name = ck.get(d, key, "name", str, required=True)
        _unique_name(ck, seen, name, key)
        driver = ck.get(d, key, "driver", str, required=True,
                        check=lambda v: None if v in _DRIVERS else f"must be one of {', '.join(sorted(_DRIVERS))}, got {v!r}")
        interval = ck.duration(d, key, "interval", default="2s")
        timeout = ck.duration(d, key, "timeout", default="5s")
        kw: dict[str, Any] = {}
        if driver == "scpi":
            res = ck.get(d, key, "resource", str, required=True)
            if res is not None and "::" not in res:
                ck.bad(f"{key}.resource", f"must be a VISA resource string like TCPIP0::192.0.2.5::5025::SOCKET, got {res!r}")
            kw["resource"] = res or ""
            kw["backend"] = ck.get(d, key, "backend", str, default="@py")
            kw["wiring"] = ck.get(d, key, "wiring", int, default=4,
                                  check=lambda v: None if v in (2, 4) else f"a meter measures 2- or 4-wire, got {v!r}")
            rng = d.get("range_ohm", 1000.0)
            if rng == "auto":
                kw["range_ohm"] = None
                ck.warnings.append(f"{key}: autorange changes the test current with the range; a fixed range is better for RTDs")
            else:
                kw["range_ohm"] = ck.get(d, key, "range_ohm", float, default=1000.0, check=_positive)
            kw["nplc"] = ck.get(d, key, "nplc", float, default=1.0,
                                check=lambda v: None if 0.001 <= v <= 1000 else f"must be within 0.001…1000, got {v!r}")
            kw["offset_compensation"] = ck.get(d, key, "offset_compensation", bool, default=True)
            tc = d.get("test_current_a")
            if tc is not None:
                t = ck.table(tc, f"{key}.test_current_a")
                currents: dict[float, float] = {}
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
                kw["test_current_a"] = {**DEFAULT_TEST_CURRENT_A, **currents}
            acc = d.get("accuracy")
            if acc is not None:
                a = ck.table(acc, f"{key}.accuracy")
                ck.unknown(a, f"{key}.accuracy", {"pct_reading", "pct_range"})
                kw["accuracy_pct_reading"] = ck.get(a, f"{key}.accuracy", "pct_reading", float, required=True, check=_non_negative)
                kw["accuracy_pct_range"] = ck.get(a, f"{key}.accuracy", "pct_range", float, default=0.0, check=_non_negative)
            kw["profile"] = ck.get(d, key, "profile", str, default="generic")
            cmds = d.get("commands", {})
            c = ck.table(cmds, f"{key}.commands")
            for ckey, cval in c.items():
                if not isinstance(cval, str):
                    ck.bad(f"{key}.commands.{ckey}", f"must be text (a SCPI command), got {cval!r}")
            kw["commands"] = {k: v for k, v in c.items() if isinstance(v, str)}
        elif driver == "serial-adc":
            kw["port"] = ck.get(d, key, "port", str, required=True) or ""
            kw["baudrate"] = ck.get(d, key, "baudrate", int, default=115200, check=lambda v: None if v > 0 else "must be positive")
            kw["wiring"] = ck.get(d, key, "wiring", int, default=3,
                                  check=lambda v: None if v in (2, 3, 4) else f"must be 2, 3 or 4, got {v!r}")
            kw["reference_ohm"] = ck.get(d, key, "reference_ohm", float, default=400.0, check=_positive)
            kw["bits"] = ck.get(d, key, "bits", int, default=24,
                                check=lambda v: None if 8 <= v <= 24 else f"must be 8…24 (the board's counts), got {v!r}")
            kw["reference_tolerance_pct"] = ck.get(d, key, "reference_tolerance_pct", float, default=0.0, check=_non_negative)
            ma = ck.get(d, key, "excitation_ma", float, default=0.25, check=_positive)
            kw["excitation_a"] = (ma or 0.25) / 1000.0
        if name is None or driver is None or interval is None or timeout is None:
            continue
        keep = {k: v for k, v in kw.items() if v is not None}
        if driver == "scpi" and "range_ohm" in kw:
            keep["range_ohm"] = kw["range_ohm"]  # None is autorange, not "not given"
        out.append(InstrumentConfig(name=name, driver=driver, interval_s=interval, timeout_s=timeout, **keep))
    return out


def _coefficients(ck: _Checker, value: Any, key: str) -> tuple[float, float, float] | None:
    if (
        not isinstance(value, list) or len(value) != 3
        or not all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in value)
    ):
        ck.bad(key, f"must be three numbers [A, B, C], got {value!r}")
        return None
    return float(value[0]), float(value[1]), float(value[2])


def _sensors(ck: _Checker, raw: Any, today: _dt.date) -> list[SensorConfig]:
    from soaklog.sensors.curves import named_curve

    out: list[SensorConfig] = []
    seen: set[str] = set()
    for i, item in enumerate(_array(ck, raw, "sensor")):
        key = f"sensor[{i + 1}]"
        d = ck.table(item, key)
        ck.unknown(d, key, _SENSOR_KEYS)
        name = ck.get(d, key, "name", str, required=True)
        _unique_name(ck, seen, name, key)
        stype = ck.get(d, key, "type", str, default="pt",
                       check=lambda v: None if v == "pt" else f"only platinum RTDs ('pt') are logged so far, got {v!r}")
        r0 = ck.get(d, key, "r0_ohm", float, default=100.0, check=_positive)
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
        diss = ck.get(d, key, "dissipation_mw_per_k", float, check=_positive)
        cal = None
        if "calibration" in d:
            ckey = f"{key}.calibration"
            c = ck.table(d["calibration"], ckey)
            ck.unknown(c, ckey, _CAL_KEYS)
            cert = ck.get(c, ckey, "certificate", str, required=True) or ""
            u = ck.get(c, ckey, "expanded_uncertainty_c", float, required=True, check=_non_negative)
            k = ck.get(c, ckey, "k", float, default=2.0, check=_positive)
            span = c.get("span_c", [-200.0, 850.0])
            if (not isinstance(span, list) or len(span) != 2
                    or not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in span)
                    or not span[0] < span[1]):
                ck.bad(f"{ckey}.span_c", f"must be [low, high] in °C with low < high, got {span!r}")
                span = [-200.0, 850.0]
            date = ck.get(c, ckey, "date", _dt.date, check=_plain_date)
            due = ck.get(c, ckey, "due", _dt.date, check=_plain_date)
            if due is not None and due < today:
                ck.warnings.append(f"{ckey}.due: calibration of {name} was due {due.isoformat()}; its uncertainty may no longer hold")
            if "coefficients" in c:
                co = _coefficients(ck, c["coefficients"], f"{ckey}.coefficients")
                if co is not None:
                    try:
                        curve = CvdCurve(a=co[0], b=co[1], c=co[2], name=f"calibration {cert}")
                    except ValueError as exc:
                        ck.bad(f"{ckey}.coefficients", str(exc))
                        curve = None
            if "r0_ohm" in c:
                r0 = ck.get(c, ckey, "r0_ohm", float, check=_positive) or r0
            if u is not None and k is not None:
                cal = CalibrationRecord(cert, u, k, (float(span[0]), float(span[1])), date, due)
        if name is None or stype is None or curve is None or r0 is None:
            continue
        out.append(SensorConfig(name, curve.with_r0(r0), tol, cal,
                                None if diss is None else diss / 1000.0, ck.get(d, key, "description", str, default="") or ""))
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
    for i, item in enumerate(_array(ck, raw, "channel")):
        key = f"channel[{i + 1}]"
        d = ck.table(item, key)
        ck.unknown(d, key, _CHANNEL_KEYS)
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
        elif icfg is not None and icfg.driver == "serial-adc" and not (inp.isdigit() and 0 <= int(inp) <= 63):
            ck.bad(f"{key}.input", f"a board input is a number 0…63, got {inp!r}")
        elif inst is not None and (inst, inp) in inputs:
            ck.bad(f"{key}.input", f"input {inp} of {inst} is used by another channel")
        if inst is not None and inp is not None:
            inputs.add((inst, inp))
        sensor = ck.get(d, key, "sensor", str, required=True)
        if sensor is not None and sensor not in sensors and sensor not in declared_sensors:
            ck.bad(f"{key}.sensor", f"no sensor named {sensor!r}; known: {', '.join(sensors) or 'none'}")
        default_wiring = icfg.wiring if icfg is not None else 4
        wiring = ck.get(d, key, "wiring", int, default=default_wiring,
                        check=lambda v: None if v in (2, 3, 4) else f"must be 2, 3 or 4, got {v!r}")
        if icfg is not None and wiring is not None and icfg.driver == "scpi" and wiring not in (2, 4):
            ck.bad(f"{key}.wiring", f"a multimeter measures 2- or 4-wire, not {wiring}-wire")
        leads = _leads(ck, d, key, wiring)
        ma = ck.get(d, key, "excitation_ma", float, check=_positive)
        ch_range = ck.get(d, key, "range_ohm", float, check=_positive)
        if ch_range is not None and icfg is not None and icfg.driver != "scpi":
            ck.bad(f"{key}.range_ohm", f"a range applies to a multimeter channel; {inst} is a {icfg.driver} board")
        if name is None or inst is None or inp is None or sensor is None or leads is None \
                or inst not in instruments or sensor not in sensors:
            continue
        out.append(ChannelConfig(
            name=name, label=ck.get(d, key, "label", str, default=name) or name, instrument=inst, input=inp,
            sensor=sensor, leads=leads, excitation_a=None if ma is None else ma / 1000.0,
            position=ck.get(d, key, "position", str, default="") or "", range_ohm=ch_range,
        ))
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
        if "ohms" in t and any(k in t for k in ("awg", "mm2", "inside_m", "outside_m")):
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
            )
        return Leads(wiring, conductor, imbalance_ohm=imb or 0.0, **{k: v for k, v in kw.items() if v is not None})  # type: ignore[arg-type]
    except InputError as exc:
        ck.bad(lk, str(exc))
        return None


_ALARM_KINDS = {"high", "high_high", "low", "low_low", "rate", "deviation", "spread", "sensor_fault", "stale", "instrument_lost"}
_SEVERITIES = {"low", "medium", "high", "critical"}
#: every status a stored reading can have (the store's list; a test keeps them equal)
_READING_STATUSES = {
    "ok", "open", "short", "overload", "out_of_range", "timeout", "lost", "garbage", "checksum", "error", "invalid", "stale",
}
_ALARM_KEYS_ANY = {"actions", "on_delay", "off_delay", "latch", "shelvable", "in_service", "description"}
_ALARM_KEYS_KIND: dict[str, set[str]] = {
    "high": {"limit_c", "deadband_k"},
    "high_high": {"limit_c", "deadband_k"},
    "low": {"limit_c", "deadband_k"},
    "low_low": {"limit_c", "deadband_k"},
    "rate": {"limit_k_per_min", "deadband_k_per_min", "window", "direction"},
    "deviation": {"limit_k", "deadband_k", "setpoint_c", "reference", "max_age"},
    "spread": {"limit_k", "deadband_k", "max_age"},
    "sensor_fault": {"statuses"},
    "stale": {"stale_after"},
    "instrument_lost": {"instrument", "instruments"},
}
_ACTION_KINDS = {"log", "program", "scpi", "serial_line"}
_ACTION_TRIGGERS = {"raised", "cleared", "acknowledged"}
_ACTION_KEYS: dict[str, set[str]] = {
    "log": {"message"},
    "program": {"argv", "timeout"},
    "scpi": {"resource", "commands", "backend", "timeout", "check_errors", "verify"},
    "serial_line": {"port", "line", "state", "baudrate"},
}
_ACTION_KEYS_ANY = {"kind", "on", "name"}
#: the longest an action may run (a hung program is killed at its limit)
MAX_ACTION_TIMEOUT_S = 600.0


def _delay(ck: _Checker, d: Mapping[str, Any], key: str, name: str, default_s: float) -> float:
    """A duration that may be zero (a delay), in seconds."""
    if name not in d:
        return default_s
    try:
        s = parse_duration(d[name])
    except InputError as exc:
        ck.bad(f"{key}.{name}", str(exc))
        return default_s
    return s


def _alarms(
    ck: _Checker, raw: Any, channel_names: set[str], instruments: Sequence[InstrumentConfig] = (),
    channels: Sequence[ChannelConfig] = (),
) -> list[AlarmConfig]:
    from soaklog.alarms import (
        DEFAULT_MAX_AGE_S,
        DEFAULT_RATE_WINDOW_S,
        DEFAULT_STALE_AFTER_S,
        FAULT_STATUSES,
        KIND_DEFAULTS,
    )

    out: list[AlarmConfig] = []
    seen: set[str] = set()
    inst_by_name = {i.name: i for i in instruments}
    inst_of_channel = {c.name: c.instrument for c in channels}
    for i, item in enumerate(_array(ck, raw, "alarm")):
        key = f"alarm[{i + 1}]"
        d = ck.table(item, key)
        name = ck.get(d, key, "name", str, required=True)
        _unique_name(ck, seen, name, key)
        kind = ck.get(d, key, "kind", str, required=True,
                      check=lambda v: None if v in _ALARM_KINDS else f"must be one of {', '.join(sorted(_ALARM_KINDS))}, got {v!r}")
        kd = KIND_DEFAULTS.get(kind or "")
        sev = ck.get(d, key, "severity", str, default=kd.severity if kd else "high",
                     check=lambda v: None if v in _SEVERITIES else f"must be one of {', '.join(sorted(_SEVERITIES))}, got {v!r}")
        chans: list[str] = []
        if "channel" in d:
            c = ck.get(d, key, "channel", str)
            chans = [c] if c else []
        if "channels" in d:
            cs = d["channels"]
            if not isinstance(cs, list) or not all(isinstance(x, str) for x in cs):
                ck.bad(f"{key}.channels", f"must be a list of channel names, got {cs!r}")
            else:
                chans += cs
        for c in chans:
            if c not in channel_names and c != "*":
                ck.bad(f"{key}.channels", f"no channel named {c!r}")
        if kd is None or kind is None:
            # an unknown kind: which other keys belong to it cannot be told
            continue
        ck.unknown(d, key, _ALARM_KEYS_COMMON | _ALARM_KEYS_ANY | _ALARM_KEYS_KIND[kind])
        p: dict[str, Any] = {}
        p["on_delay_s"] = _delay(ck, d, key, "on_delay", kd.on_delay_s)
        p["off_delay_s"] = _delay(ck, d, key, "off_delay", kd.off_delay_s)
        for flag, default in (("latch", kd.latch), ("shelvable", kd.shelvable), ("in_service", True)):
            v = ck.get(d, key, flag, bool, default=default)
            p[flag] = default if v is None else v
        if "description" in d:
            p["description"] = ck.get(d, key, "description", str, default="") or ""
        all_chans = sorted(channel_names) if "*" in chans else chans
        if kind == "instrument_lost":
            if chans:
                ck.bad(f"{key}.channels", "an instrument_lost alarm watches instruments: give instrument or instruments")
            names: list[str] = []
            if "instrument" in d:
                v = ck.get(d, key, "instrument", str)
                names += [v] if v else []
            if "instruments" in d:
                vs = d["instruments"]
                if not isinstance(vs, list) or not all(isinstance(x, str) for x in vs):
                    ck.bad(f"{key}.instruments", f"must be a list of instrument names, got {vs!r}")
                else:
                    names += vs
            for n in names:
                if n not in inst_by_name:
                    ck.bad(f"{key}.instruments", f"no instrument named {n!r}; known: {', '.join(inst_by_name) or 'none'}")
            p["instruments"] = tuple(dict.fromkeys(names))
        elif not chans:
            ck.bad(f"{key}.channels", 'is required: the channels it watches (channels = ["*"] for all)')
        if kd.limit_key is not None:
            positive = kind in ("rate", "deviation", "spread")
            limit = ck.get(d, key, kd.limit_key, float, required=True, check=_positive if positive else None)
            db_key = "deadband_k_per_min" if kind == "rate" else "deadband_k"
            default_db = kd.deadband * abs(limit) if kind == "rate" and limit is not None else kd.deadband
            db = ck.get(d, key, db_key, float, default=default_db, check=_non_negative)
            if limit is not None:
                p[kd.limit_key] = limit
            if db is not None:
                if positive and limit is not None and db >= limit:
                    ck.bad(f"{key}.{db_key}", f"must be smaller than the limit ({limit:g}), got {db:g}")
                p[db_key] = db
        if kind == "rate":
            p["window_s"] = ck.duration(d, key, "window", default=None) or DEFAULT_RATE_WINDOW_S
            direction = ck.get(d, key, "direction", str, default="both",
                               check=lambda v: None if v in ("rise", "fall", "both") else f"must be rise, fall or both, got {v!r}")
            p["direction"] = direction or "both"
        if kind in ("deviation", "spread"):
            p["max_age_s"] = ck.duration(d, key, "max_age", default=None) or DEFAULT_MAX_AGE_S
        if kind == "deviation":
            has_sp, has_ref = "setpoint_c" in d, "reference" in d
            if has_sp == has_ref:
                ck.bad(key, "a deviation alarm needs setpoint_c (a fixed set point) or reference (a channel), one of them")
            elif has_sp:
                sp = ck.get(d, key, "setpoint_c", float)
                if sp is not None:
                    p["setpoint_c"] = sp
            else:
                ref = ck.get(d, key, "reference", str)
                if ref is not None and ref not in channel_names:
                    ck.bad(f"{key}.reference", f"no channel named {ref!r}")
                elif ref is not None and ref in all_chans:
                    ck.bad(f"{key}.reference", f"{ref!r} is one of the channels it watches; compare with another channel")
                elif ref is not None:
                    p["reference"] = ref
        if kind == "spread" and chans and len(set(all_chans)) < 2:
            ck.bad(f"{key}.channels", f"a spread needs two channels or more, got {all_chans!r}")
        if kind == "sensor_fault":
            sts = d.get("statuses", sorted(FAULT_STATUSES))
            if not isinstance(sts, list) or not sts or not all(isinstance(x, str) for x in sts):
                ck.bad(f"{key}.statuses", f"must be a list of reading statuses, got {sts!r}")
            else:
                bad = [x for x in sts if x not in _READING_STATUSES or x == "ok"]
                if bad:
                    ck.bad(f"{key}.statuses", f"unknown status {bad[0]!r}; known: "
                           f"{', '.join(sorted(_READING_STATUSES - {'ok'}))}")
                else:
                    p["statuses"] = tuple(sts)
        if kind == "stale":
            slowest = max((inst_by_name[inst_of_channel[c]].interval_s for c in all_chans
                           if c in inst_of_channel and inst_of_channel[c] in inst_by_name), default=0.0)
            # three missed scans at least, so one late scan never raises it (common practice, no published source)
            default_s = max(DEFAULT_STALE_AFTER_S, 3.0 * slowest)
            after = ck.duration(d, key, "stale_after", default=None)
            if after is not None and after <= slowest:
                ck.bad(f"{key}.stale_after", f"must be longer than the slowest scan interval of its channels ({slowest:g} s), got {after:g} s")
            p["stale_after_s"] = after if after is not None else default_s
        actions = _actions(ck, d.get("actions", []), f"{key}.actions") if "actions" in d else []
        if name is None or sev is None:
            continue
        out.append(AlarmConfig(name, kind, tuple(chans), sev, p, tuple(actions)))
    return out


def _actions(ck: _Checker, raw: Any, key: str) -> list[ActionConfig]:
    out: list[ActionConfig] = []
    if not isinstance(raw, list):
        ck.bad(key, f"must be a list of tables ([[alarm.actions]] or [{{ kind = \"log\" }}]), got {type(raw).__name__}")
        return out
    for j, item in enumerate(raw):
        k = f"{key}[{j + 1}]"
        d = ck.table(item, k)
        kind = ck.get(d, k, "kind", str, required=True,
                      check=lambda v: None if v in _ACTION_KINDS else f"must be one of {', '.join(sorted(_ACTION_KINDS))}, got {v!r}")
        if kind is None:
            continue
        ck.unknown(d, k, _ACTION_KEYS_ANY | _ACTION_KEYS[kind])
        on = d.get("on", ["raised"])
        if isinstance(on, str):
            on = [on]
        if not isinstance(on, list) or not on or not all(isinstance(x, str) and x in _ACTION_TRIGGERS for x in on):
            ck.bad(f"{k}.on", f"must be one or more of {', '.join(sorted(_ACTION_TRIGGERS))}, got {d.get('on')!r}")
            on = ["raised"]
        p: dict[str, Any] = {}
        label = ck.get(d, k, "name", str, default="") or ""
        ok = True
        if kind == "log":
            p["message"] = ck.get(d, k, "message", str, default="") or ""
        elif kind == "program":
            argv = d.get("argv")
            if (not isinstance(argv, list) or not argv or not all(isinstance(a, str) for a in argv)
                    or not argv[0].strip()):
                ck.bad(f"{k}.argv", f"must be the program and its arguments as a list of text, "
                       f"run without a shell: [\"/usr/local/bin/page-lab\", \"--urgent\"]; got {argv!r}")
                ok = False
            else:
                p["argv"] = tuple(argv)
            p["timeout_s"] = _action_timeout(ck, d, k, "10s")
        elif kind == "scpi":
            res = ck.get(d, k, "resource", str, required=True)
            cmds = d.get("commands")
            if not isinstance(cmds, list) or not cmds or not all(isinstance(c, str) and c.strip() for c in cmds) \
                    or any("\n" in c for c in cmds):
                ck.bad(f"{k}.commands", f"must be a list of SCPI commands, one line each: [\"OUTP OFF\"]; got {cmds!r}")
                ok = False
            else:
                p["commands"] = tuple(c.strip() for c in cmds)
            if res is None:
                ok = False
            else:
                p["resource"] = res
            p["backend"] = ck.get(d, k, "backend", str, default="@py") or "@py"
            p["timeout_s"] = _action_timeout(ck, d, k, "5s")
            ce = ck.get(d, k, "check_errors", bool, default=True)
            p["check_errors"] = True if ce is None else ce
            if "verify" in d:
                vk = f"{k}.verify"
                v = ck.table(d["verify"], vk)
                ck.unknown(v, vk, {"query", "reply"})
                q = ck.get(v, vk, "query", str, required=True, check=lambda x: None if x.strip().endswith("?") else f"must be a query (ending in '?'), got {x!r}")
                r = ck.get(v, vk, "reply", str, required=True)
                if q is not None and r is not None:
                    p["verify"] = (q.strip(), r.strip())
        elif kind == "serial_line":
            port = ck.get(d, k, "port", str, required=True)
            line = ck.get(d, k, "line", str, required=True,
                          check=lambda v: None if v.lower() in ("rts", "dtr") else f"must be rts or dtr, got {v!r}")
            state = ck.get(d, k, "state", bool, default=True)
            baud = ck.get(d, k, "baudrate", int, default=9600, check=_positive)
            if port is None or line is None:
                ok = False
            else:
                p.update(port=port, line=line.lower(), state=bool(state), baudrate=baud or 9600)
        if ok:
            out.append(ActionConfig(kind, tuple(dict.fromkeys(on)), p, label))
    return out


def _action_timeout(ck: _Checker, d: Mapping[str, Any], key: str, default: str) -> float:
    s = ck.duration(d, key, "timeout", default=default) or parse_duration(default)
    if s > MAX_ACTION_TIMEOUT_S:
        ck.bad(f"{key}.timeout", f"must be at most {MAX_ACTION_TIMEOUT_S:g} s, got {s:g} s")
    return s


def _metrology_warnings(
    ck: _Checker, instruments: list[InstrumentConfig], sensors: list[SensorConfig], channels: list[ChannelConfig]
) -> None:
    """What a metrologist would point out before a run (these never stop it)."""
    inst = {i.name: i for i in instruments}
    sens = {s.name: s for s in sensors}
    for c in channels:
        s, i = sens.get(c.sensor), inst.get(c.instrument)
        if s is None or i is None:
            continue
        if c.leads.wiring == 2 and s.tolerance is not None and s.tolerance.a_c <= 0.15:
            ck.warnings.append(
                f"channel {c.name}: 2-wire with a class {s.tolerance.name} sensor: the lead residual will swamp "
                "the sensor's tolerance; use 3- or 4-wire"
            )
        rng = c.range_ohm if c.range_ohm is not None else i.range_ohm
        current = c.excitation_a if c.excitation_a is not None else i.current_for_range(rng)
        if current is not None and s.dissipation_w_per_k is None and s.curve.r0_ohm >= 500 and current >= 0.5e-3:
            ck.warnings.append(
                f"channel {c.name}: a Pt{s.curve.r0_ohm:g} at {current * 1e3:g} mA self-heats visibly and no "
                "dissipation constant is given to correct it; give dissipation_mw_per_k or use a range with a lower test current"
            )
        elif current is not None and s.dissipation_w_per_k is not None:
            r_max = float(s.curve.resistance(s.curve.t_max_c))
            rise = current * current * float(s.curve.r0_ohm) / s.dissipation_w_per_k
            if rise > 0.1:
                ck.warnings.append(
                    f"channel {c.name}: self-heating about {rise:.2f} K at 0 °C with {current * 1e3:g} mA; "
                    "it is corrected, but its uncertainty grows with it"
                )
            del r_max
        if i.driver == "scpi" and rng is not None:
            r_hi = float(s.curve.resistance(min(s.curve.t_max_c, 850.0)))
            if r_hi > 1.2 * rng and s.curve.r0_ohm > 1.2 * rng / 4:
                ck.warnings.append(
                    f"channel {c.name}: the {rng:g} ohm range of {i.name} over-ranges above "
                    f"about {_t_at(s.curve, 1.2 * rng):.0f} °C for this sensor"
                )
        if s.tolerance is None and s.calibration is None:
            ck.warnings.append(f"sensor {s.name}: no class or calibration: its uncertainty leaves the sensor out")


def _t_at(curve: CvdCurve, r_ohm: float) -> float:
    t, _ = curve.temperature(r_ohm)
    return float(t) if math.isfinite(float(t)) else curve.t_max_c
