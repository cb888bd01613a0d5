"""Cavitation margin and the warnings a result must carry.

Cavitation index (common practice; e.g. ISA-RP75.23-1995 uses the same form for valves with
the pressure drop in the denominator):  sigma = (p_outlet,abs - p_v) / (rho V_outlet^2 / 2).
With Cp = (p - p_outlet) / (rho V_outlet^2 / 2), ideal inception is at sigma_i = -Cp_min
(derived): the flow cavitates where sigma < sigma_i, i.e. where the wall pressure falls below p_v.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..geometry.jet import estimated_contraction, lip_angle
from ..names import discharges, free_jet


# A polygonal wall (points with smooth = false) with this many gentle vertices (turns between
# POLYGON_MIN_TURN_DEG and the corner threshold of Profile.corners) is a sampled curve, not a
# designed polygon: its wall speed stops converging under refinement (each vertex is a small
# corner), which is correct for the polygon but rarely what the user meant.
POLYGON_GENTLE_VERTICES = 5
POLYGON_MIN_TURN_DEG = 0.05


def polygon_warnings(profile) -> list[str]:
    out = []
    for name, chain in profile.chains.items():
        if name == "jet":  # the solved jet boundary is a polyline by construction, not an input
            continue
        lines = [s for s in chain if s.kind == "line"]
        if len(lines) < POLYGON_GENTLE_VERTICES + 1:
            continue
        gentle = 0
        for a, b in zip(chain[:-1], chain[1:]):
            if a.kind == b.kind == "line":
                t0, t1 = a.tangent_at("end"), b.tangent_at("start")
                ang = abs(math.degrees(math.atan2(t0[0] * t1[1] - t0[1] * t1[0], float(t0 @ t1))))
                gentle += POLYGON_MIN_TURN_DEG < ang < 2.0
        if gentle >= POLYGON_GENTLE_VERTICES:
            out.append(f"the {name} is a polygon with {gentle} small turns (each below 2 deg): every vertex is a small "
                       "corner, so the wall speed and minimum pressure near them stop converging under refinement; if the "
                       "points sample a smooth curve, set bore.smooth = true")
    return out


def _gas_warnings(case, flow, onedim) -> list[str]:
    out = []
    m_exit = float(np.max(flow.outlet.speed / np.sqrt(case.fluid.gamma * (flow.outlet.pressure + flow.ambient_pressure)
                                                      / flow.outlet.density)))
    if m_exit >= 0.99 and discharges(case.outlet.kind) and not free_jet(case.outlet.kind):
        out.append(f"the exit plane is sonic or supersonic (Mach up to {m_exit:.3g}): the jet beyond it (expansion to the "
                   "ambient, shock cells) is not modelled; the flow upstream of the sonic line, and so the mass flow, does "
                   "not depend on it")
    gas = onedim.gas or {}
    if gas.get("regime") in ("overexpanded", "ideally expanded", "underexpanded"):
        out.append(f"back pressure ratio p_b/p0 = {gas['back_pressure_ratio']:.4g} is at or below {gas['shock_at_exit_ratio']:.4g}, "
                   f"where the quasi-1D normal shock reaches the exit ({gas['regime']}): the flow adjusts to the back "
                   "pressure outside the nozzle (oblique shocks or expansion waves), which the outlet boundary here does "
                   "not model; the flow inside up to the exit is not affected by it")
    if onedim.gas and onedim.gas.get("shock_x_m") is not None:
        out.append(f"the quasi-1D model puts a normal shock at x = {onedim.gas['shock_x_m'] * 1e3:.4g} mm in the diverging "
                   "part (compare with the 2D pressure along the wall)")
    return out


@dataclass(frozen=True)
class Checks:
    min_wall_gauge_Pa: float
    min_wall_x_m: float
    min_wall_r_m: float
    min_wall_boundary: str
    min_wall_absolute_Pa: float
    vapour_pressure_Pa: float | None
    cavitation_index: float | None
    inception_index: float | None  # -Cp_min
    cp_min: float
    warnings: list[str]
    min_at_singular_point: str | None = None  # the sharp corner or lip the minimum sits at (singular suction)


SHARP_LIP_DEG = 5.0  # an exit where the wall meets it at more than this to the axis is a sharp lip


def checks(case, profile, flow, tables: dict, forces, onedim) -> Checks:
    q_out = flow.outlet_dynamic_pressure
    p_amb = case.ambient_pressure
    name = min(tables, key=lambda n: tables[n].pressure.min())
    t = tables[name]
    k = int(np.argmin(t.pressure))
    p_min = float(t.pressure[k])
    p_out = flow.outlet_pressure
    pv = case.fluid.vapour_pressure
    cp_min = (p_min - p_out) / q_out
    sigma = (p_out + p_amb - pv) / q_out if pv is not None else float("nan")
    warnings: list[str] = []

    singular = _singular_point_near(case, profile, flow, t, k)
    if flow.compressible:
        warnings += _gas_warnings(case, flow, onedim)
    elif p_min + p_amb < pv and singular:
        warnings.append(
            f"the wall pressure falls below the vapour pressure only next to {singular}, where the potential-flow suction "
            "is singular (it grows without limit under refinement): a limit of the model there, not a cavitation "
            "prediction; round the corner, or at a discharging lip use outlet.kind = \"free-jet\", for a pressure the "
            "flow really reaches"
        )
    elif p_min + p_amb < pv:
        below = {n: tb.x[tb.pressure + p_amb < pv] for n, tb in tables.items()}
        spans = ", ".join(f"{n} x = {v.min() * 1e3:.4g} to {v.max() * 1e3:.4g} mm" for n, v in below.items() if v.size)
        warnings.append(
            f"cavitation expected: the single-phase result is not valid there (wall pressure below the vapour pressure "
            f"{pv:.4g} Pa on {spans})"
        )
    if p_min + p_amb < 0 and not flow.compressible:
        warnings.append("the computed absolute wall pressure is negative: a liquid cannot sustain this; the flow will cavitate or separate")
    for c in profile.corners():
        if c.convex and not flow.compressible:
            warnings.append(
                f"sharp convex corner on the {c.boundary} at x = {c.x * 1e3:.4g} mm, r = {c.r * 1e3:.4g} mm ({c.key}, turns "
                f"{math.degrees(c.turn):.3g} deg): the exact potential-flow speed there is infinite, so the suction peak "
                f"grows with mesh refinement and the minimum pressure near it is not a converged number; round the corner "
                f"for a converged value (forces are far less affected)"
            )
    if abs(forces.reconciliation_rel) > 1e-3:
        warnings.append(
            f"wall force and momentum balance differ by {forces.reconciliation_rel:.2%}: refine the mesh (mesh.level) "
            f"before relying on the force"
        )
    if not flow.record.converged:
        warnings.append(f"the solve did not converge ({flow.record.criterion}; residual {flow.record.residual:.3g})")
    if flow.record.fallback:
        warnings.append(f"linear solver fall-back: {flow.record.fallback}")
    warnings += polygon_warnings(profile)
    if not onedim.meaningful:
        warnings.append("the wall runs backwards in x: the 1D model along x is not meaningful for this bore")
    p0 = profile.wall[0].sample()[:2]
    slanted = abs(p0[1, 1] - p0[0, 1]) > 1e-3 * abs(p0[1, 0] - p0[0, 0])  # the wall meets the inlet plane not along x
    near = [profile.x_inlet] if slanted else [c.x for c in profile.corners() if c.x - profile.x_inlet < profile.r_inlet]
    if near and not free_jet(case.outlet.kind):
        # the inlet condition is a uniform stream; a corner disturbs the flow over about a channel height
        # (common practice), so an inlet plane nearer than that makes the inlet pressure and the flow ratios
        # (Cd) carry the corner's disturbance
        warnings.append(f"the inlet plane is within one inlet radius of a corner at x = {min(near) * 1e3:.4g} mm: the "
                        "uniform stream assumed there is disturbed by the corner, so the flow and discharge coefficient "
                        "are off by a few 0.1 %; give bore.inlet_length of at least the inlet diameter")
    if discharges(case.outlet.kind) and not free_jet(case.outlet.kind) and not flow.compressible:
        a = lip_angle(profile)
        if a < -math.radians(SHARP_LIP_DEG):
            cc = estimated_contraction(a)
            warnings.append(
                f"exit-plane outlet on a sharp lip: the wall meets the exit plane at {-math.degrees(a):.3g} deg to the axis, so "
                f"the jet goes on contracting past it. A planar jet between walls at that angle contracts to about {cc:.2f} of "
                f"the exit area (free-streamline theory, derived from the hodograph in geometry.jet): the flow rate and discharge coefficient here may be up to "
                f"{1 - cc:.0%} too high and the lip pressure too low; set outlet.kind = \"free-jet\" to solve the jet"
            )
        else:
            warnings.append(
                "exit-plane outlet: the jet is taken to leave normal to the exit plane at ambient mean pressure; "
                "the contraction of a free jet beyond the exit is not modelled (outlet.kind = \"free-jet\" solves it)"
            )
    return Checks(
        min_wall_gauge_Pa=p_min,
        min_wall_x_m=float(t.x[k]),
        min_wall_r_m=float(t.r[k]),
        min_wall_boundary=name,
        min_wall_absolute_Pa=p_min + p_amb,
        vapour_pressure_Pa=pv,
        cavitation_index=None if flow.compressible else float(sigma),
        inception_index=None if flow.compressible else float(-cp_min),
        cp_min=float(cp_min),
        warnings=warnings,
        min_at_singular_point=singular or None,
    )


def _singular_point_near(case, profile, flow, t, k) -> str:
    """What singular point of potential flow the wall minimum sits at (a sharp convex corner, or the sharp
    lip of an exit-plane outlet), within six face lengths, or ""."""
    if flow.compressible:
        return ""
    x, r = float(t.x[k]), float(t.r[k])
    reach = 6.0 * max(float(t.length[k]), float(np.median(t.length)))
    points = [(c.x, c.r, f"the sharp convex corner at x = {c.x * 1e3:.4g} mm ({c.key})") for c in profile.corners() if c.convex]
    if discharges(case.outlet.kind) and not free_jet(case.outlet.kind) and \
            lip_angle(profile) < -math.radians(SHARP_LIP_DEG):
        lx, lr = profile.wall[-1].end
        points.append((lx, lr, f"the sharp exit lip at x = {lx * 1e3:.4g} mm"))
    for px, pr, what in points:
        if math.hypot(px - x, pr - r) < reach:
            return what
    return ""
