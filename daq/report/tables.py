"""The report's tables: configuration in force, channels, gaps, conformance, chamber performance, alarms.

Each function returns rows as dictionaries keyed by the columns in
``TABLE_COLUMNS``; the JSON summary, the CSV files and the HTML page are all
made from these same rows.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from soaklog.report.alarmlog import ALARM_KINDS, AlarmRates, Episode
from soaklog.report.channels import channel_gaps, completeness, merge_gaps, time_beyond
from soaklog.report.conformance import Conformance, Deviation, deviation_summary
from soaklog.report.data import RunData, refine_end, refine_start
from soaklog.report.performance import (
    Performance,
    chamber_performance,
    stable_mask,
    stable_period,
)
from soaklog.profile import Profile
from soaklog.kinds.profiles.cycle import CycleProfile
from soaklog.kinds.profiles.soak import SoakProfile
from soaklog.store import StoreReader, iso_utc

__all__ = [
    "GAP_CAUSES",
    "MAX_REFINED",
    "TABLE_COLUMNS",
    "alarm_tables",
    "channel_rows",
    "config_tables",
    "conformance_tables",
    "gap_rows",
    "minutes",
    "num",
    "performance_periods",
    "performance_summary",
    "performance_tables",
    "rates_summary",
    "refine_deviations",
    "u_at_test",
    "utc",
]

#: deviations whose start and end are looked up again in the raw readings
MAX_REFINED = 300
#: event kinds that explain a gap in the data
GAP_CAUSES = frozenset({
    "gap", "service_start", "service_stop", "instrument_lost", "instrument_recovered", "data_dropped",
    "storage_recovered", "storage_failed",
})

TABLE_COLUMNS: dict[str, tuple[str, ...]] = {
    "channels": (
        "channel", "label", "instrument", "sample", "readings", "valid_readings", "completeness_pct",
        "min_c", "max_c", "mean_c", "std_k", "std_from", "high_limit_c", "above_at_least_min",
        "above_at_most_min", "low_limit_c", "below_at_least_min", "below_at_most_min",
        "max_uncertainty_k", "median_uncertainty_k", "uncertainty_at_test_k",
    ),
    "sensors": (
        "sensor", "r0_ohm", "curve", "a", "b", "c", "class", "element", "dissipation_mw_per_k",
        "certificate", "cal_uncertainty_k", "cal_k", "cal_span_c", "cal_date", "cal_due",
    ),
    "wiring": ("channel", "label", "instrument", "input", "sensor", "wiring", "leads", "position"),
    "instruments": ("instrument", "driver", "address", "interval_s", "range_ohm", "accuracy", "identity"),
    "alarm_rules": ("rule", "kind", "channels", "severity", "limit_c", "settings"),
    "gaps": ("start_utc", "end_utc", "duration_s", "channels", "cause"),
    "cycles": (
        "cycle", "start_utc", "end_utc", "ramp_up_k_per_min", "dwell_high_min", "ramp_down_k_per_min",
        "dwell_low_min", "complete", "deviations",
    ),
    "dwells": (
        "cycle", "level", "band", "window_start_utc", "entry_utc", "exit_utc", "in_tolerance_min",
        "required_min", "finished", "met", "least_channel", "least_min",
    ),
    "dwell_channels": ("cycle", "level", "channel", "in_tolerance_min", "min_c", "max_c"),
    "ramps": (
        "cycle", "direction", "from_start", "from_c", "to_c", "start_utc", "end_utc", "rate_k_per_min",
        "slowest_channel", "slowest_k_per_min", "fastest_channel", "fastest_k_per_min",
        "max_window_rate_k_per_min", "transition_min",
    ),
    "deviations": (
        "no", "kind", "start_utc", "end_utc", "duration_s", "channel", "cycle", "phase", "value", "limit",
        "unit", "resolution_s", "message",
    ),
    "performance": (
        "period", "setpoint_c", "stable_from_utc", "stable_to_utc", "confirmed_utc", "stable_min",
        "chamber_deviation_k", "worst_deviation_k", "worst_channel", "max_fluctuation_k",
        "spatial_variation_k", "max_spread_k", "condition_uncertainty_k",
    ),
    "performance_points": (
        "period", "channel", "mean_c", "min_c", "max_c", "deviation_k", "fluctuation_k", "drift_k_per_min",
    ),
    "alarms": (
        "rule", "channel", "severity", "raised_utc", "cleared_utc", "duration_s", "acknowledged_utc",
        "ack_delay_s", "acknowledged_by", "actions", "message",
    ),
    "events": ("t_utc", "kind", "channel", "severity", "message"),
}


# ---------------------------------------------------------------- small helpers


def utc(t_s: float | None) -> str | None:
    return None if t_s is None or not math.isfinite(t_s) else iso_utc(round(t_s * 1000))


def num(x: float | None, digits: int = 4) -> float | None:
    if x is None:
        return None
    x = float(x)
    return None if not math.isfinite(x) else round(x, digits)


def minutes(s: float | None) -> float | None:
    return None if s is None else num(s / 60.0, 3)


# ---------------------------------------------------------------- configuration tables


def config_tables(run: RunData, profile: Profile | None) -> dict[str, list[dict[str, Any]]]:
    cfg = run.config
    t = run.config_table
    sensors: list[dict[str, Any]] = []
    wiring: list[dict[str, Any]] = []
    instruments: list[dict[str, Any]] = []
    rules: list[dict[str, Any]] = []
    identity = {i.name: i.identity for i in run.instruments}
    if cfg is not None:
        for s in cfg.sensors:
            cal = s.calibration
            sensors.append({
                "sensor": s.name, "r0_ohm": s.curve.r0_ohm, "curve": s.curve.name,
                # A, B, C are a platinum curve's; other kinds' curves say what they are in "curve"
                "a": getattr(s.curve, "a", None), "b": getattr(s.curve, "b", None), "c": getattr(s.curve, "c", None),
                "class": None if s.tolerance is None else s.tolerance.name,
                "element": getattr(s.tolerance, "element", None) or None,
                "dissipation_mw_per_k": None if s.dissipation_w_per_k is None else num(s.dissipation_w_per_k * 1e3),
                "certificate": None if cal is None else cal.certificate,
                "cal_uncertainty_k": None if cal is None else cal.expanded_uncertainty_c,
                "cal_k": None if cal is None else cal.k,
                "cal_span_c": None if cal is None else f"{cal.span_c[0]:g}…{cal.span_c[1]:g}",
                "cal_date": None if cal is None or cal.date is None else cal.date.isoformat(),
                "cal_due": None if cal is None or cal.due is None else cal.due.isoformat(),
            })
        for c in cfg.channels:
            cond = c.leads.conductor
            leads = "—"
            if cond is not None:
                size = f"AWG {cond.awg}" if cond.awg is not None else (
                    f"{cond.area_mm2:g} mm²" if cond.area_mm2 is not None else f"{cond.fixed_ohm:g} ohm")
                leads = f"{size}, {cond.inside_length_m:g} m inside, {cond.outside_length_m:g} m outside"
            wiring.append({"channel": c.name, "label": c.label, "instrument": c.instrument, "input": c.input,
                           "sensor": c.sensor, "wiring": c.leads.wiring, "leads": leads, "position": c.position})
        for i in cfg.instruments:
            instruments.append({"instrument": i.name, "driver": i.driver, "address": i.address,
                                "interval_s": i.interval_s, "range_ohm": i.range_ohm(), "accuracy": i.kind.accuracy(i),
                                "identity": identity.get(i.name, "")})
        for a in cfg.alarms:
            params = dict(a.params)
            limit = params.pop("limit_c", None)
            rules.append({"rule": a.name, "kind": a.kind, "channels": ", ".join(a.channels), "severity": a.severity,
                          "limit_c": limit, "settings": "; ".join(f"{k} = {_setting(v)}" for k, v in sorted(params.items()))})
    else:
        for s in t.get("sensor", []) if isinstance(t.get("sensor"), list) else []:
            if isinstance(s, dict):
                sensors.append({"sensor": s.get("name"), "r0_ohm": s.get("r0_ohm"), "curve": s.get("curve"),
                                "class": s.get("class"), "element": s.get("element")})
        for c in t.get("channel", []) if isinstance(t.get("channel"), list) else []:
            if isinstance(c, dict):
                wiring.append({"channel": c.get("name"), "label": c.get("label"), "instrument": c.get("instrument"),
                               "input": c.get("input"), "sensor": c.get("sensor"), "wiring": c.get("wiring")})
    return {"sensors": sensors, "wiring": wiring, "instruments": instruments, "alarm_rules": rules}


def _setting(v: Any) -> str:
    if isinstance(v, (list, tuple)):
        return ", ".join(_setting(x) for x in v)
    if isinstance(v, dict):
        return "{" + ", ".join(f"{k} = {_setting(x)}" for k, x in v.items()) + "}"
    return str(v)


def _test_temperatures(profile: Profile | None) -> list[float]:
    if isinstance(profile, CycleProfile):
        return [profile.low.nominal_c, profile.high.nominal_c]
    if isinstance(profile, SoakProfile):
        return [profile.band.nominal_c]
    return []


def u_at_test(run: RunData, profile: Profile | None) -> dict[str, float | None]:
    """Each channel's expanded uncertainty at the test temperatures, from its configured chain."""
    temps = _test_temperatures(profile)
    cfg = run.config
    if cfg is None or not temps:
        return {}
    out: dict[str, float | None] = {}
    for ch in cfg.channels:
        try:
            conv = cfg.chain(ch).at_temperature(temps, ambient_c=cfg.ambient_c)
        except Exception:
            return {}
        us = [u for u in conv.expanded_uncertainty_c.tolist() if not math.isnan(u)]
        out[ch.name] = max(us) if us else None
    return out


