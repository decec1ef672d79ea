"""What the alarm commands run: ``soaklog ack`` and ``soaklog check --test-actions``, and the alarm latency figure.

``soaklog ack`` never touches an alarm itself: it writes a request into the
store's operator actions table, which the running logger applies and records
(DESIGN.md: the service is the only writer of alarm states), and waits for the
outcome. Its parser is :mod:`soaklog.commands.ack`, and it runs (and its
errors are reported) through ``soaklog.cli.main``, like every command.
"""

from __future__ import annotations

import argparse
import getpass
import logging
import socket
import statistics
import sys
import time
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING, Any

from soaklog.cliargs import db_path
from soaklog.errors import InputError

if TYPE_CHECKING:  # the config (and numpy with it) loads only where a command needs it
    from soaklog.config import StationConfig
    from soaklog.store import AlarmRow

__all__ = ["cmd_ack", "test_actions", "bench_alarm_latency", "ACTIONS_CAUTION"]

#: states in which an alarm waits for an acknowledgement
_WAITING = ("unacknowledged", "returned_unacknowledged", "latched")

ACTIONS_CAUTION = (
    "Interlock actions are a second line, best effort: they are not a safety device. Every chamber needs its "
    "own independent over-temperature protection (IEC 61010-2-010 for laboratory heating equipment), set and "
    "tested per its maker's manual; local codes and qualified people decide."
)


# ---------------------------------------------------------------- soaklog ack


def _matches(alarms: Sequence[AlarmRow], target: str) -> list[AlarmRow]:
    if target in ("", "*"):
        return list(alarms)
    return [a for a in alarms if a.id == target or a.rule == target]


def cmd_ack(args: argparse.Namespace) -> int:
    """``soaklog ack``: queue the acknowledgement, wait for the logger's outcome, print it."""
    from soaklog.store import StoreReader, StoreWriter

    if args.all and args.alarm and not args.config:
        args.config, args.alarm = args.alarm, None  # `ack --all CONFIG`
    if args.all and args.alarm:
        raise InputError("give an ALARM or --all, not both")
    if not args.all and not args.alarm:
        raise InputError("name the ALARM to acknowledge (see soaklog status), or give --all")
    if args.wait < 0:
        raise InputError(f"--wait must not be negative, got {args.wait!r}")
    path = db_path(args)
    target = "*" if args.all else str(args.alarm)
    with StoreReader.open(path) as store:
        run = store.run()
        alarms = store.alarms(run.id)
    named = _matches(alarms, target)
    if not named and not args.all:
        known = ", ".join(a.id for a in alarms[:10]) or "none"
        raise InputError(f"no alarm {target!r} in run {run.id} of {path}; known: {known}")
    waiting = [a for a in named if a.state in _WAITING]
    if not waiting:
        print(f"soaklog ack: nothing waits for an acknowledgement in {target if target != '*' else 'run ' + str(run.id)}")
        return 0
    actor = args.actor or f"{getpass.getuser()}@{socket.gethostname()}"
    with StoreWriter.open(path) as store:
        req = store.add_operator_action("acknowledge", target=target, note=args.note, actor=actor,
                                        now_ms=int(time.time() * 1000))
    print(f"soaklog ack: request {req} queued for {', '.join(a.id for a in waiting)}")
    if args.wait == 0:
        return 0
    deadline = time.monotonic() + args.wait
    while time.monotonic() < deadline:
        with StoreReader.open(path) as store:
            row = next((r for r in store.operator_actions(after_id=req - 1, limit=1) if r.id == req), None)
        if row is not None and row.applied_ms is not None:
            print(f"soaklog ack: {row.outcome}")
            return 0 if str(row.outcome).startswith("applied") else 1
        time.sleep(0.1)
    print(f"soaklog ack: no logger applied request {req} within {args.wait:g} s: is the logger running on {path}? "
          "A logger that starts within a minute applies it; later it is recorded as not applied.", file=sys.stderr)
    return 1


# ---------------------------------------------------------------- soaklog check --test-actions


def test_actions(cfg: StationConfig, *, out: Callable[[str], None] = print) -> int:
    """Fire every configured action once, as if its alarm had been raised; 0 if every one was done.

    Nothing is stored: this proves the wiring (a program found and runnable,
    an instrument that answers, a serial port that carries its control line)
    before a run.
    """
    from soaklog.actions import ActionRunner

    todo = [(a, act) for a in cfg.alarms for act in a.actions]
    if not todo:
        out("test actions: no alarm of this station has an action")
        return 0
    out(f"test actions: firing {len(todo)} action{'s' if len(todo) != 1 else ''} once each, as if the alarm had "
        "been raised. An interlock WILL act: a supply switches off, a relay drops.")
    out("  " + ACTIONS_CAUTION)
    runner = ActionRunner({}, station=cfg.station)
    now = time.time()
    for a, act in todo:
        runner.submit(act, {
            "event": "test", "alarm": f"{a.name}:test", "rule": a.name, "source": "test", "channel": "",
            "t_s": f"{now:.3f}", "state_before": "normal", "state": "unacknowledged", "severity": a.severity,
            "message": "soaklog check --test-actions: a test of the wiring, not an alarm", "value": "",
            "note": "", "actor": "", "t_utc": "",
        })
    longest = max(float(act.params.get("timeout_s", 5.0)) for _, act in todo)
    runner.wait_idle(longest * len(todo) + 10.0)
    outcomes = runner.outcomes()
    runner.close()
    bad = 0
    for o in outcomes:
        word = {"done": "ok  ", "failed": "FAIL", "timed_out": "TIME"}[o.outcome]
        bad += o.outcome != "done"
        out(f"  {word} {o.fields.get('rule', '')}: {o.action}" + (f": {o.detail}" if o.detail else ""))
    missing = len(todo) - len(outcomes)
    if missing:
        out(f"  FAIL {missing} action(s) did not finish in time")
    out(f"test actions: {len(outcomes) - bad} of {len(todo)} done")
    return 0 if bad == 0 and not missing else 1


