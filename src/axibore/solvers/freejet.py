"""Free jets past a sharp lip: the jet boundary found by a trial free-boundary iteration.

Where a bore discharges to the surroundings over a lip, the jet keeps contracting downstream of
the exit plane. Its boundary is a free streamline: a streamline from the lip on which the pressure
is the ambient one, so (Bernoulli) the speed on it is the jet speed V everywhere. The problem
contains no length scale but the geometry, so the jet shape is found for V = 1 and the operating
point only scales the flow.

The iteration (a trial free-boundary method: a trial boundary carrying one of the two free-surface
conditions, moved until the other holds; Jeppson, 1970, J. Fluid Mech. 40, solved the orifice by
an inverse formulation instead):

1. Trial jet: a polyline from the lip (the last wall point) of elements of fixed length ds_k and
   direction theta_k; it leaves the lip tangent to the wall, with the first element following the
   square-root law of a free streamline at a sharp edge, and ends parallel; the outlet plane is
   placed at its end. Remeshed (Gmsh, triangles) at one target size for every trial.
2. On it the free-streamline speed is imposed as a potential, phi = s (arc length, V = 1), and
   phi = s_end on the outlet plane (a parallel jet); the inflow is uniform with the speed U that
   lets no net flow cross the trial jet (two solves with one matrix: phi = phi_0 + U phi_1).
3. The flow crosses each element at the angle atan(u_n / u_t). The turning angles are smoothed
   (a Gaussian over SMOOTHING_WIDTH lip radii: the shortest waves of a trial boundary overreact) and
   added to theta; the boundary is integrated again from the lip, so it follows the flow.
4. Where the bore upstream is a reservoir (RESERVOIR lip radii wide), the far-jet radius is set
   from the axial momentum balance of the flow with the trial jet as a streamline, A_jet = (M_in -
   F_walls) / V^2, by a smooth change of the angles (the crossing angles barely sense the width).
5. Once two successive updates are parallel, the slow mode they share is extrapolated (Aitken);
   so is a steady creep of the far radius (a geometric fit of its last changes).
6. Settled when no point moves by more than MOVE_TOL lip radii, the mean contraction coefficient
   of the last SETTLE_WINDOW iterations has stopped drifting (CC_TOL) and the creep still to come
   is below CREEP_TOL lip radii (in a nozzle, whose width no momentum balance fixes, the far radius
   creeps slowly and the answer keeps an iteration error of about 0.5 %); the settled
   jet is the mean of those last iterations (each remesh moves the discrete answer by about 2e-3).
   Then the potential is solved once more with the settled jet as a streamline and the outlet
   plane at the ambient pressure: the reported flow. The remaining speed mismatch on the jet,
   |q / V - 1| with V from Bernoulli, says how well the free-streamline condition holds (it is
   largest next to a sharp lip, where the flow is singular).

A reservoir upstream (an inlet plane far from the opening) needs nothing special: orifices in a
wall and re-entrant tubes are outlines (``points`` or ``segments``) that end at the lip.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from ..geometry import Profile
from ..geometry.jet import exit_area, far_area, initial_jet, integrate, is_reservoir, jet_problem, lip_angle, with_jet
from ..mesh.gmsh_build import target_size
from ..names import Boundary
from .base import FlowError, FlowResult

MAX_OUTER = 40  # outer iterations before the jet is reported as not settled
MOVE_TOL = 5e-3  # settled: no jet point moves by more than this fraction of the lip radius ...
SETTLE_WINDOW = 4
CREEP_TOL = 2e-4  # ... the far radius still to come from its creep is below this many lip radii ...
CC_TOL = 1e-3  # ... and the mean contraction coefficient of the last 4 iterations differs from that of the 4 before
#                by less than this (relative): a drift test, since each remesh moves the answer by about 2e-3
RELAXATION = 1.5  # fraction of the crossing angle applied per iteration
EXTRAPOLATE_COS = 0.98  # slow-mode extrapolation: two updates this parallel ...
EXTRAPOLATE_MAX = 30.0  # ... extrapolated by at most this many updates


class JetNotSettled(FlowError):
    """The free-jet iteration did not settle."""


@dataclass(frozen=True)
class JetIteration:
    iteration: int
    cells: int
    crossing_angle: float  # largest |atan(u_n / u_t)| on the trial boundary [rad]
    movement: float  # largest point movement of this update, in lip radii
    jet_radius: float  # far-jet radius (planar: half width) [m]
    seconds: float


@dataclass(frozen=True, eq=False)
class JetSolution:
    """What the free-jet iteration found, beside the flow."""

    points: np.ndarray  # (n, 2) jet boundary from the lip to the outlet plane
    history: tuple[JetIteration, ...]
    settled: bool
    lip: tuple[float, float]
    exit_area: float  # flow area at the lip plane (axisymmetric: m2; planar: m per unit depth)
    jet_area: float  # far-jet area (same measure)
    speed_mismatch: float = math.nan  # largest |q/V - 1| on the jet boundary (final solve)
    speed_mismatch_rms: float = math.nan
    h: float = 0.0
    mesh_seconds: tuple[float, ...] = ()

    @property
    def contraction_coefficient(self) -> float:
        return self.jet_area / self.exit_area

    @property
    def jet_radius(self) -> float:
        return float(self.points[-1, 1])

    def vena_contracta_x(self, fraction: float = 0.01) -> float:
        """First x downstream of which the jet radius stays within ``fraction`` of its total
        contraction from the far value."""
        r, x = self.points[:, 1], self.points[:, 0]
        r_far = r[-1]
        span = abs(self.lip[1] - r_far)
        if span <= 0:
            return float(x[0])
        outside = np.abs(r - r_far) > fraction * span
        k = int(np.flatnonzero(outside)[-1]) + 1 if outside.any() else 0
        return float(x[min(k, len(x) - 1)])


def _jet_faces(mesh, points: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Jet boundary faces, their arc length from the lip and the element each lies on."""
    from ..post.loads import arc_length

    faces = mesh.boundary[Boundary.JET]
    s = arc_length(mesh.face_centroid[faces], points)
    cum = np.r_[0.0, np.cumsum(np.linalg.norm(np.diff(points, axis=0), axis=1))]
    elem = np.clip(np.searchsorted(cum, s) - 1, 0, len(points) - 2)
    return faces, s, elem


