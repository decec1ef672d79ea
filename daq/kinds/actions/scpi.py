"""``kind = "scpi"``: send SCPI commands to an instrument (a heater supply's ``OUTP OFF``), check its error queue.

The instrument is reached through the driver layer's session
(``soaklog.drivers.scpi_session``), as the multimeter driver reaches its
meter: the same identity check right after opening (pyvisa-py opens a TCP
resource even when nothing listens), the same time limits and the same
reading of the error queue. A command ending in ``?`` is a query. ``verify``
asks a query afterwards and compares its answer (``OUTP?`` → ``0``), so an
interlock that did not take is a failure, not a guess.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from soaklog.kinds import ACTIONS
from soaklog.kinds.actions import TIMEOUT_KEY, ActionContext, ActionKind, Outcome, read_timeout, short
from soaklog.kinds.keys import Checker, Key

__all__ = ["send_scpi"]


def _same_reply(got: str, want: str) -> bool:
    g, w = got.strip(), want.strip()
    try:
        a, b = float(g), float(w)
        return math.isclose(a, b, rel_tol=0.0, abs_tol=1e-9) or a == b
    except ValueError:
        return g.upper() == w.upper()


def send_scpi(
    resource: str,
    commands: Sequence[str],
    *,
    backend: str = "@py",
    timeout_s: float = 5.0,
    check_errors: bool = True,
    verify: tuple[str, str] | None = None,
    resource_manager: Any = None,
) -> tuple[Outcome, str]:
    """Open ``resource`` (checking who answers), send ``commands``, read the error queue, verify, close.

    Only the instrument is closed, never the resource manager: pyvisa shares one
    manager per backend in a process, and closing it would close every other
    session (the logger's own meters) with it.
    """
    from soaklog.drivers.scpi_session import ScpiSession
    from soaklog.errors import InstrumentError, InstrumentTimeout

    session = ScpiSession("scpi action", resource, backend=backend, timeout_s=timeout_s,
                          resource_manager=resource_manager)
    replies: list[str] = []
    try:
        session.open()
        for cmd in commands:
            if cmd.rstrip().endswith("?"):
                replies.append(f"{cmd} -> {session.query(cmd).strip()}")
            else:
                session.write(cmd)
        errors = session.drain_errors() if check_errors else []
        if errors:
            listed = "; ".join(f'{code},"{msg}"' for code, msg in errors)
            return "failed", short(f"{resource} reported {listed} after {'; '.join(commands)}")
        if verify is not None:
            got = session.query(verify[0]).strip()
            if not _same_reply(got, verify[1]):
                return "failed", short(f"{verify[0]} answered {got!r}, expected {verify[1]!r}: the command did not take")
            replies.append(f"{verify[0]} -> {got}")
        return "done", short(f"sent {'; '.join(commands)} to {resource}" + (f"; {', '.join(replies)}" if replies else ""))
    except InstrumentTimeout as exc:
        return "timed_out", short(str(exc))
    except InstrumentError as exc:
        return "failed", short(str(exc))
    except Exception as exc:  # noqa: BLE001 - a backend's own exceptions are not all translated
        return "failed", short(f"{resource}: {type(exc).__name__}: {exc}")
    finally:
        session.close()


@ACTIONS.register("scpi")
class ScpiAction(ActionKind):
    name = "scpi"
    keys: Mapping[str, Key] = {
        "resource": Key(str, "VISA resource string of the instrument", required=True),
        "commands": Key(list, "SCPI commands, one line each", required=True),
        "backend": Key(str, "pyvisa backend", default="@py"),
        "timeout": TIMEOUT_KEY,
        "check_errors": Key(bool, "read the error queue afterwards", default=True),
        "verify": Key(dict, "a query and the reply that proves the command took: { query = \"OUTP?\", reply = \"0\" }"),
    }

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any] | None:
        p: dict[str, Any] = {}
        ok = True
        res = ck.get(d, key, "resource", str, required=True)
        cmds = d.get("commands")
        if not isinstance(cmds, list) or not cmds or not all(isinstance(c, str) and c.strip() for c in cmds) \
                or any("\n" in c for c in cmds):
            ck.bad(f"{key}.commands", f"must be a list of SCPI commands, one line each: [\"OUTP OFF\"]; got {cmds!r}")
            ok = False
        else:
            p["commands"] = tuple(c.strip() for c in cmds)
        if res is None:
            ok = False
        else:
            p["resource"] = res
        p["backend"] = ck.get(d, key, "backend", str, default="@py") or "@py"
        p["timeout_s"] = read_timeout(ck, d, key, "5s")
        ce = ck.get(d, key, "check_errors", bool, default=True)
        p["check_errors"] = True if ce is None else ce
        if "verify" in d:
            vk = f"{key}.verify"
            v = ck.table(d["verify"], vk)
            ck.unknown(v, vk, {"query", "reply"})
            q = ck.get(v, vk, "query", str, required=True,
                       check=lambda x: None if x.strip().endswith("?") else f"must be a query (ending in '?'), got {x!r}")
            r = ck.get(v, vk, "reply", str, required=True)
            if q is not None and r is not None:
                p["verify"] = (q.strip(), r.strip())
        return p if ok else None

    def describe(self, params: Mapping[str, Any]) -> str:
        return f"scpi {'; '.join(params.get('commands', ()))} to {params.get('resource', '')}"

    def run(self, params: Mapping[str, Any], fields: Mapping[str, str], ctx: ActionContext) -> tuple[Outcome, str]:
        return send_scpi(params["resource"], params["commands"], backend=params.get("backend", "@py"),
                         timeout_s=float(params.get("timeout_s", 5.0)),
                         check_errors=bool(params.get("check_errors", True)), verify=params.get("verify"),
                         resource_manager=ctx.resource_manager)
