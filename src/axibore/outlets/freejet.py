"""Free jets past a sharp lip: the jet boundary solved as a free streamline.

Where a bore discharges to the surroundings over a lip, the jet keeps contracting downstream of
the exit plane. Its boundary is a free streamline: a streamline from the lip on which the pressure
is the ambient one, so (Bernoulli) the speed on it is the jet speed V everywhere. The problem has
no length scale but the geometry, so it is solved for a unit inlet velocity and the operating
point only scales the flow.

The discrete problem (one mesh, built once; its nodes move with the jet, its topology never does):

* The jet is a polyline of n elements of fixed lengths from the lip and unknown directions
  theta_k (geometry.jet.JetShape), then a parallel tail to the fixed outlet plane. The first
  element's direction is tied to the second's by the free streamline's l^1/2 law at a sharp lip
  (it leaves tangent to the wall); the lip face is reported apart.
* For a trial jet the flow is solved with the jet as a streamline and phi = 0 on the outlet plane
  (the registered solver's free-surface service). The free-streamline condition, speed V along the
  jet, is imposed in integrated form at every jet face centre: phi + V (s_end - s) = 0, s the arc
  length (phi rises at the rate V along the jet to 0 at the outlet). Integrated, the condition is
  as smooth as the potential itself; the speed from a derivative of the fit is not.
* The jet speed V is one more unknown (the local condition), fixed by Bernoulli where the jet leaves
  the lip: the speed on the first enforced face past the lip is V. That row stands in for the tail
  face's integrated condition, which the outlet plane's phi = 0 next to it all but fixes: with it the
  discrete problem had a one-parameter family of solutions, and a solve settled wherever its trial
  lay on it (jets leaving the lip at an angle; contractions 1-2 % off from trials 3-5 % off). Except where the
  axial momentum balance gives it exactly: at a re-entrant lip whose walls within one lip radius
  have no axial projection (a re-entrant tube), that balance does not depend on the singular flow
  at the lip, so V comes from it (``momentum_condition``) and the faces fix the shape. The discrete free
  streamline has its own V, a few 1e-4 off the balance's; the jet absorbs the difference at the lip (it leaves
  at an angle), and where it cannot the steps stall: then (STALL_STEPS) the same mesh is solved again with V
  from the faces, and the run warns with both contraction coefficients (``JetSolution.momentum_attempt``).
  A re-entrant lip leaves the width set by the lip's singular flow alone (badly conditioned); an
  orifice plate makes the balance depend on the pressure next to the lip (inaccurate): each
  condition is used where the other is not reliable.
* The residual is driven to zero by Newton steps on its exact derivative (inexact Newton-Krylov):
  GMRES along directions whose derivatives are taken by differences, preconditioned by a Jacobian
  J made once, at the first trial: the response of the flow to each element's rotation is the
  transpiration solution (the normal velocity a small normal displacement delta of a streamline
  implies, (1/r) d(r q delta)/ds; ``PotentialJet.response``), plus the moved arc lengths; within a
  few elements of the lip, where that linearisation is poor, the columns are taken by differences.
  After each step J takes the derivatives the step measured (a multi-secant update) and the step's
  own secant (Broyden). Where a Newton step does not lower the residual, a fresh J, and then a
  Levenberg-Marquardt step on it. A difference step is solved with the state's own factorisation:
  one solve of the change instead of a factorisation of the moved mesh
  (``PotentialJet.solve(mesh, near=...)``).
* Before the lip's Bernoulli row, which solution of that family a solve settled on depended on its
  steps: the damped steps used first (Levenberg-Marquardt throughout, a fresh J at every step) settled
  axisymmetric orifices in reservoirs 15 and 20 lip radii wide at 0.6095 and 0.5921, and Newton's steps
  from the Kirchhoff trial at 0.5841 (tests/test_free_jet.py: the reservoir's size and the trial must not
  matter).
* Settled when every enforced face is within TOLERANCE of V times the lip radius. Then the
  registered solver solves the flow on the settled jet at the operating point.
"""

