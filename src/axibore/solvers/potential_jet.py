"""The potential solver's service to a free-surface outlet: the flow with the jet as a streamline,
on a mesh whose nodes move, and its response to a displacement of the jet.

For a unit inlet velocity, the jet and every wall a streamline and phi = 0 on the outlet plane,
``solve(mesh)`` returns the potential's face values and tangential derivatives on the jet faces,
and the axial momentum balance of the flow in the form M(V) = M0 + M2 V^2 for a jet speed V
(pressures p = (V^2 - q^2) / 2 per unit density, the jet at p = 0):

    M = integral_outlet (p + u_x^2) dA + integral_walls p n_x dA - integral_inlet (p + u_x^2) dA.

``response(field, g)`` solves again with the same factorisation for normal velocities ``g`` on the
jet faces (the transpiration of a small normal displacement of the jet: the linearised flow on
the displaced boundary) and returns the change of the jet face values and of M0.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mesh import FVMesh
from ..names import Boundary
from ..numerics.reconstruct import BoundaryFit, boundary_fit, stencils
from .potential import BoundaryCondition, assemble, boundary_kinds

MOMENTUM_PLANES = (Boundary.INLET, Boundary.OUTLET)
MOMENTUM_WALLS = (Boundary.WALL, Boundary.CENTERBODY)


@dataclass(frozen=True, eq=False)
class JetField:
    """The unit-inflow flow on one position of the jet."""

    mesh: FVMesh
    phi: np.ndarray
    data: np.ndarray
    jet: BoundaryFit
    jet_value: np.ndarray  # phi at the jet face centres
    jet_tangential: np.ndarray  # d phi / dt at the jet face centres (t: the face tangent of the fit)
    momentum0: float  # M0
    momentum2: float  # M2 (per V^2)
    dmomentum0: np.ndarray  # d M0 / d phi (C,)
    solve_rhs: object  # the factorisation: x = solve_rhs(b)
    R: object  # the right-hand-side operator of the boundary data


# a nearby mesh's solve: GMRES (preconditioned residual) to NEARBY_RTOL, accepted where the true relative
# residual is at most NEARBY_RESIDUAL, the level the sparse LU itself reaches on these matrices (1e-11 to
# 1e-10 measured); its difference quotient divides by a step of 1e-7
NEARBY_RTOL = 1e-13
NEARBY_RESIDUAL = 1e-9
NEARBY_ITERATIONS = 10


def _nearby_solve(K, b: np.ndarray, near: JetField) -> np.ndarray | None:
    """x with a relative residual of at most NEARBY_RESIDUAL by GMRES preconditioned with ``near``'s
    factorisation, started from ``near``'s solution; None where NEARBY_ITERATIONS iterations do not
    get there."""
    import scipy.sparse.linalg as spla

    M = spla.LinearOperator(K.shape, matvec=near.solve_rhs, dtype=float)
    x, _info = spla.gmres(K, b, x0=near.phi, M=M, rtol=NEARBY_RTOL, atol=0.0, restart=NEARBY_ITERATIONS, maxiter=1)
    bn = float(np.linalg.norm(b)) or 1.0
    if not float(np.linalg.norm(K @ x - b)) <= NEARBY_RESIDUAL * bn:
        return None
    return x


class PotentialJet:
    """Flows of the potential solver on moved copies of one mesh (same topology) with a jet."""

    def __init__(self, mesh: FVMesh, jet_faces: np.ndarray):
        self.jet_faces = np.asarray(jet_faces, np.int64)
        kinds = {Boundary.INLET: BoundaryCondition("flux", -1.0), Boundary.OUTLET: BoundaryCondition("value", 0.0)}
        for name in (Boundary.WALL, Boundary.AXIS, Boundary.CENTERBODY, Boundary.JET):
            kinds[name] = BoundaryCondition("flux", 0.0)
        self.bcs = {k: v for k, v in kinds.items() if k in mesh.boundary}
        self.is_value, self.data = boundary_kinds(mesh, self.bcs)
        # fit stencils depend on the topology only
        self._stencil = {"jet": stencils(mesh, self.jet_faces)}
        for name in MOMENTUM_PLANES + MOMENTUM_WALLS:
            if name in mesh.boundary:
                self._stencil[name] = stencils(mesh, mesh.boundary[name])

    def solve(self, mesh: FVMesh, near: JetField | None = None) -> JetField:
        """The flow on ``mesh``. With ``near``, the flow of a mesh whose nodes differ by little (a
        difference quotient's step): GMRES preconditioned by ``near``'s factorisation, which converges
        in one or two iterations there, instead of a factorisation of its own (0.8 s at 90k cells);
        where it does not, the mesh gets its own."""
        import scipy.sparse.linalg as spla

        ops = assemble(mesh, self.is_value)
        b = ops.R @ self.data
        phi = _nearby_solve(ops.K, b, near) if near is not None else None
        if phi is not None:
            solve_rhs = near.solve_rhs  # the response of a nearby mesh is not asked for
        else:
            solve_rhs = spla.factorized(ops.K.tocsc())
            phi = solve_rhs(b)
        jet = boundary_fit(mesh, self.jet_faces, self.is_value, self._stencil["jet"])
        m0, m2, dm0 = self._momentum(mesh, phi)
        return JetField(mesh, phi, self.data, jet, jet.value(phi, self.data),
                        jet.Dt @ phi + jet.dt_data * self.data[self.jet_faces], m0, m2, dm0, solve_rhs, ops.R)

    def response(self, field: JetField, g: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(jet face values, M0) changes for normal velocities ``g`` (m, k) on the jet faces."""
        g = np.atleast_2d(np.asarray(g, float).T).T
        data = np.zeros((field.mesh.n_faces, g.shape[1]))
        data[self.jet_faces] = g
        dphi = field.solve_rhs(np.asarray(field.R @ data))
        dvalue = field.jet.V @ dphi + field.jet.v_data[:, None] * g
        return dvalue, field.dmomentum0 @ dphi

    def _momentum(self, mesh: FVMesh, phi: np.ndarray) -> tuple[float, float, np.ndarray]:
        """M0, M2 and dM0/dphi of the axial momentum balance (docstring of the module)."""
        m0, m2, grad = 0.0, 0.0, np.zeros(mesh.n_cells)
        for name in MOMENTUM_PLANES + MOMENTUM_WALLS:
            if name not in mesh.boundary:
                continue
            fit = boundary_fit(mesh, mesh.boundary[name], self.is_value, self._stencil[name])
            faces = fit.faces
            gt = fit.Dt @ phi + fit.dt_data * self.data[faces]
            gn = fit.Dn @ phi + fit.dn_data * self.data[faces]
            ux = fit.t[:, 0] * gt + fit.n[:, 0] * gn
            A = mesh.face_area[faces]
            if name in MOMENTUM_PLANES:
                sign = 1.0 if name == Boundary.OUTLET else -1.0
                m0 += sign * float(np.sum((ux * ux - 0.5 * (gt * gt + gn * gn)) * A))
                m2 += sign * 0.5 * float(A.sum())
                d_gt, d_gn = sign * (2 * ux * fit.t[:, 0] - gt) * A, sign * (2 * ux * fit.n[:, 0] - gn) * A
            else:
                nx = fit.n[:, 0]
                m0 -= 0.5 * float(np.sum((gt * gt + gn * gn) * nx * A))
                m2 += 0.5 * float(np.sum(nx * A))
                d_gt, d_gn = -gt * nx * A, -gn * nx * A
            grad += fit.Dt.T @ d_gt + fit.Dn.T @ d_gn
        return m0, m2, grad