def _limits(run: RunData) -> dict[str, tuple[float | None, float | None]]:
    """The lowest high limit and the highest low limit of the alarms on each channel."""
    out: dict[str, tuple[float | None, float | None]] = {n: (None, None) for n in run.names}
    if run.config is None:
        return out
    for a in run.config.alarms:
        limit = a.params.get("limit_c")
        if isinstance(limit, bool) or not isinstance(limit, (int, float)):
            continue
        targets = run.names if "*" in a.channels or not a.channels else a.channels
        for name in targets:
            if name not in out:
                continue
            hi, lo = out[name]
            side = a.kind_of.limit_line
            if side == "upper":
                hi = float(limit) if hi is None else min(hi, float(limit))
            elif side == "lower":
                lo = float(limit) if lo is None else max(lo, float(limit))
            out[name] = (hi, lo)
    return out


# ---------------------------------------------------------------- tables from the analysis


def channel_rows(run: RunData, sample: Sequence[str], u_test: Mapping[str, float | None]) -> list[dict[str, Any]]:
    s = run.series
    limits = _limits(run)
    rows = []
    for j, c in enumerate(run.channels):
        name = c.info.name
        hi_lim, lo_lim = limits.get(name, (None, None))
        above = time_beyond(s.lo[:, j], s.hi[:, j], s.width_s, hi_lim, above=True) if hi_lim is not None else None
        below = time_beyond(s.lo[:, j], s.hi[:, j], s.width_s, lo_lim, above=False) if lo_lim is not None else None
        valid = c.readings - c.without_temperature
        comp = completeness(valid, run.first_ms, run.last_ms, c.interval_s)
        rows.append({
            "channel": name, "label": c.info.label, "instrument": c.info.instrument, "sample": name in sample,
            "readings": c.readings, "valid_readings": valid,
            "completeness_pct": None if comp is None else num(100.0 * comp, 2),
            "min_c": num(c.min_c), "max_c": num(c.max_c), "mean_c": num(c.mean_c), "std_k": num(c.std_c),
            "std_from": "readings" if c.std_exact else "minute means",
            "high_limit_c": hi_lim,
            "above_at_least_min": None if above is None else minutes(above.at_least_s),
            "above_at_most_min": None if above is None else minutes(above.at_most_s),
            "low_limit_c": lo_lim,
            "below_at_least_min": None if below is None else minutes(below.at_least_s),
            "below_at_most_min": None if below is None else minutes(below.at_most_s),
            "max_uncertainty_k": num(c.max_u_c), "median_uncertainty_k": num(c.median_u_c),
            "uncertainty_at_test_k": num(u_test.get(name)),
        })
    return rows


