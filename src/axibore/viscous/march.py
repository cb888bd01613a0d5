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
- Edge speed: the inviscid wall speed of the faces, smoothed by a local linear fit over a window
  measured along the wall (``smooth_along``): ``SMOOTH_FACES`` local faces, then about
  ``SMOOTH_THETAS`` momentum thicknesses of the first march; kept centred near a stagnation start. A wall layer responds to the pressure
  over many layer thicknesses; cell-to-cell noise of the reconstructed wall speed and the
  near-singular speed of a mild corner, both at the scale of one cell, would otherwise show as
  strong local pressure gradients and spurious separation. Linear trends are kept exactly, also
  at the chain ends (no end bias, no outlet-plane artefact). With the blockage coupling the layer
  sees that speed over 1 - B (``layers.coupled_layers``).
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
if the total would be negative. Gases, on an adiabatic wall (``_reference_state``): the laminar part
at Eckert's (1955) reference temperature, the turbulent part at the reference state that gives van
Driest II (1956); thickness and friction are reported at the edge state.

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
  (ISO 5167 style wall tappings), else the mean pressures of the inlet and outlet planes. None when
  the downstream station is not at the narrowest section (the bore widens before it, as a Venturi's
  divergent does: dp is then the recovered, not the meter's, differential). With the
  layer, the core speed at a station rises by 1/(1 - B), B = sum P delta* / A the blockage
  (continuity), and its pressure falls accordingly (Bernoulli in the inviscid core; the pressure
  is carried unchanged through a thin layer). Gases: the quasi-1D discharge coefficient times
  (1 - B) at the narrowest section.
- Loss coefficient: K = dp_0 / (rho V^2 / 2), dp_0 the mass-averaged total-pressure loss from
  inlet to outlet = the growth of the layers' kinetic-energy deficit sum (rho/2) P ue^3 delta_3 /
  Q (kinetic-energy integral equation: its growth is the dissipation in the layer; derived), V
  the larger of the mean inlet and outlet velocities (common practice); energy thickness
  delta_3 = H* theta: a laminar layer's H* that of the Falkner-Skan member of its shape factor
  (Blasius 1.5726), a turbulent layer's 4H/(3H - 1), exact for power-law velocity profiles (derived).
  Head loss dp_0 / (rho g), g = 9.80665 m/s^2 (standard gravity).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..fluids.viscosity import SUTHERLAND, viscosity
from ..solvers.base import FlowError
from ..geometry.polyline import arc_length
from . import layer as L
from .results import (RESTART_CORNER_DEG, RESTART_CORNER_TOL_DEG, SMOOTH_FACES, SMOOTH_THETAS,
                      TURBULENT_ORIGIN_RE_THETA, ChainLayer, ViscousSettings)


def smooth_speed(u: np.ndarray, width=SMOOTH_FACES, lengths: np.ndarray | None = None, from_rest: bool = False) -> np.ndarray:
    """Local linear fit of ``u`` at every station over a window of half-width a = sqrt(3) ``width``
    stations (the variance of a Gaussian of standard deviation ``width``; a number or one per station),
    ``smooth_along`` on stations of unit length: noise at the scale of a station is removed, linear trends
    are kept exactly, at the ends too, and the fit is a continuous function of the width (a whole station
    entering the window as the width crossed a step made the blockage coupling cycle between two states).

    ``lengths``: the stations are faces of these lengths along the wall; the window is then measured in
    arc length, a = sqrt(3) ``width`` times the station's own face length. Counted in stations, a window on
    faces graded towards a lip reached far upstream of it: 10 momentum thicknesses of the lip's faces (1e-5 m)
    spanned the 10 mm straight tip of a conical nozzle and more, and the edge speed at a free jet's lip came
    out 0.56 of the wall speed (a helper's held-out nozzle)."""
    h = np.ones(u.size) if lengths is None else np.asarray(lengths, float)
    return smooth_along(u, h, np.asarray(width, float) * h, from_rest)


def smooth_along(u: np.ndarray, lengths: np.ndarray, sigma, from_rest: bool = False) -> np.ndarray:
    """Local linear fit of ``u`` (one value per face of the given ``lengths``, faces end to end) at every face
    centre over the arc-length window [s - a, s + a], a = sqrt(3) ``sigma`` (a length, one per face; at
    least the face's own length, as ``smooth_speed``'s one station) clipped to the faces' span: each face weighs the length of it that lies
    in the window, so the fit is continuous in the width; linear trends in arc length are kept exactly, at
    the ends too. O(n log n): cumulative sums and a search for the faces that hold each window's ends."""
    n = u.size
    h = np.asarray(lengths, float)
    if n < 3:
        return u.copy()
    e = np.r_[0.0, np.cumsum(h)]  # face edges
    c = 0.5 * (e[1:] + e[:-1])  # centres
    a = np.maximum(np.sqrt(3.0) * np.broadcast_to(np.asarray(sigma, float), u.shape), h)  # at least the neighbours' halves
    if from_rest:
        # a run from a stagnation point, where the speed rises from zero, often faster than linearly: a window cut
        # off at the start fits a line to the rise beyond and takes it below zero at the first faces (a tank's plate
        # from its corner: the floor speed there, a layer thick from its first face and the plate's C lost); the
        # window is kept centred, no wider than the distance from the start
        a = np.minimum(a, np.maximum(c - e[0], 0.5 * h))
    L, R = np.maximum(c - a, 0.0), np.minimum(c + a, e[-1])
    jL = np.clip(np.searchsorted(e, L, side="right") - 1, 0, n - 1)  # the faces that hold the window's ends
    jR = np.clip(np.searchsorted(e, R, side="left") - 1, 0, n - 1)
    one = jL == jR
    wL = np.where(one, R - L, e[jL + 1] - L)  # the lengths of the end faces inside the window
    wR = np.where(one, 0.0, R - e[jR])

    ref = int(np.argmin(h))  # the finest face, where the windows are smallest: the moments are taken from it, and
    backward = ref > n // 2  # the sums run from its end of the chain, so that they are small there (round-off)

    def window_sum(g):  # sum over the window of (length inside) * g, g one value per face
        if backward:  # cs[k] = sum over the faces from k on
            cs = np.r_[np.cumsum((h * g)[::-1])[::-1], 0.0]
            inner = np.where(jR > jL + 1, cs[jL + 1] - cs[np.maximum(jR, jL + 1)], 0.0)
        else:  # cs[k] = sum over the faces before k
            cs = np.r_[0.0, np.cumsum(h * g)]
            inner = np.where(jR > jL + 1, cs[np.maximum(jR, jL + 1)] - cs[jL + 1], 0.0)
        return inner + wL * g[jL] + wR * g[jR]

    t = c - c[ref]
    s0, st, stt = window_sum(np.ones(n)), window_sum(t), window_sum(t * t)
    sy, sty = window_sum(u), window_sum(t * u)
    s1 = st - t * s0  # the moments about each face's own centre
    s2 = stt - 2.0 * t * st + t * t * s0
    sty_i = sty - t * sy
    det = s0 * s2 - s1 * s1
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(det > 1e-9 * (s0 * a) ** 2, (s2 * sy - s1 * sty_i) / det, sy / s0)


def _face_index(bv_faces: np.ndarray, faces: np.ndarray) -> np.ndarray:
    pos = np.argsort(bv_faces)
    return pos[np.searchsorted(bv_faces[pos], faces)]


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


@dataclass(frozen=True, eq=False)
class LayerProperties:
    """Density and kinematic viscosity at each face of a chain for the layer's integral relations: a
    liquid's own; a gas layer's at reference states (``_reference_state``), with the edge density."""

    rho: np.ndarray  # [kg/m^3] a liquid's density; a gas: the laminar relations' reference density
    nu: np.ndarray  # [m^2/s] the same for the kinematic viscosity
    k: np.ndarray  # gas: r (gamma - 1)/2 Me^2, for the compressible shape factor H = H_i + k (H_i + 1); liquids 0
    rho_edge: np.ndarray | None = None  # gas: the density at the layer's edge (the Euler solution's at the wall)
    turbulent: tuple[np.ndarray, np.ndarray] | None = None  # gas: (rho, nu) of the turbulent relations

    @property
    def density(self) -> np.ndarray:
        """The fluid's density at the layer's edge (momentum and energy fluxes of the layer)."""
        return self.rho if self.rho_edge is None else self.rho_edge

    def relations(self, start: str) -> tuple[np.ndarray, np.ndarray]:
        """(rho, nu) of the relations a layer starting ``start`` ("laminar" or "turbulent") uses."""
        return self.turbulent if start == "turbulent" and self.turbulent is not None else (self.rho, self.nu)


def _reference_state(case, p_abs: np.ndarray, rho_e: np.ndarray, ue: np.ndarray) -> LayerProperties:
    """A gas layer by reference states: the incompressible integral relations with a density and viscosity
    at which they give the compressible layer's wall shear (``layer.march``, ``edge_rho``), on an adiabatic
    wall, Taw = Te (1 + k), k = r (gamma - 1)/2 Me^2, r the recovery factor. The edge state (p, rho, speed)
    is the Euler solution's at the wall face; Te = p/(rho R).

    Laminar: Eckert's reference temperature (Eckert 1955, J. Aeronaut. Sci. 22(8), "Engineering relations
    for friction and heat transfer to surfaces in high velocity flow"; as given by Anderson, Fundamentals of
    Aerodynamics, ch. 18, eq. 18.53), T*/Te = 1 + 0.032 Me^2 + 0.58 (Tw/Te - 1), rho* = rho_e Te/T* (same
    pressure), nu* = mu(T*)/rho*.

    Turbulent: van Driest II (van Driest 1956, "The problem of aerodynamic heating", Aeronaut. Eng. Rev.
    15(10); the best of twenty theories against the flat-plate data in Spalding & Chi 1964, J. Fluid Mech.
    18, 117-143) in Spalding & Chi's form cf Fc = cf_i(Re_x F_Rx), F_Rx = F_Rtheta/Fc, F_Rtheta = mu_e/mu_w.
    Fc, derived: van Driest's (1951) velocity du_vd = sqrt(rho/rho_w) du with the Crocco-Busemann temperature
    T/Te = 1 + k (1 - u^2/ue^2) of an adiabatic wall gives u_vd = (ue/A) arcsin(A u/ue), A^2 = k/(1 + k); the
    law of the wall in u_vd (wall units at Tw) then gives cf_e = cf_i (Te/Tw) (arcsin A / A)^2, so
    Fc = k/arcsin^2 A (-> 1 as Me -> 0). The incompressible relations at a reference state (rho_t, mu_t) give
    cf_e = (rho_t/rho_e) cf_i(rho_t ue x/mu_t) on a flat plate; equal to van Driest II for rho_t = rho_e/Fc,
    mu_t = mu(Taw) (derived).

    k also gives the shape factor of the compressible layer H = H_i + k (H_i + 1): from delta* = int (T/Te -
    u/Ue) dY and theta = int u/Ue (1 - u/Ue) dY in Howarth-Dorodnitsyn's variable dY = rho/rho_e dy, with
    the Crocco-Busemann temperature (derived)."""
    f = case.fluid
    Te = p_abs / (rho_e * f.gas_constant)
    M2 = ue**2 / (f.gamma * f.gas_constant * Te)
    r = AIR_PRANDTL**RECOVERY_EXPONENT
    k = r * 0.5 * (f.gamma - 1.0) * M2
    T_ref = Te * (1.0 + 0.032 * M2 + 0.58 * k)  # Taw/Te - 1 = k
    rho_ref = rho_e * Te / T_ref
    A = np.sqrt(k / (1.0 + k))
    with np.errstate(invalid="ignore", divide="ignore"):
        Fc = np.where(k > 1e-12, k / np.arcsin(A) ** 2, 1.0 + 2.0 * k / 3.0)  # its limit as k -> 0
    rho_t = rho_e / Fc
    return LayerProperties(rho_ref, _gas_mu(case, T_ref) / rho_ref, k, rho_e, (rho_t, _gas_mu(case, Te * (1.0 + k)) / rho_t))


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
        if str(c.boundary) == name and not c.convex and abs(math.degrees(c.turn)) >= RESTART_CORNER_DEG - RESTART_CORNER_TOL_DEG:
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
        theta = math.sqrt(2.0 * L.FS_BLASIUS[4] * nu0 * Lu / ue0)  # Blasius, 0.664 sqrt(nu L/U): the laminar march's plate
        return theta if planar else min(theta, 2.0 / 15.0 * r0)  # at most Poiseuille's developed profile (rules.py)
    theta = 0.036 * Lu * (ue0 * Lu / nu0) ** -0.2  # one-seventh law, theta = (7/72) delta, delta = 0.37 x Re_x^-0.2
    return theta if planar else min(theta, 7.0 / 72.0 * r0)  # at most a fully developed pipe layer (delta = r)


def perimeter(r, planar: bool):
    """The wetted perimeter of a wall at radius ``r``: 2 pi r, or 1 (per unit depth) for a planar section."""
    r = np.asarray(r, dtype=float)
    return np.ones_like(r) if planar else 2.0 * math.pi * r


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


def _energy_thickness(theta, H, state):
    """The kinetic-energy thickness delta_3 = H* theta: a laminar layer's H* is the Falkner-Skan member's of
    its shape factor (the closure of its march); a turbulent one's 4H/(3H - 1), the power-law profile's
    (u/U = (y/delta)^(1/n): H = (n + 2)/n, H* = 2(n + 2)/(n + 3); derived)."""
    H = np.asarray(H, dtype=float)
    laminar = np.asarray(state) == L.LAMINAR
    return theta * np.where(laminar, L.laminar_energy_shape(H), 4.0 * H / (3.0 * H - 1.0))


# --- one chain -----------------------------------------------------------------------------------


def march_chain(name: str, table, props: LayerProperties, settings: ViscousSettings, profile,
                planar: bool, width: np.ndarray | None = None, b_rest: np.ndarray | None = None
                ) -> tuple[ChainLayer, np.ndarray]:
    """The layer on one chain from the inviscid wall speed of its table, smoothed over ``width``
    faces per face (default: a first march at the face scale, then over its layer
    thickness). With ``b_rest`` (per face: the blockage of the section but this chain's own layer) the
    displacement interaction is solved in the march (``layer.march``'s ``blockage``): the edge speed
    is the smoothed wall speed over (1 - B). Returns the layer and the smoothing widths its last pass
    took (given again, they give the same edge speed)."""
    n = table.s.size
    speed = table.speed
    rho, nu, kcomp = props.density, props.nu, props.k  # rho: the edge density (momentum and energy of the layer)
    gas = props.rho_edge is not None
    width_used = np.full(n, SMOOTH_FACES)
    s_all, x_all, r_all = table.s, table.x, table.r
    perim = perimeter(r_all, planar)
    tx = _tangent_x(table)
    area = perim * table.length
    theta = np.full(n, np.nan)
    dstar = np.full(n, np.nan)
    H = np.full(n, np.nan)
    cf = np.full(n, np.nan)
    tau = np.full(n, np.nan)
    re_th = np.full(n, np.nan)
    state = np.full(n, L.SEPARATED, np.int8)
    ue_all = np.zeros(n)
    runs, transitions, separations, bubbles = [], [], [], []
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
            width_used[sel] = w_run
            u = np.maximum(smooth_speed(speed[sel], w_run, np.maximum(table.length[sel], 1e-300), stagnation), floor)
            # a station at the start of the run: the stagnation point, or the leading edge at the inlet plane
            s_run = np.r_[0.0, s_all[sel] - sb]
            ue_run = np.r_[0.0 if stagnation else u[0], u]
            r_run = np.r_[rb, r_all[sel]] if not planar else np.ones(sel.size + 1)
            keep = np.r_[True, np.diff(s_run) > 0]

            def run_values(a):  # a face array on the run's stations (its start station: the first face's value)
                return np.r_[a[sel[0]], a[sel]][keep]

            s_run, ue_run, r_run = s_run[keep], ue_run[keep], r_run[keep]
            nu_run, rho_run = run_values(nu), run_values(rho)
            march_kw = dict(edge_rho=rho_run, turbulent_state=tuple(run_values(a) for a in props.turbulent)) if gas else {}
            face_in_run = sel[keep[1:]]
            if b_rest is not None:
                x_run = np.r_[xb, x_all[sel]][keep]
                g_run = perimeter(r_run, planar) / np.maximum(profile.flow_area(x_run), 1e-300)
                march_kw["blockage"] = (g_run, run_values(b_rest), run_values(kcomp))
            if how == "start" and not stagnation:
                # the estimates are in the reference variables of the part that starts (a liquid's: its own), and go
                # to the march at the edge state (theta = theta_ref rho_ref/rho_e; a thickness the user gave is one)
                rho_p, nu_p = (float(run_values(a)[0]) for a in props.relations(start))
                th0 = _start_theta(settings, float(ue_run[0]), nu_p, float(r_run[0]), planar)
                if th0 and settings.start_momentum_thickness is None:
                    th0 *= rho_p / float(rho_run[0])
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
                        turbulent_separation_H=settings.separation_shape_factor,
                        rho=run_values(props.rho),
                        bubble_re_delta_star=None if tr == "none" else L.SHORT_BUBBLE_RE_DELTA_STAR, **march_kw)
            th = w.theta[1:]
            fin = np.isfinite(th)
            if not fin.any():
                break
            th = np.interp(np.arange(th.size), np.flatnonzero(fin), th[fin])  # held past separation
            h_face = np.maximum(table.length[face_in_run], 1e-300)
            if face_in_run.size != sel.size:
                break
            w_run = np.maximum(SMOOTH_FACES, SMOOTH_THETAS * th / h_face)
        ue_all[sel] = u
        ue_run = w.ue  # the edge speed the layer saw (with the interaction: over 1 - B)
        ue_all[face_in_run] = ue_run[1:]
        if carried_E > 0.0:
            # The fluid of the layers that ended upstream at a restart (into a concave corner) passes on
            # beside the new layer with the total-pressure deficit it carried: int dp0 dQ = E, its kinetic-
            # energy deficit flux (rho/2) P ue^3 delta_3 (derived). Where the edge speed is Uc >> the deficit
            # speed scale, its speed is Uc - dp0/(rho Uc) and its displacement area int (1 - u/Uc) dA =
            # E/(rho Uc^3) (first order in dp0/(rho Uc^2); derived). Where the edge speed is still below the one
            # at which E was taken, the deficit fluid is still turning in the corner flow (the corner vortex): its
            # displacement there is blended in with the edge speed, ue/U_E E/(rho U_E^3) (a blend, not a law; the
            # stations of the discharge coefficient lie downstream, where ue is well above U_E).
            ur = ue_all[sel]
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
        if w.bubble_s is not None:
            bubbles.append(float(np.interp(w.bubble_s, s_run[1:], x_all[face_in_run])))
        if w.separation_s is not None:
            x_sep = float(np.interp(w.separation_s, s_run[1:], x_all[face_in_run]))
            separations.append((x_sep, float(x_all[sel[-1]]), str(w.separation_kind)))
        # the momentum integral of the attached part: int t_x [d(rho P ue^2 theta) + rho P delta* ue due]
        att = np.flatnonzero(w.state != L.SEPARATED)
        if att.size >= 2:
            P_run = perimeter(r_run, planar)
            tx_run = np.r_[tx[face_in_run[0]], tx[face_in_run]]
            th_a = np.where(np.isfinite(w.theta), w.theta, 0.0)[att]
            M = rho_run[att] * P_run[att] * ue_run[att] ** 2 * th_a
            D = rho_run[att] * P_run[att] * w.delta_star[att] * ue_run[att]
            du = np.diff(ue_run[att])
            txm = 0.5 * (tx_run[att][1:] + tx_run[att][:-1])
            mom_fx += float(np.sum(txm * (np.diff(M) + 0.5 * (D[1:] + D[:-1]) * du)))
        P0 = float(perimeter(r_run[0], planar))
        if how == "start" and th0 and (settings.start_momentum_thickness is not None or settings.upstream_length):
            # an approach layer given (viscous.upstream_length, start_momentum_thickness) enters with its deficit; the
            # default's turbulent virtual origin (_start_theta) is a device of the march, not a layer at the inlet
            # plane, where the inviscid solution has a uniform stream: it entered the discharge coefficient's upstream
            # station as a displacement B ~ 1e-4 and put C 1e-7 to 2e-6 above the inviscid one (the tank orifice and
            # spear demos), so that no value was given, for an approach layer that was not there
            H0 = w.H[0] if np.isfinite(w.H[0]) else L.TURBULENT_START_H
            start_def = 0.5 * rho_run[0] * P0 * ue_run[0] ** 3 * float(_energy_thickness(th0, H0, w.state[0]))
            start_disp = P0 * th0 * H0
        if k < len(bounds) - 1:
            # the run ends at the next restart: its deficit (at its last attached face) is carried on
            # (the largest along the attached run: by the kinetic-energy integral equation the deficit flux only
            # grows, d/ds [(rho/2) P ue^3 delta_3] = P x dissipation >= 0 (derived); where the closure's energy
            # thickness lets it fall, in the deceleration before a separation, the deficit already dissipated is kept)
            att_f = np.flatnonzero(np.isfinite(theta[face_in_run]) & (state[face_in_run] != L.SEPARATED))
            if att_f.size:
                j = face_in_run[att_f]
                E_run = 0.5 * rho[j] * perim[j] * ue_all[j] ** 3 * _energy_thickness(theta[j], H[j], state[j])
                carried_E += float(np.max(E_run))
                carried_U = max(carried_U, float(ue_all[j[int(np.argmax(E_run))]]))
            if w.separation_s is not None:
                corner_seps += 1
        if k == len(bounds) - 1:
            j = face_in_run[-1]
            if state[j] != L.SEPARATED:
                # the largest along the run (the deficit flux only grows; see the carried deficit above)
                jj = face_in_run[np.isfinite(theta[face_in_run]) & (state[face_in_run] != L.SEPARATED)]
                end_def = float(np.max(0.5 * rho[jj] * perim[jj] * ue_all[jj] ** 3 * _energy_thickness(theta[jj], H[jj], state[jj])))
            else:
                end_def = float("nan")
    return ChainLayer(name, table.faces, x_all, r_all, s_all, ue_all, theta, dstar, H, cf, tau, state, re_th, tx, area,
                      rho, perim, tuple(runs), tuple(transitions), tuple(separations), mom_fx, start_def, end_def,
                      carried, carried_E, start_disp, corner_seps, tuple(bubbles)), width_used


# --- the stage -----------------------------------------------------------------------------------
