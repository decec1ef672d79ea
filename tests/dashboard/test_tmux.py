"""The real `soaklog dash` process in a real terminal (tmux): start, read the screen, acknowledge, quit."""

from __future__ import annotations

import shlex
import shutil
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest
from testkit import wait_for

from soaklog.store import StoreReader

pytestmark = pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed")


def _dash_command(db: Path) -> list[str]:
    """``python -m soaklog dash``, as a user runs it."""
    return [sys.executable, "-m", "soaklog", "dash", "--db", str(db)]


class Tmux:
    """A tmux server of our own (its own socket), so nothing else's sessions are touched."""

    def __init__(self) -> None:
        self.socket = f"soaklog-test-{uuid.uuid4().hex[:8]}"
        self.session = "dash"

    def run(self, *args: str) -> subprocess.CompletedProcess[str]:
        return subprocess.run(["tmux", "-L", self.socket, *args], check=False, capture_output=True, text=True, timeout=20)

    def screen(self) -> str:
        return self.run("capture-pane", "-p", "-t", self.session).stdout

    def wait_for(self, text: str, timeout_s: float = 60.0) -> str:
        deadline = time.monotonic() + timeout_s
        shown = ""
        while time.monotonic() < deadline:
            shown = self.screen()
            if text in shown:
                return shown
            time.sleep(0.1)
        raise AssertionError(f"{text!r} never appeared; the screen was:\n{shown}")

    def alive(self) -> bool:
        return self.run("has-session", "-t", self.session).returncode == 0

    def close(self) -> None:
        self.run("kill-server")


def test_soaklog_dash_in_a_real_terminal(fixture_db, tmp_path):
    status = tmp_path / "exit_status"
    cmd = " ".join(shlex.quote(c) for c in _dash_command(fixture_db))
    shell = f"cd {shlex.quote(str(Path(__file__).resolve().parents[2]))} && {cmd}; echo $? > {shlex.quote(str(status))}"
    tmux = Tmux()
    try:
        r = tmux.run("new-session", "-d", "-s", tmux.session, "-x", "160", "-y", "50", shell)
        assert r.returncode == 0, r.stderr
        shown = tmux.wait_for("Fixture plate")
        assert "fixture-bench" in shown and "run 1: fixture cycling run" in shown
        assert "113.000" in shown  # the fixture's air temperature (23 °C + 0.5 K/min for 3 h)
        assert "not a safety device" in shown
        tmux.run("send-keys", "-t", tmux.session, "a")
        tmux.wait_for("active, not acked")
        tmux.run("send-keys", "-t", tmux.session, "k")
        actions: list = []

        def acted() -> bool:
            with StoreReader.open(fixture_db) as st:
                actions[:] = st.operator_actions()
            return bool(actions)

        wait_for(acted, 60, "the acknowledgement in the store")
        assert [(a.kind, a.target) for a in actions] == [("acknowledge", "air-high:air")]
        tmux.wait_for("waiting for the logger")
        tmux.run("send-keys", "-t", tmux.session, "q")
        wait_for(status.exists, 60, "the dashboard's exit status")
        assert status.read_text().strip() == "0"
    finally:
        tmux.close()


def test_soaklog_dash_on_a_missing_file_says_so(tmp_path):
    missing = tmp_path / "nothing.db"
    r = subprocess.run(_dash_command(missing), check=False, capture_output=True, text=True, timeout=60,
                       cwd=Path(__file__).resolve().parents[2])
    assert r.returncode == 1
    assert "no database at" in r.stderr


LIVE_SCRIPT = """
import logging, sys, threading, time
from pathlib import Path
sys.path.insert(0, {testkit_root!r})
from testkit.lab import LabRun
from soaklog.dashboard import run_dashboard_live

# a handler on a stream of our own, as a terminal's would be: held while the dashboard runs
logging.basicConfig(level=logging.INFO, stream=open({log!r}, "w", buffering=1), format="%(levelname)s %(message)s")
run = LabRun(Path({tmp!r}), speed=30.0)
stop = threading.Event()
# a log line while the dashboard owns the terminal must not be written over the screen: logged once the
# test has seen the dashboard (it creates {go!r}), and {logged!r} says it has been logged
def log_midrun():
    while not stop.is_set() and not Path({go!r}).exists():
        time.sleep(0.02)
    logging.getLogger("soaklog.test").warning("MIDRUN-LOG-LINE")
    Path({logged!r}).write_text("logged")
threading.Thread(target=log_midrun, daemon=True).start()
code = run_dashboard_live(run.database, stop_event=stop, header_note="demo at 30x")
run.stop()
Path({result!r}).write_text(f"{{code}} {{stop.is_set()}}")
"""


def test_the_live_dashboard_runs_in_front_of_a_logger_in_the_same_process(tmp_path):
    result = tmp_path / "result"
    errors = tmp_path / "log"
    script = tmp_path / "live.py"
    go, logged = tmp_path / "go", tmp_path / "logged"
    script.write_text(LIVE_SCRIPT.format(testkit_root=str(Path(__file__).resolve().parents[1]), tmp=str(tmp_path),
                                         result=str(result), log=str(errors), go=str(go), logged=str(logged)))
    root = Path(__file__).resolve().parents[2]
    shell = f"cd {shlex.quote(str(root))} && {shlex.quote(sys.executable)} {shlex.quote(str(script))}"
    tmux = Tmux()
    try:
        assert tmux.run("new-session", "-d", "-s", tmux.session, "-x", "120", "-y", "40", shell).returncode == 0
        shown = tmux.wait_for("[LIVE]", timeout_s=60)
        assert "demo at 30x" in shown and "Door corner" in shown
        go.write_text("go")  # the script logs its line now, while the dashboard shows
        wait_for(logged.exists, 60, "the script's log line")
        assert "MIDRUN-LOG-LINE" not in tmux.screen()
        assert "MIDRUN-LOG-LINE" not in errors.read_text()  # held, not written while the dashboard shows
        tmux.run("send-keys", "-t", tmux.session, "q")
        wait_for(result.exists, 60, "the script's result")
        # quitting the dashboard sets the stop event, so the caller stops its logger
        assert result.read_text() == "0 True"
        assert "WARNING MIDRUN-LOG-LINE" in errors.read_text()  # handed on after the dashboard closed
    finally:
        tmux.close()
