"""Wall tables and axial forces from a solved flow (sign conventions: forces by the fluid on the
part, +x downstream, from gauge pressure; the outside of the part is at ambient).

F_x = sum over the faces of a solid boundary of p n_x dA (n out of the fluid, dA the full face area).
The control-volume momentum balance gives the same force from the inlet and outlet planes:
F_x = integral_inlet (p + rho u_x^2) dA - integral_outlet (p + rho u_x^2) dA.
Everything here reads the FlowResult (and the Profile for arc lengths), never the mesh.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..geometry import Profile
from ..names import Boundary, SOLID
from ..solvers.base import FlowResult


@dataclass(frozen=True, eq=False)
class WallTable:
    """Values at the faces of one wall-like boundary, ordered by arc length from the inlet side."""

    name: str
    faces: np.ndarray
    x: np.ndarray
    r: np.ndarray
    s: np.ndarray  # arc length along the profile [m]
    length: np.ndarray  # face length [m]
    nx: np.ndarray  # unit normal out of the fluid (into the part)
    nr: np.ndarray
    pressure: np.ndarray  # gauge [Pa]
    speed: np.ndarray  # [m/s]
    axial_force: np.ndarray  # p n_x dA per face [N]

    @property
    def cumulative_force(self) -> np.ndarray:
        return np.cumsum(self.axial_force)

    @property
    def total_force(self) -> float:
        return float(self.axial_force.sum())

    def columns(self) -> dict[str, np.ndarray]:
        return {
            "x_m": self.x, "r_m": self.r, "s_m": self.s, "p_gauge_Pa": self.pressure, "speed_m_s": self.speed,
            "n_x": self.nx, "n_r": self.nr, "face_length_m": self.length, "cumulative_force_x_N": self.cumulative_force,
        }


def arc_length(points: np.ndarray, polyline: np.ndarray) -> np.ndarray:
    """Arc-length coordinate along ``polyline`` of the nearest point to each of ``points``."""
    a, b = polyline[:-1], polyline[1:]
    d = b - a
    seg_len = np.linalg.norm(d, axis=1)
    cum = np.r_[0.0, np.cumsum(seg_len)]
    dd = np.where(seg_len > 0, seg_len**2, 1.0)
    out = np.empty(len(points))
    for s in range(0, len(points), 512):
        p = points[s : s + 512]
        t = np.clip(((p[:, None, :] - a[None]) * d[None]).sum(-1) / dd[None], 0.0, 1.0)
        q = a[None] + t[..., None] * d[None]
        dist = ((p[:, None, :] - q) ** 2).sum(-1)
        k = np.argmin(dist, axis=1)
        out[s : s + 512] = cum[k] + t[np.arange(len(p)), k] * seg_len[k]
    return out


def wall_table(flow: FlowResult, profile: Profile, name: str = Boundary.WALL) -> WallTable:
    bv = flow.boundary[name]
    s = arc_length(bv.centre, profile.chain_points(name))
    order = np.argsort(s, kind="stable")
    n = bv.normal[order]
    p = bv.pressure[order]
    axial = p * n[:, 0] * bv.area[order]
    return WallTable(str(name), bv.faces[order], bv.centre[order, 0], bv.centre[order, 1], s[order], bv.length[order],
                     n[:, 0], n[:, 1], p, bv.speed[order], axial)


def wall_tables(flow: FlowResult, profile: Profile) -> dict[str, WallTable]:
    """A table for each solid boundary of the flow (wall, centre body)."""
    return {str(n): wall_table(flow, profile, n) for n in SOLID if n in flow.boundary}


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


def forces(flow: FlowResult, tables: dict[str, WallTable]) -> Forces:
    wall = tables[Boundary.WALL].total_force
    body = tables[Boundary.CENTERBODY].total_force if Boundary.CENTERBODY in tables else 0.0
    m_in, m_out = flow.inlet.momentum_flux, flow.outlet.momentum_flux
    momentum = m_in - m_out
    scale = max(abs(momentum), 1e-12 * (abs(m_in) + abs(m_out)) + 1e-300)
    return Forces(
        wall_x_N=wall,
        centerbody_x_N=body,
        momentum_x_N=momentum,
        onedim_x_N=onedim_force(flow),
        reconciliation_rel=(wall + body - momentum) / scale,
        inlet_momentum_N=m_in,
        outlet_momentum_N=m_out,
    )