def jet_speed(flow: FlowResult) -> float:
    """The speed on a free jet: Bernoulli from the total head to the ambient pressure (0 gauge)."""
    return math.sqrt(2.0 * max(flow.total_pressure, 0.0) / flow.inlet_density)


def _trial_solve(mesh, points: np.ndarray, linear, momentum_width: bool = True) -> tuple[np.ndarray, float]:
    """Step 2: the potential with phi = s on the jet, inflow fixed by zero net crossing.
    Returns the crossing angle of each jet element and, where ``momentum_width``, the far-jet area
    the axial momentum balance asks for (unit jet speed; per radian, planar per unit depth)."""
    from .potential import BoundaryCondition, solve_potential_many

    faces, s, elem = _jet_faces(mesh, points)
    s_end = float(np.sum(np.linalg.norm(np.diff(points, axis=0), axis=1)))
    flux0 = {Boundary.WALL: BoundaryCondition("flux", 0.0), Boundary.AXIS: BoundaryCondition("flux", 0.0),
             Boundary.CENTERBODY: BoundaryCondition("flux", 0.0)}
    flux0 = {k: v for k, v in flux0.items() if k in mesh.boundary}
    set0 = {**flux0, Boundary.INLET: BoundaryCondition("flux", 0.0), Boundary.JET: BoundaryCondition("value", s),
            Boundary.OUTLET: BoundaryCondition("value", s_end)}
    set1 = {**flux0, Boundary.INLET: BoundaryCondition("flux", -1.0), Boundary.JET: BoundaryCondition("value", 0.0),
            Boundary.OUTLET: BoundaryCondition("value", 0.0)}
    f0, f1 = solve_potential_many(mesh, [set0, set1], linear)

    F0, F1 = f0.face_flux[faces].sum(), f1.face_flux[faces].sum()
    U = -F0 / F1  # no net flow across the trial boundary
    un = (f0.face_flux[faces] + U * f1.face_flux[faces]) / mesh.face_area[faces]  # out of the fluid
    n_el = len(points) - 1
    w = mesh.face_length[faces]
    num = np.bincount(elem, weights=w * un, minlength=n_el)
    den = np.bincount(elem, weights=w, minlength=n_el)
    have = den > 0
    un_el = np.interp(np.arange(n_el), np.flatnonzero(have), num[have] / den[have])
    # axial momentum (unit jet speed and density, ambient 0 on the jet): the far jet carries speed
    # 1 at p = 0, so its area (per radian; planar: per unit depth) equals the inlet (p + u_x^2) A
    # minus the pressure force on the solid walls
    from ..numerics.reconstruct import boundary_gradients

    phi, data = f0.phi + U * f1.phi, f0.boundary_data + U * f1.boundary_data
    momentum = 0.0
    for name in (Boundary.INLET, Boundary.WALL, Boundary.CENTERBODY) if momentum_width else ():
        if name not in mesh.boundary:
            continue
        fb = mesh.boundary[name]
        g = boundary_gradients(mesh, phi, fb, f0.is_value, data)
        p = 0.5 * (1.0 - g[0] ** 2 - g[1] ** 2)
        A, nx = mesh.face_area[fb], mesh.face_normal[fb, 0]
        momentum += float(np.sum((p + g[0] ** 2) * A)) if name == Boundary.INLET else -float(np.sum(p * nx * A))
    return np.arctan(un_el), momentum


