"""The report as one self-contained HTML page: inline style, plots embedded as base64 PNG, no outside assets."""

from __future__ import annotations

import base64
import html
from collections.abc import Mapping, Sequence
from typing import Any

__all__ = ["ROWS_SHOWN", "render_html"]

#: rows of a long table shown on the page (every row is in its CSV file)
ROWS_SHOWN = 200

_TITLES = {
    "channel": "channel", "label": "label", "instrument": "instrument", "sample": "sample",
    "readings": "readings", "valid_readings": "with temperature", "completeness_pct": "complete %",
    "min_c": "min °C", "max_c": "max °C", "mean_c": "mean °C", "std_k": "std dev K", "std_from": "std dev from",
    "high_limit_c": "high limit °C", "above_at_least_min": "above, min", "above_at_most_min": "above, at most min",
    "low_limit_c": "low limit °C", "below_at_least_min": "below, min", "below_at_most_min": "below, at most min",
    "max_uncertainty_k": "largest U K", "median_uncertainty_k": "median U K",
    "uncertainty_at_test_k": "U at test temps K", "sensor": "sensor", "r0_ohm": "R0 ohm", "curve": "curve",
    "a": "A", "b": "B", "c": "C", "class": "class", "element": "element",
    "dissipation_mw_per_k": "dissipation mW/K", "certificate": "calibration", "cal_uncertainty_k": "cal U K",
    "cal_k": "k", "cal_span_c": "cal span °C", "cal_date": "calibrated", "cal_due": "due", "input": "input",
    "wiring": "wires", "leads": "leads", "position": "position", "driver": "driver", "address": "address",
    "interval_s": "every s", "range_ohm": "range ohm", "accuracy": "accuracy", "identity": "identity",
    "rule": "alarm", "kind": "kind", "channels": "channels", "severity": "severity", "limit_c": "limit °C",
    "settings": "settings", "start_utc": "from (UTC)", "end_utc": "to (UTC)", "duration_s": "duration s",
    "cause": "cause", "cycle": "cycle", "ramp_up_k_per_min": "ramp up K/min", "dwell_high_min": "dwell high min",
    "ramp_down_k_per_min": "ramp down K/min", "dwell_low_min": "dwell low min", "complete": "complete",
    "deviations": "deviations", "level": "at", "band": "band", "window_start_utc": "reached (UTC)",
    "entry_utc": "in tolerance from", "exit_utc": "in tolerance to", "in_tolerance_min": "within tolerance min",
    "required_min": "required min", "finished": "finished", "met": "met", "least_channel": "shortest channel",
    "least_min": "its min", "direction": "ramp", "from_start": "from start", "from_c": "from °C", "to_c": "to °C",
    "rate_k_per_min": "rate K/min", "slowest_channel": "slowest", "slowest_k_per_min": "K/min",
    "fastest_channel": "fastest", "fastest_k_per_min": "K/min", "max_window_rate_k_per_min": "max over window K/min",
    "transition_min": "transition min", "no": "no.", "phase": "phase", "value": "value", "limit": "limit",
    "unit": "unit", "resolution_s": "timed to s", "message": "what", "period": "period", "setpoint_c": "set °C",
    "stable_from_utc": "stable from", "stable_to_utc": "stable to", "confirmed_utc": "confirmed",
    "stable_min": "stable min", "chamber_deviation_k": "deviation K", "worst_deviation_k": "worst point K",
    "worst_channel": "worst point", "max_fluctuation_k": "fluctuation K", "spatial_variation_k": "spatial K",
    "max_spread_k": "largest spread K", "condition_uncertainty_k": "U of condition K", "deviation_k": "deviation K",
    "fluctuation_k": "fluctuation K", "drift_k_per_min": "drift K/min", "raised_utc": "raised (UTC)",
    "cleared_utc": "cleared (UTC)", "acknowledged_utc": "acknowledged", "ack_delay_s": "after s",
    "acknowledged_by": "by", "actions": "actions", "t_utc": "time (UTC)", "periods": "periods",
    "stable_periods": "stable", "worst_chamber_deviation_k": "worst deviation K",
    "worst_point_deviation_k": "worst point K", "max_spatial_variation_k": "spatial K",
    "max_condition_uncertainty_k": "U of condition K", "shortest_stable_min": "shortest stable min",
    "id": "alarm point", "state": "state", "acked": "acknowledged", "since_utc": "since (UTC)",
    "shelved_until_utc": "shelved until",
}

