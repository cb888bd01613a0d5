"""Unstructured (and four-sided mapped) meshes of a closed loop of profile segments, with the
size fields: curvature of arcs and splines, convex corners, the lip of a free jet, and a far
field that grows away from chosen curves (a reservoir far from its opening)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from .fvmesh import FVMesh
from .session import add_loop_surface, generate, gmsh_session

# Named choices mapped to Gmsh option numbers in one place (Gmsh reference manual, Mesh options).
_ALGORITHM = {"triangles": 6, "quads": 8}  # 6 Frontal-Delaunay, 8 Frontal-Delaunay for quads
_RECOMBINATION_SIMPLE_FULL_QUAD = 2
CURVATURE_ELEMENTS = 36  # elements per 2 pi of curve turning (10 degrees per face on arcs)
CORNER_FACTOR = 0.25  # cell size at a convex corner relative to the target size
CORNER_REACH = 6.0  # distance (in target sizes) over which the corner refinement grades out


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


def _threshold(gmsh, distance_field: int, size_min: float, h: float, reach: float = CORNER_REACH) -> int:
    """Cells of size_min at the feature growing linearly to h at ``reach`` h from it; no constraint
    beyond (so that a coarser far field, where one is set, takes over there)."""
    thr = gmsh.model.mesh.field.add("Threshold")
    gmsh.model.mesh.field.setNumber(thr, "InField", distance_field)
    gmsh.model.mesh.field.setNumber(thr, "SizeMin", size_min)
    gmsh.model.mesh.field.setNumber(thr, "SizeMax", h)
    gmsh.model.mesh.field.setNumber(thr, "DistMin", size_min)
    gmsh.model.mesh.field.setNumber(thr, "DistMax", h * reach)
    gmsh.model.mesh.field.setNumber(thr, "StopAtDistMax", 1)
    return thr


def _point_distance(gmsh, points, size: float) -> int:
    tags = [gmsh.model.geo.addPoint(x, r, 0.0, size) for x, r in points]
    gmsh.model.geo.synchronize()
    dist = gmsh.model.mesh.field.add("Distance")
    gmsh.model.mesh.field.setNumbers(dist, "PointsList", tags)
    return dist


def _add_size_fields(gmsh, corners, h: float, curves, grow=None, lip=None) -> None:
    """Size fields: curvature of arcs and splines, convex corners, the lip of a free jet and (``grow`` = (curve tags, reach, far size)) cells growing from h within ``reach`` of
    those curves to the far size. ``lip`` = (x, r, size, reach): cells of size h at the point,
    growing linearly to h at reach h from it."""
    field = gmsh.model.mesh.field
    fields = []
    if grow is not None:
        tags, reach, far = grow
        dist = field.add("Distance")
        field.setNumbers(dist, "CurvesList", list(tags))
        field.setNumber(dist, "Sampling", 200)
        thr = field.add("Threshold")
        field.setNumber(thr, "InField", dist)
        field.setNumber(thr, "SizeMin", h)
        field.setNumber(thr, "SizeMax", far)
        field.setNumber(thr, "DistMin", reach)
        field.setNumber(thr, "DistMax", reach + 4.0 * far)
        fields.append(thr)
    for tag, seg in curves:  # curvature: CURVATURE_ELEMENTS faces per full turn
        if seg.kind == "line":
            continue
        hc = 2 * math.pi * _min_curvature_radius(seg) / CURVATURE_ELEMENTS
        if hc < h:
            dist = field.add("Distance")
            field.setNumbers(dist, "CurvesList", [tag])
            field.setNumber(dist, "Sampling", int(min(2000, max(20, 4 * seg.length / hc))))
            fields.append(_threshold(gmsh, dist, hc, h))
    if corners:
        fields.append(_threshold(gmsh, _point_distance(gmsh, corners, h * CORNER_FACTOR), h * CORNER_FACTOR, h))
    if lip is not None:
        x, r, size, reach = lip
        fields.append(_threshold(gmsh, _point_distance(gmsh, [(x, r)], size * h), size * h, h, reach))
    if fields:
        mn = field.add("Min")
        field.setNumbers(mn, "FieldsList", fields)
        field.setAsBackgroundMesh(mn)


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


def mesh_loop(loop_segments, h: float, cells: str = "triangles", corners=(), msh_path: str | Path | None = None,
              tol: float = 1e-12, mapped: bool = False, planar: bool = False, grow=None, lip=None,
              single_edge: tuple[str, ...] = ()) -> FVMesh:
    """Mesh the region inside a closed counter-clockwise loop of (group name, Segment).

    ``corners``: (x, r) points refined to CORNER_FACTOR * h. ``grow``: (group names, reach, far size):
    cells of size h within ``reach`` of the curves of those groups, growing to the far size beyond.
    ``lip``: (x, r, size, reach) of the lip of a free jet: cells of size h there, growing to h at
    reach h. ``single_edge``: groups whose
    segments become exactly one mesh face each (a free jet: its polyline is its faces), with the
    cell sizes carried in from them. ``mapped``: a loop of four segments meshed transfinitely with
    quads (opposite sides get the larger count of cells of size h). Used for bores and for the
    verification geometries of exact solutions.
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
            _add_size_fields(gmsh, list(corners), h, curves, g, lip)
            _set_options(gmsh, h if g is None else max(h, g[2]), cells)
            # after the size fields (their geometry synchronisation resets mesh attributes)
            for name in single_edge:
                for tag in groups.get(name, []):
                    gmsh.model.mesh.setTransfiniteCurve(tag, 2)
            if single_edge:
                gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 1)
        return generate(gmsh, groups, [1], msh_path, planar=planar)
