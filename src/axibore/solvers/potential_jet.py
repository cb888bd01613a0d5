"""The potential solver's service to a free-surface outlet: the flow with the jet as a streamline,
on a mesh whose nodes move, and its response to a displacement of the jet.

For a unit inlet velocity, the jet and every wall a streamline and phi = 0 on the outlet plane,
``solve(mesh)`` returns the potential's face values and tangential derivatives on the jet faces,
and the axial momentum balance of the flow in the form M(V) = M0 + M2 V^2 for a jet speed V
(pressures p = (V^2 - q^2) / 2 per unit density, the jet at p = 0):

    M = integral_outlet (p + u_x^2) dA + integral_walls p n_x dA - integral_inlet (p + u_x^2) dA.

``response(field, g)`` solves again for normal velocities ``g`` on the jet faces (the transpiration of
a small normal displacement of the jet: the linearised flow on the displaced boundary) and returns the
change of the jet face values and of M0: with the field's factorisation for a few columns, with a second
factorisation that orders the jet's cells last for many (see ``response``).

``solve(mesh, near=field)`` is the flow on a mesh moved by a tiny step (a difference quotient) from
``near``'s: phi = phi_near + d, K d = (b - b_near) - (K - K_near) phi_near, solved with ``near``'s
factorisation (derived; the error of d is of the order of |K_near^-1 (K - K_near)| relative to d, 1e-7
for the steps of 1e-7 rad the free jet takes). It costs one solve instead of a factorisation, and the
difference phi - phi_near carries no round-off of phi_near's own solve. Such a field has no
factorisation of its own (``solve_rhs`` None): it gives values, not responses.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mesh import FVMesh
from ..names import Boundary
from ..numerics.linear import OrderedFactor, nested_dissection
from ..numerics.reconstruct import BoundaryFit, boundary_fit, stencils
from .potential import BoundaryCondition, assemble, boundary_kinds

MOMENTUM_PLANES = (Boundary.INLET, Boundary.OUTLET)
# the response's columns from which the second factorisation (interface last) is cheaper than a solve per
# column: measured on the five bores of scripts/bench_free_jet.py, 290 columns at 92k cells 1.2 s against
# 2.3 s; 52-53 columns at 22-65k cells 0.2-0.6 s against 0.2-0.5 s slower. A count, not a timing, so that a
# case takes the same steps on every machine
INVERSE_MIN_COLUMNS = 120
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
    solve_rhs: OrderedFactor | None  # the factorisation: x = solve_rhs(b) (None: a field solved from a near one)
    R_jet: object  # (C, m) the right-hand side from the jet faces' boundary data
    K: object  # the operator and right-hand side of this position of the jet
    b: np.ndarray


class PotentialJet:
    """Flows of the potential solver on moved copies of one mesh (same topology) with a jet."""

    def __init__(self, mesh: FVMesh, jet_faces: np.ndarray):
        self.jet_faces = np.asarray(jet_faces, np.int64)
        kinds = {Boundary.INLET: BoundaryCondition("flux", -1.0), Boundary.OUTLET: BoundaryCondition("value", 0.0)}
        for name in (Boundary.WALL, Boundary.AXIS, Boundary.CENTERBODY, Boundary.JET):
            kinds[name] = BoundaryCondition("flux", 0.0)
        self.bcs = {k: v for k, v in kinds.items() if k in mesh.boundary}
        self.is_value, self.data = boundary_kinds(mesh, self.bcs)
        self._order = None
        self._interface_order = None  # (order, I) of the response's factorisation
        # fit stencils depend on the topology only
        self._stencil = {"jet": stencils(mesh, self.jet_faces)}
        for name in MOMENTUM_PLANES + MOMENTUM_WALLS:
            if name in mesh.boundary:
                self._stencil[name] = stencils(mesh, mesh.boundary[name])

    def solve(self, mesh: FVMesh, near: JetField | None = None) -> JetField:
        ops = assemble(mesh, self.is_value)
        b = ops.R @ self.data
        if near is not None:  # a tiny step from a near position: one solve with its factorisation (above)
            solve_rhs = None
            phi = near.phi + near.solve_rhs((b - near.b) - (ops.K - near.K) @ near.phi)
        else:
            if self._order is None:  # a fill-reducing order for every position of the jet (one topology)
                self._order = nested_dissection(mesh.cell_centroid, ops.K)
            solve_rhs = OrderedFactor(ops.K, self._order)
            phi = solve_rhs(b)
        jet = boundary_fit(mesh, self.jet_faces, self.is_value, self._stencil["jet"])
        m0, m2, dm0 = self._momentum(mesh, phi)
        return JetField(mesh, phi, self.data, jet, jet.value(phi, self.data),
                        jet.Dt @ phi + jet.dt_data * self.data[self.jet_faces], m0, m2, dm0, solve_rhs,
                        ops.R[:, self.jet_faces], ops.K, b)  # (C, m) csr

    def response(self, field: JetField, g: np.ndarray, momentum: bool = True) -> tuple[np.ndarray, np.ndarray | None]:
        """(jet face values, M0) changes for normal velocities ``g`` (m, k) on the jet faces (M0's None unless
        ``momentum``: one more solve).

        The data enter the balances of the cells next to the jet (W) and the face values read the fit
        stencils' cells (S): only the block (K^-1)_(S, W) is needed. With many columns (INVERSE_MIN_COLUMNS)
        the matrix is factorised once more with I = W + S ordered last, where that block is U_II^-1 L_II^-1
        (``OrderedFactor.trailing_inverse``): one factorisation and a dense block instead of k solves (the
        spear demo's 92k cells, 290 jet elements, |I| = 1658: 1.2 s against 2.3 s; the same numbers to 1e-11).
        The change of M0, a single output, is the adjoint's: dM0/dphi K^-1 R g = (K^-T dM0/dphi) . R g."""
        if field.solve_rhs is None:
            raise ValueError("a field solved from a near one has no factorisation of its own, so no response")
        g = np.atleast_2d(np.asarray(g, float).T).T
        R = field.R_jet
        written = np.flatnonzero(np.diff(R.indptr))  # the cells whose balance the jet's data enter
        V = field.jet.V.tocsr()
        I = np.union1d(written, V.indices)
        many = g.shape[1] >= INVERSE_MIN_COLUMNS
        inverse = self._interface_inverse(field.K, field.mesh, I, np.searchsorted(I, written)) if many else None
        Rg = R[written] @ g
        if inverse is None:  # few columns (or SuperLU pivoted off the diagonal): k solves with the state's factor
            factor = field.solve_rhs
            rhs = np.zeros((field.mesh.n_cells, g.shape[1]), order="F")
            rhs[factor.position[written]] = Rg
            xI = factor.solve_ordered(rhs)[factor.position[I]]
        else:
            xI = inverse @ Rg
        dvalue = V[:, I] @ xI + field.jet.v_data[:, None] * g
        if not momentum:
            return dvalue, None
        adjoint = field.solve_rhs(field.dmomentum0, transposed=True)
        return dvalue, adjoint[written] @ Rg

    def _interface_inverse(self, K, mesh: FVMesh, I: np.ndarray, columns: np.ndarray) -> np.ndarray | None:
        """(K^-1)_(I, I[columns]), by a factorisation in the order: the rest by nested dissection, then I
        (kept for the topology). None where the factorisation cannot give it."""
        if self._interface_order is None or not np.array_equal(self._interface_order[1], I):
            rest = np.setdiff1d(np.arange(mesh.n_cells), I)
            sub = K.tocsr()[rest][:, rest]
            self._interface_order = (np.r_[rest[nested_dissection(mesh.cell_centroid[rest], sub)], I], I)
        factor = OrderedFactor(K, self._interface_order[0])
        if factor.order is not self._interface_order[0]:  # singular in that order: SuperLU's own
            return None
        return factor.trailing_inverse(I.size, columns)

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
