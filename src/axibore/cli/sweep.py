"""axibore sweep: the case over a grid of values, one run directory a point, on a Dask cluster."""

from __future__ import annotations

import os
from pathlib import Path

from ..version import __version__
from ..safety import caution_text
from .common import FORCE_HELP, add_case_arg, err, load, out, stem

HELP = "parameter sweep: the case over lists of values (product or zip), run on dask.distributed, resumable"


def add_args(p) -> None:
    add_case_arg(p)
    p.add_argument("--vary", action="append", default=[], metavar="KEY=VALUES",
                   help='a dotted case key and its values: a comma list ("bore.half_angle=10 deg,15 deg") or a range '
                        'with a count ("inlet.pressure=3 bar:12 bar:10"); several --vary make their product. '
                        "Default: the [sweep] table of the case")
    p.add_argument("--zip", action="store_true", help="pair the --vary lists (equal lengths) instead of their product")
    p.add_argument("--workers", type=int, default=None,
                   help="Dask worker processes of the local cluster (default: the CPU count; 0: in this process, no Dask)")
    p.add_argument("--scheduler", default=None,
                   help="an existing dask.distributed cluster: address tcp://HOST:PORT or a scheduler file")
    p.add_argument("--out", help="sweep directory (default: runs/<case name>-sweep)")
    p.add_argument("--force", action="store_true", help=FORCE_HELP)
    p.add_argument("--plot", default=None, metavar="KEYS",
                   help="outputs to plot against each varied key, comma-separated (default: forces.total_x_N,"
                        "flow.discharge_coefficient,pressure.min_wall_gauge_Pa)")
    p.add_argument("--keep", choices=["fields"], action="append", default=[],
                   help="--keep fields: bring back the field files (fields.vtu, load surfaces) of every point")


def run(args) -> int:
    from ..case import CaseError
    from ..io.files import OutputError, check_output_dir
    from ..study.sweep import OUTPUT_NAMES, build_points, parse_vary, run_sweep, sweep_from_case

    case = load(args)
    if args.vary:
        pairs = [parse_vary(v) for v in args.vary]
        keys = [k for k, _ in pairs]
        twice = sorted({k for k in keys if keys.count(k) > 1})
        if twice:
            err(f"--vary: {', '.join(twice)} given more than once; give each key once, with all its values in one list")
            return 2
        vary = dict(pairs)
        zip_ = args.zip
    else:
        vary, zip_ = sweep_from_case(case)
        zip_ = zip_ or args.zip
    plots = None
    if args.plot:
        plots = tuple(k.strip() for k in args.plot.split(",") if k.strip())
        unknown = [k for k in plots if k not in OUTPUT_NAMES]
        if unknown:
            err(f"--plot: unknown output {', '.join(unknown)}; expected some of {', '.join(OUTPUT_NAMES)}")
            return 2
    workers = args.workers if args.workers is not None else max(1, os.cpu_count() or 1)
    if workers < 0:
        err(f"--workers: expected 0 or more, got {workers}")
        return 2
    points = build_points(case, vary, zip_, source=case.source)  # CaseError: exit 2, nothing written
    try:
        outdir = check_output_dir(Path(args.out) if args.out else Path("runs") / f"{stem(args)}-sweep", "sweep", args.force)
    except OutputError as exc:
        err(f"--out: {exc}")
        return 2
    out(f"axibore {__version__}: sweep of {case.title}: {len(points)} points of {', '.join(vary)}"
        f"{' (zipped)' if zip_ else ''}")
    from ..study.runner import executor

    try:
        ctx = executor(max(workers, 1), scheduler=args.scheduler, dask=workers > 0)
        ex = ctx.__enter__()
    except OSError as exc:
        err(f"--scheduler: cannot reach the cluster ({exc})")
        return 2
    try:
        result = run_sweep(case, points, outdir, ex, keep_fields="fields" in args.keep, plots=plots, progress=out,
                           vary=vary, zip_=zip_)
    finally:
        ctx.__exit__(None, None, None)
    out("")
    for line in result.lines():
        out(line)
    out("")
    out(caution_text())
    out(f"ran {result.ran}, reused {result.reused}, not ok {len(result.failed)}")
    out(f"wrote {outdir}/ (sweep.html, sweep.csv, sweep.json, plot_vs_*.png, one run directory a point)")
    return 0 if result.ok else 1
