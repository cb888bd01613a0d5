"""Meridional meshes with the Gmsh Python API: profile in, FVMesh (and optionally a .msh file) out.

Physical groups: ``inlet``, ``outlet``, ``wall``, ``axis`` and ``centerbody``. The target cell
size is ``size * (smallest channel height) * 2**(-level/2)``; convex corners (suction peaks) are
refined by a distance field, arcs and splines by curvature.
"""

from __future__ import annotations

import math
import time
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..geometry import Profile
from .fvmesh import FVMesh

# Named choices mapped to Gmsh option numbers in one place (Gmsh reference manual, Mesh options).
_ALGORITHM = {"triangles": 6, "quads": 8}  # 6 Frontal-Delaunay, 8 Frontal-Delaunay for quads
_RECOMBINATION_SIMPLE_FULL_QUAD = 2
CURVATURE_ELEMENTS = 36  # elements per 2 pi of curve turning (10 degrees per face on arcs)
CORNER_FACTOR = 0.25  # cell size at a convex corner relative to the target size
CORNER_REACH = 6.0  # distance (in target sizes) over which the corner refinement grades out


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


# Gmsh options this module sets; saved and restored when the caller already has a Gmsh session.
_OPTIONS = ("General.Terminal", "General.Verbosity", "Mesh.MeshSizeMax", "Mesh.MeshSizeMin", "Mesh.MeshSizeFromCurvature",
            "Mesh.MeshSizeExtendFromBoundary", "Mesh.MeshSizeFromPoints", "Mesh.Algorithm", "Mesh.RecombineAll",
            "Mesh.RecombinationAlgorithm")


@contextmanager
def gmsh_session(name: str = "axibore"):
    """A Gmsh model of our own for the duration of the block.

    Where no Gmsh session exists, one is initialised and finalised again. Where the caller
    already has one, it is left open: a new model is added and removed afterwards, the caller's
    current model is made current again and the options set here are restored.
    """
    import signal

    import gmsh

    # Gmsh resets signal dispositions (SIGTERM, SIGHUP back to the default) behind Python's back:
    # keep the caller's handlers and put them back afterwards.
    handlers = {}
    for sig in (signal.SIGINT, signal.SIGTERM, signal.SIGHUP):
        try:
            handlers[sig] = signal.getsignal(sig)
        except (ValueError, OSError):
            pass
    owned = not gmsh.isInitialized()
    def restore():
        for sig, handler in handlers.items():
            if handler is not None:
                try:
                    signal.signal(sig, handler)
                except (ValueError, OSError):  # not the main thread: nothing to restore from here
                    pass

    def guarded(call):
        """Run a Gmsh call that resets the handlers with the signals held back, then put the handlers
        back before a held signal is delivered (no window in which a SIGTERM kills without cleanup)."""
        held = {signal.SIGTERM, signal.SIGHUP}
        try:
            signal.pthread_sigmask(signal.SIG_BLOCK, held)
        except (ValueError, OSError, AttributeError):
            held = set()
        try:
            call()
            restore()
        finally:
            if held:
                signal.pthread_sigmask(signal.SIG_UNBLOCK, held)

    if owned:
        guarded(lambda: gmsh.initialize(readConfigFiles=False, interruptible=False))
        previous, saved = None, {}
    else:
        previous = gmsh.model.getCurrent()
        saved = {k: gmsh.option.getNumber(k) for k in _OPTIONS}
    gmsh.option.setNumber("General.Terminal", 0)
    gmsh.option.setNumber("General.Verbosity", 1)
    gmsh.model.add(f"{name}-{id(saved):x}")
    try:
        yield gmsh
    finally:
        if owned:
            guarded(gmsh.finalize)
        else:
            gmsh.model.remove()
            for k, v in saved.items():
                gmsh.option.setNumber(k, v)
            if previous:
                gmsh.model.setCurrent(previous)
        restore()


def generate(gmsh, groups: dict[str, list[int]], surfaces: list[int], msh_path: str | Path | None = None,
             planar: bool = False) -> FVMesh:
    """Name the boundary groups, mesh the surfaces, optionally write the .msh file, and read the
    result into an FVMesh (the one generate-and-read path of every mesher)."""
    for name, tags in groups.items():
        if tags:
            gmsh.model.addPhysicalGroup(1, tags, name=str(name))
    gmsh.model.addPhysicalGroup(2, surfaces, name="fluid")
    gmsh.model.mesh.generate(2)
    if msh_path is not None:
        gmsh.write(str(msh_path))
    return read_model(gmsh, planar=planar)


