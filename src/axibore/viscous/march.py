"""The wall layer along every wall chain of a solved flow: properties at the wall, the march of
each chain (laminar, transition, turbulent, restarts, carried deficit), the blockage coupling with
the core flow and the viscous discharge and loss coefficients (``wall_layers``). The stage of a run
(``stage.viscous_stage``) calls it and, when asked, the displacement pass. An integral wall layer
on every wall chain of a solved flow (not a solver).

``wall_layers(case, profile, flow, tables, onedim)`` takes the inviscid result and returns a
``ViscousResult``: per wall face the momentum and displacement thickness, shape factor, skin
friction, wall shear and state (laminar / turbulent / separated), and for the run the friction
force, Reynolds number, viscous discharge coefficient, loss coefficient and head loss, the
transition and separation positions and the warnings a separated layer calls for.

How a chain is marched (the methods are in ``layer.py``)
--------------------------------------------------------
- Edge speed: the inviscid wall speed of the faces, smoothed by a local linear fit over a few
  faces (Gaussian weights, width ``SMOOTH_FACES`` faces). A wall layer responds to the pressure
  over many layer thicknesses; cell-to-cell noise of the reconstructed wall speed and the
  near-singular speed of a mild corner, both at the scale of one cell, would otherwise show as
  strong local pressure gradients and spurious separation. Linear trends are kept exactly, also
  at the chain ends (no end bias, no outlet-plane artefact).
- Runs: a layer starts at the upstream end of the chain: a leading edge at the inlet plane (with
  the momentum thickness given or grown over ``upstream_length``), or a stagnation point where a
  chain starts on the axis. A new layer starts at every concave corner turning by
  ``RESTART_CORNER_DEG`` or more (the inviscid flow stagnates in such a corner, e.g. the inlet
  face of a flow nozzle in its pipe): the layer arriving there decelerates to zero speed and
  separates (a corner vortex), and a new laminar layer grows from the stagnation point.
  By default the layer at the inlet plane has zero thickness (see ``ViscousSettings.resolve``).
- The deficit of a run that ends at a restart is carried on: its fluid passes on beside the new
  layer with the total-pressure deficit it had, displacing the core by E/(rho ue^3) (E its kinetic-
  energy deficit flux; derived in ``march_chain``) and counting in the loss.
- Separation ends a run: the faces up to the next restart (or the end of the chain) are marked
  separated, their values NaN, and counted with no wall shear. So does a layer whose displacement
  thickness reaches a quarter of the wall's distance from the axis (it would fill the channel).

Bounds by construction
----------------------
With the layer starting at zero thickness at the upstream station, the blockage there is zero and
it is positive downstream, so the pressure difference only grows: the viscous discharge
coefficient is at most the inviscid one. Where an approach layer given by the user sits at the
upstream station, the quasi-1D estimate could exceed the inviscid value (the approach-velocity-
profile effect); the number is then withheld with the reason. The loss coefficient comes from the
growth of the deficit fluxes (each run's largest, the energy equation allowing no fall), withheld
if the total would be negative. Gases: the reference-temperature method of Eckert (1955) on an
adiabatic wall (``_reference_state``).

Derived quantities
------------------
- Friction force: F_f = sum over faces tau_w t_x dA (t the unit tangent in the direction of the
  flow, dA the full face area), by the fluid on the part, +x downstream.
- The momentum integral of the layer, sum int t_x [d(rho P ue^2 theta)/ds + rho P delta* ue
  due/ds] ds (P the perimeter 2 pi r, 1 per unit depth when planar), is the same force from the
  von Karman momentum equation (derived); it reconciles the wall-shear integral with the layer's
  momentum balance.
- Discharge coefficient: Q = C E A_m sqrt(2 dp / rho), E = 1/sqrt(1 - (A_m/A_1)^2), A_m the
  smallest flow area normal to the axis between the two stations, A_1 the area at the upstream
  one, dp the static pressure difference between them: the wall pressures at ``viscous.taps``
  (ISO 5167 style wall tappings), else the mean pressures of the inlet and outlet planes. With the
  layer, the core speed at a station rises by 1/(1 - B), B = sum P delta* / A the blockage
  (continuity), and its pressure falls accordingly (Bernoulli in the inviscid core; the pressure
  is carried unchanged through a thin layer). Gases: the quasi-1D discharge coefficient times
  (1 - B) at the narrowest section.
- Loss coefficient: K = dp_0 / (rho V^2 / 2), dp_0 the mass-averaged total-pressure loss from
  inlet to outlet = the growth of the layers' kinetic-energy deficit sum (rho/2) P ue^3 delta_3 /
  Q (kinetic-energy integral equation: its growth is the dissipation in the layer; derived), V
  the larger of the mean inlet and outlet velocities (common practice); energy thickness
  delta_3 = theta 4H/(3H - 1), exact for power-law velocity profiles (derived; Blasius 1.572
  against 1.53 from it). Head loss dp_0 / (rho g), g = 9.80665 m/s^2 (standard gravity).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from ..fluids.viscosity import SUTHERLAND, viscosity
from ..names import Boundary
from ..solvers.base import FlowError
from ..solvers.walls import arc_length
from . import layer as L

PIPE_TRANSITION_RE = 2300.0  # pipe flow is turbulent above about this Reynolds number (common practice)
TURBULENT_ORIGIN_RE_THETA = 10.0  # a turbulent layer from zero thickness starts at this Re_theta (virtual origin)
RESTART_CORNER_DEG = 30.0  # concave corners turning at least this much restart the layer (stagnation)
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
    coupling: object | None = None  # Coupling: converged flag, iterations, last change as numbers
    displacement: object | None = None  # displacement.DisplacementResult when the pass ran
    notes: list[str] = field(default_factory=list)

    @property
    def separated(self) -> bool:
        return bool(self.separation_x_ranges_m)


# --- helpers -------------------------------------------------------------------------------------


def smooth_speed(u: np.ndarray, width=SMOOTH_FACES) -> np.ndarray:
    """Local linear fit of ``u`` at every station over the stations within sqrt(3) ``width`` of it
    (a window of the same variance as a Gaussian of standard deviation ``width`` stations; a
    number or one per station, shrunk at the ends): noise at the scale of a station is removed,
    linear trends are kept exactly, at the ends too. O(n) by cumulative sums, whatever the width."""
    n = u.size
    w_i = np.broadcast_to(np.asarray(width, float), u.shape)
    if n < 3 or not np.any(w_i > 0):
        return u.copy()
    i = np.arange(n)
    k = np.maximum(np.ceil(np.sqrt(3.0) * w_i).astype(np.int64), 1)
    lo, hi = np.maximum(i - k, 0), np.minimum(i + k, n - 1) + 1  # window [lo, hi)
    t = i.astype(float)

    def window_sum(a):
        c = np.r_[0.0, np.cumsum(a)]
        return c[hi] - c[lo]

    # sums about each station's own index (t - i), from the cumulative sums of 1, t, t^2, u, t u
    s0 = (hi - lo).astype(float)
    s1 = window_sum(t) - i * s0
    s2 = window_sum(t * t) - 2.0 * i * window_sum(t) + i * i * s0
    sy = window_sum(u)
    sty = window_sum(t * u) - i * sy
    det = s0 * s2 - s1 * s1
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(det > 1e-9 * s0 * s0, (s2 * sy - s1 * sty) / det, sy / s0)


def _face_index(bv_faces: np.ndarray, faces: np.ndarray) -> np.ndarray:
    pos = np.argsort(bv_faces)
    return pos[np.searchsorted(bv_faces[pos], faces)]


class LayerWithheld(Exception):
    """The wall layer is not computed for this flow (the reason is the message); the run goes on without it."""


WATER_P_MAX = 100e6  # Pa, upper end of IAPWS-IF97 region 1 (Wagner et al. 2000), which the water viscosity uses
MIN_LAYER_RE = 1000.0  # below it a bore flow has no inviscid core and thin wall layer: a laminar layer grown over one
# diameter is already 5/sqrt(Re_D) = 0.16 D thick at Re_D = 1000 (Blasius, delta_99 = 5 x/sqrt(Re_x); Schlichting ch. 7)


def _viscosity(case, flow) -> tuple[float, str]:
    f = case.fluid
    p_abs = flow.inlet_pressure + case.ambient_pressure
    if f.kind in ("water", "seawater") and not p_abs <= WATER_P_MAX:
        key = "inlet.flow_rate" if getattr(case.inlet, "flow_rate", None) is not None else "inlet.pressure"
        raise FlowError(key, f"the inlet pressure of this operating point, {p_abs / 1e6:.4g} MPa (absolute), is above the "
                        f"{WATER_P_MAX / 1e6:g} MPa of the water properties (IAPWS-IF97 region 1) that the wall layer's "
                        "viscosity needs: lower the flow or pressure, or give the fluid as kind = \"liquid\" with its viscosity")
    try:
        return _viscosity_of(case, flow, f, p_abs, viscosity)
    except (ValueError, NotImplementedError) as exc:
        raise FlowError("fluid", f"no viscosity for the wall layer at the inlet state ({p_abs / 1e6:.4g} MPa absolute): "
                        f"{exc}") from None


def _viscosity_of(case, flow, f, p_abs, viscosity) -> tuple[float, str]:
    if f.kind == "water":
        return viscosity(f, None, p_abs), "IAPWS 2008 (Huber et al. 2009), at the fluid temperature and inlet pressure"
    if f.kind == "seawater":
        return viscosity(f, None, p_abs), ("pure water (IAPWS 2008) times the salinity factor of Sharqawy et al. 2010, "
                                           "35 g/kg (common practice)")
    if f.kind == "liquid":
        return viscosity(f, None, p_abs), "given (fluid.viscosity)"
    t_in = float(np.mean((flow.inlet.pressure + case.ambient_pressure) / (flow.inlet.density * f.gas_constant)))
    return viscosity(f, t_in, p_abs), "Sutherland's law (White, Viscous Fluid Flow, table 1-2), at the wall temperature"


def _gas_mu(case, T: np.ndarray) -> np.ndarray:
    mu0, t0, s = SUTHERLAND[case.fluid.name.lower()]
    return mu0 * (T / t0) ** 1.5 * (t0 + s) / (T + s)


AIR_PRANDTL = 0.71  # Prandtl number of air near room temperature (a property; White, Viscous Fluid Flow, table 1-2)
RECOVERY_EXPONENT = 1.0 / 3.0  # r = Pr^(1/3), turbulent layers (laminar: Pr^(1/2), 0.84 for air; T* changes < 0.5 % at M 1)


def _reference_state(case, p_abs: np.ndarray, rho_e: np.ndarray, ue: np.ndarray):
    """A gas layer by the reference-temperature method: the incompressible integral relations with the
    density and viscosity at Eckert's reference temperature (Eckert 1955, J. Aeronaut. Sci. 22(8),
    "Engineering relations for friction and heat transfer to surfaces in high velocity flow"; as given by
    Anderson, Fundamentals of Aerodynamics, ch. 18, eq. 18.53):
        T*/Te = 1 + 0.032 Me^2 + 0.58 (Tw/Te - 1),
    on an adiabatic wall, Tw = Taw = Te (1 + r (gamma - 1)/2 Me^2), r the recovery factor. The edge state
    (p, rho, speed) is the Euler solution's at the wall face; Te = p/(rho R). Returns the reference
    density rho* = rho_e Te/T* (same pressure), nu* = mu(T*)/rho*, and k = r (gamma - 1)/2 Me^2, for the
    shape factor of the compressible layer H = H_i + k (H_i + 1): from delta* = int (T/Te - u/Ue) dY and
    theta = int u/Ue (1 - u/Ue) dY in Howarth-Dorodnitsyn's variable dY = rho/rho_e dy, with the Crocco-
    Busemann temperature T/Te = 1 + r (gamma - 1)/2 Me^2 (1 - u^2/Ue^2) of an adiabatic wall (derived)."""
    f = case.fluid
    Te = p_abs / (rho_e * f.gas_constant)
    M2 = ue**2 / (f.gamma * f.gas_constant * Te)
    r = AIR_PRANDTL**RECOVERY_EXPONENT
    k = r * 0.5 * (f.gamma - 1.0) * M2
    T_ref = Te * (1.0 + 0.032 * M2 + 0.58 * k)  # Taw/Te - 1 = k
    rho_ref = rho_e * Te / T_ref
    return rho_ref, _gas_mu(case, T_ref) / rho_ref, k


def _tangent_x(table) -> np.ndarray:
    """x component of the unit tangent of each face, in the direction of increasing arc length."""
    nx, nr = table.nx, table.nr
    if table.s.size < 2:
        return -nr
    gx, gr = np.gradient(table.x, table.s), np.gradient(table.r, table.s)
    sign = np.sign(gx * nr - gr * nx)  # t = +-(n_r, -n_x), oriented along the chain
    sign = np.where(sign == 0, 1.0, sign)
    return sign * nr


def _restarts(profile, name: str, s_faces: np.ndarray) -> list[tuple[float, float, float]]:
    """(s, x, r) of the concave corners of a chain that restart the layer."""
    out = []
    poly = profile.chain_points(name)
    for c in profile.corners():
        if str(c.boundary) == name and not c.convex and abs(math.degrees(c.turn)) >= RESTART_CORNER_DEG:
            sc = float(arc_length(np.array([[c.x, c.r]]), poly)[0])
            if s_faces[0] < sc < s_faces[-1]:
                out.append((sc, c.x, c.r))
    return sorted(out)


def _start_theta(settings: ViscousSettings, ue0: float, nu0: float, r0: float, planar: bool) -> float | None:
    if settings.start_momentum_thickness is not None:
        return settings.start_momentum_thickness
    Lu = settings.upstream_length
    if not Lu:
        # from zero thickness at the inlet plane; a turbulent march starts at a virtual origin (Re_theta = 10;
        # forgotten by Re_x = 1e5, where the flat-plate friction is within 1 % of Schlichting's, tests/test_viscous.py)
        return TURBULENT_ORIGIN_RE_THETA * nu0 / ue0 if settings.start == "turbulent" else None
    if settings.start == "laminar":
        theta = math.sqrt(0.45 * nu0 * Lu / ue0)  # Thwaites' flat plate (the method's own value)
        return theta if planar else min(theta, 2.0 / 15.0 * r0)  # at most Poiseuille's developed profile (rules.py)
    theta = 0.036 * Lu * (ue0 * Lu / nu0) ** -0.2  # one-seventh law, theta = (7/72) delta, delta = 0.37 x Re_x^-0.2
    return theta if planar else min(theta, 7.0 / 72.0 * r0)  # at most a fully developed pipe layer (delta = r)


THICK_FRACTION = 0.25  # delta* at most this share of the wall's distance from the axis (or symmetry plane)


def _bounded_by_channel(w, h, k):
    """The layer ``w`` of a run, ended where its displacement thickness (with a gas layer's compressible
    part, k) reaches a quarter of the distance h from the wall to the axis or symmetry plane: the blockage
    of a round bore is then about 2 delta*/r = 0.5, a layer filling the channel, where a thin-layer estimate
    has no meaning (and a march decelerating into a corner can blow up). From there the run is marked
    separated ("thick"), its values NaN, as past a separation."""
    from dataclasses import replace

    dstar = w.delta_star + k * (w.H + 1.0) * w.theta
    with np.errstate(invalid="ignore"):
        thick = np.flatnonzero((dstar > THICK_FRACTION * h) & (w.state != L.SEPARATED) & (h > 0.0))
    thick = thick[thick >= 1]
    if not thick.size:
        return w
    j = int(thick[0])
    if w.separation_s is not None and w.separation_s <= w.s[j]:
        return w
    gone = np.arange(w.s.size) >= j

    def cut(a):
        if a is None:
            return None
        a = np.array(a, dtype=float, copy=True)
        a[gone] = np.nan
        return a

    state = np.array(w.state, copy=True)
    state[gone] = L.SEPARATED
    return replace(w, theta=cut(w.theta), delta_star=cut(w.delta_star), H=cut(w.H), cf=cut(w.cf), tau_w=cut(w.tau_w),
                   state=state, Re_theta=cut(w.Re_theta), separation_s=float(w.s[j]), separation_kind="thick",
                   notes=w.notes + (f"the layer fills a quarter of the channel at s = {w.s[j]:.6g} m: marked separated "
                                    "from there",))


def _energy_thickness(theta, H):
    return theta * 4.0 * H / (3.0 * H - 1.0)


# --- one chain -----------------------------------------------------------------------------------


def march_chain(name: str, table, rho: np.ndarray, nu: np.ndarray, kcomp: np.ndarray, settings: ViscousSettings, profile,
                planar: bool, speed: np.ndarray | None = None, width: np.ndarray | None = None
                ) -> tuple[ChainLayer, np.ndarray]:
    """The layer on one chain from the wall speed ``speed`` (default the table's), smoothed over
    ``width`` faces per face (default: a first march at the face scale, then over its layer
    thickness). Returns the layer and the smoothing width its thickness calls for."""
    n = table.s.size
    speed = table.speed if speed is None else speed
    width_next = np.full(n, SMOOTH_FACES)
    s_all, x_all, r_all = table.s, table.x, table.r
    perim = np.ones(n) if planar else 2.0 * math.pi * r_all
    tx = _tangent_x(table)
    area = table.length if planar else 2.0 * math.pi * r_all * table.length
    theta = np.full(n, np.nan)
    dstar = np.full(n, np.nan)
    H = np.full(n, np.nan)
    cf = np.full(n, np.nan)
    tau = np.full(n, np.nan)
    re_th = np.full(n, np.nan)
    state = np.full(n, L.SEPARATED, np.int8)
    ue_all = np.zeros(n)
    runs, transitions, separations = [], [], []
    mom_fx = 0.0
    start_def, end_def = 0.0, float("nan")
    start_disp = 0.0
    carried = np.zeros(n)  # displacement of the deficit fluid of the runs that ended upstream
    carried_E, carried_U = 0.0, 0.0  # their kinetic-energy deficit flux [W], and the edge speed where it was taken
    corner_seps = 0

    chain0 = profile.chain_points(name)[0]
    bounds = [(float(0.0), float(chain0[0]), float(chain0[1]), "start")]
    bounds += [(sc, xc, rc, "corner") for sc, xc, rc in _restarts(profile, name, s_all)]
    edges = [np.searchsorted(s_all, b[0]) for b in bounds] + [n]
    for k, (sb, xb, rb, how) in enumerate(bounds):
        sel = np.arange(edges[k], edges[k + 1])
        if sel.size < 2:
            continue
        stagnation = how == "corner" or (rb <= profile.tol and not planar)
        th0 = None
        start = "laminar"
        if how == "start":
            start = settings.start if not stagnation else "laminar"
            runs.append((xb, "inlet plane" if not stagnation else "stagnation point on the axis"))
        else:
            runs.append((xb, "stagnation point in a concave corner"))
        floor = 1e-9 * max(float(speed.max()), 1e-30)
        passes = 2 if width is None else 1
        w_run = SMOOTH_FACES if width is None else width[sel]
        for _ in range(passes):  # smoothed at the face scale, then again over the layer thickness of the first march
            u = np.maximum(smooth_speed(speed[sel], w_run), floor)
            # a station at the start of the run: the stagnation point, or the leading edge at the inlet plane
            s_run = np.r_[0.0, s_all[sel] - sb]
            ue_run = np.r_[0.0 if stagnation else u[0], u]
            r_run = np.r_[rb, r_all[sel]] if not planar else np.ones(sel.size + 1)
            nu_run = np.r_[nu[sel[0]], nu[sel]]
            rho_run = np.r_[rho[sel[0]], rho[sel]]
            keep = np.r_[True, np.diff(s_run) > 0]
            s_run, ue_run, r_run, nu_run, rho_run = s_run[keep], ue_run[keep], r_run[keep], nu_run[keep], rho_run[keep]
            face_in_run = sel[keep[1:]]
            if how == "start" and not stagnation:
                th0 = _start_theta(settings, float(ue_run[0]), float(nu_run[0]), float(r_run[0]), planar)
            tr = settings.transition
            if isinstance(tr, float):
                xs = x_all[face_in_run]
                hit = np.flatnonzero(xs >= tr)
                if not hit.size:
                    tr = "none"
                else:
                    s_tr = float(s_run[1 + hit[0]]) if hit[0] > 0 else 0.0
                    if s_tr <= 0.0 and not stagnation and not th0:
                        s_tr = float(s_run[1])  # a sharp leading edge has no layer to trip at its very edge
                    tr = s_tr
            w = L.march(s_run, r_run, ue_run, nu_run, planar=planar, start=start, theta0=th0, transition=tr,
                        turbulent_separation_H=settings.separation_shape_factor, rho=rho_run)
            th = w.theta[1:]
            fin = np.isfinite(th)
            if not fin.any():
                break
            th = np.interp(np.arange(th.size), np.flatnonzero(fin), th[fin])  # held past separation
            h_face = np.maximum(table.length[face_in_run], 1e-300)
            width_run = np.maximum(SMOOTH_FACES, SMOOTH_THETAS * th / h_face)
            width_next[face_in_run] = width_run
            if face_in_run.size != sel.size:
                break
            w_run = width_run
        ue_all[sel] = u
        if carried_E > 0.0:
            # The fluid of the layers that ended upstream at a restart (into a concave corner) passes on
            # beside the new layer with the total-pressure deficit it carried: int dp0 dQ = E, its kinetic-
            # energy deficit flux (rho/2) P ue^3 delta_3 (derived). Where the edge speed is Uc >> the deficit
            # speed scale, its speed is Uc - dp0/(rho Uc) and its displacement area int (1 - u/Uc) dA =
            # E/(rho Uc^3) (first order in dp0/(rho Uc^2); derived). Where the edge speed is still below the one
            # at which E was taken, the deficit fluid is still turning in the corner flow (the corner vortex): its
            # displacement there is blended in with the edge speed, ue/U_E E/(rho U_E^3) (a blend, not a law; the
            # stations of the discharge coefficient lie downstream, where ue is well above U_E).
            ur = u[: sel.size]
            carried[sel] = carried_E * np.minimum(ur / carried_U, 1.0) / (rho[sel] * np.maximum(ur, carried_U) ** 3 * perim[sel])
        i = slice(1, None)
        w = _bounded_by_channel(w, np.r_[rb, r_all[sel]][keep], kcomp[np.r_[sel[0], sel]][keep])
        theta[face_in_run], H[face_in_run] = w.theta[i], w.H[i]
        # a gas layer's displacement: H = H_i + k (H_i + 1) (see _reference_state; k = 0 for liquids)
        kf = kcomp[face_in_run]
        dstar[face_in_run] = w.delta_star[i] + kf * (w.H[i] + 1.0) * w.theta[i]
        H[face_in_run] = w.H[i] + kf * (w.H[i] + 1.0)
        cf[face_in_run], tau[face_in_run], re_th[face_in_run] = w.cf[i], w.tau_w[i], w.Re_theta[i]
        state[face_in_run] = w.state[i]
        if w.transition_s is not None:
            transitions.append(float(np.interp(w.transition_s, s_run[1:], x_all[face_in_run])))
        if w.separation_s is not None:
            x_sep = float(np.interp(w.separation_s, s_run[1:], x_all[face_in_run]))
            separations.append((x_sep, float(x_all[sel[-1]]), str(w.separation_kind)))
        # the momentum integral of the attached part: int t_x [d(rho P ue^2 theta) + rho P delta* ue due]
        att = np.flatnonzero(w.state != L.SEPARATED)
        if att.size >= 2:
            P_run = np.ones(s_run.size) if planar else 2.0 * math.pi * r_run
            tx_run = np.r_[tx[face_in_run[0]], tx[face_in_run]]
            th_a = np.where(np.isfinite(w.theta), w.theta, 0.0)[att]
            M = rho_run[att] * P_run[att] * ue_run[att] ** 2 * th_a
            D = rho_run[att] * P_run[att] * w.delta_star[att] * ue_run[att]
            du = np.diff(ue_run[att])
            txm = 0.5 * (tx_run[att][1:] + tx_run[att][:-1])
            mom_fx += float(np.sum(txm * (np.diff(M) + 0.5 * (D[1:] + D[:-1]) * du)))
        P0 = 1.0 if planar else 2.0 * math.pi * r_run[0]
        if how == "start" and th0:
            H0 = w.H[0] if np.isfinite(w.H[0]) else L.TURBULENT_START_H
            start_def = 0.5 * rho_run[0] * P0 * ue_run[0] ** 3 * float(_energy_thickness(th0, H0))
            start_disp = P0 * th0 * H0
        if k < len(bounds) - 1:
            # the run ends at the next restart: its deficit (at its last attached face) is carried on
            # (the largest along the attached run: by the kinetic-energy integral equation the deficit flux only
            # grows, d/ds [(rho/2) P ue^3 delta_3] = P x dissipation >= 0 (derived); where the closure's energy
            # thickness lets it fall, in the deceleration before a separation, the deficit already dissipated is kept)
            att_f = np.flatnonzero(np.isfinite(theta[face_in_run]) & (state[face_in_run] != L.SEPARATED))
            if att_f.size:
                j = face_in_run[att_f]
                E_run = 0.5 * rho[j] * perim[j] * ue_all[j] ** 3 * _energy_thickness(theta[j], H[j])
                carried_E += float(np.max(E_run))
                carried_U = max(carried_U, float(ue_all[j[int(np.argmax(E_run))]]))
            if w.separation_s is not None:
                corner_seps += 1
        if k == len(bounds) - 1:
            j = face_in_run[-1]
            if state[j] != L.SEPARATED:
                # the largest along the run (the deficit flux only grows; see the carried deficit above)
                jj = face_in_run[np.isfinite(theta[face_in_run]) & (state[face_in_run] != L.SEPARATED)]
                end_def = float(np.max(0.5 * rho[jj] * perim[jj] * ue_all[jj] ** 3 * _energy_thickness(theta[jj], H[jj])))
            else:
                end_def = float("nan")
    return ChainLayer(name, table.faces, x_all, r_all, s_all, ue_all, theta, dstar, H, cf, tau, state, re_th, tx, area,
                      rho, perim, tuple(runs), tuple(transitions), tuple(separations), mom_fx, start_def, end_def,
                      carried, carried_E, start_disp, corner_seps), width_next


# --- the stage -----------------------------------------------------------------------------------

COUPLING_MAX_ITERATIONS = 25
COUPLING_RELAXATION = 0.5
COUPLING_TOLERANCE = 1e-3  # on the blockage B at every face
MAX_BLOCKAGE = 0.5


def face_blockage(chains: dict[str, ChainLayer], profile, planar: bool) -> dict[str, np.ndarray]:
    """B = sum over the chains of P delta* / A at the x of every face (separated values held from the
    last attached face; chains counted where they span the face's x)."""
    parts = []
    for c in chains.values():
        ds = c.displacement
        fin = np.isfinite(ds)
        if not fin.any():
            continue
        ds = np.interp(np.arange(ds.size), np.flatnonzero(fin), ds[fin])
        order = np.argsort(c.x)
        parts.append((c.x[order], (c.perimeter * ds)[order]))
    out = {}
    for name, c in chains.items():
        A = profile.flow_area(np.atleast_1d(c.x))
        total = np.zeros(c.x.size)
        for xs, pd in parts:
            inside = (c.x >= xs[0] - 1e-9) & (c.x <= xs[-1] + 1e-9)
            total += np.where(inside, np.interp(c.x, xs, pd), 0.0)
        out[name] = np.clip(total / np.maximum(A, 1e-300), 0.0, MAX_BLOCKAGE)
    return out


@dataclass(frozen=True)
class Coupling:
    """The state of the blockage coupling, as numbers."""

    mode: str  # "blockage" | "none"
    converged: bool
    iterations: int
    last_change: float  # largest change of B at a face in the last iteration
    tolerance: float
    largest_blockage: float
    note: str

    def as_dict(self) -> dict:
        return {"mode": self.mode, "converged": self.converged, "iterations": self.iterations,
                "last_change": self.last_change, "tolerance": self.tolerance,
                "largest_blockage": self.largest_blockage}


def coupled_layers(tables: dict, props: dict, settings: ViscousSettings, profile, planar: bool
                   ) -> tuple[dict[str, ChainLayer], Coupling]:
    """The layers of all chains. With ``coupling = "blockage"`` the edge speed is the inviscid wall
    speed over (1 - B), B the displacement blockage of the section (continuity in the core: a
    quasi-1D interaction), found by under-relaxed fixed-point iteration."""
    first = {n: march_chain(n, t, *props[n], settings, profile, planar) for n, t in tables.items()}
    chains = {n: v[0] for n, v in first.items()}
    widths = {n: v[1] for n, v in first.items()}
    if settings.coupling != "blockage":
        return chains, Coupling("none", True, 0, 0.0, COUPLING_TOLERANCE, 0.0,
                                "none: the layer is marched on the inviscid wall speed")
    if not profile.monotone:
        return chains, Coupling("none", True, 0, 0.0, COUPLING_TOLERANCE, 0.0,
                                "none: the wall runs backwards in x, so a section's blockage is not defined")
    B = {n: np.zeros(t.s.size) for n, t in tables.items()}
    change, last, omega = float("inf"), float("inf"), COUPLING_RELAXATION
    def attached(c):  # attached, and not within two faces upstream of a separation
        sep = c.state == L.SEPARATED
        near = sep.copy()
        near[:-1] |= sep[1:]
        near[:-2] |= sep[2:]
        return ~near

    attached_before = {n: attached(c) for n, c in chains.items()}
    for it in range(1, COUPLING_MAX_ITERATIONS + 1):
        Bn = face_blockage(chains, profile, planar)
        # measured on the faces attached in this march and the one before: where the separation point moves by a
        # face between iterations, that face's blockage jumps between the attached layer's and the value held
        # across the separated range (the position of a separation is resolved to a face, no better)
        # (and on faces running within 60 deg of the axis: on a wall facing the flow, the inlet face of a nozzle,
        # a cross-section's blockage is not defined and the layer there is the stagnation flow's)
        att = {n: attached_before[n] & attached(c) & (np.abs(c.tx) >= 0.5) for n, c in chains.items()}
        attached_before = {n: attached(c) for n, c in chains.items()}
        change = max(float(np.max(np.abs(Bn[n] - B[n])[att[n]])) if att[n].any() else 0.0 for n in B)
        if change < COUPLING_TOLERANCE:
            break
        if change > last or abs(change - last) < 0.02 * last:  # growing, or stuck in a cycle: relax harder
            omega = max(0.5 * omega, 0.05)
        last = change
        B = {n: B[n] + omega * (Bn[n] - B[n]) for n in B}
        res = {n: march_chain(n, t, *props[n], settings, profile, planar, t.speed / (1.0 - B[n]), widths[n])
               for n, t in tables.items()}
        chains = {n: v[0] for n, v in res.items()}
        widths = {n: v[1] for n, v in res.items()}
    state = f"converged in {it} iterations" if change < COUPLING_TOLERANCE else \
        f"NOT converged in {COUPLING_MAX_ITERATIONS} iterations (B still changes by {change:.2g} between iterations)"
    Bmax = max(float(b.max()) for b in B.values()) if B else 0.0
    return chains, Coupling("blockage", bool(change < COUPLING_TOLERANCE), it, float(change), COUPLING_TOLERANCE, Bmax,
                            f"blockage: edge speed = inviscid wall speed / (1 - B), B = sum P delta* / A (continuity in "
                            f"the core), {state} to {COUPLING_TOLERANCE:g} in B; largest B {Bmax:.3g}")


def blockage(chains: dict[str, ChainLayer], profile, x: float, planar: bool) -> float:
    """sum P delta* / A at axial station x (chains that cross it; NaN where a layer there is separated),
    delta* of all the deficit fluid (the current layer and the carried one). On a wall that runs forward
    in x the value is interpolated in x, from the chain's start value at its upstream end (the inlet
    plane: zero for a layer that starts there) to its last face; else the nearest face's."""
    A = float(profile.flow_area(np.atleast_1d(x))[0])
    total = 0.0
    for c in chains.values():
        margin = float(c.s[-1] - c.s[0]) / max(c.x.size - 1, 1)  # the planes lie half a face beyond the end faces
        if c.x.size < 2 or not (min(c.x[0], c.x[-1]) - margin <= x <= max(c.x[0], c.x[-1]) + margin):
            continue
        pd = c.perimeter * c.displacement
        if np.all(np.diff(c.x) > 0.0) and x <= c.x[-1]:
            x0 = c.x[0] - 0.5 * (c.x[1] - c.x[0])  # the chain's upstream end (half a face before the first face)
            total += float(np.interp(x, np.r_[x0, c.x], np.r_[c.start_displacement_m2, pd]))
        else:
            total += float(pd[int(np.argmin(np.abs(c.x - x)))])
    return total / A


def _station_pressures(flow, tables, taps):
    """Inviscid (p, core speed) at the two stations: wall taps, or the inlet and outlet plane means."""
    if taps is None:
        return [(flow.inlet_pressure, flow.inlet_velocity), (flow.outlet_pressure, flow.outlet_velocity)]
    t = tables[Boundary.WALL]
    return [(float(np.interp(x, t.x, t.pressure)), float(np.interp(x, t.x, t.speed))) for x in taps]


def discharge_coefficient(flow, profile, tables, taps, chains=None, planar=False) -> tuple[float | None, str]:
    """C = Q / (E A_m sqrt(2 dp / rho)) between two stations (see the module text); with ``chains``
    the pressures carry the first-order displacement of the layer (core speed / (1 - B))."""
    x1, x2 = taps if taps is not None else (profile.x_inlet, profile.x_outlet)
    xs = np.linspace(x1, x2, 801)
    A = profile.flow_area(np.atleast_1d(xs))
    A_m, A_1 = float(A.min()), float(A[0])
    rho = flow.inlet_density
    (p1, u1), (p2, u2) = _station_pressures(flow, tables, taps)
    if chains is not None:
        for k, (x, u) in enumerate(((x1, u1), (x2, u2))):
            B = blockage(chains, profile, x, planar)
            if not np.isfinite(B):
                return None, f"none: the layer is separated at x = {x * 1e3:.4g} mm (a station of the discharge coefficient)"
            if not B < MAX_BLOCKAGE:
                return None, (f"none: the layer fills {B:.0%} of the flow area at x = {x * 1e3:.4g} mm (a station of the "
                              f"discharge coefficient), beyond the {MAX_BLOCKAGE:.0%} a thin-layer estimate can carry")
            dp = 0.5 * rho * u * u * (1.0 / (1.0 - B) ** 2 - 1.0)
            if k == 0:
                p1 -= dp
            else:
                p2 -= dp
    where = (f"wall taps at x = {x1 * 1e3:.4g} mm and {x2 * 1e3:.4g} mm" if taps is not None
             else "mean pressures of the inlet and outlet planes")
    if not p1 - p2 > 0:
        return None, f"none: no pressure drop between the stations ({where}); see the loss coefficient"
    E = 1.0 / math.sqrt(1.0 - (A_m / A_1) ** 2) if A_m < A_1 else float("inf")
    if not math.isfinite(E):
        return None, f"none: the narrowest section is the upstream station ({where})"
    C = flow.volume_flow / (E * A_m * math.sqrt(2.0 * (p1 - p2) / rho))
    return float(C), (f"Q / (E A_m sqrt(2 dp / rho)), E = 1/sqrt(1 - (A_m/A_1)^2), A_m = {A_m * 1e6:.6g} mm^2 the "
                      f"narrowest flow area, dp between the {where}")


def wall_layers(case, profile, flow, tables: dict, onedim=None) -> ViscousResult:
    """The wall layer of every wall chain of a solved flow (the stage; see the module text)."""
    t0 = time.perf_counter()
    settings = ViscousSettings.from_case(case)
    planar = bool(getattr(profile, "planar", False))
    mu_in, source = _viscosity(case, flow)
    rho_in = flow.inlet_density
    # Reynolds number on the inlet plane: mean velocity and hydraulic diameter 4 A / P (wetted perimeter)
    P_in = sum((1.0 if planar else 2.0 * math.pi * float(t.r[0])) for t in tables.values() if t.x.size
               and abs(t.x[0] - profile.x_inlet) <= t.length[0])
    A_in = flow.inlet_area
    d_h = 4.0 * A_in / P_in if P_in > 0 else 2.0 * profile.r_inlet
    re = rho_in * flow.inlet_velocity * d_h / mu_in
    basis = ("rho V d_h / mu on the inlet plane: mean velocity, hydraulic diameter 4 A / P (the bore diameter of a "
             "round pipe), viscosity at the inlet")
    if not re >= MIN_LAYER_RE:
        raise LayerWithheld(f"no wall layer: the Reynolds number of this flow is {re:.3g} (fluid viscosity {mu_in:.4g} Pa s), "
                            f"below the {MIN_LAYER_RE:g} where a bore flow has a thin wall layer beside an inviscid core; "
                            "no friction, viscous discharge coefficient or loss coefficient is given, and the inviscid "
                            "answer itself is far from such a viscous flow")
    settings = settings.resolve(re, d_h)
    props = {}
    for name, table in tables.items():
        bv = flow.boundary[name]
        rho = bv.density[_face_index(bv.faces, table.faces)]
        if flow.compressible:
            rho, nu, k = _reference_state(case, table.pressure + case.ambient_pressure, rho, table.speed)
        else:
            nu, k = np.full(table.s.size, mu_in / rho_in), np.zeros(table.s.size)
        props[name] = (rho, nu, k)
    chains, coupling = coupled_layers(tables, props, settings, profile, planar)
    coupling_note = coupling.note

    friction = sum(c.friction_x_N for c in chains.values())
    mom_friction = sum(c.momentum_friction_x_N for c in chains.values())
    seps, kinds = [], []
    for c in chains.values():
        for a, b, kind in c.separations:
            seps.append([min(a, b), max(a, b)])
            kinds.append(f"{c.name}: {kind}")
    transitions = sorted(x for c in chains.values() for x in c.transitions_x)
    allH = [(float(np.nanmax(c.H)), float(c.x[int(np.nanargmax(c.H))])) for c in chains.values()
            if np.any(np.isfinite(c.H))]
    hmax = max(allH) if allH else (None, None)

    # discharge coefficient
    if flow.compressible:
        cd_inv = onedim.discharge_coefficient if onedim is not None else None
        xs = np.linspace(profile.x_inlet, profile.x_outlet, 801)
        x_t = float(xs[int(np.argmin(profile.flow_area(np.atleast_1d(xs))))])
        B = blockage(chains, profile, x_t, planar)
        if cd_inv is None or not np.isfinite(B):
            cd, cd_note = None, "none: the layer is separated at the narrowest section"
        else:
            cd = float(cd_inv * (1.0 - B))
            cd_note = (f"the inviscid discharge coefficient (against quasi-1D isentropic flow) times (1 - B), B = "
                       f"{B:.4g} the displacement blockage sum P delta* / A at the narrowest section x = {x_t * 1e3:.4g} mm")
    else:
        cd_inv, _ = discharge_coefficient(flow, profile, tables, settings.taps, None, planar)
        cd, cd_note = discharge_coefficient(flow, profile, tables, settings.taps, chains, planar)
        if cd is not None:
            cd_note += ("; the layer's displacement raises the core speed at each station by 1/(1 - B), B = sum P delta* / A "
                        "(delta* of the current layer and of the deficit fluid carried past restarts)")
        if cd is not None and cd_inv is not None and cd > cd_inv:
            # only possible when the upstream station lies in a layer already grown there (an approach layer
            # or taps downstream of the inlet plane): its displacement speeds up the core more than the losses
            # downstream lower it, the approach-velocity-profile effect, not a loss of the wall layer
            cd, cd_note = None, (f"none: with the layer the quasi-1D estimate gives {cd:.6g}, above the inviscid "
                                 f"{cd_inv:.6g}: the upstream station lies in a layer already grown there, whose "
                                 "displacement lowers the pressure read there more than the layers' losses lower it "
                                 "downstream (the approach-velocity-profile effect); a wall layer cannot raise the flow, "
                                 "so no value is given; move the upstream tap (viscous.taps) to the inlet plane or "
                                 "drop the approach layer (viscous.upstream_length, start_momentum_thickness)")

    # loss coefficient
    K = dp0 = head = None
    if flow.compressible:
        k_note = "computed for liquids only in this version"
    elif any(len(c.separations) > c.corner_separations for c in chains.values()):
        k_note = "not computed: the layer separates (a separated flow's loss is beyond a boundary-layer estimate)"
    else:
        end = sum(c.end_deficit_W + c.carried_deficit_W for c in chains.values())
        start = sum(c.start_deficit_W for c in chains.values())
        dp0 = float((end - start) / flow.volume_flow)
        V = max(flow.inlet_velocity, flow.outlet_velocity)
        corner = any(c.corner_separations for c in chains.values())
        if not dp0 >= 0.0:
            k_note = (f"not computed: the layers' kinetic-energy deficit leaving ({end:.4g} W) is below the one entering "
                      f"({start:.4g} W); a wall layer only dissipates, so the integral closure is outside its range here")
            dp0 = None
        else:
            K = float(dp0 / (0.5 * rho_in * V * V))
            head = float(dp0 / (rho_in * G_STANDARD))
            k_note = ("K = dp_0 / (rho V^2 / 2), dp_0 the mass-averaged total-pressure loss from the inlet to the outlet "
                      "plane (the growth of the layers' kinetic-energy deficit, with the deficit of layers that ended at a "
                      "restart carried on), V = "
                      f"{'outlet' if flow.outlet_velocity >= flow.inlet_velocity else 'inlet'} mean velocity (the larger); "
                      "includes the friction of the straight lengths of the bore"
                      + ("; a lower bound: a layer separates into a concave corner, and the corner vortex's own loss is "
                         "not included" if corner else ""))

    warnings = []
    if not coupling.converged and coupling.last_change > 10 * COUPLING_TOLERANCE:
        warnings.append(f"wall layer: the blockage coupling did not settle (the blockage B still changes by "
                        f"{coupling.last_change:.2g} between "
                        "iterations): the layer near its separation or in a thick-layer region is uncertain")
    for c in chains.values():
        restarts = [x for x, how in c.runs if how.endswith("concave corner")]
        for a, b, kind in c.separations:
            nxt = [x for x in restarts if x > a]
            where = (f"from x = {a * 1e3:.4g} to {b * 1e3:.4g} mm, into the concave corner at x = {nxt[0] * 1e3:.4g} mm "
                     "where a new layer starts" if nxt else f"from x = {a * 1e3:.4g} mm to the end of the {c.name} "
                     f"(x = {b * 1e3:.4g} mm)")
            warnings.append(
                f"the {kind} wall layer on the {c.name} separates at x = {a * 1e3:.4g} mm (separated {where}): the "
                f"inviscid wall pressure and force {'in that range' if nxt else f'downstream of x = {a * 1e3:.4g} mm'} "
                f"are not reliable. {CAUTION}")
        h_loc = np.maximum(c.r if not planar else np.abs(c.r), 1e-300)
        thick = np.isfinite(c.delta_star) & (c.delta_star > THICK_LAYER * h_loc)
        if np.any(thick) and not planar:
            warnings.append(f"the wall layer on the {c.name} is thick (displacement thickness above {THICK_LAYER:.0%} of "
                            f"the radius from x = {c.x[thick].min() * 1e3:.4g} to {c.x[thick].max() * 1e3:.4g} mm): "
                            "the thin-layer estimate is stretched there")
    notes = [
        "wall layer: Thwaites (laminar, axisymmetric form of Rott & Crabtree), Michel's transition, Head's entrainment "
        "method with the flat-plate friction of Schlichting in Re_theta and the shape dependence of Ludwieg & "
        "Tillmann (turbulent), marched on the smoothed inviscid wall speed; gases at Eckert's reference temperature",
        "friction_x_N: wall shear integrated over the wall, by the fluid on the part, +x downstream; separated faces "
        "count with no shear",
    ]
    return ViscousResult(
        model="integral", settings=settings, viscosity_Pa_s=float(mu_in), kinematic_viscosity_m2_s=float(mu_in / rho_in),
        viscosity_source=source, chains=chains, reynolds_number=float(re), reynolds_length_m=float(d_h),
        reynolds_basis=basis, friction_x_N=float(friction), momentum_friction_x_N=float(mom_friction),
        discharge_coefficient=cd, discharge_coefficient_inviscid=cd_inv, discharge_coefficient_note=cd_note,
        loss_coefficient=K, loss_coefficient_note=k_note, total_pressure_loss_Pa=dp0, head_loss_m=head,
        transition_x_m=transitions, separation_x_ranges_m=seps, separation_kind=kinds,
        max_shape_factor=hmax[0], max_shape_factor_x_m=hmax[1], warnings=warnings,
        seconds=time.perf_counter() - t0, notes=notes, coupling_note=coupling_note, coupling=coupling,
    )


# --- the stage as a run uses it, and its part of summary.json ---------------------------------------
