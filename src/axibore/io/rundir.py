"""Run directories: case.toml, fields.vtu (the mesh and the fields), wall.csv, solver_history.csv, summary.json
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
from ..case import resolved_dict
from .summary import dumps
from .wall_load import write_wall_load

CASE_HEADER = "# resolved case: the case as it ran, every key explicit (axibore run writes it; it loads as it is)\n"
# files of a run that only the field plots, the 3D view and structural models need (the bulk of a run);
# studies keep them for chosen runs only
FIELD_FILES = ("fields.vtu", "mesh.msh", "wall_load.vtu", "centerbody_load.vtu", "wall_load_points.csv",
               "centerbody_load_points.csv", "wall_load_points.csv.json", "centerbody_load_points.csv.json")


def resolved_case_text(case) -> str:
    """The case.toml a run of ``case`` writes: the identity of a run (grid-study levels, sweep points)."""
    import tomli_w

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
    t0 = time.perf_counter()
    out = Path(out)
    atomic_write_text(out / "case.toml", resolved_case_text(res.case))
    mesh, flow = res.mesh, res.flow
    write_vtu(out / "fields.vtu", mesh, cell_fields(mesh, flow), {"stream_function_m3_s": res.stream_function})
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
    if res.jet_table is not None:
        write_csv(out / "jet.csv", res.jet_table.columns(), JET_HEADER)
    hist = np.asarray(flow.record.residual_history, float)
    write_csv(out / "solver_history.csv", {"iteration": np.arange(1, hist.size + 1), "residual": hist},
              f"axibore {flow.record.solver} solve: residual after each iteration ({flow.record.method}); {flow.record.criterion}")
    res.seconds["write"] = time.perf_counter() - t0
    atomic_write_text(out / "summary.json", dumps(res.summary()))


JET_HEADER = ("axibore free-jet boundary: faces of the settled jet boundary from the lip downstream; "
              "p_gauge_Pa should be 0 (ambient) and speed_mismatch = speed / jet speed - 1 should be 0 on a free streamline")


def read_summary(run_dir: str | Path) -> dict:
    path = Path(run_dir) / "summary.json"
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise FileNotFoundError(f"{run_dir}: not a run directory (no summary.json)") from None
