"""Actions against real things: subprocesses with a time limit, SCPI to the simulated supply over loopback
TCP, RTS/DTR through pyserial (a real pseudo-terminal, and ``loop://``)."""

from __future__ import annotations

import errno
import fcntl
import json
import os
import pty
import struct
import sys
import termios
import textwrap
import time
from pathlib import Path

import pytest
import serial

from soaklog.actions import MAX_QUEUED, ActionRunner, action_environment, run_program, send_scpi
from soaklog.config import ActionConfig
from soaklog.simulators.supply import SupplySimulator

FIELDS = {"event": "alarm_raised", "alarm": "trip:air-supply", "rule": "trip", "channel": "air-supply",
          "state": "unacknowledged", "severity": "critical", "message": "air-supply 141.00 °C above 140.00 °C",
          "value": "141", "t_s": "0.000"}


class Switch:
    heater_supply_enabled = True


@pytest.fixture
def supply():
    world = Switch()
    with SupplySimulator(world) as sim:
        yield sim, world


def script(tmp_path: Path, name: str, body: str) -> Path:
    p = tmp_path / name
    p.write_text(f"#!{sys.executable}\n" + textwrap.dedent(body), encoding="utf-8")
    p.chmod(0o755)
    return p


def wait_outcomes(runner: ActionRunner, n: int, timeout_s: float = 20.0) -> list:
    got: list = []
    deadline = time.monotonic() + timeout_s
    while len(got) < n and time.monotonic() < deadline:
        got += runner.outcomes()
        time.sleep(0.01)
    assert len(got) >= n, f"{len(got)} of {n} outcomes"
    return got


# ---------------------------------------------------------------- programs


def test_a_program_gets_the_alarms_fields_in_its_environment(tmp_path):
    out = tmp_path / "env.json"
    prog = script(tmp_path, "page.py", f"""
        import json, os
        json.dump({{k: v for k, v in os.environ.items() if k.startswith("SOAKLOG_")}}, open({str(out)!r}, "w"))
        print("paged")
    """)
    outcome, detail = run_program([str(prog)], timeout_s=20.0, env=action_environment(FIELDS))
    assert (outcome, detail) == ("done", "paged")
    env = json.loads(out.read_text())
    assert env["SOAKLOG_ALARM"] == "trip:air-supply"
    assert env["SOAKLOG_STATE"] == "unacknowledged"
    assert env["SOAKLOG_MESSAGE"] == FIELDS["message"]


def test_a_program_that_hangs_is_killed_at_its_time_limit_with_its_children(tmp_path):
    pids = tmp_path / "pids"
    prog = script(tmp_path, "hang.py", f"""
        import os, subprocess, sys, time
        child = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(120)"])
        open({str(pids)!r}, "w").write(f"{{os.getpid()}} {{child.pid}}")
        time.sleep(120)
    """)
    t0 = time.monotonic()
    outcome, detail = run_program([str(prog)], timeout_s=1.0, env=dict(os.environ))
    took = time.monotonic() - t0
    assert outcome == "timed_out" and "killed" in detail
    assert took < 30.0  # killed, not waited for (a generous bound, not a speed figure)
    # the program and the child it started are gone (a process takes a moment to finish exiting)
    deadline = time.monotonic() + 10.0
    while any(alive(pid) for pid in map(int, pids.read_text().split())) and time.monotonic() < deadline:
        time.sleep(0.02)
    assert not any(alive(pid) for pid in map(int, pids.read_text().split()))


def alive(pid: int) -> bool:
    """Whether a process runs (a zombie waiting for a parent that does not reap it is dead)."""
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except FileNotFoundError:
        return False
    return stat.rsplit(")", 1)[1].split()[0] != "Z"


def test_a_failing_program_is_failed_with_its_exit_status_and_stderr(tmp_path):
    prog = script(tmp_path, "fail.py", "import sys; sys.stderr.write('no modem'); sys.exit(3)\n")
    assert run_program([str(prog)], timeout_s=20.0, env=dict(os.environ)) == ("failed", "exit status 3: no modem")


def test_shell_metacharacters_in_a_program_name_are_a_file_name_never_a_command(tmp_path):
    os.chdir(tmp_path)
    pwned = tmp_path / "pwned"
    # a name that a shell would run as two commands
    outcome, detail = run_program([f"true; touch {pwned}"], timeout_s=5.0, env=dict(os.environ))
    assert outcome == "failed" and "cannot start" in detail
    assert not pwned.exists()
    # a program whose file name really holds the characters runs as that file
    record = tmp_path / "argv.json"
    odd = script(tmp_path, "notify;$(touch pwned)&.py", f"""
        import json, sys
        json.dump(sys.argv[1:], open({str(record)!r}, "w"))
    """)
    arg = "$(touch pwned) `touch pwned` ; touch pwned | x > y"
    assert run_program([str(odd), arg], timeout_s=20.0, env=dict(os.environ))[0] == "done"
    assert json.loads(record.read_text()) == [arg]
    assert not pwned.exists()


