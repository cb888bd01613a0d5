"""The wall layer's settings and results: what the march, the coupling and the stage hand to each
other and to the summary (plain dataclasses and the constants they share)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import layer as L


PIPE_TRANSITION_RE = 2300.0  # pipe flow is turbulent above about this Reynolds number (common practice)
TURBULENT_ORIGIN_RE_THETA = 10.0  # a turbulent layer from zero thickness starts at this Re_theta (virtual origin)
RESTART_CORNER_DEG = 30.0  # concave corners turning at least this much restart the layer (stagnation)
# a corner drawn at the threshold restarts it: a 30 deg cone given by end points to 1 um computes as 29.99999 deg
RESTART_CORNER_TOL_DEG = 1e-3
SMOOTH_FACES = 2.0  # least width (in faces) of the local linear smoothing of the wall speed
SMOOTH_THETAS = 10.0  # ... and over the layer's own thickness, about 10 momentum thicknesses (delta_99)
G_STANDARD = 9.80665  # m/s^2, standard gravity (3rd CGPM, 1901)
THICK_LAYER = 0.1  # delta* above this fraction of the local channel height: the thin-layer view is stretched
CAUTION = ("A boundary-layer estimate is not a turbulence-resolving simulation; beyond separation the results are "
           "indicative only.")
STATE_CODES = "layer_state: 0 laminar, 1 turbulent, 2 separated, -1 no layer"


@dataclass(frozen=True)
class ViscousSettings:
    start: str | None = None  # None: by the inlet Reynolds number (resolve)
    start_momentum_thickness: float | None = None
    upstream_length: float | None = None
    transition: str | float = "michel"  # "michel" | "none" | x [m] where it is forced
    separation_shape_factor: float = 2.4
    displacement: str = "none"
    displacement_tolerance: float = 1e-3
    taps: tuple[float, float] | None = None
    coupling: str = "blockage"

    @classmethod
    def from_case(cls, case) -> "ViscousSettings":
        v = case.viscous
        return cls(v.start, v.start_momentum_thickness, v.upstream_length, v.transition, v.separation_shape_factor,
                   v.displacement, v.displacement_tolerance, v.taps, v.coupling)

    def resolve(self, reynolds: float, d_h: float) -> "ViscousSettings":
        """The settings with the defaults that depend on the flow filled in.

        Default (no ``start``, no start thickness, no upstream length): the layer starts from zero
        thickness at the inlet plane, turbulent above the pipe-flow Reynolds number 2300 (from a virtual
        origin at the inlet plane, Re_theta = 10, as Schlichting's flat-plate formula assumes), else
        laminar (then Michel's transition). The inlet plane is where the inviscid solution imposes a
        uniform stream; a layer already grown there would contradict that inflow (its displacement would speed up the core at the upstream
        station, and its kinetic-energy excess, the approach-velocity-profile effect, would raise the
        discharge coefficient above the inviscid one without any loss: the quasi-1D view cannot tell it
        from a wall effect). The layer thus models a bore fed from a uniform stream, e.g. through a
        bellmouth, as the inviscid solution does. An approach layer is modelled with ``upstream_length``
        or ``start_momentum_thickness``. Layers restarting at stagnation points are laminar whatever
        this setting."""
        from dataclasses import replace

        start = self.start or ("turbulent" if reynolds >= PIPE_TRANSITION_RE else "laminar")
        return replace(self, start=start)

    def as_dict(self) -> dict:
        return {"start": self.start, "start_momentum_thickness_m": self.start_momentum_thickness,
                "upstream_length_m": self.upstream_length,
                "transition": self.transition if isinstance(self.transition, str) else f"forced at x = {self.transition:.6g} m",
                "separation_shape_factor": self.separation_shape_factor, "displacement": self.displacement,
                "displacement_tolerance": self.displacement_tolerance,
                "taps_x_m": list(self.taps) if self.taps else None, "coupling": self.coupling,
                "restart_corner_deg": RESTART_CORNER_DEG, "smoothing_faces": SMOOTH_FACES,
                "turbulent_start_shape_factor": L.TURBULENT_START_H,
                "approach_layer": ("from zero thickness at the inlet plane, where the inviscid solution has a uniform stream"
                                   if self.start_momentum_thickness is None and not self.upstream_length else
                                   "given (start_momentum_thickness or upstream_length)")}


@dataclass(frozen=True, eq=False)
class ChainLayer:
    """The wall layer on one chain, per face in the order of its WallTable (arc length)."""

    name: str
    faces: np.ndarray
    x: np.ndarray
    r: np.ndarray
    s: np.ndarray
    ue: np.ndarray  # the smoothed inviscid edge speed the layer was marched with [m/s]
    theta: np.ndarray
    delta_star: np.ndarray
    H: np.ndarray
    cf: np.ndarray
    tau_w: np.ndarray  # [Pa], along the flow direction on the wall
    state: np.ndarray  # 0 laminar, 1 turbulent, 2 separated
    re_theta: np.ndarray
    tx: np.ndarray  # x component of the unit tangent in the flow direction
    area: np.ndarray  # full face area [m^2] (per unit depth when planar)
    rho: np.ndarray
    perimeter: np.ndarray  # 2 pi r (1 when planar)
    runs: tuple[tuple[float, str], ...]  # (x where a layer starts, how)
    transitions_x: tuple[float, ...]
    separations: tuple[tuple[float, float, str], ...]  # (x from, x to, "laminar" | "turbulent")
    momentum_friction_x_N: float  # the same force from the momentum integral of the layer
    start_deficit_W: float  # kinetic-energy deficit flux (rho/2) P ue^3 delta_3 entering at the inlet plane [W]
    end_deficit_W: float  # ... leaving at the downstream end (NaN when separated there)
    carried_delta_star: np.ndarray  # displacement of the fluid of earlier runs (ended at a restart) per face [m]
    carried_deficit_W: float  # kinetic-energy deficit flux of the runs that ended at a restart [W]
    start_displacement_m2: float  # P delta* at the upstream end of the chain (the inlet plane) [m^2 or m]
    corner_separations: int = 0  # separations that end in a concave corner where a new layer starts
    bubbles_x: tuple[float, ...] = ()  # short laminar separation bubbles (transition placed there)

    @property
    def displacement(self) -> np.ndarray:
        """The displacement thickness of all the deficit fluid at each face: the current layer's and
        the carried one of the layers that ended upstream at a restart [m]."""
        return self.delta_star + self.carried_delta_star

    @property
    def shear_x(self) -> np.ndarray:
        """Axial friction force per face [N] (0 on separated faces)."""
        return np.where(np.isfinite(self.tau_w), self.tau_w, 0.0) * self.tx * self.area

    @property
    def friction_x_N(self) -> float:
        return float(self.shear_x.sum())

    def columns(self) -> dict[str, np.ndarray]:
        return {"tau_w_Pa": self.tau_w, "cf": self.cf, "theta_m": self.theta, "delta_star_m": self.delta_star,
                "shape_factor": self.H, "re_theta": self.re_theta, "layer_state": self.state.astype(float),
                "carried_delta_star_m": self.carried_delta_star,
                "edge_speed_m_s": self.ue, "cumulative_friction_x_N": np.cumsum(self.shear_x)}


@dataclass(frozen=True, eq=False)
class ViscousResult:
    model: str
    settings: ViscousSettings
    viscosity_Pa_s: float  # at the inlet
    kinematic_viscosity_m2_s: float
    viscosity_source: str
    chains: dict[str, ChainLayer]
    reynolds_number: float
    reynolds_length_m: float
    reynolds_basis: str
    friction_x_N: float
    momentum_friction_x_N: float
    discharge_coefficient: float | None
    discharge_coefficient_inviscid: float | None
    discharge_coefficient_note: str
    loss_coefficient: float | None
    loss_coefficient_note: str
    total_pressure_loss_Pa: float | None
    head_loss_m: float | None
    transition_x_m: list[float]
    separation_x_ranges_m: list[list[float]]
    separation_kind: list[str]
    max_shape_factor: float | None
    max_shape_factor_x_m: float | None
    warnings: list[str]
    seconds: float
    coupling_note: str = ""
    # the separations that end in a concave corner where a new layer starts (corner vortices; a subset of
    # separation_x_ranges_m); the layer downstream of them is attached
    corner_vortex_x_ranges_m: list[list[float]] = field(default_factory=list)
    coupling: object | None = None  # Coupling: converged flag, iterations, last change as numbers
    displacement: object | None = None  # displacement.DisplacementResult when the pass ran
    notes: list[str] = field(default_factory=list)
    # 4 rho Q / (mu P) at the bore's narrowest section (a free jet's opening) and where: with the inlet plane's, what
    # the gate of MIN_LAYER_RE looks at (a hole in a wide tank: small on the inlet plane, large in the hole)
    reynolds_number_narrowest: float | None = None
    reynolds_narrowest_at: str = ""

    @property
    def separated(self) -> bool:
        """The layer separates somewhere other than into a concave corner that restarts it."""
        return len(self.separation_x_ranges_m) > len(self.corner_vortex_x_ranges_m)


# --- helpers -------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Coupling:
    """The state of the blockage coupling, as numbers."""

    mode: str  # "blockage" | "none"
    converged: bool
    iterations: int  # marches of the layers
    last_change: float  # largest change of B at a face between the last two marches (0: nothing lagged changed)
    tolerance: float
    largest_blockage: float
    note: str

    def as_dict(self) -> dict:
        return {"mode": self.mode, "converged": self.converged, "iterations": self.iterations,
                "last_change": self.last_change, "tolerance": self.tolerance,
                "largest_blockage": self.largest_blockage}



class LayerWithheld(Exception):
    """The wall layer is not computed for this flow (the reason is the message); the run goes on without it."""
