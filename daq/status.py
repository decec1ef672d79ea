"""`soaklog status` and `soaklog check`: what a station file would log, and what a store holds now."""

from __future__ import annotations

import math
from typing import Any

from soaklog.config import StationConfig
from soaklog.sensors.flags import flag_names
from soaklog.sensors.tc_chain import ThermocoupleChain
from soaklog.store import StoreReader

__all__ = ["status_report", "format_status", "check_report", "format_check"]


def status_report(store: StoreReader, run_id: int | None = None, *, now_ms: int | None = None) -> dict[str, Any]:
    """The newest value of every channel and the active alarms (the `status --json` contract)."""
    run = store.run(run_id)
    channels = []
    for c in store.latest(run.id):
        age = None
        if now_ms is not None and c.last_ok_ms is not None:
            age = max(0.0, (now_ms - c.last_ok_ms) / 1000.0)
        channels.append({
            "id": c.channel, "label": c.label, "instrument": c.instrument,
            "temperature_c": c.temperature_c, "uncertainty_c": c.uncertainty_c,
            "status": c.status, "flags": flag_names(c.flags), "t_utc": c.t_utc,
            "raw": c.raw, "raw_unit": c.raw_unit, "min_c": c.min_c, "max_c": c.max_c,
            "last_good_age_s": age,
        })
    return {
        "database": store.path,
        "run": {"id": run.id, "station": run.station, "name": run.name, "started_utc": run.started_utc,
                "ended_utc": run.ended_utc},
        "channels": channels,
        "alarms": [a.as_json() for a in store.alarms(run.id, active_only=True)],
        "instruments": [
            {"name": i.name, "connected": i.connected, "identity": i.identity,
             "last_error": i.health.get("last_error", "")}
            for i in store.instruments(run.id)
        ],
    }


def _num(x: float | None, spec: str) -> str:
    return "—" if x is None or (isinstance(x, float) and math.isnan(x)) else format(x, spec)


def format_status(rep: dict[str, Any]) -> str:
    run = rep["run"]
    state = "running or interrupted" if run["ended_utc"] is None else f"ended {run['ended_utc']}"
    lines = [
        f"station {run['station'] or '—'}  run {run['id']} {run['name'] or ''}".rstrip(),
        f"started {run['started_utc']}, {state}",
        f"database {rep['database']}",
        "",
    ]
    head = ("channel", "temperature °C", "U (k=2) K", "status", "last reading (UTC)")
    rows = [
        (c["id"], _num(c["temperature_c"], ".3f"), _num(c["uncertainty_c"], ".3f"),
         c["status"] if c["status"] == "ok" else f"!! {c['status']}", c["t_utc"] or "—")
        for c in rep["channels"]
    ]
    w = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(head)]
    lines.append("  ".join(h.ljust(w[i]) for i, h in enumerate(head)))
    for r in rows:
        lines.append("  ".join((r[i].rjust(w[i]) if i in (1, 2) else r[i].ljust(w[i])) for i in range(len(r))))
    lines.append("")
    if rep["instruments"]:
        for i in rep["instruments"]:
            state = "connected" if i["connected"] else f"!! not connected: {i['last_error']}"
            lines.append(f"instrument {i['name']}: {state}")
    active = rep["alarms"]
    lines.append(f"alarms: {len(active)} active" if active else "alarms: none active")
    for a in active:
        lines.append(f"  !! [{a['severity']}] {a['id']} {a['channel'] or ''} {a['state']}: {a['message']}")
    return "\n".join(lines)


def _representative_temperatures(cfg: StationConfig) -> list[float]:
    temps: set[float] = {0.0, 100.0}
    if cfg.profile is not None:
        temps.update(cfg.profile.setpoints_c)
    return sorted(temps)


