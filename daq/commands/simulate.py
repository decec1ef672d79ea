"""``soaklog simulate``: one simulator standalone, printing where it listens."""

from __future__ import annotations

import argparse

from soaklog.commands.common import Subparsers, positive
from soaklog.errors import InputError

__all__ = ["add_parser", "run"]


def add_parser(sub: Subparsers) -> None:
    """Add ``simulate``."""
    p = sub.add_parser(
        "simulate", help="run one simulator standalone and print where it listens",
        description=(
            "Run a simulator in the foreground until SIGINT/SIGTERM: 'dmm' a SCPI multimeter with a "
            "scanner card on loopback TCP (prints its VISA resource string), 'adc' the serial RTD board "
            "on a pseudo-terminal (prints the device path), 'chamber' the whole simulated lab: the "
            "chamber with both instruments measuring it. Faults are injected at run time through the "
            "printed control port (one text command per line, e.g. 'fault runaway', 'meter fault mute')."
        ),
    )
    p.add_argument("which", choices=("dmm", "adc", "chamber"), help="what to simulate")
    p.add_argument("--port", type=int, default=0, metavar="N", help="multimeter TCP port (default: a free one)")
    p.add_argument("--supply-port", type=int, default=0, metavar="N",
                   help="chamber: the heater supply's TCP port (default: a free one)")
    p.add_argument("--link", metavar="PATH", help="board: keep a symlink at PATH to the pseudo-terminal")
    p.add_argument("--control-port", type=int, default=0, metavar="N", help="fault control port (default: a free one)")
    p.add_argument("--speed", type=positive("×"), default=1.0, metavar="X", help="chamber seconds per real second (default 1)")
    p.add_argument("--seed", type=int, default=20261201, metavar="N", help="seed of every random draw")
    p.add_argument("--rate", type=positive("Hz"), default=1.0, metavar="HZ", help="board frames per second (default 1)")
    p.add_argument("--truth", metavar="FILE", help="write the simulator's truth (JSON lines) to FILE")
    p.add_argument("--fault", action="append", default=[], metavar="CMD",
                   help="a control command to apply at start, e.g. --fault 'fault open air-return' (repeatable)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run ``soaklog simulate``."""
    import signal
    import threading

    from soaklog.simulators.lab import Lab

    if args.link and args.which == "dmm":
        raise InputError("--link applies to the board (adc or chamber)")
    lab = Lab(
        seed=args.seed, speed=args.speed, meter=args.which in ("dmm", "chamber"),
        board=args.which in ("adc", "chamber"), meter_port=args.port, board_link=args.link,
        control_port=args.control_port, truth_log=args.truth, board_rate_hz=args.rate,
        supply_port=args.supply_port,
        truth_log_interval_s=1.0 if args.truth else None,
    )
    stop = threading.Event()
    for sig in (signal.SIGTERM, signal.SIGINT):
        signal.signal(sig, lambda *_: stop.set())
    with lab:
        for cmd in args.fault:
            reply = lab.table.execute(cmd)
            print(f"{cmd}: {reply}", flush=True)
            if not reply.startswith("ok"):
                return 2
        a = lab.addresses()
        if a.meter_resource:
            print(f"meter   {a.meter_resource}", flush=True)
        if a.board_device:
            print(f"board   {a.board_device}" + (f"  (link {a.board_link})" if a.board_link else ""), flush=True)
        if getattr(a, "supply_resource", None):
            print(f"supply  {a.supply_resource}  (the heater supply: OUTPut ON|OFF)", flush=True)
        if a.control:
            print(f"control {a.control[0]} {a.control[1]}", flush=True)
        print(f"chamber seed {args.seed}, {args.speed:g}× real time; Ctrl-C stops", flush=True)
        stop.wait()
    return 0
