"""Run directories: case.toml, mesh.msh, fields.vtu, wall.csv, summary.json (the index).

``write_run`` writes into a directory that ``run_case`` has made temporary and renames when
complete; ``read_summary`` reads a run back.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .files import atomic_write_text, write_csv, write_vtu

WALL_HEADER = (
    "axibore wall table: faces in order of arc length s from the inlet; p_gauge relative to ambient;\n"
    "n = unit normal out of the fluid; cumulative_force_x_N = axial force on the part from the inlet to this face"
)


def write_run(res, out: Path, only_summary: bool = False) -> None:
    import tomli_w

    from ..case import resolved_dict

    out = Path(out)
    summary = res.summary()
    if not only_summary:
        atomic_write_text(out / "case.toml", "# resolved case: every quantity in SI units\n" + tomli_w.dumps(resolved_dict(res.case)))
        mesh = res.mesh.mesh
        fl = res.flow
        rho = fl.density
        v_out = fl.volume_flow / fl.outlet_area
        vel3 = np.column_stack([fl.velocity[0], fl.velocity[1], np.zeros(mesh.n_cells)])
        from ..post.stream import stream_function

        write_vtu(out / "fields.vtu", mesh, {
            "velocity_m_s": vel3,
            "speed_m_s": fl.speed,
            "p_gauge_Pa": fl.pressure,
            "cp": (fl.pressure - summary["pressure"]["outlet_gauge_Pa"]) / (0.5 * rho * v_out**2),
        }, {"stream_function_m3_s": stream_function(mesh, fl.face_flux)})
        for name, t in res.tables.items():
            cols = t.columns()
            dev = res.onedim.deviation.get(name)
            if dev is not None:
                cols["onedim_dev"] = dev
            write_csv(out / f"{name}.csv", cols, WALL_HEADER)
        from .wall_load import write_wall_load

        write_wall_load(out)
    atomic_write_text(out / "summary.json", json.dumps(summary, indent=2) + "\n")


def read_summary(run_dir: str | Path) -> dict:
    path = Path(run_dir) / "summary.json"
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise FileNotFoundError(f"{run_dir}: not a run directory (no summary.json)") from None
