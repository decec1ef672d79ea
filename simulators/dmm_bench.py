"""How many simple queries per second the simulated meter answers over loopback, through pyvisa-py.

``bench_dmm()`` times ``*IDN?`` round trips from a pyvisa-py session to a
``DmmSimulator`` in the same process, and the same round trips over a bare
socket as a baseline measured in the same run, so the figure can be read as
a ratio on any machine. Run it with ``python -m simulators.dmm_bench``.
"""

from __future__ import annotations

import json
import socket
import time

import pyvisa

from soaklog.simulators.dmm import DmmSimulator
from soaklog.simulators.plant import FixedPlant

__all__ = ["TARGET_QUERIES_PER_S", "bench_dmm"]

#: what a logger polling many meters needs from the simulator with room to spare
TARGET_QUERIES_PER_S = 2000.0


def _raw_socket_rate(address: tuple[str, int], n: int) -> float:
    with socket.create_connection(address, timeout=5.0) as sock:
        sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
        reader = sock.makefile("rb")
        started = time.perf_counter()
        for _ in range(n):
            sock.sendall(b"*IDN?\n")
            if not reader.readline():
                raise ConnectionError("the simulator closed the baseline connection")
        elapsed_s = time.perf_counter() - started
        reader.close()
    return n / elapsed_s


def bench_dmm(n: int = 5000, *, warmup: int = 200) -> dict[str, float | int | bool]:
    """Time ``n`` ``*IDN?`` round trips through pyvisa-py and over a bare socket.

    Returns:
        ``queries``, ``seconds``, ``queries_per_s`` (pyvisa-py),
        ``raw_socket_queries_per_s`` (the baseline), ``ratio_vs_raw_socket``,
        ``target_queries_per_s`` and ``meets_target``.
    """
    if n < 1:
        raise ValueError(f"n must be at least 1 query, not {n}")
    plant = FixedPlant({"r": 100.0})
    rm = pyvisa.ResourceManager("@py")
    with DmmSimulator(plant, {101: "r"}, time_scale=0.0) as sim:
        inst = rm.open_resource(sim.resource, read_termination="\n", write_termination="\n", timeout=5000)
        try:
            identity = sim.identity
            for _ in range(warmup):
                inst.query("*IDN?")
            started = time.perf_counter()
            for _ in range(n):
                if inst.query("*IDN?") != identity:  # pragma: no cover - a broken simulator
                    raise RuntimeError("the simulator answered *IDN? wrongly during the benchmark")
            seconds = time.perf_counter() - started
        finally:
            # only the session: pyvisa shares one resource manager per backend,
            # and closing it would close every other session of the process
            inst.close()
        raw_rate = _raw_socket_rate(sim.address, n)
    rate = n / seconds
    return {
        "queries": n,
        "seconds": seconds,
        "queries_per_s": rate,
        "raw_socket_queries_per_s": raw_rate,
        "ratio_vs_raw_socket": rate / raw_rate,
        "target_queries_per_s": TARGET_QUERIES_PER_S,
        "meets_target": rate >= TARGET_QUERIES_PER_S,
    }


if __name__ == "__main__":
    print(json.dumps(bench_dmm(), indent=2))
