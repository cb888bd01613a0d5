"""Command line: ``axibore run | check | mesh | ...``. Each command has ``add_args`` and a run
function; ``main(argv) -> int`` wires them (exit 0 ok, 2 bad input, 1 failure)."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from .case import Case, CaseError, demo_case_path, load_case
from .describe import describe
from .safety import caution_text
from .units import show

CAUTION = caution_text()


def _level(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an integer level, got {text!r}") from None
    if not 0 <= v <= 12:
        raise argparse.ArgumentTypeError(f"expected a level from 0 to 12, got {v}")
    return v


def _out(text: str = "") -> None:
    print(text, flush=True)


def _err(text: str) -> None:
    print(text, file=sys.stderr, flush=True)


def _load(path: str | None) -> Case:
    return load_case(path if path else demo_case_path())


# ---------------------------------------------------------------------------------------------
# check


def add_check_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("case", nargs="?", help="case file (TOML); default: the built-in demo")


def cmd_check(args) -> int:
    case = _load(args.case)
    for line in describe(case):
        _out(line)
    _out("ok: the case is valid")
    return 0


# ---------------------------------------------------------------------------------------------
# mesh


def add_mesh_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("case", nargs="?", help="case file (TOML); default: the built-in demo")
    p.add_argument("--out", required=True, help="directory for mesh.msh and mesh.vtu")
    p.add_argument("--level", type=_level, default=None, help="refinement level 0-12 (overrides mesh.level)")


def cmd_mesh(args) -> int:
    from .geometry import build_profile
    from .io.files import atomic_file, write_vtu
    from .mesh.gmsh_build import mesh_profile

    case = _load(args.case)
    if args.level is not None:
        case = case.with_level(args.level)
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    profile = build_profile(case)
    with atomic_file(out / "mesh.msh") as tmp:
        res = mesh_profile(profile, case.mesh.size, case.mesh.level, case.mesh.cells, msh_path=tmp)
    write_vtu(out / "mesh.vtu", res.mesh, {"cell_area_m2": res.mesh.cell_area})
    q = res.mesh.quality()
    _out(f"mesh      {q['cells']:,} cells ({q['triangles']:,} triangles, {q['quads']:,} quads), {q['faces']:,} faces, "
         f"level {case.mesh.level}, target {show(res.h_target, 'length')}, {res.seconds:.2f} s")
    _out(f"quality   non-orthogonality max {q['max_non_orthogonality_deg']:.1f} deg (mean {q['mean_non_orthogonality_deg']:.1f}), "
         f"skewness max {q['max_skewness']:.3f}, aspect ratio max {q['max_aspect_ratio']:.2f}")
    _out("boundary  " + ", ".join(f"{k} {v}" for k, v in sorted(q["boundary_faces"].items())) + " faces")
    _out(f"wrote     {out / 'mesh.msh'}, {out / 'mesh.vtu'}")
    return 0


# ---------------------------------------------------------------------------------------------
# run


def headline(summary: dict) -> list[str]:
    """The numbers an engineer signs off, as printed lines."""
    fl, p, f, o = summary["flow"], summary["pressure"], summary["forces"], summary["onedim"]
    rows = [
        ("volume flow", show(fl["volume_flow_m3_s"], "volume_flow")),
        ("mass flow", show(fl["mass_flow_kg_s"], "mass_flow")),
        ("mean velocity in / out", f"{fl['inlet_mean_velocity_m_s']:.4g} / {fl['outlet_mean_velocity_m_s']:.4g} m/s"),
        ("discharge coefficient", "-" if fl["discharge_coefficient"] is None else f"{fl['discharge_coefficient']:.5f}"),
        ("inlet / outlet pressure", f"{show(p['inlet_gauge_Pa'], 'pressure')} / {show(p['outlet_gauge_Pa'], 'pressure')} gauge"),
        ("wall force x", show(f["wall_x_N"], "force") + ("  (+x = downstream, on the part)")),
    ]
    if summary["forces"]["centerbody_x_N"]:
        rows.append(("centre-body force x", show(f["centerbody_x_N"], "force")))
    rows += [
        ("momentum balance x", f"{show(f['momentum_x_N'], 'force')}  (reconciliation {f['reconciliation_rel']:+.2e})"),
        ("1D formula x", f"{show(f['onedim_x_N'], 'force')}  (2D - 1D: {o['force_dev_rel']:+.3%})" if o["force_dev_rel"] is not None else show(f["onedim_x_N"], "force")),
    ]
    if f["per_bolt_N"] is not None:
        rows.append(("per bolt", f"{show(f['per_bolt_N'], 'force')}  ({f['bolts']} bolts, wall force shared equally)"))
    rows += [
        ("min wall pressure", f"{show(p['min_wall_gauge_Pa'], 'pressure')} gauge at x = {show(p['min_wall_x_m'], 'length')} ({p['min_wall_boundary']})"),
        ("min wall pressure abs", f"{show(p['min_wall_absolute_Pa'], 'pressure')} (vapour {show(p['vapour_pressure_Pa'], 'pressure')})"),
        ("cavitation index", f"{p['cavitation_index']:.4g} (inception at {p['inception_index']:.4g})"),
        ("1D wall-pressure dev", f"{o['wall_pressure_max_dev']:.3%} of outlet dynamic pressure; above {o['breakdown_threshold']:.3g}: "
         + (", ".join(f"x {a * 1e3:.4g}-{b * 1e3:.4g} mm" for a, b in o["breakdown_x_ranges_m"]) or "nowhere")),
        ("outlet beta / alpha", f"{o['outlet_momentum_factor']:.5f} / {o['outlet_energy_factor']:.5f}"),
        ("mesh / solve", f"{summary['mesh']['cells']:,} cells ({summary['mesh']['method']}), residual {summary['solver']['residual']:.1e}, "
         f"mass imbalance {summary['solver']['mass_imbalance']:.1e}"),
    ]
    width = max(len(k) for k, _ in rows)
    return [f"  {k:<{width}}  {v}" for k, v in rows]


def add_run_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("case", nargs="?", help="case file (TOML); default: the built-in demo")
    p.add_argument("--out", help="run directory to write (default: runs/<case name>)")
    p.add_argument("--level", type=_level, default=None, help="refinement level 0-12 (overrides mesh.level)")


def _progress(stage: str, detail: str) -> None:
    _out(f"[{stage}] {detail}")


def cmd_run(args) -> int:
    from .run import RunRefused, run_case
    from .solvers.flow import FlowError

    case = _load(args.case)
    if args.level is not None:
        case = case.with_level(args.level)
    stem = Path(args.case).stem if args.case else "demo"
    out = Path(args.out) if args.out else Path("runs") / stem
    _out(f"axibore {__version__}: {case.title}")
    try:
        res = run_case(case, out, _progress)
    except RunRefused as exc:
        _err(f"{case.source}: cannot run this case yet: {exc}")
        return 2
    except FlowError as exc:
        _err(f"{case.source}: {exc.key}: {exc.message}")
        return 2
    s = res.summary()
    _out("")
    for line in headline(s):
        _out(line)
    for w in s["warnings"]:
        _out(f"warning: {w}")
    _out("")
    _out(CAUTION)
    _out(f"wrote {out}/ (report.html, summary.json, wall.csv, wall_load.vtu, fields.vtu, mesh.msh, case.toml)")
    return 0


# ---------------------------------------------------------------------------------------------
# gridstudy


def _levels(text: str) -> list[int]:
    try:
        levels = [int(v) for v in text.split(",") if v.strip()]
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected comma-separated integers, got {text!r}") from None
    if len(levels) < 2 or any(not 0 <= v <= 12 for v in levels) or len(set(levels)) != len(levels):
        raise argparse.ArgumentTypeError("expected two or more distinct levels from 0 to 12, e.g. 0,1,2,3")
    return sorted(levels)


def add_gridstudy_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("case", nargs="?", help="case file (TOML); default: the built-in demo")
    p.add_argument("--levels", type=_levels, default=[0, 1, 2, 3], help="mesh levels, e.g. 0,1,2,3 (default)")
    p.add_argument("--out", help="study directory (default: runs/<case name>-gridstudy)")


def cmd_gridstudy(args) -> int:
    from .study.gridstudy import run_grid_study, table_lines

    case = _load(args.case)
    refused = case.unsupported()
    if refused:
        _err(f"{case.source}: cannot run this case yet: {'; '.join(refused)}")
        return 2
    stem = Path(args.case).stem if args.case else "demo"
    out = Path(args.out) if args.out else Path("runs") / f"{stem}-gridstudy"
    _out(f"axibore {__version__}: grid study of {case.title}, levels {','.join(map(str, args.levels))}")
    study = run_grid_study(case, args.levels, out, _out)
    _out("")
    for line in table_lines(study):
        _out(line)
    _out("")
    _out("GCI: Celik et al. 2008, J. Fluids Eng. 130(7) 078001; safety factor 1.25 (three or more grids), 3 (two).")
    _out(f"wrote {out}/ (gridstudy.json, gridstudy.csv, convergence.png, level-N/ run directories)")
    return 0 if any(lv.summary for lv in study.levels) else 1


# ---------------------------------------------------------------------------------------------
# view and report


def _run_dir(path: str) -> Path:
    p = Path(path)
    if not (p / "summary.json").exists():
        raise CaseError(str(p), [("", "not a run directory (no summary.json): give a directory written by `axibore run`")])
    return p


def add_view_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("run_dir", help="run directory written by `axibore run`")
    p.add_argument("--field", choices=["pressure", "speed", "cp"], default="pressure", help="field on the cut planes")
    p.add_argument("--angle", type=float, default=270.0, help="revolution angle in degrees (default 270: a cut-away)")
    p.add_argument("--png", help="render off-screen to this PNG instead of opening a window")
    p.add_argument("--meridional", action="store_true", help="flat meridional view with streamlines")


def cmd_view(args) -> int:
    from .view.scene import render

    run = _run_dir(args.run_dir)
    if not 0 < args.angle <= 360:
        _err(f"--angle: expected 0 < angle <= 360 degrees, got {args.angle:g}")
        return 2
    png, info = render(run, args.field, args.angle, args.png, meridional=args.meridional)
    lo, hi = info.field_range
    if png is not None:
        _out(f"wrote {png} ({args.field} {lo:.6g} to {hi:.6g})")
    return 0


def add_report_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("run_dir", help="run directory written by `axibore run`")
    p.add_argument("--no-3d", action="store_true", help="leave out the rendered 3D view")


def cmd_report(args) -> int:
    from .view.report import build_report

    run = _run_dir(args.run_dir)
    path = build_report(run, include_3d=not args.no_3d)
    _out(f"wrote {path}")
    return 0


# ---------------------------------------------------------------------------------------------
# verify


def add_verify_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("--out", default="runs/verify", help="directory for verify.csv and verify.json (default runs/verify)")
    p.add_argument("--quick", action="store_true", help="coarser grids (seconds instead of about a minute)")


def cmd_verify(args) -> int:
    from .study.verify import run_verification, table_lines

    _out(f"axibore {__version__}: verification against exact solutions and published values")
    rows = run_verification(Path(args.out), quick=args.quick, progress=_out)
    _out("")
    for line in table_lines(rows):
        _out(line)
    failed = [r for r in rows if not r.passed]
    _out("")
    _out(f"{len(rows) - len(failed)} passed, {len(failed)} failed; wrote {args.out}/verify.csv")
    return 1 if failed else 0


# ---------------------------------------------------------------------------------------------

COMMANDS = {
    "run": ("the whole job on a case (default: the built-in demo): mesh, solve, forces, checks, run directory",
            add_run_args, cmd_run),
    "check": ("validate a case and print what was understood", add_check_args, cmd_check),
    "mesh": ("build the meridional mesh of a case and report its quality", add_mesh_args, cmd_mesh),
    "gridstudy": ("grid-convergence study: the case at several mesh levels, observed order, extrapolation, GCI",
                  add_gridstudy_args, cmd_gridstudy),
    "view": ("show a run in 3D (PyVista window, or PNG off-screen)", add_view_args, cmd_view),
    "report": ("rebuild report.html of a run directory", add_report_args, cmd_report),
    "verify": ("run the verification set (exact solutions, published values) and tabulate the errors",
               add_verify_args, cmd_verify),
}


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="axibore",
        description="Axisymmetric wall pressure, axial force and 1D-breakdown analysis of bores carrying fluid.",
    )
    parser.add_argument("--version", action="version", version=f"axibore {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (help_text, add_args, func) in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        add_args(p)
        p.set_defaults(func=func)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        return int(args.func(args) or 0)
    except CaseError as exc:
        for line in exc.lines():
            _err(line)
        return 2
    except KeyboardInterrupt:
        _err("interrupted: nothing half-written was left behind")
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
