"""axibore mesh: build the meridional mesh of a case and report its quality."""

from __future__ import annotations

from pathlib import Path

from .common import add_case_arg, level, load, out
from .output import mesh_lines

HELP = "build the meridional mesh of a case and report its quality"


def add_args(p) -> None:
    add_case_arg(p)
    p.add_argument("--out", required=True, help="directory for mesh.msh and mesh.vtu")
    p.add_argument("--level", type=level, default=None, help="refinement level 0-12 (overrides mesh.level)")


def run(args) -> int:
    from ..io.files import atomic_file, write_vtu
    from ..mesh import mesh_profile

    case = load(args)
    outdir = Path(args.out)
    outdir.mkdir(parents=True, exist_ok=True)
    profile = case.profile
    if case.outlet.kind == "free-jet":  # the bore with the first trial jet, as the first outer iteration meshes it
        from ..geometry.jet import first_trial
        from ..mesh import target_size

        profile = first_trial(profile, target_size(profile, case.mesh.size, case.mesh.level))
        out("free jet: the bore with the first trial jet (the run keeps this mesh and moves its nodes with the jet)")
    with atomic_file(outdir / "mesh.msh") as tmp:
        res = mesh_profile(profile, case.mesh.size, case.mesh.level, case.mesh.cells, msh_path=tmp)
    write_vtu(outdir / "mesh.vtu", res.mesh, {"cell_area_m2": res.mesh.cell_area})
    for line in mesh_lines(res, case.mesh.level):
        out(line)
    out(f"wrote     {outdir / 'mesh.msh'}, {outdir / 'mesh.vtu'}")
    return 0
