"""How much a run will take before it starts: cells, memory, and the limit a run is refused above.

The memory per cell of each solver is on its registry entry (solvers/__init__.py), above a base
of about 150 MB (scripts/results/bench_memory.txt). The limit leaves a fifth of the available
memory free.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from functools import lru_cache

from .mesh import expected_cells
from .solvers import SOLVERS

BASE_BYTES = 2.0e8
MEMORY_FRACTION = 0.8


@dataclass(frozen=True)
class Budget:
    cells: int
    how: str  # "counted" (mapped blocks) or how the unstructured count was estimated
    memory_bytes: float
    available_bytes: float
    limit_cells: int
    overridden: bool = False  # the limit is --max-cells (at most what the available memory holds)

    @property
    def within(self) -> bool:
        return self.cells <= self.limit_cells


def available_memory() -> float:
    """Memory available to a new run [bytes] (Linux MemAvailable; else the physical memory)."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return float(line.split()[1]) * 1024.0
    except OSError:
        pass
    try:
        return float(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES"))
    except (ValueError, OSError, AttributeError):
        return 8.0e9


def bytes_per_cell(solver: str | None) -> float:
    """Memory per cell of a registered solver (the largest of the registry where none will run)."""
    if solver in SOLVERS:
        return SOLVERS[solver].bytes_per_cell
    return max(e.bytes_per_cell for e in SOLVERS.values())


def memory_estimate(cells: int, solver: str | None) -> float:
    return BASE_BYTES + bytes_per_cell(solver) * float(min(cells, 10**18))  # an absurd count stays a number


@lru_cache(maxsize=32)
def _cells(case) -> tuple[int, str]:
    """Cells of a case's mesh, once per case (a Case is immutable and hashed by identity)."""
    return expected_cells(case.profile, case.mesh.size, case.mesh.level, case.mesh.cells)


# an area-based count of an unstructured mesh is within about 30 %: far from the limit it decides alone
ROUGH_MARGIN = 2.0


def budget(case, max_cells: int | None = None, precise: bool = True) -> Budget:
    """Cells, memory and the limit of ``case``. ``precise=False`` (the run path): an unstructured
    mesh is counted by a coarse Gmsh mesh only when its area-based count is near the limit, so a
    run does not mesh twice."""
    avail = available_memory()
    per = bytes_per_cell(case.solver_kind)
    # --max-cells moves the limit up to what the available memory holds at the most, never past it (a mesh
    # beyond it ends in the kernel killing the process, with nothing said)
    hard = int(max(0.0, avail - BASE_BYTES) / per)
    limit = min(max_cells, hard) if max_cells is not None else int(max(0.0, MEMORY_FRACTION * avail - BASE_BYTES) / per)
    n, how = (None, "")
    if not precise:
        n, how = expected_cells(case.profile, case.mesh.size, case.mesh.level, case.mesh.cells, precise=False)
        if how != "counted" and ROUGH_MARGIN * n >= limit:
            n = None
    if n is None:
        n, how = _cells(case)
    return Budget(n, how, memory_estimate(n, case.solver_kind), avail, limit, max_cells is not None)


def refusal(b: Budget) -> str:
    if b.overridden:
        return (f"the mesh would have {'' if b.how == 'counted' else 'about '}{b.cells:,} cells and need about "
                f"{b.memory_bytes / 1e9:.3g} GB of memory, more than the {b.available_bytes / 1e9:.3g} GB available "
                f"(at most {b.limit_cells:,} cells): --max-cells cannot go past the machine's memory; raise mesh.size "
                "or lower mesh.level, or run on a machine with more memory")
    return (f"the mesh would have {'' if b.how == 'counted' else 'about '}{b.cells:,} cells and need about "
            f"{b.memory_bytes / 1e9:.3g} GB of memory, above the limit of {b.limit_cells:,} cells for the "
            f"{b.available_bytes / 1e9:.3g} GB available: raise mesh.size or lower mesh.level, or override the limit "
            "with --max-cells N")
