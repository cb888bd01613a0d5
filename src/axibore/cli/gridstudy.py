"""axibore gridstudy: the case at several mesh levels, observed order, extrapolation, GCI."""

from __future__ import annotations

from pathlib import Path

from ..version import __version__
from .common import FORCE_HELP, add_case_arg, err, levels, load, out, refused, stem

HELP = "grid-convergence study: the case at several mesh levels, observed order, extrapolation, GCI"


def add_args(p) -> None:
    add_case_arg(p)
    p.add_argument("--levels", type=levels, default=[0, 1, 2, 3], help="mesh levels, e.g. 0,1,2,3 (default)")
    p.add_argument("--out", help="study directory (default: runs/<case name>-gridstudy)")
    p.add_argument("--force", action="store_true", help=FORCE_HELP)
    p.add_argument("--workers", type=int, default=1, help="levels run side by side in this many processes (default 1; with --dask: Dask workers)")
    p.add_argument("--dask", action="store_true", help="run the levels on a local dask.distributed cluster of --workers processes")
    p.add_argument("--scheduler", default=None,
                   help="run the levels on an existing dask.distributed cluster (address tcp://HOST:PORT or a scheduler file)")
    p.add_argument("--keep", choices=["fields"], action="append", default=[],
                   help="--keep fields: keep the field files (fields.vtu, load surfaces) of every level, "
                        "not only of the finest")


def run(args) -> int:
    from ..study.gridstudy import run_grid_study, table_lines
    from ..study.runner import executor

    case = load(args)
    if refused(case):
        return 2
    if args.workers < 1:
        err(f"--workers: expected 1 or more, got {args.workers}")
        return 2
    from ..io.files import OutputError, check_output_dir

    try:
        outdir = check_output_dir(Path(args.out) if args.out else Path("runs") / f"{stem(args)}-gridstudy", "gridstudy", args.force)
    except OutputError as exc:
        err(f"--out: {exc}")
        return 2
    out(f"axibore {__version__}: grid study of {case.title}, levels {','.join(map(str, args.levels))}")
    with executor(args.workers, scheduler=args.scheduler, dask=args.dask) as ex:
        study = run_grid_study(case, args.levels, outdir, out, executor=ex, keep_fields="fields" in args.keep)
    out("")
    for line in table_lines(study):
        out(line)
    out("")
    out("GCI: Celik et al. 2008, J. Fluids Eng. 130(7) 078001; safety factor 1.25 (three or more grids), 3 (two grids, "
        "or an observed order more than 10 % from the design order: Roy 2010, AIAA 2010-126).")
    out(f"wrote {outdir}/ (gridstudy.html, gridstudy.json, gridstudy.csv, convergence.png, level-N/ run directories)")
    bad = [lv for lv in study.levels if lv.error]
    for lv in bad:
        err(f"level {lv.level}: {lv.error}")
    return 1 if bad else 0
