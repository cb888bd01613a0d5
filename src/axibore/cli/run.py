"""axibore run: the whole job on a case (default: the built-in demo)."""

from __future__ import annotations

from pathlib import Path

from .. import __version__
from ..safety import caution_text
from ..solvers import SOLVERS
from ..units import PRESSURE_UNITS
from .common import add_case_arg, err, level, load, out, progress, stem
from .output import headline

HELP = "the whole job on a case (default: the built-in demo): mesh, solve, forces, checks, run directory"


def add_args(p) -> None:
    add_case_arg(p)
    p.add_argument("--out", help="run directory to write (default: runs/<case name>)")
    p.add_argument("--level", type=level, default=None, help="refinement level 0-12 (overrides mesh.level)")
    p.add_argument("--units", choices=list(PRESSURE_UNITS), default="bar",
                   help="pressure unit of the printed numbers, the report and the plots (default bar)")
    p.add_argument("--solver", choices=list(SOLVERS), default=None,
                   help="solver (overrides solver.kind): " + "; ".join(f"{k}: {e.description}" for k, e in SOLVERS.items()))


def run(args) -> int:
    from ..run import RunRefused, run_case
    from ..solvers.base import FlowError

    case = load(args)
    outdir = Path(args.out) if args.out else Path("runs") / stem(args)
    out(f"axibore {__version__}: {case.title}")
    try:
        res = run_case(case, outdir, progress, unit=args.units)
    except RunRefused as exc:
        err(f"{case.source}: cannot run this case yet: {exc}")
        return 2
    except FlowError as exc:
        err(f"{case.source}: {exc.key}: {exc.message}")
        return 2
    s = res.summary()
    out("")
    for line in headline(s, args.units):
        out(line)
    for w in s["warnings"]:
        out(f"warning: {w}")
    out("")
    out(caution_text())
    if s.get("joints"):
        from ..post.joints import CAUTION as JOINT_CAUTION

        out(f"Joints: {JOINT_CAUTION}")
    written = ["report.html"] if (outdir / "report.html").exists() else []
    written += ["summary.json", "wall.csv", "wall_load.vtu", "fields.vtu", "mesh.msh", "case.toml"]
    out(f"wrote {outdir}/ ({', '.join(written)})")
    return 0 if s["solver"]["converged"] else 1
