"""Bore templates: case parameters (SI) to a validated Profile.

Every template puts the inlet plane at x = 0. Segment keys are the case keys an engineer edits,
so an error says which number to change.
"""

from __future__ import annotations

import csv
import math
import re
from pathlib import Path

import numpy as np

from ..textin import InputError, read_input_text
from .polyline import min_distance
from .profile import GEOMETRY_TOL, Profile, ProfileError, Segment, _chain_points
from .validate import validate, validate_free_jet

# Contraction curve of the "contoured" template: the fifth-order polynomial
#   r(xi) = R_in - (R_in - R_ex) (10 xi^3 - 15 xi^4 + 6 xi^5),  xi = (x - x0) / L,
# zero slope and zero curvature at both ends (Bell & Mehta 1988, "Contraction design for small
# low-speed wind tunnels", NASA CR-177488).
CONTOUR_POINTS = 33


def contour_polynomial(xi: np.ndarray) -> np.ndarray:
    xi = np.asarray(xi, float)
    return 10 * xi**3 - 15 * xi**4 + 6 * xi**5


def fillet_chain(vertices, radii, keys, radius_keys) -> list[Segment]:
    """Straight pieces through ``vertices`` with a tangent arc of radius ``radii[k]`` at interior vertex k+1.

    keys[k] names straight piece k, radius_keys[k] names the fillet at interior vertex k+1.
    """
    v, radii, keys, radius_keys = _without_empty_pieces(vertices, radii, keys, radius_keys)
    n = len(v)
    cut_in = [0.0] * n  # distance taken off the piece arriving at vertex k
    arcs: dict[int, tuple[np.ndarray, np.ndarray, float]] = {}
    for k in range(1, n - 1):
        rho = radii[k - 1]
        if rho <= 0:
            continue
        t0 = (v[k] - v[k - 1]) / np.linalg.norm(v[k] - v[k - 1])
        t1 = (v[k + 1] - v[k]) / np.linalg.norm(v[k + 1] - v[k])
        cross = t0[0] * t1[1] - t0[1] * t1[0]
        phi = math.atan2(abs(cross), float(t0 @ t1))
        if phi < 1e-9:
            continue
        d = rho * math.tan(phi / 2)
        cut_in[k] = d
        arcs[k] = (v[k] - d * t0, v[k] + d * t1, -math.copysign(rho, cross))
    segs: list[Segment] = []
    for k in range(n - 1):
        a, b = v[k], v[k + 1]
        L = float(np.linalg.norm(b - a))
        t = (b - a) / L
        d0 = cut_in[k] if k in arcs else 0.0
        d1 = cut_in[k + 1] if (k + 1) in arcs else 0.0
        if d0 + d1 > L * (1 - 1e-9):
            which = radius_keys[k] if d1 > 0 else radius_keys[k - 1]  # the rounding at vertex k+1, else at k
            raise ProfileError(which, f"the rounding needs {d0 + d1:.6g} m of straight wall but {keys[k]} gives only {L:.6g} m")
        if k in arcs:
            s0, e0, R = arcs[k]
            segs.append(Segment(tuple(s0), tuple(e0), "arc", R, key=radius_keys[k - 1]))
        segs.append(Segment(tuple(a + d0 * t), tuple(b - d1 * t), key=keys[k]))
    return segs


def _without_empty_pieces(vertices, radii, keys, radius_keys):
    """The vertices with those that repeat the one before dropped (a length given as 0: the piece is not
    there), with the keys of the pieces and the radii of the interior vertices that remain."""
    v = [np.asarray(p, float) for p in vertices]
    scale = max(float(np.max(np.abs(np.array(v)))), 1e-300)
    kept = [0]
    for i in range(1, len(v)):
        if float(np.linalg.norm(v[i] - v[kept[-1]])) > 1e-12 * scale:
            kept.append(i)
    if len(kept) == len(v):
        return v, list(radii), list(keys), list(radius_keys)
    # the piece ending at kept vertex b is named by the last piece given before it; an interior vertex keeps its radius
    return ([v[i] for i in kept], [radii[i - 1] for i in kept[1:-1]], [keys[b - 1] for b in kept[1:]],
            [radius_keys[i - 1] for i in kept[1:-1]])


MAX_CONE_ASPECT = 1000.0  # a cone longer than this many diameters is a typo in the angle


