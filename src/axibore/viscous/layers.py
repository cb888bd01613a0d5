"""The layers of every wall chain of a solved flow and what they do to it: the blockage coupling
with the core flow (quasi-simultaneous: solved in each march), the viscous discharge and loss coefficients,
the friction force (``wall_layers``). The march of one chain is ``march.march_chain``."""

from __future__ import annotations

import math
import time

import numpy as np

from ..geometry.jet import exit_area
from ..geometry.profile import min_flow_area
from ..names import Boundary
from ..units import plain
from . import layer as L
from .march import MIN_LAYER_RE, LayerProperties, _face_index, _reference_state, _viscosity, march_chain, perimeter
from .results import CAUTION, G_STANDARD, THICK_LAYER, ChainLayer, Coupling, LayerWithheld, ViscousResult, ViscousSettings


COUPLING_MAX_ITERATIONS = 25
# The march solves the interaction with the wall's own layer; the rest of a section's blockage (other walls, the
# deficit carried past a restart, whose displacement falls with the cube of the new layer's edge speed) is lagged by
# a march and relaxed by Aitken's dynamic factor in the vector form of Irons & Tuck (1969, "A version of the Aitken
# accelerator for computer iteration", Int. J. Numer. Meth. Eng. 1, 275-277), omega_k = -omega_(k-1)
# r_(k-1).(r_k - r_(k-1)) / |r_k - r_(k-1)|^2, r the step of that lagged part: the secant of the map along the last
# step, exact for a map of slope s at 1/(1 - s); the range trusts slopes from -4 to 1/3. A nozzle at beta 0.75 and
# Re_D 1e4 alternated between two states with plain substitution (slope -1, the carried deficit next to the corner)
COUPLING_OMEGA_RANGE = (0.2, 1.5)
COUPLING_TOLERANCE = 1e-3  # on the blockage B at every face
MAX_BLOCKAGE = L.MAX_BLOCKAGE
# the downstream station of the discharge coefficient lies at the narrowest section when its flow area is within
# this fraction of the narrowest one: with dp ~ 1/A_2^2 - 1/A_1^2, a relative area excess e at the downstream
# station lowers dp by 2e/(1 - beta^4) of itself and raises C by e/(1 - beta^4) (derived), under 1e-5 (the digits
# printed) up to beta 0.95; it absorbs the rounding of a drawn throat
SECTION_AREA_TOL = 1e-6


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


def _own_blockage(c: ChainLayer, profile) -> np.ndarray:
    """P delta* / A of a chain's own layer at its faces (without the deficit carried from earlier runs;
    separated values held from the last attached face, as in ``face_blockage``)."""
    ds = c.delta_star
    fin = np.isfinite(ds)
    if not fin.any():
        return np.zeros(ds.size)
    ds = np.interp(np.arange(ds.size), np.flatnonzero(fin), ds[fin])
    return c.perimeter * ds / np.maximum(profile.flow_area(np.atleast_1d(c.x)), 1e-300)


