"""Flow solvers and their registry: adding a solver is one module and one ``register`` line.

Every solver is ``solve(case, profile, mesh, progress) -> FlowResult`` (see ``base.py``). Entries
name the module and function as text, so that the registry is known (to the case schema, the CLI
and ``check``) without importing any solver.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import import_module


@dataclass(frozen=True)
class SolverEntry:
    kind: str  # the case-file name (solver.kind)
    target: str  # "module:function"
    fluids: tuple[str, ...]  # "liquid" and/or "gas"
    description: str

    def load(self):
        module, func = self.target.split(":")
        return getattr(import_module(module), func)


SOLVERS: dict[str, SolverEntry] = {}


def register(kind: str, target: str, fluids: tuple[str, ...], description: str) -> None:
    SOLVERS[kind] = SolverEntry(kind, target, fluids, description)


def default_for(fluid_class: str) -> str | None:
    """The first registered solver for 'liquid' or 'gas', or None."""
    return next((s.kind for s in SOLVERS.values() if fluid_class in s.fluids), None)


register("potential", "axibore.solvers.potential:solve", ("liquid",),
         "incompressible irrotational flow, second-order finite volumes")
register("euler", "axibore.solvers.euler:solve", ("gas",),
         "compressible Euler equations for an ideal gas, subsonic to choked, second-order finite volumes")
