"""The whole job on one case, as one straight sequence: profile -> outlet model + registered solver
(mesh and flow) -> wall tables -> wall layer -> post (forces, joints, 1D answer, checks) -> result.
``solve_case`` computes in memory; ``run_case`` also writes the run directory (atomically) and its
report.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace
from functools import cached_property
from pathlib import Path
from typing import Callable

import numpy as np

from .budget import budget, refusal
from .case import Case, demo_case_path, load_case
from .geometry import Profile
from .describe import UNDERSTOOD, describe
from .io.files import atomic_dir, atomic_write_text, check_output_dir, clean_stale_partials
from .io.rundir import write_run
from .io.summary import build_summary
from .mesh import FVMesh, MeshBuild
from .outlets import ExitPlaneComparison, JetSolution, outlet_model
from .outlets.base import quiet
from .post.checks import Checks, checks
from .post.jet import JetTable, jet_table, lip_warning, momentum_attempt_warning
from .post.joints import JointLoad, jet_reaction, joint_loads
from .post.loads import Forces, WallTable, forces, wall_tables
from .post.onedim import HandAnswer, OneDimComparison, compare, hand_answer
from .post.stream import stream_function
from .solvers import SOLVERS
from .solvers.base import FlowError, FlowResult
from .view.report import write_report
from .viscous.stage import LayerWithheld, ViscousResult, viscous_stage

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
    joints: list[JointLoad] = field(default_factory=list)
    jet_reaction_N: float | None = None
    viscous: ViscousResult | None = None
    jet: JetSolution | None = None  # a free-jet outlet's jet
    exit_plane: ExitPlaneComparison | None = None  # free jet: the exit-plane model of the same bore
    jet_table: JetTable | None = None  # free jet: the values on the settled jet boundary
    hand: HandAnswer | None = None  # the 1D answer by hand from the same inputs (liquids)

    def summary(self) -> dict:
        return build_summary(self)

    @cached_property
    def mesh_quality(self) -> dict:
        """Non-orthogonality, aspect ratio, skewness, sizes (computed when asked for: summary.json)."""
        return self.mesh.quality()

    @cached_property
    def stream_function(self) -> np.ndarray:
        """2 pi psi [m^3/s] at the mesh nodes (computed when asked for: fields.vtu)."""
        return stream_function(self.mesh, self.flow.face_mass_flux / self.flow.inlet_density)


def solve_case(case: Case, progress: Progress | None = None, msh_path: str | Path | None = None,
               max_cells: int | None = None) -> RunResult:
    """Solve ``case`` in memory. Refused (RunRefused) when the case asks for what this version
    cannot run, or when its mesh would exceed the memory of this machine (``max_cells`` overrides)."""
    progress = progress or quiet
    refused = case.unsupported()
    if refused:
        raise RunRefused("; ".join(refused))
    b = budget(case, max_cells, precise=False)
    if not b.within:
        raise RunRefused(refusal(b))
    solver = SOLVERS[case.solver_kind]
    solved = outlet_model(case.outlet.kind).solve(case, case.profile, solver, progress, msh_path)
    profile, build, flow = solved.profile, solved.mesh_build, solved.flow
    _check_finite(case, flow)
    sec = {"mesh": solved.mesh_seconds, "solve": solved.solve_seconds,
           "assembly": flow.record.seconds_assembly, "linear_solve": flow.record.seconds_solve}
    rec = flow.record
    steps = " with the free jet's steps" if solved.jet is not None else ""
    progress("solve", f"{rec.solver}: {rec.method}, {rec.iterations} iterations, residual {rec.residual:.2e}, "
             f"{sec['solve']:.2f} s{steps}")
    t = time.perf_counter()
    tables = wall_tables(flow, profile)
    frc = forces(flow, tables)
    od = compare(case, profile, flow, tables, frc.total_x_N, frc.onedim_x_N)
    if od.onedim_force_N is not None:
        frc = replace(frc, onedim_x_N=od.onedim_force_N)
    chk = checks(case, profile, flow, tables, frc, od)
    sec["post"] = time.perf_counter() - t
    viscous = None
    if case.viscous_model == "integral":  # the wall layer: adds results, changes no inviscid number
        t = time.perf_counter()
        try:
            viscous = viscous_stage(case, profile, build.mesh, flow, tables, od, progress, build)
            chk.warnings.extend(viscous.warnings)
        except LayerWithheld as exc:  # the flow has no thin wall layer: the run goes on without it, saying why
            chk.warnings.append(str(exc))
        sec["viscous"] = time.perf_counter() - t
    jt = jet_table(flow, profile, solved.jet.lip_faces) if solved.jet is not None else None
    if jt is not None and (w := lip_warning(jt, solved.jet.condition)):
        chk.warnings.append(w)
    if w := momentum_attempt_warning(solved.jet):
        chk.warnings.append(w)
    return RunResult(case, profile, build.mesh, build, flow, tables, frc, od, chk, sec,
                     joint_loads(case, profile, flow, tables), jet_reaction(case, flow), viscous, solved.jet,
                     solved.comparison, jt, hand_answer(case, profile, flow))


def _check_finite(case: Case, flow: FlowResult) -> None:
    if np.all(np.isfinite(flow.pressure)) and np.all(np.isfinite(flow.velocity)) and np.isfinite(flow.mass_flow):
        return
    key = "inlet.total_pressure" if flow.compressible else ("inlet.flow_rate" if case.inlet.flow_rate else "inlet.pressure")
    raise FlowError(key, "the solution is not finite (NaN or infinite pressures or speeds): the operating point is "
                    "beyond what the numbers can hold; check the value and its unit")


def run_case(case: Case, out_dir: str | Path, progress: Progress | None = None, report: bool = True,
             unit: str = "bar", max_cells: int | None = None, force: bool = False) -> RunResult:
    """Solve ``case`` and write its run directory; the directory appears complete or not at all.

    ``report``: also draw the plots and write report.html (the view stage; timed separately).
    """
    progress = progress or quiet
    for d in clean_stale_partials(Path(out_dir).parent):
        progress("write", f"removed {d.name}, left by an interrupted run")
    with atomic_dir(out_dir, "run", force) as tmp:
        # the mesh is written once, in fields.vtu (`axibore mesh` writes Gmsh .msh files)
        res = solve_case(case, progress, max_cells=max_cells)
        write_run(res, tmp)
        atomic_write_text(tmp / UNDERSTOOD, "\n".join(describe(case, cells=res.mesh.n_cells)) + "\n")
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
    case = case_or_path if isinstance(case_or_path, Case) else load_case(case_or_path or demo_case_path())
    if updates:
        case = case.with_updates({k.replace("__", "."): v for k, v in updates.items()})
    if out is None:
        return solve_case(case, progress, max_cells=max_cells)
    return run_case(case, check_output_dir(out), progress, report=report, max_cells=max_cells)


class _CallableModule(__import__("types").ModuleType):
    """``axibore.run`` is this module and the function ``run`` at once: ``axibore.run("case.toml")``."""

    def __call__(self, *args, **kwargs) -> RunResult:
        return run(*args, **kwargs)


__import__("sys").modules[__name__].__class__ = _CallableModule