class GeoBuilder:
    """Points (merged within ``tol``) and curves of Segments in Gmsh's built-in geometry kernel."""

    def __init__(self, gmsh, tol: float, size: float = 0.0):
        self.geo = gmsh.model.geo
        self.tol = tol
        self.size = size
        self._points: dict[tuple, int] = {}

    def point(self, p) -> int:
        k = (round(p[0] / self.tol), round(p[1] / self.tol))
        if k not in self._points:
            self._points[k] = self.geo.addPoint(float(p[0]), float(p[1]), 0.0, self.size)
        return self._points[k]

    def curve(self, seg) -> int:
        a, b = self.point(seg.start), self.point(seg.end)
        if seg.kind == "line":
            return self.geo.addLine(a, b)
        if seg.kind == "arc":
            cx, cr = seg.arc_center()
            return self.geo.addCircleArc(a, self.geo.addPoint(cx, cr, 0.0, self.size), b)
        via = [self.geo.addPoint(float(x), float(r), 0.0, self.size) for x, r in seg.via]
        return self.geo.addSpline([a, *via, b])


def add_loop_surface(gmsh, loop_segments, h: float, tol: float) -> tuple[list[tuple[int, object]], dict[str, list[int]]]:
    """One plane surface (tag 1) bounded by the loop; returns (curve tag, segment) and the curve tags by group."""
    build = GeoBuilder(gmsh, tol, h)
    groups: dict[str, list[int]] = {}
    curves = []
    for group, seg in loop_segments:
        c = build.curve(seg)
        groups.setdefault(group, []).append(c)
        curves.append((c, seg))
    cl = build.geo.addCurveLoop([c for c, _ in curves])
    build.geo.addPlaneSurface([cl], tag=1)
    build.geo.synchronize()
    return curves, groups


def _min_curvature_radius(seg) -> float:
    if seg.kind == "arc":
        return abs(seg.radius)
    p = seg.sample()
    a, b, c = p[:-2], p[1:-1], p[2:]
    ab, bc, ca = (np.linalg.norm(b - a, axis=1), np.linalg.norm(c - b, axis=1), np.linalg.norm(a - c, axis=1))
    cross = np.abs((b - a)[:, 0] * (c - a)[:, 1] - (b - a)[:, 1] * (c - a)[:, 0])
    with np.errstate(divide="ignore"):
        radius = ab * bc * ca / (2.0 * cross)  # circumradius of three consecutive samples
    return float(np.min(radius)) if radius.size else math.inf


def _threshold(gmsh, distance_field: int, size_min: float, h: float, size_max: float | None = None) -> int:
    thr = gmsh.model.mesh.field.add("Threshold")
    gmsh.model.mesh.field.setNumber(thr, "InField", distance_field)
    gmsh.model.mesh.field.setNumber(thr, "SizeMin", size_min)
    gmsh.model.mesh.field.setNumber(thr, "SizeMax", h if size_max is None else size_max)
    gmsh.model.mesh.field.setNumber(thr, "DistMin", size_min)
    gmsh.model.mesh.field.setNumber(thr, "DistMax", h * CORNER_REACH)
    return thr


