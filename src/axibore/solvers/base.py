"""What every solver returns: one general flow result, read by post-processing, io and views.

A solver is a function ``solve(case, profile, mesh, progress) -> FlowResult`` registered in
``axibore.solvers`` (one line). The result holds per-cell fields, the values on each named
boundary (with the face geometry, so that wall tables and plane integrals need nothing else),
the face mass fluxes and a ``SolveRecord``. Pressures are gauge (relative to ambient); full
axisymmetric areas are 2 pi times the per-radian measures of the mesh.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..names import Boundary


class FlowError(ValueError):
    """The operating point cannot be reached (names the case key)."""

    def __init__(self, key: str, message: str):
        self.key, self.message = key, message
        super().__init__(f"{key}: {message}")


@dataclass(frozen=True, eq=False)
class BoundaryState:
    """Values at the centres of the faces of one named boundary (second-order reconstruction)."""

    faces: np.ndarray  # face ids in the mesh
    centre: np.ndarray  # (m, 2) face centres (x, r)
    normal: np.ndarray  # (m, 2) unit normals out of the fluid
    length: np.ndarray  # (m,) face lengths [m]
    area: np.ndarray  # (m,) full face areas [m^2] (2 pi r L)
    velocity: np.ndarray  # (2, m)
    pressure: np.ndarray  # (m,) gauge [Pa]
    density: np.ndarray  # (m,)
    mass_flux: np.ndarray  # (m,) mass flow out of the fluid through each face [kg/s] (full area)

    @property
    def speed(self) -> np.ndarray:
        return np.hypot(self.velocity[0], self.velocity[1])

    def mean(self, values: np.ndarray) -> float:
        """Area average over the boundary."""
        return float(np.sum(values * self.area) / np.sum(self.area))

    @property
    def total_area(self) -> float:
        return float(self.area.sum())

    @property
    def momentum_flux(self) -> float:
        """Integral of (p + rho u_x^2) dA over the boundary [N]."""
        return float(np.sum((self.pressure + self.density * self.velocity[0] ** 2) * self.area))


@dataclass(frozen=True)
class SolveRecord:
    """How the solve went: written to summary.json and solver_history.csv."""

    solver: str
    converged: bool
    iterations: int
    residual: float
    mass_imbalance: float  # (inflow - outflow) / inflow through the boundary faces
    seconds: float
    method: str = ""  # the linear method that produced the answer
    fallback: str | None = None  # why another method took over, if one did
    criterion: str = ""  # what "converged" means for this solver
    residual_history: tuple[float, ...] = ()
    seconds_assembly: float = 0.0
    seconds_solve: float = 0.0
    settings: dict = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class FlowResult:
    """Cell fields and boundary values of a solved flow (SI; pressure gauge)."""

    solver: str
    velocity: np.ndarray  # (2, C)
    pressure: np.ndarray  # (C,) gauge
    density: np.ndarray  # (C,)
    boundary: dict[str, BoundaryState]
    face_mass_flux: np.ndarray  # (F,) mass flux per radian out of each face's owner [kg/s/rad]
    record: SolveRecord
    ambient_pressure: float  # absolute [Pa]; absolute pressure = gauge + ambient
    compressible: bool = False
    temperature: np.ndarray | None = None  # (C,) [K], gases
    mach: np.ndarray | None = None  # (C,), gases
    total_pressure: float | None = None  # gauge total head p + rho q^2 / 2 (incompressible, uniform)
    extra_fields: dict[str, np.ndarray] = field(default_factory=dict)  # solver-specific cell fields for fields.vtu

    # -- fields --------------------------------------------------------------------------
    @property
    def speed(self) -> np.ndarray:
        return np.hypot(self.velocity[0], self.velocity[1])

    @property
    def max_speed(self) -> float:
        """Largest speed in the cells and on the boundary faces."""
        return float(max(self.speed.max(), *(b.speed.max() for b in self.boundary.values() if b.faces.size)))

    # -- planes --------------------------------------------------------------------------
    @property
    def inlet(self) -> BoundaryState:
        return self.boundary[Boundary.INLET]

    @property
    def outlet(self) -> BoundaryState:
        return self.boundary[Boundary.OUTLET]

    @property
    def mass_flow(self) -> float:
        """Mass flow through the inlet plane from the face fluxes [kg/s]."""
        return -float(self.inlet.mass_flux.sum())

    @property
    def inlet_area(self) -> float:
        return self.inlet.total_area

    @property
    def outlet_area(self) -> float:
        return self.outlet.total_area

    @property
    def inlet_density(self) -> float:
        return self.inlet.mean(self.inlet.density)

    @property
    def outlet_density(self) -> float:
        return self.outlet.mean(self.outlet.density)

    @property
    def volume_flow(self) -> float:
        """Volume flow at inlet conditions [m^3/s] (the volume flow of a liquid)."""
        return self.mass_flow / self.inlet_density

    @property
    def inlet_velocity(self) -> float:
        """Mean (1D) velocity on the inlet plane: mdot / (rho A)."""
        return self.mass_flow / (self.inlet_density * self.inlet_area)

    @property
    def outlet_velocity(self) -> float:
        return self.mass_flow / (self.outlet_density * self.outlet_area)

    @property
    def inlet_pressure(self) -> float:
        """Area-mean gauge pressure on the inlet plane."""
        return self.inlet.mean(self.inlet.pressure)

    @property
    def outlet_pressure(self) -> float:
        return self.outlet.mean(self.outlet.pressure)

    @property
    def outlet_dynamic_pressure(self) -> float:
        """rho V_out^2 / 2 with the mean outlet velocity: the scale of Cp and of the 1D deviations."""
        return 0.5 * self.outlet_density * self.outlet_velocity**2

    @property
    def momentum_change(self) -> float:
        """mdot (V_out - V_in) with mean plane velocities [N]."""
        return self.mass_flow * (self.outlet_velocity - self.inlet_velocity)

    def axial_force(self, names) -> float:
        """Sum of p n_x dA over the named boundaries present (gauge pressure: the force by the fluid) [N]."""
        return float(sum(np.sum(b.pressure * b.normal[:, 0] * b.area) for n, b in self.boundary.items() if n in names))

    def min_pressure(self, names) -> float:
        """Lowest gauge pressure on the named boundaries present [Pa]."""
        return float(min(b.pressure.min() for n, b in self.boundary.items() if n in names and b.faces.size))

    @property
    def cp(self) -> np.ndarray:
        """Pressure coefficient of the cells on the outlet plane pressure and dynamic pressure."""
        return (self.pressure - self.outlet_pressure) / self.outlet_dynamic_pressure


def boundary_state(mesh, faces: np.ndarray, velocity: np.ndarray, pressure: np.ndarray, density,
                   face_mass_flux: np.ndarray) -> BoundaryState:
    """A BoundaryState with the face geometry of ``mesh``; ``face_mass_flux`` (F,) per radian out of the owner."""
    faces = np.asarray(faces, np.int64)
    rho = np.broadcast_to(np.asarray(density, float), faces.shape).copy()
    return BoundaryState(faces, mesh.face_centroid[faces], mesh.face_normal[faces], mesh.face_length[faces],
                         mesh.revolution * mesh.face_area[faces], np.asarray(velocity), np.asarray(pressure), rho,
                         mesh.revolution * face_mass_flux[faces])