def check_report(cfg: StationConfig) -> dict[str, Any]:
    """What the station file would log, and the uncertainty each channel can reach."""
    temps = _representative_temperatures(cfg)
    channels = []
    for ch in cfg.channels:
        chain = cfg.chain(ch)
        if isinstance(chain, ThermocoupleChain):
            curve = chain.thermocouple
            cj = chain.cold_junction
            cj_u = None
            if cj.source == "channel" and cj.channel is not None:
                # the terminal block at the ambient temperature, with that channel's own uncertainty there
                cj_conv = cfg.chain(next(c for c in cfg.channels if c.name == cj.channel)).at_temperature(
                    [cfg.ambient_c], ambient_c=cfg.ambient_c)
                cj_u = float(cj_conv.expanded_uncertainty_c[0])
            conv = chain.at_temperature(temps, ambient_c=cfg.ambient_c, cold_junction_c=cfg.ambient_c,
                                        cold_junction_u_c=cj_u)
        else:
            curve = chain.sensor.curve
            conv = chain.at_temperature(temps, ambient_c=cfg.ambient_c)
        sensor = cfg.sensor(ch.sensor)
        vouch = (
            f"calibration {sensor.calibration.certificate} U = {sensor.calibration.expanded_uncertainty_c:g} K"
            if sensor.calibration else (sensor.tolerance.describe() if sensor.tolerance else "no class or calibration")
        )
        exc = chain.excitation
        channels.append({
            "name": ch.name, "label": ch.label, "instrument": ch.instrument, "input": ch.input,
            "sensor": ch.sensor, "r0_ohm": getattr(curve, "r0_ohm", None), "curve": curve.name, "vouched_by": vouch,
            "sensor_label": curve.label if hasattr(curve, "label") else f"Pt{curve.r0_ohm:g}",
            "wiring": ch.leads.wiring if ch.quantity == "ohm" else None,
            "cold_junction": chain.cold_junction.describe() if isinstance(chain, ThermocoupleChain) else None,
            "excitation_ma": None if exc is None or exc.current_a is None else exc.current_a * 1e3,
            "uncertainty_at": [
                {"t_c": t, "expanded_uncertainty_c": (None if math.isnan(u) else float(u)),
                 "flags": flag_names(f)}
                for t, u, f in zip(temps, conv.expanded_uncertainty_c.tolist(), conv.flags.tolist(), strict=True)
            ],
        })
    return {
        "file": cfg.path, "station": cfg.station, "database": cfg.database,
        "instruments": [
            {"name": i.name, "driver": i.driver, "where": i.address, "interval_s": i.interval_s}
            for i in cfg.instruments
        ],
        "channels": channels, "alarms": [a.name for a in cfg.alarms], "warnings": list(cfg.warnings),
    }


def format_check(rep: dict[str, Any], safety: str) -> str:
    lines = [f"{rep['file']}: valid. Station {rep['station']}, database {rep['database']}", ""]
    for i in rep["instruments"]:
        lines.append(f"instrument {i['name']:10s} {i['driver']:10s} {i['where']}  every {i['interval_s']:g} s")
    lines.append("")
    temps = [u["t_c"] for u in rep["channels"][0]["uncertainty_at"]] if rep["channels"] else []
    head = ["channel", "input", "sensor", "wiring", "current"] + [f"U @{t:g} °C" for t in temps]
    rows = []
    for c in rep["channels"]:
        rows.append([
            c["name"], f"{c['instrument']}:{c['input']}", f"{c['sensor']} ({c['sensor_label']})", "—" if c["wiring"] is None else f"{c['wiring']}-wire",
            "—" if c["excitation_ma"] is None else f"{c['excitation_ma']:g} mA",
        ] + [("—" if u["expanded_uncertainty_c"] is None else f"{u['expanded_uncertainty_c']:.3f} K")
             + ("*" if u["flags"] else "") for u in c["uncertainty_at"]])
    w = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(head)] if rows else []
    lines.append("  ".join(h.ljust(w[i]) for i, h in enumerate(head)))
    for r in rows:
        lines.append("  ".join(r[i].ljust(w[i]) for i in range(len(r))))
    lines.append("  (U: expanded uncertainty, k = 2, of one reading; * = flagged, see soaklog convert for the meaning)")
    for c in rep["channels"]:
        lines.append(f"  {c['name']}: {c['vouched_by']}"
                     + (f"; {c['cold_junction']}" if c.get("cold_junction") else ""))
    lines.append("")
    if rep["warnings"]:
        lines.append("warnings:")
        lines.extend(f"  - {w}" for w in rep["warnings"])
        lines.append("")
    lines.append("SAFETY: " + safety)
    return "\n".join(lines)
