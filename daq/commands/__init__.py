"""The ``soaklog`` commands, one module per command (``soaklog.cli.COMMANDS`` lists them in order).

Each module's top level imports only ``argparse`` and the standard library
(and :mod:`soaklog.commands.common`, :mod:`soaklog.cliargs`,
:mod:`soaklog.errors`, which import nothing else); its ``add_parser(sub)``
adds the command and sets ``func`` to the function that runs it, and that
function imports what the command uses. So building the parser, ``--help``
and ``--version`` load no numpy, Textual, matplotlib, pyvisa, pyserial or
sqlite-utils, and each command loads only its own (DEVELOPERS.md: a command
imports what it uses).
"""

from __future__ import annotations