_CSS = """
:root { --ink:#1f2a33; --soft:#5d6d7e; --rule:#d5dbe0; --met:#1e8449; --not:#b03a2e; --inc:#b9770e; }
* { box-sizing: border-box; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", sans-serif; color: var(--ink); margin: 0;
       background: #f4f6f7; }
main { max-width: 1180px; margin: 0 auto; padding: 24px 28px 60px; background: #fff; }
h1 { font-size: 22px; margin: 0 0 4px; } h2 { font-size: 17px; margin: 34px 0 8px; border-bottom: 2px solid var(--rule);
     padding-bottom: 4px; } h3 { font-size: 14px; margin: 18px 0 6px; }
.sub { color: var(--soft); margin: 0 0 16px; }
.verdict { border-left: 8px solid var(--soft); padding: 12px 16px; margin: 16px 0; background: #f8f9f9; }
.verdict.met { border-color: var(--met); } .verdict.not_met { border-color: var(--not); }
.verdict.incomplete { border-color: var(--inc); }
.verdict b.word { font-size: 18px; text-transform: uppercase; letter-spacing: .04em; }
.verdict.met b.word { color: var(--met); } .verdict.not_met b.word { color: var(--not); }
.verdict.incomplete b.word { color: var(--inc); }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 8px 0; }
dl.facts dt { color: var(--soft); } dl.facts dd { margin: 0; }
table { border-collapse: collapse; margin: 6px 0; font-size: 12.5px; width: 100%; }
th, td { border-bottom: 1px solid var(--rule); padding: 3px 6px; text-align: left; vertical-align: top; }
th { background: #eef1f3; font-weight: 600; position: sticky; top: 0; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.bad td { background: #fbeeec; }
.scroll { max-height: 560px; overflow: auto; border: 1px solid var(--rule); }
.more { color: var(--soft); font-size: 12px; }
figure { margin: 14px 0; } figure img { max-width: 100%; border: 1px solid var(--rule); }
figcaption { color: var(--soft); font-size: 12.5px; }
nav a { margin-right: 12px; } pre { background: #f4f6f7; padding: 10px; overflow: auto; font-size: 12px; }
.note { color: var(--soft); font-size: 13px; }
"""

_WORDS = {"met": "profile met", "not_met": "profile not met", "incomplete": "not finished",
          "no_profile": "no profile", "no_data": "no data"}

_PLOT_TEXT = {
    "overview": ("All channels over the run",
                 "Shaded blue: the profile's tolerance bands. Red, numbered as in the deviations table: a channel out "
                 "of its band or without readings (shaded), a short dwell or a ramp out of tolerance (a bar along "
                 "the top)."),
    "cycles": ("Cycles overlaid",
               "The mean of the sample channels in each cycle, lined up on the moment it reached the high extreme "
               "(the 90 % point of the ramp up). Cycles that look alike ran alike; one that stands out is worth a "
               "look in the cycles table."),
    "spread": ("Spread across channels",
               "Highest minus lowest channel at each moment. It is large during ramps (sensors lag differently) and "
               "should settle at each dwell; a rise during a dwell marks a local problem."),
    "by_cycle": ("Conformance by cycle",
                 "Per cycle: the time every sample channel was within tolerance at each extreme against the "
                 "required dwell, and the ramp rates against the allowed band."),
    "closeups": ("The first deviations up close",
                 "Each panel shows the channel concerned around one deviation: its bucket means, the lowest and "
                 "highest reading in each bucket (grey) and the band it should have stayed in."),
}


def _e(x: Any) -> str:
    return html.escape("" if x is None else str(x))


def _fmt(v: Any) -> tuple[str, bool]:
    """Display text and whether it is a number (right-aligned)."""
    if v is None:
        return "—", False
    if isinstance(v, bool):
        return ("yes" if v else "no"), False
    if isinstance(v, int):
        return f"{v:d}", True
    if isinstance(v, float):
        a = abs(v)
        if a >= 1e7 or (a != 0 and a < 0.01):
            return f"{v:.5g}", True
        if v == round(v):
            return f"{v:.0f}", True
        return (f"{v:.3f}" if a < 1000 else f"{v:.1f}"), True
    return str(v), False