# ---------------------------------------------------------------- SCPI


def test_scpi_output_off_reaches_the_simulated_supply_and_is_verified(supply):
    sim, world = supply
    outcome, detail = send_scpi(sim.resource, ["OUTPut OFF"], verify=("OUTPut?", "0"), timeout_s=5.0)
    assert outcome == "done", detail
    assert world.heater_supply_enabled is False
    # who answers is checked first, as the meter driver checks (the driver layer's one session)
    assert sim.received()[:2] == ["*IDN?", "OUTPut OFF"]
    assert "SYST:ERR?" in sim.received()  # the error queue was read (SCPI-1999 vol. 2, ch. 21)


@pytest.mark.parametrize(
    ("commands", "verify", "outcome", "fragment"),
    [
        # SCPI-1999 vol. 2, ch. 21 (from memory): -224 "Illegal parameter value", -113 "Undefined header"
        (["OUTPut MAYBE"], None, "failed", "-224"),
        (["OUTPut:PROTection:CLEar"], None, "failed", "-113"),
        (["OUTPut ON"], ("OUTPut?", "0"), "failed", "did not take"),
    ],
)
def test_scpi_errors_and_a_failed_verification_are_failures(supply, commands, verify, outcome, fragment):
    sim, _ = supply
    got, detail = send_scpi(sim.resource, commands, verify=verify, timeout_s=5.0)
    assert got == outcome and fragment in detail


def test_a_mute_supply_times_out_and_nothing_listening_fails(supply):
    sim, _ = supply
    sim.commands().execute("fault mute")
    assert send_scpi(sim.resource, ["OUTPut OFF"], timeout_s=0.5)[0] == "timed_out"
    host, port = sim.address
    sim.close()
    assert send_scpi(f"TCPIP0::{host}::{port}::SOCKET", ["OUTPut OFF"], timeout_s=1.0)[0] == "failed"


def test_an_scpi_action_leaves_the_loggers_other_sessions_open(supply):
    """pyvisa shares one resource manager per backend: an action must close its instrument, not the manager."""
    import pyvisa

    sim, _ = supply
    rm = pyvisa.ResourceManager("@py")
    other = rm.open_resource(sim.resource, read_termination="\n", write_termination="\n", timeout=5000)
    try:
        assert send_scpi(sim.resource, ["*IDN?"], timeout_s=5.0)[0] == "done"
        assert other.query("*IDN?").startswith("Ombrevale Instruments")
    finally:
        other.close()


# ---------------------------------------------------------------- serial control lines


def test_a_pseudo_terminal_has_no_control_lines_and_the_action_says_so():
    master, slave = pty.openpty()
    try:
        # Linux ptys do not implement the modem-control ioctls: reading RTS/DTR back is impossible here
        with pytest.raises(OSError) as info:
            fcntl.ioctl(master, termios.TIOCMGET, struct.pack("I", 0))
        assert info.value.errno in (errno.ENOTTY, errno.EINVAL)
        name = os.ttyname(slave)
        act = ActionConfig("serial_line", ("raised",), {"port": name, "line": "rts", "state": True, "baudrate": 9600})
        runner = ActionRunner({"trip": [act]})
        runner.submit(act, FIELDS)
        (o,) = wait_outcomes(runner, 1)
        runner.close()
        assert o.outcome == "failed" and "control lines" in o.detail
    finally:
        os.close(master)
        os.close(slave)


@pytest.mark.parametrize(("line", "state", "mirror"), [("rts", True, "cts"), ("rts", False, "cts"),
                                                       ("dtr", True, "dsr"), ("dtr", False, "dsr")])
def test_rts_and_dtr_are_set_and_cleared_and_the_port_is_held_open(line, state, mirror):
    # pyserial's loop:// reads back its own RTS as CTS and DTR as DSR
    act = ActionConfig("serial_line", ("raised",), {"port": "loop://", "line": line, "state": state, "baudrate": 9600})
    runner = ActionRunner({"trip": [act]})
    runner.submit(act, FIELDS)
    (o,) = wait_outcomes(runner, 1)
    assert o.outcome == "done", o.detail
    port = runner.port("loop://")
    assert port is not None and port.is_open  # a relay needs the line held
    assert getattr(port, mirror) is state
    runner.close()
    assert not port.is_open


