"""The geometry of a free jet past the lip where a wall ends: its polyline, the first trial shape
the free-jet solve starts from, and the profile with a jet chain.

A jet is a polyline from the lip of ``n`` elements of fixed lengths ``ds`` and directions
``theta`` (the unknowns of the free-jet solve), followed by a parallel tail element that ends on
the outlet plane x = ``x_out`` (a fixed plane: only the tail's length follows the jet). Element
lengths grow geometrically from the lip, where the free streamline's curvature grows like
s^-1/2, to a fraction of the target cell size downstream.

The first trial shape is the planar free streamline of Kirchhoff's theory for a jet leaving a lip
whose wall meets the jet axis at the angle a: from the hodograph of the flow (derived in
``kirchhoff_angle``), theta(l) = -(a/pi) arccos(1 - 2 exp(-pi l / w)) at arc length l from the
lip, w the far half width, and the contraction coefficient pi / (pi + I(a)), I(a) = integral over
(0, pi) of sin(a u / pi) cot(u / 2) du (1/2 for a = pi, Borda; pi / (pi + 2) for a = pi/2,
Kirchhoff's slot). In axisymmetric flow and in nozzles it is a first trial only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from .profile import Profile, Segment

JET_TAIL = 6.0  # length of the jet downstream of the lip (and of any centre body), in lip radii
LIP_SIZE = 0.02  # jet element length at the lip, in target cell sizes ...
GROWTH = 1.3  # ... growing by this factor an element (the mesh is graded alike: mesh.loop.LIP_FACTOR)
FAR_SPACING = 1.5  # ... up to this many target cell sizes
LIP_REACH = 3.3  # the mesh grades from LIP_SIZE h at the lip to h at this many h from it
# the elements within this many h of the lip follow the free streamline's l^1/2 law: the first one only.
# Tied over 1 h the law's O(l) error moved Kirchhoff's slot by -5e-4 at level 0 (0.61048 against
# 0.61105, measured 2026-12-04), more than the discrete lip condition it replaces
TIE_REACH = LIP_SIZE
RESERVOIR = 4.0  # a bore wider than this many lip radii is a reservoir upstream of an opening


def is_reservoir(profile: Profile) -> bool:
    """The bore upstream of the lip is a reservoir (wider than RESERVOIR lip radii): an orifice in a
    wall or a re-entrant tube rather than a nozzle."""
    return float(profile.wall_points[:, 1].max()) >= RESERVOIR * profile.wall[-1].end[1]


def lip_angle(profile: Profile) -> float:
    """Direction of the wall where it ends (radians from +x, counter-clockwise), in (-3 pi/2, pi/2]:
    a wall arriving backwards (a re-entrant tube) is -pi, so that the jet turns towards +x by
    increasing the angle."""
    t = profile.wall[-1].tangent_at("end")
    a = math.atan2(t[1], t[0])
    return a - 2 * math.pi if a > math.pi / 2 + 1e-12 else a


@lru_cache(maxsize=256)
def kirchhoff_contraction(a: float) -> float:
    """Contraction coefficient of a planar jet from an infinite vessel whose walls meet the jet
    axis at the angle ``a`` (radians; pi/2 a slot in a wall, pi a re-entrant Borda tube).

    Derivation (the hodograph of the half flow above the symmetry line): the complex velocity
    (dw/dz)/V fills the circular sector 0 < arg < a of the unit disc (wall: arg = a, speed 0 to
    V; free streamline: speed V; symmetry line: arg 0). tau = ((dw/dz)/V)^(pi/a) maps it to the
    upper half disc, s = -(tau + 1/tau)/2 to the upper half plane, where w = -(Q/pi) log(s + 1) +
    iQ (the strip 0 < psi < Q). On the free streamline s = -cos u, u in (0, pi), with
    dz = -(Q / (pi V)) exp(-i a u / pi) ds / (1 + s); the lip stands above the far jet by
    (Q / (pi V)) I(a), I(a) = integral_0^pi sin(a u / pi) cot(u / 2) du, so Cc = (Q/V) / b =
    pi / (pi + I(a)). I(pi) = pi gives 1/2 (Borda), I(pi/2) = 2 gives pi / (pi + 2) (Kirchhoff).
    """
    from scipy.integrate import quad

    integral, _ = quad(lambda u: math.sin(a * u / math.pi) / math.tan(0.5 * u) if u > 0 else a / math.pi * 2.0,
                       0.0, math.pi, limit=200)
    return math.pi / (math.pi + integral)


def kirchhoff_angle(a: float, w: float, l: np.ndarray) -> np.ndarray:
    """Direction of the Kirchhoff free streamline at arc length ``l`` from a lip whose wall meets
    the axis at ``a`` (the wall direction is -a), far half width ``w`` (same derivation: along the
    free streamline s = 2 exp(-pi l / w) - 1 and theta = -(a / pi) arccos(-s))."""
    return -(a / math.pi) * np.arccos(np.clip(1.0 - 2.0 * np.exp(-math.pi * np.asarray(l) / w), -1.0, 1.0))


def estimated_contraction(angle: float) -> float:
    """Contraction coefficient of the planar Kirchhoff jet for a lip whose wall has the direction
    ``angle`` (``lip_angle``): a first trial, and the size of the exit-plane warning, never a result."""
    a = min(max(-angle, 0.0), math.pi)
    return kirchhoff_contraction(a) if a > 1e-9 else 1.0


def spacing(h: float, length: float) -> np.ndarray:
    """Element lengths from the lip: LIP_SIZE h growing by GROWTH to FAR_SPACING h, reaching ``length``."""
    if not (h > 0.0 and length / h < 1e7):  # a zero or absurd cell size would never reach the length
        raise ValueError(f"jet spacing: cell size {h!r} for a length {length!r}")
    out, d, total = [], LIP_SIZE * h, 0.0
    while total < length:
        out.append(d)
        total += d
        d = min(d * GROWTH, FAR_SPACING * h)
    return np.array(out)


def integrate(lip, theta: np.ndarray, ds: np.ndarray) -> np.ndarray:
    pts = np.empty((theta.size + 1, 2))
    pts[0] = lip
    pts[1:, 0] = lip[0] + np.cumsum(ds * np.cos(theta))
    pts[1:, 1] = lip[1] + np.cumsum(ds * np.sin(theta))
    return pts


def exit_area(profile: Profile) -> float:
    x_lip, r_lip = profile.wall[-1].end
    r_body = float(profile.centerbody_radius(np.array([x_lip]))[0]) if profile.centerbody else 0.0
    return (r_lip - r_body) if profile.planar else math.pi * (r_lip**2 - r_body**2)


def far_area(profile: Profile, r_end: float) -> float:
    return r_end if profile.planar else math.pi * r_end**2


@dataclass(frozen=True, eq=False)
class JetShape:
    """A jet polyline: ``n`` elements of lengths ``ds`` from the lip, then a parallel tail to
    x = ``x_out``. ``points(theta)`` has n + 2 points (lip, element ends, tail end)."""

    lip: tuple[float, float]
    lip_direction: float  # the wall's direction at the lip (``lip_angle``)
    ds: np.ndarray
    x_out: float
    tied: int = 1  # the first ``tied`` elements follow the l^1/2 law from the lip (``lip_ties``)

    @property
    def n(self) -> int:
        return int(self.ds.size)

    def points(self, theta: np.ndarray) -> np.ndarray:
        p = integrate(self.lip, theta, self.ds)
        return np.vstack([p, [self.x_out, p[-1, 1]]])

    def sensitivities(self, theta: np.ndarray) -> np.ndarray:
        """(n, n + 2, 2): d points / d theta_i (the tail end moves with the last node in r only)."""
        n = self.n
        d = np.zeros((n, n + 2, 2))
        step = self.ds[:, None] * np.column_stack([-np.sin(theta), np.cos(theta)])
        upper = np.triu(np.ones((n, n + 1)), k=1).astype(bool)  # node j > i moves with element i
        d[:, :n + 1, :] = np.where(upper[..., None], step[:, None, :], 0.0)
        d[:, n + 1, 1] = step[:, 1]
        return d

    def lip_ties(self) -> np.ndarray:
        """c_i in theta_i = lip + c_i (theta_m - lip) for the first m = ``tied`` elements: the
        element averages of theta = lip + k l^1/2 (the free streamline leaves a sharp lip tangentially,
        its curvature growing like l^-1/2; Kirchhoff's solution near the lip, ``kirchhoff_angle``,
        theta = -a + (2a/pi) (pi l / w)^1/2 + O(l)), relative to the element m after them. The
        region shrinks with the cell size, so the law's O(l) error vanishes under refinement."""
        m = self.tied
        e = np.r_[0.0, np.cumsum(self.ds[: m + 1])]
        mean_sqrt = (2.0 / 3.0) * (e[1:] ** 1.5 - e[:-1] ** 1.5) / self.ds[: m + 1]
        return mean_sqrt[:m] / mean_sqrt[m]


