"""Raw readings to stored samples: each channel's configured chain, applied in batches (pure).

A driver's ``RawReading`` carries ohms and a status; the pipeline groups a
batch by channel, runs each channel's ``MeasurementChain`` on the whole group
at once (leads → Callendar–Van Dusen → self-heating → uncertainty), and gives
a columnar ``SampleBatch`` for the store. A reading the metrology cannot
honestly convert gets a status and no temperature.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np

from soaklog.config import ChannelConfig, StationConfig
from soaklog.sensors.flags import Flag
from soaklog.kinds.sensors.thermocouple import CJ_MAX_AGE_INTERVALS as COLD_JUNCTION_MAX_AGE_INTERVALS
from soaklog.sensors.measurement import Excitation, MeasurementChain
from soaklog.sensors.tc_chain import ThermocoupleChain
from soaklog.records import STATUS_CODES, SampleBatch
from soaklog.drivers.base import STATUS_INDEX, STATUSES, RawReading, RawScan

__all__ = ["ChannelPipeline", "Pipeline", "SHORT_FRACTION"]

#: a resistance below this fraction of R(t_min) is a shorted sensor rather than
#: a cold one (a shorted Pt100 reads its leads, well under 1 ohm; common
#: practice, no published source)
SHORT_FRACTION = 0.5

#: the status of a reading whose temperature a flag withholds (the first that applies wins)
_WITHHELD_STATUS = (
    (Flag.OVER_RANGE, "overload"),
    (Flag.NO_COLD_JUNCTION, "invalid"),
    (Flag.LEADS_EXCEED_SENSOR, "short"),
    (Flag.INVALID_INPUT, "invalid"),
    (Flag.OUT_OF_RANGE, "out_of_range"),
)


@dataclass(frozen=True)
class ChannelPipeline:
    """One channel's conversion: its chain and what bounds its raw values.

    A thermocouple's chain (``ThermocoupleChain``) takes volts and its cold
    junction's temperature: from another channel (``cold_junction_channel``,
    a reading at most ``cold_junction_max_age_ms`` away) or fixed.
    """

    channel: ChannelConfig
    store_id: int
    chain: MeasurementChain | ThermocoupleChain
    short_below_ohm: float
    open_on_overload: bool
    cold_junction_channel: str | None = None
    cold_junction_max_age_ms: int = 0

    @property
    def thermocouple(self) -> bool:
        return isinstance(self.chain, ThermocoupleChain)

    def with_current(self, current_a: float) -> MeasurementChain:
        exc = self.chain.excitation
        if exc is not None and exc.current_a is not None and math.isclose(exc.current_a, current_a, rel_tol=1e-9):
            return self.chain
        return replace(self.chain, excitation=Excitation(current_a=current_a))


_NO_READINGS = (np.empty(0, dtype=np.int64), np.empty(0), np.empty(0))


class Pipeline:
    """Converts raw readings of every channel of a station."""

    def __init__(self, config: StationConfig, store_ids: Mapping[str, int]) -> None:
        self.config = config
        self._by_input: dict[tuple[str, str], ChannelPipeline] = {}
        #: the newest readings of channels that are a thermocouple's cold junction: (t_ms, °C, U)
        self._cold: dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]] = {}
        by_name = {c.name: c for c in config.channels}
        for ch in config.channels:
            chain = config.chain(ch)
            inst = config.instrument(ch.instrument)
            if isinstance(chain, ThermocoupleChain):
                e_lo, e_hi = chain.thermocouple.emf_limits_mv()
                open_on_overload = inst.kind.open_on_overload(inst, ch, max(abs(e_lo), abs(e_hi)) / 1000.0)
                cj = chain.cold_junction
                cj_name = cj.channel if cj.source == "channel" else None
                age_s = ch.settings.get("cold_junction_max_age_s")
                if age_s is None and cj_name is not None:
                    age_s = max(5.0, COLD_JUNCTION_MAX_AGE_INTERVALS
                                * config.instrument(by_name[cj_name].instrument).interval_s)
                if cj_name is not None:
                    self._cold.setdefault(cj_name, _NO_READINGS)
                self._by_input[(ch.instrument, ch.input)] = ChannelPipeline(
                    ch, store_ids[ch.name], chain, -math.inf, open_on_overload, cj_name,
                    int(round(1000.0 * (age_s or 0.0))),
                )
                continue
            curve = chain.sensor.curve
            # the curve's ends bound its resistance (the low end is the hot one for an NTC)
            r_ends = (float(curve.resistance(curve.t_min_c)), float(curve.resistance(curve.t_max_c)))
            open_on_overload = inst.kind.open_on_overload(inst, ch, max(r_ends))
            self._by_input[(ch.instrument, ch.input)] = ChannelPipeline(
                ch, store_ids[ch.name], chain, SHORT_FRACTION * min(r_ends), open_on_overload,
            )

    def convert(self, instrument: str, scans: Sequence[Sequence[RawReading]]) -> SampleBatch:
        """Convert one instrument's scans (any number) to one sample batch.

        A scan is a ``RawScan`` (columnar, the fast path) or any sequence of
        ``RawReading``. Readings from inputs no channel uses are dropped (a
        scanner card may report more inputs than are wired).
        """
        cols = _Columns()
        for scan in scans:
            cols.add(scan)
        if not cols.n:
            return _empty()
        codes, t_ms, raw, status, current = cols.arrays()
        uniq = cols.names
        # group by input with integer codes (comparing strings per channel is slow)
        order = np.argsort(codes, kind="stable")
        bounds = np.searchsorted(codes[order], np.arange(len(uniq) + 1))
        parts: list[SampleBatch] = []
        ambient = self.config.ambient_c
        thermocouples: list[tuple[ChannelPipeline, np.ndarray]] = []
        for k, input_name in enumerate(uniq):
            cp = self._by_input.get((instrument, input_name))
            if cp is None:
                continue
            idx = order[bounds[k]:bounds[k + 1]]
            if cp.thermocouple:  # after the channels that may be their cold junctions
                thermocouples.append((cp, idx))
                continue
            part = _convert_group(cp, t_ms[idx], raw[idx], status[idx], current[idx], ambient)
            parts.append(part)
            if cp.channel.name in self._cold:
                self._remember(cp.channel.name, part)
        for cp, idx in thermocouples:
            cj_c, cj_u = self._cold_junction_at(cp, t_ms[idx])
            parts.append(_convert_thermocouple(cp, t_ms[idx], raw[idx], status[idx], cj_c, cj_u, ambient))
        if not parts:
            return _empty()
        return parts[0] if len(parts) == 1 else SampleBatch.concat(parts)


    def _remember(self, name: str, part: SampleBatch) -> None:
        """Keep a cold-junction channel's readings of this batch (and its newest before) for lookups."""
        good = np.isfinite(part.temp_c)
        t_prev, c_prev, u_prev = self._cold.get(name, _NO_READINGS)
        t_new, c_new, u_new = part.t_ms[good], part.temp_c[good], part.u_c[good]
        if t_new.size == 0:
            return
        order = np.argsort(t_new, kind="stable")
        self._cold[name] = (np.concatenate([t_prev[-1:], t_new[order]]), np.concatenate([c_prev[-1:], c_new[order]]),
                            np.concatenate([u_prev[-1:], u_new[order]]))

    def _cold_junction_at(self, cp: ChannelPipeline, t_ms: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The cold junction's temperature and U at each time: its nearest reading within the age limit, else NaN."""
        n = t_ms.shape[0]
        if cp.cold_junction_channel is None:
            return np.full(n, np.nan), np.full(n, np.nan)
        times, temps, us = self._cold.get(cp.cold_junction_channel, _NO_READINGS)
        if times.size == 0:
            return np.full(n, np.nan), np.full(n, np.nan)
        right = np.clip(np.searchsorted(times, t_ms, side="left"), 0, times.size - 1)
        left = np.clip(right - 1, 0, times.size - 1)
        pick = np.where(np.abs(times[left] - t_ms) <= np.abs(times[right] - t_ms), left, right)
        near = np.abs(times[pick] - t_ms) <= cp.cold_junction_max_age_ms
        return np.where(near, temps[pick], np.nan), np.where(near, us[pick], np.nan)


class _Columns:
    """Accumulates scans as column chunks; per-scan constants stay scalars until the end."""

    def __init__(self) -> None:
        self.n = 0
        self.names: list[str] = []  # input names, by code
        self._code: dict[str, int] = {}
        self._tuple_codes: dict[tuple[str, ...], np.ndarray] = {}
        self._names: list[np.ndarray] = []
        self._t: list[np.ndarray | tuple[int, int]] = []  # an array, or (value, count)
        self._raw: list[np.ndarray] = []
        self._status: list[np.ndarray] = []  # indexes into drivers.base.STATUSES
        self._current: list[np.ndarray | tuple[float, int]] = []

    def add(self, scan: Sequence[RawReading]) -> None:
        m = len(scan)
        if m == 0:
            return
        if isinstance(scan, RawScan):
            codes = self._tuple_codes.get(scan.channels)
            if codes is None:
                codes = np.array([self._code_for(c) for c in scan.channels], dtype=np.int64)
                self._tuple_codes[scan.channels] = codes
            self._names.append(codes)
            self._t.append((int(round(scan.t_utc_s * 1000.0)), m))
            self._raw.append(scan.values)
            self._status.append(scan.status)
            cur = scan.current_a
            if isinstance(cur, (list, tuple)):
                self._current.append(np.array([np.nan if c is None else c for c in cur], dtype=np.float64))
            else:
                self._current.append((np.nan if cur is None else float(cur), m))
        else:
            self._names.append(np.array([self._code_for(r.channel) for r in scan], dtype=np.int64))
            self._t.append(np.array([int(round(r.t_utc_s * 1000.0)) for r in scan], dtype=np.int64))
            self._raw.append(np.array([r.value for r in scan], dtype=np.float64))
            self._status.append(np.array([STATUS_INDEX[r.status] for r in scan], dtype=np.int8))
            self._current.append(
                np.array([np.nan if r.current_a is None else r.current_a for r in scan], dtype=np.float64)
            )
        self.n += m

    def _code_for(self, name: str) -> int:
        code = self._code.get(name)
        if code is None:
            code = self._code[name] = len(self.names)
            self.names.append(name)
        return code

    def arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        status = _DRIVER_TO_STORE[np.concatenate(self._status).astype(np.intp)]
        return (
            np.concatenate(self._names), _expand(self._t, np.int64), np.concatenate(self._raw),
            status, _expand(self._current, np.float64),
        )


def _expand(parts: Sequence[np.ndarray | tuple[float, int]], dtype: type) -> np.ndarray:
    """Concatenate arrays and (value, count) runs, the runs by one ``np.repeat`` each stretch."""
    out: list[np.ndarray] = []
    values: list[float] = []
    counts: list[int] = []
    for part in parts:
        if isinstance(part, tuple):
            values.append(part[0])
            counts.append(part[1])
            continue
        if values:
            out.append(np.repeat(np.asarray(values, dtype=dtype), counts))
            values, counts = [], []
        out.append(part)
    if values:
        out.append(np.repeat(np.asarray(values, dtype=dtype), counts))
    return np.concatenate(out)


#: driver status index (drivers.base.STATUSES) to stored status code
_DRIVER_TO_STORE = np.array(
    [STATUS_CODES.get(name, STATUS_CODES["error"]) for name in STATUSES], dtype=np.int64
)


def _empty() -> SampleBatch:
    z = np.empty(0)
    return SampleBatch(z.astype(np.int64), z.astype(np.int64), z, z, z, z.astype(np.int64), z.astype(np.int64))


def _convert_group(
    cp: ChannelPipeline,
    t_ms: np.ndarray,
    raw: np.ndarray,
    status: np.ndarray,
    current: np.ndarray,
    ambient_c: float,
) -> SampleBatch:
    n = raw.shape[0]
    status = status.copy()
    ok = status == STATUS_CODES["ok"]
    if cp.open_on_overload:
        # the range holds the sensor's whole curve, so an overload can only be an open sensor
        status[status == STATUS_CODES["overload"]] = STATUS_CODES["open"]
    temp = np.full(n, np.nan)
    u = np.full(n, np.nan)
    flags = np.zeros(n, dtype=np.int64)
    short = ok & (raw < cp.short_below_ohm)
    status[short] = STATUS_CODES["short"]
    conv = ok & ~short
    if conv.any():
        cur = current[conv]
        known = cur[np.isfinite(cur)]
        distinct = np.unique(known) if known.size else known
        if distinct.size <= 1 and known.size in (0, cur.size):
            chain = cp.with_current(float(distinct[0])) if distinct.size else cp.chain
            _apply(chain, raw, conv, temp, u, flags, status, ambient_c)
        else:  # an autoranging meter: the current changed within the batch
            for c in distinct.tolist():
                _apply(cp.with_current(c), raw, conv & (current == c), temp, u, flags, status, ambient_c)
            rest = conv & ~np.isfinite(current)
            if rest.any():
                _apply(cp.chain, raw, rest, temp, u, flags, status, ambient_c)
    return SampleBatch(np.full(n, cp.store_id, dtype=np.int64), t_ms, raw, temp, u, status, flags)


def _convert_thermocouple(
    cp: ChannelPipeline,
    t_ms: np.ndarray,
    raw_v: np.ndarray,
    status: np.ndarray,
    cj_c: np.ndarray,
    cj_u: np.ndarray,
    ambient_c: float,
) -> SampleBatch:
    n = raw_v.shape[0]
    status = status.copy()
    if cp.open_on_overload:
        # the range holds the type's whole emf: an overload is the meter's open-thermocouple (burnout) check
        status[status == STATUS_CODES["overload"]] = STATUS_CODES["open"]
    temp = np.full(n, np.nan)
    u = np.full(n, np.nan)
    flags = np.zeros(n, dtype=np.int64)
    idx = np.flatnonzero(status == STATUS_CODES["ok"])
    if idx.size:
        chain = cp.chain
        assert isinstance(chain, ThermocoupleChain)
        conv = chain.convert(raw_v[idx], cold_junction_c=cj_c[idx], cold_junction_u_c=cj_u[idx], ambient_c=ambient_c)
        temp[idx] = conv.temperature_c
        u[idx] = conv.expanded_uncertainty_c
        f = conv.flags.astype(np.int64)
        flags[idx] = f
        _withheld_status(status, idx, f, np.isnan(conv.temperature_c))
    return SampleBatch(np.full(n, cp.store_id, dtype=np.int64), t_ms, raw_v, temp, u, status, flags)


def _withheld_status(status: np.ndarray, idx: np.ndarray, f: np.ndarray, withheld: np.ndarray) -> None:
    """The status of each reading whose temperature a flag withholds."""
    if withheld.any():
        st = np.full(idx.shape[0], STATUS_CODES["out_of_range"], dtype=np.int64)
        for flag, name in reversed(_WITHHELD_STATUS):
            st[(f & int(flag)) != 0] = STATUS_CODES[name]
        status[idx[withheld]] = st[withheld]


def _apply(
    chain: MeasurementChain,
    raw: np.ndarray,
    mask: np.ndarray,
    temp: np.ndarray,
    u: np.ndarray,
    flags: np.ndarray,
    status: np.ndarray,
    ambient_c: float,
) -> None:
    idx = np.flatnonzero(mask)
    conv = chain.convert(raw[idx], ambient_c=ambient_c)
    t = conv.temperature_c
    temp[idx] = t
    u[idx] = conv.expanded_uncertainty_c
    f = conv.flags.astype(np.int64)
    flags[idx] = f
    _withheld_status(status, idx, f, np.isnan(t))
