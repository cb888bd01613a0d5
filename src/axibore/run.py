"""The whole job on one case, as orchestration only: profile -> mesh -> flow (the registered
solver) -> wall tables, forces, 1D comparison, checks. ``solve_case`` computes in memory;
``run_case`` also writes the run directory (through ``io.rundir``, atomically).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Callable

import numpy as np

from .case import Case
from .geometry import Profile
from .mesh import FVMesh
from .mesh.gmsh_build import MeshBuild, mesh_profile
from .post.checks import Checks, checks
from .post.joints import JointLoad, jet_reaction, joint_loads
from .post.loads import Forces, WallTable, forces, wall_tables
from .post.onedim import OneDimComparison, compare
from .solvers import SOLVERS
from .solvers.base import FlowResult

Progress = Callable[[str, str], None]


class RunRefused(ValueError):
    """The case asks for a capability this version cannot run."""


@dataclass(eq=False)
class RunResult:
    case: Case
    profile: Profile
    mesh: FVMesh
    mesh_build: MeshBuild
    flow: FlowResult
    tables: dict[str, WallTable]
    forces: Forces
    onedim: OneDimComparison
    checks: Checks
    seconds: dict[str, float] = field(default_factory=dict)
    mesh_quality: dict = field(default_factory=dict)
    joints: list[JointLoad] = field(default_factory=list)
    jet_reaction_N: float | None = None
    viscous: object | None = None  # viscous.stage.ViscousResult when the wall layer ran
    jet: "object | None" = None  # solvers.freejet.JetSolution of a free-jet outlet
    exit_plane: dict | None = None  # free jet: the exit-plane model of the same bore, for comparison

    def summary(self) -> dict:
        from .io.summary import build_summary

        return build_summary(self)


def _quiet(stage: str, detail: str) -> None:
    pass


def solve_case(case: Case, progress: Progress | None = None, msh_path: str | Path | None = None,
               max_cells: int | None = None) -> RunResult:
    """Solve ``case`` in memory. Refused (RunRefused) when the case asks for what this version
    cannot run, or when its mesh would exceed the memory of this machine (``max_cells`` overrides)."""
    from .budget import budget, refusal

    progress = progress or _quiet
    refused = case.unsupported()
    if refused:
        raise RunRefused("; ".join(refused))
    b = budget(case, max_cells, precise=False)
    if not b.within:
        raise RunRefused(refusal(b))
    sec: dict[str, float] = {}
    profile = case.profile
    jet = None
    if case.outlet.kind == "free-jet":
        from .solvers.freejet import solve_free_jet

        def mesher(prof, h, path=None):
            return mesh_profile(prof, case.mesh.size, case.mesh.level, case.mesh.cells, msh_path=path, h=h)

        t = time.perf_counter()
        progress("solve", "free jet: moving the jet boundary until it is a free streamline (remeshing as it moves)")
        jet, profile, build, flow = solve_free_jet(case, profile, mesher, progress, msh_path=msh_path)
        mesh = build.mesh
        sec["mesh"] = sum(b for b in jet.mesh_seconds)
        sec["solve"] = time.perf_counter() - t - sec["mesh"]
        progress("solve", f"free jet settled in {len(jet.history)} iterations: contraction coefficient "
                 f"{jet.contraction_coefficient:.4f}, speed on the jet boundary within {jet.speed_mismatch:.2%} of the jet "
                 f"speed (rms {jet.speed_mismatch_rms:.2%}); {mesh.n_cells:,} cells, {build.method}")
    else:
        t = time.perf_counter()
        progress("mesh", f"meshing ({case.mesh.cells}, level {case.mesh.level})")
        build = mesh_profile(profile, case.mesh.size, case.mesh.level, case.mesh.cells, msh_path=msh_path)
        mesh = build.mesh
        sec["mesh"] = time.perf_counter() - t
        progress("mesh", f"{mesh.n_cells:,} cells, {build.method}, {sec['mesh']:.2f} s")
        t = time.perf_counter()
        solver = SOLVERS[case.solver_kind].load()
        flow = solver(case, profile, mesh, progress)
        sec["solve"] = time.perf_counter() - t
    if not (np.all(np.isfinite(flow.pressure)) and np.all(np.isfinite(flow.velocity)) and np.isfinite(flow.mass_flow)):
        from .solvers.base import FlowError

        key = "inlet.total_pressure" if flow.compressible else ("inlet.flow_rate" if case.inlet.flow_rate else "inlet.pressure")
        raise FlowError(key, "the solution is not finite (NaN or infinite pressures or speeds): the operating point is "
                        "beyond what the numbers can hold; check the value and its unit")
    rec = flow.record
    sec["assembly"] = rec.seconds_assembly
    sec["linear_solve"] = rec.seconds_solve
    progress("solve", f"{rec.solver}: {rec.method}, {rec.iterations} iterations, residual {rec.residual:.2e}, {sec['solve']:.2f} s")
    t = time.perf_counter()
    tables = wall_tables(flow, profile)
    frc = forces(flow, tables)
    joints = joint_loads(case, profile, flow, tables)
    od = compare(case, profile, flow, tables, frc.total_x_N, frc.onedim_x_N)
    if od.onedim_force_N is not None:
        frc = replace(frc, onedim_x_N=od.onedim_force_N)
    chk = checks(case, profile, flow, tables, frc, od)
    quality = mesh.quality()
    sec["post"] = time.perf_counter() - t
    viscous = None
    if case.viscous_model == "integral":  # the wall-layer stage: adds results, changes no inviscid number
        from .viscous.stage import viscous_stage

        t = time.perf_counter()
        viscous = viscous_stage(case, profile, mesh, flow, tables, od, progress, build)
        chk.warnings.extend(viscous.warnings)
        sec["viscous"] = time.perf_counter() - t
    exit_plane = _exit_plane_model(case, frc, flow, progress) if jet is not None else None
    return RunResult(case, profile, mesh, build, flow, tables, frc, od, chk, sec, quality, joints, jet_reaction(case, flow),
                     viscous, jet, exit_plane)


def _exit_plane_model(case: Case, frc: Forces, flow: FlowResult, progress: Progress) -> dict:
    """The simpler model beside a free-jet run: the same bore and operating point with the jet taken to
    leave the lip plane uniformly (outlet.kind = "exit-plane"), solved at the same mesh settings."""
    from .case import CaseError
    from .geometry import ProfileError
    from .solvers.base import FlowError

    try:
        ep_case = case.with_updates({"outlet.kind": "exit-plane", "viscous.model": "none"})
        progress("solve", "exit-plane model of the same bore, for comparison")
        ep = solve_case(ep_case)
    except (CaseError, ProfileError, FlowError, RunRefused) as exc:
        return {"note": f"the exit-plane model could not be solved for this outline: {exc}"}
    from .geometry.jet import lip_angle

    backwards = lip_angle(case.profile) < -math.pi / 2 - 1e-9
    return {
        "volume_flow_m3_s": ep.flow.volume_flow,
        "total_x_N": ep.forces.total_x_N,
        "min_wall_gauge_Pa": ep.checks.min_wall_gauge_Pa,
        "flow_rel_diff": ep.flow.volume_flow / flow.volume_flow - 1.0,
        "force_rel_diff": ep.forces.total_x_N / frc.total_x_N - 1.0 if frc.total_x_N else None,
        "note": ("the same bore with outlet.kind = \"exit-plane\" (jet leaving the lip plane uniformly at ambient "
                 "pressure); *_rel_diff = exit-plane / free-jet - 1"
                 + ("; the wall arrives at the lip running upstream (a re-entrant tube), so the exit plane cuts the flow "
                    "where it is not a jet: this comparison is not meaningful" if backwards else "")),
    }


def run_case(case: Case, out_dir: str | Path, progress: Progress | None = None, report: bool = True,
             unit: str = "bar", max_cells: int | None = None) -> RunResult:
    """Solve ``case`` and write its run directory; the directory appears complete or not at all.

    ``report``: also draw the plots and write report.html (the view stage; timed separately).
    """
    from .io.files import atomic_dir, clean_stale_partials
    from .io.rundir import write_report, write_run

    progress = progress or _quiet
    for d in clean_stale_partials(Path(out_dir).parent):
        progress("write", f"removed {d.name}, left by an interrupted run")
    with atomic_dir(out_dir) as tmp:
        res = solve_case(case, progress, msh_path=tmp / "mesh.msh", max_cells=max_cells)
        write_run(res, tmp)
        if report:
            progress("report", "plots, 3D view and report.html")
            t = time.perf_counter()
            error = write_report(tmp, shown_dir=out_dir, unit=unit)
            if error:
                progress("report", f"NOT built ({error}); see report_error.txt")
            res.seconds["report"] = time.perf_counter() - t
    progress("write", f"run directory {out_dir}")
    return res


def run(case_or_path: "Case | str | Path | None" = None, out: str | Path | None = None, progress: Progress | None = None,
        report: bool = True, max_cells: int | None = None, **updates) -> RunResult:
    """The Python entry point: run a case and return its ``RunResult`` (``.summary()`` is summary.json).

    ``case_or_path``: a ``Case``, a case-file path, or None for the built-in demo. ``updates``: dotted
    case keys, as ``**{"mesh.level": 1}`` or with ``__`` for the dots (``mesh__level=1``); values as in a
    case file (``bore__half_angle="12 deg"``). ``out``: also write the run directory there (refused, as on
    the command line, when it is a file or a folder that is not an earlier run); None: in memory only.
    Raises ``CaseError`` for bad input, ``RunRefused`` for what this version cannot run.
    """
    from .case import demo_case_path, load_case

    case = case_or_path if isinstance(case_or_path, Case) else load_case(case_or_path or demo_case_path())
    if updates:
        case = case.with_updates({k.replace("__", "."): v for k, v in updates.items()})
    if out is None:
        return solve_case(case, progress, max_cells=max_cells)
    from .io.files import check_output_dir

    return run_case(case, check_output_dir(out), progress, report=report, max_cells=max_cells)


class _CallableModule(__import__("types").ModuleType):
    """``axibore.run`` is this module and the function ``run`` at once: ``axibore.run("case.toml")``."""

    def __call__(self, *args, **kwargs) -> RunResult:
        return run(*args, **kwargs)


__import__("sys").modules[__name__].__class__ = _CallableModule
