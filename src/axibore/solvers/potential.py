"""Incompressible irrotational flow: cell-centred finite volumes for div(r grad phi) = 0.

Discretisation (every operator is a sparse matrix assembled face-wise, no loop over cells):

* Cell gradients by weighted least squares (``numerics.gradients``), with Dirichlet faces as
  extra neighbours and Neumann faces as exact rows; linear in phi and the boundary data.
* Face flux (per radian) ``A_f (grad phi . n)_f`` with ``A_f = r_f L_f`` and the over-relaxed
  non-orthogonal correction (Jasak 1996, PhD thesis, Imperial College, sec. 3.3.1.3):
  ``n = E + T``, ``E = d / (d . n)``:  ``(grad phi . n)_f = (phi_N - phi_P)/(d . n) + T . grad_f``,
  ``grad_f`` interpolated linearly from the two cell gradients. The correction is kept
  implicit (it is part of the matrix), so one linear solve gives the second-order solution.
* Boundary conditions: ``flux`` (given normal derivative g = grad phi . n, n out of the fluid)
  or ``value`` (given phi on the face).
* The linear system goes to ``numerics.linear.solve_linear`` (SuperLU for small systems, GMRES
  with AMG on the orthogonal part above), which records any fall-back.

``solve(case, profile, mesh)`` is the registered solver: the potential is linear in the flow
rate, so it is solved once for a unit inlet velocity and scaled, by the given flow rate or so
that the area-mean static pressures of the inlet and outlet planes differ by the given amount.
Pressure follows from Bernoulli with the total head fixed by the given plane pressure (inlet if
given, else outlet).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Annotated, Literal

import numpy as np
import scipy.sparse as sp
from pydantic import BaseModel, ConfigDict, Field

from ..arrays import rows
from ..mesh import FVMesh
from ..names import Boundary
from ..numerics.gradients import face_sets, least_squares_gradient
from ..numerics.linear import LinearSettings, solve_linear
from ..numerics.reconstruct import boundary_gradients
from .base import FlowError, FlowResult, SolveRecord, boundary_state

class PotentialSettings(BaseModel):
    """The potential solver's [solver] keys: how its linear systems are solved."""

    model_config = ConfigDict(extra="forbid", frozen=True)
    tolerance: Annotated[float, Field(gt=0.0, lt=1e-3, strict=True)] = 1e-10  # relative linear residual
    linear: Literal["auto", "direct", "iterative"] = "auto"
    direct_max_cells: Annotated[int, Field(ge=0, strict=True)] = 40_000
    gmres_restart: Annotated[int, Field(ge=5, le=1000, strict=True)] = 60
    gmres_max_restarts: Annotated[int, Field(ge=1, le=1000, strict=True)] = 20
    amg: Literal["ruge-stuben", "smoothed-aggregation"] = "ruge-stuben"
    amg_max_coarse: Annotated[int, Field(ge=10, le=100_000, strict=True)] = 500

    def linear_settings(self) -> LinearSettings:
        return LinearSettings(method=self.linear, tolerance=self.tolerance, direct_max_cells=self.direct_max_cells,
                              restart=self.gmres_restart, max_restarts=self.gmres_max_restarts, amg=self.amg,
                              amg_max_coarse=self.amg_max_coarse)


CRITERION = "linear residual ||K phi - b|| / ||b|| below 10 x solver.tolerance (or 1e-8)"


@dataclass(frozen=True)
class BoundaryCondition:
    kind: str  # "flux" (normal derivative g = dphi/dn, n out of the fluid) or "value" (phi)
    value: float | np.ndarray = 0.0


@dataclass(frozen=True, eq=False)
class PotentialField:
    phi: np.ndarray  # (C,)
    grad: np.ndarray  # (2, C) cell velocity u = grad phi
    face_flux: np.ndarray  # (F,) per radian, out of the owner
    boundary_data: np.ndarray  # (F,) g on flux faces, phi on value faces
    is_value: np.ndarray  # (F,) bool: value (Dirichlet) faces
    record: SolveRecord

    def scaled(self, s: float) -> "PotentialField":
        return PotentialField(self.phi * s, self.grad * s, self.face_flux * s, self.boundary_data * s, self.is_value, self.record)


@dataclass(frozen=True, eq=False)
class Operators:
    """Sparse operators of the discretisation on one mesh and one set of boundary kinds.

    The face flux is ``direct @ phi + data_direct @ data + SA @ grad`` with ``grad`` the (2, C) cell
    gradient stacked as one (2C,) vector: the two-point part plus the non-orthogonal correction
    ``A T . grad_f``. The cell balance ``K phi = R data`` is its divergence."""

    G: tuple[sp.csr_matrix, sp.csr_matrix]  # cell gradient from phi
    B: tuple[sp.csr_matrix, sp.csr_matrix]  # cell gradient from boundary data
    direct: sp.csr_matrix  # (F, C) two-point face flux from phi
    data_direct: sp.csr_matrix  # (F, F) face flux from boundary data (value faces: two-point; flux faces: A g)
    SA: sp.csr_matrix  # (F, 2C) correction A T . grad_f from the stacked cell gradient
    K: sp.csr_matrix  # cell balance matrix (positive diagonal): K phi = R data
    R: sp.csr_matrix
    K_orth: sp.csr_matrix  # symmetric orthogonal part (preconditioner)

    def gradient(self, phi: np.ndarray, data: np.ndarray) -> np.ndarray:
        """(2, C) cell gradient."""
        return np.vstack([self.G[k] @ phi + self.B[k] @ data for k in range(2)])

    def face_flux(self, phi: np.ndarray, data: np.ndarray, grad: np.ndarray) -> np.ndarray:
        """(F,) flux per radian out of each face's owner, from phi, the data and the cell gradient."""
        return self.direct @ phi + self.data_direct @ data + self.SA @ grad.ravel()


