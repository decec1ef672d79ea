"""`soaklog bench --json` carries the contract keys (DESIGN.md); figures are not asserted here.

Speed is measured by the benchmark, never by a timed test (the machine's speed
is not the code's correctness); this only checks that the benchmark runs and
reports what the contract promises.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys

from soaklog.bench import CONTRACT_KEYS

#: the command line's start-up figures (soaklog.clibench): each command's wall time and peak memory, and both
#: as a ratio to a bare `python -c pass` measured in the same run
STARTUP = ("version", "convert", "run_first_reading", "run_imports")


def test_bench_json_has_every_contract_key():
    p = subprocess.run(
        [sys.executable, "-m", "soaklog", "bench", "--quick", "--json"],
        capture_output=True, text=True, timeout=600,
    )
    assert p.returncode == 0, p.stderr
    result = json.loads(p.stdout)
    for key in CONTRACT_KEYS:
        assert key in result
    assert result["convert_values_per_s"] > 0 and math.isfinite(result["convert_ratio_vs_numpy"])
    # a key is either measured in this run or listed as not measured, never silently missing
    for key in CONTRACT_KEYS:
        assert (result[key] is None) == (key in result["not_measured"])
    # the start-up figures: present, finite and positive, and each ratio is its figure over the baseline's
    base_s, base_mb = result["cli_python_s"], result["cli_python_max_rss_mb"]
    assert base_s > 0 and base_mb > 0
    for name in STARTUP:
        s, mb = result[f"cli_{name}_s"], result[f"cli_{name}_max_rss_mb"]
        assert math.isfinite(s) and s > 0 and math.isfinite(mb) and mb > 0, name
        assert math.isclose(result[f"cli_{name}_ratio_vs_python"], s / base_s), name
        assert math.isclose(result[f"cli_{name}_rss_ratio_vs_python"], mb / base_mb), name
    assert result["cli_rounds"] >= 3 and result["cli_run_repeats"] >= 2
    assert result["cli_run_commit_interval_s"] == 1.0  # the demo station's commit interval
    # the launcher's peak memory is not the children's: a bare interpreter is far below the benchmark's own
    assert base_mb < 40
    # launch to a stored reading includes the imports of the same commands (a run starts with them)
    assert result["cli_run_first_reading_s"] > result["cli_run_imports_s"]


def test_the_thermocouple_inverse_figure_is_measured_against_its_baseline() -> None:
    from soaklog.bench import bench_thermocouple

    r = bench_thermocouple(n=100_000, repeats=1)
    assert r["tc_inverse_values"] == 100_000
    assert r["tc_inverse_values_per_s"] > 0 and r["tc_inverse_ratio_vs_numpy"] > 0