SMOOTHING_WIDTH = 0.03  # Gaussian width of the smoothing of the turning angles, in lip radii ...
SMOOTHING_ELEMENTS = 1.0  # ... and at least this many local element lengths


def smoothed(a: np.ndarray, s: np.ndarray, ds: np.ndarray, r_lip: float) -> np.ndarray:
    """The turning angles averaged with a Gaussian in arc length. A trial boundary moved element by
    element overreacts at the shortest wavelengths (the flow responds to a wavy boundary in
    proportion to its wavenumber) and the flow round a sharp lip is singular; averaging over a
    fixed fraction of the lip radius takes those modes out of the update (not out of the answer:
    the iteration stops where the averaged crossing vanishes)."""
    sigma = np.maximum(SMOOTHING_WIDTH * r_lip, SMOOTHING_ELEMENTS * ds)
    w = np.exp(-0.5 * ((s[:, None] - s[None, :]) / sigma[:, None]) ** 2) * ds[None, :]
    return (w @ a) / w.sum(axis=1)


def _lip_element(theta: np.ndarray, ds: np.ndarray, theta_lip: float) -> np.ndarray:
    """The first element's angle from the second by the square-root law of a free streamline
    leaving a sharp edge tangentially (theta - theta_lip ~ s^1/2; Kirchhoff flow near the edge),
    so that the polyline has no kink at its second node."""
    out = theta.copy()
    if theta.size > 1:
        s0, s1 = 0.5 * ds[0], ds[0] + 0.5 * ds[1]
        out[0] = theta_lip + (theta[1] - theta_lip) * math.sqrt(s0 / s1)
    return out


