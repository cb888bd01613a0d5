"""Steady compressible Euler equations of an ideal gas, axisymmetric, cell-centred finite volumes.

Modules, bottom up: ``gas`` (ideal gas, states, HLLC flux and its derivatives), ``scheme`` (ghost
states, limited reconstruction, residual), ``jacobian`` (the assembled Jacobian of the limited
second-order residual), ``linear`` (GMRES with a reused first-order LU preconditioner), ``newton``
(pseudo-transient Newton iteration, settings and record), ``start`` (quasi-1D start, coarse to
fine), ``driver`` (the solve with its mesh sequence, and the result). ``solve`` below is the
registered entry point: a case in, a FlowResult out.
"""

from __future__ import annotations

from dataclasses import asdict
from typing import Annotated

from pydantic import BaseModel, ConfigDict, Field

from ...estimate import Countdown
from ...mesh import target_size
from ..base import FlowError, FlowResult, SolveRecord, boundary_state
from .driver import EulerResult, GasBoundary, coarse_meshes, make_scheme, residual_of, solve_euler
from .gas import IdealGas, TotalInlet, conservative, hllc_flux, primitive
from .newton import EulerRecord, EulerSettings
from .start import quasi_1d_state


class CaseSettings(BaseModel):
    """The compressible solver's [solver] keys."""

    model_config = ConfigDict(extra="forbid", frozen=True)
    max_steps: Annotated[int, Field(ge=1, le=10_000, strict=True)] = 150  # Newton steps before "not converged"


def settings_from_case(case) -> EulerSettings:
    """The case's solver settings for this solver (the one place that reads them)."""
    return EulerSettings(max_steps=case.solver_settings.max_steps)


def solve(case, profile, mesh, progress=None):
    """The compressible flow of an ideal-gas ``case`` (registered as solver kind "euler")."""
    amb = case.ambient_pressure
    gas = IdealGas.from_fluid(case.fluid)
    inlet = TotalInlet(case.inlet.total_pressure + amb, case.inlet.total_temperature)
    p_back = (case.outlet.pressure or 0.0) + amb
    if inlet.total_pressure <= p_back:  # the inlet condition needs flow into the bore
        raise FlowError("inlet.total_pressure", f"the total pressure ({inlet.total_pressure:.6g} Pa absolute) is not "
                        f"above the back pressure ({p_back:.6g} Pa absolute): nothing drives a flow through the bore")
    settings = settings_from_case(case)
    report_every = max(1, settings.max_steps // 30)
    left = Countdown(10.0 ** (-settings.residual_orders), settings.max_steps + 1)

    def step_line(step, rel, cfl):
        ahead = left.update(rel)  # every step (the rate); shown on the reported ones
        if progress is not None and (step == 1 or step % report_every == 0):
            progress("solve", f"euler step {step}: residual {rel:.2e} of the quasi-1D start's, CFL {cfl:.3g}{ahead}")

    coarse = ()
    if settings.sequencing:
        h = target_size(profile, case.mesh.size, case.mesh.level)
        coarse = coarse_meshes(profile, mesh, h, case.mesh.cells, settings.min_coarse_cells)
    res = solve_euler(mesh, gas, inlet, p_back, settings, progress=step_line, coarse_meshes=coarse)
    rec = res.record
    boundary = {name: boundary_state(mesh, b.faces, b.velocity, b.pressure - amb, b.density, res.face_mass_flux)
                for name, b in res.boundary.items()}
    criterion = (rec.reason if rec.converged else
                 f"not converged: {rec.reason} (needs the residual down {settings.residual_orders:g} orders from "
                 f"the quasi-1D start's; reached {rec.orders:.1f})")
    coarse_steps = "+".join(str(r.steps) for r in res.coarse)
    record = SolveRecord(
        solver="euler", converged=rec.converged, iterations=rec.steps,
        residual=rec.residual_history[-1] if rec.residual_history else float("nan"),
        mass_imbalance=rec.mass_imbalance, seconds=rec.seconds + sum(r.seconds for r in res.coarse),
        method=rec.linear_method + (f"; started from coarser meshes ({coarse_steps} steps)" if res.coarse else ""),
        fallback=None, criterion=criterion, residual_history=rec.residual_history,
        seconds_assembly=rec.seconds_jacobian, seconds_solve=rec.seconds_linear, settings=asdict(settings),
    )
    return FlowResult(
        solver="euler", velocity=res.velocity, pressure=res.pressure - amb, density=res.density, boundary=boundary,
        face_mass_flux=res.face_mass_flux, record=record, ambient_pressure=amb, compressible=True,
        temperature=res.temperature, mach=res.mach,
        extra_fields={"total_pressure_ratio": res.total_pressure / inlet.total_pressure},
    )


__all__ = ["IdealGas", "TotalInlet", "EulerSettings", "EulerRecord", "EulerResult", "GasBoundary", "hllc_flux",
           "primitive", "conservative", "quasi_1d_state", "residual_of", "solve_euler", "coarse_meshes",
           "make_scheme", "settings_from_case", "CaseSettings", "solve"]