def coupled_layers(tables: dict, props: dict, settings: ViscousSettings, profile, planar: bool
                   ) -> tuple[dict[str, ChainLayer], Coupling]:
    """The layers of all chains. With ``coupling = "blockage"`` the edge speed is the inviscid wall
    speed over (1 - B), B the displacement blockage of the section (continuity in the core: a
    quasi-1D interaction). Each chain's march solves the interaction with its own layer as it goes
    (quasi-simultaneous, ``layer.march``'s ``blockage``); what the march cannot know yet, the other
    walls' layers and the deficit fluid carried from earlier runs, is taken from the march before, until B
    changes by less than COUPLING_TOLERANCE between marches."""
    if settings.coupling != "blockage" or not profile.monotone:
        first = {n: march_chain(n, t, props[n], settings, profile, planar) for n, t in tables.items()}
        chains = {n: v[0] for n, v in first.items()}
        how = ("none: the layer is marched on the inviscid wall speed" if settings.coupling != "blockage" else
               "none: the wall runs backwards in x, so a section's blockage is not defined")
        return chains, Coupling("none", True, 0, 0.0, COUPLING_TOLERANCE, 0.0, how)

    def attached(c):  # attached, and not within two faces upstream of a separation
        sep = c.state == L.SEPARATED
        near = sep.copy()
        near[:-1] |= sep[1:]
        near[:-2] |= sep[2:]
        return ~near

    B = {n: np.zeros(t.s.size) for n, t in tables.items()}
    rest = {n: np.zeros(t.s.size) for n, t in tables.items()}
    widths = {n: None for n in tables}
    attached_before = None
    change, omega, last_step = float("inf"), 1.0, None
    for it in range(1, COUPLING_MAX_ITERATIONS + 1):
        res = {n: march_chain(n, t, props[n], settings, profile, planar, widths[n], rest[n])
               for n, t in tables.items()}
        chains = {n: v[0] for n, v in res.items()}
        if it == 1:
            # the smoothing widths the first march took (over its layer thickness), then held: that march has the wall's
            # own interaction already, and widths following each march let a separation point that moves by a face move
            # them back (the approach layer of a nozzle at beta 0.75, Re_D 1e4, alternated for ever)
            widths = {n: v[1] for n, v in res.items()}
        Bn = face_blockage(chains, profile, planar)
        # measured on the faces attached in this march and the one before: where the separation point moves by a
        # face between marches, that face's blockage jumps between the attached layer's and the value held
        # across the separated range (the position of a separation is resolved to a face, no better)
        # (and on faces running within 60 deg of the axis: on a wall facing the flow, the inlet face of a nozzle,
        # a cross-section's blockage is not defined and the layer there is the stagnation flow's)
        now = {n: attached(c) for n, c in chains.items()}
        att = {n: (now[n] if attached_before is None else attached_before[n] & now[n]) & (np.abs(c.tx) >= 0.5)
               for n, c in chains.items()}
        attached_before = now
        change = max(float(np.max(np.abs(Bn[n] - B[n])[att[n]])) if att[n].any() else 0.0 for n in B)
        B = Bn
        # the lagged part's own residual too: relaxed steps (omega < 1) change B by less than the residual they leave
        step = {n: np.clip(Bn[n] - _own_blockage(c, profile), 0.0, MAX_BLOCKAGE) - rest[n] for n, c in chains.items()}
        lag = max(float(np.max(np.abs(step[n])[att[n]])) if att[n].any() else 0.0 for n in B)
        if change < COUPLING_TOLERANCE and lag < COUPLING_TOLERANCE:
            break
        if last_step is not None:  # Aitken: the secant of the map along the last step (above)
            dr = {n: (step[n] - last_step[n]) * att[n] for n in B}
            den = sum(float(dr[n] @ dr[n]) for n in B)
            if den > 0.0:
                omega = -omega * sum(float((last_step[n] * att[n]) @ dr[n]) for n in B) / den
                omega = min(max(omega, COUPLING_OMEGA_RANGE[0]), COUPLING_OMEGA_RANGE[1])
        last_step = step
        if not any(np.any(st) for st in step.values()):
            # nothing lagged changes (one wall, no deficit carried past a restart): the next march would take the same
            # widths and rest of the section and give the same layer, B changing by 0
            change = 0.0
            break
        rest = {n: np.clip(rest[n] + omega * step[n], 0.0, MAX_BLOCKAGE) for n in B}
    state = f"converged in {it} march{'es' if it != 1 else ''}" if change < COUPLING_TOLERANCE else \
        f"NOT converged in {COUPLING_MAX_ITERATIONS} marches (B still changes by {change:.2g} between marches)"
    Bmax = max(float(b.max()) for b in B.values()) if B else 0.0
    return chains, Coupling("blockage", bool(change < COUPLING_TOLERANCE), it, float(change), COUPLING_TOLERANCE, Bmax,
                            f"blockage: edge speed = inviscid wall speed / (1 - B), B = sum P delta* / A (continuity in "
                            f"the core), solved in each march with the wall's own layer, {state} to "
                            f"{COUPLING_TOLERANCE:g} in B; largest B {Bmax:.3g}")


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


_GAUSS = np.polynomial.legendre.leggauss(40)


