"""Axial forces from a solved flow (sign conventions: forces by the fluid on the
part, +x downstream, from gauge pressure; the outside of the part is at ambient).

F_x = sum over the faces of a solid boundary of p n_x dA (n out of the fluid, dA the full face area).
The control-volume momentum balance gives the same force from the inlet and outlet planes:
F_x = integral_inlet (p + rho u_x^2) dA - integral_outlet (p + rho u_x^2) dA.
Everything here reads the FlowResult and its wall tables (solvers.walls), never the mesh.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..names import Boundary
from ..solvers.base import FlowResult
from ..solvers.walls import WallTable, wall_table, wall_tables

__all__ = ["Forces", "WallTable", "forces", "onedim_force", "wall_table", "wall_tables"]


@dataclass(frozen=True)
class Forces:
    wall_x_N: float
    centerbody_x_N: float
    momentum_x_N: float
    onedim_x_N: float
    reconciliation_rel: float
    inlet_momentum_N: float
    outlet_momentum_N: float

    @property
    def total_x_N(self) -> float:
        return self.wall_x_N + self.centerbody_x_N


def onedim_force(flow: FlowResult) -> float:
    """p1 A1 - p2 A2 + mdot (V1 - V2), uniform velocity on each plane, Bernoulli pressures
    (incompressible) or the mean plane pressures (compressible)."""
    V1, V2 = flow.inlet_velocity, flow.outlet_velocity
    if flow.total_pressure is not None:
        p1 = flow.total_pressure - 0.5 * flow.inlet_density * V1 * V1
        p2 = flow.total_pressure - 0.5 * flow.outlet_density * V2 * V2
    else:
        p1, p2 = flow.inlet_pressure, flow.outlet_pressure
    return p1 * flow.inlet_area - p2 * flow.outlet_area + flow.mass_flow * (V1 - V2)


RECONCILIATION_FLOOR = 0.01

def forces(flow: FlowResult, tables: dict[str, WallTable]) -> Forces:
    wall = tables[Boundary.WALL].total_force
    body = tables[Boundary.CENTERBODY].total_force if Boundary.CENTERBODY in tables else 0.0
    m_in, m_out = flow.inlet.momentum_flux, flow.outlet.momentum_flux
    momentum = m_in - m_out
    # relative to the net force, but never to less than RECONCILIATION_FLOOR of the plane momentum
    # fluxes: a venturi's net force is a small difference of large ones, and its discretisation error
    # is a fraction of those, not of the difference
    scale = max(abs(momentum), RECONCILIATION_FLOOR * (abs(m_in) + abs(m_out)), 1e-300)
    return Forces(
        wall_x_N=wall,
        centerbody_x_N=body,
        momentum_x_N=momentum,
        onedim_x_N=onedim_force(flow),
        reconciliation_rel=(wall + body - momentum) / scale,
        inlet_momentum_N=m_in,
        outlet_momentum_N=m_out,
    )
