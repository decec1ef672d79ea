"""`soaklog report`: read a run, analyse it against its profile, write HTML, JSON, CSV and PNG files.

The one summary dictionary built here is the source of everything written:
the JSON file is that dictionary, each CSV file one of its tables, and the
HTML page renders the same tables, so the three always agree.
"""

from __future__ import annotations

import csv
import json
import time
import tomllib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from soaklog import __version__
from soaklog.errors import InputError
from soaklog.report import plots
from soaklog.report.alarmlog import alarm_episodes, alarm_rates
from soaklog.report.conformance import Conformance, analyse
from soaklog.report.data import RunData, load_run
from soaklog.report.performance import Performance
from soaklog.profile import Profile, parse_profile, profile_channels
from soaklog.kinds.profiles.cycle import CycleProfile
from soaklog.report.render import render_html
from soaklog.report.tables import (
    MAX_REFINED,
    TABLE_COLUMNS,
    alarm_tables,
    channel_rows,
    config_tables,
    conformance_tables,
    gap_rows,
    num,
    performance_periods,
    performance_summary,
    performance_tables,
    rates_summary,
    refine_deviations,
    u_at_test,
    utc,
)
from soaklog.store import StoreReader, iso_utc

__all__ = ["TABLE_COLUMNS", "ReportResult", "load_profile_file", "make_report"]

Progress = Callable[[int, int, str], None]

PLOTS = ("overview", "cycles", "spread", "by_cycle", "closeups")


@dataclass(frozen=True)
class ReportResult:
    """What ``make_report`` wrote, and the summary it wrote from."""

    html: Path
    json: Path
    csv: tuple[Path, ...]
    png: tuple[Path, ...]
    summary: Mapping[str, Any]
    elapsed_s: float


def load_profile_file(path: str | Path) -> Profile:
    """A profile from a TOML file: a ``[profile]`` table, or the keys at the top level.

    Raises:
        InputError: the file is missing or not TOML, or the profile is wrong (by key).
    """
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"no profile file at {p}") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the profile file {p}: {exc}") from exc
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"the profile file {p} is not valid TOML: {exc}") from exc
    table = data.get("profile", data) if isinstance(data.get("profile"), dict) else data
    return parse_profile(table, where=str(p))


def _run_profile(run: RunData) -> Profile | None:
    table = run.config_table.get("profile")
    if not table:
        return None
    return parse_profile(table, where=f"[profile] of run {run.run_id}'s configuration")


# ---------------------------------------------------------------- writing


