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
    inlet_pressure: float  # area-mean gauge pressure on the inlet plane
    outlet_pressure: float  # area-mean gauge pressure on the outlet plane

    @property
    def speed(self) -> np.ndarray:
        return np.hypot(self.velocity[0], self.velocity[1])

    @property
    def mass_flow(self) -> float:
        return self.density * self.volume_flow

    @property
    def inlet_velocity(self) -> float:
        """Mean (1D) velocity on the inlet plane."""
        return self.volume_flow / self.inlet_area

    @property
    def outlet_velocity(self) -> float:
        return self.volume_flow / self.outlet_area

    @property
    def outlet_dynamic_pressure(self) -> float:
        """rho V_out^2 / 2 with the mean outlet velocity: the scale of Cp and of the 1D deviations."""
        return 0.5 * self.density * self.outlet_velocity**2

    @property
    def momentum_change(self) -> float:
        """mdot (V_out - V_in) with mean plane velocities [N]."""
        return self.mass_flow * (self.outlet_velocity - self.inlet_velocity)


def _plane_mean(mesh: FVMesh, faces: np.ndarray, values: np.ndarray) -> float:
    """Area average over boundary faces (r-weighted)."""
    a = mesh.face_area[faces]
    return float(np.sum(values * a) / np.sum(a))


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
    fin, fout = mesh.boundary["inlet"], mesh.boundary["outlet"]
    A_in = 2 * math.pi * float(mesh.face_area[fin].sum())
    A_out = 2 * math.pi * float(mesh.face_area[fout].sum())
    q2_in = _plane_mean(mesh, fin, grads["inlet"][0] ** 2 + grads["inlet"][1] ** 2)
    q2_out = _plane_mean(mesh, fout, grads["outlet"][0] ** 2 + grads["outlet"][1] ** 2)

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
        Q = s * A_in

    field = unit.scaled(s)
    vel = field.grad
    pressure = H - 0.5 * rho * (vel[0] ** 2 + vel[1] ** 2)
    boundary = {}
    for n in names:
        g = grads[n] * s
        boundary[n] = BoundaryValues(mesh.boundary[n], g, H - 0.5 * rho * (g[0] ** 2 + g[1] ** 2))
    return Flow(vel, pressure, boundary, rho, H, Q, A_in, A_out, unit.info, field.phi, field.face_flux,
                _plane_mean(mesh, fin, boundary["inlet"].pressure), _plane_mean(mesh, fout, boundary["outlet"].pressure))
