"""The command line's start-up figures for ``soaklog bench``: wall time and peak memory, beside a bare interpreter.

Every figure is a fresh process of the interpreter that runs the benchmark
(``python -m soaklog …``, what the ``soaklog`` script runs), timed from its
launch, with its peak resident memory (``ru_maxrss`` from ``wait4``, forked
from a small launcher process; ``VmHWM`` for ``soaklog run``, read while it
runs). The baseline is ``python -c pass`` run the same
way, interleaved with the commands in the same rounds, so a busy machine slows
both; the median of the rounds is kept, and the ratio to the baseline is what
carries over to another machine.

The children get Python's bytecode cache, as a user's Python has it
(``PYTHONDONTWRITEBYTECODE`` is removed from their environment), and one
untimed run of each command comes first: it writes that cache and warms the
file cache, so the figures are those of the second and later starts, not of
the first after an install.
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

__all__ = ["bench_cli", "bench_run_first_reading", "bench_startup", "spawn"]

#: the commands timed to their end; ``run_imports`` is what ``soaklog run`` imports before it opens an instrument
_COMMANDS: dict[str, list[str]] = {
    "python": ["-c", "pass"],
    "version": ["-m", "soaklog", "--version"],
    "convert": ["-m", "soaklog", "convert", "100"],
    "run_imports": ["-c", "import soaklog.cli, soaklog.commands.run, soaklog.config, soaklog.service"],
}


def child_env() -> dict[str, str]:
    """The environment of the timed processes: this one, with Python's bytecode cache allowed."""
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    return env


#: runs each command line it is given in a fresh child, as a small process of its own: a child's peak memory
#: (``ru_maxrss``) counts the memory of the process it was forked from, so the benchmark's own (hundreds
#: of MB after its other figures) must not be that process
_LAUNCHER = r"""
import json, os, sys, time
out = []
for argv in json.loads(sys.stdin.read()):
    t0 = time.perf_counter()
    pid = os.fork()
    if pid == 0:
        try:
            fd = os.open(os.devnull, os.O_RDWR)
            for k in (0, 1, 2):
                os.dup2(fd, k)
            os.execv(argv[0], argv)
        finally:
            os._exit(127)
    _, status, usage = os.wait4(pid, 0)
    out.append([time.perf_counter() - t0, usage.ru_maxrss, os.waitstatus_to_exitcode(status)])
print(json.dumps(out))
"""


def spawn(runs: list[list[str]], *, env: dict[str, str] | None = None,
          timeout_s: float = 600.0) -> list[tuple[float, float]]:
    """Run each ``python ARGS`` of ``runs`` to its end, one after another: (wall seconds from launch, peak MB).

    A command that fails raises: a figure of a failing command means nothing.
    """
    argvs = [[sys.executable, *args] for args in runs]
    # -S: the launcher needs no site packages, which keeps it smaller than any child it measures
    p = subprocess.run([sys.executable, "-S", "-c", _LAUNCHER], input=json.dumps(argvs), capture_output=True,
                       text=True, env=env, timeout=timeout_s, check=False)
    if p.returncode != 0:
        raise RuntimeError(f"the start-up launcher failed: {p.stderr.strip()[-500:]}")
    out = []
    for args, (wall_s, maxrss_kb, status) in zip(runs, json.loads(p.stdout), strict=True):
        if status != 0:
            raise RuntimeError(f"python {' '.join(args)} exited with status {status}")
        out.append((float(wall_s), maxrss_kb / 1024.0))  # Linux reports kB
    return out


def bench_startup(rounds: int = 7) -> dict[str, Any]:
    """Medians of ``rounds`` starts of each command, interleaved with the bare interpreter."""
    keys = list(_COMMANDS)
    # first, each once untimed: writes the bytecode cache, warms the file cache
    schedule = [_COMMANDS[k] for k in keys] * (rounds + 1)
    results = spawn(schedule, env=child_env())[len(keys):]
    walls: dict[str, list[float]] = {k: [] for k in keys}
    peaks: dict[str, list[float]] = {k: [] for k in keys}
    for i, (wall_s, peak_mb) in enumerate(results):
        walls[keys[i % len(keys)]].append(wall_s)
        peaks[keys[i % len(keys)]].append(peak_mb)
    out: dict[str, Any] = {"cli_rounds": rounds}
    for key in keys:
        out[f"cli_{key}_s"] = statistics.median(walls[key])
        out[f"cli_{key}_max_rss_mb"] = statistics.median(peaks[key])
    for key in ("version", "convert", "run_imports"):
        out[f"cli_{key}_ratio_vs_python"] = out[f"cli_{key}_s"] / out["cli_python_s"]
        out[f"cli_{key}_rss_ratio_vs_python"] = out[f"cli_{key}_max_rss_mb"] / out["cli_python_max_rss_mb"]
    return out


