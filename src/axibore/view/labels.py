"""What every page calls a number: summary.json keys to human labels and display units, in one place.

A page never shows a raw key (``forces.total_x_N``): it asks ``label(key)`` for the name and the
dimension, and ``display(dim, values, pressure_unit)`` for the unit and the factor from SI. Units
follow the rest of the tool: pressures in bar (or the unit the user chose), lengths in mm, forces
in N or kN (kN when the largest value of the column reaches 1 kN), volume flows in L/s.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from ..units import PRESSURE_UNITS


@dataclass(frozen=True)
class Label:
    text: str  # the human name, as it starts a row or heads a column
    dim: str  # force | pressure | length | volume_flow | mass_flow | velocity | ratio | count | viscosity | area
    digits: int = 4  # significant figures shown


LABELS: dict[str, Label] = {
    # forces (by the fluid on the part, +x downstream)
    "forces.wall_x_N": Label("wall axial force", "force", 5),
    "forces.centerbody_x_N": Label("centre-body axial force", "force", 5),
    "forces.total_x_N": Label("axial force on the part", "force", 5),
    "forces.momentum_x_N": Label("momentum-balance force", "force", 5),
    "forces.onedim_x_N": Label("1D formula force", "force", 5),
    "forces.reconciliation_rel": Label("force reconciliation", "ratio", 3),
    "forces.jet_reaction_N": Label("jet reaction", "force", 4),
    "forces.per_bolt_N": Label("load per bolt, first joint", "force", 4),
    "forces.friction_x_N": Label("friction force", "force", 4),
    "forces.total_with_friction_x_N": Label("axial force with friction", "force", 5),
    # flow
    "flow.volume_flow_m3_s": Label("volume flow", "volume_flow", 5),
    "flow.mass_flow_kg_s": Label("mass flow", "mass_flow", 5),
    "flow.inlet_mean_velocity_m_s": Label("mean velocity, inlet", "velocity", 4),
    "flow.outlet_mean_velocity_m_s": Label("mean velocity, exit", "velocity", 4),
    "flow.max_speed_m_s": Label("highest speed", "velocity", 4),
    "flow.discharge_coefficient": Label("discharge coefficient Cd", "ratio", 5),
    "flow.contraction_coefficient": Label("contraction coefficient Cc", "ratio", 4),
    "flow.ideal_mass_flow_kg_s": Label("ideal mass flow (quasi-1D)", "mass_flow", 5),
    "flow.mach_max": Label("highest Mach number", "ratio", 4),
    "flow.jet_radius_m": Label("far-jet radius", "length", 4),
    "flow.vena_contracta_x_m": Label("vena contracta at x", "length", 4),
    # pressures
    "pressure.inlet_gauge_Pa": Label("inlet pressure, gauge", "pressure", 5),
    "pressure.outlet_gauge_Pa": Label("exit pressure, gauge", "pressure", 5),
    "pressure.min_wall_gauge_Pa": Label("least wall pressure, gauge", "pressure", 4),
    "pressure.min_wall_absolute_Pa": Label("least wall pressure, absolute", "pressure", 4),
    "pressure.min_wall_x_m": Label("least wall pressure at x", "length", 4),
    "pressure.vapour_pressure_Pa": Label("vapour pressure, absolute", "pressure", 4),
    "pressure.cavitation_index": Label("cavitation index", "ratio", 4),
    "pressure.inception_index": Label("inception index", "ratio", 4),
    # the 1D comparison
    "onedim.force_dev_rel": Label("force, 2D against 1D", "ratio", 3),
    "onedim.outlet_momentum_factor": Label("exit momentum correction factor", "ratio", 6),
    "onedim.outlet_energy_factor": Label("exit kinetic-energy correction factor", "ratio", 6),
    # the hand answer (1D, the case's own inputs)
    "hand_1d.volume_flow_m3_s": Label("volume flow", "volume_flow", 5),
    "hand_1d.mass_flow_kg_s": Label("mass flow", "mass_flow", 5),
    "hand_1d.inlet_velocity_m_s": Label("mean velocity, inlet", "velocity", 4),
    "hand_1d.exit_velocity_m_s": Label("mean velocity, exit", "velocity", 4),
    "hand_1d.inlet_gauge_Pa": Label("inlet pressure, gauge", "pressure", 5),
    "hand_1d.force_x_N": Label("axial force on the part", "force", 5),
    "hand_1d.end_force_N": Label("end force on a blind flange", "force", 5),
    "hand_1d.jet_reaction_N": Label("jet reaction", "force", 4),
    # mesh and solve
    "mesh.cells": Label("cells", "count", 6),
    "mesh.h_m": Label("cell size h", "length", 4),
    "mesh.level": Label("mesh level", "count", 3),
    # the wall layer
    "viscous.discharge_coefficient": Label("discharge coefficient with the wall layer", "ratio", 5),
    "viscous.loss_coefficient": Label("loss coefficient K", "ratio", 4),
    "viscous.reynolds_number": Label("Reynolds number", "ratio", 4),
    # joints (a row of summary["joints"])
    "joint.load_N": Label("bolt load", "force", 5),
    "joint.per_bolt_N": Label("load per bolt", "force", 4),
    "joint.pressure_gauge_Pa": Label("pressure at the joint, gauge", "pressure", 4),
    "joint.x_m": Label("joint at x", "length", 4),
}

# words a case key's last part is shown with (the rest: underscores read as spaces)
_WORDS = {"flow_rate": "flow rate", "half_angle": "half angle", "lip_radius": "lip radius", "level": "mesh level",
          "size": "mesh size", "pressure": "pressure", "total_pressure": "total pressure"}


def label(key: str) -> Label:
    """The label of a summary key; an unknown key is put into words (never shown raw)."""
    if key in LABELS:
        return LABELS[key]
    name = key.rsplit(".", 1)[-1]
    dim = "ratio"
    for suffix, d in (("_x_N", "force"), ("_N", "force"), ("_Pa", "pressure"), ("_m3_s", "volume_flow"),
                      ("_kg_s", "mass_flow"), ("_m_s", "velocity"), ("_m", "length")):
        if name.endswith(suffix):
            name, dim = name[: -len(suffix)], d
            break
    return Label(words(name), dim)


def words(name: str) -> str:
    """A key part in plain words: ``outlet_diameter`` -> "outlet diameter"."""
    return name.replace("_", " ").strip()


def case_key_label(key: str) -> str:
    """A dotted case key in words: ``bore.half_angle`` -> "bore half angle", ``bore.segment[2].to`` ->
    "bore segment 2 to" (the key itself stays in the CSV and JSON files)."""
    parts = []
    for part in key.split("."):
        m = re.match(r"^(\w+)\[(\d+)\]$", part)
        parts.append(f"{words(m.group(1))} {m.group(2)}" if m else _WORDS.get(part, words(part)))
    if parts and parts[0] in ("mesh",) and len(parts) > 1 and parts[1].startswith("mesh "):
        parts = parts[1:]
    return " ".join(parts)


PER_DEPTH = {"N": "N/m", "kN": "kN/m", "L/s": "L/(s m)", "kg/s": "kg/(s m)"}


def display(dim: str, values=(), pressure_unit: str = "bar", planar: bool = False) -> tuple[str, float]:
    """(unit, factor from SI) of a dimension; forces in kN when the largest |value| reaches 1 kN; ``planar``:
    flows and forces of a planar section, per metre of depth."""
    unit, k = _display(dim, values, pressure_unit)
    return (PER_DEPTH.get(unit, unit) if planar else unit), k


def _display(dim: str, values, pressure_unit: str) -> tuple[str, float]:
    if dim == "force":
        big = max((abs(v) for v in values if _finite(v)), default=0.0)
        return ("kN", 1e-3) if big >= 1e3 else ("N", 1.0)
    if dim == "pressure":
        return pressure_unit, 1.0 / PRESSURE_UNITS[pressure_unit]
    return {"length": ("mm", 1e3), "volume_flow": ("L/s", 1e3), "mass_flow": ("kg/s", 1.0),
            "velocity": ("m/s", 1.0), "viscosity": ("Pa s", 1.0), "area": ("mm²", 1e6)}.get(dim, ("", 1.0))


def _finite(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def number(v, factor: float = 1.0, digits: int = 4) -> str:
    """A number for a table cell: ``digits`` significant figures, no exponent for everyday sizes,
    a true minus sign; "-" for a missing value."""
    if not _finite(v):
        return "–"
    x = v * factor
    if x == 0 or abs(x) < 1e-12:
        return "0"
    mag = math.floor(math.log10(abs(x)))
    if -4 <= mag < 7:
        text = f"{x:.{max(digits - 1 - mag, 0)}f}"
    else:
        text = f"{x:.{digits - 1}e}"
    return text.replace("-", "−")


def quantity(key: str, values, pressure_unit: str = "bar") -> tuple[str, str, float, int]:
    """(label text, unit, factor, digits) of a column or row holding ``values`` of summary ``key``."""
    lab = label(key)
    unit, k = display(lab.dim, values, pressure_unit)
    return lab.text, unit, k, lab.digits
