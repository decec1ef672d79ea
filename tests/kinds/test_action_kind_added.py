"""An action kind added by one module — this one — and nothing else: the station file reads it, the runner runs it.

``Note`` appends the alarm's message to a text file (a lab's own paper
trail). It lives only in this test module and is registered for the length
of each test with ``ACTIONS.added``: no other module of soaklog names it, so
passing here shows the configuration walker and the runner have no branch on
an action's kind.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

import pytest

from soaklog.actions import ActionRunner
from soaklog.config import ConfigProblems, parse_config
from soaklog.kinds import ACTIONS
from soaklog.kinds.actions import ActionContext, ActionKind, Outcome
from soaklog.kinds.keys import Checker, Key


class Note(ActionKind):
    name = "note"
    keys: Mapping[str, Key] = {"file": Key(str, "the text file to append to", required=True)}

    def read(self, ck: Checker, d: Mapping[str, Any], key: str) -> dict[str, Any] | None:
        f = ck.get(d, key, "file", str, required=True,
                   check=lambda v: None if v.startswith("/") else f"must be an absolute path, got {v!r}")
        return None if f is None else {"file": f}

    def describe(self, params: Mapping[str, Any]) -> str:
        return f"note to {params['file']}"

    def run(self, params: Mapping[str, Any], fields: Mapping[str, str], ctx: ActionContext) -> tuple[Outcome, str]:
        with open(params["file"], "a", encoding="utf-8") as f:
            f.write(f"{fields.get('alarm', '')}: {fields.get('message', '')}\n")
        return "done", f"noted in {params['file']}"


STATION = (
    '[station]\nname = "lab"\n'
    '[[instrument]]\nname = "meter"\ndriver = "scpi"\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\n'
    '[[sensor]]\nname = "pt100"\nclass = "B"\n'
    '[[channel]]\nname = "air"\ninstrument = "meter"\ninput = "101"\nsensor = "pt100"\n'
    '[[alarm]]\nname = "hot"\nkind = "high"\nchannel = "air"\nlimit_c = 130.0\n'
)
PATH = "/lab/station.toml"


@pytest.fixture
def note_kind():
    with ACTIONS.added("note", Note) as kind:
        yield kind


def test_a_station_file_with_the_new_action_validates_and_the_runner_runs_it(note_kind, tmp_path: Path):
    book = tmp_path / "logbook.txt"
    cfg = parse_config(STATION + f'[[alarm.actions]]\nkind = "note"\nfile = "{book}"\non = ["raised", "cleared"]\n', PATH)
    (act,) = cfg.alarms[0].actions
    assert (act.kind, act.on, act.name) == ("note", ("raised", "cleared"), f"note to {book}")
    runner = ActionRunner({"hot": [act]})
    assert runner.submit_event("hot", "raised", {"alarm": "hot:air", "message": "air 131.00 °C"}) == 1
    assert runner.wait_idle(20.0)
    (o,) = runner.outcomes()
    runner.close()
    assert (o.kind, o.outcome, o.action) == ("note", "done", f"note to {book}")
    assert book.read_text(encoding="utf-8") == "hot:air: air 131.00 °C\n"


def test_its_keys_are_checked_by_file_and_key(note_kind):
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION + '[[alarm.actions]]\nkind = "note"\nfile = "logbook.txt"\nfiles = "x"\n', PATH)
    assert sorted(info.value.problems) == [
        ("alarm[1].actions[1].file", "must be an absolute path, got 'logbook.txt'"),
        ("alarm[1].actions[1].files", "unknown key; did you mean 'file'?"),
    ]


def test_without_its_module_the_action_is_unknown():
    with pytest.raises(ConfigProblems) as info:
        parse_config(STATION + '[[alarm.actions]]\nkind = "note"\nfile = "/tmp/x"\n', PATH)
    ((key, msg),) = info.value.problems
    assert key == "alarm[1].actions[1].kind" and "must be one of" in msg and "serial_line" in msg
