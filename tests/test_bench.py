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


def test_bench_json_has_every_contract_key():
    p = subprocess.run(
        [sys.executable, "-m", "soaklog", "bench", "--quick", "--json"],
        capture_output=True, text=True, timeout=300,
    )
    assert p.returncode == 0, p.stderr
    result = json.loads(p.stdout)
    for key in CONTRACT_KEYS:
        assert key in result
    assert result["convert_values_per_s"] > 0 and math.isfinite(result["convert_ratio_vs_numpy"])
    # a key is either measured in this run or listed as not measured, never silently missing
    for key in CONTRACT_KEYS:
        assert (result[key] is None) == (key in result["not_measured"])
