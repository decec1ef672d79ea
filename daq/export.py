"""`soaklog export`: a run's readings as CSV or JSON lines, streamed in bounded memory."""

from __future__ import annotations

import csv
import json
import sys
from collections.abc import Callable
from datetime import datetime
from typing import IO

from soaklog.errors import InputError
from soaklog.store import StoreReader, iso_utc

__all__ = ["export_run", "parse_time"]

CSV_HEADER = ["t_utc", "t_ms", "channel", "raw", "raw_unit", "temperature_c", "uncertainty_c_k2", "status", "flags"]


def parse_time(text: str) -> int:
    """ISO 8601 (a Z or offset, or UTC when none) to milliseconds since the epoch."""
    t = text.strip()
    try:
        dt = datetime.fromisoformat(t.replace("Z", "+00:00"))
    except ValueError:
        raise InputError(f"{text!r} is not an ISO 8601 time (like 2026-12-01T08:00:00Z)") from None
    if dt.tzinfo is None:
        from datetime import UTC

        dt = dt.replace(tzinfo=UTC)
    return int(dt.timestamp() * 1000)


def export_run(
    store: StoreReader,
    out: IO[str],
    *,
    run_id: int | None = None,
    fmt: str = "csv",
    from_ms: int | None = None,
    to_ms: int | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> int:
    """Write the run's readings to ``out``; returns the number written."""
    run = store.run(run_id)
    first, last = store.time_span(run.id)
    span = None if first is None or last is None else ((from_ms or first), (to_ms or last))
    n = 0
    writer = csv.writer(out, lineterminator="\n") if fmt == "csv" else None
    if writer is not None:
        out.write(f"# soaklog export: run {run.id} {run.name} station {run.station}; times UTC (ISO 8601; "
                  "t_ms the same instant in ms since the Unix epoch); raw in raw_unit; temperature in degC; "
                  "uncertainty_c_k2 = expanded uncertainty, k = 2, in K (empty where withheld: see flags); "
                  "flags = the reading's flag names, comma-separated as in readings_v\n")
        writer.writerow(CSV_HEADER)
    for chunk in store.iter_readings(run.id, from_ms=from_ms, to_ms=to_ms):
        rows = zip(chunk.t_ms, chunk.channel, chunk.raw, chunk.raw_unit, chunk.temperature_c, chunk.uncertainty_c,
                   chunk.status, chunk.flags, strict=True)
        for t_ms, ch, raw, unit, temp, u, status, flags in rows:
            if writer is not None:
                writer.writerow([
                    iso_utc(t_ms), t_ms, ch, "" if raw is None else repr(raw), unit,
                    "" if temp is None else f"{temp:.6f}", "" if u is None else f"{u:.4f}", status,
                    ",".join(flags),
                ])
            else:
                out.write(json.dumps({
                    "t_utc": iso_utc(t_ms), "t_ms": t_ms, "channel": ch, "raw": raw, "raw_unit": unit,
                    "temperature_c": temp, "uncertainty_c": u, "status": status, "flags": flags,
                }) + "\n")
        n += len(chunk)
        if progress is not None and span is not None and len(chunk):
            progress(int(chunk.t_ms[-1]) - span[0], max(1, span[1] - span[0]))
    return n


def terminal_progress(stream: IO[str] = sys.stderr) -> Callable[[int, int], None]:
    """A one-line progress bar on a terminal (nothing when not a terminal)."""
    if not stream.isatty():
        return lambda done, total: None

    def show(done: int, total: int) -> None:
        frac = min(1.0, done / total)
        bar = "#" * int(frac * 30)
        stream.write(f"\rexporting [{bar:<30s}] {frac:5.1%}")
        stream.flush()
        if frac >= 1.0:
            stream.write("\n")

    return show