def _table(name: str, columns: Sequence[str], rows: Sequence[Mapping[str, Any]], stem: str, *,
           limit: int = ROWS_SHOWN, bad: str | None = None) -> str:
    if not rows:
        return f'<p class="note" data-table="{_e(name)}" data-rows="0">None.</p>'
    shown = rows[:limit]
    head = "".join(f"<th>{_e(_TITLES.get(c, c))}</th>" for c in columns)
    body = []
    for r in shown:
        cls = ' class="bad"' if bad is not None and r.get(bad) is False else ""
        cells = []
        for c in columns:
            text, num = _fmt(r.get(c))
            cells.append(f'<td class="n">{_e(text)}</td>' if num else f"<td>{_e(text)}</td>")
        body.append(f"<tr{cls}>" + "".join(cells) + "</tr>")
    more = ""
    if len(rows) > len(shown):
        more = (f'<p class="more">{len(shown)} of {len(rows)} rows shown; every row is in '
                f"{_e(stem)}-{_e(name)}.csv and in the JSON summary.</p>")
    return (f'<div class="scroll"><table id="table-{_e(name)}" data-table="{_e(name)}" data-rows="{len(rows)}">'
            f"<thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table></div>{more}")


def _facts(pairs: Sequence[tuple[str, Any]]) -> str:
    items = "".join(f"<dt>{_e(k)}</dt><dd>{_e(_fmt(v)[0] if not isinstance(v, str) else v)}</dd>" for k, v in pairs)
    return f'<dl class="facts">{items}</dl>'


def _figure(name: str, png: bytes | None, stem: str) -> str:
    if png is None:
        return ""
    title, caption = _PLOT_TEXT[name]
    b64 = base64.b64encode(png).decode("ascii")
    return (f'<figure id="plot-{name}" data-plot="{name}"><img alt="{_e(title)}" src="data:image/png;base64,{b64}">'
            f"<figcaption><b>{_e(title)}.</b> {_e(caption)} (Also written as {_e(stem)}-{name}.png.)</figcaption>"
            "</figure>")


