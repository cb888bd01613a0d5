"""Rules across keys that no single field can check (the operating point, the fluid's keys, the
solver's capabilities, the wall layer, joints), each problem named by its key."""

from __future__ import annotations

import numpy as np

from .. import fluids
from ..names import discharges
from ..solvers import SOLVERS
from .schema import OPERATING_POINTS, CaseModel


# total temperature and absolute total pressure of an ideal-gas case: beyond these a calorically perfect
# ideal gas is not a model of the gas (liquefaction below, dissociation and real-gas effects above)
GAS_T_RANGE = (50.0, 3000.0)  # K
GAS_P_MAX = 1.0e8  # Pa absolute (1000 bar)

LIQUID_DENSITY = (200.0, 25000.0)  # kg/m^3
LIQUID_T_RANGE = (100.0, 1300.0)  # K
GAS_R_RANGE = (20.0, 5000.0)  # J/(kg K): R / M from M = 0.4 kg/mol to hydrogen's 0.002016 kg/mol (8.314 / M)
GASKET_MAX = 10.0  # a gasket reaction diameter at most this many bore diameters

def cross_checks(m: CaseModel) -> list[tuple[str, str]]:
    problems = []
    f = m.fluid
    allowed = {
        "water": {"temperature"},
        "seawater": {"temperature", "density"},
        "liquid": {"density", "vapour_pressure", "temperature", "viscosity"},
        "ideal-gas": {"gas", "gas_constant", "gamma"},
    }[f.kind]
    for key in ("temperature", "density", "vapour_pressure", "gas", "gas_constant", "gamma", "viscosity"):
        if getattr(f, key) is not None and key not in allowed:
            problems.append((f"fluid.{key}", f'not used with fluid.kind = "{f.kind}" (keys for it: {", ".join(sorted(allowed))})'))
    if f.kind in ("water", "seawater") and f.temperature is None:
        problems.append(("fluid.temperature", f'missing: required for fluid.kind = "{f.kind}", e.g. "15 degC"'))
    T_TOL = 1e-9  # K: "0.01 degC" is 273.15 + 0.01 in floating point, a hair below 273.16
    if f.kind == "water" and f.temperature is not None and \
            not fluids.WATER_T_MIN - T_TOL <= f.temperature <= fluids.WATER_T_MAX + T_TOL:
        problems.append(("fluid.temperature", f"expected 0.01 to 200 degC for water (the range of IAPWS-IF97 liquid water), "
                         f"got {f.temperature - 273.15:.4g} degC"))
    if f.kind == "seawater" and f.temperature is not None and not fluids.SEAWATER_T_MIN <= f.temperature <= fluids.SEAWATER_T_MAX:
        problems.append(("fluid.temperature", f"expected -2 to 40 degC for seawater, got {f.temperature - 273.15:.4g} degC"))
    elif f.kind == "seawater" and f.temperature is not None and f.temperature < fluids.WATER_T_MIN - T_TOL \
            and m.viscous.model != "none":
        problems.append(("fluid.temperature", f"seawater at {f.temperature - 273.15:.4g} degC: the wall layer's viscosity "
                         "(IAPWS 2008 water with the salinity factor) is defined from 0.01 degC; give viscous.model = "
                         '"none" for colder seawater (the inviscid run is valid down to -2 degC)'))
    if f.kind == "liquid":
        for key in ("density", "vapour_pressure"):
            if getattr(f, key) is None:
                problems.append((f"fluid.{key}", 'missing: required for fluid.kind = "liquid"'))
    if f.kind == "ideal-gas":
        if f.gas is None and (f.gas_constant is None or f.gamma is None):
            problems.append(("fluid.gas", 'missing: give gas = "air" | "nitrogen", or both gas_constant and gamma'))
        if f.gas is not None and (f.gas_constant is not None or f.gamma is not None):
            problems.append(("fluid.gas", "give gas or gas_constant + gamma, not both"))
        if f.gamma is not None and not 1.0 < f.gamma <= 5.0 / 3.0:
            problems.append(("fluid.gamma", f"expected 1 < gamma <= 5/3, got {f.gamma}"))

    if f.kind in ("liquid", "seawater") and f.density is not None and not LIQUID_DENSITY[0] <= f.density <= LIQUID_DENSITY[1]:
        problems.append(("fluid.density", f"expected {LIQUID_DENSITY[0]:g} to {LIQUID_DENSITY[1]:g} kg/m^3 for a liquid (light "
                         f"hydrocarbons to mercury, 13,500; common practice), got {f.density:.6g} kg/m^3"))
    if f.kind == "liquid" and f.temperature is not None and not LIQUID_T_RANGE[0] <= f.temperature <= LIQUID_T_RANGE[1]:
        problems.append(("fluid.temperature", f"expected {LIQUID_T_RANGE[0]:g} to {LIQUID_T_RANGE[1]:g} K for a liquid, got "
                         f"{f.temperature:.6g} K"))
    if f.kind == "ideal-gas" and f.gas_constant is not None and not GAS_R_RANGE[0] <= f.gas_constant <= GAS_R_RANGE[1]:
        problems.append(("fluid.gas_constant", f"expected {GAS_R_RANGE[0]:g} to {GAS_R_RANGE[1]:g} J/(kg K) (the molar gas "
                         f"constant over molar masses from hydrogen's, 4124, to heavy vapours; derived), got {f.gas_constant:.6g}"))
    i, o = m.inlet, m.outlet
    amb = o.ambient_pressure
    for key, gauge in (("inlet.pressure", i.pressure), ("outlet.pressure", o.pressure), ("inlet.total_pressure", i.total_pressure)):
        if gauge is not None and not gauge + amb > 0:
            problems.append((key, f"expected an absolute pressure above zero (gauge above -{amb:.6g} Pa with the ambient "
                             f"{amb:.6g} Pa), got {gauge:.6g} Pa gauge = {gauge + amb:.6g} Pa absolute"))
    if f.kind == "liquid" and f.vapour_pressure is not None and i.pressure is not None and f.vapour_pressure >= i.pressure + amb:
        problems.append(("fluid.vapour_pressure", f"expected below the inlet's absolute pressure ({i.pressure + amb:.6g} Pa): at "
                         f"{f.vapour_pressure:.6g} Pa the liquid boils before it enters"))
    if f.kind == "ideal-gas":
        for key in ("total_pressure", "total_temperature"):
            if getattr(i, key) is None:
                problems.append((f"inlet.{key}", "missing: required for an ideal-gas case"))
        for key in ("pressure", "flow_rate"):
            if getattr(i, key) is not None:
                problems.append((f"inlet.{key}", "not used for an ideal-gas case (give total_pressure and total_temperature)"))
        T0 = i.total_temperature
        if T0 is not None and not GAS_T_RANGE[0] <= T0 <= GAS_T_RANGE[1]:
            problems.append(("inlet.total_temperature", f"expected {GAS_T_RANGE[0]:g} to {GAS_T_RANGE[1]:g} K (an ideal gas of "
                             f"constant gamma; common practice), got {T0:.6g} K"))
        if i.total_pressure is not None:
            back = o.pressure if o.pressure is not None else 0.0
            if not i.total_pressure > back:
                problems.append(("inlet.total_pressure", f"expected more than the back pressure ({back:.6g} Pa gauge, "
                                 f"outlet.pressure) so that the gas flows in +x, got {i.total_pressure:.6g} Pa gauge"))
            elif i.total_pressure + o.ambient_pressure > GAS_P_MAX:
                problems.append(("inlet.total_pressure", f"expected at most {GAS_P_MAX / 1e5:g} bar absolute (the ideal-gas "
                                 f"law; real-gas effects dominate above; common practice), got "
                                 f"{(i.total_pressure + o.ambient_pressure) / 1e5:.6g} bar absolute"))
    else:
        for key in ("total_pressure", "total_temperature"):
            if getattr(i, key) is not None:
                problems.append((f"inlet.{key}", "only for ideal-gas cases (a liquid takes inlet.pressure or inlet.flow_rate)"))
        if i.pressure is None and i.flow_rate is None:
            problems.append(("inlet", "missing: give inlet.pressure (gauge) or inlet.flow_rate"))
        discharge = discharges(o.kind)
        if discharge and i.pressure is not None and i.flow_rate is not None:
            problems.append(("inlet.flow_rate", f'over-determined: with outlet.kind = "{o.kind}" the jet leaves at the ambient '
                             "pressure, so inlet.pressure fixes the flow rate (and a flow rate fixes the pressure): give "
                             f"inlet.pressure or inlet.flow_rate, not both. {OPERATING_POINTS}"))
        elif discharge and o.pressure is not None and o.pressure != 0.0:
            problems.append(("outlet.pressure", f'not used with outlet.kind = "{o.kind}": the jet leaves at the ambient pressure '
                             f"(0 gauge); set outlet.ambient_pressure for another surrounding pressure. {OPERATING_POINTS}"))
        elif i.pressure is not None and i.flow_rate is not None and o.pressure is not None:
            problems.append(("outlet.pressure", "over-determined: inlet.pressure and inlet.flow_rate already fix the outlet "
                             f"pressure; give two of the three. {OPERATING_POINTS}"))
        if f.kind in ("water", "seawater"):
            # the water properties (density, vapour pressure, viscosity) are those of IAPWS-IF97 region 1, which ends at
            # 100 MPa (Wagner et al. 2000)
            if i.pressure is not None and not i.pressure + o.ambient_pressure <= 100e6:
                problems.append(("inlet.pressure", f"expected at most {(100e6 - o.ambient_pressure) / 1e6:.6g} MPa gauge "
                                 f"for {f.kind} (its properties, IAPWS-IF97 region 1, end at 100 MPa absolute), got "
                                 f"{i.pressure / 1e6:.6g} MPa"))
        if i.pressure is not None and i.flow_rate is None:
            p_out = o.pressure if o.pressure is not None else 0.0
            if not i.pressure > p_out:
                problems.append(("inlet.pressure", f"expected more than the outlet pressure ({p_out:.6g} Pa gauge) so that the fluid flows in +x, got {i.pressure:.6g} Pa"))
    if m.solver.kind in SOLVERS:
        entry, cls = SOLVERS[m.solver.kind], ("gas" if f.kind == "ideal-gas" else "liquid")
        if cls not in entry.fluids:
            others = [k for k, e in SOLVERS.items() if cls in e.fluids]
            problems.append(("solver.kind", f'"{m.solver.kind}" is for {" and ".join({"liquid": "liquids", "gas": "gases"}[e] for e in entry.fluids)}; '
                             f"a {'gas' if cls == 'gas' else 'liquid'} takes " + (" or ".join(f'"{k}"' for k in others) or "no solver of this version")))
    problems += viscous_checks(m)
    if m.bore.symmetry == "planar" and (m.joint or m.flange.gasket_diameter is not None or m.flange.bolts is not None):
        problems.append(("joint" if m.joint else "flange",
                         'not with bore.symmetry = "planar": joint loads use round gaskets (pi G^2 / 4) and bolt circles, '
                         "which a per-metre planar section does not have"))
    if m.bore.template == "conical" and (m.bore.half_angle is None) == (m.bore.length is None):
        problems.append(("bore.half_angle" if m.bore.half_angle is not None else "bore.length",
                         "expected the cone given by one of bore.half_angle or bore.length (its axial length), "
                         + ("got both" if m.bore.half_angle is not None else "got neither")))
    if m.bore.template == "spear" and getattr(m.bore, "centerbody", None) is not None:
        problems.append(("bore.centerbody", "the spear template builds its own needle"))
    return problems


