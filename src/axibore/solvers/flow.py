"""A case's incompressible flow: the potential solve scaled to the operating point.

The potential field is linear in the flow rate, so it is solved once for a unit inlet velocity
and scaled: by the given flow rate, or, when inlet and outlet pressures are given, so that the
area-averaged static pressures on the two planes differ by the given amount. Pressure follows
from Bernoulli with the total head fixed by the given plane pressure (inlet if given, else
outlet).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..mesh import FVMesh
from .potential import BoundaryCondition, SolveInfo, solve_potential
from .reconstruct import boundary_gradients


class FlowError(ValueError):
    """The operating point cannot be reached (names the case key)."""

    def __init__(self, key: str, message: str):
        self.key, self.message = key, message
        super().__init__(f"{key}: {message}")


@dataclass(frozen=True, eq=False)
class BoundaryValues:
    faces: np.ndarray  # face ids
    velocity: np.ndarray  # (2, m) second-order reconstruction at face centres
    pressure: np.ndarray  # (m,) gauge

    @property
    def speed(self) -> np.ndarray:
        return np.hypot(self.velocity[0], self.velocity[1])


@dataclass(frozen=True, eq=False)
class Flow:
    """Cell fields and boundary-face values of a solved incompressible flow (SI, gauge pressure)."""

    velocity: np.ndarray  # (2, C)
    pressure: np.ndarray  # (C,) gauge
    boundary: dict[str, BoundaryValues]
    density: float
    total_pressure: float  # gauge total head p + rho q^2 / 2
    volume_flow: float  # m^3/s
    inlet_area: float
    outlet_area: float
    info: SolveInfo
    phi: np.ndarray  # (C,) velocity potential [m^2/s]
    face_flux: np.ndarray  # (F,) volume flux per radian out of each face's owner [m^3/s/rad]

    @property
    def speed(self) -> np.ndarray:
        return np.hypot(self.velocity[0], self.velocity[1])

    @property
    def mass_flow(self) -> float:
        return self.density * self.volume_flow

    def plane_mean(self, name: str, values: np.ndarray, mesh: FVMesh) -> float:
        """Area average over a boundary plane (r-weighted)."""
        f = self.boundary[name].faces
        return float(np.sum(values * mesh.face_area[f]) / np.sum(mesh.face_area[f]))


def _mean_sq_speed(mesh: FVMesh, faces: np.ndarray, grad: np.ndarray) -> float:
    a = mesh.face_area[faces]
    return float(np.sum((grad[0] ** 2 + grad[1] ** 2) * a) / np.sum(a))


def solve_case_flow(case, mesh: FVMesh, tol: float | None = None) -> Flow:
    """Potential flow for ``case`` on ``mesh`` (boundary groups of a bore mesh)."""
    rho = case.fluid.density
    bcs = {
        "inlet": BoundaryCondition("flux", -1.0),  # unit inlet velocity, n points out of the fluid
        "outlet": BoundaryCondition("value", 0.0),
        "wall": BoundaryCondition("flux", 0.0),
        "axis": BoundaryCondition("flux", 0.0),
        "centerbody": BoundaryCondition("flux", 0.0),
    }
    bcs = {k: v for k, v in bcs.items() if k in mesh.boundary}
    unit = solve_potential(mesh, bcs, tol=tol or case.solver.tolerance)
    names = list(mesh.boundary)
    grads = {n: boundary_gradients(mesh, unit.phi, mesh.boundary[n], unit.is_value, unit.boundary_data) for n in names}
    # on the inlet the normal velocity is imposed exactly: keep it exact in the reconstruction
    A_in = 2 * math.pi * float(mesh.face_area[mesh.boundary["inlet"]].sum())
    A_out = 2 * math.pi * float(mesh.face_area[mesh.boundary["outlet"]].sum())
    q2_in = _mean_sq_speed(mesh, mesh.boundary["inlet"], grads["inlet"])
    q2_out = _mean_sq_speed(mesh, mesh.boundary["outlet"], grads["outlet"])

    i, o = case.inlet, case.outlet
    if i.flow_rate is not None:
        kind, value = i.flow_rate
        Q = value if kind == "volume" else value / rho
        s = Q / A_in
        if i.pressure is not None:
            H = i.pressure + 0.5 * rho * s * s * q2_in
        else:
            p_out = o.pressure if o.pressure is not None else 0.0
            H = p_out + 0.5 * rho * s * s * q2_out
    else:
        p_out = o.pressure if o.pressure is not None else 0.0
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
        Q = s * A_in

    field = unit.scaled(s)
    vel = field.grad
    pressure = H - 0.5 * rho * (vel[0] ** 2 + vel[1] ** 2)
    boundary = {}
    for n in names:
        g = grads[n] * s
        boundary[n] = BoundaryValues(mesh.boundary[n], g, H - 0.5 * rho * (g[0] ** 2 + g[1] ** 2))
    return Flow(vel, pressure, boundary, rho, H, Q, A_in, A_out, unit.info, field.phi, field.face_flux)