def render_html(summary: Mapping[str, Any], images: Mapping[str, bytes], columns: Mapping[str, Sequence[str]],
                config_text: str) -> str:
    """The whole page for ``summary`` (see ``build.make_report``) with ``images`` embedded."""
    run = summary["run"]
    rep = summary["report"]
    v = summary["verdict"]
    t = summary["tables"]
    stem = f"report-run{run['id']}"
    tab = lambda name, **kw: _table(name, columns[name], t.get(name, []), stem, **kw)
    word = _WORDS.get(v["result"], v["result"])
    parts: list[str] = []
    parts.append(f"<h1>Run report: {_e(run['station'] or 'station')} — run {run['id']}</h1>")
    parts.append(f'<p class="sub">{_e(run["name"] or "")} · generated {_e(rep["generated_utc"])} by '
                 f'{_e(rep["software"])} from {_e(rep["database"])}</p>')
    verdict_lines = [f'<b class="word">{_e(word)}</b>', f"<p>{_e(v['summary'])}</p>"]
    if v.get("profile"):
        verdict_lines.append(f"<p>Profile ({_e(v.get('profile_source'))}): {_e(v['profile'])}"
                             + (f" — {_e(v['profile_name'])}" if v.get("profile_name") else "") + "</p>")
    if v.get("planned_cycles") is not None:
        verdict_lines.append(f"<p>Complete cycles: <b>{v['complete_cycles']}</b> of {v['planned_cycles']} planned. "
                             f"Deviations: <b>{v['deviations']}</b>"
                             + (f", the first at {_e(v['first_deviation_utc'])}" if v.get("first_deviation_utc") else "")
                             + ".</p>")
    elif v.get("kind") == "soak":
        verdict_lines.append(f"<p>Deviations: <b>{v['deviations']}</b>"
                             + (f", the first at {_e(v['first_deviation_utc'])}" if v.get("first_deviation_utc") else "")
                             + ".</p>")
    if v.get("sample_channels"):
        verdict_lines.append(f"<p class=\"note\">Judged on the sample channels: {_e(', '.join(v['sample_channels']))}."
                             " Times are to the bucket resolution "
                             f"({_e(_fmt(v['resolution_s'])[0])} s) unless the deviation table says otherwise.</p>")
    parts.append(f'<div class="verdict {_e(v["result"])}" id="verdict">' + "".join(verdict_lines) + "</div>")
    parts.append('<nav><a href="#run">run</a><a href="#conformance">conformance</a><a href="#plots">plots</a>'
                 '<a href="#performance">chamber performance</a><a href="#channels">channels</a>'
                 '<a href="#alarms">alarms</a><a href="#gaps">gaps</a><a href="#configuration">configuration</a>'
                 '<a href="#methods">how it is measured</a></nav>')

    parts.append('<h2 id="run">Run</h2>')
    parts.append(_facts([
        ("station", run["station"]), ("run", f"{run['id']} {run['name'] or ''}".strip()),
        ("started (UTC)", run["started_utc"]), ("ended (UTC)", run["ended_utc"] or "not recorded (running or cut)"),
        ("first reading", run["first_reading_utc"]), ("last reading", run["last_reading_utc"]),
        ("length", f"{run['hours']:g} h" if run["hours"] is not None else None),
        ("channels", run["channels"]), ("readings", run["readings"]),
        ("configuration", f"sha256 {run['config_sha256']}" + (f", from {run['config_path']}" if run["config_path"] else "")),
        ("logged by", run["software"]),
        ("analysed from", f"{rep['data_source']} data, {rep['resolution_s']:g} s buckets"),
    ]))
    for n in summary["notes"]:
        parts.append(f'<p class="note">{_e(n)}</p>')

    parts.append('<h2 id="conformance">Profile conformance</h2>')
    if v["result"] in ("no_profile", "no_data"):
        parts.append(f"<p>{_e(v['summary'])}</p>")
    else:
        parts.append("<h3>Deviations — where the profile was not met</h3>")
        parts.append(tab("deviations"))
        if t.get("cycles"):
            parts.append("<h3>Cycles</h3>")
            parts.append(tab("cycles"))
        parts.append("<h3>Dwells" + (" and the soak" if v.get("kind") == "soak" else "") + "</h3>")
        parts.append(tab("dwells", bad="met"))
        parts.append("<h3>Each sample channel in each dwell</h3>")
        parts.append('<p class="note">Min and max while the channel was in its band (from its first to its last '
                     "bucket within it).</p>")
        parts.append(tab("dwell_channels"))
        parts.append("<h3>Ramps</h3>")
        parts.append(tab("ramps"))

    parts.append('<h2 id="plots">Plots</h2>')
    for name in ("overview", "cycles", "by_cycle", "spread", "closeups"):
        parts.append(_figure(name, images.get(name), stem))

    parts.append('<h2 id="performance">Chamber performance (IEC 60068-3-5 quantities)</h2>')
    perf = summary.get("performance")
    if not perf:
        parts.append("<p>Needs a profile: the set points and the stable periods come from it.</p>")
    else:
        parts.append(f"<p>Over the longest stable period of each dwell, on {_e(', '.join(perf['chamber_channels']))}. "
                     f"Stable: every point within ± {perf['stable_band_k']:g} K over "
                     f"{perf['stable_window_s'] / 60:g} min.</p>")
        lv_rows = [{"period": k, **val} for k, val in perf["levels"].items()]
        lv_cols = ["period", "setpoint_c", "periods", "stable_periods", "worst_chamber_deviation_k",
                   "worst_point_deviation_k", "max_fluctuation_k", "max_spatial_variation_k", "max_spread_k",
                   "max_condition_uncertainty_k", "shortest_stable_min"]
        parts.append(_table("performance_levels", lv_cols, lv_rows, stem))
        parts.append("<h3>Each stable period</h3>")
        parts.append(tab("performance"))
        parts.append("<h3>Each point in each stable period</h3>")
        parts.append(tab("performance_points"))

    parts.append('<h2 id="channels">Channels</h2>')
    parts.append('<p class="note">Min, max and mean over the whole run are exact (kept as running totals by the '
                 "logger). U is the expanded uncertainty (k = 2) of a reading: the largest and median stored with the "
                 "readings, and what the configured measuring chain gives at the test temperatures. Time beyond a "
                 "limit: at least (every reading beyond it) and at most (any reading beyond it).</p>")
    parts.append(tab("channels"))

    parts.append('<h2 id="alarms">Alarms</h2>')
    ar = summary["alarm_rates"]
    parts.append(_facts([
        ("alarms raised", ar["alarms"]), ("average", f"{_fmt(ar['per_10_min'])[0]} per 10 min — {ar['rating']}"),
        ("most in 10 min", f"{ar['peak_10_min']} — {ar['peak_rating']}"
         + (f" (from {ar['peak_at_utc']})" if ar["peak_at_utc"] else "")),
        ("10-min periods in flood", f"{ar['flood_periods']} of {ar['periods_10_min']}"),
        ("chattering", ", ".join(ar["chattering"]) or "none"),
        ("late scans", ar["late_scans"]),
    ]))
    parts.append(f'<p class="note">{_e(ar["benchmarks"])} Those figures are for a plant operator\'s console; a test '
                 "chamber watched by one technician should sit far below them.</p>")
    parts.append(tab("alarms"))
    if ar.get("states_now"):
        active = [a for a in ar["states_now"] if a.get("state") != "normal"]
        quiet = len(ar["states_now"]) - len(active)
        parts.append("<h3>Alarm states at the end of the data</h3>")
        st_cols = ["id", "channel", "state", "severity", "acked", "since_utc", "shelved_until_utc", "message"]
        parts.append(_table("alarm_states", st_cols, active, stem))
        parts.append(f'<p class="note">{quiet} more alarm point{"s" if quiet != 1 else ""} in the normal state.</p>')
    parts.append("<h3>Logger events</h3>")
    parts.append(tab("events"))

    parts.append('<h2 id="gaps">Gaps in the data</h2>')
    parts.append(tab("gaps"))

    parts.append('<h2 id="configuration">Configuration in force</h2>')
    parts.append("<h3>Sensors and calibration records</h3>")
    parts.append(tab("sensors"))
    parts.append("<h3>Channels and wiring</h3>")
    parts.append(tab("wiring"))
    parts.append("<h3>Instruments</h3>")
    parts.append(tab("instruments"))
    parts.append("<h3>Alarm rules</h3>")
    parts.append(tab("alarm_rules"))
    parts.append(f"<details><summary>The configuration text recorded with the run</summary><pre>{_e(config_text)}</pre>"
                 "</details>")

    parts.append('<h2 id="methods">How it is measured</h2>')
    parts.append(_METHODS)
    doc = "".join(parts)
    title = f"soaklog report: {run['station'] or ''} run {run['id']}"
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
            f'<meta name="viewport" content="width=device-width, initial-scale=1"><title>{_e(title)}</title>'
            f"<style>{_CSS}</style></head><body><main>{doc}</main></body></html>\n")