def jet_displacement(delta_star, H, ue_over_V):
    """The displacement thickness a layer (delta*, shape factor H, edge speed ue at its last face) has in a free jet
    at the jet speed V, per unit of the wall's perimeter. Derived: each streamline keeps its total pressure from
    the last face (static pressure that of ue) to the jet (ambient, speed V): u_j^2 = u^2 + V^2 - ue^2; continuity
    u dy = u_j dy_j; so delta_j = int (1 - u_j / V) dy_j = int (u / u_j - u / V) dy. With a power-law profile
    u = ue eta^(1/N), eta = y / delta, of the layer's H = (N + 2) / N (delta = (N + 1) delta*), and eta = t^N:
        delta_j / delta* = (N + 1) N int_0^1 t^(N - 1) [r t / sqrt(r^2 t^2 + 1 - r^2) - r t] dt,  r = ue / V.
    At r = 1 (the lip itself, where the wall speed is the jet's) it is 1: delta_j = delta*; below, the
    streamlines accelerate into the jet and the deficit shrinks (the 1/7 law at r = 0.918: 0.71)."""
    r = min(max(float(ue_over_V), 0.0), 1.0)  # a streamline faster than the jet's edge cannot reach ambient: held
    N = 2.0 / max(float(H) - 1.0, 1e-3)
    t = 0.5 * (_GAUSS[0] + 1.0)
    f = N * t ** (N - 1.0) * (r * t / np.sqrt(r * r * t * t + 1.0 - r * r) - r * t)
    return float(delta_star) * (N + 1.0) * 0.5 * float(_GAUSS[1] @ f)


def jet_blockage(chains: dict[str, ChainLayer], profile, x: float, speed: float) -> tuple[float, str | None]:
    """B at a station x in a free jet: (B, None), or (NaN, why not) where a layer ends separated. The station's
    section is the jet's, which no wall crosses; what displaces it is the deficit fluid of every layer, passed on
    into the jet where its wall ends (at the lip, at a centre body's tip): ``jet_displacement`` of each at its last
    face, over the jet's area. Before, the station saw no layer at all, and a free jet's viscous discharge
    coefficient equalled the inviscid one; a re-entrant tube's wall, which also runs downstream of the lip, was
    counted by its face nearest the station (a reviewing helper)."""
    A = float(profile.flow_area(np.atleast_1d(x))[0])
    total = 0.0
    for c in chains.values():
        if c.x.size < 2:
            continue
        d = float(c.displacement[-1])
        if c.state[-1] == L.SEPARATED or not np.isfinite(d):
            where = c.separations[-1][0] if c.separations else float(c.x[-1])
            name = "centre body" if c.name == Boundary.CENTERBODY else c.name
            return float("nan"), (f"none: the layer on the {name} is separated from x = {where * 1e3:.4g} mm to its end at "
                                  f"x = {float(c.x[-1]) * 1e3:.4g} mm, where it passes into the free jet before the downstream "
                                  f"station (x = {x * 1e3:.4g} mm): the deficit it carries into the jet, and so the flow, "
                                  "is not known to a boundary-layer estimate")
        total += float(c.perimeter[-1]) * jet_displacement(d, float(c.H[-1]), float(c.ue[-1]) / speed)
    return total / A, None


def _station_pressures(flow, tables, taps):
    """Inviscid (p, core speed) at the two stations: wall taps, or the inlet and outlet plane means."""
    if taps is None:
        return [(flow.inlet_pressure, flow.inlet_velocity), (flow.outlet_pressure, flow.outlet_velocity)]
    t = tables[Boundary.WALL]
    return [(float(np.interp(x, t.x, t.pressure)), float(np.interp(x, t.x, t.speed))) for x in taps]


def _apart(a: float, b: float) -> tuple[str, str]:
    """``a`` and ``b`` with 6 significant digits, or as many more (up to 12) as tell them apart (a Borda tube's note
    read "gives 1, above the inviscid 1")."""
    for digits in range(6, 13):
        sa, sb = plain(a, digits), plain(b, digits)
        if sa != sb:
            break
    return sa, sb


