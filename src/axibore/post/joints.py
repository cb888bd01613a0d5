"""The hydrodynamic axial load on each bolted joint, and the jet reaction of a nozzle.

A joint at x_j holds the part downstream of it (the modelled bore beyond the joint) against
the pipe or holder upstream. Free body of that part, forces by the fluid, +x downstream:

    load = F_wall(x > x_j) + p_j pi (G^2 - D_j^2) / 4

F_wall(x > x_j) is the wall-pressure force on the part beyond the joint (from the wall table),
p_j the gauge pressure at the joint, D_j the bore diameter there and G the gasket reaction
diameter: the pressure inside the gasket circle but outside the bore pushes the flange faces
apart. For a closed end (no flow) the load is the hydrostatic end force H = pi G^2 p / 4 of
pressure-vessel flange rules (derived: the pressure on the area of the gasket circle, pi/4 = 0.785;
the form flange design rules use, common practice);
``end_force_N`` reports H at p_j for comparison. Positive load: the bolts are in tension.

Jet reaction (exit-plane or free-jet outlet): the force of the jet on the holder,
R = mdot V_out + p_out A_out (gauge), pushing it upstream.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..names import Boundary, discharges

CAUTION = ("Joint loads are the hydrodynamic part of the joint load only, not a flange design: bolt preload, gasket "
           "seating and operating stresses, external loads, water hammer and fatigue are outside them; defer to the "
           "flange codes (e.g. EN 1591-1, ASME PCC-1) and licensed engineering practice.")


@dataclass(frozen=True)
class JointLoad:
    name: str
    x_m: float
    bore_diameter_m: float
    gasket_diameter_m: float
    pressure_gauge_Pa: float
    part_force_N: float  # wall force on the part beyond the joint
    annulus_force_N: float  # p_j pi (G^2 - D_j^2) / 4
    load_N: float
    end_force_N: float  # H = pi G^2 p_j / 4
    bolts: int | None
    per_bolt_N: float | None
    note: str

    def as_dict(self) -> dict:
        return dict(self.__dict__)


def joint_loads(case, profile, flow, tables) -> list[JointLoad]:
    wall = tables[Boundary.WALL]
    out = []
    for k, j in enumerate(case.joints, 1):
        if j.at == "inlet":
            x, p = profile.x_inlet, flow.inlet_pressure
        elif j.at == "outlet":
            x, p = profile.x_outlet, flow.outlet_pressure
        else:
            x = float(j.at)
            p = float(np.interp(x, wall.x, wall.pressure))
        D = 2.0 * float(profile.wall_radius(np.array([x]))[0])
        notes = []
        G = j.gasket_diameter
        if G is None:
            G = D
            notes.append("no gasket_diameter given: the bore diameter is used, so the pressure on the gasket annulus "
                         "is left out (give gasket_diameter for the joint load)")
        beyond = wall.x > x
        part = float(wall.axial_force[beyond].sum())
        annulus = p * math.pi * (G * G - D * D) / 4.0
        load = part + annulus
        if j.at == "outlet" or not np.any(beyond):
            notes.append("nothing of the modelled bore lies beyond this joint: a pipe beyond it that ends or is not "
                         "restrained adds its end force")
        if Boundary.CENTERBODY in tables:
            notes.append("the centre body is taken as supported elsewhere (its force is not in the joint load)")
        name = j.name or (j.at if isinstance(j.at, str) else f"x = {x * 1e3:.4g} mm")
        out.append(JointLoad(name, x, D, G, p, part, annulus, load, math.pi * G * G * p / 4.0, j.bolts,
                             load / j.bolts if j.bolts else None, "; ".join(notes)))
    return out


def jet_reaction(case, flow) -> float | None:
    """mdot V_out + p_out A_out for a bore discharging to ambient; None for a pipe outlet."""
    if not discharges(case.outlet.kind):
        return None
    return flow.mass_flow * flow.outlet_velocity + flow.outlet_pressure * flow.outlet_area
