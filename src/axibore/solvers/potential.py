"""Incompressible irrotational flow: cell-centred finite volumes for div(r grad phi) = 0.

Discretisation (every operator is a sparse matrix assembled face-wise, no loop over cells):

* Cell gradients by weighted least squares over the face neighbours (weights 1/|d|^2), with
  Dirichlet faces as extra neighbours at the face centre and Neumann faces as exact rows
  ``n . grad phi = g``. The gradient is linear in phi and in the boundary data:
  ``grad = G phi + B data`` (exact for linear fields).
* Face flux (per radian) ``A_f (grad phi . n)_f`` with ``A_f = r_f L_f`` and the over-relaxed
  non-orthogonal correction (Jasak 1996, PhD thesis, Imperial College, sec. 3.3.1.3):
  ``n = E + T``, ``E = d / (d . n)``:  ``(grad phi . n)_f = (phi_N - phi_P)/(d . n) + T . grad_f``,
  ``grad_f`` interpolated linearly from the two cell gradients. The correction is kept
  implicit (it is part of the matrix), so one linear solve gives the second-order solution.
* Boundary conditions: ``flux`` (given normal derivative g = grad phi . n, n out of the fluid)
  or ``value`` (given phi on the face).

The system is solved by SuperLU up to DIRECT_MAX_CELLS cells, and above that by restarted GMRES
preconditioned with algebraic multigrid (pyamg, Ruge-Stuben) built on the orthogonal, symmetric
part of the operator, with SuperLU as the fall-back.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..mesh import FVMesh


@dataclass(frozen=True)
class BoundaryCondition:
    kind: str  # "flux" (normal derivative g = dphi/dn, n out of the fluid) or "value" (phi)
    value: float | np.ndarray = 0.0


@dataclass(frozen=True)
class SolveInfo:
    converged: bool
    iterations: int
    residual: float  # ||K phi - b|| / ||b||
    mass_imbalance: float  # (inflow - outflow) / inflow through the boundary faces
    seconds: float
    residual_history: tuple[float, ...] = ()
    method: str = ""
    seconds_assembly: float = 0.0
    seconds_solve: float = 0.0


@dataclass(frozen=True, eq=False)
class PotentialField:
    phi: np.ndarray  # (C,)
    grad: np.ndarray  # (2, C) cell velocity u = grad phi
    face_flux: np.ndarray  # (F,) per radian, out of the owner
    boundary_data: np.ndarray  # (F,) g on flux faces, phi on value faces
    is_value: np.ndarray  # (F,) bool: value (Dirichlet) faces
    info: SolveInfo

    def scaled(self, s: float) -> "PotentialField":
        return PotentialField(self.phi * s, self.grad * s, self.face_flux * s, self.boundary_data * s, self.is_value, self.info)


@dataclass(frozen=True, eq=False)
class Operators:
    """Sparse operators of the discretisation on one mesh and one set of boundary kinds."""

    G: tuple[sp.csr_matrix, sp.csr_matrix]  # cell gradient from phi
    B: tuple[sp.csr_matrix, sp.csr_matrix]  # cell gradient from boundary data
    flux_phi: sp.csr_matrix  # face flux from phi
    flux_data: sp.csr_matrix  # face flux from boundary data
    K: sp.csr_matrix  # cell balance matrix (positive diagonal): K phi = R data
    R: sp.csr_matrix
    K_orth: sp.csr_matrix  # symmetric orthogonal part (preconditioner)


def _boundary_kinds(mesh: FVMesh, bcs: dict[str, BoundaryCondition]) -> tuple[np.ndarray, np.ndarray]:
    missing = set(mesh.boundary) - set(bcs)
    if missing:
        raise ValueError(f"no boundary condition for {sorted(missing)}")
    is_value = np.zeros(mesh.n_faces, bool)
    data = np.zeros(mesh.n_faces)
    for name, bc in bcs.items():
        faces = mesh.boundary.get(name)
        if faces is None:
            continue
        if bc.kind not in ("flux", "value"):
            raise ValueError(f"boundary {name!r}: kind must be 'flux' or 'value', got {bc.kind!r}")
        is_value[faces] = bc.kind == "value"
        data[faces] = bc.value
    return is_value, data


def _scatter(idx: np.ndarray, vals: np.ndarray, n: int) -> np.ndarray:
    """Sum (k, 2, 2) blocks into (n, 2, 2) by index (bincount per entry: faster than np.add.at)."""
    out = np.empty((n, 2, 2))
    for i in range(2):
        for j in range(2):
            out[:, i, j] = np.bincount(idx, weights=vals[:, i, j], minlength=n)
    return out


def _inv2(M: np.ndarray) -> np.ndarray:
    """Inverse of each 2x2 block, in closed form."""
    a, b, c, d = M[:, 0, 0], M[:, 0, 1], M[:, 1, 0], M[:, 1, 1]
    det = a * d - b * c
    return np.stack([np.stack([d, -b], -1), np.stack([-c, a], -1)], 1) / det[:, None, None]


def assemble(mesh: FVMesh, is_value: np.ndarray) -> Operators:
    C, F = mesh.n_cells, mesh.n_faces
    c = mesh.cell_centroid
    n = mesh.face_normal
    A = mesh.face_area
    xf = mesh.face_centroid
    fi = mesh.interior
    fb = mesh.boundary_faces
    P, N = mesh.owner[fi], mesh.neighbour[fi]
    bval = is_value[fb]
    fD, fN = fb[bval], fb[~bval]
    PD, PN = mesh.owner[fD], mesh.owner[fN]

    # -- least-squares gradient -------------------------------------------------------------
    d = c[N] - c[P]
    w = 1.0 / np.einsum("ij,ij->i", d, d)
    dD = xf[fD] - c[PD]
    wD = 1.0 / np.einsum("ij,ij->i", dD, dD)
    outer = w[:, None, None] * d[:, :, None] * d[:, None, :]
    M = _scatter(np.r_[P, N, PD, PN], np.concatenate([
        outer, outer, wD[:, None, None] * dD[:, :, None] * dD[:, None, :], n[fN][:, :, None] * n[fN][:, None, :]]), C)
    Minv = _inv2(M)
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

    # -- face fluxes --------------------------------------------------------------------------
    dn = np.einsum("ij,ij->i", d, n[fi])
    a = A[fi] / dn
    T = n[fi] - d / dn[:, None]
    gamma = np.einsum("ij,ij->i", xf[fi] - c[P], d) / np.einsum("ij,ij->i", d, d)
    dnD = np.einsum("ij,ij->i", dD, n[fD])
    aD = A[fD] / dnD
    TD = n[fD] - dD / dnD[:, None]

    direct = sp.coo_matrix(
        (np.r_[a, -a, -aD], (np.r_[fi, fi, fD], np.r_[N, P, PD])), shape=(F, C)
    ).tocsr()
    # interpolation of cell gradients to faces (value faces take the owner's gradient)
    S = sp.coo_matrix(
        (np.r_[1 - gamma, gamma, np.ones(fD.size)], (np.r_[fi, fi, fD], np.r_[P, N, PD])), shape=(F, C)
    ).tocsr()
    AT = np.zeros((F, 2))
    AT[fi] = A[fi, None] * T
    AT[fD] = A[fD, None] * TD
    corr_phi = sp.diags(AT[:, 0]) @ S @ G[0] + sp.diags(AT[:, 1]) @ S @ G[1]
    corr_data = sp.diags(AT[:, 0]) @ S @ B[0] + sp.diags(AT[:, 1]) @ S @ B[1]
    flux_phi = (direct + corr_phi).tocsr()
    data_direct = sp.coo_matrix((np.r_[aD, A[fN]], (np.r_[fD, fN], np.r_[fD, fN])), shape=(F, F)).tocsr()
    flux_data = (data_direct + corr_data).tocsr()

    D = sp.coo_matrix(
        (np.r_[np.ones(F), -np.ones(fi.size)], (np.r_[mesh.owner, N], np.r_[np.arange(F), fi])), shape=(C, F)
    ).tocsr()
    K = (-(D @ flux_phi)).tocsr()
    R = (D @ flux_data).tocsr()
    K_orth = (-(D @ direct)).tocsr()
    return Operators(tuple(G), tuple(B), flux_phi, flux_data, K, R, K_orth)


# Below this many cells SuperLU is faster than GMRES + AMG (scripts/results/bench_potential.txt:
# 25k cells 0.17 s vs 0.26 s; 99k cells 1.19 s vs 0.53 s).
DIRECT_MAX_CELLS = 40_000


def _direct(K: sp.csr_matrix, b: np.ndarray, bnorm: float, history: list[float]):
    import scipy.sparse.linalg as spla

    x = spla.spsolve(K.tocsc(), b)
    res = float(np.linalg.norm(K @ x - b)) / bnorm
    return x, 1, res, history + [res], "superlu"


def _solve_linear(K: sp.csr_matrix, b: np.ndarray, K_orth: sp.csr_matrix, tol: float):
    """SuperLU for small systems; else GMRES with an AMG preconditioner on the orthogonal part
    (SuperLU again if GMRES stalls)."""
    import pyamg
    import scipy.sparse.linalg as spla

    bnorm = float(np.linalg.norm(b)) or 1.0
    if K.shape[0] <= DIRECT_MAX_CELLS:
        return _direct(K, b, bnorm, [])
    history: list[float] = []
    ml = pyamg.ruge_stuben_solver(K_orth.tocsr(), max_coarse=500)
    x, info = spla.gmres(
        K, b, rtol=tol, atol=0.0, restart=60, maxiter=20, M=ml.aspreconditioner(cycle="V"),
        callback=lambda rk: history.append(float(rk)), callback_type="pr_norm",
    )
    res = float(np.linalg.norm(K @ x - b)) / bnorm
    if info == 0 and res < 10 * tol:
        return x, len(history), res, history, "gmres+amg"
    return _direct(K, b, bnorm, history)


def solve_potential(mesh: FVMesh, bcs: dict[str, BoundaryCondition], tol: float = 1e-10) -> PotentialField:
    """Solve div(r grad phi) = 0 on ``mesh`` with boundary conditions by group name.

    At least one ``value`` boundary is needed for a unique potential.
    """
    t0 = time.perf_counter()
    is_value, data = _boundary_kinds(mesh, bcs)
    if not np.any(is_value):
        raise ValueError("the potential needs at least one 'value' boundary (an outlet)")
    ops = assemble(mesh, is_value)
    t1 = time.perf_counter()
    b = ops.R @ data
    phi, iters, res, hist, method = _solve_linear(ops.K, b, ops.K_orth, tol)
    t2 = time.perf_counter()
    grad = np.vstack([ops.G[k] @ phi + ops.B[k] @ data for k in range(2)])
    flux = ops.flux_phi @ phi + ops.flux_data @ data
    fb = mesh.boundary_faces
    bf = flux[fb]
    inflow = -bf[bf < 0].sum()
    outflow = bf[bf > 0].sum()
    imbalance = float((inflow - outflow) / inflow) if inflow > 0 else 0.0
    info = SolveInfo(
        converged=bool(res < max(10 * tol, 1e-8)),
        iterations=iters,
        residual=res,
        mass_imbalance=imbalance,
        seconds=time.perf_counter() - t0,
        residual_history=tuple(hist),
        method=method,
        seconds_assembly=t1 - t0,
        seconds_solve=t2 - t1,
    )
    return PotentialField(phi, grad, flux, data, is_value, info)
