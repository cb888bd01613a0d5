"""Mapped (transfinite) quadrilateral meshes for bores whose wall and centre body run forward in x.

The fluid region is cut into blocks by lines normal to the axis at every break point of the wall
and centre body. Each block has four sides (axis or centre body below, wall above, two planes)
and is meshed transfinitely with the same number of cells across the channel in every block,
so the blocks conform. Cells follow the wall, which makes the error smooth along it (clean
convergence of wall values); meshing is linear in the cell count and fast.
"""

from __future__ import annotations

import math

import numpy as np

from ..geometry import Profile, Segment
from ..geometry.profile import _catmull_rom
from .fvmesh import FVMesh


class NotMappable(ValueError):
    """The profile cannot be cut into four-sided blocks (it runs backwards in x)."""


def _x_monotone(seg: Segment) -> bool:
    x = seg.sample(200)[:, 0] if seg.kind == "arc" else seg.sample()[:, 0]
    dx = np.diff(x)
    return bool(np.all(dx >= -1e-12) or np.all(dx <= 1e-12))


def _point_at_x(seg: Segment, x: float) -> tuple[float, float]:
    (x0, r0), (x1, r1) = seg.start, seg.end
    tol = 1e-9 * seg.chord
    if abs(x - x0) <= tol:
        return seg.start
    if abs(x - x1) <= tol:
        return seg.end
    if seg.kind == "line":
        return (x, r0 + (r1 - r0) * (x - x0) / (x1 - x0))
    if seg.kind == "arc":
        cx, cr = seg.arc_center()
        R = abs(seg.radius)
        a0 = math.atan2(r0 - cr, x0 - cx)
        a1 = math.atan2(r1 - cr, x1 - cx)
        d = (a1 - a0 + math.pi) % (2 * math.pi) - math.pi
        c = max(-1.0, min(1.0, (x - cx) / R))
        for a in (math.acos(c), -math.acos(c)):
            t = ((a - a0 + math.pi) % (2 * math.pi) - math.pi) / d
            if -1e-9 <= t <= 1 + 1e-9:
                return (x, cr + R * math.sin(a))
        raise NotMappable(f"{seg.key}: no point of the arc at x = {x}")
    p = seg.sample(64)
    order = np.argsort(p[:, 0])
    return (x, float(np.interp(x, p[order, 0], p[order, 1])))


def _piece(seg: Segment, xa: float, xb: float) -> Segment:
    """The part of ``seg`` between x = xa and x = xb (xa < xb), oriented in +x."""
    s = seg if seg.end[0] >= seg.start[0] else seg.reversed()
    a, b = _point_at_x(s, xa), _point_at_x(s, xb)
    if s.kind == "line":
        return Segment(a, b, key=s.key)
    if s.kind == "arc":
        return Segment(a, b, "arc", s.radius, key=s.key)
    pts = np.array([s.start, *s.via, s.end])
    dense = _catmull_rom(pts, 6)
    inside = dense[(dense[:, 0] > xa + 1e-9 * abs(xb - xa)) & (dense[:, 0] < xb - 1e-9 * abs(xb - xa))]
    if len(inside) == 0:
        return Segment(a, b, key=s.key)
    return Segment(a, b, "spline", via=tuple(map(tuple, inside)), key=s.key)


def _cover(chain, xa: float, xb: float):
    """The segment of ``chain`` spanning [xa, xb], or None."""
    mid = 0.5 * (xa + xb)
    for s in chain:
        lo, hi = sorted((s.start[0], s.end[0]))
        if lo - 1e-12 <= mid <= hi + 1e-12 and hi - lo > 0:
            return s
    return None


