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
differences, gas.fd_steps), so the assembled matrix is the Jacobian of the limited scheme to about
1e-7 (checked against differences of the whole residual in tests/test_euler.py): Newton's method
converges on it with the limiter active at a shock. The unknowns are the primitive variables;
rows and columns are scaled by the reference conservative and primitive states and numbered
4 * position + variable, ``position`` the nested-dissection position of the cell (ordering.py).

Beside it comes the preconditioner's matrix: the same flux derivatives with the first-order chain
(dW_s/dW_j = delta_cj I), on the compact (face-neighbour) pattern. (The compact part of the full
Jacobian, tried first, is a poor preconditioner: 33 to 120 GMRES iterations against 1 to 5.)

The pattern, the scatter structure (contribution -> block, with the signs) and the block-sparse
layouts are built once per mesh (``JacobianPattern``); an assembly is a few gathers and one
sparse-times-dense product per variable (every contribution is its face side's flux derivative
with scaled columns), no loop over cells or faces. The shock sensor's weight (scheme.shock_weight)
is held at its value in the derivative (it depends on the pressure gradients of the two cells).
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
        self.bcells = np.flatnonzero(has_b)
        local = np.full(C, -1)
        local[self.bcells] = np.arange(self.bcells.size)
        self.bface_local, self.bside_local = local[s.Pb], local[cells[self.bside]]
        # contributions: (side of the flux, column cell) for the stencil entries, the side's own
        # cell and the cell across (interior sides); each goes to the rows of its face, + to the
        # owner's, - to the neighbour's. Every contribution is its side's flux derivative with
        # scaled columns, so block[:, :, l] = A_l @ Jside[:, :, l] with A_l sparse (blocks x sides)
        # holding sign x coefficient: one sparse-times-dense product per variable
        side = np.r_[es, np.arange(S), np.arange(2 * nI)]
        col = np.r_[Gc.indices[pos], cells, s.side_other[: 2 * nI]]
        f = s.side_face[side]
        plus, minus = s.mesh.owner[f], np.where(side < 2 * nI, s.mesh.neighbour[f], -1)
        m = minus >= 0
        rows = np.r_[plus, minus[m], np.arange(C)]
        cols = np.r_[col, col[m], np.arange(C)]
        uniq, ids = np.unique(rows.astype(np.int64) * C + cols, return_inverse=True)
        nb = self.nblocks = uniq.size
        n_con = side.size
        self.diag_id = ids[-C:]
        con = np.r_[np.arange(n_con), np.flatnonzero(m)]  # contribution of each scatter entry
        sign = np.r_[np.ones(n_con), -np.ones(int(m.sum()))]
        self.scatter_structure = _row_sorted(ids[:-C], side[con], nb, S)
        self.scatter_con, self.scatter_sign = con[self.scatter_structure[0]], sign[self.scatter_structure[0]]
        own = (con >= es.size) & (con < es.size + S)  # the preconditioner: own-cell contributions only
        self.first_structure = _row_sorted(ids[:-C][own], side[con][own], nb, S)
        self.first_sign = sign[own][self.first_structure[0]]
        # own-cell block ids of each side (for the boundary-value terms), -1 where none
        self.own_plus = ids[es.size : es.size + S]
        self.own_minus = np.full(S, -1)
        self.own_minus[: 2 * nI] = ids[n_con + int(m[: es.size].sum()) : n_con + int(m[: es.size].sum()) + 2 * nI]
        brow, bcol = uniq // C, uniq % C
        self.n = 4 * C
        self.full = _bsr_layout(position[brow], position[bcol], C)
        adj = np.r_[s.P.astype(np.int64) * C + s.N, s.N.astype(np.int64) * C + s.P, np.arange(C) * (C + 1)]
        self.compact_blocks = np.flatnonzero(np.isin(uniq, adj))
        self.compact = _bsr_layout(position[brow[self.compact_blocks]], position[bcol[self.compact_blocks]], C)


def _row_sorted(rows: np.ndarray, cols: np.ndarray, n_rows: int, n_cols: int):
    """(order, indices, indptr) of a CSR matrix with one stored entry per (row, col) pair given,
    duplicates kept (the products sum them): data[k] belongs to pair order[k]."""
    order = np.argsort(rows, kind="stable")
    indptr = np.r_[0, np.cumsum(np.bincount(rows, minlength=n_rows))].astype(np.int64)
    return order, cols[order].astype(np.int32), indptr


