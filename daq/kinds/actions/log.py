"""``kind = "log"``: write the alarm's change to the service's log (a warning)."""

from __future__ import annotations

import logging
from collections.abc import Mapping
from typing import Any

from soaklog.kinds import ACTIONS
from soaklog.kinds.actions import ActionContext, ActionKind, Outcome, short
from soaklog.kinds.keys import Checker, Key

log = logging.getLogger("soaklog.actions")


@ACTIONS.register("log")
class LogAction(ActionKind):
    name = "log"
    keys: Mapping[str, Key] = {"message": Key(str, "text put before the alarm's own message", default="")}

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any] | None:
        return {"message": ck.get(d, key, "message", str, default="") or ""}

    def describe(self, params: Mapping[str, Any]) -> str:
        return "log"

    def run(self, params: Mapping[str, Any], fields: Mapping[str, str], ctx: ActionContext) -> tuple[Outcome, str]:
        text = params.get("message") or ""
        msg = f"{text}: {fields.get('message', '')}" if text else fields.get("message", "")
        log.warning("alarm %s %s: %s", fields.get("alarm", ""), fields.get("event", ""), msg)
        return "done", short(msg)