test_actions.__test__ = False  # type: ignore[attr-defined]  # a command, not a pytest test


# ---------------------------------------------------------------- the latency figure


def bench_alarm_latency(repeats: int = 6, interval_s: float = 1.0, wall_limit_s: float = 60.0) -> dict[str, Any]:
    """Alarm latency: from the first faulty reading to its action starting, in real time against the simulated lab.

    A sensor-fault alarm (no on-delay) with an SCPI action to the simulated
    heater supply watches one meter channel scanned every ``interval_s``; the
    channel is opened and closed ``repeats`` times. Each latency is the action's
    start minus the time stamp of the reading that raised the alarm. The issue's
    bound is one scan interval plus 100 ms.
    """
    import tempfile
    from pathlib import Path

    from soaklog.clock import SystemClock
    from soaklog.config import parse_config
    from soaklog.service import Service
    from soaklog.store import StoreReader
    from soaklog.simulators.lab import Lab

    latencies: list[float] = []
    injected: list[float] = []  # when each fault was made (service UTC)
    starts: list[float] = []
    quiet = logging.getLogger("soaklog.alarms")
    level = quiet.level
    quiet.setLevel(logging.ERROR)
    with tempfile.TemporaryDirectory(prefix="soaklog-latency-") as tmp, \
            Lab(speed=1.0, board=False, control_port=None) as lab:
        addr = lab.addresses()
        db = Path(tmp) / "latency.db"
        text = (
            f'[station]\nname = "latency"\ndatabase = "{db.as_posix()}"\n'
            f'[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "{addr.meter_resource}"\n'
            f'interval = "{interval_s:g}s"\ntimeout = "2s"\nrange_ohm = 1000.0\n'
            '[[sensor]]\nname = "pt100"\nclass = "A"\n'
            '[[channel]]\nname = "air-supply"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n'
            '[[alarm]]\nname = "open"\nkind = "sensor_fault"\nchannel = "air-supply"\noff_delay = "0s"\n'
            f'[[alarm.actions]]\nkind = "scpi"\nresource = "{addr.supply_resource}"\ncommands = ["*IDN?"]\n'
        )
        cfg = parse_config(text, str(Path(tmp) / "latency.toml"))
        svc = Service(cfg, clock=SystemClock(), new_run=True)
        run_id = svc.start()
        deadline = time.monotonic() + wall_limit_s
        try:
            for _ in range(repeats):
                raised, done = _count(cfg.database, run_id, "alarm_raised"), _count(cfg.database, run_id, "action_done")
                injected.append(svc.clock.utc_s())
                lab.world.set_fault("air-supply", "open")
                if not (_wait_count(cfg.database, run_id, "alarm_raised", raised + 1, deadline)
                        and _wait_count(cfg.database, run_id, "action_done", done + 1, deadline)):
                    break
                cleared = _count(cfg.database, run_id, "alarm_cleared")
                lab.world.clear("air-supply")
                if not _wait_count(cfg.database, run_id, "alarm_cleared", cleared + 1, deadline):
                    break
        finally:
            svc.stop()
            quiet.setLevel(level)
        with StoreReader.open(cfg.database) as store:
            done = [e.data or {} for e in store.events(run_id) if e.kind == "action_done"]
        latencies = [float(d["latency_s"]) for d in done]
        starts = [_utc_s(d["started_utc"]) for d in done]
    fault_to_action = [s - i for s, i in zip(starts, injected, strict=False)]
    bound = interval_s + 0.1
    return {
        "alarm_latency_median_s": statistics.median(latencies) if latencies else None,
        "alarm_latency_max_s": max(latencies) if latencies else None,
        "alarm_latency_n": len(latencies),
        # from the moment the sensor went open (before the scan that saw it) to the action starting
        "fault_to_action_max_s": max(fault_to_action) if fault_to_action else None,
        "scan_interval_s": interval_s,
        "alarm_latency_bound_s": bound,
        "alarm_latency_within_bound": bool(fault_to_action) and max(fault_to_action) <= bound,
    }


def _utc_s(iso: str) -> float:
    import datetime as dt

    return dt.datetime.fromisoformat(iso.replace("Z", "+00:00")).timestamp()


def _count(database: str, run_id: int, kind: str) -> int:
    from soaklog.store import StoreReader

    with StoreReader.open(database) as store:
        return sum(1 for e in store.events(run_id) if e.kind == kind)


def _wait_count(database: str, run_id: int, kind: str, count: int, deadline: float) -> bool:
    while time.monotonic() < deadline:
        if _count(database, run_id, kind) >= count:
            return True
        time.sleep(0.05)
    return False
