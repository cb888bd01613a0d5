"""What was understood from a case, as printed lines in SI with units (check, report)."""

from __future__ import annotations

import math

from .budget import budget, refusal
from .case import Case
from .geometry.jet import estimated_contraction, lip_angle
from .mesh import target_size
from .names import free_jet
from .units import show

UNDERSTOOD = "understood.txt"  # a run directory's copy of what was understood from its case (``describe``)


def describe(case: Case, cells: int | None = None) -> list[str]:
    """What was understood from a case, in SI with units. ``cells``: the cells of the mesh a run
    actually solved on (then the mesh is described, not estimated)."""
    f = case.fluid
    lines = [f"case      {case.title}  ({case.source})"]
    if f.is_liquid:
        lines.append(
            f"fluid     {f.name}: density {show(f.density, 'density')}, vapour pressure {show(f.vapour_pressure, 'pressure')} absolute"
            + (f", at {show(f.temperature, 'temperature')}" if f.temperature else "")
            + f"  [{f.source}]"
        )
    else:
        lines.append(f"fluid     {f.name}: ideal gas, R = {f.gas_constant:.6g} J/(kg K), gamma = {f.gamma:.4g}  [{f.source}]")
    b = case.bore
    params = []
    for key, value in b.model_dump(exclude_none=True).items():
        if key in ("template", "centerbody", "segment", "start", "file", "smooth", "symmetry", "unit"):
            continue
        dim = "angle" if "angle" in key else "length"
        params.append(f"{key} {show(value, dim)}")
    lines.append(f"bore      template {b.template}" + (": " + ", ".join(params) if params else ""))
    if b.symmetry == "planar":
        lines.append("symmetry  planar section: the axis is a symmetry plane; areas, flow rates and forces are per metre of "
                     "depth for the half above it")
    if free_jet(case.outlet.kind):
        a = lip_angle(case.profile)
        lines.append(f"free jet  from the lip at x = {show(case.profile.wall[-1].end[0], 'length')}, r = "
                     f"{show(case.profile.wall[-1].end[1], 'length')}; the wall meets it at {-math.degrees(a):.3g} deg to the "
                     f"axis (first trial contraction {estimated_contraction(a):.2f})")
    p = case.profile
    lines.append(
        f"profile   x {show(p.x_inlet, 'length')} to {show(p.x_outlet, 'length')}, inlet radius {show(p.r_inlet, 'length')}, "
        f"outlet radius {show(p.r_outlet, 'length')}, smallest channel height {show(p.min_channel_height, 'length')}, "
        f"{len(p.wall)} wall segments" + (f", centre body of {len(p.centerbody)} segments" if p.centerbody else "")
    )
    for note in p.notes:
        lines.append(f"          {note}")
    for c in p.corners():
        kind = "convex (suction peak, singular in potential flow)" if c.convex else "concave"
        lines.append(f"corner    {c.boundary} at x = {show(c.x, 'length')}, r = {show(c.r, 'length')}: turns {math.degrees(abs(c.turn)):.3g} deg, {kind} [{c.key}]")
    i, o = case.inlet, case.outlet
    if f.is_liquid:
        parts = []
        if i.pressure is not None:
            parts.append(f"static pressure {show(i.pressure, 'pressure')} gauge")
        if i.flow_rate is not None:
            kind, v = i.flow_rate
            parts.append(f"flow rate {show(v, 'volume_flow' if kind == 'volume' else 'mass_flow')}")
        lines.append("inlet     " + ", ".join(parts))
    else:
        lines.append(f"inlet     total pressure {show(i.total_pressure, 'pressure')} gauge, total temperature {show(i.total_temperature, 'temperature')}")
    p_out = "computed" if (o.pressure is None and i.pressure is not None and i.flow_rate is not None) else show(o.pressure or 0.0, "pressure") + " gauge"
    lines.append(f"outlet    {o.kind}, static pressure {p_out}, ambient {show(o.ambient_pressure, 'pressure')} absolute")
    h = target_size(p, case.mesh.size, case.mesh.level)
    head = (f"mesh      {case.mesh.cells}, size {case.mesh.size:g} x smallest channel height, level {case.mesh.level}: "
            f"target cell {show(h, 'length')}, ")
    if cells is not None:
        lines.append(head + f"{cells:,} cells solved on")
    else:
        b = budget(case)
        lines.append(head + f"{'' if b.how == 'counted' else 'about '}{b.cells:,} cells ({b.how}), "
                     f"about {b.memory_bytes / 1e9:.2g} GB of memory")
        if not b.within:
            lines.append(f"note      {refusal(b)}; `run` will refuse this case")
        if free_jet(case.outlet.kind):
            lines.append("note      free jet: meshed with unstructured triangles (more cells than the count above, which is "
                         "for the bore alone) once; the nodes move with the jet, usually 4 to 12 steps")
    lines.append(f"solver    {case.solver_kind} (linear tolerance {case.linear_settings.tolerance:g}); 1D breakdown threshold {case.onedim.threshold:.3g} of the outlet dynamic pressure")
    v = case.viscous
    if case.viscous_model == "integral":
        start = v.start or "turbulent above Re 2300, else laminar"
        grown = (f", start momentum thickness {show(v.start_momentum_thickness, 'length')}" if v.start_momentum_thickness
                 else f", grown over {show(v.upstream_length, 'length')} upstream" if v.upstream_length
                 else ", from zero thickness at the inlet plane (uniform inflow)")
        tr = v.transition if isinstance(v.transition, str) else f"forced at x = {show(v.transition, 'length')}"
        lines.append(f"viscous   wall layer (integral): start {start}{grown}; transition {tr}; turbulent separation at "
                     f"H = {v.separation_shape_factor:g}; coupling {v.coupling}; displacement pass {v.displacement}")
    else:
        lines.append("viscous   none (no wall layer: " + ("viscous.model = \"none\")" if v.model == "none"
                                                         else "the fluid's viscosity is not known; give fluid.viscosity)"))
    for j in case.joints:
        at = f"the {j.at} plane" if isinstance(j.at, str) else f"x = {show(j.at, 'length')}"
        g = f", gasket reaction diameter {show(j.gasket_diameter, 'length')}" if j.gasket_diameter else ", no gasket diameter"
        name = f'"{j.name or (j.at if isinstance(j.at, str) else "joint")}"'  # as the results name it
        lines.append(f"joint     {name} at {at}{g}" + (f", {j.bolts} bolts" if j.bolts else ""))
    for msg in case.unsupported():
        lines.append(f"note      {msg}; `run` will refuse this case")
    return lines


