"""axibore run: the whole job on a case (default: the built-in demo)."""

from __future__ import annotations

from pathlib import Path

from ..version import __version__
from ..safety import caution_text
from ..solvers import SOLVERS
from ..units import PRESSURE_UNITS
from .common import FORCE_HELP, add_case_arg, err, level, load, out, progress, stem
from .output import headline

RECONCILIATION_LIMIT = 0.05  # a run whose wall force and momentum balance differ more is not a result

HELP = "the whole job on a case (default: the built-in demo): mesh, solve, forces, checks, run directory"


def add_args(p) -> None:
    add_case_arg(p)
    p.add_argument("--out", help="run directory to write (default: runs/<case name>)")
    p.add_argument("--level", type=level, default=None, help="refinement level 0-12 (overrides mesh.level)")
    p.add_argument("--max-cells", type=int, default=None,
                   help="run even if the mesh exceeds the memory-based cell limit of this machine (this many cells at most)")
    p.add_argument("--force", action="store_true", help=FORCE_HELP)
    p.add_argument("--units", choices=list(PRESSURE_UNITS), default="bar",
                   help="pressure unit of the printed numbers, the report and the plots (default bar)")
    p.add_argument("--solver", choices=list(SOLVERS), default=None,
                   help="solver (overrides solver.kind): " + "; ".join(f"{k}: {e.description}" for k, e in SOLVERS.items()))


def run(args) -> int:
    from ..run import RunRefused, run_case
    from ..outlets import JetNotSettled
    from ..solvers.base import FlowError

    from ..io.files import OutputError, check_output_dir

    case = load(args)
    if args.max_cells is not None and args.max_cells < 1:
        err(f"--max-cells: expected a positive number of cells, got {args.max_cells}")
        return 2
    try:
        outdir = check_output_dir(Path(args.out) if args.out else Path("runs") / stem(args), "run", args.force, say=out)
    except OutputError as exc:
        err(f"--out: {exc}")
        return 2
    out(f"axibore {__version__}: {case.title}")
    if case.model.uncertainty:
        out("note: the case has an [uncertainty] table; `axibore uncertainty CASE` gives every headline number with "
            "its numerical and input uncertainty (this run is one point of it)")
    try:
        res = run_case(case, outdir, progress, unit=args.units, max_cells=args.max_cells, force=args.force)
    except RunRefused as exc:
        err(f"{case.source}: cannot run this case yet: {exc}")
        return 2
    except JetNotSettled as exc:  # it ran, but did not converge: exit 1 as any unconverged solve
        err(f"{case.source}: NOT CONVERGED: {exc.key}: {exc.message}")
        return 1
    except FlowError as exc:
        err(f"{case.source}: {exc.key}: {exc.message}")
        return 2
    s = res.summary()
    out("")
    for line in headline(s, args.units):
        out(line)
    for w in s["warnings"]:
        out(f"warning: {w}")
    for j in s.get("joints", []):
        if j["note"]:
            out(f"note: joint {j['name']}: {j['note']}")
    out("")
    out(caution_text())
    if s.get("joints"):
        from ..post.joints import CAUTION as JOINT_CAUTION

        out(f"Joints: {JOINT_CAUTION}")
    if (s.get("viscous") or {}).get("caution"):
        out(f"Wall layer: {s['viscous']['caution']}")
    written = ["report.html"] if (outdir / "report.html").exists() else []
    written += ["summary.json", "wall.csv", "wall_load.vtu", "fields.vtu", "case.toml"]
    out(f"wrote {outdir}/ ({', '.join(written)})")
    if abs(s["forces"]["reconciliation_rel"] or 0.0) > RECONCILIATION_LIMIT:
        err(f"the wall force and the momentum balance differ by {s['forces']['reconciliation_rel']:+.2%} (more than "
            f"{RECONCILIATION_LIMIT:.0%}): the mesh is too coarse for this bore; the numbers are not reliable (exit 1)")
        return 1
    return 0 if s["solver"]["converged"] else 1