def discharge_coefficient(flow, profile, tables, taps, chains=None, planar=False) -> tuple[float | None, str]:
    """C = Q / (E A_m sqrt(2 dp / rho)) between two stations (see the module text); with ``chains``
    the pressures carry the first-order displacement of the layer (core speed / (1 - B))."""
    x1, x2 = taps if taps is not None else (profile.x_inlet, profile.x_outlet)
    # the narrowest section of the whole bore: the taps' differential is the meter's only with the downstream tap
    # there (docs/case-file.md); between the taps alone, a tap half-way down a reducer's cone passed as "narrowest"
    # and gave C = 1.018 (a helper's held-out trial)
    xs = np.r_[np.linspace(profile.x_inlet, profile.x_outlet, 1601), x2]
    A = profile.flow_area(np.atleast_1d(xs))
    A_m, A_1 = float(A.min()), float(profile.flow_area(np.atleast_1d(x1))[0])
    where = (f"wall taps at x = {x1 * 1e3:.4g} mm and {x2 * 1e3:.4g} mm" if taps is not None
             else "mean pressures of the inlet and outlet planes")
    area = "the narrowest flow area"
    if profile.jet and taps is not None:
        return None, ("none: viscous.taps are wall taps of a bore's throat (a meter's); a free jet's discharge "
                      "coefficient refers to the opening and the jet, between the inlet and outlet planes: leave taps out")
    if profile.jet:
        # a free jet: the opening's area at the lip plane, as the run's discharge coefficient has it (post.onedim), so
        # that the contraction is in C. The narrowest flow area is the far jet's, which made C a velocity coefficient
        # (0.998 beside the run's 0.592 for the tank orifice: a helper's held-out trial)
        A_m, area = exit_area(profile), "the opening's flow area at the lip plane (the contraction is in C)"
    elif float(A[-1]) > A_m * (1.0 + SECTION_AREA_TOL):
        # C refers the flow to the differential between the approach and the narrowest section; where the bore
        # widens again before the downstream station (a Venturi's divergent), dp there is the recovered, not the
        # meter's, differential (for an inviscid Venturi with equal end areas dp ~ 0 and this C was ~1e4)
        x_m = float(xs[int(np.argmin(A))])
        return None, (f"none: the downstream station ({where}) is not at the narrowest section: its flow area is "
                      f"{float(A[-1]) / A_m:.7g} times the narrowest, A_m = {A_m * 1e6:.6g} mm^2 (x = {x_m * 1e3:.4g} mm) "
                      "of the bore, so the pressure difference is not the differential across the contraction; "
                      "give viscous.taps = [upstream x, x in the throat] (ISO 5167 wall tappings). A thin orifice plate has "
                      "no throat: its downstream tapping reads the pressure of the separated jet, which a potential flow "
                      "that fills the pipe again behind the plate does not give")
    rho = flow.inlet_density
    (p1, u1), (p2, u2) = _station_pressures(flow, tables, taps)
    if chains is not None:
        for k, (x, u) in enumerate(((x1, u1), (x2, u2))):
            if k == 0 and taps is None:
                # the inlet plane: what the layers bring in there (an approach layer given), not the nearest face's
                # value, which on a wall that turns across the axis or back (a tank's plate, a re-entrant tube) is
                # a face far from the plane (B 0.018 on a Borda tube in a pipe: a reviewing helper)
                B = sum(c.start_displacement_m2 for c in chains.values()) / A_1
            elif k == 1 and profile.jet:
                B, why = jet_blockage(chains, profile, x, u)
                if why:
                    return None, why
            else:
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
    if not p1 - p2 > 0:
        return None, f"none: no pressure drop between the stations ({where}); see the loss coefficient"
    E = 1.0 / math.sqrt(1.0 - (A_m / A_1) ** 2) if A_m < A_1 else float("inf")
    if not math.isfinite(E):
        return None, f"none: the narrowest section is the upstream station ({where})"
    C = flow.volume_flow / (E * A_m * math.sqrt(2.0 * (p1 - p2) / rho))
    return float(C), (f"Q / (E A_m sqrt(2 dp / rho)), E = 1/sqrt(1 - (A_m/A_1)^2), A_m = {A_m * 1e6:.6g} mm^2 {area}, "
                      f"dp between the {where}")