from __future__ import annotations

import copy
import math
import time
from dataclasses import dataclass, replace

import numpy as np

from ..estimate import Countdown
from ..geometry import Profile
from ..geometry.jet import JetShape, exit_area, far_area, jet_problem, lip_angle, trial_jet, with_jet
from ..mesh import MeshError, mesh_profile, target_size
from ..mesh.moving import NodeMover
from ..mesh.session import write_msh
from ..names import Boundary
from ..solvers import free_surface_solvers
from ..solvers.base import FlowError
from .base import OutletFlow, Progress
from .comparison import exit_plane_comparison

MAX_ITERATIONS = 30  # a jet not settled after this many steps is reported as not settled
FD_COLUMNS = 4  # near-lip directions whose response is taken by differences
FD_STEP = 1e-7  # radians
# settled: every enforced face within this of V r_lip. A face residual e moves the far jet by about
# e r_lip, so the contraction coefficient by about e: two orders below the discretisation error of the
# finest meshes, and two above the round-off floor of the face conditions (1e-9 to 2e-8, measured)
TOLERANCE = 1e-6
MOMENTUM_AREA = 0.05  # the momentum condition where the walls within a lip radius project less than this
#                      fraction of the exit area on the axis
LM_START, LM_DOWN, LM_UP, LM_MAX = 1e-8, 5.0, 8.0, 1e6
# The steps are Newton steps on the exact directional derivatives of the residual (differences along each
# Krylov direction), preconditioned by the transpiration Jacobian: that linearisation is first order in the
# element rotations and away from the lip only, so near the solution its error, not the problem, limits a
# step taken on it (the tank orifice at level 2 stalled at 1.1e-5 with a fresh one every step, 30 steps)
# GMRES: the linearised step solved to a relative residual eta = the largest face residual (relative to
# V r_lip), within these bounds (forcing terms of the order of the residual keep Newton's quadratic convergence:
# Dembo, Eisenstat & Steihaug 1982, SIAM J. Numer. Anal. 19, "Inexact Newton methods", Thm 3.3)
KRYLOV_RTOL, KRYLOV_RTOL_MAX = 1e-3, 0.1
KRYLOV_MAX = 20  # GMRES: most directions (one flow solve each) per step
# The first Newton step from the Kirchhoff trial is taken whole if it leaves the residual norm below this
# factor of the trial's: the trial lies near the jet that does not depend on the reservoir's size, but the
# norm can rise on the way there (an orifice in a reservoir 25 hole radii wide at mesh size 0.1: the whole
# step went to Cc 0.5836 with the norm 1.15 times higher, the halved steps did too, and a Levenberg-Marquardt
# step then settled the other jet, 0.6079, where a reservoir 12 radii wide gave 0.5842)
FIRST_STEP_RISE = 2.0
# With V from the momentum balance (where the faces' V can stand in), the steps give up when the residual has not
# fallen by 10 % over the last STALL_STEPS steps: a held-out tube stalled at 3.8e-5 (3.825e-5, 3.743e-5, 3.726e-5,
# each step a fresh Jacobian's Levenberg-Marquardt step of 4-5 s) until no step lowered it at all; the settling
# tubes fall far faster (the Borda tubes of the tests: at most 0.34 of the residual two steps before, planar; 0.06
# axisymmetric; an earlier held-out tube 16-22 % a step). Before 2026-12-05's second session: 1 % over 3 steps, 11 steps to give up
STALL_STEPS, STALL_FACTOR = 2, 0.9
SETTLED = "settled"  # the outcome of an attempt that settled (``FreeJetOutlet._iterate``)


class JetNotSettled(FlowError):
    """The free-jet boundary did not settle."""


@dataclass(frozen=True)
class JetIteration:
    iteration: int
    residual: float  # largest enforced face residual, relative to V r_lip
    contraction_coefficient: float
    damping: float  # the Levenberg-Marquardt parameter of the step taken after this state (0: a Newton step)
    seconds: float


