"""Wall tables and axial forces from a solved flow (sign conventions of DESIGN.md).

Forces are those exerted by the fluid on the part, +x downstream, from gauge pressure (the
outside of the part is at ambient):  F_x = 2 pi * sum over faces of p n_x r L, n out of the fluid.
The control-volume momentum balance gives the same force from the inlet and outlet planes:
F_x = integral_inlet (p + rho u_x^2) dA - integral_outlet (p + rho u_x^2) dA.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..geometry import Profile
from ..mesh import FVMesh
from ..solvers.flow import Flow

TWO_PI = 2.0 * math.pi


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
    axial_force: np.ndarray  # 2 pi p n_x r L per face [N]

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


def wall_table(mesh: FVMesh, flow: Flow, profile: Profile, name: str = "wall") -> WallTable:
    bv = flow.boundary[name]
    f = bv.faces
    xf = mesh.face_centroid[f]
    poly = profile.wall_points if name == "wall" else profile.centerbody_points
    s = arc_length(xf, poly)
    order = np.argsort(s, kind="stable")
    f, s = f[order], s[order]
    p = bv.pressure[order]
    n = mesh.face_normal[f]
    axial = TWO_PI * p * n[:, 0] * mesh.face_area[f]
    return WallTable(name, f, xf[order, 0], xf[order, 1], s, mesh.face_length[f], n[:, 0], n[:, 1], p,
                     bv.speed[order], axial)


@dataclass(frozen=True)
class Forces:
    wall_x_N: float
    centerbody_x_N: float
    momentum_x_N: float
    onedim_x_N: float
    reconciliation_rel: float
    per_bolt_N: float | None
    inlet_momentum_N: float
    outlet_momentum_N: float

    @property
    def total_x_N(self) -> float:
        return self.wall_x_N + self.centerbody_x_N


def plane_momentum(mesh: FVMesh, flow: Flow, name: str) -> float:
    """Integral of (p + rho u_x^2) dA over a boundary plane [N]."""
    bv = flow.boundary[name]
    a = TWO_PI * mesh.face_area[bv.faces]
    return float(np.sum((bv.pressure + flow.density * bv.velocity[0] ** 2) * a))


def onedim_force(flow: Flow) -> float:
    """p1 A1 - p2 A2 + mdot (V1 - V2), uniform velocity on each plane, Bernoulli pressures."""
    rho, Q = flow.density, flow.volume_flow
    V1, V2 = flow.inlet_velocity, flow.outlet_velocity
    p1 = flow.total_pressure - 0.5 * rho * V1 * V1
    p2 = flow.total_pressure - 0.5 * rho * V2 * V2
    return p1 * flow.inlet_area - p2 * flow.outlet_area + rho * Q * (V1 - V2)


def forces(mesh: FVMesh, flow: Flow, tables: dict[str, WallTable], bolts: int | None) -> Forces:
    wall = tables["wall"].total_force
    body = tables["centerbody"].total_force if "centerbody" in tables else 0.0
    m_in, m_out = plane_momentum(mesh, flow, "inlet"), plane_momentum(mesh, flow, "outlet")
    momentum = m_in - m_out
    scale = max(abs(momentum), 1e-12 * (abs(m_in) + abs(m_out)) + 1e-300)
    return Forces(
        wall_x_N=wall,
        centerbody_x_N=body,
        momentum_x_N=momentum,
        onedim_x_N=onedim_force(flow),
        reconciliation_rel=(wall + body - momentum) / scale,
        per_bolt_N=wall / bolts if bolts else None,
        inlet_momentum_N=m_in,
        outlet_momentum_N=m_out,
    )
