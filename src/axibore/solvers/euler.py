"""Steady compressible Euler equations, axisymmetric, cell-centred finite volumes on an FVMesh.

Equations (per radian, meridional plane (x, r)):  d/dt (r U) + div (r F(U)) = (0, 0, p, 0), with
U = (rho, rho u_x, rho u_r, rho E) stored component-first (4, C). Integrated over a cell:
``V dU/dt + sum_faces F.n A_f = (0, 0, p A_cell, 0)`` with A_f = r_f L_f (mesh.face_area),
V = r_c A_cell (mesh.cell_volume) and A_cell the meridional area (mesh.cell_area).

Uniform flow is preserved exactly: for a closed polygon sum_f n L r_f = integral of grad r over
the cell = (0, A_cell) (divergence theorem; the midpoint rule is exact for r linear along a
straight face), so a uniform pressure gives sum_f p n_r A_f = p A_cell, which the source
cancels, and a uniform axial mass flux gives sum_f rho u_x n_x A_f = 0.

* Flux: HLLC (Toro, Spruce & Speares 1994, Shock Waves 4, 25-34) with the wave-speed estimates
  of Davis/Einfeldt (Roe averages), vectorised over all faces. Optional low-Mach correction of
  the face velocities (Thornber, Mosedale, Drikakis, Youngs, Williams 2008, J. Comput. Phys.
  227, 4873-4894: the velocity jump scaled by z = min(1, max(M_L, M_R))).
* Second order: primitive variables (rho, u_x, u_r, p) reconstructed linearly with
  least-squares cell gradients (weights 1/d^2, boundary faces as neighbours at their centres)
  limited by Venkatakrishnan's limiter (J. Comput. Phys. 118, 120-130, 1995); the limiter is
  frozen once the residual has dropped ``freeze_orders`` orders.
* Boundaries by ghost states built from the interior face state: inlet total pressure and
  total temperature with the flow normal to the plane (static pressure extrapolated from
  inside); outlet by characteristics (entropy, tangential velocity and the outgoing Riemann
  invariant from inside, the back pressure but not below the sonic pressure of those
  invariants; extrapolation when supersonic normal to the plane); walls, centre body and axis reflect (mirror) the velocity.
* Steady state: backward Euler in pseudo-time with local time steps, CFL grown by switched
  evolution relaxation (Mulder & van Leer 1985, J. Comput. Phys. 59, 232-246). The Jacobian is
  that of the first-order residual, assembled sparse from face-local finite differences of the
  HLLC flux (each face flux depends only on its two cells, so each of the 4 + 4 perturbations
  is one vectorised flux call over all faces; no colouring needed) plus the analytic source
  Jacobian. The cells are numbered by nested dissection (ordering.py) and the system is factored
  by SuperLU. With the second-order scheme each step is a Newton-Krylov step: GMRES on the
  Jacobian of the full second-order residual, applied matrix-free by finite differences,
  preconditioned by the LU factor of the first-order matrix; defect correction alone (the
  first-order matrix as the only Jacobian) stalls at low Mach numbers (no convergence in 200
  steps at M = 0.05, against 11 steps with Newton-Krylov).
* Step control: a step whose largest relative change of density or pressure exceeds
  ``max_update`` is scaled down, and the next CFL number is then cut by the square root of that
  factor; a step that multiplies the residual by more than ``reject_growth`` is undone and retried
  at a quarter of its CFL number. The GMRES tolerance follows Eisenstat & Walker (1996), choice
  2. The preconditioner's factor (single precision) is kept across steps while GMRES converges
  in at most ``refactor_iterations`` iterations; the first-order Jacobian is only assembled when
  a new factor is needed.
* Initial state: quasi-1D isentropic flow; choked, with a sonic area slightly below the minimum
  area (INITIAL_SONIC_AREA), so that a straight throat starts supersonic, not on the singular
  sonic state.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from ..mesh import FVMesh
from ..numerics.gradients import least_squares_gradient
from . import onedim_gas as q1d

WALL_KINDS = ("wall", "centerbody", "axis")
INITIAL_SONIC_AREA = 0.99  # choked initial state: sonic area / minimum area (a typical throat Cd)


# ---- plain data in --------------------------------------------------------------------------
@dataclass(frozen=True)
class IdealGas:
    gas_constant: float = 287.05  # J/(kg K)
    gamma: float = 1.4

    @classmethod
    def from_fluid(cls, fluid) -> "IdealGas":
        return cls(float(fluid.gas_constant), float(fluid.gamma))


@dataclass(frozen=True)
class TotalInlet:
    total_pressure: float  # Pa absolute
    total_temperature: float  # K


@dataclass(frozen=True)
class EulerSettings:
    second_order: bool = True
    limiter_k: float = 5.0  # Venkatakrishnan's K: eps^2 = (K h / L)^3 in scaled variables
    freeze_orders: float = 3.0  # freeze the limiter after this many orders of residual drop
    freeze_on_stall: bool = True  # also when the residual, already down freeze_stall_orders, has not
    # halved over five steps (limiter chatter); not earlier: a stall at 1e-2 on the blow-off nozzle
    # was a moving sonic front, and a limiter frozen on it was stale
    freeze_stall_orders: float = 2.0
    low_mach_fix: bool = True  # Thornber et al. 2008 velocity-jump scaling in the face states
    cfl0: float = 20.0
    cfl_max: float = 1e8
    ser_exponent: float = 1.0
    max_steps: int = 150
    residual_orders: float = 8.0  # convergence: density and energy residual down this many orders
    integral_tol: float = 1e-6  # or: mass flows and wall force steady to this (relative) ...
    integral_steps: int = 5  # ... over this many consecutive steps, with the mass imbalance below
    imbalance_tol: float = 1e-5
    max_update: float = 0.3  # largest relative change of rho or p per step (the step is scaled down)
    reject_growth: float = 5.0  # undo a step that multiplies the residual by more than this (0: never)
    cfl_cut_min: float = 0.1  # after a scaled-down step (factor alpha) CFL *= sqrt(max(alpha, this))
    gmres_rtol: float = 1e-2  # relative tolerance of the Newton-Krylov (and reuse) GMRES solves
    gmres_rtol_max: float = 0.3  # Newton-Krylov: the tolerance follows Eisenstat & Walker's choice 2
    # (SIAM J. Sci. Comput. 17, 1996), 0.9 (res_k / res_k-1)^2, between gmres_rtol and this
    newton_krylov: bool = True  # second order: GMRES on the matrix-free second-order Jacobian
    krylov_iterations: int = 20
    reuse_iterations: int = 0  # > 0: reuse the last LU factor as GMRES preconditioner (this many iterations)
    single_factor: bool = True  # Newton-Krylov: preconditioner factor in single precision
    refactor_iterations: int = 10  # Newton-Krylov: keep the preconditioner's factor while GMRES needs at most
    # this many iterations (0: factor every step)


# ---- plain data out -------------------------------------------------------------------------
@dataclass(frozen=True)
class SolveRecord:
    converged: bool
    reason: str  # why it stopped
    converged_by: str  # "residual", "integrals" or ""
    steps: int
    residual_history: tuple[float, ...]  # max(density, energy) residual relative to the first step
    seconds: float
    seconds_jacobian: float = 0.0
    seconds_linear: float = 0.0
    seconds_residual: float = 0.0
    linear_method: str = ""
    cfl_history: tuple[float, ...] = ()
    mass_imbalance: float = float("nan")  # (inflow - outflow) / inflow
    limiter_frozen_at: int | None = None


@dataclass(frozen=True, eq=False)
class BoundaryState:
    faces: np.ndarray
    velocity: np.ndarray  # (2, m)
    pressure: np.ndarray  # (m,) absolute
    density: np.ndarray
    mach: np.ndarray


@dataclass(frozen=True, eq=False)
class EulerResult:
    U: np.ndarray  # (4, C) conservative state (restart with init=U)
    velocity: np.ndarray  # (2, C)
    pressure: np.ndarray  # (C,) absolute
    density: np.ndarray
    temperature: np.ndarray
    mach: np.ndarray
    boundary: dict[str, BoundaryState]
    face_mass_flux: np.ndarray  # (F,) kg/s per radian, out of each face's owner
    mass_flow: float  # kg/s through the inlet (2 pi times the inflow per radian)
    outlet_mass_flow: float
    wall_force: float  # N, axial force of (p - outlet_pressure) on wall and centre body
    record: SolveRecord
    gas: IdealGas = field(default_factory=IdealGas)

    @property
    def total_pressure(self) -> np.ndarray:
        g = self.gas.gamma
        return self.pressure * (1.0 + 0.5 * (g - 1.0) * self.mach**2) ** (g / (g - 1.0))


# ---- gas relations on (4, m) arrays ---------------------------------------------------------
def primitive(U: np.ndarray, g: float) -> np.ndarray:
    rho = U[0]
    u, v = U[1] / rho, U[2] / rho
    p = (g - 1.0) * (U[3] - 0.5 * rho * (u * u + v * v))
    return np.stack([rho, u, v, p])


def conservative(W: np.ndarray, g: float) -> np.ndarray:
    rho, u, v, p = W
    return np.stack([rho, rho * u, rho * v, p / (g - 1.0) + 0.5 * rho * (u * u + v * v)])


def hllc_flux(WL: np.ndarray, WR: np.ndarray, n: np.ndarray, g: float, low_mach_fix: bool = False) -> np.ndarray:
    """HLLC flux (4, m) per unit face area for primitive states WL, WR (4, m), unit normals n (2, m)
    pointing from L to R (Toro, Spruce & Speares 1994; Toro, Riemann Solvers, 3rd ed., sec. 10.4)."""
    rL, uL, vL, pL = WL
    rR, uR, vR, pR = WR
    nx, nr = n
    if low_mach_fix:
        cL0, cR0 = np.sqrt(g * pL / rL), np.sqrt(g * pR / rR)
        z = np.minimum(1.0, np.maximum(np.hypot(uL, vL) / cL0, np.hypot(uR, vR) / cR0))
        um, vm = 0.5 * (uL + uR), 0.5 * (vL + vR)
        du, dv = 0.5 * z * (uL - uR), 0.5 * z * (vL - vR)
        uL, uR, vL, vR = um + du, um - du, vm + dv, vm - dv
    cL, cR = np.sqrt(g * pL / rL), np.sqrt(g * pR / rR)
    qL, qR = uL * nx + vL * nr, uR * nx + vR * nr
    EL = pL / (g - 1.0) + 0.5 * rL * (uL * uL + vL * vL)
    ER = pR / (g - 1.0) + 0.5 * rR * (uR * uR + vR * vR)
    # Roe averages for the wave speeds (Einfeldt 1988)
    sL, sR = np.sqrt(rL), np.sqrt(rR)
    wl, wr = sL / (sL + sR), sR / (sL + sR)
    ut, vt = wl * uL + wr * uR, wl * vL + wr * vR
    Ht = wl * (EL + pL) / rL + wr * (ER + pR) / rR
    ct = np.sqrt(np.maximum((g - 1.0) * (Ht - 0.5 * (ut * ut + vt * vt)), 1e-300))
    qt = ut * nx + vt * nr
    SL = np.minimum(qL - cL, qt - ct)
    SR = np.maximum(qR + cR, qt + ct)
    mL, mR = rL * (SL - qL), rR * (SR - qR)
    Ss = (pR - pL + mL * qL - mR * qR) / (mL - mR)

    FL = np.stack([rL * qL, rL * uL * qL + pL * nx, rL * vL * qL + pL * nr, (EL + pL) * qL])
    FR = np.stack([rR * qR, rR * uR * qR + pR * nx, rR * vR * qR + pR * nr, (ER + pR) * qR])

    def star_flux(F, r, u, v, p, E, q, S, m):
        f = m / (S - Ss)  # rho_K (S_K - q_K) / (S_K - S*)
        Us = np.stack([f, f * (u + (Ss - q) * nx), f * (v + (Ss - q) * nr), f * (E / r + (Ss - q) * (Ss + p / m))])
        Uk = np.stack([r, r * u, r * v, E])
        return F + S * (Us - Uk)

    FsL = star_flux(FL, rL, uL, vL, pL, EL, qL, SL, mL)
    FsR = star_flux(FR, rR, uR, vR, pR, ER, qR, SR, mR)
    return np.where(SL >= 0, FL, np.where(Ss >= 0, FsL, np.where(SR > 0, FsR, FR)))


# ---- the discrete problem on one mesh -------------------------------------------------------
class _Problem:
    def __init__(self, mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, p_out: float, settings: EulerSettings):
        self.mesh, self.gas, self.inlet, self.p_out, self.s = mesh, gas, inlet, float(p_out), settings
        g = gas.gamma
        C = mesh.n_cells
        self.C = C
        self.fi = mesh.interior
        self.P, self.N = mesh.owner[self.fi], mesh.neighbour[self.fi]
        self.fb = mesh.boundary_faces
        self.Pb = mesh.owner[self.fb]
        kind = np.full(mesh.n_faces, -1)
        self.groups = {}
        for name, faces in mesh.boundary.items():
            code = {"inlet": 0, "outlet": 1}.get(name, 2)
            kind[faces] = code
            self.groups[name] = faces
        unknown = set(mesh.boundary) - {"inlet", "outlet", *WALL_KINDS}
        if unknown:
            raise ValueError(f"no Euler boundary condition for groups {sorted(unknown)}")
        self.bkind = kind[self.fb]
        self.n = mesh.face_normal.T.copy()  # (2, F)
        self.A = mesh.face_area
        self.V = mesh.cell_volume
        self.Acell = mesh.cell_area
        xc = mesh.cell_centroid
        xf = mesh.face_centroid
        self.dP = (xf[self.fi] - xc[self.P]).T  # (2, nfi)
        self.dN = (xf[self.fi] - xc[self.N]).T
        self.db = (xf[self.fb] - xc[self.Pb]).T
        # least-squares gradient (numerics.gradients): neighbours through interior faces, every boundary
        # face centre as a neighbour carrying the ghost-side face value
        grad_op = least_squares_gradient(mesh)
        self.G = grad_op.G
        self.Gb = tuple(B[:, self.fb].tocsr() for B in grad_op.B)  # (C, boundary faces in fb order)
        # limiter epsilon: (K h / L)^3 in variables scaled by the inlet total state
        p0, T0 = inlet.total_pressure, inlet.total_temperature
        rho0 = p0 / (gas.gas_constant * T0)
        c0 = math.sqrt(g * gas.gas_constant * T0)
        self.scale = np.array([rho0, c0, c0, p0])
        L = float(np.max(mesh.nodes[:, 1]))
        h = np.sqrt(self.Acell)
        self.eps2 = ((settings.limiter_k * h / L) ** 3)[None, :] * self.scale[:, None] ** 2
        self.cons_scale = np.array([rho0, rho0 * c0, rho0 * c0, p0 / (g - 1.0)])
        self._pattern = None
        self.frozen_phi = None
        from .ordering import nested_dissection

        self.pos = np.empty(C, np.int64)  # position of each cell in the nested-dissection order
        self.pos[nested_dissection(mesh)] = np.arange(C)

    # ---- boundary ghost states ----------------------------------------------------------
    def ghost(self, WL: np.ndarray) -> np.ndarray:
        """Ghost primitive states (4, nb) from the interior face states at the boundary faces."""
        g, R = self.gas.gamma, self.gas.gas_constant
        nx, nr = self.n[:, self.fb]
        rho, u, v, p = WL
        WG = np.empty_like(WL)
        # walls, centre body, axis: mirror
        un = u * nx + v * nr
        WG[0], WG[1], WG[2], WG[3] = rho, u - 2 * un * nx, v - 2 * un * nr, p
        # outlet: characteristic state. Entropy, tangential velocity and the outgoing Riemann
        # invariant J+ = u_n + 2c/(g-1) come from inside; the pressure is the back pressure, but
        # not below the sonic pressure p*(J+, s) at which the normal velocity reaches the sound
        # speed (a choked exit cannot expand further in the exit plane). At a supersonic normal
        # Mach number the state is extrapolated. p* equals the interior pressure at M_n = 1, so
        # the ghost state is continuous in the interior state: no switching at a sonic exit.
        o = self.bkind == 1
        ro, po, uno = rho[o], p[o], un[o]
        K = po / ro**g  # entropy
        co = np.sqrt(g * po / ro)
        Jp = uno + 2.0 * co / (g - 1.0)
        cs = np.maximum((g - 1.0) / (g + 1.0) * Jp, 1e-12 * co)
        p_star = K * (cs * cs / (g * K)) ** (g / (g - 1.0))
        sub = uno < co
        pb = np.where(sub, np.maximum(self.p_out, p_star), po)
        rb = (pb / K) ** (1.0 / g)
        unb = np.where(sub, Jp - 2.0 / (g - 1.0) * np.sqrt(g * pb / rb), uno)
        WG[0, o], WG[3, o] = rb, pb
        WG[1, o] = u[o] + (unb - uno) * nx[o]
        WG[2, o] = v[o] + (unb - uno) * nr[o]
        # inlet: total pressure and temperature, flow along the inward normal, p from inside
        i = self.bkind == 0
        p0, T0 = self.inlet.total_pressure, self.inlet.total_temperature
        pi = np.minimum(p[i], p0)
        M = q1d.mach_from_pressure_ratio(pi / p0, g)
        T = T0 * q1d.temperature_ratio(M, g)
        speed = M * np.sqrt(g * R * T)
        WG[0, i] = pi / (R * T)
        WG[1, i], WG[2, i] = -speed * nx[i], -speed * nr[i]
        WG[3, i] = pi
        return WG

    # ---- reconstruction ---------------------------------------------------------------------
    def gradients(self, W: np.ndarray, Wb: np.ndarray) -> np.ndarray:
        """(4, 2, C) least-squares gradients; Wb: values at the boundary face centres."""
        out = np.empty((4, 2, self.C))
        for k in range(2):
            out[:, k] = (self.G[k] @ W.T + self.Gb[k] @ Wb.T).T
        return out

    def limiter(self, W: np.ndarray, Wb: np.ndarray, grad: np.ndarray) -> np.ndarray:
        """(4, C) Venkatakrishnan limiter values."""
        C = self.C
        Wmax, Wmin = W.copy(), W.copy()
        for k in range(4):
            for cells, vals in ((self.P, W[k, self.N]), (self.N, W[k, self.P]), (self.Pb, Wb[k])):
                np.maximum.at(Wmax[k], cells, vals)
                np.minimum.at(Wmin[k], cells, vals)
        phi = np.ones((4, C))
        for cells, dx in ((self.P, self.dP), (self.N, self.dN), (self.Pb, self.db)):
            d2 = grad[:, 0, cells] * dx[0] + grad[:, 1, cells] * dx[1]
            d1 = np.where(d2 > 0, Wmax[:, cells] - W[:, cells], Wmin[:, cells] - W[:, cells])
            e2 = self.eps2[:, cells]
            num = (d1 * d1 + e2) * d2 + 2 * d2 * d2 * d1
            den = d2 * (d1 * d1 + 2 * d2 * d2 + d1 * d2 + e2)
            with np.errstate(divide="ignore", invalid="ignore"):
                f = np.where(np.abs(d2) > 1e-300, num / np.where(den == 0, 1.0, den), 1.0)
            f = np.clip(f, 0.0, 1.0)
            for k in range(4):
                np.minimum.at(phi[k], cells, f[k])
        return phi

    # ---- residual ---------------------------------------------------------------------------
    def residual(self, U: np.ndarray, second_order: bool, update_limiter: bool = True, phi=None):
        """R (4, C) = sum_f F.n A_f - source, the face fluxes (4, F) per unit area, the face states."""
        g = self.gas.gamma
        W = primitive(U, g)
        WLb = W[:, self.Pb]
        if second_order:
            Wb0 = 0.5 * (WLb + self.ghost(WLb))
            grad = self.gradients(W, Wb0)
            if phi is not None:
                pass
            elif self.frozen_phi is not None:
                phi = self.frozen_phi
            else:
                phi = self.limiter(W, Wb0, grad)
                if not update_limiter:
                    self.frozen_phi = phi
            self.last_phi = phi
            grad = grad * phi[:, None, :]
            WL = W[:, self.P] + grad[:, 0, self.P] * self.dP[0] + grad[:, 1, self.P] * self.dP[1]
            WR = W[:, self.N] + grad[:, 0, self.N] * self.dN[0] + grad[:, 1, self.N] * self.dN[1]
            WLb2 = WLb + grad[:, 0, self.Pb] * self.db[0] + grad[:, 1, self.Pb] * self.db[1]
            # positivity: fall back to first order on faces with a non-physical state
            bad = (WL[0] <= 0) | (WL[3] <= 0) | (WR[0] <= 0) | (WR[3] <= 0)
            if np.any(bad):
                WL[:, bad], WR[:, bad] = W[:, self.P[bad]], W[:, self.N[bad]]
            badb = (WLb2[0] <= 0) | (WLb2[3] <= 0)
            WLb2[:, badb] = WLb[:, badb]
            WLb = WLb2
        else:
            WL, WR = W[:, self.P], W[:, self.N]
        WG = self.ghost(WLb)
        F = np.empty((4, self.mesh.n_faces))
        F[:, self.fi] = hllc_flux(WL, WR, self.n[:, self.fi], g, self.s.low_mach_fix)
        F[:, self.fb] = hllc_flux(WLb, WG, self.n[:, self.fb], g, self.s.low_mach_fix)
        R = self._divergence(F)
        R[2] -= W[3] * self.Acell
        return R, F, (WLb, WG)

    def _divergence(self, F: np.ndarray) -> np.ndarray:
        C = self.C
        FA = F * self.A
        R = np.empty((4, C))
        own, nb = self.mesh.owner, self.N
        for k in range(4):
            R[k] = np.bincount(own, FA[k], C) - np.bincount(nb, FA[k, self.fi], C)
        return R

    # ---- Jacobian of the first-order residual -------------------------------------------------
    def jacobian(self, U: np.ndarray, diag: np.ndarray) -> sp.csc_matrix:
        """Sparse (4C, 4C) matrix diag(V/dt) + dR1/dU in scaled variables (rows and columns
        scaled by the reference conservative state), unknowns 4 * pos[cell] + k (pos: the
        nested-dissection position of the cell)."""
        g = self.gas.gamma
        s = self.cons_scale
        UL, UR, ULb = U[:, self.P], U[:, self.N], U[:, self.Pb]
        nI, nB = self.n[:, self.fi], self.n[:, self.fb]
        lm = self.s.low_mach_fix

        def fi_flux(a, b):
            return hllc_flux(primitive(a, g), primitive(b, g), nI, g, lm)

        def fb_flux(a):
            Wa = primitive(a, g)
            return hllc_flux(Wa, self.ghost(Wa), nB, g, lm)

        F0, Fb0 = fi_flux(UL, UR), fb_flux(ULb)
        dFL = np.empty((self.fi.size, 4, 4))
        dFR = np.empty((self.fi.size, 4, 4))
        dFb = np.empty((self.fb.size, 4, 4))
        for k in range(4):
            hL = 1e-7 * (np.abs(UL[k]) + s[k])
            hR = 1e-7 * (np.abs(UR[k]) + s[k])
            hb = 1e-7 * (np.abs(ULb[k]) + s[k])
            a = UL.copy(); a[k] += hL
            dFL[:, :, k] = ((fi_flux(a, UR) - F0) / hL).T
            b = UR.copy(); b[k] += hR
            dFR[:, :, k] = ((fi_flux(UL, b) - F0) / hR).T
            c = ULb.copy(); c[k] += hb
            dFb[:, :, k] = ((fb_flux(c) - Fb0) / hb).T
        AI = self.A[self.fi][:, None, None]
        AB = self.A[self.fb][:, None, None]
        # source: -d(p A_cell)/dU in the radial-momentum row
        W = primitive(U, g)
        dS = np.zeros((self.C, 4, 4))
        dS[:, 2, :] = -(g - 1.0) * self.Acell[:, None] * np.stack(
            [0.5 * (W[1] ** 2 + W[2] ** 2), -W[1], -W[2], np.ones(self.C)], axis=1)
        dS[:, np.arange(4), np.arange(4)] += diag.T
        blocks = np.concatenate([AI * dFL, AI * dFR, -AI * dFL, -AI * dFR, AB * dFb, dS])
        blocks = blocks * (s[None, None, :] / s[None, :, None])  # S^-1 J S
        data = np.bincount(self._block_map(), blocks.ravel(), self._nnz)
        return sp.csc_matrix((data, self._indices, self._indptr), shape=(4 * self.C, 4 * self.C))

    def _block_map(self) -> np.ndarray:
        if self._pattern is None:
            C = self.C
            cells = np.arange(C)
            brow = self.pos[np.concatenate([self.P, self.P, self.N, self.N, self.Pb, cells])]
            bcol = self.pos[np.concatenate([self.P, self.N, self.P, self.N, self.Pb, cells])]
            k = np.arange(4)
            rows = (4 * brow[:, None, None] + k[None, :, None]) + 0 * k[None, None, :]
            cols = (4 * bcol[:, None, None] + k[None, None, :]) + 0 * k[None, :, None]
            key = cols.ravel().astype(np.int64) * (4 * C) + rows.ravel()
            uniq, inv = np.unique(key, return_inverse=True)
            ucol, urow = uniq // (4 * C), uniq % (4 * C)
            indptr = np.zeros(4 * C + 1, np.int64)
            np.add.at(indptr, ucol + 1, 1)
            self._indptr = np.cumsum(indptr)
            self._indices = urow
            self._nnz = uniq.size
            self._pattern = inv
        return self._pattern

    def spectral(self, U: np.ndarray) -> np.ndarray:
        """sum over the faces of each cell of (|u.n| + c) A_f (for the local time step)."""
        g = self.gas.gamma
        W = primitive(U, g)
        c = np.sqrt(g * W[3] / W[0])
        own = self.mesh.owner
        # face value from the owner and neighbour average (boundary: owner)
        uf = np.empty((2, self.mesh.n_faces))
        cf = np.empty(self.mesh.n_faces)
        uf[:, self.fi] = 0.5 * (W[1:3, self.P] + W[1:3, self.N])
        cf[self.fi] = 0.5 * (c[self.P] + c[self.N])
        uf[:, self.fb] = W[1:3, self.Pb]
        cf[self.fb] = c[self.Pb]
        lam = (np.abs(uf[0] * self.n[0] + uf[1] * self.n[1]) + cf) * self.A
        return np.bincount(own, lam, self.C) + np.bincount(self.N, lam[self.fi], self.C)


def _area_function(mesh: FVMesh):
    """Flow area A(x) = pi (r_wall^2 - r_body^2) from the wall (and centre-body) faces."""
    def radius(name, default):
        faces = mesh.boundary.get(name, np.zeros(0, np.int64))
        if faces.size == 0:
            return lambda x: np.full_like(x, default)
        nd = mesh.nodes[mesh.face_nodes[faces].ravel()]
        order = np.argsort(nd[:, 0], kind="stable")
        return lambda x: np.interp(x, nd[order, 0], nd[order, 1])

    rw = radius("wall", 0.0)
    rc = radius("centerbody", 0.0)
    return lambda x: np.pi * (rw(x) ** 2 - rc(x) ** 2)


def initial_state(mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, p_out: float) -> np.ndarray:
    """Quasi-1D isentropic state along x (local flow area from the mesh walls), axial velocity.

    Choked without a shock, the state uses a sonic area INITIAL_SONIC_AREA times the minimum
    area: quasi-1D flow is exactly sonic along a constant-area throat (a straight nozzle tip),
    the singular point of the steady equations, and from there the solver had to move the
    transition to the supersonic flow of the real two-dimensional throat (sonic line upstream
    of the minimum section, discharge coefficient below one: Kliegel & Levine 1969) one cell
    column per step (30 steps at 5.4k cells, 60 at 21.7k on the blow-off nozzle).
    """
    g, R = gas.gamma, gas.gas_constant
    area = _area_function(mesh)
    x0, x1 = mesh.nodes[:, 0].min(), mesh.nodes[:, 0].max()
    xs = np.linspace(x0, x1, 801)
    A = area(xs)
    p0, T0 = inlet.total_pressure, inlet.total_temperature
    sol = q1d.quasi_one_dim(xs, A, p0, T0, p_out, R, g)
    Ms, ps, Ts = sol.mach, sol.pressure, sol.temperature
    if sol.regime != "subsonic" and sol.x_shock is None:
        it = int(np.argmin(A))
        down = np.arange(A.size) > it
        Ms = q1d.mach_from_area_ratio(A / (INITIAL_SONIC_AREA * A[it]), g, supersonic=down)
        ps, Ts = p0 * q1d.pressure_ratio(Ms, g), T0 * q1d.temperature_ratio(Ms, g)
    xc = mesh.cell_centroid[:, 0]
    M = np.interp(xc, xs, Ms)
    p = np.interp(xc, xs, ps)
    T = np.interp(xc, xs, Ts)
    rho = p / (R * T)
    u = M * np.sqrt(g * R * T)
    return conservative(np.stack([rho, u, np.zeros_like(u), p]), g)


class _Linear:
    """Linear solves of the pseudo-time steps: SuperLU on the nested-dissection order of the
    cells. ``reuse_iterations`` > 0: a factor is reused as the preconditioner of GMRES in later
    first-order steps for as long as GMRES reaches the tolerance within that many iterations.
    (SuperLU's incomplete LU, tried as a GMRES preconditioner, hit exactly singular factors on
    these matrices and needed 45-100 iterations where it worked: not offered.)"""

    def __init__(self, rtol: float, reuse_iterations: int = 0, refactor_iterations: int = 0):
        self.rtol, self.reuse, self.refactor = rtol, reuse_iterations, refactor_iterations
        self.lu = None
        self.prec = None
        self.single = False
        self.last_iterations = None  # GMRES iterations of the last Newton-Krylov solve
        self.last_converged = False
        self.factorizations = 0
        self.gmres_iterations = 0

    def _factor(self, Amat, single: bool = False):
        import scipy.sparse.linalg as spla

        self.factorizations += 1
        # the matrix comes in nested-dissection order: keep it, pivot on the diagonal when it
        # is within a factor 100 of the column's largest entry (SuperLU's threshold pivoting).
        # As a preconditioner only, the factor is computed in single precision (0.6 against
        # 0.9-1.0 s at 21.7k cells; GMRES corrects its 1e-4 relative error)
        A = Amat.astype(np.float32) if single else Amat
        lu = spla.splu(A, permc_spec="NATURAL", diag_pivot_thresh=0.01, options=dict(SymmetricMode=True))
        self.lu = lu
        self.prec = (lambda v: lu.solve(v.astype(np.float32)).astype(np.float64)) if single else lu.solve
        self.single = single

    def solve(self, Amat: sp.csc_matrix, b: np.ndarray):
        if self.lu is not None and self.reuse > 0 and not self.single:
            x, n_it = _gmres_right(lambda v: Amat @ v, self.lu.solve, b, self.rtol, self.reuse)
            self.gmres_iterations += n_it
            r = float(np.linalg.norm(Amat @ x - b))
            if r <= self.rtol * float(np.linalg.norm(b)):
                return x, "superlu (nested dissection) + gmres"
        self._factor(Amat)
        return self.lu.solve(b), "superlu (nested dissection)"

    def needs_factor(self) -> bool:
        """Newton-Krylov: factor the first-order matrix again? Not while the factor of an earlier
        step still brought GMRES to the tolerance within ``refactor_iterations`` iterations."""
        return (self.prec is None or self.refactor <= 0 or not self.last_converged
                or self.last_iterations > self.refactor)

    def newton_krylov(self, Amat, b, prob, U, R, diag, iterations: int, rtol: float | None = None):
        """GMRES on the Jacobian of the second-order residual, applied matrix-free by finite
        differences of the residual (limiter held at its value for U), preconditioned by the
        LU factor of the first-order Jacobian (Knoll & Keyes 2004, J. Comput. Phys. 193,
        "Jacobian-free Newton-Krylov methods: a survey of approaches and applications").
        ``Amat`` None: reuse the factor of an earlier step."""
        reused = Amat is None
        if not reused:
            self._factor(Amat, single=self.single_factor)
        C, sc, pos = prob.C, prob.cons_scale[:, None], prob.pos
        phi = prob.last_phi
        Un = U / sc
        unorm = float(np.linalg.norm(Un)) / math.sqrt(Un.size)

        def matvec(v):
            dU = v.reshape(C, 4)[pos].T * sc
            vn = float(np.linalg.norm(v)) / math.sqrt(v.size)
            if vn == 0.0:
                return np.zeros_like(v)
            eps = 1e-7 * (1.0 + unorm) / vn
            Rp, _, _ = prob.residual(U + eps * dU, True, phi=phi)
            out = np.empty((C, 4))
            out[pos] = (((Rp - R) / eps + diag * dU) / sc).T
            return out.ravel()

        tol = self.rtol if rtol is None else rtol
        x, n_it, ok = _gmres_right(matvec, self.prec, b, tol, iterations, report=True)
        self.gmres_iterations += n_it
        self.last_iterations, self.last_converged = n_it, ok
        if not ok and not reused and self.single:
            # a fresh single-precision factor that does not bring GMRES to the tolerance: the
            # matrix is too ill-conditioned for it (low Mach numbers without the low-Mach fix);
            # the later factors are computed in double precision
            self.single_factor = False
        self.reuses = getattr(self, "reuses", 0) + reused
        return x, "newton-krylov (gmres, first-order LU preconditioner)"


def _gmres_right(matvec, prec, b: np.ndarray, rtol: float, m: int, report: bool = False):
    """Right-preconditioned GMRES(m), one cycle, classical Gram-Schmidt applied twice (as
    accurate as modified Gram-Schmidt, in two matrix-vector products per iteration; Giraud,
    Langou & Rozloznik 2005, Comput. Math. Appl. 50) (Saad & Schultz 1986, SIAM J. Sci. Stat.
    Comput. 7). Starts from x0 = prec(b). Returns x and the iterations used (and whether the
    tolerance was reached, with ``report``)."""
    x0 = prec(b)
    r = b - matvec(x0)
    beta = float(np.linalg.norm(r))
    bnorm = float(np.linalg.norm(b)) or 1.0
    if beta <= rtol * bnorm:
        return (x0, 0, True) if report else (x0, 0)
    V = np.empty((m + 1, b.size))
    Z = np.empty((m, b.size))
    H = np.zeros((m + 1, m))
    V[0] = r / beta
    k_used = 0
    ok = False
    for k in range(m):
        Z[k] = prec(V[k])
        w = matvec(Z[k])
        h = V[: k + 1] @ w
        w -= h @ V[: k + 1]
        h2 = V[: k + 1] @ w
        w -= h2 @ V[: k + 1]
        H[: k + 1, k] = h + h2
        H[k + 1, k] = float(np.linalg.norm(w))
        k_used = k + 1
        e = np.zeros(k + 2)
        e[0] = beta
        y, *_ = np.linalg.lstsq(H[: k + 2, : k + 1], e, rcond=None)
        res = float(np.linalg.norm(H[: k + 2, : k + 1] @ y - e))
        ok = res <= rtol * bnorm
        if ok or H[k + 1, k] == 0.0:
            break
        V[k + 1] = w / H[k + 1, k]
    x = x0 + y @ Z[:k_used]
    return (x, k_used, ok) if report else (x, k_used)


def _wall_force(prob: _Problem, F: np.ndarray) -> float:
    """Axial force on wall and centre body of (p - p_out): from the momentum flux through the faces."""
    tot = 0.0
    for name in ("wall", "centerbody"):
        f = prob.groups.get(name)
        if f is None or f.size == 0:
            continue
        p_face = F[1, f] * prob.n[0, f] + F[2, f] * prob.n[1, f]  # mass flux is zero: F_mom = p n
        tot += float(np.sum((p_face - prob.p_out) * prob.n[0, f] * prob.A[f]))
    return 2 * math.pi * tot


def residual_of(mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, outlet_pressure: float, U: np.ndarray,
                settings: EulerSettings = EulerSettings()) -> tuple[np.ndarray, np.ndarray]:
    """Residual (4, C) of state U and the face fluxes times face areas (4, F) (for checks)."""
    prob = _Problem(mesh, gas, inlet, outlet_pressure, settings)
    R, F, _ = prob.residual(U, settings.second_order)
    return R, F * mesh.face_area


def solve_euler(mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, outlet_pressure: float,
                settings: EulerSettings = EulerSettings(), init=None, progress=None) -> EulerResult:
    """Steady axisymmetric Euler solution on ``mesh`` (groups inlet, outlet, wall, axis, centerbody).

    ``outlet_pressure``: static back pressure [Pa absolute]. ``init``: a previous EulerResult or
    a (4, C) conservative state; default the quasi-1D isentropic state. ``progress(step, res,
    cfl)`` is called after each step. Non-convergence is reported in ``record``, not raised.
    """
    t_start = time.perf_counter()
    s = settings
    g = gas.gamma
    prob = _Problem(mesh, gas, inlet, outlet_pressure, s)
    if init is None:
        U = initial_state(mesh, gas, inlet, outlet_pressure)
    else:
        U = np.array(init.U if isinstance(init, EulerResult) else init, float)
    linear = _Linear(s.gmres_rtol, s.reuse_iterations, s.refactor_iterations)
    linear.single_factor = s.single_factor
    hist, cfls = [], []
    integ = []  # (mdot_in, mdot_out, wall force)
    t_jac = t_lin = t_res = 0.0
    R0 = None
    cfl = s.cfl0
    converged, by, reason = False, "", f"not converged in {s.max_steps} steps"
    frozen_at = None
    lin_name = ""
    second = s.second_order
    steady_count = 0
    step = 0
    eta_prev = None
    U_prev, rel_prev, cfl_prev, rejected = None, float("nan"), cfl, 0
    for step in range(1, s.max_steps + 1):
        t0 = time.perf_counter()
        R, F, _ = prob.residual(U, second, update_limiter=(frozen_at is None))
        t_res += time.perf_counter() - t0
        rn = np.array([np.linalg.norm(R[0]), np.linalg.norm(R[3])])
        if not np.all(np.isfinite(rn)):
            reason = f"non-finite residual at step {step}"
            break
        if R0 is None:
            R0 = np.maximum(rn, 1e-300)
        rel = float(np.max(rn / R0))
        hist.append(rel)
        cfls.append(cfl)
        if progress is not None:
            progress(step, rel, cfl)
        # residual-based backtracking: a step that multiplied the residual by more than
        # reject_growth (5) is undone, and retried from the previous state at a quarter of its CFL
        # number with a fresh preconditioner (the rejected attempt counts as a step)
        if (s.reject_growth > 0 and U_prev is not None and np.isfinite(rel_prev)
                and rel > s.reject_growth * rel_prev):
            U, cfl = U_prev, max(0.25 * cfl_prev, 0.1)
            U_prev = None
            linear.prec = None
            rejected += 1
            continue
        # integral quantities of the current state
        mf = F[0] * prob.A
        fin, fout = prob.groups["inlet"], prob.groups["outlet"]
        m_in, m_out = -2 * math.pi * mf[fin].sum(), 2 * math.pi * mf[fout].sum()
        integ.append((m_in, m_out, _wall_force(prob, F)))
        if rel <= 10 ** (-s.residual_orders):
            converged, by, reason = True, "residual", f"residual down {s.residual_orders:g} orders"
            break
        if len(integ) >= 2:
            a, b = np.array(integ[-1]), np.array(integ[-2])
            ref = np.array([abs(m_in), abs(m_in), max(abs(a[2]), 1e-30)])
            change = np.max(np.abs(a - b) / ref)
            imb = abs(m_in - m_out) / abs(m_in) if m_in else np.inf
            steady_count = steady_count + 1 if (change < s.integral_tol and imb < s.imbalance_tol) else 0
            if steady_count >= s.integral_steps:
                converged, by = True, "integrals"
                reason = f"mass flows and wall force steady to {s.integral_tol:g} over {s.integral_steps} steps"
                break
        stalled = (s.freeze_on_stall and len(hist) > 10 and rel <= 10 ** (-s.freeze_stall_orders)
                   and min(hist[-5:]) > 0.5 * min(hist[:-5]))
        if second and frozen_at is None and (rel <= 10 ** (-s.freeze_orders) or stalled):
            frozen_at = step
            prob.residual(U, second, update_limiter=False)  # stores the limiter of this state
        # implicit pseudo-time step
        t0 = time.perf_counter()
        diag = np.broadcast_to(prob.spectral(U) / cfl, (4, prob.C))  # V / dt with dt = CFL V / sum (|u.n| + c) A
        nk = s.newton_krylov and second
        J = prob.jacobian(U, diag) if (not nk or linear.needs_factor()) else None
        t_jac += time.perf_counter() - t0
        t0 = time.perf_counter()
        b = np.empty((prob.C, 4))
        b[prob.pos] = -(R / prob.cons_scale[:, None]).T
        if nk:
            eta = s.gmres_rtol
            if len(hist) >= 2 and s.gmres_rtol_max > s.gmres_rtol:
                eta = 0.9 * (hist[-1] / hist[-2]) ** 2
                if eta_prev is not None and 0.9 * eta_prev**2 > 0.1:  # Eisenstat-Walker safeguard
                    eta = max(eta, 0.9 * eta_prev**2)
                eta = min(s.gmres_rtol_max, max(s.gmres_rtol, eta))
            eta_prev = eta
            x, lin_name = linear.newton_krylov(J, b.ravel(), prob, U, R, diag, s.krylov_iterations, eta)
        else:
            x, lin_name = linear.solve(J, b.ravel())
        t_lin += time.perf_counter() - t0
        dU = x.reshape(prob.C, 4)[prob.pos].T * prob.cons_scale[:, None]
        # limit the relative change of density and pressure
        W = primitive(U, g)
        Wn = primitive(U + dU, g)
        worst = max(float(np.max(np.abs(Wn[0] - W[0]) / W[0])), float(np.max(np.abs(Wn[3] - W[3]) / W[3])))
        alpha = 1.0 if (np.isfinite(worst) and worst <= s.max_update) else (s.max_update / worst if np.isfinite(worst) else 0.1)
        U_prev, rel_prev, cfl_prev = U, rel, cfl
        U = U + alpha * dU
        Wn = primitive(U, g)
        if np.any(Wn[0] <= 0) or np.any(Wn[3] <= 0):
            U = U - alpha * dU
            cfl = max(cfl * 0.1, 0.1)
            continue
        # switched evolution relaxation (Mulder & van Leer 1985)
        # switched evolution relaxation (Mulder & van Leer 1985), but after a step that had to be
        # scaled down the CFL number is cut by sqrt(alpha): the SER value alone keeps a CFL number
        # whose Newton steps are mostly thrown away (near a sonic front, where the steady
        # Jacobian is nearly singular, alpha fell to 1e-2..1e-3 for 30 steps)
        cfl_ser = float(min(s.cfl_max, s.cfl0 * (1.0 / max(rel, 1e-300)) ** s.ser_exponent))
        cfl = cfl_ser if alpha >= 1.0 else min(cfl_ser, cfl * math.sqrt(max(alpha, s.cfl_cut_min)))

    R, F, (WLb, WG) = prob.residual(U, second, update_limiter=(frozen_at is None))
    W = primitive(U, g)
    Rg = gas.gas_constant
    T = W[3] / (W[0] * Rg)
    c = np.sqrt(g * W[3] / W[0])
    mach = np.hypot(W[1], W[2]) / c
    mf = F[0] * prob.A
    fin, fout = prob.groups["inlet"], prob.groups["outlet"]
    m_in, m_out = -2 * math.pi * float(mf[fin].sum()), 2 * math.pi * float(mf[fout].sum())
    # boundary states: average of the interior face state and its ghost; on reflecting
    # boundaries the pressure is the one carried by the momentum flux (HLLC star pressure)
    bpos = np.full(mesh.n_faces, -1)
    bpos[prob.fb] = np.arange(prob.fb.size)
    Wf = 0.5 * (WLb + WG)
    refl = prob.bkind == 2
    fr = prob.fb[refl]
    Wf[3, refl] = F[1, fr] * prob.n[0, fr] + F[2, fr] * prob.n[1, fr]
    boundary = {}
    for name, faces in prob.groups.items():
        k = bpos[faces]
        wf = Wf[:, k]
        boundary[name] = BoundaryState(faces, wf[1:3].copy(), wf[3].copy(), wf[0].copy(),
                                       np.hypot(wf[1], wf[2]) / np.sqrt(g * wf[3] / wf[0]))
    face_mass = mf.copy()
    record = SolveRecord(
        converged=converged, reason=reason, converged_by=by, steps=step, residual_history=tuple(hist),
        seconds=time.perf_counter() - t_start, seconds_jacobian=t_jac, seconds_linear=t_lin, seconds_residual=t_res,
        linear_method=(f"{lin_name}: {linear.factorizations} factorizations, {linear.gmres_iterations} GMRES iterations"
                       + (f", factor reused in {linear.reuses} steps" if getattr(linear, "reuses", 0) else "")
                       + (f", {rejected} steps rejected" if rejected else "")),
        cfl_history=tuple(cfls),
        mass_imbalance=(m_in - m_out) / m_in if m_in else float("nan"), limiter_frozen_at=frozen_at,
    )
    return EulerResult(U, W[1:3].copy(), W[3].copy(), W[0].copy(), T, mach, boundary, face_mass, m_in, m_out,
                       _wall_force(prob, F), record, gas)


__all__ = ["IdealGas", "TotalInlet", "EulerSettings", "SolveRecord", "BoundaryState", "EulerResult",
           "hllc_flux", "primitive", "conservative", "initial_state", "residual_of", "solve_euler"]


# ---- the registered solver: a case in, a FlowResult out --------------------------------------
def solve(case, profile, mesh: FVMesh, progress=None):
    """The compressible flow of an ideal-gas ``case`` (registered as solver kind "euler")."""
    from dataclasses import asdict

    from .base import FlowResult, SolveRecord as Record, boundary_state

    amb = case.ambient_pressure
    gas = IdealGas.from_fluid(case.fluid)
    inlet = TotalInlet(case.inlet.total_pressure + amb, case.inlet.total_temperature)
    p_back = (case.outlet.pressure or 0.0) + amb
    settings = EulerSettings(max_steps=case.solver.max_steps)
    report_every = max(1, settings.max_steps // 30)

    def step_line(step, rel, cfl):
        if progress is not None and (step == 1 or step % report_every == 0):
            progress("solve", f"euler step {step}: residual {rel:.2e} of the first, CFL {cfl:.3g}")

    res = solve_euler(mesh, gas, inlet, p_back, settings, progress=step_line)
    rec = res.record
    boundary = {}
    for name, b in res.boundary.items():
        boundary[name] = boundary_state(mesh, b.faces, b.velocity, b.pressure - amb, b.density, res.face_mass_flux)
    criterion = (f"{rec.reason}" if rec.converged else
                 f"not converged: {rec.reason} (needs the residual down {settings.residual_orders:g} orders, or mass "
                 f"flows and wall force steady to {settings.integral_tol:g})")
    record = Record(
        solver="euler", converged=rec.converged, iterations=rec.steps,
        residual=rec.residual_history[-1] if rec.residual_history else float("nan"),
        mass_imbalance=rec.mass_imbalance, seconds=rec.seconds, method=rec.linear_method, fallback=None,
        criterion=criterion, residual_history=rec.residual_history, seconds_assembly=rec.seconds_jacobian,
        seconds_solve=rec.seconds_linear, settings=asdict(settings),
    )
    return FlowResult(
        solver="euler", velocity=res.velocity, pressure=res.pressure - amb, density=res.density, boundary=boundary,
        face_mass_flux=res.face_mass_flux, record=record, ambient_pressure=amb, compressible=True,
        temperature=res.temperature, mach=res.mach,
        extra_fields={"total_pressure_ratio": res.total_pressure / inlet.total_pressure},
    )
