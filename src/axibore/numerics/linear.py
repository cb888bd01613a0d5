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