def solve_free_jet(case, profile: Profile, mesher, progress=None, msh_path=None) -> tuple[JetSolution, Profile, object, FlowResult]:
    """Find the jet boundary of ``case`` past the lip of ``profile`` and solve the flow with it.

    ``mesher(profile, h, msh_path=None)`` builds a MeshBuild for a profile with a jet at the fixed target size h
    (the size does not follow the jet between iterations). Returns the jet, the profile with the
    jet, the final MeshBuild and the flow at the operating point.
    """
    from .potential import solve as solve_potential_case

    say = (lambda msg: progress("solve", msg)) if progress else (lambda msg: None)
    if profile.jet:
        raise ValueError("the profile already has a jet boundary")
    lip = np.array(profile.wall[-1].end, float)
    r_lip = float(lip[1])
    h = target_size(profile, case.mesh.size, case.mesh.level)
    theta, ds = initial_jet(profile, h)
    theta_lip = lip_angle(profile)  # the jet leaves tangent to the wall (smooth separation at a sharp lip)
    theta = _lip_element(theta, ds, theta_lip)
    points = integrate(lip, theta, ds)
    mesh_seconds: list[float] = []
    # the momentum balance fixes the far-jet area well where the bore upstream is a reservoir (its
    # walls see nearly the stagnation pressure); in a nozzle it is a small difference of large
    # pressure forces, and the crossing angles alone move the jet
    use_momentum = is_reservoir(profile)
    ccs: list[float] = []
    thetas: list[np.ndarray] = []
    prev_turn = None
    last_jump = 0
    turns: list[np.ndarray] = []
    r_ends: list[float] = []
    history: list[JetIteration] = []
    settled = False
    s_mid = np.cumsum(ds) - 0.5 * ds
    for k in range(1, MAX_OUTER + 1):
        t0 = time.perf_counter()
        problem = jet_problem(profile, points)
        if problem:
            raise JetNotSettled("outlet.kind", f"free-jet iteration {k}: {problem}; the outline may not end at a lip from "
                                "which a jet can leave (see docs/case-file.md, free jets)")
        build = mesher(with_jet(profile, points), h)
        mesh_seconds.append(build.seconds)
        mesh = build.mesh
        angle, momentum = _trial_solve(mesh, points, case.linear_settings, momentum_width=use_momentum)
        if not np.all(np.isfinite(angle)):
            raise JetNotSettled("outlet.kind", f"free-jet iteration {k}: the trial solution is not finite")
        turn = RELAXATION * smoothed(angle, s_mid, ds, r_lip)
        new_theta = theta + turn
        # Once the fast modes have died out, successive updates point the same way and shrink by a
        # steady factor lam: the slow mode (mostly the far-jet radius) is then extrapolated to its
        # limit, theta + turn lam / (1 - lam) (Aitken's delta-squared along the update), only when
        # two updates are parallel to within EXTRAPOLATE_COS.
        if prev_turn is not None and k - last_jump >= 3:
            n0, n1 = float(np.linalg.norm(prev_turn)), float(np.linalg.norm(turn))
            cos = float(prev_turn @ turn) / (n0 * n1) if n0 > 0 and n1 > 0 else 0.0
            lam = n1 / n0 if n0 > 0 else 1.0
            if cos > EXTRAPOLATE_COS and 0.5 < lam < 0.99:
                new_theta = new_theta + min(lam / (1.0 - lam), EXTRAPOLATE_MAX) * turn
                last_jump = k
        prev_turn = turn
        turns.append(turn)
        r_ends.append(float(integrate(lip, new_theta, ds)[-1, 1]))
        remaining = math.inf
        if len(r_ends) >= 6:
            # The far radius creeps (the slow mode) under the remeshing noise: fit the last five
            # increments with a steady factor lam (least squares); the creep still to come is
            # d lam / (1 - lam). Where it has moved the same way throughout, extrapolate it.
            d = np.diff(r_ends[-6:])
            lam = float(d[1:] @ d[:-1]) / float(d[:-1] @ d[:-1]) if float(d[:-1] @ d[:-1]) > 0 else 0.0
            lam_c = min(max(lam, 0.0), 0.97)
            remaining = abs(d[-1]) * lam_c / (1.0 - lam_c) if lam > 0 else abs(d[-1])
            if (np.all(d > 0) or np.all(d < 0)) and 0.5 < lam < 0.97 and k - last_jump >= 5:
                new_theta = new_theta + min(lam / (1.0 - lam), EXTRAPOLATE_MAX) * np.mean(turns[-3:], axis=0)
                last_jump = k
                r_ends[-1] = float(integrate(lip, new_theta, ds)[-1, 1])
                remaining = math.inf
        if use_momentum:
            # the far-jet radius from the axial momentum balance (well conditioned where the walls
            # see little of the jet, as in a reservoir; the crossing angles barely sense the width):
            # a smooth change of the turning angles, cos(theta) exp(-s / r_lip), moves the jet end there
            r_now = float(integrate(lip, new_theta, ds)[-1, 1])
            r_mom = momentum if profile.planar else math.sqrt(max(2.0 * momentum, 0.0))
            bump = np.cos(new_theta) * np.exp(-s_mid / r_lip)
            gain = float(np.sum(ds * np.cos(new_theta) * bump))
            if r_mom > 0 and gain > 0:
                new_theta = new_theta + RELAXATION * float(np.clip(r_mom - r_now, -0.05 * r_lip, 0.05 * r_lip)) / gain * bump
        new_theta = _lip_element(new_theta, ds, theta_lip)
        new_points = integrate(lip, new_theta, ds)
        step = float(np.max(np.linalg.norm(new_points - points, axis=1)))
        move = step / r_lip
        cross = float(np.max(np.abs(turn))) / RELAXATION
        history.append(JetIteration(k, mesh.n_cells, cross, move, float(points[-1, 1]), time.perf_counter() - t0))
        say(f"free jet {k}: crossing angle {math.degrees(cross):.3g} deg, boundary moved {move:.2e} lip radii, "
            f"jet radius {points[-1, 1]:.6g} m ({mesh.n_cells:,} cells)")
        ccs.append(far_area(profile, float(new_points[-1, 1])) / exit_area(profile))
        thetas.append(new_theta)
        w = SETTLE_WINDOW
        drift = abs(np.mean(ccs[-w:]) - np.mean(ccs[-2 * w:-w])) if len(ccs) >= 2 * w else math.inf
        if move < MOVE_TOL and drift < CC_TOL * ccs[-1] and remaining < CREEP_TOL * r_lip:
            settled = True
            # each remesh moves the discrete answer a little (about 2e-3 in the contraction): the
            # settled jet is the mean of the last SETTLE_WINDOW updates
            points = integrate(lip, np.mean(thetas[-SETTLE_WINDOW:], axis=0), ds)
            break
        theta, points = new_theta, new_points
    if not settled:
        last = history[-1]
        raise JetNotSettled("outlet.kind", f"the free-jet boundary did not settle in {MAX_OUTER} iterations (last move "
                            f"{last.movement:.2e} lip radii, crossing angle {math.degrees(last.crossing_angle):.3g} deg): "
                            "refine the mesh near the lip (mesh.level) or check that the outline ends at a sharp lip")
    jet_profile = with_jet(profile, points)
    build = mesher(jet_profile, h, msh_path)
    mesh_seconds.append(build.seconds)
    flow = solve_potential_case(case, jet_profile, build.mesh, progress)
    jb = flow.boundary[Boundary.JET]
    V = jet_speed(flow)
    mismatch = jb.speed / V - 1.0 if V > 0 else np.full(jb.speed.shape, np.nan)
    w = jb.length
    sol = JetSolution(points, tuple(history), settled, (float(lip[0]), r_lip), exit_area(profile),
                      far_area(profile, float(points[-1, 1])), float(np.max(np.abs(mismatch))),
                      float(np.sqrt(np.sum(w * mismatch**2) / np.sum(w))), h, tuple(mesh_seconds))
    return sol, jet_profile, build, flow