def _narrowest_section_re(profile, flow, mu: float, planar: bool) -> tuple[float, str]:
    """The Reynolds number rho V d_h / mu = 4 rho Q / (mu P) at the bore's narrowest section (a free jet's: the
    opening at the lip), P its wetted perimeter, and where that is. Where the bore narrows from a wide inlet
    (an orifice in a tank) its flow is far more viscous-layered at the inlet plane than where the layers
    matter: the 5 mm hole of a tank drawn 50 hole radii wide has 835 on the inlet plane and 2.2e4 in the hole
    (a helper's held-out trial, which the gate on the inlet plane alone refused)."""
    if profile.jet:
        x_m, r_w = (float(v) for v in profile.wall[-1].end)
        what = f"the opening at the lip (x = {x_m * 1e3:.4g} mm)"
    else:
        x_m = min_flow_area(profile)[0]
        r_w = float(profile.wall_radius(np.atleast_1d(x_m))[0])
        what = f"the narrowest section (x = {x_m * 1e3:.4g} mm)"
    r_b = float(profile.centerbody_radius(np.atleast_1d(x_m))[0])
    P = float(perimeter(r_w, planar)) + (float(perimeter(r_b, planar)) if r_b > 0.0 else 0.0)
    return 4.0 * flow.inlet_density * flow.volume_flow / (mu * P), what


