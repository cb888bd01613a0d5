"""axibore check: validate a case and print what was understood."""

from __future__ import annotations

from ..describe import describe
from .common import add_case_arg, err, load, out

HELP = "validate a case and print what was understood"


def add_args(p) -> None:
    add_case_arg(p)


def run(args) -> int:
    case = load(args)
    if case.model.uncertainty:  # read by `axibore uncertainty`, checked here too
        from ..case import CaseError
        from ..study.uncertainty import parse_inputs

        try:
            parse_inputs(case, dict(case.model.uncertainty), case.source)
        except CaseError as exc:
            for line in exc.lines():
                err(line)
            return 2
    for line in describe(case):
        out(line)
    from ..budget import budget

    refused = case.unsupported() or not budget(case).within
    out("ok: the case is valid" if not refused else "valid, but `run` will refuse it (see the notes above)")
    return 0
