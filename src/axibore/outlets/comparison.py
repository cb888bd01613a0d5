"""The exit-plane model beside a free jet: the same bore with the jet taken to leave the lip plane
uniformly at ambient pressure (outlet.kind = "exit-plane"), meshed and solved as a plain run would
(mapped quads where the bore allows: cheap). Optional (outlet.compare_exit_plane); a bore where it
cannot be built or means nothing gets a one-line note instead."""

from __future__ import annotations

import math

from ..geometry import Profile
from ..geometry.jet import lip_angle
from ..names import SOLID
from ..solvers.base import FlowResult
from .base import ExitPlaneComparison, quiet
from .plane import PlaneOutlet


def exit_plane_comparison(case, profile: Profile, solver, free: FlowResult) -> ExitPlaneComparison:
    if lip_angle(profile) < -math.pi / 2 - 1e-9:
        return ExitPlaneComparison("not solved: the wall arrives at the lip running upstream (a re-entrant tube), so an "
                                   "exit plane at the lip would cut the flow where it is not a jet", meaningful=False)
    try:
        ep_case = case.with_updates({"outlet.kind": "exit-plane", "viscous.model": "none"})
        flow = PlaneOutlet("exit-plane").solve(ep_case, ep_case.profile, solver, quiet).flow
    except Exception as exc:  # an optional side model: whatever stops it is said in one line, the run goes on
        return ExitPlaneComparison(f"not solved: the exit-plane model of this bore could not be built or solved "
                                   f"({type(exc).__name__}: {exc})", meaningful=False)
    force, free_force = flow.axial_force(SOLID), free.axial_force(SOLID)
    return ExitPlaneComparison(
        'the same bore with outlet.kind = "exit-plane" (the jet leaving the lip plane uniformly at ambient pressure); '
        "*_rel_diff = exit-plane / free-jet - 1",
        volume_flow_m3_s=flow.volume_flow, total_x_N=force, min_wall_gauge_Pa=flow.min_pressure(SOLID),
        flow_rel_diff=flow.volume_flow / free.volume_flow - 1.0,
        force_rel_diff=force / free_force - 1.0 if free_force else None)
