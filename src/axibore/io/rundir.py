"""Run directories: case.toml, mesh.msh, fields.vtu, wall.csv, solver_history.csv, summary.json
(the index, written last), report.html.

``write_run`` writes into a directory that ``run_case`` has made temporary and renames when
complete; ``read_summary`` reads a run back.
"""

from __future__ import annotations

import json
import time
from pathlib import Path

import numpy as np

from .files import atomic_write_text, write_csv, write_vtu
from .summary import dumps

CASE_HEADER = "# resolved case: the case as it ran, every key explicit (axibore run writes it; it loads as it is)\n"
# files of a run that only the field plots, the 3D view and structural models need (the bulk of a run);
# studies keep them for chosen runs only
FIELD_FILES = ("fields.vtu", "mesh.msh", "wall_load.vtu", "centerbody_load.vtu", "wall_load_points.csv",
               "centerbody_load_points.csv", "wall_load_points.csv.json", "centerbody_load_points.csv.json")


def resolved_case_text(case) -> str:
    """The case.toml a run of ``case`` writes: the identity of a run (grid-study levels, sweep points)."""
    import tomli_w

    from ..case import resolved_dict

    return CASE_HEADER + tomli_w.dumps(resolved_dict(case))


WALL_HEADER = (
    "axibore wall table: faces in order of arc length s from the inlet; p_gauge relative to ambient; "
    "n = unit normal out of the fluid; cumulative_force_x_N = axial force on the part from the inlet to this face; "
    "onedim_dev = (p_2D - p_1D) / (outlet dynamic pressure); with the wall layer (viscous.model = \"integral\"): "
    "tau_w_Pa wall shear along the flow, cf, theta_m momentum and delta_star_m displacement thickness, shape_factor, "
    "re_theta, layer_state (0 laminar, 1 turbulent, 2 separated), edge_speed_m_s the smoothed speed the layer was "
    "marched with, cumulative_friction_x_N; NaN where separated"
)


def cell_fields(mesh, flow) -> dict[str, np.ndarray]:
    """The cell data of fields.vtu from a FlowResult."""
    vel3 = np.column_stack([flow.velocity[0], flow.velocity[1], np.zeros(mesh.n_cells)])
    out = {"velocity_m_s": vel3, "speed_m_s": flow.speed, "p_gauge_Pa": flow.pressure, "cp": flow.cp}
    if flow.compressible:  # a liquid's density is one number (in summary.json)
        out["density_kg_m3"] = flow.density
    if flow.temperature is not None:
        out["temperature_K"] = flow.temperature
    if flow.mach is not None:
        out["mach"] = flow.mach
    out.update(flow.extra_fields)
    return out


def write_run(res, out: Path) -> None:
    """Write every file of a run; summary.json last, with the time the other files took."""
    from ..post.stream import stream_function
    from .wall_load import write_wall_load

    t0 = time.perf_counter()
    out = Path(out)
    atomic_write_text(out / "case.toml", resolved_case_text(res.case))
    mesh, flow = res.mesh, res.flow
    write_vtu(out / "fields.vtu", mesh, cell_fields(mesh, flow),
              {"stream_function_m3_s": stream_function(mesh, flow.face_mass_flux / flow.inlet_density)})
    tables = {}
    for name, t in res.tables.items():
        cols = t.columns()
        dev = res.onedim.deviation.get(name)
        if dev is not None:
            cols["onedim_dev"] = dev
        if getattr(res, "viscous", None) is not None and name in res.viscous.chains:
            cols.update(res.viscous.chains[name].columns())
            disp = res.viscous.displacement
            if disp is not None and name in disp.wall_pressure:
                cols["p_displaced_gauge_Pa"] = disp.wall_pressure[name]
        write_csv(out / f"{name}.csv", cols, WALL_HEADER)
        tables[name] = cols
    write_wall_load(out, tables)
    if res.jet is not None:
        write_jet_table(res, out)
    hist = np.asarray(flow.record.residual_history, float)
    write_csv(out / "solver_history.csv", {"iteration": np.arange(1, hist.size + 1), "residual": hist},
              f"axibore {flow.record.solver} solve: residual after each iteration ({flow.record.method}); {flow.record.criterion}")
    res.seconds["write"] = time.perf_counter() - t0
    atomic_write_text(out / "summary.json", dumps(res.summary()))


JET_HEADER = ("axibore free-jet boundary: faces of the settled jet boundary from the lip downstream; "
              "p_gauge_Pa should be 0 (ambient) and speed_mismatch = speed / jet speed - 1 should be 0 on a free streamline")


def write_jet_table(res, out: Path) -> None:
    """jet.csv: the jet boundary faces with their pressure and the remaining speed mismatch."""
    from ..names import Boundary
    from ..post.loads import wall_table
    from ..solvers.freejet import jet_speed

    t = wall_table(res.flow, res.profile, Boundary.JET)
    V = jet_speed(res.flow)
    cols = {"x_m": t.x, "r_m": t.r, "s_m": t.s, "p_gauge_Pa": t.pressure, "speed_m_s": t.speed,
            "speed_mismatch": t.speed / V - 1.0, "n_x": t.nx, "n_r": t.nr, "face_length_m": t.length}
    write_csv(out / "jet.csv", cols, JET_HEADER)


def write_report(run_dir: Path, shown_dir: Path | None = None, unit: str = "bar") -> str | None:
    """Build report.html; on failure keep the run's numbers, write report_error.txt and return why."""
    from ..view.report import build_report

    try:
        build_report(run_dir, shown_dir=shown_dir, unit=unit)
        return None
    except Exception as exc:  # the numbers are complete without the report: keep them, say why
        why = f"{type(exc).__name__}: {exc}"
        atomic_write_text(Path(run_dir) / "report_error.txt", f"report.html was not built: {why}\n"
                          "rebuild it with `axibore report RUN_DIR`\n")
        return why


def read_summary(run_dir: str | Path) -> dict:
    path = Path(run_dir) / "summary.json"
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise FileNotFoundError(f"{run_dir}: not a run directory (no summary.json)") from None