def trial_jet(profile: Profile, h: float) -> tuple[JetShape, np.ndarray]:
    """The jet's element layout and its first trial directions for target cell size ``h``: the
    planar Kirchhoff free streamline for the lip's wall angle, its far width set so that the jet
    reaches the estimated contraction; ending JET_TAIL lip radii past the lip and any centre body."""
    from scipy.optimize import brentq

    lip = np.array(profile.wall[-1].end, float)
    r_lip = float(lip[1])
    direction = lip_angle(profile)
    a = -direction
    x_far = max(lip[0], float(profile.centerbody_points[:, 0].max()) if profile.centerbody else lip[0]) + JET_TAIL * r_lip
    # enough arc length to reach x_far even after a turn through 180 degrees
    ds = spacing(h, (x_far - lip[0]) + 3.0 * r_lip * abs(a) / math.pi + 2 * r_lip)
    l_mid = np.cumsum(ds) - 0.5 * ds
    area = estimated_contraction(direction) * exit_area(profile)
    r_target = area if profile.planar else math.sqrt(area / math.pi)
    theta = np.full(ds.size, 0.0)
    if abs(a) > 1e-9 and r_target < r_lip:
        def miss(log_w):
            return r_lip + float(np.sum(ds * np.sin(kirchhoff_angle(a, math.exp(log_w), l_mid)))) - r_target

        lo, hi = math.log(1e-3 * r_lip), math.log(10 * r_lip)
        if miss(lo) * miss(hi) < 0:
            theta = kirchhoff_angle(a, math.exp(brentq(miss, lo, hi, xtol=1e-10)), l_mid)
    pts = integrate(lip, theta, ds)
    # the elements that end a full element short of x_far; the tail reaches the outlet plane x_far
    keep = int(np.searchsorted(np.maximum.accumulate(pts[1:, 0]), x_far - ds.max()))
    keep = min(max(keep, 3), ds.size)
    theta, ds = theta[:keep], ds[:keep]
    x_out = max(x_far, float(integrate(lip, theta, ds)[-1, 0] + ds[-1]))
    tied = int(np.clip(np.searchsorted(np.cumsum(ds), TIE_REACH * h, side="right"), 1, ds.size - 3))
    shape = JetShape((float(lip[0]), r_lip), direction, ds, x_out, tied)
    theta = theta.copy()
    theta[:tied] = direction + shape.lip_ties() * (theta[tied] - direction)
    return shape, theta


