"""Cell gradients by weighted least squares, as sparse operators linear in the cell values and in
the boundary data.

Over the face neighbours of each cell (weights 1/|d|^2), with boundary faces in one of two roles:

* value faces (given value at the face centre) are extra neighbours at the face centre;
* flux faces (given normal derivative g = n . grad) add the exact row n . grad = g.

``grad_k = G[k] @ values + B[k] @ data`` for k = x, r; exact for linear fields. The operator is
assembled face-wise (one coo matrix per component), no loop over cells.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..arrays import rows
from ..mesh import FVMesh


@dataclass(frozen=True, eq=False)
class GradientOperator:
    G: tuple[sp.csr_matrix, sp.csr_matrix]  # (C, C) per component: from cell values
    B: tuple[sp.csr_matrix, sp.csr_matrix]  # (C, F) per component: from boundary data (zero columns on interior faces)

    def __call__(self, values: np.ndarray, data: np.ndarray | None = None) -> np.ndarray:
        """(2, C) gradient of one cell field, or (n, 2, C) of a (n, C) stack of fields."""
        values = np.asarray(values)
        if values.ndim == 2:
            return np.stack([self(v, None if data is None else data[i]) for i, v in enumerate(values)])
        g = np.vstack([self.G[k] @ values for k in range(2)])
        if data is not None:
            g += np.vstack([self.B[k] @ data for k in range(2)])
        return g


@dataclass(frozen=True, eq=False)
class FaceSets:
    """Face ids by role and their cells: interior faces (owner P, neighbour N), value faces fD and
    flux faces fN on the boundary (owners PD, PN)."""

    fi: np.ndarray
    P: np.ndarray
    N: np.ndarray
    fD: np.ndarray
    PD: np.ndarray
    fN: np.ndarray
    PN: np.ndarray


def face_sets(mesh: FVMesh, is_value: np.ndarray | None = None) -> FaceSets:
    """``is_value`` (F,) marks value faces (default: every boundary face, as for ghost-state boundaries)."""
    if is_value is None:
        is_value = np.zeros(mesh.n_faces, bool)
        is_value[mesh.boundary_faces] = True
    fi, fb = mesh.interior, mesh.boundary_faces
    bval = is_value[fb]
    fD, fN = fb[bval], fb[~bval]
    return FaceSets(fi, mesh.owner[fi], mesh.neighbour[fi], fD, mesh.owner[fD], fN, mesh.owner[fN])


def least_squares_gradient(mesh: FVMesh, is_value: np.ndarray | None = None) -> GradientOperator:
    """The least-squares gradient operator of ``mesh``; ``is_value`` (F,) marks value faces
    (default: every boundary face is a value face, as for ghost-state boundaries)."""
    C, F = mesh.n_cells, mesh.n_faces
    fs = face_sets(mesh, is_value)
    P, N, fD, PD, fN, PN = fs.P, fs.N, fs.fD, fs.PD, fs.fN, fs.PN
    c, n, xf = mesh.cell_centroid, mesh.face_normal, mesh.face_centroid

    # each neighbour adds w e e^T to its cell's 2x2 normal matrix M: interior faces e = d (both
    # cells; the sign cancels), value faces e = dD (w = 1/|e|^2), flux faces the exact row e = n
    # (w = 1). Componentwise (1-D gathers and bincounts: no (n, 2, 2) temporaries)
    dx, dy = rows(c[:, 0], N) - rows(c[:, 0], P), rows(c[:, 1], N) - rows(c[:, 1], P)
    Dx, Dy = rows(xf[:, 0], fD) - rows(c[:, 0], PD), rows(xf[:, 1], fD) - rows(c[:, 1], PD)
    nx, ny = rows(n[:, 0], fN), rows(n[:, 1], fN)
    w = 1.0 / (dx * dx + dy * dy)
    wD = 1.0 / (Dx * Dx + Dy * Dy)
    cells = np.concatenate([P, N, PD, PN])

    def summed(vi, vb, vn):
        return np.bincount(cells, weights=np.concatenate([vi, vi, vb, vn]), minlength=C)

    Mxx = summed(w * dx * dx, wD * Dx * Dx, nx * nx)
    Mxy = summed(w * dx * dy, wD * Dx * Dy, nx * ny)
    Myy = summed(w * dy * dy, wD * Dy * Dy, ny * ny)
    det = Mxx * Myy - Mxy * Mxy
    Ixx, Ixy, Iyy = Myy / det, -Mxy / det, Mxx / det  # M^-1 (symmetric)

    def solved(cell, ex, ey):
        """(k, 2): M^-1 of each cell times its neighbour vector."""
        a, b, e = rows(Ixx, cell), rows(Ixy, cell), rows(Iyy, cell)
        return np.column_stack([a * ex + b * ey, b * ex + e * ey])

    vP = solved(P, w * dx, w * dy)
    vN = solved(N, w * dx, w * dy)
    vD = solved(PD, wD * Dx, wD * Dy)
    vNm = solved(PN, nx, ny)

    G, B = [], []
    gi, gj = np.r_[P, P, N, N, PD], np.r_[N, P, N, P, PD]
    bi, bj = np.r_[PD, PN], np.r_[fD, fN]
    for k in range(2):
        vals = np.r_[vP[:, k], -vP[:, k], vN[:, k], -vN[:, k], -vD[:, k]]
        G.append(sp.csr_matrix((vals, (gi, gj)), shape=(C, C)))
        B.append(sp.csr_matrix((np.r_[vD[:, k], vNm[:, k]], (bi, bj)), shape=(C, F)))
    return GradientOperator(tuple(G), tuple(B))
