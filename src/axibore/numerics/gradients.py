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


def scatter_2x2(idx: np.ndarray, vals: np.ndarray, n: int) -> np.ndarray:
    """Sum (k, 2, 2) blocks into (n, 2, 2) by index (bincount per entry: faster than np.add.at)."""
    out = np.empty((n, 2, 2))
    for i in range(2):
        for j in range(2):
            out[:, i, j] = np.bincount(idx, weights=vals[:, i, j], minlength=n)
    return out


def inverse_2x2(M: np.ndarray) -> np.ndarray:
    """Inverse of each 2x2 block, in closed form."""
    a, b, c, d = M[:, 0, 0], M[:, 0, 1], M[:, 1, 0], M[:, 1, 1]
    det = a * d - b * c
    return np.stack([np.stack([d, -b], -1), np.stack([-c, a], -1)], 1) / det[:, None, None]


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

    d = c[N] - c[P]
    w = 1.0 / np.einsum("ij,ij->i", d, d)
    dD = xf[fD] - c[PD]
    wD = 1.0 / np.einsum("ij,ij->i", dD, dD)
    outer = w[:, None, None] * d[:, :, None] * d[:, None, :]
    M = scatter_2x2(np.r_[P, N, PD, PN], np.concatenate([
        outer, outer, wD[:, None, None] * dD[:, :, None] * dD[:, None, :], n[fN][:, :, None] * n[fN][:, None, :]]), C)
    Minv = inverse_2x2(M)
    vP = np.einsum("kij,kj->ki", Minv[P], w[:, None] * d)
    vN = np.einsum("kij,kj->ki", Minv[N], w[:, None] * d)
    vD = np.einsum("kij,kj->ki", Minv[PD], wD[:, None] * dD)
    vNm = np.einsum("kij,kj->ki", Minv[PN], n[fN])

    G, B = [], []
    for k in range(2):
        rows = np.r_[P, P, N, N, PD]
        cols = np.r_[N, P, N, P, PD]
        vals = np.r_[vP[:, k], -vP[:, k], vN[:, k], -vN[:, k], -vD[:, k]]
        G.append(sp.coo_matrix((vals, (rows, cols)), shape=(C, C)).tocsr())
        B.append(sp.coo_matrix((np.r_[vD[:, k], vNm[:, k]], (np.r_[PD, PN], np.r_[fD, fN])), shape=(C, F)).tocsr())
    return GradientOperator(tuple(G), tuple(B))
