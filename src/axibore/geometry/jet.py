"""The first trial boundary of a free jet past the lip where a wall ends (the shape the free-jet
iteration in ``solvers.freejet`` starts from and moves), and the profile with a jet chain."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from .profile import Profile, Segment

JET_TAIL = 6.0  # length of the jet downstream of the lip (and of any centre body), in lip radii
LIP_SPACING = 0.25  # jet element length at the lip, in target cell sizes (grows to FAR_SPACING downstream)
FAR_SPACING = 0.7
GROWTH = 1.08
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


# Contraction coefficient of a planar jet between straight walls at angle a to the axis, from an
# infinite reservoir (von Mises 1917, as tabulated in hydraulics texts; from memory). Used only
# for the first trial jet and for the size of the exit-plane warning, never as a result.
_VON_MISES_DEG = np.array([0.0, 45.0, 90.0, 135.0, 180.0])
_VON_MISES_CC = np.array([1.0, 0.746, 0.611, 0.537, 0.500])


def estimated_contraction(angle: float) -> float:
    """Rough contraction coefficient for a lip whose wall meets the jet at ``angle`` (radians below
    the axis direction; pi for a re-entrant tube)."""
    return float(np.interp(math.degrees(min(max(-angle, 0.0), math.pi)), _VON_MISES_DEG, _VON_MISES_CC))


def spacing(h: float, length: float) -> np.ndarray:
    """Element lengths from the lip: LIP_SPACING h growing by GROWTH to FAR_SPACING h."""
    out, d, total = [], LIP_SPACING * h, 0.0
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


def initial_jet(profile: Profile, h: float) -> tuple[np.ndarray, np.ndarray]:
    """First trial jet: angles theta(s) = theta_lip exp(-s / l), with l chosen so that the far
    radius gives the estimated contraction; element lengths graded from the lip."""
    from scipy.optimize import brentq

    lip = np.array(profile.wall[-1].end, float)
    a = lip_angle(profile)
    r_lip = lip[1]
    x_far = max(lip[0], float(profile.centerbody_points[:, 0].max()) if profile.centerbody else lip[0]) + JET_TAIL * r_lip
    cc = estimated_contraction(a)
    area = cc * exit_area(profile)
    r_target = area if profile.planar else math.sqrt(area / math.pi)
    # enough arc length to reach x_far even after a turn through 180 degrees
    ds = spacing(h, (x_far - lip[0]) + 3.0 * r_lip * abs(a) / math.pi + 2 * r_lip)
    s = np.cumsum(ds) - 0.5 * ds
    if abs(a) < 1e-9 or r_target >= r_lip:
        theta = np.zeros_like(s)
    else:
        def miss(log_l):
            th = a * np.exp(-s / math.exp(log_l))
            return lip[1] + float(np.sum(ds * np.sin(th))) - r_target

        lo, hi = math.log(1e-3 * r_lip), math.log(10 * r_lip)
        if miss(lo) * miss(hi) < 0:
            theta = a * np.exp(-s / math.exp(brentq(miss, lo, hi, xtol=1e-6)))
        else:
            theta = a * np.exp(-s / r_lip)
    pts = integrate(lip, theta, ds)
    keep = int(np.searchsorted(np.maximum.accumulate(pts[:, 0]), x_far)) + 1
    return theta[:keep], ds[:keep]


def with_jet(profile: Profile, points: np.ndarray) -> Profile:
    """The profile with a jet chain of straight elements through ``points`` (the first is the lip)."""
    segs = tuple(Segment(tuple(map(float, a)), tuple(map(float, b)), key="jet") for a, b in zip(points[:-1], points[1:]))
    return replace(profile, jet=segs)


def first_trial(profile: Profile, h: float) -> Profile:
    """The profile with its first trial jet (element lengths graded from ``h``): what the free-jet
    iteration meshes first, what ``validate_free_jet`` checks and what ``axibore mesh`` shows."""
    theta, ds = initial_jet(profile, h)
    return with_jet(profile, integrate(profile.wall[-1].end, theta, ds))


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