def _straight_cone(r_in: float, r_out: float, half_angle: float) -> float:
    length = abs(r_in - r_out) / math.tan(half_angle)
    if length > MAX_CONE_ASPECT * 2 * max(r_in, r_out):
        raise ProfileError("bore.half_angle", f"{math.degrees(half_angle):.4g} deg makes the cone {length:.4g} m long, more than "
                           f"{MAX_CONE_ASPECT:g} diameters: expected a larger half angle")
    return length


def _cone_and_tip(v, tip_length: float, lip_radius: float) -> list[Segment]:
    """Inlet pipe, cone and straight tip through the vertices ``v`` (conical and spear templates),
    the cone-to-tip corner rounded by ``lip_radius``; tip_length 0: the cone ends at the exit."""
    if tip_length == 0.0:
        if lip_radius > 0:
            raise ProfileError("bore.lip_radius", "a lip rounding needs a straight tip after the cone: give tip_length > 0 "
                               "or lip_radius = 0")
        return fillet_chain(v[:3], [0.0], ["bore.inlet_length", "bore.half_angle"], ["bore.inlet_length"])
    return fillet_chain(v, [0.0, lip_radius], ["bore.inlet_length", "bore.half_angle", "bore.tip_length"],
                        ["bore.inlet_length", "bore.lip_radius"])


def _chain_from_spec(start, segments, prefix: str) -> list[Segment]:
    out = []
    p = (float(start[0]), float(start[1]))
    for i, s in enumerate(segments, 1):
        q = (float(s.to[0]), float(s.to[1]))
        key = f"{prefix}.segment[{i}]"
        if s.radius is None or s.radius == 0:
            out.append(Segment(p, q, key=key))
        else:
            out.append(Segment(p, q, "arc", float(s.radius), key=key))
        p = q
    return out


def _orient_centerbody(chain: list[Segment], x_in: float, x_out: float, tol: float) -> tuple[Segment, ...]:
    def order(pt):
        x, r = pt
        if abs(x - x_in) <= tol and r > tol:
            return -math.inf
        if abs(x - x_out) <= tol and r > tol:
            return math.inf
        return x

    if order(chain[0].start) > order(chain[-1].end):
        chain = [s.reversed() for s in reversed(chain)]
    return tuple(chain)


def _clip_x(chain: list[Segment], x_lo: float, x_hi: float) -> list[Segment]:
    """Clip a chain of straight pieces to x_lo <= x <= x_hi (for a needle crossing a plane)."""
    out = []
    for s in chain:
        (x0, r0), (x1, r1) = s.start, s.end
        if max(x0, x1) <= x_lo or min(x0, x1) >= x_hi:
            continue

        def at(x):
            return (x, r0 + (r1 - r0) * (x - x0) / (x1 - x0))

        a = s.start if x_lo <= x0 <= x_hi else at(x_lo if x0 < x_lo else x_hi)
        b = s.end if x_lo <= x1 <= x_hi else at(x_hi if x1 > x_hi else x_lo)
        out.append(Segment(a, b, key=s.key))
    return out


def smooth_resample(pts: np.ndarray, minimum: int = 64) -> np.ndarray:
    """Points of a smooth curve through ``pts``, evenly spaced in arc length.

    Shape-preserving cubic interpolation (PCHIP) of x and r against chord length does not
    overshoot, so a wall whose points run forward in x stays forward; even spacing keeps the
    Catmull-Rom spline that Gmsh draws through the result free of loops.
    """
    from scipy.interpolate import PchipInterpolator

    t = np.r_[0.0, np.cumsum(np.linalg.norm(np.diff(pts, axis=0), axis=1))]
    fx, fr = PchipInterpolator(t, pts[:, 0]), PchipInterpolator(t, pts[:, 1])
    dense_t = np.linspace(0.0, t[-1], 40 * len(pts))
    dense = np.column_stack([fx(dense_t), fr(dense_t)])
    s = np.r_[0.0, np.cumsum(np.linalg.norm(np.diff(dense, axis=0), axis=1))]
    n = max(minimum, 4 * len(pts))
    tt = np.interp(np.linspace(0.0, s[-1], n), s, dense_t)
    out = np.column_stack([fx(tt), fr(tt)])
    out[0], out[-1] = pts[0], pts[-1]
    return out


CSV_UNITS = {"m": 1.0, "mm": 1e-3, "cm": 1e-2, "in": 0.0254}
_COLUMN = re.compile(r"^(x|r)\s*(?:[_\s]|\[|\()?\s*(m|mm|cm|in)?\s*[\])]?$")


MAX_POINTS = 20_000  # a profile CSV of more points is a scan, not a bore: resample it first
MAX_CSV_BYTES = 5_000_000