def wall_layers(case, profile, flow, tables: dict, onedim=None) -> ViscousResult:
    """The wall layer of every wall chain of a solved flow (the stage; see the module text)."""
    t0 = time.perf_counter()
    settings = ViscousSettings.from_case(case)
    planar = bool(getattr(profile, "planar", False))
    mu_in, source = _viscosity(case, flow)
    rho_in = flow.inlet_density
    # Reynolds number on the inlet plane: mean velocity and hydraulic diameter 4 A / P (wetted perimeter)
    P_in = sum(float(perimeter(t.r[0], planar)) for t in tables.values() if t.x.size
               and abs(t.x[0] - profile.x_inlet) <= t.length[0])
    A_in = flow.inlet_area
    d_h = 4.0 * A_in / P_in if P_in > 0 else 2.0 * profile.r_inlet
    re = rho_in * flow.inlet_velocity * d_h / mu_in
    basis = ("rho V d_h / mu on the inlet plane: mean velocity, hydraulic diameter 4 A / P (the bore diameter of a "
             "round pipe), viscosity at the inlet")
    re_m, where_m = _narrowest_section_re(profile, flow, mu_in, planar)
    if not max(re, re_m) >= MIN_LAYER_RE:
        raise LayerWithheld(f"no wall layer: the Reynolds number of this flow is {re:.3g} on the inlet plane and {re_m:.3g} "
                            f"at {where_m} (rho V d_h / mu, fluid viscosity {mu_in:.4g} Pa s), below the {MIN_LAYER_RE:g} "
                            "where a bore flow has a thin wall layer beside an inviscid core; no friction, viscous discharge "
                            "coefficient or loss coefficient is given, and the inviscid answer itself is far from such a "
                            "viscous flow")
    settings = settings.resolve(re, d_h)
    props = {}
    for name, table in tables.items():
        bv = flow.boundary[name]
        rho = bv.density[_face_index(bv.faces, table.faces)]
        if flow.compressible:
            props[name] = _reference_state(case, table.pressure + case.ambient_pressure, rho, table.speed)
        else:
            props[name] = LayerProperties(rho, np.full(table.s.size, mu_in / rho_in), np.zeros(table.s.size))
    chains, coupling = coupled_layers(tables, props, settings, profile, planar)
    coupling_note = coupling.note

    friction = sum(c.friction_x_N for c in chains.values())
    mom_friction = sum(c.momentum_friction_x_N for c in chains.values())
    seps, kinds, corner_vortices = [], [], []
    for c in chains.values():
        restarts = [x for x, how in c.runs if how.endswith("concave corner")]
        for a, b, kind in c.separations:
            seps.append([min(a, b), max(a, b)])
            # a layer that separates into a concave corner where a new one starts: a corner vortex, closed there
            if any(x > a for x in restarts):
                corner_vortices.append([min(a, b), max(a, b)])
                kinds.append(f"{c.name}: {kind}, into a concave corner")
            else:
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
            if profile.jet:
                cd_note += ("; at the downstream station in the free jet, B is the deficit the layers carry into the jet "
                            "from the ends of the walls: P delta*, each streamline carried from the last face to the jet's "
                            "ambient pressure with its total pressure (a power-law profile of the layer's H)")
        if cd is not None and cd_inv is not None and cd > cd_inv:
            # only possible when the upstream station lies in a layer already grown there (an approach layer
            # or taps downstream of the inlet plane): its displacement speeds up the core more than the losses
            # downstream lower it, the approach-velocity-profile effect, not a loss of the wall layer
            shown, shown_inv = _apart(cd, cd_inv)
            cd, cd_note = None, (f"none: with the layer the quasi-1D estimate gives {shown}, above the inviscid "
                                 f"{shown_inv}: the upstream station lies in a layer already grown there, whose "
                                 "displacement lowers the pressure read there more than the layers' losses lower it "
                                 "downstream (the approach-velocity-profile effect); a wall layer cannot raise the flow, "
                                 "so no value is given; move the upstream tap (viscous.taps) to the inlet plane or "
                                 "drop the approach layer (viscous.upstream_length, start_momentum_thickness)")

    # a blockage coupling that did not settle leaves the layer's displacement, and so C, unknown to its tolerance:
    # no number is given from it
    unsettled = (f"none: the blockage coupling did not settle (B still changes by {coupling.last_change:.2g} between "
                 f"marches, tolerance {COUPLING_TOLERANCE:g}), so the layer's displacement is not known to its tolerance"
                 if not coupling.converged and coupling.last_change > 10 * COUPLING_TOLERANCE else None)
    if unsettled and cd is not None:
        cd, cd_note = None, unsettled

    # loss coefficient
    K = dp0 = head = None
    if flow.compressible:
        k_note = "computed for liquids only in this version"
    elif unsettled:
        k_note = unsettled.replace("none: ", "not computed: ", 1)
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
    if unsettled:
        warnings.append(f"wall layer: the blockage coupling did not settle (the blockage B still changes by "
                        f"{coupling.last_change:.2g} between "
                        "marches): the layer near its separation or in a thick-layer region is uncertain")
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
    notes = [f"the laminar layer on the {c.name} separates at x = {x * 1e3:.4g} mm and reattaches turbulent (a short "
             f"bubble: ue delta*/nu at or above {L.SHORT_BUBBLE_RE_DELTA_STAR:g}, Owen & Klanfer 1953); transition is "
             "placed there" for c in chains.values() for x in c.bubbles_x]
    notes += [
        "wall layer: the momentum and kinetic-energy integrals with the Falkner-Skan closure (laminar), Michel's transition, Head's entrainment "
        "method with the flat-plate friction of Schlichting in Re_theta and the shape dependence of Ludwieg & "
        "Tillmann (turbulent), marched on the smoothed inviscid wall speed over 1 - B (the displacement blockage of the "
        "section, solved in the march); gases on an adiabatic wall at reference states (laminar: "
        "Eckert's temperature; turbulent: the state that gives van Driest II), thicknesses and cf at the edge state",
        "friction_x_N: wall shear integrated over the wall, by the fluid on the part, +x downstream; separated faces "
        "count with no shear",
    ]
    return ViscousResult(
        model="integral", settings=settings, viscosity_Pa_s=float(mu_in), kinematic_viscosity_m2_s=float(mu_in / rho_in),
        viscosity_source=source, chains=chains, reynolds_number=float(re), reynolds_length_m=float(d_h),
        reynolds_basis=basis, reynolds_number_narrowest=float(re_m), reynolds_narrowest_at=where_m,
        friction_x_N=float(friction), momentum_friction_x_N=float(mom_friction),
        discharge_coefficient=cd, discharge_coefficient_inviscid=cd_inv, discharge_coefficient_note=cd_note,
        loss_coefficient=K, loss_coefficient_note=k_note, total_pressure_loss_Pa=dp0, head_loss_m=head,
        transition_x_m=transitions, separation_x_ranges_m=seps, separation_kind=kinds,
        corner_vortex_x_ranges_m=corner_vortices,
        max_shape_factor=hmax[0], max_shape_factor_x_m=hmax[1], warnings=warnings,
        seconds=time.perf_counter() - t0, notes=notes, coupling_note=coupling_note, coupling=coupling,
    )


# --- the stage as a run uses it, and its part of summary.json ---------------------------------------
