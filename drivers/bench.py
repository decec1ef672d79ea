"""What the SCPI meter driver costs per reading above a bare pyvisa query, measured against the simulator.

``bench_driver_overhead()`` starts a simulated meter on loopback (no
integration time, no noise) in a child process, so that its threads do not
compete with the client for the interpreter lock, opens one ``ScpiMeter`` and
one bare pyvisa-py session to it, and times, in short interleaved blocks whose
order rotates (drift of a shared machine hits all alike; the figures are
medians over the blocks):

- the bare query the driver's read rests on (``READ?``),
- the same with the reply split and converted by ``float`` (the least a caller does),
- the bare query of the message the driver really sends (``READ?;*ESR?``),
- ``ScpiMeter.read_scan()`` (query, socket check, parsing, ``RawReading``s).

Run it with ``python -m drivers.bench``.
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager

import pyvisa

from soaklog.drivers.scpi_meter import ScpiMeter

__all__ = ["TARGET_OVERHEAD", "bench_driver_overhead"]

#: the driver may cost at most this much more per reading than the bare query
TARGET_OVERHEAD = 0.20


# the child: a noiseless meter with N channels, serving until its stdin closes
_SERVE = """
import sys
from soaklog.simulators.dmm import DmmSimulator
from soaklog.simulators.plant import FixedPlant
names = {101 + i: f"r{i:02d}" for i in range(int(sys.argv[1]))}
plant = FixedPlant({name: 100.0 + i for i, name in enumerate(names.values())})
with DmmSimulator(plant, names, time_scale=0.0, noise_scale=0.0) as sim:
    print(sim.resource, flush=True)
    sys.stdin.read()
"""


@contextmanager
def _simulator(channels: int) -> Iterator[str]:
    """A simulated meter in a child process; yields its resource string."""
    with subprocess.Popen(
        [sys.executable, "-c", _SERVE, str(channels)], stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True
    ) as proc:
        assert proc.stdin is not None and proc.stdout is not None
        try:
            resource = proc.stdout.readline().strip()
            if not resource.startswith("TCPIP"):
                raise RuntimeError(f"the simulator did not start: it printed {resource!r}")
            yield resource
        finally:
            proc.stdin.close()
            try:
                proc.wait(timeout=10.0)
            except subprocess.TimeoutExpired:
                proc.kill()


def _time_block(fn: Callable[[], object], n: int) -> float:
    started = time.perf_counter()
    for _ in range(n):
        fn()
    return time.perf_counter() - started


def bench_driver_overhead(*, channels: int = 20, scans: int = 1000, rounds: int = 20) -> dict[str, float | int | bool]:
    """Per-reading time of the driver and of bare pyvisa queries against the same simulator, same run.

    Args:
        channels: channels per scan (one reply carries them all).
        scans: scans timed for each of the three ways, spread over ``rounds`` blocks.
        rounds: interleaved blocks per way.

    Returns:
        ``channels``, ``scans``, ``bare_us_per_reading`` (``READ?``),
        ``bare_floats_us_per_reading`` (``READ?`` split into floats),
        ``bare_same_message_us_per_reading`` (``READ?;*ESR?``),
        ``driver_us_per_reading`` (medians over the blocks),
        ``driver_added_us_per_reading`` (driver − bare), ``overhead_vs_bare``
        (the median over blocks of driver / bare − 1), ``overhead_vs_same_message``,
        ``overhead_vs_floats``,
        ``target_overhead`` and ``meets_target`` (judged against the bare ``READ?``).
    """
    if channels < 1 or scans < rounds or rounds < 1:
        raise ValueError(f"need channels >= 1 and scans >= rounds >= 1, got {channels}, {scans}, {rounds}")
    per_round = scans // rounds
    with _simulator(channels) as resource:
        meter = ScpiMeter("bench", resource, [str(101 + i) for i in range(channels)], timeout_s=5.0)
        rm = pyvisa.ResourceManager("@py")
        bare = rm.open_resource(resource, read_termination="\n", write_termination="\n", timeout=5000)
        try:
            meter.open()  # configures the meter; the bare session reads the same scan
            message = f"{meter.profile.read};{meter.profile.event_status}"

            def driver_scan() -> None:
                if not meter.read_scan()[0].ok:  # pragma: no cover - a broken run
                    raise RuntimeError(f"the driver failed during the benchmark: {meter.health()['last_error']}")

            ways: dict[str, Callable[[], object]] = {
                "bare": lambda: bare.query("READ?"),
                "floats": lambda: [float(v) for v in bare.query("READ?").split(",")],
                "same": lambda: bare.query(message),
                "driver": driver_scan,
            }
            for fn in ways.values():  # warm up each path
                _time_block(fn, max(per_round // 10, 5))
            per_block: dict[str, list[float]] = {key: [] for key in ways}
            order = list(ways)
            for i in range(rounds):
                for key in order[i % len(order) :] + order[: i % len(order)]:
                    per_block[key].append(_time_block(ways[key], per_round) / (per_round * channels))
        finally:
            # the session only: pyvisa shares one manager per backend with the process
            bare.close()
            meter.close()
    us = {key: 1e6 * statistics.median(times) for key, times in per_block.items()}

    def overhead(key: str) -> float:
        return statistics.median(d / b for d, b in zip(per_block["driver"], per_block[key], strict=True)) - 1.0

    return {
        "channels": channels,
        "scans": per_round * rounds,
        "bare_us_per_reading": us["bare"],
        "bare_floats_us_per_reading": us["floats"],
        "bare_same_message_us_per_reading": us["same"],
        "driver_us_per_reading": us["driver"],
        "driver_added_us_per_reading": us["driver"] - us["bare"],
        "overhead_vs_bare": overhead("bare"),
        "overhead_vs_same_message": overhead("same"),
        "overhead_vs_floats": overhead("floats"),
        "target_overhead": TARGET_OVERHEAD,
        "meets_target": overhead("bare") < TARGET_OVERHEAD,
    }


if __name__ == "__main__":
    figures = {"20 channels": bench_driver_overhead(), "1 channel": bench_driver_overhead(channels=1, scans=4000)}
    print(json.dumps(figures, indent=2))
