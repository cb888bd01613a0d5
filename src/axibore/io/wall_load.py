"""Structural load export: the wall revolved into a 3D surface carrying gauge pressure.

``wall_load.vtu`` (and ``centerbody_load.vtu``): quadrilaterals of the wall faces revolved about
the x axis, ``p_gauge_Pa`` as point data (for FE pre-processors, through VTK or meshio) and as
cell data (the face values, exact for integration); cell normals point out of the fluid (into
the part). ``wall_load.csv``: x, r, p and the unit normal at each wall face centre, with the face
length and the area of its ring, so a structural model can be loaded from the flow result.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .files import atomic_file, write_csv
from .vtu import write_unstructured

SEGMENTS = 144  # around the axis: the faceted ring's projected area is N sin(2 pi / N) / (2 pi) = 1 - 3.2e-4 of the true one


def face_endpoints(cols: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """End points (m, 2) of each wall face from its centre, normal and length (t = (-n_r, n_x))."""
    c = np.column_stack([cols["x_m"], cols["r_m"]])
    t = np.column_stack([-cols["n_r"], cols["n_x"]])
    half = 0.5 * cols["face_length_m"][:, None] * t
    return c - half, c + half


def revolve(cols: dict[str, np.ndarray], segments: int = SEGMENTS, angle_deg: float = 360.0):
    """Points (N, 3), quads (M, 4), point pressure (N,), cell pressure (M,) of the revolved wall."""
    a, b = face_endpoints(cols)
    # one node per face end; shared ends of consecutive faces are merged (faces are in s order, each face's
    # (a, b) along t = (-n_r, n_x), which runs with the order or against it, depending on the side of the fluid)
    tol = 1e-9 * max(1.0, float(np.abs(np.vstack([a, b])).max()))
    n_f = len(a)
    if n_f > 1 and np.all(np.linalg.norm(a[1:] - b[:-1], axis=1) < tol):
        ends, ia, ib = np.vstack([a[:1], b]), np.arange(n_f), np.arange(n_f) + 1
    elif n_f > 1 and np.all(np.linalg.norm(b[1:] - a[:-1], axis=1) < tol):
        ends, ia, ib = np.vstack([b[:1], a]), np.arange(n_f) + 1, np.arange(n_f)
    else:  # faces not one chain: keep both ends of every face
        ends, ia, ib = np.vstack([a, b]), np.arange(n_f), np.arange(n_f) + n_f
    p = cols["p_gauge_Pa"]
    node_p = np.zeros(len(ends))
    cnt = np.zeros(len(ends))
    np.add.at(node_p, ia, p)
    np.add.at(node_p, ib, p)
    np.add.at(cnt, ia, 1)
    np.add.at(cnt, ib, 1)
    node_p /= cnt
    full = abs(angle_deg - 360.0) < 1e-9
    n_ang = segments if full else segments + 1
    th = np.radians(angle_deg) * np.arange(n_ang) / segments
    x, r = ends[:, 0], ends[:, 1]
    pts = np.column_stack([
        np.repeat(x, n_ang), np.outer(r, np.cos(th)).ravel(), np.outer(r, np.sin(th)).ravel()])
    j0 = np.arange(segments)
    j1 = (j0 + 1) % n_ang
    A0 = ia[:, None] * n_ang + j0[None]
    A1 = ia[:, None] * n_ang + j1[None]
    B0 = ib[:, None] * n_ang + j0[None]
    B1 = ib[:, None] * n_ang + j1[None]
    # orientation: (A0, A1, B1, B0) has meridional normal (-t_r, t_x); flip where that is not n
    t = b - a
    same = (-t[:, 1] * cols["n_x"] + t[:, 0] * cols["n_r"]) > 0
    quads = np.where(same[:, None, None], np.stack([A0, A1, B1, B0], -1), np.stack([A0, B0, B1, A1], -1)).reshape(-1, 4)
    cell_p = np.repeat(p, segments)
    return pts, quads, np.repeat(node_p, n_ang), cell_p


def merged(pts: np.ndarray, quads: np.ndarray, node_p: np.ndarray, full: bool):
    """Merge the revolved points that coincide: a full revolution has no seam to merge (revolve
    makes none), so only the points on the axis (r = 0, one per face end there) are merged."""
    n = len(pts)
    tol = 1e-9 * max(1.0, float(np.abs(pts).max()))
    on_axis = np.flatnonzero(np.hypot(pts[:, 1], pts[:, 2]) <= tol)
    if on_axis.size <= 1:
        return pts, quads, node_p
    key = np.round(pts[on_axis, 0] / tol)
    _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    keep = np.ones(n, bool)
    keep[on_axis] = False
    keep[on_axis[first]] = True
    target = np.arange(n)
    target[on_axis] = on_axis[first][inverse.ravel()]
    renumber = np.cumsum(keep) - 1
    return pts[keep], renumber[target][quads], node_p[keep]


def point_normals(pts: np.ndarray, cols: dict[str, np.ndarray]) -> np.ndarray:
    """Unit normals out of the fluid (into the part) at revolved points: the meridional normal turned about x."""
    t = np.arctan2(pts[:, 2], pts[:, 1])
    nx = np.interp(pts[:, 0], cols["x_m"], cols["n_x"])
    nr = np.interp(pts[:, 0], cols["x_m"], cols["n_r"])
    normals = np.column_stack([nx, nr * np.cos(t), nr * np.sin(t)])
    return normals / np.linalg.norm(normals, axis=1)[:, None]


POINT_TABLE_SEGMENTS = 36  # around the axis in <name>_load_points.csv (10 deg apart; the .vtu has SEGMENTS)


def write_wall_load(run_dir: str | Path, tables: dict[str, dict[str, np.ndarray]], segments: int = SEGMENTS,
                    table_segments: int | None = None) -> list[Path]:
    """Write <name>_load.vtu (``segments`` around the axis, compressed binary) and <name>_load.csv for each
    wall table; with ``table_segments`` also <name>_load_points.csv, the revolved surface's points as a
    table (the run directory does not: the same points and normals are in the .vtu)."""
    run_dir = Path(run_dir)
    written = []
    for name, cols in tables.items():
        pts, quads, node_p, cell_p = revolve(cols, segments)
        pts, quads, node_p = merged(pts, quads, node_p, True)
        normals = point_normals(pts, cols)
        path = run_dir / f"{name}_load.vtu"
        with atomic_file(path) as tmp:  # binary, compressed
            write_unstructured(tmp, pts, [("quad", quads)], {"p_gauge_Pa": node_p, "normal": normals},
                               {"p_gauge_Pa": [cell_p]})
        written.append(path)
        ring = 2 * np.pi * cols["r_m"] * cols["face_length_m"]
        csv_path = run_dir / f"{name}_load.csv"
        write_csv(csv_path, {"x_m": cols["x_m"], "r_m": cols["r_m"], "p_gauge_Pa": cols["p_gauge_Pa"], "n_x": cols["n_x"],
                             "n_r": cols["n_r"], "face_length_m": cols["face_length_m"], "ring_area_m2": ring},
                  f"axibore {name} load: gauge pressure at {name} face centres; n = unit normal out of the fluid (into the "
                  "part); the load on the part is p * n * ring_area (axisymmetric)")
        written.append(csv_path)
        if table_segments is None:
            continue
        if table_segments != segments:
            pts, quads, node_p, _ = revolve(cols, table_segments)
            pts, quads, node_p = merged(pts, quads, node_p, True)
            normals = point_normals(pts, cols)
        pts_path = run_dir / f"{name}_load_points.csv"
        write_csv(pts_path, {"x_m": pts[:, 0], "y_m": pts[:, 1], "z_m": pts[:, 2], "p_gauge_Pa": node_p,
                             "n_x": normals[:, 0], "n_y": normals[:, 1], "n_z": normals[:, 2]},
                  f"axibore {name} load as points of the revolved surface ({table_segments} segments around the x axis): "
                  "gauge pressure and the unit normal out of the fluid (into the part) at each point, for structural "
                  "tools that read point loads")
        written.append(pts_path)
    return written
