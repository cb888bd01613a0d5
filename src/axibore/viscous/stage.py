"""The wall-layer stage of a run: the layers of every chain (``layers.wall_layers``), then the
displacement pass when the case asks for it (``displacement.displacement_pass``), and the summary
section. See ``march`` for the method and its defaults, ``results`` for what is handed on."""

from __future__ import annotations

import time
from dataclasses import replace

from ..names import Boundary
from .displacement import displacement_pass
from .layers import wall_layers
from .results import CAUTION, STATE_CODES, LayerWithheld, ViscousResult  # noqa: F401  (the stage's names)



def viscous_stage(case, profile, mesh, flow, tables, onedim, progress=None, mesh_build=None) -> ViscousResult:
    """The wall layer of a run, and the displacement pass when the case asks for it."""
    res = wall_layers(case, profile, flow, tables, onedim)
    if progress:
        sep = "; separated: " + ", ".join(f"{a * 1e3:.4g}-{b * 1e3:.4g} mm" for a, b in res.separation_x_ranges_m) \
            if res.separation_x_ranges_m else ""
        progress("viscous", f"wall layer: Re {res.reynolds_number:.3g}, friction {res.friction_x_N:.4g} N{sep}, "
                 f"{res.seconds:.2f} s")
    if res.settings.displacement != "none":
        t = time.perf_counter()
        disp = displacement_pass(case, profile, mesh, flow, tables, onedim, res, progress)
        res = replace(res, displacement=disp, warnings=res.warnings + list(disp.warnings))
        if progress:
            progress("viscous", f"displacement pass ({disp.passes} re-solves): flow {disp.flow_change_rel:+.3%}, wall force "
                     f"{disp.force_change_N:+.4g} N, {time.perf_counter() - t:.2f} s")
    return res


def summary_section(res) -> dict:
    """The ``viscous`` section of summary.json (the model in use, and its results)."""
    v = getattr(res, "viscous", None)
    if v is None:
        # withheld for this flow (LayerWithheld: its message is among the warnings), or not asked for
        why = next((w for w in res.checks.warnings if w.startswith("no wall layer:")), None)
        return {"model": "none", "note": why or 'no wall layer (viscous.model = "none", or the fluid\'s viscosity is unknown)'}
    f = res.forces
    total = f.total_x_N + v.friction_x_N
    mom = f.momentum_x_N + v.momentum_friction_x_N
    out = {
        "model": v.model,
        "settings": v.settings.as_dict(),
        "viscosity_Pa_s": v.viscosity_Pa_s, "kinematic_viscosity_m2_s": v.kinematic_viscosity_m2_s,
        "viscosity_source": v.viscosity_source,
        "reynolds_number": v.reynolds_number, "reynolds_length_m": v.reynolds_length_m, "reynolds_basis": v.reynolds_basis,
        "reynolds_number_narrowest": v.reynolds_number_narrowest, "reynolds_narrowest_at": v.reynolds_narrowest_at,
        "friction_x_N": v.friction_x_N,
        "friction_wall_x_N": v.chains[Boundary.WALL].friction_x_N if Boundary.WALL in v.chains else 0.0,
        "friction_centerbody_x_N": v.chains[Boundary.CENTERBODY].friction_x_N if Boundary.CENTERBODY in v.chains else 0.0,
        "total_with_friction_x_N": total,
        "momentum_with_friction_x_N": mom,
        "friction_reconciliation_rel": (total - mom) / max(abs(mom), 1e-300),
        "friction_momentum_integral_x_N": v.momentum_friction_x_N,
        "discharge_coefficient": v.discharge_coefficient,
        "discharge_coefficient_inviscid": v.discharge_coefficient_inviscid,
        "discharge_coefficient_note": v.discharge_coefficient_note,
        "loss_coefficient": v.loss_coefficient, "loss_coefficient_note": v.loss_coefficient_note,
        "total_pressure_loss_Pa": v.total_pressure_loss_Pa, "head_loss_m": v.head_loss_m,
        "transition_x_m": v.transition_x_m,
        "separated": v.separated, "separation_x_ranges_m": v.separation_x_ranges_m, "separation_kind": v.separation_kind,
        "corner_vortex_x_ranges_m": v.corner_vortex_x_ranges_m,
        "max_shape_factor": v.max_shape_factor, "max_shape_factor_x_m": v.max_shape_factor_x_m,
        "coupling": v.coupling_note,
        "coupling_state": v.coupling.as_dict() if v.coupling is not None else None,
        "layers": {n: {"runs": [{"x_m": x, "start": how} for x, how in c.runs], "transition_x_m": list(c.transitions_x),
                       "separations": [{"from_x_m": a, "to_x_m": b, "kind": k} for a, b, k in c.separations],
                       "friction_x_N": c.friction_x_N} for n, c in v.chains.items()},
        "seconds": v.seconds,
        "notes": list(v.notes) + [
            "total_with_friction_x_N = forces.total_x_N (wall pressure) + friction_x_N; momentum_with_friction_x_N = "
            "forces.momentum_x_N (the planes) + the friction from the momentum integral of the layer (von Karman, "
            "derived); friction_reconciliation_rel compares the two",
        ],
        "caution": CAUTION,
    }
    d = v.displacement
    if d is not None:
        out["displacement"] = d.as_dict()
    return out