def viscous_checks(m: CaseModel) -> list[tuple[str, str]]:
    v, f = m.viscous, m.fluid
    problems = []
    if v.model == "integral":
        if f.kind == "liquid" and f.viscosity is None:
            problems.append(("fluid.viscosity", 'missing: viscous.model = "integral" needs the viscosity of a given liquid '
                             '(dynamic, e.g. "1.2 mPa*s")'))
        if f.kind == "ideal-gas" and f.gas not in fluids.SUTHERLAND:
            problems.append(("viscous.model", f'"integral" needs the viscosity of the gas: Sutherland constants are built in '
                             f'for {", ".join(fluids.SUTHERLAND)} (fluid.gas); for another gas set viscous.model = "none"'))
    if v.start_momentum_thickness is not None and v.upstream_length is not None:
        problems.append(("viscous.upstream_length", "give start_momentum_thickness or upstream_length, not both"))
    if v.taps is not None and not v.taps[0] < v.taps[1]:
        problems.append(("viscous.taps", f"expected [upstream x, downstream x] with the first smaller, got "
                         f"{v.taps[0]:.6g} m and {v.taps[1]:.6g} m"))
    return problems


# The thickest momentum thickness a pipe layer reaches: Poiseuille's fully developed profile,
# u/Uc = 2 eta - eta^2 (eta = y/r), theta = r int_0^1 (2 eta - eta^2)(1 - eta)^2 d eta = 2 r/15 (derived; the
# one-seventh-law turbulent profile filling the pipe gives 7 r/72, less)
MAX_START_THETA_FRACTION = 2.0 / 15.0
MAX_UPSTREAM_DIAMETERS = 1000.0  # an approach pipe longer than this is fully developed many times over


