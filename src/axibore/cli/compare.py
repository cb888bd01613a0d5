"""axibore compare: headline numbers of run directories side by side, wall pressures overlaid."""

from __future__ import annotations

from pathlib import Path

from ..safety import caution_text
from .common import FORCE_HELP, err, out, run_dir

HELP = "compare run directories: headline numbers side by side with differences, wall pressures overlaid"


def add_args(p) -> None:
    p.add_argument("runs", nargs="+", metavar="RUN_DIR", help="two or more run directories (differences against the first)")
    p.add_argument("--out", help="folder to write compare.html and compare_wall_pressure.png into")
    p.add_argument("--force", action="store_true", help=FORCE_HELP)


def run(args) -> int:
    from ..io.files import OutputError, atomic_dir, check_output_dir
    from ..study.compare import CompareError, compare_runs, write_html

    if len(args.runs) < 2:
        err("compare: expected two or more run directories")
        return 2
    dirs = [run_dir(r) for r in args.runs]  # CaseError naming a directory that is not a run: exit 2
    try:
        cmp = compare_runs(dirs)
    except CompareError as exc:
        err(f"compare: {exc}")
        return 2
    outdir = None
    if args.out:
        try:
            outdir = check_output_dir(Path(args.out), "compare", args.force, say=out)
        except OutputError as exc:
            err(f"--out: {exc}")
            return 2
    for line in cmp.lines():
        out(line)
    out("")
    out(caution_text())
    if outdir is not None:
        with atomic_dir(outdir, "compare", args.force) as tmp:
            write_html(cmp, tmp)
        out(f"wrote {outdir / 'compare.html'}")
    return 0
