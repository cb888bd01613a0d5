"""Mapped (transfinite) quadrilateral meshes for bores whose wall and centre body run forward in x.

The fluid region is cut into blocks by lines normal to the axis at every break point of the wall
and centre body. Each block has four sides (axis or centre body below, wall above, two planes)
and is meshed transfinitely with the same number of cells across the channel in every block,
so the blocks conform. Cells follow the wall, which makes the error smooth along it (clean
convergence of wall values); meshing is linear in the cell count and fast.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from ..geometry import Profile, Segment
from ..names import Boundary
from ..geometry.profile import GEOMETRY_TOL, _catmull_rom
from .fvmesh import FVMesh
from .session import GeoBuilder, generate, gmsh_session


class NotMappable(ValueError):
    """The profile cannot be cut into four-sided blocks (it runs backwards in x)."""


def _x_monotone(seg: Segment, tol: float) -> bool:
    x = seg.sample(200)[:, 0] if seg.kind == "arc" else seg.sample()[:, 0]
    dx = np.diff(x)
    return bool(np.all(dx >= -tol) or np.all(dx <= tol))


def _point_at_x(seg: Segment, x: float) -> tuple[float, float]:
    (x0, r0), (x1, r1) = seg.start, seg.end
    tol = GEOMETRY_TOL * seg.chord
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
    xs, rs = _spline_samples(seg)
    return (x, float(np.interp(x, xs, rs)))


@lru_cache(maxsize=64)
def _piece_samples(seg: Segment) -> np.ndarray:
    """Points of a spline for the via points of its pieces: 6 a span, at most about 2000 in all."""
    pts = np.array([seg.start, *seg.via, seg.end])
    return _catmull_rom(pts, int(max(1, min(6, 2000 // (len(pts) - 1)))))


@lru_cache(maxsize=64)
def _spline_samples(seg: Segment) -> tuple[np.ndarray, np.ndarray]:
    """Dense samples of a spline sorted by x, computed once per segment (about 4096 points)."""
    per_span = int(min(64, max(2, 4096 // (len(seg.via) + 1))))
    p = seg.sample(per_span)
    order = np.argsort(p[:, 0])
    return p[order, 0], p[order, 1]


def _piece(seg: Segment, xa: float, xb: float) -> Segment:
    """The part of ``seg`` between x = xa and x = xb (xa < xb), oriented in +x."""
    s = seg if seg.end[0] >= seg.start[0] else seg.reversed()
    a, b = _point_at_x(s, xa), _point_at_x(s, xb)
    if s.kind == "line":
        return Segment(a, b, key=s.key)
    if s.kind == "arc":
        return Segment(a, b, "arc", s.radius, key=s.key)
    dense = _piece_samples(s)
    eps = GEOMETRY_TOL * abs(xb - xa)
    inside = dense[(dense[:, 0] > xa + eps) & (dense[:, 0] < xb - eps)]
    if len(inside) == 0:
        return Segment(a, b, key=s.key)
    return Segment(a, b, "spline", via=tuple(map(tuple, inside)), key=s.key)


def _cover(chain, xa: float, xb: float, tol: float):
    """The (group, segment) of ``chain`` spanning [xa, xb], or None."""
    mid = 0.5 * (xa + xb)
    for group, s in chain:
        lo, hi = sorted((s.start[0], s.end[0]))
        if lo - tol <= mid <= hi + tol and hi - lo > 0:
            return group, s
    return None


def blocks(profile: Profile) -> list[tuple[Segment, Segment, str, str]]:
    """(bottom, top, bottom group, top group) for each block, in +x order.

    The groups come from the profile's chains: the top is the wall (or the jet beyond the lip),
    the bottom the centre body where there is one, else the axis.
    """
    tol = profile.tol
    top_chain = list(profile.top)
    bottom_chain = [(Boundary.CENTERBODY, s) for s in profile.centerbody]
    for _, s in top_chain + bottom_chain:
        if not _x_monotone(s, tol) or abs(s.end[0] - s.start[0]) <= tol:
            raise NotMappable(f"{s.key} runs normal to or backwards along the axis")
    xs = [profile.x_inlet, profile.x_outlet]
    xs += [p for _, s in top_chain + bottom_chain for p in (s.start[0], s.end[0])]
    xs = np.sort(np.array(xs))
    xs = xs[np.r_[True, np.diff(xs) > tol]]  # merge coincident break points, keep exact values
    xs = xs[(xs >= profile.x_inlet - tol) & (xs <= profile.x_outlet + tol)]
    out = []
    for xa, xb in zip(xs[:-1], xs[1:]):
        top = _cover(top_chain, xa, xb, tol)
        if top is None:
            raise NotMappable(f"no wall over x = {xa:.6g} .. {xb:.6g} m")
        body = _cover(bottom_chain, xa, xb, tol) if bottom_chain else None
        if body is not None:
            bottom, bgroup = _piece(body[1], xa, xb), body[0]
        else:
            bottom, bgroup = Segment((xa, 0.0), (xb, 0.0), key="axis"), Boundary.AXIS
        out.append((bottom, _piece(top[1], xa, xb), bgroup, top[0]))
    return out


# Axial spacing: cells as long as they are high (local channel height / cells across), between
# h / 8 and h. Blocks are cut where the wanted spacing changes by more than GRADE, so a cone
# takes the spacing of its local height (not of its narrow end) and a throat in the middle of a
# block gets short cells where it is narrow.
GRADE = 1.25
HEIGHT_SAMPLES = 33  # channel height samples along each block


def _heights(bottom: Segment, top: Segment) -> tuple[np.ndarray, np.ndarray]:
    """x samples along a block and the channel height there (top r minus bottom r)."""
    xs = np.linspace(top.start[0], top.end[0], HEIGHT_SAMPLES)
    rt = np.array([_point_at_x(top, x)[1] for x in xs])
    rb = np.array([_point_at_x(bottom, x)[1] for x in xs])
    return xs, rt - rb


def graded_blocks(blks, h: float, tol: float):
    """Cut the blocks where the wanted axial spacing changes; returns the cells across the channel
    and (bottom, top, bottom group, top group, axial spacing) for each piece, in +x order."""
    sampled = [_heights(b, t) for b, t, _, _ in blks]
    h_max = max(float(hs.max()) for _, hs in sampled)
    n_r = max(2, math.ceil(h_max / h))
    out = []
    for (bottom, top, bgroup, tgroup), (xs, hs) in zip(blks, sampled):
        want = np.clip(np.maximum(hs, tol) / n_r, h / 8.0, h)
        cuts, lo, hi, start = [], want[0], want[0], xs[0]
        for x, w in zip(xs[1:], want[1:]):
            lo2, hi2 = min(lo, w), max(hi, w)
            if hi2 / lo2 > GRADE and x - start > 2 * lo2:
                cuts.append((start, x, lo))
                start, lo, hi = x, w, w
            else:
                lo, hi = lo2, hi2
        cuts.append((start, xs[-1], lo))
        if len(cuts) > 1 and cuts[-1][1] - cuts[-1][0] < 2 * cuts[-1][2]:  # no sliver at the end
            a, _, w1 = cuts[-2]
            cuts[-2:] = [(a, xs[-1], min(w1, cuts[-1][2]))]
        for xa, xb, dx in cuts:
            if len(cuts) == 1:
                out.append((bottom, top, bgroup, tgroup, dx))
            else:
                out.append((_piece(bottom, xa, xb), _piece(top, xa, xb), bgroup, tgroup, dx))
    return n_r, out


def mesh_mapped(profile: Profile, h: float, msh_path=None) -> FVMesh:
    """Transfinite quad mesh with about ``h`` along the axis and square-ish cells."""
    tol = 0.1 * profile.tol
    n_r, pieces = graded_blocks(blocks(profile), h, tol)
    with gmsh_session("bore-mapped") as gmsh:
        build = GeoBuilder(gmsh, tol)
        geo = build.geo
        verticals: dict[int, int] = {}

        def vkey(x: float) -> int:
            return round(x / tol)

        def vertical(x, r0, r1):
            if vkey(x) not in verticals:
                verticals[vkey(x)] = geo.addLine(build.point((x, r0)), build.point((x, r1)))
            return verticals[vkey(x)]

        groups: dict[str, list[int]] = {}
        surfaces, transfinite = [], []
        for bottom, top, bgroup, tgroup, dx in pieces:
            cb = build.curve(bottom)
            ct = build.curve(top)
            vl = vertical(bottom.start[0], bottom.start[1], top.start[1])
            vr = vertical(bottom.end[0], bottom.end[1], top.end[1])
            loop = geo.addCurveLoop([cb, vr, -ct, -vl])
            s = geo.addPlaneSurface([loop])
            surfaces.append(s)
            groups.setdefault(tgroup, []).append(ct)
            groups.setdefault(bgroup, []).append(cb)
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
        first = verticals[vkey(pieces[0][0].start[0])]
        last = verticals[vkey(pieces[-1][0].end[0])]
        groups[Boundary.INLET] = [first]
        groups[Boundary.OUTLET] = [last]
        return generate(gmsh, groups, surfaces, msh_path, planar=profile.planar)