def _read_points(path: Path, key: str, unit: str | None = None) -> np.ndarray:
    """x, r points of a CSV profile in metres: columns named x and r, with a unit in the header
    ("x_mm", "x [mm]", "x (mm)") or in the case (bore.unit), else metres."""
    try:
        text = read_input_text(path, "profile file", MAX_CSV_BYTES)
    except InputError as exc:
        raise ProfileError(key, f"{str(path)!r}: {exc}") from None
    rows = list(csv.reader(text.splitlines()))
    rows = [(n, r) for n, r in enumerate(rows, 1) if r and not r[0].lstrip().startswith("#")]
    if not rows:
        raise ProfileError(key, f"{path.name}: the file is empty")
    n0, header = rows[0]
    found = {}
    for k, h in enumerate(header):
        m = _COLUMN.match(h.strip().lower())
        if m:
            found[m.group(1)] = (k, m.group(2))
    if "x" not in found or "r" not in found:
        raise ProfileError(key, f"{path.name} line {n0}: expected a header naming columns x and r (e.g. x,r or x_mm,r_mm), got {header}")
    (ix, ux), (ir, ur) = found["x"], found["r"]
    if ux != ur:
        raise ProfileError(key, f"{path.name} line {n0}: columns x and r must be in the same unit, got {header}")
    if ux is not None and unit is not None and ux != unit:
        raise ProfileError("bore.unit", f'the case says "{unit}" but the header of {path.name} says "{ux}"')
    factor = CSV_UNITS[ux or unit or "m"]
    if len(rows) - 1 > MAX_POINTS:
        raise ProfileError(key, f"{path.name}: {len(rows) - 1:,} points, more than the {MAX_POINTS:,} a profile may have "
                           "(resample the curve; smooth = true draws a spline through fewer points)")
    pts = []
    for n, row in rows[1:]:
        try:
            pts.append((float(row[ix]), float(row[ir])))
        except (ValueError, IndexError):
            raise ProfileError(key, f"{path.name} line {n}: expected numbers in columns x and r, got {row}") from None
    if len(pts) < 2:
        raise ProfileError(key, f"{path.name}: needs at least two points")
    pts = np.array(pts) * factor
    bad = ~np.isfinite(pts).all(axis=1)
    if bad.any():
        raise ProfileError(key, f"{path.name} line {rows[1 + int(np.flatnonzero(bad)[0])][0]}: expected finite numbers, got NaN or inf")
    return pts


