"""Meridional meshes with the Gmsh Python API: profile in, FVMesh (and optionally a .msh file) out.

Physical groups: ``inlet``, ``outlet``, ``wall``, ``axis`` and ``centerbody``. The target cell
size is ``size * (smallest channel height) * 2**(-level/2)``; convex corners (suction peaks) are
refined by a distance field, arcs and splines by curvature.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..geometry import Profile
from ..geometry.jet import LIP_REACH, LIP_SIZE, is_reservoir
from .loop import mesh_loop
from .mapped import NotMappable, blocks, graded_blocks, mesh_mapped

@dataclass(frozen=True)
class MeshBuild:
    """A built mesh and how it was built."""

    mesh: FVMesh
    h_target: float
    seconds: float
    level: int
    cells_kind: str
    method: str = ""  # "mapped quads", "unstructured quads", "unstructured triangles"


def target_size(profile: Profile, size: float, level: int) -> float:
    """Target cell size [m]: mesh.size times the smallest channel height, halved every two levels."""
    return size * profile.min_channel_height * 2.0 ** (-level / 2.0)


def mesh_profile(profile: Profile, size: float = 0.05, level: int = 0, cells: str = "triangles",
                 msh_path: str | Path | None = None, h: float | None = None) -> MeshBuild:
    """Mesh the fluid region of ``profile``; optionally write the Gmsh .msh file.

    ``h``: the target cell size, instead of the one from ``size`` and ``level``. A profile with a
    free jet is meshed with triangles, one face per jet element, graded towards the lip (the free
    jet then moves the nodes of this mesh, never its topology)."""
    h = target_size(profile, size, level) if h is None else h
    t0 = time.perf_counter()
    if cells == "quads" and not profile.jet:
        try:
            fv = mesh_mapped(profile, h, msh_path)
            return MeshBuild(fv, h, time.perf_counter() - t0, level, cells, "mapped quads")
        except NotMappable:
            pass
    corners = [(c.x, c.r) for c in profile.corners() if c.convex]
    grow, lip, single = None, None, ()
    if profile.jet:
        # triangles: full-quad recombination needs an even count of boundary edges, which a jet
        # of graded elements does not keep
        cells = "triangles"
        # the free streamline's curvature grows like l^-1/2 towards the lip (Kirchhoff flow at a sharp
        # edge): cells graded from LIP_SIZE h there, as the jet's elements are (geometry.jet.spacing)
        lip, single = (*profile.jet[0].start, LIP_SIZE, LIP_REACH), ("jet",)
        grow = jet_grading(profile, h)
    fv = mesh_loop(profile.loop(), h, cells, corners, msh_path, tol=0.1 * profile.tol, planar=profile.planar, grow=grow,
                   lip=lip, single_edge=single)
    return MeshBuild(fv, h, time.perf_counter() - t0, level, cells, f"unstructured {cells}")


JET_REACH = 1.5  # free jets: cells of the target size within this many lip radii of the jet ...
JET_FAR_SIZE = 0.25  # ... growing to this fraction of the widest radius (a reservoir far from the opening)


def jet_grading(profile: Profile, h: float):
    """Size grading of a mesh with a free jet: where the bore upstream is a reservoir
    (``geometry.jet.is_reservoir``), cells of the target size along the jet and near the lip, coarser
    out in the reservoir; a nozzle discharging a jet keeps the target size throughout (None)."""
    if not is_reservoir(profile):
        return None
    r_lip = profile.jet[0].start[1]
    r_wide = float(profile.wall_points[:, 1].max())
    far = max(h, JET_FAR_SIZE * min(r_wide, float(np.ptp(profile.outline[:, 0]))))
    return (("jet", "wall", "centerbody"), JET_REACH * r_lip, far)


# an unstructured mesh estimated by meshing it at most this fine and scaling by the size ratio squared
ESTIMATE_MESH_CELLS = 30_000


def expected_cells(profile: Profile, size: float, level: int, cells: str = "quads", precise: bool = True) -> tuple[int, str]:
    """Cell count of the mesh ``mesh_profile`` would build, and how it was found.

    Mapped quads: counted exactly from the block layout (no Gmsh). Unstructured: Gmsh meshes the
    outline at a size giving at most ~ESTIMATE_MESH_CELLS cells and the count is scaled by the
    size ratio squared (within a few per cent where corner refinement is a small part)."""
    h = target_size(profile, size, level)
    if cells == "quads":
        try:
            n_r, pieces = graded_blocks(blocks(profile), h, 0.1 * profile.tol)
            return int(n_r * sum(max(1, math.ceil(max(t.length, b.length) / dx)) for b, t, _, _, dx in pieces)), "counted"
        except NotMappable:
            pass
    rough = 2.3 * profile.area / (h * h)
    if not precise:
        return int(rough), "from the area"
    scale = max(1.0, math.sqrt(rough / ESTIMATE_MESH_CELLS))
    corners = [(c.x, c.r) for c in profile.corners() if c.convex]
    try:
        m = mesh_loop(profile.loop(), h * scale, cells, corners, tol=0.1 * profile.tol, planar=profile.planar)
    except Exception as exc:  # Gmsh cannot mesh the outline this coarse (a thin wall): the area estimate says enough
        return int(rough), f"from the area (a coarse estimate mesh failed: {str(exc).splitlines()[0][:80]})"
    return int(round(m.n_cells * scale * scale)), ("meshed" if scale == 1.0 else f"meshed at {scale:.3g} x the size, scaled")
