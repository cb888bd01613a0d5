"""The meridional outline of a bore: wall (and centre body) as lines, circular arcs and splines.

Coordinates are (x, r): x along the axis (flow in +x), r >= 0. The wall runs from the inlet plane
(x_in, R_in) to the outlet plane (x_out, R_out); the inlet and outlet planes are normal to the
axis. A centre body is a chain whose ends lie on the axis or on the inlet/outlet planes.

Arc sign convention: ``radius > 0`` bulges to the left of the direction of travel (for a wall
traversed in +x: away from the axis); ``radius < 0`` bulges to the right (towards the axis). The
minor arc is always taken.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from ..names import Boundary
from .polyline import crossings, min_distance

# samples per arc / spline span used for validation and 1D areas (not for meshing)
_ARC_SAMPLES = 48
_SPLINE_SAMPLES_PER_SPAN = 8
# lengths below this fraction of the bore size count as zero (coincident points, on the axis)
GEOMETRY_TOL = 1e-9


class ProfileError(ValueError):
    """A bore profile is not valid; ``key`` names the case key or segment."""

    def __init__(self, key: str, message: str):
        self.key = key
        self.message = message
        super().__init__(f"{key}: {message}")


@dataclass(frozen=True)
class Segment:
    """One piece of an outline, from ``start`` to ``end``.

    kind "line"; "arc" with signed ``radius``; "spline" through ``via`` points (interpolating).
    """

    start: tuple[float, float]
    end: tuple[float, float]
    kind: str = "line"
    radius: float = 0.0
    via: tuple[tuple[float, float], ...] = ()
    key: str = "bore"

    @property
    def chord(self) -> float:
        return math.hypot(self.end[0] - self.start[0], self.end[1] - self.start[1])

    @property
    def length(self) -> float:
        """Length along the (sampled) curve."""
        return float(np.sum(np.linalg.norm(np.diff(self.sample(), axis=0), axis=1)))

    def arc_center(self) -> tuple[float, float]:
        (x0, r0), (x1, r1) = self.start, self.end
        L = self.chord
        R = abs(self.radius)
        tx, tr = (x1 - x0) / L, (r1 - r0) / L
        nx, nr = -tr, tx  # left normal
        side = 1.0 if self.radius > 0 else -1.0
        off = math.sqrt(max(R * R - 0.25 * L * L, 0.0))
        mx, mr = 0.5 * (x0 + x1), 0.5 * (r0 + r1)
        return (mx - side * off * nx, mr - side * off * nr)

    def sample(self, n: int | None = None) -> np.ndarray:
        """Points along the segment, both ends included, shape (k, 2)."""
        if self.kind == "line":
            return np.array([self.start, self.end], dtype=float)
        if self.kind == "arc":
            cx, cr = self.arc_center()
            a0 = math.atan2(self.start[1] - cr, self.start[0] - cx)
            a1 = math.atan2(self.end[1] - cr, self.end[0] - cx)
            d = (a1 - a0 + math.pi) % (2 * math.pi) - math.pi  # minor arc
            t = np.linspace(0.0, 1.0, n or _ARC_SAMPLES)
            a = a0 + d * t
            R = abs(self.radius)
            pts = np.column_stack([cx + R * np.cos(a), cr + R * np.sin(a)])
            pts[0], pts[-1] = self.start, self.end
            return pts
        pts = np.array([self.start, *self.via, self.end], dtype=float)
        return _catmull_rom(pts, n or _SPLINE_SAMPLES_PER_SPAN)

    def tangent_at(self, which: str) -> np.ndarray:
        """Unit tangent (direction of travel) at 'start' or 'end'."""
        p = self.sample()
        d = p[1] - p[0] if which == "start" else p[-1] - p[-2]
        return d / np.linalg.norm(d)

    def reversed(self) -> "Segment":
        return Segment(self.end, self.start, self.kind, -self.radius, tuple(reversed(self.via)), self.key)


def _catmull_rom(pts: np.ndarray, per_span: int) -> np.ndarray:
    """Uniform Catmull-Rom spline through ``pts`` (the curve Gmsh's built-in Spline draws), all spans at once."""
    ext = np.vstack([2 * pts[0] - pts[1], pts, 2 * pts[-1] - pts[-2]])
    p0, p1, p2, p3 = ext[:-3, None], ext[1:-2, None], ext[2:-1, None], ext[3:, None]  # (spans, 1, 2)
    t = np.linspace(0.0, 1.0, per_span, endpoint=False)[None, :, None]
    out = 0.5 * ((2 * p1) + (-p0 + p2) * t + (2 * p0 - 5 * p1 + 4 * p2 - p3) * t**2 + (-p0 + 3 * p1 - 3 * p2 + p3) * t**3)
    return np.vstack([out.reshape(-1, 2), pts[-1:]])


@dataclass(frozen=True)
class Corner:
    """A junction where the wall (or centre body) turns by ``turn`` radians without rounding."""

    x: float
    r: float
    turn: float  # > 0: convex as seen from the fluid (suction peak, singular in potential flow)
    boundary: str  # Boundary.WALL | Boundary.CENTERBODY
    key: str

    @property
    def convex(self) -> bool:
        return self.turn > 0


@dataclass(frozen=True)
class Profile:
    """The outline of the fluid region as named boundary chains, each oriented from the inlet side
    to the outlet side: the wall (inlet plane to the lip or outlet plane), an optional free-jet
    boundary continuing it downstream, and an optional centre body.

    The mesher builds its boundary groups from the chain names (``Boundary``).
    """

    wall: tuple[Segment, ...]
    centerbody: tuple[Segment, ...] = ()
    name: str = ""
    notes: tuple[str, ...] = field(default=())
    jet: tuple[Segment, ...] = ()
    planar: bool = False  # a planar section (per unit depth) instead of a body of revolution

    @property
    def chains(self) -> dict[str, tuple[Segment, ...]]:
        """The non-empty chains by boundary name, outer ones (wall, jet) first."""
        out = {Boundary.WALL: self.wall, Boundary.JET: self.jet, Boundary.CENTERBODY: self.centerbody}
        return {k: v for k, v in out.items() if v}

    @property
    def top(self) -> tuple[tuple[str, Segment], ...]:
        """The outer boundary from the inlet plane to the outlet plane: wall, then jet."""
        return tuple((Boundary.WALL, s) for s in self.wall) + tuple((Boundary.JET, s) for s in self.jet)

    def chain_points(self, name: str) -> np.ndarray:
        """Sampled polyline of one chain."""
        if name == Boundary.WALL:
            return self.wall_points
        if name == Boundary.CENTERBODY:
            return self.centerbody_points
        return _chain_points(self.chains[name])

    # -- planes --------------------------------------------------------------------------
    @property
    def x_inlet(self) -> float:
        return self.wall[0].start[0]

    @property
    def x_outlet(self) -> float:
        return self.top[-1][1].end[0]

    @property
    def r_inlet(self) -> float:
        return self.wall[0].start[1]

    @property
    def r_outlet(self) -> float:
        return self.top[-1][1].end[1]

    @property
    def inlet_bottom(self) -> float:
        """r where the inlet plane meets the axis or centre body."""
        if self.centerbody and abs(self.centerbody[0].start[0] - self.x_inlet) < self.tol and self.centerbody[0].start[1] > 0:
            return self.centerbody[0].start[1]
        return 0.0

    @property
    def outlet_bottom(self) -> float:
        if self.centerbody and abs(self.centerbody[-1].end[0] - self.x_outlet) < self.tol and self.centerbody[-1].end[1] > 0:
            return self.centerbody[-1].end[1]
        return 0.0

    @property
    def tol(self) -> float:
        """Geometric tolerance: 1e-9 of the bore size (lengths below it are zero)."""
        return GEOMETRY_TOL * self.length_scale

    @cached_property
    def length_scale(self) -> float:
        pts = np.vstack([s.sample() for _, s in self.top])
        return float(np.ptp(pts[:, 0]) + np.abs(pts[:, 1]).max())

    # -- sampled polylines ----------------------------------------------------------------
    @cached_property
    def wall_points(self) -> np.ndarray:
        return _chain_points(self.wall)

    @cached_property
    def centerbody_points(self) -> np.ndarray:
        return _chain_points(self.centerbody) if self.centerbody else np.zeros((0, 2))

    def loop(self) -> list[tuple[str, Segment]]:
        """The closed boundary, counter-clockwise in (x, r) (fluid on the left), as (group, segment)."""
        out: list[tuple[str, Segment]] = []
        xi, xo = self.x_inlet, self.x_outlet
        if self.centerbody:
            a, b = self.centerbody[0].start, self.centerbody[-1].end
            if self.inlet_bottom == 0.0:
                out.append((Boundary.AXIS, Segment((xi, 0.0), (a[0], 0.0), key="axis")))
            out += [(Boundary.CENTERBODY, s) for s in self.centerbody]
            if self.outlet_bottom == 0.0:
                out.append((Boundary.AXIS, Segment((b[0], 0.0), (xo, 0.0), key="axis")))
        else:
            out.append((Boundary.AXIS, Segment((xi, 0.0), (xo, 0.0), key="axis")))
        out.append((Boundary.OUTLET, Segment((xo, self.outlet_bottom), (xo, self.r_outlet), key="outlet plane")))
        out += [(g, s.reversed()) for g, s in reversed(self.top)]
        out.append((Boundary.INLET, Segment((xi, self.r_inlet), (xi, self.inlet_bottom), key="inlet plane")))
        return out

    @cached_property
    def outline(self) -> np.ndarray:
        """Closed polygon of the fluid region (sampled), counter-clockwise, first point not repeated."""
        pts = [seg.sample()[:-1] for _, seg in self.loop()]
        return np.vstack(pts)

    # -- measures ---------------------------------------------------------------------------
    @property
    def area(self) -> float:
        """Meridional area of the fluid region (exact for straight-sided outlines)."""
        p = self.outline
        x, r = p[:, 0], p[:, 1]
        return 0.5 * float(np.sum(x * np.roll(r, -1) - np.roll(x, -1) * r))

    @property
    def volume_per_radian(self) -> float:
        """Volume of revolution divided by 2 pi (theorem of Pappus: area times centroid radius)."""
        p = self.outline
        x, r = p[:, 0], p[:, 1]
        x1, r1 = np.roll(x, -1), np.roll(r, -1)
        cross = x * r1 - x1 * r
        return float(np.sum((r + r1) * cross) / 6.0)

    def wall_radius(self, x: np.ndarray) -> np.ndarray:
        """Smallest wall radius crossing each x (the bore radius seen by a 1D model); past a lip, the
        free jet's radius where the profile has one."""
        pts = self.wall_points if not self.jet else np.vstack([self.wall_points, self.chain_points("jet")[1:]])
        return crossings(pts, np.asarray(x, float), np.minimum, np.inf)

    def centerbody_radius(self, x: np.ndarray) -> np.ndarray:
        if not self.centerbody:
            return np.zeros_like(np.asarray(x, float))
        out = crossings(self.centerbody_points, np.asarray(x, float), np.maximum, -np.inf)
        return np.where(np.isfinite(out), out, 0.0)

    def flow_area(self, x) -> np.ndarray:
        """Flow area normal to the axis at x: pi (r_wall^2 - r_body^2); planar: r_wall - r_body per
        unit depth (the half above the symmetry plane)."""
        x = np.asarray(x, float)
        if self.planar:
            return self.wall_radius(x) - self.centerbody_radius(x)
        return np.pi * (self.wall_radius(x) ** 2 - self.centerbody_radius(x) ** 2)

    @property
    def monotone(self) -> bool:
        """True when the wall never runs backwards in x (a 1D model along x is meaningful)."""
        return bool(np.all(np.diff(self.wall_points[:, 0]) >= -self.tol))

    @cached_property
    def min_channel_height(self) -> float:
        """Smallest distance across the flow passage: the wall radius, or the wall-body gap."""
        w = self.wall_points
        h = float(w[:, 1].min())
        if self.centerbody:
            h = min(h, min_distance(w, self.centerbody_points))
        return h

    def corners(self, min_turn_deg: float = 2.0) -> list[Corner]:
        """Junctions with a tangent break of more than ``min_turn_deg``, convex ones flagged."""
        out = []
        for group, chain, fluid_side in ((Boundary.WALL, self.wall, -1.0), (Boundary.CENTERBODY, self.centerbody, 1.0)):
            for a, b in zip(chain[:-1], chain[1:]):  # tangent breaks inside the chain
                t0, t1 = a.tangent_at("end"), b.tangent_at("start")
                cross = t0[0] * t1[1] - t0[1] * t1[0]
                ang = math.atan2(cross, float(t0 @ t1))
                if abs(ang) < math.radians(min_turn_deg):
                    continue
                # the wall has the fluid on its right (+x travel, fluid below): a left turn
                # (ang > 0) bends away from the fluid: convex. The body has the fluid on its left.
                turn = ang if fluid_side < 0 else -ang
                out.append(Corner(b.start[0], b.start[1], turn, group, b.key))
        return out


def _chain_points(chain) -> np.ndarray:
    pts = [chain[0].sample()[:1]] + [s.sample()[1:] for s in chain]
    return np.vstack(pts)


# ---- the exact throat ---------------------------------------------------------------------------
def _segment_radius_at(seg: Segment, x: float) -> list[float]:
    """Radii where the exact curve of ``seg`` crosses x (lines and arcs in closed form; splines
    by the roots of their cubic spans)."""
    (x0, r0), (x1, r1) = seg.start, seg.end
    if seg.kind == "line":
        lo, hi = min(x0, x1), max(x0, x1)
        if hi - lo <= 0 or not lo - 1e-15 <= x <= hi + 1e-15:
            return []
        return [r0 + (r1 - r0) * (x - x0) / (x1 - x0)]
    if seg.kind == "arc":
        cx, cr = seg.arc_center()
        R = abs(seg.radius)
        if abs(x - cx) > R:
            return []
        a0 = math.atan2(r0 - cr, x0 - cx)
        d = (math.atan2(r1 - cr, x1 - cx) - a0 + math.pi) % (2 * math.pi) - math.pi
        out = []
        for a in (math.acos(max(-1.0, min(1.0, (x - cx) / R))), -math.acos(max(-1.0, min(1.0, (x - cx) / R)))):
            t = ((a - a0 + math.pi) % (2 * math.pi) - math.pi) / d if d else -1.0
            if -1e-12 <= t <= 1 + 1e-12:
                out.append(cr + R * math.sin(a))
        return out
    pts = np.array([seg.start, *seg.via, seg.end], dtype=float)
    ext = np.vstack([2 * pts[0] - pts[1], pts, 2 * pts[-1] - pts[-2]])
    out = []
    for p0, p1, p2, p3 in zip(ext[:-3], ext[1:-2], ext[2:-1], ext[3:]):
        c = 0.5 * np.array([2 * p1, -p0 + p2, 2 * p0 - 5 * p1 + 4 * p2 - p3, -p0 + 3 * p1 - 3 * p2 + p3])  # t^0..t^3
        for t in np.roots([c[3, 0], c[2, 0], c[1, 0], c[0, 0] - x]):
            if abs(t.imag) < 1e-9 and -1e-9 <= t.real <= 1 + 1e-9:
                tr = float(min(max(t.real, 0.0), 1.0))
                out.append(float(c[0, 1] + c[1, 1] * tr + c[2, 1] * tr**2 + c[3, 1] * tr**3))
    return out


def _exact_flow_area(profile: Profile, x: float) -> float:
    """Flow area at x from the exact curves: the smallest outer radius (wall, then jet) and the
    largest centre-body radius crossing x (as flow_area does on the sampled polylines)."""
    outer = [r for _, s in profile.top for r in _segment_radius_at(s, x)]
    inner = [r for s in profile.centerbody for r in _segment_radius_at(s, x)]
    rw = min(outer) if outer else math.inf
    rb = max(inner) if inner else 0.0
    return (rw - rb) if profile.planar else math.pi * (rw * rw - rb * rb)


def min_flow_area(profile: Profile) -> tuple[float, float]:
    """(x, area) of the smallest flow area of the exact profile, arcs and splines included: the
    area at every segment end, and a bounded scalar minimisation (scipy's ``minimize_scalar``,
    method "bounded", to 1e-12 of the bore size) between consecutive ends, where each crossing
    curve is smooth."""
    from scipy.optimize import minimize_scalar

    ends = sorted({p[0] for s in (*[s for _, s in profile.top], *profile.centerbody) for p in (s.start, s.end)})
    ends = [x for x in ends if profile.x_inlet <= x <= profile.x_outlet]
    best = min(((x, _exact_flow_area(profile, x)) for x in ends), key=lambda t: t[1])
    tol = 1e-12 * profile.length_scale
    for a, b in zip(ends[:-1], ends[1:]):
        if b - a <= tol:
            continue
        r = minimize_scalar(lambda x: _exact_flow_area(profile, x), bounds=(a, b), method="bounded",
                            options={"xatol": tol})
        if r.fun < best[1]:
            best = (float(r.x), float(r.fun))
    return best
