"""The discrete steady Euler equations on one mesh: boundary ghost states, limited second-order
reconstruction, HLLC face fluxes and the cell residual, as a pure function of the primitive state.

Equations (per radian, meridional plane (x, r)): d/dt (r U) + div (r F(U)) = (0, 0, p, 0).
Integrated over a cell: ``V dU/dt + sum_faces F.n A_f = (0, 0, p A_cell, 0)`` with A_f = r_f L_f
(mesh.face_area), V = r_c A_cell (mesh.cell_volume) and A_cell the meridional area. A uniform
flow is preserved exactly: for a closed polygon sum_f n L r_f = (0, A_cell).

Reconstruction (second order). Primitive variables W = (rho, u_x, u_r, p) are extrapolated from
each cell c to the centre of each of its faces with the least-squares gradient (numerics.gradients;
the boundary faces are neighbours carrying 0.5 (W_c + ghost)). On an interior face seen from c,
with o the cell across it, e = x_o - x_c and d = x_face - x_c, the extrapolation g = grad W_c . d
is multiplied by a limiter of van Albada's form (van Albada, van Leer & Roberts 1982, Astron.
Astrophys. 108) on the difference towards the face, dp = W_o - W_c, and the one away from it,
dm = 2 grad W_c . e - dp (so that grad W_c . e is their mean):

    psi = (y + eps) / (dm^2 + dp^2 + eps),  y = 2 dm dp  (y >= 0);  eps^2 / (eps - y) / (...)  (y < 0),

the second branch continuing the first with the same value and slope at y = 0 and tending to 0 at
extrema. psi = 1 for linear data on any mesh (dm = dp), 1 - psi = O(h^2) in smooth flow, psi ~ 0
on the upwind side of a jump; eps = (K h / L)^3 times the square of the variable's scale
(Venkatakrishnan 1995, J. Comput. Phys. 118): differences below that are not limited. Unlike a
cell-based min/max limiter it has no switching: the residual of the limited scheme is
differentiable, and Newton's method converges on it with a shock in the field. (A first version
whose smooth branch did not vanish at y = 0 had psi = 1.05 in near-uniform regions: a first-order
error, total-pressure order 1.2 instead of 1.9.) Boundary faces extrapolate unlimited. A face
whose reconstructed state is not physical (rho or p <= 0) falls back to first order on both sides.

Fluxes: HLLC, blended towards HLL at shocks (gas.hllc_flux; the cell sensor ``shock_weight``);
the momentum fluxes carry p - p_out (and the source (p - p_out) A_cell), which leaves the residual
unchanged (sum_f n_r A_f = A_cell) and keeps round-off out of the momentum balance of slow flows.

Boundaries by ghost states built from the interior face state: inlet total pressure and total
temperature with the flow normal to the plane (static pressure from inside); outlet by
characteristics (entropy, tangential velocity and the outgoing Riemann invariant from inside, the
back pressure but not below the sonic pressure of those invariants; the interior state when the
normal Mach number is supersonic); walls, centre body and axis mirror the velocity.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ...mesh import FVMesh
from ...numerics.gradients import least_squares_gradient
from .. import onedim_gas as q1d
from .gas import FluxOptions, IdealGas, TotalInlet, hllc_flux

WALL_KINDS = ("wall", "centerbody", "axis")
INLET, OUTLET, MIRROR = 0, 1, 2  # boundary-face kinds
BOUNDARY_PSI = 1.0


@dataclass(frozen=True, eq=False)
class Evaluation:
    """The residual of one state and what its Jacobian needs (all arrays, nothing mutated)."""

    W: np.ndarray  # (4, C) primitive state
    R: np.ndarray  # (4, C) residual: sum of F.n A over the faces minus the source
    F: np.ndarray  # (4, F) face fluxes per unit area
    Wside: np.ndarray  # (4, S) reconstructed state on each face side
    WG: np.ndarray  # (4, nb) ghost states of the boundary faces
    Wb0: np.ndarray  # (4, nb) boundary-face values used by the gradients
    psi: np.ndarray  # (4, S) limiter (1 on boundary sides; 0 where first order)
    dpsi_a: np.ndarray  # (4, S) g dpsi/da
    dpsi_b: np.ndarray  # (4, S) g dpsi/db
    theta: np.ndarray | None  # (n_interior,) weight of HLL in the interior fluxes from the shock sensor


class Scheme:
    """Geometry, boundary kinds and the discrete operator of one mesh, gas and operating point.

    Face sides: ``S = 2 n_interior + n_boundary``; side s < n_interior is the owner side of
    interior face s, the next n_interior the neighbour sides, then the boundary faces (owner)."""

    def __init__(self, mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, p_out: float, limiter_k: float = 5.0,
                 low_mach_fix: bool = True, second_order: bool = True, hll_jump: float = 0.0,
                 shock_sensor: float = 0.0):
        unknown = set(mesh.boundary) - {"inlet", "outlet", *WALL_KINDS}
        if unknown:
            raise ValueError(f"no Euler boundary condition for groups {sorted(unknown)}")
        self.mesh, self.gas, self.inlet, self.p_out = mesh, gas, inlet, float(p_out)
        self.second_order, self.shock_sensor = second_order, shock_sensor
        self.flux_options = FluxOptions(low_mach_fix, hll_jump, self.p_out)
        self.C = C = mesh.n_cells
        self.fi, self.fb = mesh.interior, mesh.boundary_faces
        self.P, self.N, self.Pb = mesh.owner[self.fi], mesh.neighbour[self.fi], mesh.owner[self.fb]
        self.nI, self.nB = self.fi.size, self.fb.size
        kind = np.full(mesh.n_faces, MIRROR)
        for name, code in (("inlet", INLET), ("outlet", OUTLET)):
            kind[mesh.boundary.get(name, np.zeros(0, np.int64))] = code
        self.bkind = kind[self.fb]
        self.groups = dict(mesh.boundary)
        self.n = mesh.face_normal.T.copy()  # (2, F)
        self.A = mesh.face_area
        self.V = mesh.cell_volume
        self.source_area = np.zeros(C) if mesh.planar else mesh.cell_area  # p A_cell in the radial momentum
        xc, xf = mesh.cell_centroid, mesh.face_centroid
        # face sides: cell, other cell (-1 on the boundary), face, d = x_face - x_cell, e = x_other - x_cell
        self.side_cell = np.r_[self.P, self.N, self.Pb]
        self.side_other = np.r_[self.N, self.P, np.full(self.nB, -1)]
        self.side_face = np.r_[self.fi, self.fi, self.fb]
        self.d = (xf[self.side_face] - xc[self.side_cell]).T
        e = np.zeros((2, self.side_cell.size))
        e[:, : 2 * self.nI] = (xc[self.side_other[: 2 * self.nI]] - xc[self.side_cell[: 2 * self.nI]]).T
        self.e = e
        grad = least_squares_gradient(mesh)
        self.G = grad.G
        Gb = [B[:, self.fb].tocsr() for B in grad.B]
        # each boundary face is a gradient neighbour of its owner only: one weight per face
        self.Gb = tuple(B.tocsr() for B in Gb)
        self.gb = np.stack([np.asarray(B[self.Pb, np.arange(self.nB)]).ravel() for B in Gb])  # (2, nb)
        p0, T0, g, R = inlet.total_pressure, inlet.total_temperature, gas.gamma, gas.gas_constant
        rho0 = p0 / (R * T0)
        c0 = math.sqrt(g * R * T0)
        self.scale = np.array([rho0, c0, c0, p0])  # primitive variables
        self.cons_scale = np.array([rho0, rho0 * c0, rho0 * c0, p0 / (g - 1.0)])
        L = float(np.max(mesh.nodes[:, 1]))
        h = np.sqrt(mesh.cell_area)[self.side_cell]
        self.eps = ((limiter_k * h / L) ** 3)[None, :] * self.scale[:, None] ** 2  # (4, S)

    # ---- boundary ghost states ----------------------------------------------------------
    def ghost(self, WL: np.ndarray, faces: slice | np.ndarray = slice(None)) -> np.ndarray:
        """Ghost primitive states (4, m) from interior states at boundary faces ``faces`` (index
        into the boundary-face list, in any repetition: the derivative code stacks them)."""
        g, R = self.gas.gamma, self.gas.gas_constant
        kind = self.bkind[faces]
        nx, nr = self.n[:, self.fb[faces]]
        rho, u, v, p = WL
        WG = np.empty_like(WL)
        un = u * nx + v * nr
        WG[0], WG[1], WG[2], WG[3] = rho, u - 2 * un * nx, v - 2 * un * nr, p  # mirror
        # outlet: entropy, tangential velocity and J+ = u_n + 2c/(g-1) from inside; the back
        # pressure, not below the sonic pressure p*(J+, s) (p* equals the interior pressure at
        # M_n = 1: the ghost is continuous in the interior state); supersonic: the interior state
        o = kind == OUTLET
        ro, po, uno = rho[o], p[o], un[o]
        K = po / ro**g
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
        i = kind == INLET
        p0, T0 = self.inlet.total_pressure, self.inlet.total_temperature
        pi = np.minimum(p[i], p0)
        M = q1d.mach_from_pressure_ratio(pi / p0, g)
        T = T0 * q1d.temperature_ratio(M, g)
        speed = M * np.sqrt(g * R * T)
        WG[0, i] = pi / (R * T)
        WG[1, i], WG[2, i] = -speed * nx[i], -speed * nr[i]
        WG[3, i] = pi
        return WG

    def boundary_flux(self, WL: np.ndarray, faces: slice | np.ndarray = slice(None)) -> np.ndarray:
        return hllc_flux(WL, self.ghost(WL, faces), self.n[:, self.fb[faces]], self.gas.gamma, self.flux_options)

    def interior_flux(self, WL: np.ndarray, WR: np.ndarray, theta: np.ndarray | None) -> np.ndarray:
        return hllc_flux(WL, WR, self.n[:, self.fi], self.gas.gamma, self.flux_options, theta)

    # ---- residual -------------------------------------------------------------------------
    def gradients(self, W: np.ndarray, Wb0: np.ndarray) -> np.ndarray:
        """(4, 2, C) least-squares gradients; Wb0 (4, nb): values at the boundary-face centres."""
        return np.stack([(self.G[k] @ W.T + self.Gb[k] @ Wb0.T).T for k in range(2)], axis=1)

    def shock_weight(self, W: np.ndarray, grad: np.ndarray) -> np.ndarray | None:
        """Weight of HLL in each interior face flux: z^2 / (z^2 + z0^2), z the mean over the two
        cells of h |grad p| / p (about the relative pressure jump per cell: O(h) in smooth flow,
        order one at a shock), z0 = ``shock_sensor``. HLL's dissipation of shear and contact waves
        on the faces along a grid-aligned normal shock removes the odd-even rows of different
        shock strength that HLLC leaves there (streaks of total pressure behind the shock)."""
        if self.shock_sensor <= 0:
            return None
        y = np.sqrt(self.mesh.cell_area) * np.hypot(grad[3, 0], grad[3, 1]) / W[3]
        z = 0.5 * (y[self.P] + y[self.N])
        return z * z / (z * z + self.shock_sensor**2)

    def reconstruct(self, W: np.ndarray, grad: np.ndarray):
        """Face-side states (4, S) and the limiter terms of the Jacobian; grad (4, 2, C)."""
        S, nI2 = self.side_cell.size, 2 * self.nI
        Wc = W[:, self.side_cell]
        if not self.second_order:
            z = np.zeros((4, S))
            return Wc, z, z, z
        grad = grad[:, :, self.side_cell]
        gext = grad[:, 0] * self.d[0] + grad[:, 1] * self.d[1]  # (4, S) unlimited extrapolation
        a = grad[:, 0, :nI2] * self.e[0, :nI2] + grad[:, 1, :nI2] * self.e[1, :nI2]
        dp = W[:, self.side_other[:nI2]] - Wc[:, :nI2]  # the difference towards the face
        dm = 2.0 * a - dp  # the difference away from it: grad . e = (dm + dp) / 2
        eps = self.eps[:, :nI2]
        y, den = 2.0 * dm * dp, dm * dm + dp * dp + eps
        # numerator y + eps for y >= 0 (the van Albada form, exact for linear data), and its smooth
        # continuation eps^2 / (eps - y) for y < 0 (same value and slope at 0, tending to 0 at
        # extrema instead of the corner of max(y + eps, 0))
        neg = np.minimum(y, 0.0)
        num = np.where(y >= 0.0, y + eps, eps * eps / (eps - neg))
        dnum = np.where(y >= 0.0, 1.0, (eps / (eps - neg)) ** 2)
        psi = np.full((4, S), BOUNDARY_PSI)
        psi[:, :nI2] = num / den
        # derivatives with respect to dm and dp, then to a (dm = 2a - dp) and to b = dp
        ddm = (2.0 * dp * dnum * den - 2.0 * dm * num) / den**2
        ddp = (2.0 * dm * dnum * den - 2.0 * dp * num) / den**2
        dpa, dpb = np.zeros((4, S)), np.zeros((4, S))
        dpa[:, :nI2] = 2.0 * ddm * gext[:, :nI2]
        dpb[:, :nI2] = (ddp - ddm) * gext[:, :nI2]
        Ws = Wc + psi * gext
        # positivity: first order on faces with a non-physical side state
        badside = (Ws[0] <= 0) | (Ws[3] <= 0)
        if np.any(badside):
            nI = self.nI
            badf = badside[:nI] | badside[nI:nI2]
            bad = np.r_[badf, badf, badside[nI2:]]
            Ws[:, bad] = Wc[:, bad]
            psi[:, bad], dpa[:, bad], dpb[:, bad] = 0.0, 0.0, 0.0
        return Ws, psi, dpa, dpb

    def evaluate(self, W: np.ndarray) -> Evaluation:
        """Residual of the primitive state W (4, C)."""
        g, nI = self.gas.gamma, self.nI
        WLb0 = W[:, self.Pb]
        Wb0 = 0.5 * (WLb0 + self.ghost(WLb0))
        grad = self.gradients(W, Wb0)
        Ws, psi, dpa, dpb = self.reconstruct(W, grad)
        theta = self.shock_weight(W, grad)
        WLb = Ws[:, 2 * nI:]
        WG = self.ghost(WLb)
        F = np.empty((4, self.mesh.n_faces))
        F[:, self.fi] = self.interior_flux(Ws[:, :nI], Ws[:, nI : 2 * nI], theta)
        F[:, self.fb] = hllc_flux(WLb, WG, self.n[:, self.fb], g, self.flux_options)
        FA = F * self.A
        R = np.empty((4, self.C))
        for k in range(4):
            R[k] = np.bincount(self.mesh.owner, FA[k], self.C) - np.bincount(self.N, FA[k, self.fi], self.C)
        R[2] -= (W[3] - self.p_out) * self.source_area
        return Evaluation(W, R, F, Ws, WG, Wb0, psi, dpa, dpb, theta)

    def spectral(self, W: np.ndarray) -> np.ndarray:
        """Sum over the faces of each cell of (|u.n| + c) A_f (the local time step is CFL V / this)."""
        c = np.sqrt(self.gas.gamma * W[3] / W[0])
        uf = np.empty((2, self.mesh.n_faces))
        cf = np.empty(self.mesh.n_faces)
        uf[:, self.fi] = 0.5 * (W[1:3, self.P] + W[1:3, self.N])
        cf[self.fi] = 0.5 * (c[self.P] + c[self.N])
        uf[:, self.fb] = W[1:3, self.Pb]
        cf[self.fb] = c[self.Pb]
        lam = (np.abs(uf[0] * self.n[0] + uf[1] * self.n[1]) + cf) * self.A
        return np.bincount(self.mesh.owner, lam, self.C) + np.bincount(self.N, lam[self.fi], self.C)

    def mass_flows(self, F: np.ndarray) -> tuple[float, float]:
        """Mass flow in through the inlet and out through the outlet [kg/s] (full revolution)."""
        mf = F[0] * self.A * self.mesh.revolution
        return -float(mf[self.groups["inlet"]].sum()), float(mf[self.groups["outlet"]].sum())

    def wall_force(self, F: np.ndarray) -> float:
        """Axial force of (p - p_out) on wall and centre body [N], from the face momentum fluxes."""
        tot = 0.0
        for name in ("wall", "centerbody"):
            f = self.groups.get(name, np.zeros(0, np.int64))
            p_face = F[1, f] * self.n[0, f] + F[2, f] * self.n[1, f]  # no mass flux: F_mom = (p - p_out) n
            tot += float(np.sum(p_face * self.n[0, f] * self.A[f]))
        return self.mesh.revolution * tot


def gradient_matrix(scheme: Scheme) -> sp.csr_matrix:
    """The x and r gradient weights of the cell values on one sparsity pattern (complex: x + i r)."""
    return (scheme.G[0] + 1j * scheme.G[1]).tocsr()
