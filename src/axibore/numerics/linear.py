"""Sparse linear solves shared by the solvers, with every fall-back recorded and said.

``solve_linear(K, b, settings, preconditioner=P)``: SuperLU (direct) for small systems, else
restarted GMRES, right-preconditioned (K M y = b, x = M y, so that it watches the true residual)
by algebraic multigrid (pyamg) built on ``P`` (for the potential solver: the symmetric orthogonal
part of the operator). It runs one restart cycle at a time and is judged
on the true residual ||K x - b|| / ||b||: it stops at the tolerance, or where a cycle no longer
halves the residual (the round-off floor of a large system, which can sit just above a tight
tolerance), and the answer is accepted within 10 x the tolerance. (Left-preconditioned GMRES
stops on the preconditioned residual, which on a 653k-cell sharp-lip nozzle was 20 times smaller
than the true one, and then fell back to SuperLU: 52 s instead of 7 s.) A real stall is retried
with a W-cycle, and only then does SuperLU take over; the result says which method produced the
answer and why any fall-back happened.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from functools import cached_property
from typing import Callable

import numpy as np
import scipy.sparse as sp

# Below this many unknowns SuperLU is faster than GMRES + AMG (scripts/results/bench_potential.txt:
# 25k cells 0.16 s vs 0.25 s; 99k cells 1.15 s vs 0.51 s).
DIRECT_MAX_CELLS = 40_000
# a GMRES restart cycle that leaves more than this fraction of the residual has stalled
STAGNATION = 0.5


@dataclass(frozen=True)
class LinearSettings:
    """How linear systems are solved (case keys under [solver]; reported in summary.json)."""

    method: str = "auto"  # "auto" (direct up to direct_max_cells, else iterative), "direct", "iterative"
    tolerance: float = 1e-10  # relative residual ||K x - b|| / ||b||
    direct_max_cells: int = DIRECT_MAX_CELLS
    restart: int = 60  # GMRES restart length
    max_restarts: int = 20  # GMRES outer iterations (restart cycles)
    amg: str = "ruge-stuben"  # "ruge-stuben" | "smoothed-aggregation"
    amg_max_coarse: int = 500  # unknowns on the coarsest AMG level

    def as_dict(self) -> dict:
        return {"linear_method": self.method, "tolerance": self.tolerance, "direct_max_cells": self.direct_max_cells,
                "gmres_restart": self.restart, "gmres_max_restarts": self.max_restarts, "amg": self.amg,
                "amg_max_coarse": self.amg_max_coarse}


@dataclass(frozen=True, eq=False)
class LinearResult:
    x: np.ndarray
    method: str  # "superlu", "gmres+amg", "gmres+amg(W)"
    iterations: int
    residual: float  # ||K x - b|| / ||b||
    history: tuple[float, ...] = ()  # relative residual norms of the Krylov iterations
    fallback: str | None = None  # why the first method was not the one used
    seconds: float = 0.0
    converged: bool = True
    attempts: list[str] = field(default_factory=list)  # what was tried, in order, with its outcome


# cells of a nested-dissection leaf (ordered as they come)
DISSECTION_LEAF = 64


def nested_dissection(points: np.ndarray, pattern: sp.spmatrix) -> np.ndarray:
    """A fill-reducing order of the unknowns of a mesh problem: geometric nested dissection.

    ``points`` (n, 2) are the unknowns' positions (cell centres), ``pattern`` the matrix whose
    nonzeros couple them. Each set is cut at the median of its longer extent; the unknowns of the
    first half coupled to the second form the separator, numbered after both halves, which are
    ordered the same way down to DISSECTION_LEAF unknowns. For a 2D mesh this gives O(n log n)
    fill (George 1973, SIAM J. Numer. Anal. 10, "Nested dissection of a regular finite element
    mesh"); on the spear demo's 92k-cell free-jet matrix SuperLU's factorisation took 0.41 s in this
    order against 0.9-1.0 s in its own COLAMD order (11.7 M against 15.4 M nonzeros in L + U).
    """
    n = points.shape[0]
    A = (abs(pattern) + abs(pattern.T)).tocsr()
    A.data[:] = 1.0
    order: list[np.ndarray] = []
    in_b = np.zeros(n)
    stack = [(np.arange(n), False)]
    while stack:  # depth first, the separator after its two halves
        idx, is_separator = stack.pop()
        if is_separator or idx.size <= DISSECTION_LEAF:
            order.append(idx)
            continue
        pts = np.take(points, idx, axis=0)
        axis = int(np.argmax(pts.max(0) - pts.min(0)))
        first = pts[:, axis] <= np.median(pts[:, axis])
        a, b = idx[first], idx[~first]
        if a.size == 0 or b.size == 0:
            order.append(idx)
            continue
        in_b[b] = 1.0
        touches = (A[a] @ in_b) > 0.0
        in_b[b] = 0.0
        stack += [(a[touches], True), (b, False), (a[~touches], False)]
    return np.concatenate(order)


class OrderedFactor:
    """SuperLU of ``K`` permuted symmetrically into ``order`` (rows and columns alike), with that
    column order kept and pivots on the diagonal wherever the diagonal is nonzero
    (``diag_pivot_thresh = 0``; SuperLU pivots off it only at an exactly zero diagonal), so that the
    elimination does not depend on the values: matrices of one pattern (a mesh whose nodes move) are
    factorised the same way and their round-off is alike. Diagonal pivots suit the potential
    operator, whose diagonal dominates its rows (the two-point part is an M-matrix; the non-orthogonal
    correction is small); they are not a general-purpose choice. Falls back to SuperLU's own ordering
    and pivoting (``order`` the identity) where SuperLU finds the permuted matrix singular.

    ``x = factor(b)`` solves K x = b for (n,) or (n, k); ``solve_ordered(bp)`` solves for a
    right-hand side already in the factor's order (``bp = b[order]``) and returns x in it, so that
    a caller with many right-hand sides can permute its sparse operators once instead of permuting
    dense (n, k) arrays back and forth."""

    def __init__(self, K: sp.spmatrix, order: np.ndarray):
        import scipy.sparse.linalg as spla

        try:
            Kp = K.tocsr()[order][:, order].tocsc()
            self.lu = spla.splu(Kp, permc_spec="NATURAL", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
            self.order = order
        except RuntimeError:  # singular in this order
            self.lu = spla.splu(K.tocsc())
            self.order = np.arange(K.shape[0])

    @cached_property
    def position(self) -> np.ndarray:
        """Where each unknown sits in the factor's order: ``bp[position[i]] = b[i]``."""
        out = np.empty_like(self.order)
        out[self.order] = np.arange(self.order.size)
        return out

    def solve_ordered(self, bp: np.ndarray) -> np.ndarray:
        return self.lu.solve(np.asfortranarray(bp))

    def __call__(self, b: np.ndarray, transposed: bool = False) -> np.ndarray:
        """x with K x = b, or K^T x = b when ``transposed`` (the factor of the permuted K, transposed)."""
        bp = np.take(b, self.order, axis=0)
        x = self.lu.solve(np.asfortranarray(bp), trans="T") if transposed else self.solve_ordered(bp)
        out = np.empty_like(x)
        out[self.order] = x
        return out

    def trailing_inverse(self, m: int, columns: np.ndarray | None = None) -> np.ndarray | None:
        """The inverse of K restricted to the last m unknowns of the order, (m, m) dense, or its given
        ``columns`` (positions within those m): with diagonal pivots K_p = L U, and (K_p^-1)_II =
        U_II^-1 L_II^-1 for the trailing block I (L^-1 and U^-1 are triangular, so no other block enters;
        derived). None where SuperLU pivoted off the diagonal."""
        import scipy.linalg as sla

        n = self.order.size
        if not (np.array_equal(self.lu.perm_r, np.arange(n)) and np.array_equal(self.lu.perm_c, np.arange(n))):
            return None
        L = self.lu.L[:, n - m:][n - m:, :].toarray()  # columns first: cheap on the compressed columns
        U = self.lu.U[:, n - m:][n - m:, :].toarray()
        E = np.eye(m) if columns is None else np.eye(m)[:, columns]
        return sla.solve_triangular(U, sla.solve_triangular(L, E, lower=True, unit_diagonal=True))


def _direct(K: sp.spmatrix, b: np.ndarray, cache: dict | None = None):
    import scipy.sparse.linalg as spla

    if cache is None:
        return spla.spsolve(K.tocsc(), b)
    if "lu" not in cache:
        cache["lu"] = spla.splu(K.tocsc())
    return cache["lu"].solve(b)


def _amg(P: sp.spmatrix, settings: LinearSettings):
    """The AMG hierarchy of ``P``. The coarsest level is solved by sparse LU: pyamg's default, a
    pseudo-inverse by dense SVD, was a quarter of the whole linear solve at 100k cells (0.47 s against
    0.35 s, median of 8, 2 cores). A singular coarsest matrix (no value face at all) keeps the pseudo-
    inverse."""
    import pyamg

    def build(coarse):
        if settings.amg == "smoothed-aggregation":
            return pyamg.smoothed_aggregation_solver(P.tocsr(), max_coarse=settings.amg_max_coarse, symmetry="nonsymmetric",
                                                     coarse_solver=coarse)
        return pyamg.ruge_stuben_solver(P.tocsr(), max_coarse=settings.amg_max_coarse, coarse_solver=coarse)

    ml = build("splu")
    A_c = ml.levels[-1].A
    b = np.ones(A_c.shape[0])
    try:
        x = ml.coarse_solver(A_c, b)  # factorises once, kept for the cycles
        exact = np.all(np.isfinite(x)) and np.linalg.norm(A_c @ x - b) <= 1e-8 * np.linalg.norm(b)
    except RuntimeError:  # an exactly zero pivot
        exact = False
    return ml if exact else build("pinv")


def solve_linear(K: sp.spmatrix, b: np.ndarray, settings: LinearSettings = LinearSettings(),
                 preconditioner: sp.spmatrix | None = None, say: Callable[[str], None] | None = None,
                 cache: dict | None = None) -> LinearResult:
    """Solve K x = b; ``say`` receives a line for every fall-back (the progress line of a run).

    ``cache``: a dict kept by the caller across solves with the same K; the LU factors or the AMG
    hierarchy are built once and reused (several right-hand sides)."""
    import scipy.sparse.linalg as spla

    t0 = time.perf_counter()
    bnorm = float(np.linalg.norm(b)) or 1.0

    def resid(x):
        return float(np.linalg.norm(K @ x - b)) / bnorm

    n = K.shape[0]
    method = settings.method
    if method == "auto":
        method = "direct" if n <= settings.direct_max_cells else "iterative"
    if method == "direct":
        x = _direct(K, b, cache)
        r = resid(x)
        return LinearResult(x, "superlu", 1, r, (r,), None, time.perf_counter() - t0, r < 10 * settings.tolerance or r < 1e-8,
                            [f"superlu: residual {r:.1e}"])

    if cache is not None and "ml" in cache:
        ml = cache["ml"]
    else:
        ml = _amg(K if preconditioner is None else preconditioner, settings)
        if cache is not None:
            cache["ml"] = ml
    history: list[float] = []
    attempts: list[str] = []
    x = np.zeros_like(b)
    for cycle in ("V", "W"):
        name = "gmres+amg" if cycle == "V" else "gmres+amg(W)"
        M = ml.aspreconditioner(cycle=cycle)
        # right preconditioning: solve K M y = b, x = M y; GMRES then watches the true residual
        KM = spla.LinearOperator(K.shape, matvec=lambda v, M=M: K @ M.matvec(v), dtype=K.dtype)
        y = np.zeros_like(b)
        r_prev, n_iter = 1.0, 0
        for _ in range(settings.max_restarts):  # one restart cycle at a time
            hist: list[float] = []
            y, _info = spla.gmres(KM, b, x0=y, rtol=settings.tolerance, atol=0.0, restart=settings.restart, maxiter=1,
                                  callback=lambda rk: hist.append(float(rk)), callback_type="pr_norm")
            history += hist
            n_iter += len(hist)
            x = M.matvec(y)
            r = resid(x)
            # stop at the tolerance, or where a cycle no longer halves the residual: the round-off
            # floor of a large system can sit just above a tight tolerance
            if r <= settings.tolerance or r > STAGNATION * r_prev:
                break
            r_prev = r
        attempts.append(f"{name}: {n_iter} iterations, residual {r:.1e}")
        if r <= 10 * settings.tolerance:
            fallback = None if cycle == "V" else f"GMRES with a V-cycle stalled ({attempts[0]}); a W-cycle converged"
            if fallback and say:
                say(fallback)
            return LinearResult(x, name, len(history), r, tuple(history), fallback, time.perf_counter() - t0, True, attempts)
    reason = f"GMRES + AMG did not reach the tolerance {settings.tolerance:g} ({'; '.join(attempts)}): SuperLU used"
    if say:
        say(reason)
    x = _direct(K, b)
    r = resid(x)
    attempts.append(f"superlu: residual {r:.1e}")
    return LinearResult(x, "superlu", len(history) + 1, r, tuple(history + [r]), reason, time.perf_counter() - t0,
                        r < 10 * settings.tolerance or r < 1e-8, attempts)
