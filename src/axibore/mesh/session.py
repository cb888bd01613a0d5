"""The Gmsh session and the one generate-and-read path of every mesher.

``gmsh_session`` gives a Gmsh model of our own for the duration of a block (a caller's open session
is left as it was); ``add_loop_surface`` builds a plane surface from a closed loop of profile
segments; ``generate`` names the boundary groups, meshes and reads the result into an FVMesh.
"""

from __future__ import annotations

from contextlib import contextmanager
from pathlib import Path

import numpy as np

from .fvmesh import FVMesh

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


def write_msh(mesh: FVMesh, path: str | Path) -> None:
    """A Gmsh .msh file (format 2.2) of an FVMesh: its cells and its named boundary groups as physical
    groups (a mesh whose nodes moved after Gmsh built it is written from its own arrays)."""
    import meshio

    tri = mesh.nvert == 3
    cells = []
    phys: dict[str, list[np.ndarray]] = {"gmsh:physical": [], "gmsh:geometrical": []}
    field_data = {"fluid": np.array([1, 2])}
    for k, (name, faces) in enumerate(mesh.boundary.items(), start=2):
        cells.append(("line", mesh.face_nodes[faces]))
        field_data[str(name)] = np.array([k, 1])
        phys["gmsh:physical"].append(np.full(faces.size, k))
        phys["gmsh:geometrical"].append(np.full(faces.size, k))
    for kind, mask, width in (("triangle", tri, 3), ("quad", ~tri, 4)):
        if np.any(mask):
            cells.append((kind, mesh.cells[mask, :width]))
            phys["gmsh:physical"].append(np.ones(int(mask.sum()), int))
            phys["gmsh:geometrical"].append(np.ones(int(mask.sum()), int))
    points = np.column_stack([mesh.nodes, np.zeros(len(mesh.nodes))])
    meshio.write(str(path), meshio.Mesh(points, cells, cell_data=phys, field_data=field_data), file_format="gmsh22",
                 binary=False)
