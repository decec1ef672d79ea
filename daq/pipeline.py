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

from daq.config import ChannelConfig, StationConfig
from daq.sensors.flags import Flag
from daq.sensors.measurement import Excitation, MeasurementChain
from daq.store import STATUS_CODES, SampleBatch
from drivers.base import RawReading

__all__ = ["ChannelPipeline", "Pipeline", "SHORT_FRACTION"]

#: a resistance below this fraction of R(t_min) is a shorted sensor rather than
#: a cold one (a shorted Pt100 reads its leads, well under 1 ohm; common
#: practice, no published source)
SHORT_FRACTION = 0.5

_WITHHELD_STATUS = (
    (Flag.LEADS_EXCEED_SENSOR, "short"),
    (Flag.INVALID_INPUT, "invalid"),
    (Flag.OUT_OF_RANGE, "out_of_range"),
)


@dataclass(frozen=True)
class ChannelPipeline:
    """One channel's conversion: its chain and what bounds its raw values."""

    channel: ChannelConfig
    store_id: int
    chain: MeasurementChain
    short_below_ohm: float
    open_on_overload: bool

    def with_current(self, current_a: float) -> MeasurementChain:
        exc = self.chain.excitation
        if exc is not None and exc.current_a is not None and math.isclose(exc.current_a, current_a, rel_tol=1e-9):
            return self.chain
        return replace(self.chain, excitation=Excitation(current_a=current_a))


class Pipeline:
    """Converts raw readings of every channel of a station."""

    def __init__(self, config: StationConfig, store_ids: Mapping[str, int]) -> None:
        self.config = config
        self._by_input: dict[tuple[str, str], ChannelPipeline] = {}
        for ch in config.channels:
            chain = config.chain(ch)
            curve = chain.sensor.curve
            inst = config.instrument(ch.instrument)
            r_max = float(curve.resistance(curve.t_max_c))
            rng = ch.range_ohm if ch.range_ohm is not None else inst.range_ohm
            open_on_overload = inst.driver == "serial-adc" or (rng is not None and 1.2 * rng >= r_max)
            self._by_input[(ch.instrument, ch.input)] = ChannelPipeline(
                ch, store_ids[ch.name], chain,
                SHORT_FRACTION * float(curve.resistance(curve.t_min_c)),
                open_on_overload,
            )

    def channel_for(self, instrument: str, input_name: str) -> ChannelPipeline | None:
        return self._by_input.get((instrument, input_name))

    def convert(self, instrument: str, readings: Sequence[RawReading]) -> SampleBatch:
        """Convert one instrument's readings (any number of scans) to a sample batch.

        Readings from inputs no channel uses are dropped (a scanner card may
        report more inputs than are wired).
        """
        groups: dict[str, list[RawReading]] = {}
        for r in readings:
            groups.setdefault(r.channel, []).append(r)
        parts: list[SampleBatch] = []
        ambient = self.config.ambient_c
        for input_name, rs in groups.items():
            cp = self._by_input.get((instrument, input_name))
            if cp is None:
                continue
            parts.append(_convert_group(cp, rs, ambient))
        if not parts:
            return _empty()
        return parts[0] if len(parts) == 1 else SampleBatch.concat(parts)


def _empty() -> SampleBatch:
    z = np.empty(0)
    return SampleBatch(z.astype(np.int64), z.astype(np.int64), z, z, z, z.astype(np.int64), z.astype(np.int64))


def _convert_group(cp: ChannelPipeline, rs: Sequence[RawReading], ambient_c: float) -> SampleBatch:
    n = len(rs)
    raw = np.fromiter((r.value for r in rs), dtype=np.float64, count=n)
    t_ms = np.fromiter((int(round(r.t_utc_s * 1000.0)) for r in rs), dtype=np.int64, count=n)
    ok = np.fromiter((r.status == "ok" for r in rs), dtype=bool, count=n)
    status = np.fromiter((STATUS_CODES.get(r.status, STATUS_CODES["error"]) for r in rs), dtype=np.int64, count=n)
    if cp.open_on_overload:
        # the range holds the sensor's whole curve, so an overload can only be an open sensor
        status[status == STATUS_CODES["overload"]] = STATUS_CODES["open"]
    temp = np.full(n, np.nan)
    u = np.full(n, np.nan)
    flags = np.zeros(n, dtype=np.int64)

    short = ok & (raw < cp.short_below_ohm)
    status[short] = STATUS_CODES["short"]
    conv_mask = ok & ~short
    if conv_mask.any():
        currents = {r.current_a for r, m in zip(rs, conv_mask, strict=True) if m and r.current_a is not None}
        if len(currents) <= 1:
            chain = cp.with_current(currents.pop()) if currents else cp.chain
            _apply(chain, raw, conv_mask, temp, u, flags, status, ambient_c)
        else:  # autoranging meter: the current changed within the batch
            for current in sorted(currents):
                mask = conv_mask & np.fromiter((r.current_a == current for r in rs), dtype=bool, count=n)
                _apply(cp.with_current(current), raw, mask, temp, u, flags, status, ambient_c)
            rest = conv_mask & np.fromiter((r.current_a is None for r in rs), dtype=bool, count=n)
            if rest.any():
                _apply(cp.chain, raw, rest, temp, u, flags, status, ambient_c)
    raw_out = np.where(ok | np.isfinite(raw), raw, np.nan)
    return SampleBatch(np.full(n, cp.store_id, dtype=np.int64), t_ms, raw_out, temp, u, status, flags)


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
    withheld = np.isnan(t)
    if withheld.any():
        st = np.full(idx.shape[0], STATUS_CODES["out_of_range"], dtype=np.int64)
        for flag, name in reversed(_WITHHELD_STATUS):
            st[(f & int(flag)) != 0] = STATUS_CODES[name]
        status[idx[withheld]] = st[withheld]