def _add_size_fields(gmsh, corners, h: float, curves, grow=None) -> None:
    """Size fields: curvature of arcs and splines, convex corners, and (``grow`` = (curve tags,
    reach, far size)) cells growing from h within ``reach`` of those curves to the far size."""
    fields = []
    hmax = h if grow is None else grow[2]
    if grow is not None:
        tags, reach, far = grow
        dist = gmsh.model.mesh.field.add("Distance")
        gmsh.model.mesh.field.setNumbers(dist, "CurvesList", list(tags))
        gmsh.model.mesh.field.setNumber(dist, "Sampling", 200)
        thr = gmsh.model.mesh.field.add("Threshold")
        gmsh.model.mesh.field.setNumber(thr, "InField", dist)
        gmsh.model.mesh.field.setNumber(thr, "SizeMin", h)
        gmsh.model.mesh.field.setNumber(thr, "SizeMax", far)
        gmsh.model.mesh.field.setNumber(thr, "DistMin", reach)
        gmsh.model.mesh.field.setNumber(thr, "DistMax", reach + 4.0 * far)
        fields.append(thr)
    for tag, seg in curves:  # curvature: CURVATURE_ELEMENTS faces per full turn
        if seg.kind == "line":
            continue
        hc = 2 * math.pi * _min_curvature_radius(seg) / CURVATURE_ELEMENTS
        if hc < h:
            dist = gmsh.model.mesh.field.add("Distance")
            gmsh.model.mesh.field.setNumbers(dist, "CurvesList", [tag])
            gmsh.model.mesh.field.setNumber(dist, "Sampling", int(min(2000, max(20, 4 * seg.length / hc))))
            fields.append(_threshold(gmsh, dist, hc, h, hmax))
    if corners:
        occ_pts = [gmsh.model.geo.addPoint(x, r, 0.0, h * CORNER_FACTOR) for x, r in corners]
        gmsh.model.geo.synchronize()
        dist = gmsh.model.mesh.field.add("Distance")
        gmsh.model.mesh.field.setNumbers(dist, "PointsList", occ_pts)
        fields.append(_threshold(gmsh, dist, h * CORNER_FACTOR, h, hmax))
    if fields:
        mn = gmsh.model.mesh.field.add("Min")
        gmsh.model.mesh.field.setNumbers(mn, "FieldsList", fields)
        gmsh.model.mesh.field.setAsBackgroundMesh(mn)


def _set_options(gmsh, h: float, cells: str) -> None:
    opt = gmsh.option.setNumber
    opt("Mesh.MeshSizeMax", h)
    opt("Mesh.MeshSizeMin", 0.0)
    opt("Mesh.MeshSizeFromCurvature", 0)  # slow in Gmsh's built-in kernel: distance fields instead
    opt("Mesh.MeshSizeExtendFromBoundary", 0)
    opt("Mesh.MeshSizeFromPoints", 0)
    opt("Mesh.Algorithm", _ALGORITHM[cells])
    if cells == "quads":
        opt("Mesh.RecombineAll", 1)
        opt("Mesh.RecombinationAlgorithm", _RECOMBINATION_SIMPLE_FULL_QUAD)