def _cell(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        return repr(v)
    return str(v)


def _write_csv(path: Path, columns: Sequence[str], rows: Sequence[Mapping[str, Any]]) -> None:
    with path.open("w", encoding="utf-8", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(columns)
        for r in rows:
            w.writerow([_cell(r.get(c)) for c in columns])


def _write_json(path: Path, summary: Mapping[str, Any]) -> None:
    """The summary as JSON, a table row per line: streamed, so a long run's tables never become one string."""
    def enc(v: Any) -> str:
        return json.dumps(v, ensure_ascii=False, allow_nan=False)

    with path.open("w", encoding="utf-8") as fh:
        fh.write("{\n")
        keys = list(summary)
        for i, key in enumerate(keys):
            fh.write(f" {enc(key)}: ")
            if key == "tables":
                fh.write("{\n")
                names = list(summary["tables"])
                for j, name in enumerate(names):
                    fh.write(f"  {enc(name)}: [")
                    rows = summary["tables"][name]
                    for k, row in enumerate(rows):
                        fh.write(("\n   " if k == 0 else ",\n   ") + enc(row))
                    fh.write(("\n  ]" if rows else "]") + (",\n" if j + 1 < len(names) else "\n"))
                fh.write(" }")
            else:
                fh.write(json.dumps(summary[key], ensure_ascii=False, allow_nan=False, indent=1).replace("\n", "\n "))
            fh.write(",\n" if i + 1 < len(keys) else "\n")
        fh.write("}\n")


def make_report(
    db_path: str | Path,
    *,
    run_id: int | None = None,
    profile: Profile | str | Path | None = None,
    out_dir: str | Path,
    progress: Progress | None = None,
    source: str = "auto",
) -> ReportResult:
    """Write the report of one run: an HTML page, a JSON summary, CSV tables and the PNG plots.

    Args:
        db_path: the station's database.
        run_id: the run (default: the newest).
        profile: a parsed profile, a TOML file with one, or None for the
            ``[profile]`` of the run's own configuration (none there: no
            conformance section).
        out_dir: where to write (created if missing).
        progress: called as ``progress(done, total, stage)``.
        source: "auto", "raw" or "rollup": where the buckets come from.

    Returns:
        The paths written and the summary.

    Raises:
        StorageError: no database or no such run.
        InputError: a bad profile, or sample channels the run does not have.
    """
    started = time.perf_counter()
    out = Path(out_dir)
    with StoreReader.open(db_path) as store:
        n_ch = len(store.channels(store.run(run_id).id))
        total = n_ch + 2 + len(PLOTS)
        step = [0]

        def tick(stage: str) -> None:
            step[0] += 1
            if progress is not None:
                progress(min(step[0], total), total, stage)

        run = load_run(store, run_id, source=source,
                       progress=None if progress is None else (lambda d, t, s: progress(d, total, s)))
        step[0] = n_ch
        if isinstance(profile, (str, Path)):
            prof: Profile | None = load_profile_file(profile)
            prof_source = str(profile)
        elif profile is None:
            prof = _run_profile(run)
            prof_source = "the run's configuration" if prof is not None else ""
        else:
            prof = profile
            prof_source = "given by the caller"
        sample: tuple[str, ...] = run.names
        chamber: tuple[str, ...] = run.names
        conf: Conformance | None = None
        perf: list[Performance] = []
        if prof is not None:
            sample, chamber = profile_channels(prof, run.names)
            if run.series.n:
                conf = analyse(run.series.columns(sample), prof)
                conf = refine_deviations(store, run, conf)
                perf = performance_periods(run, conf, prof, chamber)
        tables = config_tables(run, prof)
        tables["channels"] = channel_rows(run, sample, u_at_test(run, prof))
        tables["gaps"] = gap_rows(store, run)
        if conf is not None:
            tables.update(conformance_tables(conf))
        else:
            tables.update({"cycles": [], "dwells": [], "dwell_channels": [], "ramps": [], "deviations": []})
        tables.update(performance_tables(perf))
        episodes = alarm_episodes(run.events)
        first_s = (run.first_ms or 0) / 1000.0
        last_s = (run.last_ms or 0) / 1000.0
        rates = alarm_rates(episodes, first_s, last_s)
        tables.update(alarm_tables(run, episodes))
        tick("analysing")

        rid = run.run_id
        out.mkdir(parents=True, exist_ok=True)
        stem = f"report-run{rid}"
        images: dict[str, bytes] = {}
        s = run.series
        makers: dict[str, Callable[[], bytes | None]] = {
            "overview": lambda: plots.overview_png(s, conf) if s.n else None,
            "cycles": lambda: plots.cycle_overlay_png(s.columns(sample), conf) if conf is not None else None,
            "spread": lambda: plots.spread_png(s, sample, conf) if s.n and len(s.names) >= 2 else None,
            "by_cycle": lambda: plots.by_cycle_png(conf) if conf is not None else None,
            "closeups": lambda: plots.closeups_png(s, conf) if conf is not None else None,
        }
        png_paths = []
        for name in PLOTS:
            data = makers[name]()
            if data is not None:
                images[name] = data
                p = out / f"{stem}-{name}.png"
                p.write_bytes(data)
                png_paths.append(p)
            tick("plotting")

    summary: dict[str, Any] = {
        "report": {
            "software": f"soaklog {__version__}", "generated_utc": iso_utc(time.time() * 1000),
            "database": str(Path(db_path).resolve()), "data_source": s.source, "resolution_s": s.width_s,
        },
        "run": {
            "id": rid, "station": run.run.station, "name": run.run.name,
            "started_utc": run.run.started_utc, "ended_utc": run.run.ended_utc,
            "first_reading_utc": iso_utc(run.first_ms), "last_reading_utc": iso_utc(run.last_ms),
            "hours": num(((run.last_ms or 0) - (run.first_ms or 0)) / 3.6e6, 4),
            "config_sha256": run.run.config_sha256, "config_path": run.run.config_path,
            "software": run.run.software, "config_problem": run.config_problem or None,
            "channels": len(run.channels), "readings": sum(c.readings for c in run.channels),
        },
        "verdict": _verdict(conf, prof, prof_source),
        "performance": performance_summary(perf, prof, chamber) if prof is not None else None,
        "alarm_rates": rates_summary(rates, run),
        "notes": _notes(run, conf),
        "tables": tables,
        "plots": {name: f"{stem}-{name}.png" for name in images},
    }
    json_path = out / f"{stem}.json"
    _write_json(json_path, summary)
    csv_paths = []
    for name, cols in TABLE_COLUMNS.items():
        p = out / f"{stem}-{name}.csv"
        _write_csv(p, cols, tables.get(name, []))
        csv_paths.append(p)
    html_path = out / f"{stem}.html"
    html_path.write_text(render_html(summary, images, TABLE_COLUMNS, run.config_text), encoding="utf-8")
    if progress is not None:
        progress(total, total, "written")
    return ReportResult(html_path, json_path, tuple(csv_paths), tuple(png_paths), summary,
                        time.perf_counter() - started)


def _verdict(conf: Conformance | None, prof: Profile | None, source: str) -> dict[str, Any]:
    if prof is None or conf is None:
        return {
            "result": "no_profile" if prof is None else "no_data",
            "summary": ("no profile declared: add a [profile] table to the station file or give --profile, "
                        "and the report will judge the run against it") if prof is None
            else "no readings in this run",
            "profile": None if prof is None else prof.describe(), "profile_source": source or None,
        }
    kinds: dict[str, int] = {}
    for d in conf.deviations:
        kinds[d.kind] = kinds.get(d.kind, 0) + 1
    return {
        "result": conf.verdict, "summary": conf.summary, "profile": prof.describe(),
        "profile_name": prof.name or None, "profile_source": source, "kind": prof.kind,
        "sample_channels": list(conf.sample_channels), "complete_cycles": conf.complete_cycles,
        "planned_cycles": conf.planned_cycles if isinstance(prof, CycleProfile) else None,
        "deviations": conf.deviations_total, "deviations_listed": len(conf.deviations), "by_kind": kinds,
        "first_deviation_utc": utc(conf.deviations[0].start_s) if conf.deviations else None,
        "resolution_s": conf.resolution_s,
    }


def _notes(run: RunData, conf: Conformance | None) -> list[str]:
    notes = []
    s = run.series
    if s.source == "rollup":
        notes.append(
            "This run is long, so it was analysed from the store's one-minute rollups (lowest, highest and mean "
            "reading of every minute): times within tolerance count whole minutes only, and each channel's standard "
            "deviation is that of its minute means (noise within a minute is left out). The first "
            f"{MAX_REFINED} excursions were timed again from the raw readings."
        )
    else:
        notes.append(
            f"Analysed from the raw readings in buckets of {s.width_s:g} s (two scan intervals): times within "
            "tolerance count whole buckets in which every reading was within tolerance."
        )
    if run.config_problem:
        notes.append(run.config_problem)
    if conf is not None:
        notes.extend(conf.notes)
    return notes
