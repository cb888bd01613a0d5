"""axibore verify: the verification set (exact solutions, published values) and its errors."""

from __future__ import annotations

from pathlib import Path

from ..version import __version__
from ..io.files import check_output_dir
from .common import FORCE_HELP, err, out

HELP = "run the verification set of every capability (exact solutions, published values) and tabulate the errors"


def add_args(p) -> None:
    p.add_argument("--out", default="runs/verify", help="directory for verify.csv and verify.json (default runs/verify)")
    p.add_argument("--quick", action="store_true",
                   help="coarser grids and fewer levels, the same checks (about 11 s instead of about 18 s on 2 cores)")
    p.add_argument("--force", action="store_true", help=FORCE_HELP)


def run(args) -> int:
    from ..study.verify import run_verification, table_lines

    out(f"axibore {__version__}: verification against exact solutions and published values")
    outdir = check_output_dir(Path(args.out), "verify", args.force, say=err)  # before any work (OutputError: exit 2)
    rows = run_verification(outdir, quick=args.quick, progress=out)
    out("")
    for line in table_lines(rows):
        out(line)
    failed = [r for r in rows if not r.passed]
    out("")
    out(f"{len(rows) - len(failed)} passed, {len(failed)} failed; wrote {args.out}/verify.csv")
    return 1 if failed else 0