def with_jet(profile: Profile, points: np.ndarray) -> Profile:
    """The profile with a jet chain of straight elements through ``points`` (the first is the lip)."""
    segs = tuple(Segment(tuple(map(float, a)), tuple(map(float, b)), key="jet") for a, b in zip(points[:-1], points[1:]))
    return replace(profile, jet=segs)


def first_trial(profile: Profile, h: float) -> Profile:
    """The profile with its first trial jet for target cell size ``h``: what the free-jet solve
    meshes (once), what ``validate_free_jet`` checks and what ``axibore mesh`` shows."""
    shape, theta = trial_jet(profile, h)
    return with_jet(profile, shape.points(theta))


def jet_problem(profile: Profile, points: np.ndarray) -> str | None:
    """Why a trial jet cannot be meshed (crosses the axis, the wall or itself), or None."""
    from shapely.geometry import LineString

    if points[:, 1].min() <= 0.0:
        return "the jet boundary reaches the axis"
    jet = LineString(points)
    if not jet.is_simple:
        return "the jet boundary crosses itself"
    # the jet meets the wall at the lip only
    inter = jet.intersection(LineString(profile.wall_points))
    if not inter.is_empty and (inter.geom_type != "Point" or
                               math.hypot(inter.x - points[0, 0], inter.y - points[0, 1]) > profile.tol):
        return "the jet boundary runs into the wall"
    if profile.centerbody:
        body = LineString(profile.centerbody_points)
        if jet.intersects(body):
            return "the jet boundary runs into the centre body"
    return None