def gap_rows(store: StoreReader, run: RunData) -> list[dict[str, Any]]:
    s = run.series
    gaps = [g for g in channel_gaps(s)
            # a partly filled first or last bucket is the edge of the run, not a gap
            if not ((g.start_s <= s.t0_s or g.end_s >= s.end_s) and g.duration_s <= s.width_s)]
    merged = merge_gaps(gaps)
    margin = 2 * s.width_s + 60.0
    ids = {c.info.name: c.info.id for c in run.channels}
    rows = []
    for k, g in enumerate(merged):
        start, end = g.start_s, g.end_s
        if k < MAX_REFINED:
            # from the last valid reading before to the first after, not the bucket edges
            start, end = _gap_edges(store, ids[g.channels[0]], g.start_s, g.end_s, s.width_s)
        causes = [f"{e.kind.replace('_', ' ')}: {e.message}" for e in run.events
                  if e.kind in GAP_CAUSES and start - margin <= e.t_ms / 1000.0 <= end + margin]
        if not causes and k < 50:
            causes = _status_causes(store, run, start, min(end, start + 600.0), g.channels)
        rows.append({"start_utc": utc(start), "end_utc": utc(end), "duration_s": num(end - start, 1),
                     "channels": ", ".join(g.channels), "cause": "; ".join(causes) or "no event recorded"})
    return rows


