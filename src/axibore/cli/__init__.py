"""Command line: ``axibore run | check | mesh | gridstudy | sweep | compare | view | report | verify``.

One module per command, each with ``HELP``, ``add_args(parser)`` and ``run(args) -> int``;
``main(argv) -> int`` wires them (exit 0 ok, 2 bad input, 1 failure or not converged).
Formatting of printed output lives in ``output.py``.
"""

from __future__ import annotations

import argparse
import sys
from importlib import import_module

from ..version import __version__
from ..case import CaseError
from .common import err

NAMES = ("run", "check", "mesh", "gridstudy", "sweep", "compare", "view", "report", "verify")
COMMANDS = {name: import_module(f"{__name__}.{name}") for name in NAMES}


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="axibore",
        description="Axisymmetric wall pressure, axial force and 1D-breakdown analysis of bores carrying fluid.",
    )
    parser.add_argument("--version", action="version", version=f"axibore {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, mod in COMMANDS.items():
        p = sub.add_parser(name, help=mod.HELP, description=mod.HELP)
        mod.add_args(p)
        p.set_defaults(func=mod.run)
    return parser


def _interrupt(signum, frame):
    raise KeyboardInterrupt


def main(argv: list[str] | None = None) -> int:
    import signal

    parser = build_parser()
    args = parser.parse_args(argv)
    for sig in (signal.SIGTERM, signal.SIGHUP):  # handled as Ctrl-C: temporary files removed, nothing half-written
        try:
            signal.signal(sig, _interrupt)
        except (ValueError, OSError):  # not the main thread
            pass
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        return int(args.func(args) or 0)
    except CaseError as exc:
        for line in exc.lines():
            err(line)
        return 2
    except KeyboardInterrupt:
        err("interrupted: nothing half-written was left behind")
        return 130
