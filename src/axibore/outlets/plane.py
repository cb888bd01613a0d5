"""Outlets through a plane: ``pipe`` (the outlet plane inside a continuing pipe, at the given
pressure) and ``exit-plane`` (discharge to ambient through the exit plane). Both mesh the bore
once and call the registered solver once; the solver reads which one from the case."""

from __future__ import annotations

import time

from ..geometry import Profile
from ..mesh import mesh_profile
from .base import OutletFlow, Progress


class PlaneOutlet:
    def __init__(self, kind: str):
        self.kind = kind

    def solve(self, case, profile: Profile, solver, progress: Progress, msh_path=None) -> OutletFlow:
        t = time.perf_counter()
        progress("mesh", f"meshing ({case.mesh.cells}, level {case.mesh.level})")
        build = mesh_profile(profile, case.mesh.size, case.mesh.level, case.mesh.cells, msh_path=msh_path)
        mesh_s = time.perf_counter() - t
        progress("mesh", f"{build.mesh.n_cells:,} cells, {build.method}, {mesh_s:.2f} s")
        t = time.perf_counter()
        flow = solver.load()(case, profile, build.mesh, progress)
        return OutletFlow(profile, build, flow, None, mesh_s, time.perf_counter() - t)
