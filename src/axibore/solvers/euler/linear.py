"""Linear solves of the Newton steps: GMRES on the assembled Jacobian, preconditioned by a sparse
LU factor of its compact part, kept across steps while it works.

The full Jacobian of the second-order residual couples each cell with the neighbours of its
neighbours; its LU factor fills in more than twice as much as that of the compact (face-neighbour)
part (34M against 15M non-zeros at 18.7k cells, 2.4 s against 0.4 s; scripts/results/
bench_euler.txt). So the preconditioner is the LU factor of the compact part of the SAME matrix
(the exact derivatives with respect to a cell and its face neighbours; the outer ring dropped),
on the nested-dissection order of the cells (ordering.py), in single precision (GMRES corrects
its round-off), and GMRES (right-preconditioned, so that it watches the true residual) runs on
the full assembled matrix: a matrix-vector product costs a few milliseconds. A factor is reused
in later steps while GMRES still converges within ``refactor_iterations`` iterations.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp


@dataclass
class LinearStats:
    factorizations: int = 0
    iterations: int = 0
    reused: int = 0
    seconds_factor: float = 0.0
    failures: int = 0  # solves that did not reach the tolerance


class ReusedLU:
    """GMRES on the full Jacobian, preconditioned by the LU factor of the first-order-chain
    matrix, reused across steps while it works."""

    def __init__(self, single: bool = True, refactor_iterations: int = 12):
        self.single, self.refactor = single, refactor_iterations
        self.lu = None
        self.last_iterations = 0
        self.stats = LinearStats()
        self.history: list[tuple[bool, int, float]] = []  # (fresh factor, iterations, tolerance) per solve

    def factor(self, J1: sp.csc_matrix) -> None:
        import time

        import scipy.sparse.linalg as spla

        t0 = time.perf_counter()
        dtype = np.float32 if self.single else np.float64
        Jc = J1.astype(dtype)
        # the matrix comes in nested-dissection order: keep it; pivot on the diagonal while it
        # is within a factor 100 of the column's largest entry (SuperLU's threshold pivoting)
        self.lu = spla.splu(Jc, permc_spec="NATURAL", diag_pivot_thresh=0.01, options=dict(SymmetricMode=True))
        self.stats.factorizations += 1
        self.stats.seconds_factor += time.perf_counter() - t0

    def apply(self, v: np.ndarray) -> np.ndarray:
        if self.single:
            return self.lu.solve(v.astype(np.float32)).astype(np.float64)
        return self.lu.solve(v)

    def solve(self, J: sp.csc_matrix, first_order, b: np.ndarray, rtol: float,
              max_iterations: int) -> tuple[np.ndarray, int, bool]:
        """x with ||J x - b|| <= rtol ||b|| (if reached). A new factor when there is none, or when
        the last solve needed more than ``refactor_iterations`` iterations or failed;
        ``first_order()`` builds the matrix to factor."""
        fresh = self.lu is None or self.last_iterations > self.refactor
        if fresh:
            self.factor(first_order())
        else:
            self.stats.reused += 1
        x, it, ok = gmres(lambda v: J @ v, self.apply, b, rtol, max_iterations)
        if not ok and not fresh:  # a stale factor: once more with a fresh one
            self.factor(first_order())
            x, it2, ok = gmres(lambda v: J @ v, self.apply, b, rtol, max_iterations)
            it += it2
        self.stats.iterations += it
        self.stats.failures += not ok
        self.last_iterations = it if ok else max_iterations + 1
        self.history.append((fresh, it, rtol))
        return x, it, ok


def gmres(matvec, prec, b: np.ndarray, rtol: float, m: int) -> tuple[np.ndarray, int, bool]:
    """Right-preconditioned GMRES(m), one cycle from x0 = prec(b) (Saad & Schultz 1986, SIAM J.
    Sci. Stat. Comput. 7), classical Gram-Schmidt applied twice (as accurate as modified
    Gram-Schmidt; Giraud, Langou & Rozloznik 2005, Comput. Math. Appl. 50). Returns x, the
    iterations used and whether ||b - A x|| <= rtol ||b||."""
    x0 = prec(b)
    r = b - matvec(x0)
    beta = float(np.linalg.norm(r))
    bnorm = float(np.linalg.norm(b)) or 1.0
    if beta <= rtol * bnorm:
        return x0, 0, True
    V = np.empty((m + 1, b.size))
    Z = np.empty((m, b.size))
    H = np.zeros((m + 1, m))
    V[0] = r / beta
    k_used, ok, y = 0, False, np.zeros(0)
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
        ok = float(np.linalg.norm(H[: k + 2, : k + 1] @ y - e)) <= rtol * bnorm
        if ok or H[k + 1, k] == 0.0:
            break
        V[k + 1] = w / H[k + 1, k]
    return x0 + y @ Z[:k_used], k_used, ok