@dataclass(frozen=True, eq=False)
class JetSolution:
    """What the free-jet solve found, beside the flow."""

    points: np.ndarray  # (n, 2) jet boundary from the lip to the outlet plane
    history: tuple[JetIteration, ...]
    settled: bool
    lip: tuple[float, float]
    exit_area: float  # flow area at the lip plane (axisymmetric: m2; planar: m per unit depth)
    jet_area: float  # far-jet area (same measure)
    condition: str  # "local" or "momentum" (what fixes the jet speed)
    residual: float  # largest enforced face residual at the end (relative)
    tolerance: float
    cells: int
    seconds: float
    lip_faces: int = 1  # the faces of the elements tied to the l^1/2 law at the lip (not enforced one by one)
    # where V from the momentum balance did not settle and V from the faces did: (steps, face residual, contraction
    # coefficient) of that first attempt's last state
    momentum_attempt: tuple[int, float, float] | None = None

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


def jet_speed(flow) -> float:
    """The speed on a free jet: Bernoulli from the total head to the ambient pressure (0 gauge)."""
    return math.sqrt(2.0 * max(flow.total_pressure, 0.0) / flow.inlet_density)


def momentum_condition(profile: Profile) -> bool:
    """Whether the axial momentum balance fixes the jet speed exactly: a re-entrant lip (the wall
    arrives running upstream, so the jet turns back and has an axial projection of its own) whose
    walls within one lip radius project less than MOMENTUM_AREA of the exit area on the axis (their
    axial pressure force does not depend on the singular flow at the lip)."""
    if lip_angle(profile) > -math.pi / 2:
        return False
    lip = np.array(profile.wall[-1].end)
    r_lip = float(lip[1])
    projected = 0.0
    for chain in (profile.wall, profile.centerbody):
        for seg in chain:
            p = seg.sample()
            pieces = max(1, int(math.ceil(40.0 * seg.length / r_lip)))  # fine enough to see the lip's neighbourhood
            p = np.vstack([np.linspace(a, b, pieces + 1)[:-1] for a, b in zip(p[:-1], p[1:])] + [p[-1:]])
            mid = 0.5 * (p[1:] + p[:-1])
            near = np.linalg.norm(mid - lip, axis=1) < r_lip
            dr = np.abs(np.diff(p[:, 1]))[near]
            projected += float(np.sum(dr if profile.planar else 2 * math.pi * mid[near, 1] * dr))
    return projected < MOMENTUM_AREA * exit_area(profile)


