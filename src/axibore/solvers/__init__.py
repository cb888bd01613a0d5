"""Flow solvers and their registry: adding a solver is one module and one ``register`` call.

Every solver is ``solve(case, profile, mesh, progress) -> FlowResult`` (see ``base.py``). An entry
says what the solver can do, and everything else reads it from there: the fluids it solves, the
outlet models and symmetries it supports, its memory per cell (the cell limit of a run), the
pydantic model of its own ``[solver]`` keys (validated with the case file's messages) and, for a
solver that can drive a free jet, its free-surface service. Targets are "module:name" text, so the
registry is known to the case schema, the CLI and ``check`` without importing any solver.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import import_module


@dataclass(frozen=True)
class SolverEntry:
    kind: str  # the case-file name (solver.kind)
    target: str  # "module:function": solve(case, profile, mesh, progress) -> FlowResult
    fluids: tuple[str, ...]  # "liquid" and/or "gas"
    outlets: tuple[str, ...]  # outlet models it supports (names.OUTLET_KINDS)
    symmetries: tuple[str, ...]  # "axisymmetric" and/or "planar"
    bytes_per_cell: float  # memory of a run per cell, above the base (budget.py)
    settings: str | type | None  # pydantic model of its [solver] keys ("module:Class" or the class)
    description: str
    free_surface: str | None = None  # "module:Class": the service the free-jet outlet drives

    @staticmethod
    def _load(target):
        if target is None or not isinstance(target, str):
            return target
        module, name = target.split(":")
        return getattr(import_module(module), name)

    def load(self):
        return self._load(self.target)

    def load_settings(self):
        """The pydantic model of this solver's [solver] keys (None: it has none)."""
        return self._load(self.settings)

    def load_free_surface(self):
        return self._load(self.free_surface)

    def refusals(self, fluid_class: str, outlet: str, symmetry: str) -> list[str]:
        """Why this solver cannot run such a case (empty when it can)."""
        out = []
        if fluid_class not in self.fluids:
            out.append(f'solver "{self.kind}" solves {" and ".join(f + "s" for f in self.fluids)}, not {fluid_class}s')
        if outlet not in self.outlets:
            out.append(f'outlet.kind = "{outlet}" with the solver "{self.kind}": it supports '
                       + ", ".join(f'"{o}"' for o in self.outlets))
        if symmetry not in self.symmetries:
            out.append(f'bore.symmetry = "{symmetry}" with the solver "{self.kind}": it solves '
                       + " and ".join(self.symmetries) + " geometries only")
        return out


SOLVERS: dict[str, SolverEntry] = {}


def register(kind: str, target: str, fluids: tuple[str, ...], description: str, *,
             outlets: tuple[str, ...] = ("pipe", "exit-plane"), symmetries: tuple[str, ...] = ("axisymmetric",),
             bytes_per_cell: float = 3.5e4, settings: str | type | None = None, free_surface: str | None = None) -> None:
    SOLVERS[kind] = SolverEntry(kind, target, tuple(fluids), tuple(outlets), tuple(symmetries), float(bytes_per_cell),
                                settings, description, free_surface)


def unregister(kind: str) -> None:
    SOLVERS.pop(kind, None)


def default_for(fluid_class: str) -> str | None:
    """The first registered solver for 'liquid' or 'gas', or None."""
    return next((s.kind for s in SOLVERS.values() if fluid_class in s.fluids), None)


def free_surface_solvers() -> list[str]:
    return [k for k, s in SOLVERS.items() if s.free_surface]


# Memory per cell measured on this project's machine (peak resident memory of whole runs above a
# base of about 150 MB; scripts/results/bench_memory.txt): the potential solver about 1.6 kB a cell,
# the compressible solver (block Jacobian, its preconditioner factor) far more.
register("potential", "axibore.solvers.potential:solve", ("liquid",),
         "incompressible irrotational flow, second-order finite volumes",
         outlets=("pipe", "exit-plane", "free-jet"), symmetries=("axisymmetric", "planar"), bytes_per_cell=2.0e3,
         settings="axibore.solvers.potential:PotentialSettings", free_surface="axibore.solvers.potential_jet:PotentialJet")
register("euler", "axibore.solvers.euler:solve", ("gas",),
         "compressible Euler equations for an ideal gas, subsonic to choked, second-order finite volumes",
         outlets=("pipe", "exit-plane"), symmetries=("axisymmetric",), bytes_per_cell=3.5e4,
         settings="axibore.solvers.euler:CaseSettings")
