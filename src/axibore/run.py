"""The whole job on one case: profile -> mesh -> flow -> wall tables, forces, 1D comparison, checks.

``solve_case`` computes in memory; ``run_case`` also writes the run directory (atomically).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from . import __version__
from .case import Case
from .geometry import Profile, build_profile
from .mesh.gmsh_build import MeshResult, mesh_profile
from .post.checks import Checks, checks
from .safety import CAUTIONS
from .post.loads import Forces, WallTable, forces, wall_table
from .solvers.flow import Flow, solve_case_flow
from .solvers.onedim import OneDimComparison, compare

SCHEMA = 1
Progress = Callable[[str, str], None]


class RunRefused(ValueError):
    """The case asks for a capability this version cannot run."""


@dataclass(eq=False)
class RunResult:
    case: Case
    profile: Profile
    mesh: MeshResult
    flow: Flow
    tables: dict[str, WallTable]
    forces: Forces
    onedim: OneDimComparison
    checks: Checks
    seconds: dict[str, float] = field(default_factory=dict)
    mesh_quality: dict = field(default_factory=dict)

    def summary(self) -> dict:
        return summary(self)


def _quiet(stage: str, detail: str) -> None:
    pass


def solve_case(case: Case, progress: Progress | None = None, msh_path: str | Path | None = None) -> RunResult:
    progress = progress or _quiet
    refused = case.unsupported()
    if refused:
        raise RunRefused("; ".join(refused))
    sec: dict[str, float] = {}
    t = time.perf_counter()
    profile = build_profile(case)
    progress("mesh", f"meshing ({case.mesh.cells}, level {case.mesh.level})")
    mres = mesh_profile(profile, case.mesh.size, case.mesh.level, case.mesh.cells, msh_path=msh_path)
    sec["mesh"] = time.perf_counter() - t
    progress("mesh", f"{mres.mesh.n_cells:,} cells, {mres.method}, {sec['mesh']:.2f} s")
    t = time.perf_counter()
    flow = solve_case_flow(case, mres.mesh)
    sec["solve"] = time.perf_counter() - t
    sec["assembly"] = flow.info.seconds_assembly
    sec["linear_solve"] = flow.info.seconds_solve
    progress("solve", f"{flow.info.method}, {flow.info.iterations} iterations, residual {flow.info.residual:.2e}, {sec['solve']:.2f} s")
    t = time.perf_counter()
    mesh = mres.mesh
    tables = {"wall": wall_table(mesh, flow, profile, "wall")}
    if "centerbody" in mesh.boundary:
        tables["centerbody"] = wall_table(mesh, flow, profile, "centerbody")
    frc = forces(mesh, flow, tables, case.flange.bolts)
    od = compare(profile, mesh, flow, tables, frc.total_x_N, frc.onedim_x_N, case.onedim.threshold)
    chk = checks(case, profile, flow, tables, frc, od)
    quality = mesh.quality()
    sec["post"] = time.perf_counter() - t
    return RunResult(case, profile, mres, flow, tables, frc, od, chk, sec, quality)


def _f(v):
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def summary(res: RunResult) -> dict:
    f, fl, c, o, m = res.forces, res.flow, res.checks, res.onedim, res.mesh
    mesh = m.mesh
    info = fl.info
    q = res.mesh_quality or mesh.quality()
    return {
        "schema": SCHEMA,
        "title": res.case.title,
        "software": {"name": "axibore", "version": __version__},
        "solver": {
            "kind": res.case.solver_kind,
            "converged": info.converged,
            "iterations": info.iterations,
            "residual": info.residual,
            "mass_imbalance": info.mass_imbalance,
            "seconds": info.seconds,
            "method": info.method,
        },
        "mesh": {
            "cells": mesh.n_cells,
            "level": m.level,
            "h_m": mesh.h,
            "target_h_m": m.h_target,
            "method": m.method,
            "max_non_orthogonality_deg": q["max_non_orthogonality_deg"],
            "max_aspect_ratio": q["max_aspect_ratio"],
        },
        "flow": {
            "volume_flow_m3_s": fl.volume_flow,
            "mass_flow_kg_s": fl.mass_flow,
            "inlet_mean_velocity_m_s": fl.inlet_velocity,
            "outlet_mean_velocity_m_s": fl.outlet_velocity,
            "max_speed_m_s": float(max(fl.speed.max(), *(t.speed.max() for t in res.tables.values()))),
            "discharge_coefficient": _f(o.discharge_coefficient),
            "density_kg_m3": fl.density,
            "total_pressure_gauge_Pa": fl.total_pressure,
        },
        "pressure": {
            "inlet_gauge_Pa": fl.inlet_pressure,
            "outlet_gauge_Pa": fl.outlet_pressure,
            "min_wall_gauge_Pa": c.min_wall_gauge_Pa,
            "min_wall_x_m": c.min_wall_x_m,
            "min_wall_r_m": c.min_wall_r_m,
            "min_wall_boundary": c.min_wall_boundary,
            "min_wall_absolute_Pa": c.min_wall_absolute_Pa,
            "cavitation_index": c.cavitation_index,
            "inception_index": c.inception_index,
            "vapour_pressure_Pa": c.vapour_pressure_Pa,
            "ambient_pressure_Pa": res.case.ambient_pressure,
        },
        "forces": {
            "wall_x_N": f.wall_x_N,
            "centerbody_x_N": f.centerbody_x_N,
            "total_x_N": f.total_x_N,
            "momentum_x_N": f.momentum_x_N,
            "onedim_x_N": f.onedim_x_N,
            "reconciliation_rel": f.reconciliation_rel,
            "per_bolt_N": _f(f.per_bolt_N),
            "bolts": res.case.flange.bolts,
        },
        "onedim": {
            "force_dev_rel": _f(o.force_dev_rel),
            "wall_pressure_max_dev": o.wall_pressure_max_dev,
            "wall_pressure_max_dev_x_m": _f(o.wall_pressure_max_dev_x_m),
            "breakdown_threshold": o.threshold,
            "breakdown_x_ranges_m": o.breakdown_x_ranges_m,
            "outlet_momentum_factor": o.outlet_momentum_factor,
            "outlet_energy_factor": o.outlet_energy_factor,
            "meaningful": o.meaningful,
        },
        "corners": [
            {"x_m": k.x, "r_m": k.r, "turn_deg": math.degrees(k.turn), "convex": k.convex, "boundary": k.boundary, "key": k.key}
            for k in res.profile.corners()
        ],
        "seconds": res.seconds,
        "warnings": c.warnings,
        "cautions": list(CAUTIONS),
        "notes": [
            "forces are exerted by the fluid on the part, +x downstream, from gauge pressure",
            "per_bolt_N divides the wall force only (a centre body is taken as supported elsewhere)",
            "cavitation_index = (p_outlet,abs - p_vapour) / (rho V_outlet^2 / 2); inception_index = -Cp_min "
            "(common practice; cf. ISA-RP75.23-1995 for valves)",
        ],
    }


def run_case(case: Case, out_dir: str | Path, progress: Progress | None = None, report: bool = True) -> RunResult:
    """Solve ``case`` and write its run directory; the directory appears complete or not at all.

    ``report``: also draw the plots and write report.html (the view stage; timed separately).
    """
    from .io.files import atomic_dir
    from .io.rundir import write_run

    progress = progress or _quiet
    with atomic_dir(out_dir) as tmp:
        res = solve_case(case, progress, msh_path=tmp / "mesh.msh")
        write_run(res, tmp)
        if report:
            from .view.report import build_report

            progress("report", "plots, 3D view and report.html")
            t = time.perf_counter()
            try:
                build_report(tmp, shown_dir=out_dir)
            except Exception as exc:  # the numbers are complete without the report: keep them, say why
                (tmp / "report_error.txt").write_text(f"report.html was not built: {type(exc).__name__}: {exc}\n"
                                                      "rebuild it with `axibore report RUN_DIR`\n")
                progress("report", f"NOT built ({type(exc).__name__}: {exc}); see report_error.txt")
            res.seconds["report"] = time.perf_counter() - t
    progress("write", f"run directory {out_dir}")
    return res