def viscous_position_checks(m: CaseModel, profile) -> list[tuple[str, str]]:
    v, problems = m.viscous, []
    r_in = float(profile.r_inlet)
    if v.start_momentum_thickness is not None and not v.start_momentum_thickness <= MAX_START_THETA_FRACTION * r_in:
        problems.append(("viscous.start_momentum_thickness",
                         f"expected at most {MAX_START_THETA_FRACTION * r_in * 1e3:.4g} mm (2/15 of the inlet radius "
                         f"{r_in * 1e3:.4g} mm: a fully developed laminar pipe profile, the thickest layer a pipe carries), "
                         f"got {v.start_momentum_thickness * 1e3:.6g} mm"))
    if v.upstream_length is not None and not v.upstream_length <= MAX_UPSTREAM_DIAMETERS * 2.0 * r_in:
        problems.append(("viscous.upstream_length",
                         f"expected at most {MAX_UPSTREAM_DIAMETERS * 2.0 * r_in:.6g} m ({MAX_UPSTREAM_DIAMETERS:g} inlet "
                         f"diameters; the approach layer is fully developed long before), got {v.upstream_length:.6g} m"))
    lo, hi = profile.x_inlet - profile.tol, profile.x_outlet + profile.tol
    for key, xs in (("viscous.taps", v.taps or ()), ("viscous.transition", [v.transition] if isinstance(v.transition, float) else [])):
        for x in xs:
            if not lo <= x <= hi:
                problems.append((key, f"expected a position on the bore, from x = {profile.x_inlet:.6g} m to "
                                 f"{profile.x_outlet:.6g} m, got {x:.6g} m"))
    return problems