def read_model(gmsh, planar: bool = False) -> FVMesh:
    """FVMesh of the current Gmsh model (2D elements of the surface, 1D elements of groups)."""
    tags, coords, _ = gmsh.model.mesh.getNodes()
    tags = np.asarray(tags, np.int64)
    xy = np.asarray(coords).reshape(-1, 3)[:, :2]
    lookup = np.full(int(tags.max()) + 1, -1, np.int64)
    lookup[tags] = np.arange(tags.size)

    blocks = []
    types, _, node_tags = gmsh.model.mesh.getElements(2)
    for etype, nt in zip(types, node_tags):
        nt = lookup[np.asarray(nt, np.int64)]
        if etype == 2:
            blocks.append(np.column_stack([nt.reshape(-1, 3), np.full(nt.size // 3, -1)]))
        elif etype == 3:
            blocks.append(nt.reshape(-1, 4))
        else:
            raise RuntimeError(f"unexpected Gmsh element type {etype} in a 2D mesh")
    cells = np.vstack(blocks)

    edges: dict[str, list[np.ndarray]] = {}
    for dim, ptag in gmsh.model.getPhysicalGroups(1):
        name = gmsh.model.getPhysicalName(dim, ptag)
        for ent in gmsh.model.getEntitiesForPhysicalGroup(dim, ptag):
            et, _, nt = gmsh.model.mesh.getElements(1, ent)
            for etype, n in zip(et, nt):
                if etype != 1:
                    raise RuntimeError(f"unexpected Gmsh element type {etype} on a boundary")
                edges.setdefault(name, []).append(lookup[np.asarray(n, np.int64)].reshape(-1, 2))
    # drop nodes not used by any cell (arc centres, refinement points)
    used = np.zeros(len(xy), bool)
    used[cells[cells >= 0]] = True
    renum = np.cumsum(used) - 1
    cells = np.where(cells >= 0, renum[np.maximum(cells, 0)], -1)
    bnd = {k: renum[np.vstack(v)] for k, v in edges.items()}
    return FVMesh.from_cells(xy[used], cells, bnd, planar=planar)


def mesh_loop(loop_segments, h: float, cells: str = "triangles", corners=(), msh_path: str | Path | None = None,
              tol: float = 1e-12, mapped: bool = False, planar: bool = False, grow=None) -> FVMesh:
    """Mesh the region inside a closed counter-clockwise loop of (group name, Segment).

    ``corners``: (x, r) points refined to CORNER_FACTOR * h. ``grow``: (group names, reach, far size):
    cells of size h within ``reach`` of the curves of those groups, growing to the far size beyond.
    ``mapped``: a loop of four
    segments meshed transfinitely with quads (opposite sides get the larger count of cells of
    size h). Used for bores and for the verification geometries of exact solutions.
    """
    with gmsh_session("bore") as gmsh:
        curves, groups = add_loop_surface(gmsh, loop_segments, h, tol)
        if mapped:
            if len(curves) != 4:
                raise ValueError("a mapped mesh needs a loop of four segments")
            n = [max(1, math.ceil(max(curves[k][1].length, curves[k + 2][1].length) / h)) for k in (0, 1)]
            for k, (tag, _) in enumerate(curves):
                gmsh.model.mesh.setTransfiniteCurve(tag, n[k % 2] + 1)
            gmsh.model.mesh.setTransfiniteSurface(1)
            gmsh.model.mesh.setRecombine(2, 1)
        else:
            g = None
            if grow is not None:
                names, reach, far = grow
                g = ([t for name in names for t in groups.get(name, [])], reach, far)
            _add_size_fields(gmsh, list(corners), h, curves, g)
            _set_options(gmsh, h if g is None else max(h, g[2]), cells)
        return generate(gmsh, groups, [1], msh_path, planar=planar)


def mesh_profile(profile: Profile, size: float = 0.05, level: int = 0, cells: str = "triangles",
                 msh_path: str | Path | None = None, h: float | None = None) -> MeshBuild:
    """Mesh the fluid region of ``profile``; optionally write the Gmsh .msh file.

    ``h``: the target cell size, instead of the one from ``size`` and ``level`` (the free-jet
    iteration keeps one size while the jet moves). A profile with a jet is meshed unstructured,
    refined at the lip as at a convex corner."""
    from .mapped import NotMappable, mesh_mapped

    h = target_size(profile, size, level) if h is None else h
    t0 = time.perf_counter()
    if cells == "quads" and not profile.jet:
        try:
            fv = mesh_mapped(profile, h, msh_path)
            return MeshBuild(fv, h, time.perf_counter() - t0, level, cells, "mapped quads")
        except NotMappable:
            pass
    corners = [(c.x, c.r) for c in profile.corners() if c.convex]
    grow = None
    if profile.jet:
        # a moving jet boundary of many short pieces: triangles (full-quad recombination needs an even
        # count of boundary edges, which a trial jet does not keep)
        cells = "triangles"
        corners.append(profile.jet[0].start)
        grow = jet_grading(profile, h)
    fv = mesh_loop(profile.loop(), h, cells, corners, msh_path, tol=0.1 * profile.tol, planar=profile.planar, grow=grow)
    return MeshBuild(fv, h, time.perf_counter() - t0, level, cells, f"unstructured {cells}")


JET_REACH = 1.5  # free jets: cells of the target size within this many lip radii of the jet ...
JET_FAR_SIZE = 0.25  # ... growing to this fraction of the widest radius (a reservoir far from the opening)


def jet_grading(profile: Profile, h: float):
    """Size grading of a mesh with a free jet: where the bore upstream is a reservoir
    (``geometry.jet.is_reservoir``), cells of the target size along the jet and near the lip, coarser
    out in the reservoir; a nozzle discharging a jet keeps the target size throughout (None)."""
    from ..geometry.jet import is_reservoir

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
    from .mapped import NotMappable, blocks, graded_blocks

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
    m = mesh_loop(profile.loop(), h * scale, cells, corners, tol=0.1 * profile.tol, planar=profile.planar)
    return int(round(m.n_cells * scale * scale)), ("meshed" if scale == 1.0 else f"meshed at {scale:.3g} x the size, scaled")


__all__ = ["MeshBuild", "generate", "mesh_loop", "mesh_profile", "target_size", "gmsh_session", "read_model", "expected_cells"]
