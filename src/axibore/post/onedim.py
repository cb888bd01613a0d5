"""The 1D models an engineer uses by hand, and where the 2D answer departs from them.

Liquids: continuity and Bernoulli along x with the local flow area A(x) (an annulus where a
centre body is present): V(x) = Q / A(x), p(x) = H - rho V(x)^2 / 2, with the same flow rate Q
and total head H as the 2D solution, so that differences are the 1D assumption (uniform velocity
on every cross-section) alone.

Gases: quasi-1D isentropic flow along x with the same A(x), inlet total pressure and temperature
and back pressure (solvers/onedim_gas.py): choked at the minimum area when the back pressure is
low enough, with a normal shock in a diverging part where the back pressure puts one. Its mass
flow is the ideal mass flow; the computed mass flow over it is the discharge coefficient.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..geometry import Profile
from ..geometry.jet import exit_area
from ..geometry.profile import min_flow_area
from ..names import discharges, free_jet
from ..solvers import onedim_gas as q1d
from ..solvers.base import FlowResult


# One discharge coefficient for every liquid discharge, measured as the flow-measurement standards
# define it (ISO 5167-1, the coefficient C with the velocity-of-approach factor E = 1 / sqrt(1 - beta^4)):
CD_DEFINITION = ("Q / (A_exit sqrt(2 (p_inlet - p_outlet) / (rho (1 - (A_exit / A_inlet)^2)))): the computed flow over "
                 "the 1D flow of continuity and Bernoulli with the velocity-of-approach factor (as ISO 5167-1 defines C), "
                 "A_exit {exit}, p_inlet the mean static pressure on the inlet plane")


@dataclass(frozen=True)
class OneDimComparison:
    force_dev_rel: float  # (F_2D - F_1D) / |F_1D|
    wall_pressure_max_dev: float  # max |p_2D - p_1D| / (rho V_out^2 / 2) over wall and centre body
    wall_pressure_max_dev_x_m: float
    breakdown_x_ranges_m: list[list[float]]  # x ranges where the deviation exceeds the threshold
    threshold: float
    outlet_momentum_factor: float  # beta = integral u_x^2 dA / (A V^2)
    outlet_energy_factor: float  # alpha = integral u_x q^2 dA / (A V^3)
    discharge_coefficient: float | None  # computed by the model (None where the model makes it 1 by construction)
    discharge_coefficient_note: str  # how it was obtained, or why there is none
    flow_ratio_to_1d: float | None  # Q / Q_1D(delta p) for the same plane pressure difference (inviscid: 1 for uniform planes)
    wall_pressure_max_dev_Pa: float = 0.0  # the largest |p_2D - p_1D| in pascals
    wall_pressure_max_dev_local: float | None = None  # the same over the local |gauge pressure| (None near 0 gauge)
    meaningful: bool = True  # False when the wall runs backwards in x
    deviation: dict = field(default_factory=dict, repr=False)  # boundary name -> per-face deviation
    onedim_force_N: float | None = None  # the 1D force when it is not the liquid formula of loads.onedim_force
    gas: dict | None = None  # quasi-1D facts of a gas case (ideal mass flow, choked, throat, shock)


def _gas_model(case, profile: Profile, flow: FlowResult):
    """Quasi-1D state along a dense x grid of the bore, and at the wall faces."""
    amb = case.ambient_pressure
    p0, T0 = case.inlet.total_pressure + amb, case.inlet.total_temperature
    p_back = (case.outlet.pressure or 0.0) + amb
    R, g = case.fluid.gas_constant, case.fluid.gamma
    x = np.linspace(profile.x_inlet, profile.x_outlet, 2001)
    A = profile.flow_area(x)
    # the throat of the exact geometry (arcs included), not the minimum of the sampled wall
    x_t, A_t = min_flow_area(profile)
    k = int(np.searchsorted(x, x_t))
    x, A = np.insert(x, k, x_t), np.insert(A, k, A_t)
    model = q1d.quasi_one_dim(x, A, p0, T0, p_back, R, g)
    return model, amb


def onedim_pressure(profile: Profile, x: np.ndarray, Q: float, H: float, rho: float) -> np.ndarray:
    A = profile.flow_area(x)
    return H - 0.5 * rho * (Q / A) ** 2


def _ranges(x: np.ndarray, mask: np.ndarray) -> list[list[float]]:
    """x extents of the runs of consecutive True in ``mask`` (faces in arc-length order)."""
    if not np.any(mask):
        return []
    m = np.r_[False, mask, False].astype(int)
    starts = np.flatnonzero(np.diff(m) == 1)
    ends = np.flatnonzero(np.diff(m) == -1)
    return [[float(x[a:b].min()), float(x[a:b].max())] for a, b in zip(starts, ends)]


def _merge(ranges: list[list[float]]) -> list[list[float]]:
    out: list[list[float]] = []
    for a, b in sorted(ranges):
        if out and a <= out[-1][1]:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return out


def compare(case, profile: Profile, flow: FlowResult, tables: dict, force_2d: float, force_1d: float) -> OneDimComparison:
    threshold, outlet_kind = case.onedim.threshold, case.outlet.kind
    rho, Q, H = flow.inlet_density, flow.volume_flow, flow.total_pressure
    V_out = flow.outlet_velocity
    q_out = flow.outlet_dynamic_pressure
    ranges, devs = [], {}
    worst, worst_x, worst_p = 0.0, float("nan"), float("nan")
    gas = None
    if flow.compressible:
        model, amb = _gas_model(case, profile, flow)

        def p1d(x):
            return np.interp(x, model.x, model.pressure) - amb
    else:
        def p1d(x):
            return onedim_pressure(profile, x, Q, H, rho)
    for name, t in tables.items():
        dev = (t.pressure - p1d(t.x)) / q_out
        devs[name] = dev
        k = int(np.argmax(np.abs(dev)))
        if abs(dev[k]) > worst:
            worst, worst_x, worst_p = float(abs(dev[k])), float(t.x[k]), float(t.pressure[k])
        ranges += _ranges(t.x, np.abs(dev) > threshold)

    out = flow.outlet
    a = out.area
    ux = out.velocity[0]
    q2 = ux**2 + out.velocity[1] ** 2
    A = a.sum()
    beta = float(np.sum(ux**2 * a) / (A * V_out**2))
    alpha = float(np.sum(ux * q2 * a) / (A * V_out**3))

    jet_outlet = free_jet(outlet_kind) and profile.jet
    a_exit = flow.outlet_area
    if jet_outlet:
        a_exit = exit_area(profile)  # m2 (planar: m2 per m of depth)
    ratio = a_exit / flow.inlet_area
    dp = flow.inlet_pressure - flow.outlet_pressure
    ratio_1d = None
    if dp > 0 and ratio < 1 - 1e-9 and not flow.compressible:
        Q1 = a_exit * np.sqrt(2 * dp / (rho * (1 - ratio**2)))
        ratio_1d = float(Q / Q1)
    cd = None
    force_1d_model = None
    if flow.compressible:
        it = int(np.argmin(model.area))
        cd = flow.mass_flow / model.mass_flow
        cd_note = ("computed mass flow over the ideal quasi-1D isentropic mass flow through the minimum area "
                   f"({model.area[it] * 1e6:.6g} mm^2) at the same inlet total conditions and back pressure")
        # the 1D force a hand calculation gives: uniform quasi-1D states on the two planes
        p_in, p_out = model.pressure[0] - amb, model.pressure[-1] - amb
        p0_abs = case.inlet.total_pressure + amb
        p_back_abs = (case.outlet.pressure or 0.0) + amb
        V_in = model.mass_flow / (model.density[0] * model.area[0])
        V_ex = model.mass_flow / (model.density[-1] * model.area[-1])
        force_1d_model = p_in * model.area[0] - p_out * model.area[-1] + model.mass_flow * (V_in - V_ex)
        force_1d = force_1d_model
        gas = {"ideal_mass_flow_kg_s": model.mass_flow, "choked": model.regime != "subsonic", "regime": model.regime,
               "throat_x_m": float(model.x[it]), "throat_area_m2": float(model.area[it]),
               "shock_x_m": model.x_shock, "onedim_exit_mach": float(model.mach[-1]),
               "back_pressure_ratio": float(p_back_abs / p0_abs),
               "shock_at_exit_ratio": float(q1d.nozzle_regime(float(model.area[it]), float(model.area[-1]),
                                                              p_back_abs / p0_abs, case.fluid.gamma).p_shock_at_exit)}
    elif jet_outlet:
        cd, cd_note = ratio_1d, CD_DEFINITION.format(exit="the lip plane")
        # the exit-plane hand formula: the jet leaves the lip plane uniformly at the ambient pressure
        V1 = flow.inlet_velocity
        force_1d = flow.inlet_pressure * flow.inlet_area + flow.mass_flow * (V1 - Q / a_exit)
        force_1d_model = force_1d
    elif not discharges(outlet_kind):
        cd_note = "none for a pipe outlet (inviscid flow between two planes has no losses)"
    else:  # an exit plane: no losses, no contraction; what is left is the 2D flow's departure from uniform planes
        cd, cd_note = ratio_1d, CD_DEFINITION.format(exit="the exit plane")
    dev_pa = worst * q_out
    local = dev_pa / abs(worst_p) if np.isfinite(worst_p) and abs(worst_p) > 0.1 * q_out else None
    return OneDimComparison(
        force_dev_rel=float((force_2d - force_1d) / abs(force_1d)) if force_1d else float("nan"),
        wall_pressure_max_dev=worst,
        wall_pressure_max_dev_x_m=worst_x,
        breakdown_x_ranges_m=_merge(ranges),
        threshold=threshold,
        outlet_momentum_factor=beta,
        outlet_energy_factor=alpha,
        discharge_coefficient=cd,
        discharge_coefficient_note=cd_note,
        flow_ratio_to_1d=ratio_1d,
        wall_pressure_max_dev_Pa=float(dev_pa),
        wall_pressure_max_dev_local=local,
        onedim_force_N=force_1d_model,
        gas=gas,
        meaningful=profile.monotone,
        deviation=devs,
    )


@dataclass(frozen=True)
class HandAnswer:
    """The 1D answer an engineer computes by hand for the same inputs, independent of the 2D flow:
    continuity and Bernoulli between the inlet plane and the exit (the lip plane of a free jet,
    the outlet plane otherwise), the control-volume momentum balance for the force on the part, and
    the jet reaction of a discharge. Liquids only."""

    volume_flow: float  # m3/s (planar: per m of depth)
    mass_flow: float  # kg/s
    inlet_velocity: float
    exit_velocity: float
    inlet_pressure: float  # gauge
    exit_pressure: float  # gauge
    force_x: float  # p1 A1 - p2 A2 + mdot (V1 - V2): the force on the part, +x downstream
    end_force: float  # p1 A1: the force on a blind flange closing the inlet (no flow)
    jet_reaction: float | None  # mdot V2 + p2 A2 of a discharge (None for a pipe outlet)
    note: str

    def as_dict(self) -> dict:
        return {"volume_flow_m3_s": self.volume_flow, "mass_flow_kg_s": self.mass_flow,
                "inlet_velocity_m_s": self.inlet_velocity, "exit_velocity_m_s": self.exit_velocity,
                "inlet_gauge_Pa": self.inlet_pressure, "exit_gauge_Pa": self.exit_pressure, "force_x_N": self.force_x,
                "end_force_N": self.end_force, "jet_reaction_N": self.jet_reaction, "note": self.note}


def hand_answer(case, profile: Profile, flow: FlowResult) -> HandAnswer | None:
    """The hand calculation (HandAnswer) from the case's own inputs: the inlet pressure or flow rate
    as given, the exit at the given outlet pressure (0 gauge for a discharge). None for a gas (its
    quasi-1D model is the gas section) or where the inputs do not fix it."""
    if flow.compressible:
        return None
    rho = flow.inlet_density
    A1 = flow.inlet_area
    discharge = discharges(case.outlet.kind)
    A2 = exit_area(profile) if free_jet(case.outlet.kind) else flow.outlet_area
    ratio2 = (A2 / A1) ** 2
    p_in, p_out = case.inlet.pressure, (0.0 if discharge else case.outlet.pressure)
    if case.inlet.flow_rate is not None:
        kind, value = case.inlet.flow_rate
        Q = value if kind == "volume" else value / rho
        if p_in is None:
            p_out = 0.0 if p_out is None else p_out  # the outlet's default: 0 gauge
            p_in = p_out + 0.5 * rho * (Q / A2) ** 2 * (1.0 - ratio2)
        elif p_out is None:
            p_out = p_in - 0.5 * rho * (Q / A2) ** 2 * (1.0 - ratio2)
    else:
        if p_in is None or p_out is None or p_in <= p_out or ratio2 >= 1.0:
            return None
        Q = A2 * float(np.sqrt(2.0 * (p_in - p_out) / (rho * (1.0 - ratio2))))
    V1, V2 = Q / A1, Q / A2
    mdot = rho * Q
    note = ("by hand: continuity and Bernoulli from the inlet plane to the "
            + ("lip plane (no contraction)" if free_jet(case.outlet.kind) else "outlet plane")
            + ", uniform velocity on each; force p1 A1 - p2 A2 + mdot (V1 - V2)")
    return HandAnswer(Q, mdot, V1, V2, p_in, p_out, p_in * A1 - p_out * A2 + mdot * (V1 - V2), p_in * A1,
                      mdot * V2 + p_out * A2 if discharge else None, note)
