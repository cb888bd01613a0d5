"""Command line: ``axibore run | check | mesh | gridstudy | sweep | compare | view | report | verify``.

One module per command, each with ``HELP``, ``add_args(parser)`` and ``run(args) -> int``;
``main(argv) -> int`` wires them. Exit codes: 0 ok; 1 ran but not converged, or a point failed;
2 bad input or refused; 3 internal error (one line, the traceback saved to a file); 130 interrupted.
Formatting of printed output lives in ``output.py``.
"""

from __future__ import annotations

import argparse
import os
import sys
from importlib import import_module

from ..version import __version__
from ..case import CaseError
from ..io.files import DamagedFile, ForeignFile, OutputError
from ..study.runner import SchedulerError
from .common import err

NAMES = ("run", "check", "mesh", "gridstudy", "sweep", "uncertainty", "compare", "view", "report", "verify")
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
    except ForeignFile as exc:
        err(str(exc))
        return 2
    except OutputError as exc:
        err(f"--out: {exc}")
        return 2
    except DamagedFile as exc:
        err(str(exc))
        return 2
    except SchedulerError as exc:
        err(f"--scheduler: {exc}")
        return 2
    except MemoryError:
        err("out of memory: give a coarser mesh (mesh.size, --level) or a smaller --max-cells")
        return 2
    except OSError as exc:  # disk full, name too long, permission: the file and the reason
        where = f"{exc.filename}: " if getattr(exc, "filename", None) else ""
        err(f"{where}{exc.strerror or exc}")
        return 2
    except Exception as exc:  # a fault of axibore: one line here, the traceback in a file to send with a report
        import tempfile
        import traceback

        fd, path = tempfile.mkstemp(prefix="axibore-traceback-", suffix=".txt")
        with os.fdopen(fd, "w") as f:
            f.write(" ".join(["axibore"] + list(argv if argv is not None else sys.argv[1:])) + "\n\n")
            traceback.print_exc(file=f)
        err(f"internal error ({type(exc).__name__}: {exc}); the traceback is in {path}")
        return 3