class _JetProblem:
    """The discrete free-streamline problem on one mesh: residuals and their Jacobian."""

    def __init__(self, case, profile: Profile, shape: JetShape, theta0: np.ndarray, service_cls, h: float):
        from scipy.spatial import cKDTree

        self.profile, self.shape, self.h = profile, shape, h
        self.r_lip = shape.lip[1]
        P = shape.points(theta0)
        self.build = mesh_profile(with_jet(profile, P), case.mesh.size, case.mesh.level, "triangles", h=h)
        mesh0 = self.build.mesh
        dist, self.jet_nodes = cKDTree(mesh0.nodes).query(P)
        if dist.max() > 1e-6 * self.r_lip:
            raise JetNotSettled("mesh", "the jet's polyline is not the mesh's jet boundary")
        faces = mesh0.boundary[Boundary.JET]
        index = {tuple(sorted(e)): f for f, e in zip(faces, mesh0.face_nodes[faces])}
        self.jet_faces = np.array([index[tuple(sorted((a, b)))] for a, b in zip(self.jet_nodes[:-1], self.jet_nodes[1:])])
        out = np.unique(mesh0.face_nodes[mesh0.boundary[Boundary.OUTLET]].ravel())
        self.outlet_nodes = out[~np.isin(out, self.jet_nodes)]
        self.bottom = profile.outlet_bottom
        self.mover = NodeMover(mesh0, np.r_[self.jet_nodes, self.outlet_nodes])
        self.service = service_cls(mesh0, self.jet_faces)
        self.momentum = momentum_condition(profile)
        n, m = shape.n, shape.tied
        # the first m elements follow the free streamline's l^1/2 law at a sharp lip (it leaves tangent
        # to the wall), tied to element m; their faces, inside the lip's singular flow, are reported apart
        tie = shape.lip_ties()
        self.B = np.zeros((n, n - m))  # theta = b0 + B u, u = theta_m .. theta_n-1
        self.B[m:, :] = np.eye(n - m)
        self.B[:m, 0] = tie
        self.b0 = np.zeros(n)
        self.b0[:m] = shape.lip_direction * (1.0 - tie)
        self.rows = np.arange(m, n) if self.momentum else np.arange(m, n + 1)
        # The local condition's last row is not the tail face's integrated condition but Bernoulli on the first
        # enforced face past the lip: its speed is V. The tail face lies next to the outlet plane, whose phi = 0
        # all but fixes its value: with that row the discrete problem had a one-parameter family of solutions,
        # and a solve settled where its trial lay on it (Kirchhoff's slot, started 5 % too narrow or 3 % too
        # wide, at 0.6021 or 0.6169 against 0.6110, with the lip turned 22-42 deg into the fluid; the tank
        # orifice at 0.5841 with the wall speed at the lip 0.70 V). With the lip's row the slot gives 0.611409 to
        # 0.611442 from those trials and its own (mesh size 0.1), the tank orifice 0.592019, 0.591762, 0.591634
        # at levels 0-2 (measured 2026-12-05)
        self.speed_face = m
        c = np.r_[0.0, np.cumsum(shape.ds)[:-1]] + 0.5 * shape.ds  # element face centres
        self.speed_span = (max(m - 1, 0), m + 1, float(c[m + 1] - c[max(m - 1, 0)]))
        self.mesh0 = mesh0

    def with_local_condition(self) -> "_JetProblem":
        """The same mesh and jet with V from the faces (the local condition) instead of the momentum balance."""
        other = copy.copy(self)
        other.momentum = False
        other.rows = np.arange(self.shape.tied, self.shape.n + 1)
        return other

    def unknowns(self, theta: np.ndarray) -> np.ndarray:
        return theta[self.shape.tied:].copy()

    def theta(self, u: np.ndarray) -> np.ndarray:
        return self.b0 + self.B @ u

    def positions(self, P: np.ndarray) -> np.ndarray:
        r_end0 = self.mesh0.nodes[self.jet_nodes[-1], 1]
        ro = self.mesh0.nodes[self.outlet_nodes]
        scaled = ro.copy()
        scaled[:, 1] = self.bottom + (ro[:, 1] - self.bottom) * (P[-1, 1] - self.bottom) / (r_end0 - self.bottom)
        return np.vstack([P, scaled])

    def evaluate(self, u: np.ndarray, V: float | None, near: dict | None = None) -> dict | None:
        """The state at directions u and jet speed V (None: from the momentum balance, or, at the
        first call of the local condition, the far speed); None where the mesh cannot follow.
        ``near``: a state a difference step away, whose factorisation solves this one (a value for a
        difference quotient; such a state has no factorisation for a Jacobian of its own)."""
        theta = self.theta(u)
        P = self.shape.points(theta)
        if jet_problem(self.profile, P):
            return None
        try:
            mesh = self.mover.move(self.positions(P))
        except MeshError:
            return None
        field = self.service.solve(mesh, None if near is None else near["field"])
        L = np.linalg.norm(np.diff(P, axis=0), axis=1)
        s = np.r_[0.0, np.cumsum(L)]
        remaining = s[-1] - 0.5 * (s[:-1] + s[1:])
        if self.momentum:
            if not -field.momentum0 / field.momentum2 > 0:
                return None
            V = math.sqrt(-field.momentum0 / field.momentum2)
        elif V is None:
            V = abs(float(field.jet_tangential[-1]))
        residual = (field.jet_value + V * remaining)[self.rows]
        if not self.momentum:  # the last row: Bernoulli on the first enforced face past the lip (above)
            residual[-1] = self.r_lip * (abs(float(field.jet_tangential[self.speed_face])) - V)
        return {"u": u, "theta": theta, "P": P, "mesh": mesh, "field": field, "V": V, "L": L,
                "remaining": remaining, "residual": residual}

    def jacobian(self, st: dict) -> np.ndarray:
        theta, P, mesh, field, V, L, rem = (st[k] for k in ("theta", "P", "mesh", "field", "V", "L", "remaining"))
        n = self.shape.n
        tau = np.diff(P, axis=0) / L[:, None]
        q = np.sign(np.einsum("ij,ij->i", tau, field.jet.t)) * field.jet_tangential  # speed along the jet
        th_all = np.r_[theta, 0.0]
        normal = np.column_stack([-np.sin(th_all), np.cos(th_all)])  # out of the fluid
        node_normal = np.zeros((n + 2, 2))
        node_normal[:-1] += normal
        node_normal[1:] += normal
        node_normal /= np.linalg.norm(node_normal, axis=1)[:, None]
        q_node = np.r_[q[0], 0.5 * (q[:-1] + q[1:]), q[-1]]
        r_node = np.ones(n + 2) if mesh.planar else P[:, 1]
        dP = self.shape.sensitivities(theta)  # (n, n + 2, 2)
        flux = q_node[None] * np.einsum("inj,nj->in", dP, node_normal) * r_node[None]
        g = (flux[:, 1:] - flux[:, :-1]) / mesh.face_area[self.jet_faces][None]  # transpiration, per element
        along = np.einsum("ifj,fj->if", 0.5 * (dP[:, :-1] + dP[:, 1:]), tau)
        dvalue, dm0 = self.service.response(field, g.T, self.momentum)
        d_end = dP[:, n, 0]  # the last element's end moves in x: the tail (and the arc length to the end) changes
        J = dvalue + q[:, None] * along.T - V * d_end[None, :]
        dA_out = (1.0 if mesh.planar else P[-1, 1]) * dP[:, n + 1, 1]  # the outlet plane's area (per radian)
        if self.momentum:
            dV = -(dm0 + V * V * dA_out) / (2.0 * V * field.momentum2)
            J = J + rem[:, None] * dV[None, :]

        JB = J @ self.B
        Ju = JB[self.rows]
        if not self.momentum:  # the lip's speed row: the face values' slope across the face (a preconditioner's row)
            a, b, span = self.speed_span
            Ju[-1] = self.r_lip * (JB[b] - JB[a]) / span
        for j in range(min(FD_COLUMNS, Ju.shape[1])):  # near the lip: differences
            e = np.zeros_like(st["u"])
            e[j] = FD_STEP
            other = self.evaluate(st["u"] + e, None if self.momentum else V, near=st)
            if other is not None:
                Ju[:, j] = (other["residual"] - st["residual"]) / FD_STEP
        if self.momentum:
            return Ju
        dV = rem[self.rows].copy()
        dV[-1] = -self.r_lip
        return np.column_stack([Ju, dV])


