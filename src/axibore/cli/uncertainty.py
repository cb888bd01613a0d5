"""axibore uncertainty: every headline number with its numerical and input uncertainty."""

from __future__ import annotations

from pathlib import Path

from ..version import __version__
from .common import FORCE_HELP, add_case_arg, err, levels, load, out, refused, stem

HELP = "every headline number with its uncertainty: grid (GCI) and inputs ([uncertainty], --input), combined"


def add_args(p) -> None:
    add_case_arg(p)
    p.add_argument("--levels", type=levels, default=[0, 1, 2], help="mesh levels of the grid study (default 0,1,2)")
    p.add_argument("--input", action="append", default=[], metavar="KEY=U",
                   help='standard uncertainty of a case key, e.g. "inlet.pressure=0.1 bar" or "inlet.flow_rate=1 %%" '
                        "(adds to or overrides the case's [uncertainty] table)")
    p.add_argument("--method", choices=["linear", "montecarlo"], default="linear",
                   help="first-order propagation by central differences (default), or Latin-hypercube Monte Carlo")
    p.add_argument("--samples", type=int, default=32, help="Monte Carlo samples (default 32)")
    p.add_argument("--out", help="study folder (default: runs/<case name>-uncertainty)")
    p.add_argument("--force", action="store_true", help=FORCE_HELP)
    p.add_argument("--workers", type=int, default=1, help="runs side by side in this many processes (default 1)")
    p.add_argument("--scheduler", default=None, help="an existing dask.distributed cluster (tcp://HOST:PORT or a scheduler file)")


def run(args) -> int:
    from ..case import CaseError
    from ..io.files import check_output_dir
    from ..study.runner import executor
    from ..study.uncertainty import CAUTION, parse_inputs, run_uncertainty

    case = load(args)
    if refused(case):
        return 2
    if args.workers < 1 or args.samples < 2:
        err(f"--workers / --samples: expected at least 1 worker and 2 samples, got {args.workers} and {args.samples}")
        return 2
    table = dict(case.model.uncertainty or {})
    given = {}
    for text in args.input:
        key, sep, value = text.partition("=")
        if not sep or not key.strip() or not value.strip():
            err(f'--input: expected KEY=U such as "inlet.pressure=0.1 bar", got {text!r}')
            return 2
        if key.strip() in given:
            err(f"--input: {key.strip()} given more than once")
            return 2
        given[key.strip()] = value.strip()
    try:
        inputs = parse_inputs(case, table, case.source) if table else []
        cli_inputs = parse_inputs(case, given, "--input") if given else []
    except CaseError as exc:
        for line in exc.lines():
            err(line)
        return 2
    merged = {i.key: i for i in inputs}
    merged.update({i.key: i for i in cli_inputs})
    if not merged:
        out("note: no input uncertainties ([uncertainty] or --input): the numerical uncertainty alone")
    outdir = check_output_dir(Path(args.out) if args.out else Path("runs") / f"{stem(args)}-uncertainty", "uncertainty",
                              args.force, say=out)
    out(f"axibore {__version__}: uncertainty of {case.title}, levels {','.join(map(str, args.levels))}, "
        f"{len(merged)} inputs, {args.method}")
    with executor(args.workers, scheduler=args.scheduler, dask=bool(args.scheduler)) as ex:
        res = run_uncertainty(case, list(merged.values()), args.levels, outdir, ex, args.method, args.samples, out)
    out("")
    for line in res.lines():
        out(line)
    out("")
    out("u_num: GCI (Celik et al. 2008) / 2; u_input: central differences (or Monte Carlo); U = 2 u_c "
        "(ASME V&V 20-2009; GUM, JCGM 100:2008).")
    out(f"Caution: {CAUTION}")
    out(f"wrote {outdir}/ (uncertainty.html, uncertainty.json, uncertainty.csv, runs/)")
    if res.failed:
        for f in res.failed:
            err(f"run failed or did not converge: {f}")
        return 1
    return 0