def build_profile(bore, base_dir: Path | None = None, free_jet: bool = False) -> Profile:
    """The validated meridional profile of a bore section (``base_dir``: where a points file is looked for).

    ``free_jet``: the wall ends at a lip from which a free jet leaves (a centre body may reach past it)."""
    b = bore
    t = b.template
    cb_chain: list[Segment] = []
    notes: list[str] = []
    if t == "conical":
        ri, re = b.inlet_diameter / 2, b.exit_diameter / 2
        if not re < ri:
            raise ProfileError("bore.exit_diameter", f"expected less than inlet_diameter ({b.inlet_diameter:.6g} m) for a nozzle, got {b.exit_diameter:.6g} m")
        lc = _straight_cone(ri, re, b.half_angle) if b.length is None else b.length
        v = [(0, ri), (b.inlet_length, ri), (b.inlet_length + lc, re), (b.inlet_length + lc + b.tip_length, re)]
        wall = _cone_and_tip(v, b.tip_length, b.lip_radius)
    elif t == "reducer":
        r1, r2 = b.inlet_diameter / 2, b.outlet_diameter / 2
        if abs(r1 - r2) <= 1e-9 * r1:
            raise ProfileError("bore.outlet_diameter", "expected a diameter different from inlet_diameter")
        lc = _straight_cone(r1, r2, b.half_angle)
        v = [(0, r1), (b.inlet_length, r1), (b.inlet_length + lc, r2), (b.inlet_length + lc + b.outlet_length, r2)]
        k = b.knuckle_radius
        radii = [0.0, k] if r2 < r1 else [k, 0.0]  # round the convex knuckle only
        wall = fillet_chain(v, radii, ["bore.inlet_length", "bore.half_angle", "bore.outlet_length"],
                            ["bore.knuckle_radius", "bore.knuckle_radius"])
    elif t == "contoured":
        ri, re = b.inlet_diameter / 2, b.exit_diameter / 2
        if not re < ri:
            raise ProfileError("bore.exit_diameter", f"expected less than inlet_diameter ({b.inlet_diameter:.6g} m), got {b.exit_diameter:.6g} m")
        x0, L = b.inlet_length, b.contraction_length
        xi = np.linspace(0, 1, CONTOUR_POINTS)
        pts = np.column_stack([x0 + L * xi, ri - (ri - re) * contour_polynomial(xi)])
        wall = [
            Segment((0.0, ri), (x0, ri), key="bore.inlet_length"),
            Segment(tuple(pts[0]), tuple(pts[-1]), "spline", via=tuple(map(tuple, pts[1:-1])), key="bore.contraction_length"),
            Segment((x0 + L, re), (x0 + L + b.tip_length, re), key="bore.tip_length"),
        ]
        wall = [w for w in wall if w.chord > 0.0]  # an inlet or tip length of 0: no such piece
        notes.append("contraction: fifth-order polynomial (Bell & Mehta 1988)")
    elif t == "spear":
        ri, ro, rn = b.inlet_diameter / 2, b.orifice_diameter / 2, b.needle_diameter / 2
        if not ro < ri:
            raise ProfileError("bore.orifice_diameter", f"expected less than inlet_diameter ({b.inlet_diameter:.6g} m), got {b.orifice_diameter:.6g} m")
        if not rn < ri:
            raise ProfileError("bore.needle_diameter", f"expected less than inlet_diameter ({b.inlet_diameter:.6g} m), got {b.needle_diameter:.6g} m")
        lc = _straight_cone(ri, ro, b.half_angle)
        xo = b.inlet_length + lc
        x_out = xo + b.tip_length
        v = [(0, ri), (b.inlet_length, ri), (xo, ro), (x_out, ro)]
        wall = _cone_and_tip(v, b.tip_length, b.lip_radius)
        tn = math.tan(b.needle_half_angle)
        x_tip = xo + ro / tn - b.stroke  # at stroke 0 the needle cone seats on the orifice edge
        if x_tip <= 0:
            raise ProfileError("bore.stroke", f"the needle tip would be upstream of the inlet plane (stroke {b.stroke:.6g} m is too large)")
        x_base = x_tip - rn / tn
        needle = [Segment((min(x_base, 0.0) - 1.0, rn), (x_base, rn), key="bore.needle_diameter"),
                  Segment((x_base, rn), (x_tip, 0.0), key="bore.needle_half_angle")]
        if x_base <= 0:
            needle = needle[1:]
        cb_chain = _clip_x(needle, 0.0, math.inf if free_jet else x_out)
        gap = _gap(wall, cb_chain)
        if gap <= 1e-6 * ri:
            raise ProfileError("bore.stroke", "the needle touches the nozzle: the stroke must open a gap (at stroke 0 the needle seats on the orifice edge)")
        notes.append(f"needle tip at x = {x_tip:.6g} m; narrowest gap {gap:.6g} m")
    elif t == "segments":
        wall = _chain_from_spec(b.start, b.segment, "bore")
    elif t == "points":
        path = Path(b.file) if Path(b.file).is_absolute() else Path(base_dir or Path.cwd()) / b.file
        pts = _read_points(path, "bore.file", b.unit)
        if b.smooth and len(pts) > 2:
            even = smooth_resample(pts)
            wall = [Segment(tuple(even[0]), tuple(even[-1]), "spline", via=tuple(map(tuple, even[1:-1])), key="bore.file")]
        else:
            wall = [Segment(tuple(p), tuple(q), key=f"bore.file row {i}") for i, (p, q) in enumerate(zip(pts[:-1], pts[1:]), 1)]
    else:  # pragma: no cover - the schema admits only the templates above
        raise ProfileError("bore.template", f"unknown template {t!r}")

    spec = getattr(b, "centerbody", None)
    if spec is not None:
        cb_chain = _chain_from_spec(spec.start, spec.segment, "bore.centerbody")
    x_in, x_out = wall[0].start[0], wall[-1].end[0]
    scale = max(abs(x_out - x_in), max(max(s.start[1], s.end[1]) for s in wall))
    if cb_chain:
        cb_chain = _orient_centerbody(cb_chain, x_in, x_out, GEOMETRY_TOL * scale)
    planar = getattr(b, "symmetry", "axisymmetric") == "planar"
    profile = Profile(tuple(wall), tuple(cb_chain), name=t, notes=tuple(notes), planar=planar)
    if free_jet:
        return validate_free_jet(profile)
    return validate(profile)


def _gap(wall, body) -> float:
    return min_distance(_chain_points(wall), _chain_points(body))