class FreeJetOutlet:
    kind = "free-jet"

    def solve(self, case, profile: Profile, solver, progress: Progress, msh_path=None) -> OutletFlow:
        t_start = time.perf_counter()
        service_cls = solver.load_free_surface()
        if service_cls is None:
            raise FlowError("solver.kind", f'the solver "{solver.kind}" cannot solve a free jet; outlet.kind = "free-jet" '
                            f"needs a solver with a free-surface service ({', '.join(free_surface_solvers())})")
        h = target_size(profile, case.mesh.size, case.mesh.level)
        shape, theta = trial_jet(profile, h)
        problem = jet_problem(profile, shape.points(theta))
        if problem:
            raise JetNotSettled("outlet.kind", f"the first trial jet cannot be meshed ({problem}): the outline may not end "
                                "at a lip from which a jet can leave (see docs/case-file.md, free jets)")
        progress("mesh", f"free jet: meshing the bore with the first trial jet ({shape.n} jet elements)")
        jp = _JetProblem(case, profile, shape, theta, service_cls, h)
        progress("mesh", f"{jp.mesh0.n_cells:,} cells, {jp.build.method}, {jp.build.seconds:.2f} s; the jet moves the nodes")
        tol = TOLERANCE
        st, history, outcome = self._iterate(jp, jp.unknowns(theta), tol, progress, stall=jp.momentum)
        attempts = [_attempt(jp, st, history, outcome)]
        momentum_attempt = None
        if outcome != SETTLED and jp.momentum:
            # V from the momentum balance is exact, but the discrete free streamline has its own V, a few 1e-4 off
            # it; the jet absorbs the difference at the lip (it leaves at an angle), and where it cannot, the steps
            # stall (a helper's held-out tube 12 lip radii into a reservoir 10 wide, level 0: face residual 3.86e-5
            # from step 7 on, then no step lowered it, Cc 0.501256 against Borda's 0.5012563; now the momentum steps
            # give up after 8 (STALL_STEPS) and V from the faces settles in 4 more steps (5 states) at 0.5016275, +3.7e-4, and at
            # level 1 6.5e-6 below Borda's value)
            progress("solve", f"free jet: the steps did not settle ({attempts[0]}); solving again with V from the faces")
            momentum_attempt = (len(history), _relative_residual(jp, st), _contraction(jp, st))
            jp = jp.with_local_condition()
            # from the momentum attempt's last state where it got closer than the trial (the same mesh, so the same
            # discrete problem: only the number of steps changes; the held-out tube above took 6 steps from the
            # trial, 4 from there, to the same 0.5016275; its first residual is 0.10 all the same, the lip's speed row:
            # the stalled jet leaves the lip at an angle)
            closer = history[-1].residual < history[0].residual
            start, V0 = (st["u"], st["V"]) if closer else (jp.unknowns(theta), None)
            st, more, outcome = self._iterate(jp, start, tol, progress, offset=(len(history), history[-1].seconds), V=V0)
            attempts.append(_attempt(jp, st, more, outcome))
            history = history + more
        residual = _relative_residual(jp, st)
        settled = outcome == SETTLED
        if not settled:
            raise JetNotSettled("outlet.kind", f"the free-jet boundary did not settle ({'; then '.join(attempts)}): "
                                "refine the mesh near the lip (mesh.level) or check that the outline ends at a sharp lip")
        jet_profile = with_jet(profile, st["P"])
        mesh = st["mesh"]
        t = time.perf_counter()
        flow = solver.load()(case, jet_profile, mesh, progress)
        solve_s = time.perf_counter() - t
        if msh_path is not None:
            write_msh(mesh, msh_path)
        sol = JetSolution(st["P"], tuple(history), settled, shape.lip, exit_area(profile),
                          far_area(profile, float(st["P"][-1, 1])), "momentum" if jp.momentum else "local",
                          residual, tol, mesh.n_cells, time.perf_counter() - t_start, shape.tied, momentum_attempt)
        build = replace(jp.build, mesh=mesh, method=jp.build.method + ", nodes moved with the jet")
        comparison = None
        if case.outlet.compare_exit_plane:
            progress("solve", "exit-plane model of the same bore, for comparison")
            comparison = exit_plane_comparison(case, profile, solver, flow)
            if not comparison.meaningful:
                progress("solve", f"exit-plane model {comparison.note}")
        return OutletFlow(jet_profile, build, flow, sol, jp.build.seconds,
                          time.perf_counter() - t_start - jp.build.seconds, comparison)

    @staticmethod
    def _iterate(jp: _JetProblem, u: np.ndarray, tol: float, progress: Progress, stall: bool = False,
                 offset: tuple[int, float] = (0, 0.0), V: float | None = None):
        """Newton-Krylov steps on the face residuals, preconditioned by the transpiration Jacobian J (made
        once) and J updated after each step by the derivatives the step measured; where a Newton step
        does not lower the residual, a fresh J and then Levenberg-Marquardt on it (see ``_newton_step``).
        ``stall``: give up when the residual stalls (STALL_STEPS); ``offset``: steps and seconds of an attempt
        before this one, which the numbering and the times continue; ``V``: the first jet speed of the local
        condition (default: the far jet's speed on the trial)."""
        t0 = time.perf_counter() - offset[1]
        st = jp.evaluate(u, V)
        if st is None:
            raise JetNotSettled("outlet.kind", "the first trial jet cannot be solved: check that the outline ends at a lip")
        J, fresh = jp.jacobian(st), True
        lam = LM_START * float(np.linalg.norm(J, 2)) ** 2
        history: list[JetIteration] = []
        left = Countdown(tol, MAX_ITERATIONS)
        for it in range(offset[0] + 1, offset[0] + MAX_ITERATIONS + 1):
            r = st["residual"]
            res, cc = _relative_residual(jp, st), _contraction(jp, st)  # relative to this state's jet speed, as reported
            progress("solve", f"free jet {it}: face residual {res:.2e} of V r_lip, contraction coefficient {cc:.6f}"
                     f"{left.update(res)}")
            if res < tol:
                history.append(JetIteration(it, res, cc, 0.0, time.perf_counter() - t0))
                return st, history, SETTLED
            if stall and len(history) >= STALL_STEPS and res > STALL_FACTOR * history[-STALL_STEPS].residual:
                history.append(JetIteration(it, res, cc, 0.0, time.perf_counter() - t0))
                return st, history, "stalled"
            new, step, J_new = _newton_step(jp, st, J, FIRST_STEP_RISE * float(np.linalg.norm(r)) if it == 1 else None)
            if new is None and not fresh:  # the updated Jacobian has drifted: a fresh one
                J, fresh = jp.jacobian(st), True
                new, step, J_new = _newton_step(jp, st, J)
            damping = 0.0
            if new is None:
                new, step, lam = _lm_step(jp, st, J, lam)
                J_new, damping = J, lam
            history.append(JetIteration(it, res, cc, damping, time.perf_counter() - t0))
            if new is None:
                return st, history, "no step lowered the residual"
            # Broyden's secant of the step taken, on top of the derivatives measured at its start
            dr = new["residual"] - r
            J, fresh = J_new + np.outer(dr - J_new @ step, step) / float(step @ step), False
            st = new
        return st, history, f"the step limit ({MAX_ITERATIONS})"


