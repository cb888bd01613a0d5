"""What every outlet model returns, and the exit-plane comparison beside a free jet.

An outlet model turns a case, its profile and the registered solver into a meshed, solved flow:
``solve(case, profile, solver, progress, msh_path) -> OutletFlow``. The pipe and exit-plane
models mesh the bore and call the solver once; the free-jet model also finds the jet boundary.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Protocol

from ..geometry import Profile
from ..mesh import MeshBuild
from ..solvers.base import FlowResult

Progress = Callable[[str, str], None]


def quiet(stage: str, detail: str) -> None:
    pass


@dataclass(frozen=True)
class ExitPlaneComparison:
    """The same bore with the jet taken to leave the lip plane uniformly (outlet.kind = "exit-plane"),
    beside a free-jet run; ``*_rel_diff`` = exit-plane / free-jet - 1. ``note`` says what it is,
    or why there is none (then every number is None)."""

    note: str
    volume_flow_m3_s: float | None = None
    total_x_N: float | None = None
    min_wall_gauge_Pa: float | None = None
    flow_rel_diff: float | None = None
    force_rel_diff: float | None = None
    meaningful: bool = True


@dataclass(frozen=True, eq=False)
class OutletFlow:
    """A solved flow and the geometry it was solved on."""

    profile: Profile  # the bore's profile; with the settled jet chain for a free jet
    mesh_build: MeshBuild
    flow: FlowResult
    jet: object | None = None  # outlets.freejet.JetSolution of a free jet
    mesh_seconds: float = 0.0
    solve_seconds: float = 0.0
    comparison: ExitPlaneComparison | None = None  # a free jet's exit-plane model


class OutletModel(Protocol):
    kind: str

    def solve(self, case, profile: Profile, solver, progress: Progress, msh_path=None) -> OutletFlow:
        ...
