"""Run directories: case.toml, mesh.msh, fields.vtu, wall.csv, summary.json (the index).

``write_run`` writes into a directory that ``run_case`` has made temporary and renames when
complete; ``read_summary`` reads a run back.
"""

from __future__ import annotations

import json
import time
from pathlib import Path

import numpy as np

from .files import atomic_write_text, write_csv, write_vtu

WALL_HEADER = (
    "axibore wall table: faces in order of arc length s from the inlet; p_gauge relative to ambient;\n"
    "n = unit normal out of the fluid; cumulative_force_x_N = axial force on the part from the inlet to this face"
)


def write_run(res, out: Path) -> None:
    """Write every file of a run; summary.json last, with the time the other files took."""
    import tomli_w

    from ..case import resolved_dict
    from ..post.stream import stream_function
    from .wall_load import write_wall_load

    t0 = time.perf_counter()
    out = Path(out)
    atomic_write_text(out / "case.toml", "# resolved case: every quantity in SI units\n" + tomli_w.dumps(resolved_dict(res.case)))
    mesh = res.mesh.mesh
    fl = res.flow
    vel3 = np.column_stack([fl.velocity[0], fl.velocity[1], np.zeros(mesh.n_cells)])
    write_vtu(out / "fields.vtu", mesh, {
        "velocity_m_s": vel3,
        "speed_m_s": fl.speed,
        "p_gauge_Pa": fl.pressure,
        "cp": (fl.pressure - fl.outlet_pressure) / fl.outlet_dynamic_pressure,
    }, {"stream_function_m3_s": stream_function(mesh, fl.face_flux)})
    tables = {}
    for name, t in res.tables.items():
        cols = t.columns()
        dev = res.onedim.deviation.get(name)
        if dev is not None:
            cols["onedim_dev"] = dev
        write_csv(out / f"{name}.csv", cols, WALL_HEADER)
        tables[name] = cols
    write_wall_load(out, tables)
    res.seconds["write"] = time.perf_counter() - t0
    atomic_write_text(out / "summary.json", json.dumps(res.summary(), indent=2) + "\n")


def read_summary(run_dir: str | Path) -> dict:
    path = Path(run_dir) / "summary.json"
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise FileNotFoundError(f"{run_dir}: not a run directory (no summary.json)") from None