def blocks(profile: Profile) -> list[tuple[Segment, Segment, str]]:
    """(bottom, top, bottom group) for each block, in +x order."""
    for chain in (profile.wall, profile.centerbody):
        for s in chain:
            if not _x_monotone(s) or abs(s.end[0] - s.start[0]) <= 1e-12 * profile.length_scale:
                raise NotMappable(f"{s.key} runs normal to or backwards along the axis")
    xs = [profile.x_inlet, profile.x_outlet]
    xs += [p for s in profile.wall for p in (s.start[0], s.end[0])]
    xs += [p for s in profile.centerbody for p in (s.start[0], s.end[0])]
    tol = 1e-9 * profile.length_scale
    xs = np.sort(np.array(xs))
    xs = xs[np.r_[True, np.diff(xs) > tol]]  # merge coincident break points, keep exact values
    xs = xs[(xs >= profile.x_inlet - tol) & (xs <= profile.x_outlet + tol)]
    out = []
    for xa, xb in zip(xs[:-1], xs[1:]):
        top = _cover(profile.wall, xa, xb)
        if top is None:
            raise NotMappable(f"no wall over x = {xa:.6g} .. {xb:.6g} m")
        body = _cover(profile.centerbody, xa, xb) if profile.centerbody else None
        bottom = _piece(body, xa, xb) if body is not None else Segment((xa, 0.0), (xb, 0.0), key="axis")
        out.append((bottom, _piece(top, xa, xb), "centerbody" if body is not None else "axis"))
    return out


def mesh_mapped(profile: Profile, h: float, msh_path=None) -> FVMesh:
    """Transfinite quad mesh with about ``h`` along the axis and square-ish cells."""
    from .gmsh_build import GeoBuilder, gmsh_session, read_model

    blks = blocks(profile)
    heights = []
    for bottom, top, _ in blks:
        pa, pb = top.sample(), bottom.sample()
        heights.append((top.start[1] - bottom.start[1], top.end[1] - bottom.end[1],
                        float(np.min(np.interp(pb[:, 0], pa[:, 0], pa[:, 1]) - pb[:, 1]))))
    h_max = max(max(a, b) for a, b, _ in heights)
    n_r = max(2, math.ceil(h_max / h))
    tol = 1e-10 * profile.length_scale
    with gmsh_session() as gmsh:
        gmsh.model.add("bore-mapped")
        build = GeoBuilder(gmsh, tol)
        geo = build.geo
        verticals: dict[int, int] = {}

        def vkey(x: float) -> int:
            return round(x / tol)

        def vertical(x, r0, r1):
            if vkey(x) not in verticals:
                verticals[vkey(x)] = geo.addLine(build.point((x, r0)), build.point((x, r1)))
            return verticals[vkey(x)]

        groups: dict[str, list[int]] = {"wall": [], "axis": [], "centerbody": []}
        surfaces, transfinite = [], []
        for (bottom, top, bgroup), (_, _, hmin) in zip(blks, heights):
            cb = build.curve(bottom)
            ct = build.curve(top)
            vl = vertical(bottom.start[0], bottom.start[1], top.start[1])
            vr = vertical(bottom.end[0], bottom.end[1], top.end[1])
            loop = geo.addCurveLoop([cb, vr, -ct, -vl])
            s = geo.addPlaneSurface([loop])
            surfaces.append(s)
            groups["wall"].append(ct)
            groups[bgroup].append(cb)
            dr = max(hmin, 1e-12) / n_r  # smallest radial spacing in the block
            dx = min(h, max(dr, h / 8.0))
            n_x = max(1, math.ceil(max(top.length, bottom.length) / dx))
            transfinite.append((cb, ct, n_x))
        geo.synchronize()
        for cb, ct, n_x in transfinite:
            gmsh.model.mesh.setTransfiniteCurve(cb, n_x + 1)
            gmsh.model.mesh.setTransfiniteCurve(ct, n_x + 1)
        for tag in verticals.values():
            gmsh.model.mesh.setTransfiniteCurve(tag, n_r + 1)
        for s in surfaces:
            gmsh.model.mesh.setTransfiniteSurface(s)
            gmsh.model.mesh.setRecombine(2, s)
        first = verticals[vkey(blks[0][0].start[0])]
        last = verticals[vkey(blks[-1][0].end[0])]
        gmsh.model.addPhysicalGroup(1, [first], name="inlet")
        gmsh.model.addPhysicalGroup(1, [last], name="outlet")
        for name, tags in groups.items():
            if tags:
                gmsh.model.addPhysicalGroup(1, tags, name=name)
        gmsh.model.addPhysicalGroup(2, surfaces, name="fluid")
        gmsh.model.mesh.generate(2)
        if msh_path is not None:
            gmsh.write(str(msh_path))
        return read_model(gmsh)