def joint_checks(m: CaseModel, profile) -> list[tuple[str, str]]:
    problems = []
    f = m.flange
    if m.joint and (f.bolts is not None or f.gasket_diameter is not None or f.name is not None):
        problems.append(("flange", "give one joint as [flange] or several as [[joint]] tables, not both"))
    specs = [(f"joint[{i}]", j) for i, j in enumerate(m.joint, 1)] or [("flange", f)]
    for key, j in specs:
        if isinstance(j.at, float) and not profile.x_inlet - profile.tol <= j.at <= profile.x_outlet + profile.tol:
            problems.append((f"{key}.at", f"expected a position on the bore, from x = {profile.x_inlet:.6g} m to "
                             f"{profile.x_outlet:.6g} m, got {j.at:.6g} m"))
        if j.gasket_diameter is not None:
            x = {"inlet": profile.x_inlet, "outlet": profile.x_outlet}.get(j.at, j.at)
            bore = 2 * float(profile.wall_radius(np.array([x]))[0])
            if np.isfinite(bore) and j.gasket_diameter < bore * (1 - 1e-9):
                problems.append((f"{key}.gasket_diameter", f"expected at least the bore diameter at the joint ({bore * 1e3:.6g} mm), "
                                 f"got {j.gasket_diameter * 1e3:.6g} mm"))
            elif np.isfinite(bore) and j.gasket_diameter > GASKET_MAX * bore:
                problems.append((f"{key}.gasket_diameter", f"expected at most {GASKET_MAX:g} times the bore diameter at the "
                                 f"joint ({GASKET_MAX * bore * 1e3:.6g} mm; a flange face, not a bulkhead), got "
                                 f"{j.gasket_diameter * 1e3:.6g} mm"))
    return problems