def _gap_edges(store: StoreReader, ch_id: int, start_s: float, end_s: float, width_s: float) -> tuple[float, float]:
    """The last valid reading before a gap and the first after it (the bucket edges if none is found)."""
    w = store.raw_window(ch_id, int((start_s - 2 * width_s) * 1000), int(start_s * 1000) - 1)
    ok = np.isfinite(w.temperature_c)
    before = float(w.t_ms[ok][-1]) / 1000.0 if ok.any() else start_s
    w = store.raw_window(ch_id, int(end_s * 1000), int((end_s + 2 * width_s) * 1000))
    ok = np.isfinite(w.temperature_c)
    after = float(w.t_ms[ok][0]) / 1000.0 if ok.any() else end_s
    return before, after


def _status_causes(store: StoreReader, run: RunData, t0_s: float, t1_s: float, channels: Sequence[str]) -> list[str]:
    """Reading statuses in a gap: readings were made, but gave no temperature."""
    counts: dict[str, int] = {}
    wanted = set(channels)
    for chunk in store.iter_readings(run.run_id, from_ms=int(t0_s * 1000), to_ms=int(t1_s * 1000)):
        for channel, status in zip(chunk.channel, chunk.status, strict=True):
            if channel in wanted and status != "ok":
                counts[status] = counts.get(status, 0) + 1
    return [f"readings without temperature, status {k} × {v}" for k, v in sorted(counts.items())]


def refine_deviations(store: StoreReader, run: RunData, conf: Conformance) -> Conformance:
    """Look the start and end of the first excursions up in the raw readings."""
    ids = {c.info.name: c.info.id for c in run.channels}
    intervals = {c.info.name: c.interval_s for c in run.channels}
    w = run.series.width_s
    out: list[Deviation] = []
    done = 0
    for d in conf.deviations:
        if d.kind != "excursion" or d.band is None or done >= MAX_REFINED or d.channel not in ids:
            out.append(d)
            continue
        done += 1
        band = d.band
        above = d.value is not None and d.limit is not None and d.value > d.limit

        def outside(v: np.ndarray, b: Any = band, up: bool = above) -> np.ndarray:
            # the side the excursion went to: an overshoot's first bucket also holds the approach
            return v > b.hi_c if up else v < b.lo_c

        start = refine_start(store, ids[d.channel], d.start_s, d.start_s + w, outside)
        end = None if d.end_s is None else refine_end(store, ids[d.channel], d.end_s - w, d.end_s, outside)
        res = intervals.get(d.channel) or d.resolution_s
        out.append(dataclasses.replace(
            d, start_s=start if start is not None else d.start_s,
            end_s=end if end is not None else d.end_s,
            resolution_s=min(d.resolution_s, res) if start is not None else d.resolution_s,
        ))
    out.sort(key=lambda d: (d.start_s, d.channel, d.kind))
    summary = conf.summary
    if out and conf.verdict == "not_met":
        summary = deviation_summary(conf.deviations_total, out[0])
    return dataclasses.replace(conf, deviations=tuple(out), summary=summary)