def _bsr_layout(prow: np.ndarray, pcol: np.ndarray, C: int):
    """Block-sparse-row layout (4x4 blocks) of blocks at (prow, pcol) (positions): the gather
    order of the blocks, their block columns and the block-row pointers."""
    order = np.lexsort((pcol, prow))
    indptr = np.r_[0, np.cumsum(np.bincount(prow, minlength=C))].astype(np.int64)
    return order, pcol[order].astype(np.int32), indptr


def _derivative(func, W: np.ndarray, g: float) -> np.ndarray:
    """d func / dW (m, 4, 4) of a function of one (4, m) state, one-sided differences."""
    return flux_derivatives(lambda a, b: func(a), W, W, g)[1]


def assemble(scheme: Scheme, pattern: JacobianPattern, ev: Evaluation, diag: np.ndarray):
    """The scaled Jacobian of ``diag`` (C,) (V/dt) times dU/dW plus dR/dW at the evaluated state
    (block-sparse rows of 4x4 blocks), and a function building the preconditioner's matrix
    (first-order chain, compact pattern; compressed-column, for SuperLU)."""
    s, pt = scheme, pattern
    g, nI, sc = s.gas.gamma, s.nI, s.scale
    Ws = ev.Wside
    _, JL, JR = flux_derivatives(lambda a, b: s.interior_flux(a, b, ev.theta), Ws[:, :nI], Ws[:, nI : 2 * nI], g)
    Jb = _derivative(s.boundary_flux, Ws[:, 2 * nI :], g)
    Jside = np.concatenate([JL, JR, Jb]) * s.A[s.side_face][:, None, None]  # (S, 4, 4)
    psi, dpa, dpb = ev.psi.T, ev.dpsi_a.T, ev.dpsi_b.T  # (S, 4)
    es = pt.ent_side
    # the coefficient of each contribution per variable: stencil entries, own cell, cell across
    coef = np.concatenate([psi[es] * pt.wd[:, None] + dpa[es] * pt.we[:, None], 1.0 - dpb, dpb[: 2 * nI]])
    order, indices, indptr = pt.scatter_structure
    c = coef[pt.scatter_con] * pt.scatter_sign[:, None]
    S = Jside.shape[0]
    blocks = np.empty((pt.nblocks, 4, 4))
    for l in range(4):
        A = sp.csr_matrix((c[:, l], indices, indptr), shape=(pt.nblocks, S))
        blocks[:, :, l] = A @ Jside[:, :, l]
    bs = pt.bside
    if bs.size:  # boundary-face values in the gradients of the side's cell (boundary cells only)
        Jb0 = 0.5 * (np.eye(4)[None] + _derivative(s.ghost, ev.W[:, s.Pb], g))
        K = np.zeros((2, pt.bcells.size, 4, 4))
        for k in range(2):
            np.add.at(K[k], pt.bface_local, s.gb[k][:, None, None] * Jb0)
        cb = pt.bside_local
        dK = s.d[0, bs, None, None] * K[0, cb] + s.d[1, bs, None, None] * K[1, cb]
        eK = s.e[0, bs, None, None] * K[0, cb] + s.e[1, bs, None, None] * K[1, cb]
        Tb = Jside[bs] @ (psi[bs][:, :, None] * dK + dpa[bs][:, :, None] * eK)
        mi = pt.own_minus[bs] >= 0
        np.add.at(blocks, pt.own_plus[bs], Tb)
        np.subtract.at(blocks, pt.own_minus[bs][mi], Tb[mi])
    D = conservative_jacobian(ev.W, g) * diag[:, None, None]  # pseudo-time term
    D[:, 2, 3] -= s.source_area  # source -p A_cell: radial momentum row, pressure column
    scaling = sc[None, :] / s.cons_scale[:, None]
    blocks[pt.diag_id] += D
    blocks *= scaling
    order, bcols, bptr = pt.full
    J = sp.bsr_matrix((blocks[order], bcols, bptr), shape=(pt.n, pt.n))

    def first_order():  # built only when the preconditioner is factored again
        o, ind, ptr = pt.first_structure
        b1 = np.empty((pt.nblocks, 4, 4))
        for l in range(4):
            b1[:, :, l] = sp.csr_matrix((pt.first_sign, ind, ptr), shape=(pt.nblocks, S)) @ Jside[:, :, l]
        b1[pt.diag_id] += D
        b1 = (b1 * scaling)[pt.compact_blocks]
        corder, ccols, cptr = pt.compact
        return sp.bsr_matrix((b1[corder], ccols, cptr), shape=(pt.n, pt.n)).tocsc()

    return J, first_order