def _contraction(jp: _JetProblem, st: dict) -> float:
    """The state's contraction coefficient: its far-jet area over the flow area at the lip plane."""
    return far_area(jp.profile, float(st["P"][-1, 1])) / exit_area(jp.profile)


def _attempt(jp: _JetProblem, st: dict, history: list, outcome: str) -> str:
    """One attempt in words: its condition, steps and how it ended (``outcome``, from ``_iterate``)."""
    v = "V from the momentum balance" if jp.momentum else "V from the faces"
    return (f"{v}: {len(history)} step{'s' * (len(history) != 1)}, {outcome}, face residual {_relative_residual(jp, st):.2e} "
            f"of V r_lip, contraction coefficient {_contraction(jp, st):.6f}")


def _relative_residual(jp: _JetProblem, st: dict) -> float:
    """The largest enforced face residual relative to this state's V r_lip (as the steps judge it)."""
    return float(np.max(np.abs(st["residual"]))) / (st["V"] * jp.r_lip)


def _newton_step(jp: _JetProblem, st: dict, J: np.ndarray, limit: float | None = None):
    """A Newton step on the exact derivative of the face residuals: GMRES (Arnoldi with modified Gram-Schmidt,
    right-preconditioned by ``J``) on differences along its own directions, to a relative residual of the
    linearised step that tightens with the residual (KRYLOV_RTOL); halved up to three times until the
    residual norm falls (the whole step is also taken below ``limit``, FIRST_STEP_RISE). Returns (new state, step, J updated so that it maps every direction tried to its
    measured derivative: J + (A Z - J Z) Z^+, a multi-secant update) or (None, None, J)."""
    import scipy.linalg as sla

    r = st["residual"]
    n = r.size
    scale = st["V"] * jp.r_lip

    def at(x, near=None):
        du, V = (x, None) if jp.momentum else (x[:-1], st["V"] + x[-1])
        return jp.evaluate(st["u"] + du, V, near)

    try:
        lu = sla.lu_factor(J)
    except (ValueError, np.linalg.LinAlgError):
        return None, None, J
    beta = float(np.linalg.norm(r))
    rtol = min(KRYLOV_RTOL_MAX, max(KRYLOV_RTOL, float(np.max(np.abs(r))) / scale))
    Q = np.zeros((n, KRYLOV_MAX + 1))
    H = np.zeros((KRYLOV_MAX + 1, KRYLOV_MAX))
    Z, AZ = [], []
    Q[:, 0] = -r / beta
    y = np.zeros(0)
    for k in range(min(KRYLOV_MAX, n)):
        z = sla.lu_solve(lu, Q[:, k])
        eps = FD_STEP / float(np.max(np.abs(z)))
        other = at(eps * z, near=st)
        if other is None:
            break
        w = (other["residual"] - r) / eps
        Z.append(z)
        AZ.append(w.copy())
        for i in range(k + 1):  # modified Gram-Schmidt
            H[i, k] = float(Q[:, i] @ w)
            w -= H[i, k] * Q[:, i]
        H[k + 1, k] = float(np.linalg.norm(w))
        e1 = np.zeros(k + 2)
        e1[0] = beta
        y = np.linalg.lstsq(H[:k + 2, :k + 1], e1, rcond=None)[0]
        if float(np.linalg.norm(e1 - H[:k + 2, :k + 1] @ y)) <= rtol * beta or H[k + 1, k] <= 1e-14 * beta:
            break
        Q[:, k + 1] = w / H[k + 1, k]
    if not Z:
        return None, None, J
    Zm, AZm = np.column_stack(Z), np.column_stack(AZ)
    J_new = J + (AZm - J @ Zm) @ np.linalg.pinv(Zm, rcond=1e-10)
    step = Zm[:, :y.size] @ y
    for k in range(4):
        new = at(step)
        if new is not None and float(np.linalg.norm(new["residual"])) < (beta if k or limit is None else max(beta, limit)):
            return new, step, J_new
        step = 0.5 * step
    return None, None, J_new


def _lm_step(jp: _JetProblem, st: dict, J: np.ndarray, lam: float):
    """One accepted Levenberg-Marquardt step from ``st`` (the new state, the step, the new damping),
    or (None, None, lam) when no damping reduces the residual."""
    r = st["residual"]
    JtJ = J.T @ J
    rhs = -J.T @ r
    base = float(np.linalg.norm(r))
    norm = float(np.linalg.norm(JtJ, 2))
    while lam <= LM_MAX * norm:
        step = np.linalg.solve(JtJ + lam * np.diag(np.diag(JtJ)), rhs)
        du, V = (step, None) if jp.momentum else (step[:-1], st["V"] + step[-1])
        new = jp.evaluate(st["u"] + du, V)
        if new is not None and float(np.linalg.norm(new["residual"])) < base:
            return new, step, max(lam / LM_DOWN, 1e-12 * norm)
        lam *= LM_UP
    return None, None, LM_START * norm
