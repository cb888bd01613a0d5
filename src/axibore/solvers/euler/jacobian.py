"""The Jacobian of the limited second-order residual, assembled sparse by the chain rule.

Every face flux depends on the two reconstructed side states, each side state on the cells of its
cell's gradient stencil (and on the cell across the face through the limiter), and the
boundary-face values in the gradients on the boundary cell through the ghost state. With the
side state W_s = W_c + psi_s g_s, g_s = grad W_c . d_s:

    dW_s / dW_j = delta_cj I + diag(psi_s) dg_s/dW_j + diag(g_s dpsi/da) da_s/dW_j
                  + diag(g_s dpsi/db) (delta_oj - delta_cj) I,

where dg/dW_j and da/dW_j are the gradient weights of cell j projected on d and e (times I),
plus, for j = c, the 4x4 derivative of the boundary-face values of c (0.5 (I + d ghost/dW)).
The flux derivatives with respect to the side states come from gas.flux_derivatives (one-sided
differences, 1e-7), so the assembled matrix is the Jacobian of the limited scheme to about 1e-7
(checked against differences of the whole residual in tests/test_euler.py): Newton's method
converges on it with the limiter active at a shock. The unknowns are the primitive variables;
rows and columns are scaled by the reference conservative and primitive states and numbered
4 * position + variable, ``position`` the nested-dissection position of the cell (ordering.py).

Beside it comes the preconditioner's matrix: the same flux derivatives with the first-order chain
(dW_s/dW_j = delta_cj I), on the compact (face-neighbour) pattern. (The compact part of the full
Jacobian, tried first, is a poor preconditioner: 33 to 120 GMRES iterations against 1 to 5.)

The pattern and sparse scatter matrices (contribution -> block, with the signs) are built once
per mesh (``JacobianPattern``); an assembly is a few vectorised products and sparse-times-dense
products, no loop over cells or faces.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .gas import conservative_jacobian, flux_derivatives
from .scheme import Evaluation, Scheme, gradient_matrix


class JacobianPattern:
    """Static structure: the stencil entries of every face side and where each contribution goes."""

    def __init__(self, scheme: Scheme, position: np.ndarray):
        s = scheme
        C, nI, S = s.C, s.nI, s.side_cell.size
        Gc = gradient_matrix(s)
        cells = s.side_cell
        counts = np.diff(Gc.indptr)[cells]
        self.ent_side = es = np.repeat(np.arange(S), counts)
        first = np.repeat(Gc.indptr[cells] - np.r_[0, np.cumsum(counts)[:-1]], counts)
        pos = first + np.arange(es.size)
        gxy = Gc.data[pos]
        self.wd = s.d[0, es] * gxy.real + s.d[1, es] * gxy.imag
        self.we = s.e[0, es] * gxy.real + s.e[1, es] * gxy.imag
        has_b = np.zeros(C, bool)
        has_b[s.Pb] = True
        self.bside = np.flatnonzero(has_b[cells])  # sides whose cell has boundary-face values
        # contributions: (side of the flux, column cell) for the stencil entries, the side's own
        # cell and the cell across (interior sides); each goes to the rows of its face
        side = np.r_[es, np.arange(S), np.arange(2 * nI)]
        col = np.r_[Gc.indices[pos], cells, s.side_other[: 2 * nI]]
        f = s.side_face[side]
        plus, minus = s.mesh.owner[f], np.where(side < 2 * nI, s.mesh.neighbour[f], -1)
        m = minus >= 0
        t = np.arange(side.size)
        rows = np.r_[plus, minus[m], np.arange(C)]
        cols = np.r_[col, col[m], np.arange(C)]
        key = rows.astype(np.int64) * C + cols
        uniq, ids = np.unique(key, return_inverse=True)
        nb = uniq.size
        n_ent, n_own = es.size, S
        # scatter: block <- +contribution (plus row), -contribution (minus row); diagonal blocks last
        tc = np.r_[t, t[m], side.size + np.arange(C)]
        sign = np.r_[np.ones(t.size), -np.ones(int(m.sum())), np.ones(C)]
        Sc = sp.csr_matrix((sign, (ids, tc)), shape=(nb, side.size + C))
        self.scatter = Sc
        # the preconditioner's matrix: own-cell contributions (first-order chain) and the diagonal
        own = np.r_[np.zeros(n_ent, bool), np.ones(n_own, bool), np.zeros(2 * nI, bool), np.ones(C, bool)]
        self.scatter_first = Sc[:, np.flatnonzero(own)].tocsr()
        brow, bcol = uniq // C, uniq % C
        self.order, self.indices, self.indptr = _csc_layout(position[brow], position[bcol], C)
        self.n = 4 * C
        adj = np.r_[s.P.astype(np.int64) * C + s.N, s.N.astype(np.int64) * C + s.P, np.arange(C) * (C + 1)]
        compact = np.isin(uniq, adj)
        self.compact_order, self.compact_indices, self.compact_indptr = _csc_layout(
            position[brow[compact]], position[bcol[compact]], C)
        self.compact_blocks = np.flatnonzero(compact)


def _csc_layout(prow: np.ndarray, pcol: np.ndarray, C: int):
    """Compressed-column layout of a matrix of 4x4 blocks at (prow, pcol) (positions), scalar row
    and column 4 * position + variable: the gather order from the (nblocks, 16) block data
    (row-major blocks) to the column data, the row indices and the column pointers (scipy sorts:
    the entries carry their own index as data)."""
    k = np.arange(4, dtype=np.int32)
    rows = ((4 * prow.astype(np.int32))[:, None, None] + k[None, :, None]).repeat(4, axis=2)
    cols = ((4 * pcol.astype(np.int32))[:, None, None] + k[None, None, :]).repeat(4, axis=1)
    ids = np.arange(rows.size, dtype=np.float64)
    M = sp.csc_matrix((ids, (rows.ravel(), cols.ravel())), shape=(4 * C, 4 * C))
    M.sort_indices()
    return M.data.astype(np.int64), M.indices, M.indptr


def _derivative(func, W: np.ndarray, g: float) -> np.ndarray:
    """d func / dW (m, 4, 4) of a function of one (4, m) state, one-sided differences."""
    return flux_derivatives(lambda a, b: func(a), W, W, g)[1]


def assemble(scheme: Scheme, pattern: JacobianPattern, ev: Evaluation, diag: np.ndarray):
    """The scaled Jacobian of ``diag`` (C,) (V/dt) times dU/dW plus dR/dW at the evaluated state,
    and the preconditioner's matrix (first-order chain, compact pattern), both compressed-column."""
    s, pt = scheme, pattern
    g, nI, sc = s.gas.gamma, s.nI, s.scale
    Ws = ev.Wside
    _, JL, JR = flux_derivatives(lambda a, b: s.interior_flux(a, b, ev.theta), Ws[:, :nI], Ws[:, nI : 2 * nI], g)
    Jb = _derivative(s.boundary_flux, Ws[:, 2 * nI :], g)
    Jside = np.concatenate([JL, JR, Jb]) * s.A[s.side_face][:, None, None]  # (S, 4, 4)
    psi, dpa, dpb = ev.psi.T, ev.dpsi_a.T, ev.dpsi_b.T  # (S, 4)
    es = pt.ent_side
    T_ent = Jside[es] * (psi[es] * pt.wd[:, None] + dpa[es] * pt.we[:, None])[:, None, :]
    T_own = Jside * (1.0 - dpb)[:, None, :]
    bs = pt.bside
    if bs.size:  # boundary-face values in the gradients of the side's cell
        Jb0 = 0.5 * (np.eye(4)[None] + _derivative(s.ghost, ev.W[:, s.Pb], g))
        K = np.stack([_cell_sum(s.Pb, s.gb[k][:, None, None] * Jb0, s.C) for k in range(2)])
        c = s.side_cell[bs]
        dK = s.d[0, bs, None, None] * K[0, c] + s.d[1, bs, None, None] * K[1, c]
        eK = s.e[0, bs, None, None] * K[0, c] + s.e[1, bs, None, None] * K[1, c]
        T_own[bs] += Jside[bs] @ (psi[bs][:, :, None] * dK + dpa[bs][:, :, None] * eK)
    T_oth = Jside[: 2 * nI] * dpb[: 2 * nI][:, None, :]
    D = conservative_jacobian(ev.W, g) * diag[:, None, None]  # pseudo-time term
    D[:, 2, 3] -= s.source_area  # source -p A_cell: radial momentum row, pressure column
    scaling = (sc[None, :] / s.cons_scale[:, None]).ravel()[None, :]
    T = np.concatenate([T_ent, T_own, T_oth, D]).reshape(-1, 16)
    blocks = (pt.scatter @ T) * scaling
    J = sp.csc_matrix((blocks.ravel()[pt.order], pt.indices, pt.indptr), shape=(pt.n, pt.n))
    T1 = np.concatenate([Jside, D]).reshape(-1, 16)
    blocks1 = ((pt.scatter_first @ T1) * scaling)[pt.compact_blocks]
    J1 = sp.csc_matrix((blocks1.ravel()[pt.compact_order], pt.compact_indices, pt.compact_indptr),
                       shape=(pt.n, pt.n))
    return J, J1


def _cell_sum(cells: np.ndarray, blocks: np.ndarray, C: int) -> np.ndarray:
    """Sum of (m, 4, 4) blocks into (C, 4, 4) by cell."""
    out = np.empty((C, 16))
    flat = blocks.reshape(-1, 16)
    for q in range(16):
        out[:, q] = np.bincount(cells, flat[:, q], C)
    return out.reshape(C, 4, 4)
