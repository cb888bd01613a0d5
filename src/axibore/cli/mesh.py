"""axibore mesh: build the meridional mesh of a case and report its quality."""

from __future__ import annotations

from pathlib import Path

from .common import FORCE_HELP, add_case_arg, err, level, load, out
from .output import mesh_lines

HELP = "build the meridional mesh of a case and report its quality"


def add_args(p) -> None:
    add_case_arg(p)
    p.add_argument("--out", required=True, help="folder for mesh.msh and mesh.vtu")
    p.add_argument("--level", type=level, default=None, help="refinement level 0-12 (overrides mesh.level)")
    p.add_argument("--max-cells", type=int, default=None,
                   help="mesh even if it exceeds the memory-based cell limit of this machine (this many cells at most)")
    p.add_argument("--force", action="store_true", help=FORCE_HELP)


def run(args) -> int:
    from ..budget import budget, refusal
    from ..geometry.jet import first_trial
    from ..io.files import OutputError, atomic_dir, check_output_dir, write_vtu
    from ..mesh import mesh_profile, target_size
    from ..names import free_jet

    case = load(args)
    if args.max_cells is not None and args.max_cells < 1:
        err(f"--max-cells: expected a positive number of cells, got {args.max_cells}")
        return 2
    try:
        outdir = check_output_dir(Path(args.out), "mesh", args.force, say=out)
    except OutputError as exc:
        err(f"--out: {exc}")
        return 2
    b = budget(case, args.max_cells, precise=False)  # the cell limit of `run`, before Gmsh is asked for anything
    if not b.within:
        err(f"{case.source}: {refusal(b)}")
        return 2
    profile = case.profile
    if free_jet(case.outlet.kind):  # the bore with the first trial jet, as the free-jet solve meshes it
        profile = first_trial(profile, target_size(profile, case.mesh.size, case.mesh.level))
        out("free jet: the bore with the first trial jet (the run keeps this mesh and moves its nodes with the jet)")
    with atomic_dir(outdir, "mesh", args.force) as tmp:
        res = mesh_profile(profile, case.mesh.size, case.mesh.level, case.mesh.cells, msh_path=tmp / "mesh.msh")
        write_vtu(tmp / "mesh.vtu", res.mesh, {"cell_area_m2": res.mesh.cell_area})
    for line in mesh_lines(res, case.mesh.level):
        out(line)
    out(f"wrote     {outdir / 'mesh.msh'}, {outdir / 'mesh.vtu'}")
    return 0
