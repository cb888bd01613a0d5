"""Wall tables: the values on the faces of a solid boundary of a solved flow, in arc-length order,
with each face's area and perimeter (planar: per unit depth), so that no stage downstream needs
to know whether the geometry is planar or axisymmetric."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..geometry import Profile
from ..geometry.polyline import arc_length
from ..names import SOLID, Boundary
from .base import FlowResult


@dataclass(frozen=True, eq=False)
class WallTable:
    """Values at the faces of one wall-like boundary, ordered by arc length from the inlet side."""

    name: str
    faces: np.ndarray
    x: np.ndarray
    r: np.ndarray
    s: np.ndarray  # arc length along the profile [m]
    length: np.ndarray  # face length [m]
    area: np.ndarray  # full face area [m^2] (axisymmetric: 2 pi r L; planar: L, per unit depth)
    perimeter: np.ndarray  # wetted perimeter of the section through the face [m] (2 pi r; planar: 1 per unit depth)
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


def wall_table(flow: FlowResult, profile: Profile, name: str = Boundary.WALL) -> WallTable:
    bv = flow.boundary[name]
    s = arc_length(bv.centre, profile.chain_points(name))
    order = np.argsort(s, kind="stable")
    n = bv.normal[order]
    p = bv.pressure[order]
    axial = p * n[:, 0] * bv.area[order]
    area = bv.area[order]
    return WallTable(str(name), bv.faces[order], bv.centre[order, 0], bv.centre[order, 1], s[order], bv.length[order],
                     area, area / bv.length[order], n[:, 0], n[:, 1], p, bv.speed[order], axial)


def wall_tables(flow: FlowResult, profile: Profile) -> dict[str, WallTable]:
    """A table for each solid boundary of the flow (wall, centre body)."""
    return {str(n): wall_table(flow, profile, n) for n in SOLID if n in flow.boundary}