_METHODS = """
<ul>
<li><b>Buckets.</b> Each channel is reduced to buckets on one time grid: the lowest, highest and mean reading of each.
A bucket is within tolerance only if its lowest and highest reading both are, so a time within tolerance is never
overstated.</li>
<li><b>Cycles.</b> The mean of the sample channels is followed with a hysteresis at 10 % and 90 % of the span between
the extremes: cycle <i>k</i> is the <i>k</i>-th time it reaches the 90 % level and the stay at the low extreme after
it. A cycle is complete when both its dwells ended.</li>
<li><b>Dwell time within tolerance.</b> The total time every sample channel was within the band at once (the soak
time of JEDEC JESD22-A104, from memory of its definition).</li>
<li><b>Ramp rate.</b> 80 % of the span over the time from the 10 % to the 90 % crossing, each crossing interpolated
between buckets; per channel and for the mean. The rate over a window is the change over the window divided by it
(IEC 60068-2-2 and 60068-2-14 average over at most 5 min, from memory).</li>
<li><b>Deviations.</b> An excursion out of the band after a channel had reached it; a dwell or soak shorter than
required; no readings from a sample channel while at temperature; a ramp rate outside its tolerance; a rate of change
above its limit; a slow transition. Each is listed with its time; the first excursions are timed again from the raw
readings.</li>
<li><b>Chamber performance</b> (the quantities of IEC 60068-3-5, from memory of its definitions) over a stable period:
<i>deviation</i> = mean of a point minus the set point (and the mean of all points minus the set point);
<i>fluctuation</i> = highest minus lowest reading of a point; <i>spatial variation</i> = highest minus lowest point
mean; the largest spread between points at one moment; each point's <i>drift</i> (least-squares slope).
<i>Stable</i>: every point within ± the band over the window before. The uncertainty of the condition combines the
measuring uncertainty with the fluctuation and the spatial variation taken as rectangular (the approach of
IEC 60068-3-11, from memory).</li>
<li><b>Decision.</b> Measured values are compared with the tolerance as they are; the uncertainty of each channel is
stated beside them, not subtracted or added.</li>
<li><b>Alarm rates</b> against EEMUA 191 and ANSI/ISA-18.2 benchmarks, quoted from memory.</li>
</ul>
<p class="note">Software alarms are not a safety device: every chamber needs its own independent over-temperature
protection.</p>
"""