def conformance_tables(conf: Conformance) -> dict[str, list[dict[str, Any]]]:
    names = conf.sample_channels
    cycles = [{
        "cycle": r.cycle, "start_utc": utc(r.start_s), "end_utc": utc(r.end_s),
        "ramp_up_k_per_min": num(r.ramp_up_k_per_min, 3), "dwell_high_min": minutes(r.dwell_high_s),
        "ramp_down_k_per_min": num(r.ramp_down_k_per_min, 3), "dwell_low_min": minutes(r.dwell_low_s),
        "complete": r.complete, "deviations": r.deviations,
    } for r in conf.cycles]
    dwells = []
    for d in conf.dwells:
        k = int(np.argmin(d.channel_in_tolerance_s)) if d.channel_in_tolerance_s else None
        dwells.append({
            "cycle": d.cycle, "level": d.level, "band": d.band.describe(), "window_start_utc": utc(d.start_s),
            "entry_utc": utc(d.entry_s), "exit_utc": utc(d.exit_s), "in_tolerance_min": minutes(d.in_tolerance_s),
            "required_min": minutes(d.required_s), "finished": d.finished,
            "met": (d.in_tolerance_s + 1e-9 >= d.required_s) if d.finished else None,
            "least_channel": None if k is None else names[k],
            "least_min": None if k is None else minutes(d.channel_in_tolerance_s[k]),
        })
    dwell_channels = [{
        "cycle": d.cycle, "level": d.level, "channel": name, "in_tolerance_min": minutes(d.channel_in_tolerance_s[k]),
        "min_c": num(d.channel_min_c[k]), "max_c": num(d.channel_max_c[k]),
    } for d in conf.dwells for k, name in enumerate(names)]
    ramps = []
    for r in conf.ramps:
        rates = np.asarray(r.channel_rate_k_per_min, dtype=np.float64)
        ok = np.isfinite(rates)
        slow = int(np.nanargmin(np.where(ok, rates, np.inf))) if ok.any() else None
        fast = int(np.nanargmax(np.where(ok, rates, -np.inf))) if ok.any() else None
        ramps.append({
            "cycle": r.cycle, "direction": r.direction, "from_start": r.from_start,
            "from_c": num(r.level_start_c, 3), "to_c": num(r.level_end_c, 3), "start_utc": utc(r.t_start_s),
            "end_utc": utc(r.t_end_s), "rate_k_per_min": num(r.rate_k_per_min, 3),
            "slowest_channel": None if slow is None else names[slow],
            "slowest_k_per_min": None if slow is None else num(rates[slow], 3),
            "fastest_channel": None if fast is None else names[fast],
            "fastest_k_per_min": None if fast is None else num(rates[fast], 3),
            "max_window_rate_k_per_min": num(r.max_window_rate_k_per_min, 3),
            "transition_min": minutes(r.transition_s),
        })
    devs = [{
        "no": k + 1, "kind": d.kind, "start_utc": utc(d.start_s), "end_utc": utc(d.end_s),
        "duration_s": None if d.end_s is None else num(d.end_s - d.start_s, 1), "channel": d.channel,
        "cycle": d.cycle, "phase": d.phase, "value": num(d.value), "limit": num(d.limit), "unit": d.unit,
        "resolution_s": num(d.resolution_s, 3), "message": d.message,
    } for k, d in enumerate(conf.deviations)]
    return {"cycles": cycles, "dwells": dwells, "dwell_channels": dwell_channels, "ramps": ramps,
            "deviations": devs}


def performance_periods(run: RunData, conf: Conformance, profile: Profile, chamber: Sequence[str]) -> list[Performance]:
    s = run.series.columns(chamber)
    mask = stable_mask(s, profile.stable_window_s, profile.stable_band_k)
    us = [run.channel(n).max_u_c for n in chamber]
    u = max((x for x in us if x is not None), default=None)
    out = []
    for d in conf.dwells:
        period = stable_period(s, mask, d.i_start, d.i_end, profile.stable_window_s)
        label = "soak" if d.level == "soak" else f"dwell {d.level}, cycle {d.cycle}"
        out.append(chamber_performance(s, period, d.band.nominal_c, label, measuring_u_k=u))
    return out


def performance_tables(perf: Sequence[Performance]) -> dict[str, list[dict[str, Any]]]:
    rows, points = [], []
    for p in perf:
        st = p.stable
        rows.append({
            "period": p.label, "setpoint_c": p.setpoint_c,
            "stable_from_utc": None if st is None else utc(st.start_s),
            "stable_to_utc": None if st is None else utc(st.end_s),
            "confirmed_utc": None if st is None else utc(st.confirmed_s),
            "stable_min": None if st is None else minutes(st.duration_s),
            "chamber_deviation_k": num(p.chamber_deviation_k), "worst_deviation_k": num(p.worst_deviation_k),
            "worst_channel": p.worst_deviation_channel or None, "max_fluctuation_k": num(p.max_fluctuation_k),
            "spatial_variation_k": num(p.spatial_variation_k), "max_spread_k": num(p.max_spread_k),
            "condition_uncertainty_k": num(p.expanded_uncertainty_k),
        })
        if st is None:
            continue
        for k, name in enumerate(p.channels):
            points.append({
                "period": p.label, "channel": name, "mean_c": num(p.mean_c[k]), "min_c": num(p.min_c[k]),
                "max_c": num(p.max_c[k]), "deviation_k": num(p.deviation_k[k]),
                "fluctuation_k": num(p.fluctuation_k[k]), "drift_k_per_min": num(p.drift_k_per_min[k], 5),
            })
    return {"performance": rows, "performance_points": points}