def test_the_line_is_preset_before_the_port_opens():
    """Opening a port must not pulse the relay line: pyserial applies a preset at open."""
    seen = []

    class Recorder(serial.serial_for_url("loop://", do_not_open=True).__class__):
        def open(self):
            seen.append(("open", self.rts))
            super().open()

    def opener(url, **kw):
        p = Recorder(None, **{k: v for k, v in kw.items() if k != "do_not_open"})
        p.port = url
        return p

    act = ActionConfig("serial_line", ("raised",), {"port": "loop://", "line": "rts", "state": False, "baudrate": 9600})
    runner = ActionRunner({"trip": [act]}, serial_for_url=opener)
    runner.submit(act, FIELDS)
    (o,) = wait_outcomes(runner, 1)
    runner.close()
    assert o.outcome == "done" and seen == [("open", False)]


# ---------------------------------------------------------------- the runner


def test_a_hung_program_does_not_hold_up_an_interlock_of_the_same_alarm(tmp_path, supply):
    sim, world = supply
    hang = ActionConfig("program", ("raised",), {"argv": (sys.executable, "-c", "import time; time.sleep(60)"),
                                                 "timeout_s": 3.0})
    cut = ActionConfig("scpi", ("raised",), {"resource": sim.resource, "commands": ("OUTPut OFF",), "timeout_s": 5.0,
                                             "check_errors": True, "verify": ("OUTPut?", "0")})
    runner = ActionRunner({"trip": [hang, cut]})
    assert runner.submit_event("trip", "raised", FIELDS) == 2
    first = wait_outcomes(runner, 1)[0]
    assert (first.kind, first.outcome) == ("scpi", "done")  # the supply is off while the program still hangs
    assert world.heater_supply_enabled is False
    second = wait_outcomes(runner, 1)[0]
    assert (second.kind, second.outcome) == ("program", "timed_out")
    runner.close()


def test_actions_fire_only_on_their_triggers():
    log_on_clear = ActionConfig("log", ("cleared",), {"message": ""})
    runner = ActionRunner({"hot": [log_on_clear]})
    assert runner.submit_event("hot", "raised", FIELDS) == 0
    assert runner.submit_event("hot", None, FIELDS) == 0
    assert runner.submit_event("hot", "cleared", FIELDS) == 1
    (o,) = wait_outcomes(runner, 1)
    assert (o.outcome, o.event_kind) == ("done", "action_done")
    runner.close()


def test_submit_never_blocks_a_full_queue_fails_at_once(tmp_path):
    slow = ActionConfig("program", ("raised",), {"argv": (sys.executable, "-c", "import time; time.sleep(60)"),
                                                 "timeout_s": 1.0})
    runner = ActionRunner({"x": [slow]})
    t0 = time.monotonic()
    for _ in range(MAX_QUEUED + 3):
        runner.submit(slow, FIELDS)
    assert time.monotonic() - t0 < 5.0  # queued, not run (a generous bound, not a speed figure)
    dropped = [o for o in runner.outcomes() if o.outcome == "failed"]
    assert len(dropped) >= 2 and "dropped" in dropped[0].detail
    runner.close()  # the running one ends at its limit; the waiting ones are recorded as not run
    rest = runner.outcomes()
    assert [o.outcome for o in rest].count("timed_out") <= 1  # the one running, if the worker had begun it
    assert all("not run" in o.detail for o in rest if o.outcome == "failed")
    assert len(dropped) + len(rest) == MAX_QUEUED + 3  # every request has its outcome


def test_an_scpi_action_checks_who_answers_before_it_sends_anything():
    """The driver layer's session asks *IDN? first; a port that does not answer with an identity gets no command."""
    import socketserver
    import threading

    heard: list[bytes] = []

    class NotScpi(socketserver.StreamRequestHandler):
        def handle(self) -> None:
            for line in self.rfile:
                heard.append(line.strip())
                self.wfile.write(b"\x07\x01\n")  # an answer, but no identity

    with socketserver.ThreadingTCPServer(("127.0.0.1", 0), NotScpi) as server:
        server.daemon_threads = True
        threading.Thread(target=server.serve_forever, daemon=True).start()
        host, port = server.server_address[:2]
        outcome, detail = send_scpi(f"TCPIP0::{host}::{port}::SOCKET", ["OUTPut OFF"], timeout_s=5.0)
        server.shutdown()
    assert outcome == "failed" and "not an identity" in detail
    assert heard == [b"*IDN?"]