def _has_reading(db: Path) -> bool:
    """Whether the file has a stored reading (read as any viewer reads it: read-only, through the store)."""
    from soaklog.errors import StorageError
    from soaklog.store import StoreReader

    if not db.exists():
        return False
    try:
        with StoreReader.open(db, timeout_s=0.5) as store:
            return store.time_span(store.run().id)[0] is not None
    except StorageError:  # its schema or its run not written yet
        return False


def _peak_mb(pid: int) -> float:
    """Peak resident memory so far of a running process (``VmHWM``), MB."""
    with open(f"/proc/{pid}/status", encoding="ascii") as fh:
        for line in fh:
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024.0
    return float("nan")


def bench_run_first_reading(repeats: int = 3, timeout_s: float = 60.0) -> dict[str, Any]:
    """``soaklog run`` on the simulated lab (the demo's station, in real time): launch to the first stored reading.

    The simulators run in this process; each start logs to a new file, and is
    stopped with SIGTERM once its first reading is in the file. The first
    start is untimed (bytecode cache, file cache). The service commits once
    per commit interval, so the figure is start-up plus the instruments' first
    scan plus at most one commit interval.
    """
    from soaklog.demo import build_demo_config
    from soaklog.simulators.lab import Lab

    env = child_env()
    walls: list[float] = []
    peaks: list[float] = []
    commit_s = None
    with tempfile.TemporaryDirectory(prefix="soaklog-bench-run-") as tmp:
        link = str(Path(tmp) / "board")
        with Lab(speed=1.0, board_link=link, control_port=None) as lab:
            addr = lab.addresses()
            for k in range(repeats + 1):
                db = Path(tmp) / f"run{k}.db"
                station = Path(tmp) / f"run{k}.toml"
                cfg = build_demo_config(addr.meter_resource or "", link, str(db), where=str(station),
                                        supply_resource=addr.supply_resource)
                commit_s = cfg.commit_interval_s
                station.write_text(cfg.text, encoding="utf-8")
                t0 = time.perf_counter()
                p = subprocess.Popen([sys.executable, "-m", "soaklog", "run", str(station)], stdin=subprocess.DEVNULL,
                                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env)
                try:
                    while not _has_reading(db):
                        if p.poll() is not None:
                            raise RuntimeError(f"soaklog run exited with status {p.returncode} before a reading")
                        if time.perf_counter() - t0 > timeout_s:
                            raise RuntimeError(f"soaklog run stored no reading within {timeout_s:g} s")
                        time.sleep(0.01)
                    wall_s = time.perf_counter() - t0
                    peak_mb = _peak_mb(p.pid)
                finally:
                    p.terminate()
                    p.wait(timeout=60)
                if k:
                    walls.append(wall_s)
                    peaks.append(peak_mb)
    return {
        "cli_run_first_reading_s": statistics.median(walls),
        "cli_run_first_reading_max_rss_mb": statistics.median(peaks),
        "cli_run_commit_interval_s": commit_s,
        "cli_run_repeats": repeats,
    }


def bench_cli(*, quick: bool = False) -> dict[str, Any]:
    """Every start-up figure, each beside ``python -c pass`` of the same run."""
    out = bench_startup(rounds=3 if quick else 7)
    out.update(bench_run_first_reading(repeats=2 if quick else 3))
    out["cli_run_first_reading_ratio_vs_python"] = out["cli_run_first_reading_s"] / out["cli_python_s"]
    out["cli_run_first_reading_rss_ratio_vs_python"] = (
        out["cli_run_first_reading_max_rss_mb"] / out["cli_python_max_rss_mb"])
    return out


if __name__ == "__main__":
    print(json.dumps(bench_cli(quick="--quick" in sys.argv[1:]), indent=2))
