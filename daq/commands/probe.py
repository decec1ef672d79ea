"""``soaklog probe``: talk to one instrument once."""

from __future__ import annotations

import argparse
import json

from soaklog.commands.common import Subparsers, positive

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``probe``."""
    p = sub.add_parser(
        "probe", help="talk to one instrument once: identity, one reading per channel, error queue",
        description=(
            "Open one SCPI instrument by its VISA resource string (TCPIP0::HOST::PORT::SOCKET, USB…, "
            "GPIB0::22::INSTR, ASRL/dev/ttyUSB0::INSTR), print its identity, one resistance reading per "
            "channel and its error queue, or a plain diagnosis of why it cannot talk. Never resets it. "
            "Exit status 0 when it could talk, 1 when it could not."
        ),
    )
    p.add_argument("resource", metavar="RESOURCE", help="VISA resource string")
    p.add_argument("--channels", metavar="LIST", help="scanner channels, e.g. 101,102,103 (default: the front terminals)")
    p.add_argument("--four-wire", action="store_true", help="measure 4-wire resistance (default 2-wire)")
    p.add_argument("--timeout", type=positive("s"), default=3.0, metavar="S", help="answer timeout (default 3 s)")
    p.add_argument("--backend", default="@py", metavar="NAME", help="pyvisa backend (default @py, pure Python)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog probe``."""
    import dataclasses

    from soaklog.drivers.probe import format_probe, probe

    channels = [c.strip() for c in args.channels.split(",") if c.strip()] if args.channels else None
    result = probe(args.resource, channels=channels, four_wire=args.four_wire, timeout_s=args.timeout,
                   backend=args.backend)
    if args.json:
        d = dataclasses.asdict(result)
        d["ok"] = result.ok
        print(json.dumps(d, indent=2, default=str, allow_nan=True).replace("NaN", "null"))
    else:
        print(format_probe(result))
    return result.exit_code
