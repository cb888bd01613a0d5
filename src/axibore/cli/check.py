"""axibore check: validate a case and print what was understood."""

from __future__ import annotations

from ..describe import describe
from .common import add_case_arg, load, out

HELP = "validate a case and print what was understood"


def add_args(p) -> None:
    add_case_arg(p)


def run(args) -> int:
    case = load(args)
    for line in describe(case):
        out(line)
    from ..budget import budget

    refused = case.unsupported() or not budget(case).within
    out("ok: the case is valid" if not refused else "valid, but `run` will refuse it (see the notes above)")
    return 0
