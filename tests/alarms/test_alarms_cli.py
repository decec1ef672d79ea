"""`soaklog check --test-actions` (fires each action once) and the `soaklog ack` parser."""

from __future__ import annotations

import argparse
import subprocess
import sys

import pytest

import soaklog.alarms_cli as acli
from soaklog.commands import ack
from soaklog.config import parse_config
from soaklog.simulators.supply import SupplySimulator


class Switch:
    heater_supply_enabled = True


STATION = (
    '[station]\nname = "lab"\n'
    '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\n'
    '[[sensor]]\nname = "pt100"\nclass = "B"\n'
    '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n'
    '[[alarm]]\nname = "trip"\nkind = "high_high"\nchannel = "air"\nlimit_c = 140.0\n'
)


def test_every_action_fires_once_and_the_wiring_is_proved(tmp_path):
    world = Switch()
    lines: list[str] = []
    with SupplySimulator(world) as sim:
        cfg = parse_config(STATION + (
            f'[[alarm.actions]]\nkind = "scpi"\nresource = "{sim.resource}"\ncommands = ["OUTP OFF"]\n'
            'verify = { query = "OUTP?", reply = "0" }\n'
            f'[[alarm.actions]]\nkind = "program"\nargv = ["{sys.executable}", "-c", "pass"]\n'
            '[[alarm.actions]]\nkind = "serial_line"\nport = "loop://"\nline = "dtr"\n'
            '[[alarm.actions]]\nkind = "log"\n'
        ), str(tmp_path / "s.toml"))
        status = acli.test_actions(cfg, out=lines.append)
        assert "OUTP OFF" in sim.received()
    assert status == 0, lines
    assert world.heater_supply_enabled is False  # it really acted: the caution says so
    text = "\n".join(lines)
    assert "4 of 4 done" in text and "WILL act" in text and "not a safety device" in text


def test_a_broken_action_fails_the_test_by_name(tmp_path):
    cfg = parse_config(STATION + (
        '[[alarm.actions]]\nkind = "program"\nargv = ["/nonexistent/page-the-lab"]\n'
        f'[[alarm.actions]]\nkind = "program"\nargv = ["{sys.executable}", "-c", "import sys; sys.exit(4)"]\n'
        '[[alarm.actions]]\nkind = "log"\n'
    ), str(tmp_path / "s.toml"))
    lines: list[str] = []
    assert acli.test_actions(cfg, out=lines.append) == 1
    text = "\n".join(lines)
    assert text.count("FAIL") == 2 and "cannot start '/nonexistent/page-the-lab'" in text and "exit status 4" in text
    assert "1 of 3 done" in text


def test_a_station_without_actions_has_nothing_to_test(tmp_path):
    lines: list[str] = []
    assert acli.test_actions(parse_config(STATION, str(tmp_path / "s.toml")), out=lines.append) == 0
    assert "no alarm of this station has an action" in lines[0]


def test_the_ack_parser_has_help_and_a_description():
    parser = argparse.ArgumentParser(prog="soaklog")
    sub = parser.add_subparsers()
    p = ack.add_parser(sub)
    assert p.description and "operator actions table" in p.description
    args = parser.parse_args(["ack", "--all", "configs/demo.toml", "--note", "x"])
    assert args.func is ack.run and args.all and args.note == "x"


@pytest.mark.parametrize(("argv", "status", "message"), [
    # DESIGN.md exit statuses: 2 bad usage, 1 a runtime failure
    ([], 2, "name the ALARM"),
    (["hot:air", "--all", "--db", "x.db", "--wait", "0"], 2, "not both"),
    (["--all", "--db", "missing.db"], 1, "no database at missing.db"),
])
def test_ack_errors_exit_with_the_contract_status_and_a_message(tmp_path, argv, status, message):
    p = subprocess.run([sys.executable, "-m", "soaklog", "ack", *argv], capture_output=True, text=True,
                       timeout=60, cwd=tmp_path)
    assert p.returncode == status and message in p.stderr


def test_soaklog_ack_is_a_command_of_the_cli():
    p = subprocess.run([sys.executable, "-m", "soaklog", "ack", "--help"], capture_output=True, text=True, timeout=60)
    assert p.returncode == 0 and "--all" in p.stdout and "--note" in p.stdout