def absolute_wall_pressure(p: dict, unit: str = "bar") -> str:
    """The lowest absolute wall pressure, or how far the liquid result falls below the vapour pressure."""
    pabs, pv = p["min_wall_absolute_Pa"], p["vapour_pressure_Pa"]
    if pv is None:
        return show(pabs, "pressure", unit=unit)
    if pabs < pv and p.get("min_wall_at_singular_point"):
        return (f"below the vapour pressure ({show(pv, 'pressure', 3, unit)}) by {show(pv - pabs, 'pressure', 3, unit)} only at "
                f"{p['min_wall_at_singular_point']}: the singular suction of potential flow there, not a flow prediction")
    if pabs < pv:
        return (f"below the vapour pressure ({show(pv, 'pressure', 3, unit)}) by {show(pv - pabs, 'pressure', 3, unit)}: the flow "
                "cavitates there and the single-phase result is not valid")
    return f"{show(pabs, 'pressure', unit=unit)} (vapour {show(pv, 'pressure', 3, unit)})"


def deviation_text(o: dict, unit: str = "bar") -> str:
    """The largest 2D - 1D wall-pressure difference, in pressure units and as fractions (one convention)."""
    text = (f"{show(o['wall_pressure_max_dev_Pa'], 'pressure', unit=unit)} at x = {show(o['wall_pressure_max_dev_x_m'], 'length')}: "
            f"{o['wall_pressure_max_dev']:.3g} of the outlet dynamic pressure")
    if o.get("wall_pressure_max_dev_local") is not None:
        text += f", {o['wall_pressure_max_dev_local']:.3g} of the local gauge pressure"
    return text


def cavitation_verdict(p: dict) -> str:
    """The cavitation margin with its verdict: sigma against the ideal inception index -Cp_min."""
    sigma, sigma_i = p["cavitation_index"], p["inception_index"]
    if sigma is None or sigma_i is None or sigma != sigma:
        return "no vapour pressure known for this fluid: no verdict"
    if sigma_i <= 0:
        return (f"none expected: the wall pressure nowhere falls below the outlet pressure (inception index "
                f"{sigma_i:.3g} <= 0; cavitation index {sigma:.4g})")
    margin = sigma - sigma_i
    if margin <= 0 and p.get("min_wall_at_singular_point"):
        return (f"no verdict: the index {sigma:.4g} is below the inception index {sigma_i:.4g} only at "
                f"{p['min_wall_at_singular_point']}, where potential flow's suction is singular (see the warning)")
    verdict = "none expected" if margin > 0 else "EXPECTED"
    return (f"{verdict}: cavitation index {sigma:.4g} against the inception index {sigma_i:.4g} (margin {margin:+.3g}; "
            "cavitation where the index is below the inception index)")


def critical_pressure_ratio(gamma: float) -> float:
    """The back-to-total pressure ratio below which a convergent passage chokes, (2 / (gamma + 1))^(gamma / (gamma - 1))
    (isentropic flow of an ideal gas, derived)."""
    return (2.0 / (gamma + 1.0)) ** (gamma / (gamma - 1.0))


def choke_verdict(flow: dict, case: Case | None) -> str:
    """Choked or not, with the pressure ratio that decides it (a gas run; ``case``: its resolved case, if it loads)."""
    ratio = ""
    if case is not None and case.inlet.total_pressure is not None:
        amb = case.ambient_pressure
        p0, pb = case.inlet.total_pressure + amb, (case.outlet.pressure or 0.0) + amb
        crit = critical_pressure_ratio(case.fluid.gamma)
        ratio = (f"back pressure / inlet total pressure {pb / p0:.3f} (absolute), "
                 f"{'below' if pb / p0 < crit else 'above'} the critical {crit:.3f} of gamma = {case.fluid.gamma:.4g}")
    mach = flow.get("mach_max")
    m = f"highest Mach number {mach:.3g}" if mach is not None else ""
    head = "CHOKED" if flow.get("choked") else "not choked"
    return f"{head}: " + "; ".join(x for x in (ratio, m) if x)
