"""``kind = "program"``: run a program, without a shell, with a time limit and the alarm's fields in its environment.

The argument list runs with ``shell=False``: a name with ``;``, ``$( )`` or
spaces is a file name, never a command line. The program runs in its own
process group, with the alarm's fields in its environment
(``SOAKLOG_ALARM``, ``SOAKLOG_STATE``, …); at its time limit the whole group
is killed.
"""

from __future__ import annotations

import os
import signal
import subprocess
from collections.abc import Mapping, Sequence
from typing import Any

from soaklog.kinds import ACTIONS
from soaklog.kinds.actions import TIMEOUT_KEY, ActionContext, ActionKind, Outcome, read_timeout, short
from soaklog.kinds.keys import Checker, Key

__all__ = ["action_environment", "run_program", "KILL_GRACE_S"]

#: a killed program gets this long after SIGTERM before SIGKILL
KILL_GRACE_S = 2.0
_TAIL_CHARS = 300


def action_environment(fields: Mapping[str, str], base: Mapping[str, str] | None = None) -> dict[str, str]:
    """The environment of an action program: the service's own, plus ``SOAKLOG_<FIELD>`` for each alarm field."""
    env = dict(os.environ if base is None else base)
    for k, v in fields.items():
        env["SOAKLOG_" + k.upper()] = str(v).replace("\x00", "")
    return env


def run_program(argv: Sequence[str], *, timeout_s: float, env: Mapping[str, str]) -> tuple[Outcome, str]:
    """Run ``argv`` (no shell) with a time limit; at the limit its whole process group is killed."""
    try:
        proc = subprocess.Popen(  # noqa: S603 - an argument list, never a shell
            list(argv), shell=False, env=dict(env), stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
            stderr=subprocess.PIPE, start_new_session=True, close_fds=True,
        )
    except OSError as exc:
        return "failed", short(f"cannot start {argv[0]!r}: {exc.strerror or exc}")
    try:
        out, err = proc.communicate(timeout=timeout_s)
    except subprocess.TimeoutExpired:
        _kill_group(proc)
        return "timed_out", f"still running after {timeout_s:g} s; killed (pid {proc.pid})"
    if proc.returncode == 0:
        return "done", short(out.decode("utf-8", "replace").strip()[-_TAIL_CHARS:])
    why = (f"killed by signal {-proc.returncode}" if proc.returncode < 0 else f"exit status {proc.returncode}")
    tail = err.decode("utf-8", "replace").strip() or out.decode("utf-8", "replace").strip()
    return "failed", short(f"{why}" + (f": {tail[-_TAIL_CHARS:]}" if tail else ""))


def _kill_group(proc: subprocess.Popen[bytes]) -> None:
    """SIGTERM to the program's process group, SIGKILL after a grace period; then reap it."""
    for sig, wait_s in ((signal.SIGTERM, KILL_GRACE_S), (signal.SIGKILL, 10.0)):
        try:
            os.killpg(proc.pid, sig)
        except ProcessLookupError:
            pass
        try:
            proc.communicate(timeout=wait_s)
            return
        except subprocess.TimeoutExpired:
            continue


@ACTIONS.register("program")
class ProgramAction(ActionKind):
    name = "program"
    keys: Mapping[str, Key] = {
        "argv": Key(list, "the program and its arguments, run without a shell", required=True),
        "timeout": TIMEOUT_KEY,
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any] | None:
        p: dict[str, Any] = {}
        argv = d.get("argv")
        ok = True
        if (not isinstance(argv, list) or not argv or not all(isinstance(a, str) for a in argv)
                or not argv[0].strip()):
            ck.bad(f"{key}.argv", f"must be the program and its arguments as a list of text, "
                   f"run without a shell: [\"/usr/local/bin/page-lab\", \"--urgent\"]; got {argv!r}")
            ok = False
        else:
            p["argv"] = tuple(argv)
        p["timeout_s"] = read_timeout(ck, d, key, "10s")
        return p if ok else None

    def describe(self, params: Mapping[str, Any]) -> str:
        return "program " + " ".join(params.get("argv", ()))[:80]

    def run(self, params: Mapping[str, Any], fields: Mapping[str, str], ctx: ActionContext) -> tuple[Outcome, str]:
        return run_program(params["argv"], timeout_s=float(params["timeout_s"]), env=action_environment(fields))