def performance_summary(perf: Sequence[Performance], profile: Profile, chamber: Sequence[str]) -> dict[str, Any]:
    groups: dict[str, list[Performance]] = {}
    for p in perf:
        key = "soak" if p.label == "soak" else p.label.split(",")[0].replace("dwell ", "")
        groups.setdefault(key, []).append(p)
    out: dict[str, Any] = {"stable_band_k": profile.stable_band_k, "stable_window_s": profile.stable_window_s,
                           "chamber_channels": list(chamber), "levels": {}}
    for key, ps in groups.items():
        st = [p for p in ps if p.stable is not None]

        def worst(attr: str, ps: list[Performance] = st) -> float | None:
            vals = [getattr(p, attr) for p in ps if getattr(p, attr) is not None]
            return num(max(vals, key=abs)) if vals else None

        out["levels"][key] = {
            "setpoint_c": ps[0].setpoint_c, "periods": len(ps), "stable_periods": len(st),
            "worst_chamber_deviation_k": worst("chamber_deviation_k"),
            "worst_point_deviation_k": worst("worst_deviation_k"),
            "max_fluctuation_k": worst("max_fluctuation_k"),
            "max_spatial_variation_k": worst("spatial_variation_k"),
            "max_spread_k": worst("max_spread_k"),
            "max_condition_uncertainty_k": worst("expanded_uncertainty_k"),
            "shortest_stable_min": minutes(min((p.stable.duration_s for p in st if p.stable), default=None))
            if st else None,
        }
    return out


def alarm_tables(run: RunData, episodes: Sequence[Episode]) -> dict[str, list[dict[str, Any]]]:
    end_s = (run.last_ms or 0) / 1000.0
    alarms = [{
        "rule": e.rule, "channel": e.channel or None, "severity": e.severity, "raised_utc": utc(e.raised_s),
        "cleared_utc": utc(e.cleared_s), "duration_s": num(e.duration_s(end_s), 1),
        "acknowledged_utc": utc(e.acknowledged_s), "ack_delay_s": num(e.ack_delay_s, 1),
        "acknowledged_by": e.acknowledged_by or None, "actions": "; ".join(e.actions) or None,
        "message": e.message + ("" if e.cleared_s is not None else " (still active at the end of the data)"),
    } for e in episodes]
    events = [{"t_utc": e.t_utc, "kind": e.kind, "channel": e.channel, "severity": e.severity, "message": e.message}
              for e in run.events if e.kind not in ALARM_KINDS and e.kind != "scan_late"][:5000]
    return {"alarms": alarms, "events": events}


def rates_summary(rates: AlarmRates, run: RunData) -> dict[str, Any]:
    late = sum(1 for e in run.events if e.kind == "scan_late")
    return {
        "alarms": rates.alarms, "hours": num(rates.hours, 3), "per_hour": num(rates.per_hour, 3),
        "per_10_min": num(rates.per_10_min, 3), "rating": rates.rate_rating,
        "peak_10_min": rates.peak_10_min, "peak_at_utc": utc(rates.peak_at_s), "peak_rating": rates.peak_rating,
        "flood_periods": rates.flood_periods, "periods_10_min": rates.periods,
        "flood_share": num(rates.flood_share, 4), "chattering": list(rates.chattering),
        "by_severity": dict(rates.by_severity), "late_scans": late,
        "benchmarks": (
            "EEMUA 191 (from memory): average under 1 per 10 min very likely acceptable, up to 1 per 5 min "
            "manageable, up to 1 per minute likely over-demanding, more very likely unacceptable; "
            "in the 10 min after an upset under 10 manageable, 10–100 hard to cope with, more excessive. "
            "ANSI/ISA-18.2 (from memory): more than 10 in 10 min is a flood; 3 or more in a minute chattering."
        ),
        "states_now": [a.as_json() for a in run.alarm_states],
    }