def boundary_kinds(mesh: FVMesh, bcs: dict[str, BoundaryCondition]) -> tuple[np.ndarray, np.ndarray]:
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


def assemble(mesh: FVMesh, is_value: np.ndarray) -> Operators:
    C, F = mesh.n_cells, mesh.n_faces
    c, n, A, xf = mesh.cell_centroid, mesh.face_normal, mesh.face_area, mesh.face_centroid
    fs = face_sets(mesh, is_value)
    fi, P, N, fD, PD, fN = fs.fi, fs.P, fs.N, fs.fD, fs.PD, fs.fN
    grad = least_squares_gradient(mesh, is_value)
    G, B = grad.G, grad.B

    # -- face fluxes --------------------------------------------------------------------------
    cP = rows(c, P)
    d = rows(c, N) - cP
    dD = rows(xf, fD) - rows(c, PD)
    ni, nD = rows(n, fi), rows(n, fD)
    dn = np.einsum("ij,ij->i", d, ni)
    a = A[fi] / dn
    T = ni - d / dn[:, None]
    gamma = np.einsum("ij,ij->i", rows(xf, fi) - cP, d) / np.einsum("ij,ij->i", d, d)
    dnD = np.einsum("ij,ij->i", dD, nD)
    aD = A[fD] / dnD
    TD = nD - dD / dnD[:, None]

    direct = sp.csr_matrix((np.r_[a, -a, -aD], (np.r_[fi, fi, fD], np.r_[N, P, PD])), shape=(F, C))
    data_direct = sp.csr_matrix((np.r_[aD, A[fN]], (np.r_[fD, fN], np.r_[fD, fN])), shape=(F, F))
    # the correction A T . grad_f, grad_f interpolated from the two cells' gradients (value faces
    # take the owner's): one (F, 2C) interpolation weighted by both components of A T, applied to
    # the stacked (2C, .) gradient operators
    ATi, ATD = A[fi, None] * T, A[fD, None] * TD
    f3 = np.r_[fi, fi, fD]
    SA = sp.csr_matrix((np.r_[(1 - gamma) * ATi[:, 0], gamma * ATi[:, 0], ATD[:, 0],
                              (1 - gamma) * ATi[:, 1], gamma * ATi[:, 1], ATD[:, 1]],
                        (np.r_[f3, f3], np.r_[P, N, PD, P + C, N + C, PD + C])), shape=(F, 2 * C))

    # cell balance: D sums the fluxes out of each cell. The divergence of the two-point part is
    # -K_orth (K_orth: the symmetric two-point matrix, also the AMG preconditioner's), so
    # K = -D (direct + SA Gs) = K_orth - (D SA) Gs and R = D data_direct + (D SA) Bs.
    D = sp.csr_matrix((np.r_[np.ones(F), -np.ones(fi.size)], (np.r_[mesh.owner, N], np.r_[np.arange(F), fi])),
                      shape=(C, F))
    K_orth = sp.csr_matrix((np.r_[a, a, -a, -a, aD], (np.r_[P, N, P, N, PD], np.r_[P, N, N, P, PD])), shape=(C, C))
    DSA = D @ SA
    K = K_orth - DSA @ sp.vstack(G, format="csr")
    R = D @ data_direct + DSA @ sp.vstack(B, format="csr")
    return Operators(G, B, direct, data_direct, SA, K, R, K_orth)


def solve_potential(mesh: FVMesh, bcs: dict[str, BoundaryCondition], linear: LinearSettings = LinearSettings(),
                    say=None) -> PotentialField:
    """Solve div(r grad phi) = 0 on ``mesh`` with boundary conditions by group name.

    At least one ``value`` boundary is needed for a unique potential.
    """
    return solve_potential_many(mesh, [bcs], linear, say)[0]


