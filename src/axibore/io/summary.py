"""summary.json, the index and contract of a run directory, built from the result dataclasses.

``KEYS`` is the one list of what summary.json holds: (section, key, how to get it from a
RunResult). Schema 1: keys are added, never renamed. Non-finite numbers are written as null
(strict JSON).
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict
from typing import Any, Callable

from ..version import __version__
from ..post.jet import LIP_MISMATCH_LIMIT
from ..post.joints import CAUTION as JOINT_CAUTION
from ..safety import CAUTIONS
from ..viscous.stage import CAUTION as VISCOUS_CAUTION, summary_section

SCHEMA = 1


KEYS: list[tuple[str, str, Callable[[Any], Any]]] = [
    # solver
    ("solver", "kind", lambda r: r.flow.solver),
    ("solver", "converged", lambda r: r.flow.record.converged),
    ("solver", "criterion", lambda r: r.flow.record.criterion),
    ("solver", "iterations", lambda r: r.flow.record.iterations),
    ("solver", "residual", lambda r: r.flow.record.residual),
    ("solver", "mass_imbalance", lambda r: r.flow.record.mass_imbalance),
    ("solver", "seconds", lambda r: r.flow.record.seconds),
    ("solver", "method", lambda r: r.flow.record.method),
    ("solver", "fallback", lambda r: r.flow.record.fallback),
    ("solver", "settings", lambda r: r.flow.record.settings),
    ("solver", "free_jet_iterations", lambda r: len(r.jet.history) if r.jet else None),
    ("solver", "free_jet_settled", lambda r: r.jet.settled if r.jet else None),
    ("solver", "free_jet_speed_mismatch_max", lambda r: r.jet_table.mismatch()[0] if r.jet_table else None),
    ("solver", "free_jet_speed_mismatch_rms", lambda r: r.jet_table.mismatch()[1] if r.jet_table else None),
    ("solver", "free_jet_lip_speed_mismatch", lambda r: r.jet_table.lip_mismatch() if r.jet_table else None),
    ("solver", "free_jet_residual", lambda r: r.jet.residual if r.jet else None),
    ("solver", "free_jet_tolerance", lambda r: r.jet.tolerance if r.jet else None),
    ("solver", "free_jet_condition", lambda r: r.jet.condition if r.jet else None),
    ("solver", "free_jet_momentum_attempt", lambda r: None if r.jet is None or r.jet.momentum_attempt is None else
     dict(zip(("steps", "residual", "contraction_coefficient"), r.jet.momentum_attempt))),
    ("solver", "free_jet_seconds", lambda r: r.jet.seconds if r.jet else None),
    ("solver", "free_jet_rule", lambda r: FREE_JET_RULE if r.jet else None),
    # mesh
    ("mesh", "cells", lambda r: r.mesh.n_cells),
    ("mesh", "level", lambda r: r.mesh_build.level),
    ("mesh", "size", lambda r: r.case.mesh.size),
    ("mesh", "h_m", lambda r: r.mesh.h),
    ("mesh", "target_h_m", lambda r: r.mesh_build.h_target),
    ("mesh", "method", lambda r: r.mesh_build.method),
    ("mesh", "max_non_orthogonality_deg", lambda r: r.mesh_quality["max_non_orthogonality_deg"]),
    ("mesh", "max_aspect_ratio", lambda r: r.mesh_quality["max_aspect_ratio"]),
    # flow
    ("flow", "volume_flow_m3_s", lambda r: r.flow.volume_flow),
    ("flow", "mass_flow_kg_s", lambda r: r.flow.mass_flow),
    ("flow", "inlet_mean_velocity_m_s", lambda r: r.flow.inlet_velocity),
    ("flow", "outlet_mean_velocity_m_s", lambda r: r.flow.outlet_velocity),
    ("flow", "max_speed_m_s", lambda r: r.flow.max_speed),
    ("flow", "discharge_coefficient", lambda r: r.onedim.discharge_coefficient),
    ("flow", "discharge_coefficient_note", lambda r: r.onedim.discharge_coefficient_note),
    ("flow", "contraction_coefficient", lambda r: r.jet.contraction_coefficient if r.jet else None),
    ("flow", "jet_radius_m", lambda r: r.jet.jet_radius if r.jet else None),
    ("flow", "vena_contracta_x_m", lambda r: r.jet.vena_contracta_x() if r.jet else None),
    ("flow", "exit_area_m2", lambda r: r.jet.exit_area if r.jet else None),
    ("flow", "density_kg_m3", lambda r: r.flow.inlet_density),
    ("flow", "total_pressure_gauge_Pa", lambda r: r.flow.total_pressure),
    ("flow", "compressible", lambda r: r.flow.compressible),
    ("flow", "mach_max", lambda r: None if r.flow.mach is None else float(r.flow.mach.max())),
    ("flow", "choked", lambda r: (r.onedim.gas or {}).get("choked")),
    ("flow", "throat_x_m", lambda r: (r.onedim.gas or {}).get("throat_x_m")),
    ("flow", "ideal_mass_flow_kg_s", lambda r: (r.onedim.gas or {}).get("ideal_mass_flow_kg_s")),
    ("flow", "onedim_regime", lambda r: (r.onedim.gas or {}).get("regime")),
    ("flow", "onedim_shock_x_m", lambda r: (r.onedim.gas or {}).get("shock_x_m")),
    # pressure
    ("pressure", "inlet_gauge_Pa", lambda r: r.flow.inlet_pressure),
    ("pressure", "outlet_gauge_Pa", lambda r: r.flow.outlet_pressure),
    ("pressure", "inlet_absolute_Pa", lambda r: r.flow.inlet_pressure + r.case.ambient_pressure),
    ("pressure", "outlet_absolute_Pa", lambda r: r.flow.outlet_pressure + r.case.ambient_pressure),
    ("pressure", "min_wall_gauge_Pa", lambda r: r.checks.min_wall_gauge_Pa),
    ("pressure", "min_wall_x_m", lambda r: r.checks.min_wall_x_m),
    ("pressure", "min_wall_r_m", lambda r: r.checks.min_wall_r_m),
    ("pressure", "min_wall_boundary", lambda r: r.checks.min_wall_boundary),
    ("pressure", "min_wall_at_singular_point", lambda r: r.checks.min_at_singular_point),
    ("pressure", "min_wall_absolute_Pa", lambda r: r.checks.min_wall_absolute_Pa),
    ("pressure", "cavitation_index", lambda r: r.checks.cavitation_index),
    ("pressure", "inception_index", lambda r: r.checks.inception_index),
    ("pressure", "vapour_pressure_Pa", lambda r: r.checks.vapour_pressure_Pa),
    ("pressure", "ambient_pressure_Pa", lambda r: r.case.ambient_pressure),
    # forces
    ("forces", "wall_x_N", lambda r: r.forces.wall_x_N),
    ("forces", "centerbody_x_N", lambda r: r.forces.centerbody_x_N),
    ("forces", "total_x_N", lambda r: r.forces.total_x_N),
    ("forces", "momentum_x_N", lambda r: r.forces.momentum_x_N),
    ("forces", "onedim_x_N", lambda r: r.forces.onedim_x_N),
    ("forces", "reconciliation_rel", lambda r: r.forces.reconciliation_rel),
    ("forces", "jet_reaction_exit_gauge_Pa", lambda r: r.flow.outlet_pressure if r.jet_reaction_N is not None else None),
    ("forces", "jet_reaction_exit_area_m2", lambda r: r.flow.outlet_area if r.jet_reaction_N is not None else None),
    ("forces", "per_bolt_N", lambda r: r.joints[0].per_bolt_N if r.joints else None),
    ("forces", "bolts", lambda r: r.joints[0].bolts if r.joints else None),
    ("forces", "jet_reaction_N", lambda r: r.jet_reaction_N),
    ("forces", "friction_x_N", lambda r: r.viscous.friction_x_N if r.viscous is not None else None),
    ("forces", "total_with_friction_x_N", lambda r: r.forces.total_x_N + r.viscous.friction_x_N if r.viscous is not None else None),
    # 1D comparison
    ("onedim", "force_dev_rel", lambda r: r.onedim.force_dev_rel),
    ("onedim", "wall_pressure_max_dev", lambda r: r.onedim.wall_pressure_max_dev),
    ("onedim", "wall_pressure_max_dev_x_m", lambda r: r.onedim.wall_pressure_max_dev_x_m),
    ("onedim", "wall_pressure_max_dev_Pa", lambda r: r.onedim.wall_pressure_max_dev_Pa),
    ("onedim", "wall_pressure_max_dev_local", lambda r: r.onedim.wall_pressure_max_dev_local),
    ("onedim", "flow_ratio_to_1d", lambda r: r.onedim.flow_ratio_to_1d),
    ("onedim", "breakdown_threshold", lambda r: r.onedim.threshold),
    ("onedim", "outlet_dynamic_pressure_Pa", lambda r: r.flow.outlet_dynamic_pressure),
    ("onedim", "breakdown_x_ranges_m", lambda r: r.onedim.breakdown_x_ranges_m),
    ("onedim", "outlet_momentum_factor", lambda r: r.onedim.outlet_momentum_factor),
    ("onedim", "outlet_energy_factor", lambda r: r.onedim.outlet_energy_factor),
    ("onedim", "meaningful", lambda r: r.onedim.meaningful),
]

FREE_JET_RULE = ("free streamline on one mesh whose nodes move with the jet: the jet a streamline, phi + V (s_end - s) = 0 "
                 "at every jet face centre (speed V along it) but the tail's, the jet speed V unknown and fixed by Bernoulli "
                 "on the first face past the lip (or, where the walls at the lip have no axial projection, from the "
                 "axial momentum balance), solved by Newton steps on the "
                 "residual's exact derivative (GMRES on difference quotients, preconditioned by the transpiration "
                 "Jacobian) to free_jet_tolerance of V r_lip; the first jet element at the lip follows "
                 "the free streamline's l^1/2 law and its face is reported apart "
                 f"(free_jet_lip_speed_mismatch; above {LIP_MISMATCH_LIMIT:g} the run warns that the jet leaves the lip at "
                 "an angle); where the momentum balance's steps do not settle, V from the lip instead (the run warns with "
                 "both contraction coefficients); the reported flow is solved on the settled jet")

NOTES = (
    "forces are exerted by the fluid on the part, +x downstream, from gauge pressure",
    "joints: load = wall force on the part beyond the joint + gauge pressure on the gasket annulus pi (G^2 - D^2) / 4 "
    "(positive: bolts in tension); end_force_N = pi G^2 p / 4, the hydrostatic end force of flange rules; "
    "per_bolt_N in forces is that of the first joint",
    "jet_reaction_N = mdot V_out + p_out A_out: the force of the jet on the holder, upstream (free jet: at the far, "
    "parallel jet, where p_out = 0)",
    "free jet: contraction_coefficient = far-jet area / flow area at the lip plane (planar: per unit depth); "
    "vena_contracta_x_m: where the jet radius is within 1 % of its whole contraction from the far value",
    "cavitation_index = (p_outlet,abs - p_vapour) / (rho V_outlet^2 / 2); inception_index = -Cp_min "
    "(common practice; cf. ISA-RP75.23-1995 for valves)",
)


def finite(value):
    """JSON-safe copy: non-finite floats become None, numpy scalars plain Python numbers."""
    if isinstance(value, dict):
        return {k: finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [finite(v) for v in value]
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return value
    try:
        v = float(value)
    except (TypeError, ValueError):
        return value
    if hasattr(value, "dtype") and getattr(value, "dtype").kind in "iu":
        return int(value)
    return v if math.isfinite(v) else None


def build_summary(res) -> dict:
    out: dict = {"schema": SCHEMA, "title": res.case.title, "software": {"name": "axibore", "version": __version__}}
    for section, key, get in KEYS:
        out.setdefault(section, {})[key] = get(res)
    planar = bool(res.profile.planar)
    out["geometry"] = {"symmetry": "planar" if planar else "axisymmetric", "per_unit_depth": planar,
                       "note": ("planar section: areas [m2] are per metre of depth, flow rates per metre of depth, forces "
                                "[N] per metre of depth, for the half above the symmetry plane (r = 0)") if planar else
                               "axisymmetric: areas, flows and forces of the whole body of revolution"}
    out["corners"] = [
        {"x_m": k.x, "r_m": k.r, "turn_deg": math.degrees(k.turn), "convex": k.convex, "boundary": str(k.boundary), "key": k.key}
        for k in res.profile.corners()
    ]
    out["viscous"] = summary_section(res)
    if getattr(res, "jet", None) is not None:
        out["free_jet"] = {
            "iterations": [{"iteration": h.iteration, "face_residual": h.residual,
                            "contraction_coefficient": h.contraction_coefficient, "damping": h.damping, "seconds": h.seconds}
                           for h in res.jet.history],
            "cells": res.jet.cells,
            "lip_x_m": res.jet.lip[0], "lip_r_m": res.jet.lip[1],
        }
        out["exit_plane_model"] = asdict(res.exit_plane) if res.exit_plane is not None else {
            "note": "not solved (outlet.compare_exit_plane = false)"}
    hand = getattr(res, "hand", None)
    out["hand_1d"] = hand.as_dict() if hand is not None else None
    out["joints"] = [j.as_dict() for j in res.joints]
    out["seconds"] = dict(res.seconds)
    out["warnings"] = list(res.checks.warnings)
    out["cautions"] = list(CAUTIONS) + ([JOINT_CAUTION] if res.joints else []) + \
        ([VISCOUS_CAUTION] if getattr(res, "viscous", None) is not None else [])
    out["notes"] = list(NOTES)
    if not res.flow.record.converged:
        withhold_unconverged(out)
    return finite(out)


# figures of merit a reader would take from an unconverged iterate as a result: withheld (null), the
# forces and pressures kept for diagnosis beside the loud "converged": false
WITHHELD = (("flow", "discharge_coefficient"), ("flow", "contraction_coefficient"), ("onedim", "force_dev_rel"))


def withhold_unconverged(out: dict) -> None:
    withheld = []
    for section, key in WITHHELD:
        if out.get(section, {}).get(key) is not None:
            out[section][key] = None
            withheld.append(f"{section}.{key}")
    if "flow.discharge_coefficient" in withheld:
        out["flow"]["discharge_coefficient_note"] = "withheld: the solution did not converge"
    out["solver"]["withheld"] = withheld
    out["solver"]["result_note"] = ("NOT CONVERGED: the numbers are those of the last iterate, not a solution; "
                                    f"withheld: {', '.join(withheld) or 'none'}")


def dumps(summary: dict) -> str:
    return json.dumps(finite(summary), indent=2, allow_nan=False) + "\n"
