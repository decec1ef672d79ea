"""Each command imports what it uses, and no more: which modules load, checked with ``python -X importtime``.

Speeds are the benchmark's business (``soaklog bench`` reports the start-up
figures); these tests check only *which* modules a command loads, which does
not depend on the machine. ``-X importtime`` writes one line per module the
interpreter imports, so a module that is absent from its output was not loaded.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

#: what a quick command must not pay for: the dashboard's and the report's libraries, instruments, the store
HEAVY = ("textual", "rich", "matplotlib", "pyvisa", "pyvisa_py", "serial", "sqlite_utils")

_LINE = re.compile(r"^import time:\s+\d+\s+\|\s+\d+\s+\|\s+(\S+)\s*$")


def imported(*argv: str, timeout_s: float = 60.0) -> tuple[set[str], subprocess.CompletedProcess[str]]:
    """The modules ``python -X importtime ARGV`` loads (full dotted names), and the finished process."""
    p = subprocess.run([sys.executable, "-X", "importtime", *argv], capture_output=True, text=True,
                       timeout=timeout_s)
    names = {m.group(1) for line in p.stderr.splitlines() if (m := _LINE.match(line))}
    assert "soaklog" in names or argv[:1] == ("-c",), p.stderr[-2000:]  # the importtime lines were read
    return names, p


def roots(names: set[str]) -> set[str]:
    return {n.split(".", 1)[0] for n in names}


def test_the_parser_reads_importtime_lines():
    # the check itself can fail: a module that is loaded is seen
    names, p = imported("-c", "import json")
    assert p.returncode == 0 and "json" in names and "json.decoder" in names


@pytest.mark.parametrize("argv", [["--version"], ["convert", "--help"], ["--help"]])
def test_version_and_help_load_no_heavy_library_and_no_numpy(argv):
    names, p = imported("-m", "soaklog", *argv)
    assert p.returncode == 0, p.stderr[-2000:]
    assert "soaklog" in p.stdout
    loaded = roots(names) & {*HEAVY, "numpy"}
    assert not loaded, f"`soaklog {' '.join(argv)}` imports {sorted(loaded)}"


def test_building_the_parser_loads_only_the_standard_library_and_the_command_modules():
    # `--help` builds every command's parser: a command module's top level imports the standard library only
    names, p = imported("-m", "soaklog", "--help")
    assert p.returncode == 0
    ours = {n for n in names if n.split(".", 1)[0] == "soaklog"}
    allowed = {"soaklog", "soaklog.__main__", "soaklog.cli", "soaklog.cliargs", "soaklog.errors", "soaklog.commands"}
    extra = {n for n in ours if n not in allowed and not n.startswith("soaklog.commands.")}
    assert not extra, f"building the parser imports {sorted(extra)}"
    # anything else that loaded is the standard library (or the interpreter's start-up, present without soaklog)
    base, _ = imported("-c", "pass")
    foreign = {r for r in roots(names - base) if r not in sys.stdlib_module_names and r != "soaklog"}
    assert not foreign, f"building the parser imports {sorted(foreign)}"


def test_convert_loads_numpy_and_the_metrology_only():
    names, p = imported("-m", "soaklog", "convert", "100")
    assert p.returncode == 0, p.stderr[-2000:]
    assert "0.0000" in p.stdout  # IEC 60751: R0 = 100 ohm at 0 °C defines a Pt100
    assert "numpy" in names and "soaklog.sensors.cvd" in names  # the parse above does see what loads
    loaded = roots(names) & set(HEAVY)
    assert not loaded, f"`soaklog convert 100` imports {sorted(loaded)}"
    assert not any(n.startswith(("soaklog.simulators", "soaklog.dashboard", "soaklog.report", "soaklog.store"))
                   for n in names)


def test_run_loads_the_service_but_no_dashboard_plotting_or_simulator(tmp_path: Path):
    # a station whose meter does not answer (nothing listens on port 1): the logger starts, records the
    # instrument as lost, and stops after --duration; what it imported is what a real run imports
    db = tmp_path / "station.db"
    cfg = tmp_path / "station.toml"
    cfg.write_text(
        f'[station]\nname = "imports"\ndatabase = "{db.as_posix()}"\n'
        '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::1::SOCKET"\n'
        'interval = "1s"\ntimeout = "1s"\n'
        '[[sensor]]\nname = "pt100"\nclass = "A"\n'
        '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n',
        encoding="utf-8",
    )
    names, p = imported("-m", "soaklog", "run", str(cfg), "--duration", "1", timeout_s=120.0)
    assert p.returncode == 0, p.stderr[-2000:]
    assert "soaklog.service" in names and "sqlite_utils" in names and "pyvisa" in names
    loaded = roots(names) & {"textual", "rich", "matplotlib"}
    assert not loaded, f"`soaklog run` imports {sorted(loaded)}"
    assert not any(n.startswith(("soaklog.simulators", "soaklog.dashboard", "soaklog.report")) for n in names)