def solve_potential_many(mesh: FVMesh, bc_sets: list[dict[str, BoundaryCondition]],
                         linear: LinearSettings = LinearSettings(), say=None) -> list[PotentialField]:
    """Several solutions on one mesh whose boundary conditions differ only in their data (the same
    boundaries are ``value`` in every set): one assembly, one linear solve per set. Used where the
    answer is a superposition, e.g. the free jet's unknown inflow."""
    t0 = time.perf_counter()
    kinds = [boundary_kinds(mesh, bcs) for bcs in bc_sets]
    is_value = kinds[0][0]
    if any(np.any(k[0] != is_value) for k in kinds[1:]):
        raise ValueError("solve_potential_many: every set needs the same value boundaries")
    if not np.any(is_value):
        raise ValueError("the potential needs at least one 'value' boundary (an outlet)")
    ops = assemble(mesh, is_value)
    t1 = time.perf_counter()
    out = []
    cache: dict = {}  # one factorisation or AMG hierarchy for every right-hand side
    for _, data in kinds:
        ts = time.perf_counter()
        b = ops.R @ data
        lin = solve_linear(ops.K, b, linear, preconditioner=ops.K_orth, say=say, cache=cache if len(kinds) > 1 else None)
        phi = lin.x
        t2 = time.perf_counter()
        grad = ops.gradient(phi, data)
        flux = ops.face_flux(phi, data, grad)
        fb = mesh.boundary_faces
        bf = flux[fb]
        inflow = -bf[bf < 0].sum()
        outflow = bf[bf > 0].sum()
        imbalance = float((inflow - outflow) / inflow) if inflow > 0 else 0.0
        record = SolveRecord(
            solver="potential",
            converged=bool(lin.converged),
            iterations=lin.iterations,
            residual=lin.residual,
            mass_imbalance=imbalance,
            seconds=(t1 - t0) + (t2 - ts),
            method=lin.method,
            fallback=lin.fallback,
            criterion=CRITERION,
            residual_history=lin.history,
            seconds_assembly=t1 - t0,
            seconds_solve=t2 - ts,
            settings=linear.as_dict(),
        )
        out.append(PotentialField(phi, grad, flux, data, is_value, record))
    return out


def _plane_mean_q2(mesh: FVMesh, faces: np.ndarray, g: np.ndarray) -> float:
    a = mesh.face_area[faces]
    return float(np.sum((g[0] ** 2 + g[1] ** 2) * a) / np.sum(a))


def solve(case, profile, mesh: FVMesh, progress=None) -> FlowResult:
    """The potential flow of ``case`` on a bore mesh, scaled to the operating point."""
    rho = case.fluid.density
    kinds = {
        Boundary.INLET: BoundaryCondition("flux", -1.0),  # unit inlet velocity, n points out of the fluid
        Boundary.OUTLET: BoundaryCondition("value", 0.0),
        Boundary.WALL: BoundaryCondition("flux", 0.0),
        Boundary.AXIS: BoundaryCondition("flux", 0.0),
        Boundary.CENTERBODY: BoundaryCondition("flux", 0.0),
        Boundary.JET: BoundaryCondition("flux", 0.0),  # a settled free jet is a streamline
    }
    bcs = {k: v for k, v in kinds.items() if k in mesh.boundary}
    say = (lambda msg: progress("solve", msg)) if progress else None
    unit = solve_potential(mesh, bcs, case.linear_settings, say=say)
    names = list(mesh.boundary)
    grads = {n: boundary_gradients(mesh, unit.phi, mesh.boundary[n], unit.is_value, unit.boundary_data) for n in names}
    fin, fout = mesh.boundary[Boundary.INLET], mesh.boundary[Boundary.OUTLET]
    A_in = mesh.revolution * float(mesh.face_area[fin].sum())
    q2_in = _plane_mean_q2(mesh, fin, grads[Boundary.INLET])
    q2_out = _plane_mean_q2(mesh, fout, grads[Boundary.OUTLET])

    i, o = case.inlet, case.outlet
    p_out = o.pressure if o.pressure is not None else 0.0
    if i.flow_rate is not None:
        kind, value = i.flow_rate
        Q = value if kind == "volume" else value / rho
        s = Q / A_in
        if i.pressure is not None:
            H = i.pressure + 0.5 * rho * s * s * q2_in
        else:
            H = p_out + 0.5 * rho * s * s * q2_out
    else:
        dp = i.pressure - p_out
        dq2 = q2_out - q2_in
        if dq2 <= 0:
            raise FlowError(
                "inlet.pressure",
                "the bore widens from inlet to outlet, where inviscid flow recovers pressure: the flow rate "
                "cannot follow from a pressure drop; give inlet.flow_rate instead",
            )
        s = math.sqrt(2.0 * dp / (rho * dq2))
        H = i.pressure + 0.5 * rho * s * s * q2_in

    field = unit.scaled(s)
    vel = field.grad
    pressure = H - 0.5 * rho * (vel[0] ** 2 + vel[1] ** 2)
    mass_flux = rho * field.face_flux
    boundary = {}
    for n in names:
        g = grads[n] * s
        boundary[n] = boundary_state(mesh, mesh.boundary[n], g, H - 0.5 * rho * (g[0] ** 2 + g[1] ** 2), rho, mass_flux)
    return FlowResult(
        solver="potential", velocity=vel, pressure=pressure, density=np.full(mesh.n_cells, rho), boundary=boundary,
        face_mass_flux=mass_flux, record=unit.record, ambient_pressure=case.ambient_pressure,
        compressible=False, total_pressure=H, extra_fields={"potential_m2_s": field.phi},
    )
