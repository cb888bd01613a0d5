"""How much a run will take before it starts: cells, memory, and the limit a run is refused above.

The memory per cell was measured on this project's machine (peak resident memory of whole
runs, scripts/results/bench_memory.txt): the potential solver about 1.6 kB per cell above a
base of about 150 MB; the Euler solver (direct sparse factorisation of the block Jacobian)
far more per cell, given below. The limit leaves a fifth of the available memory free.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from functools import lru_cache

BASE_BYTES = 2.0e8
BYTES_PER_CELL = {"potential": 2.0e3, "euler": 3.5e4}
MEMORY_FRACTION = 0.8


@dataclass(frozen=True)
class Budget:
    cells: int
    how: str  # "counted" (mapped blocks) or how the unstructured count was estimated
    memory_bytes: float
    available_bytes: float
    limit_cells: int

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


def memory_estimate(cells: int, solver: str | None) -> float:
    return BASE_BYTES + BYTES_PER_CELL.get(solver or "potential", BYTES_PER_CELL["euler"]) * cells


@lru_cache(maxsize=32)
def _cells(case) -> tuple[int, str]:
    """Cells of a case's mesh, once per case (a Case is immutable and hashed by identity)."""
    from .mesh.gmsh_build import expected_cells

    return expected_cells(case.profile, case.mesh.size, case.mesh.level, case.mesh.cells)


# an area-based count of an unstructured mesh is within about 30 %: far from the limit it decides alone
ROUGH_MARGIN = 2.0


def budget(case, max_cells: int | None = None, precise: bool = True) -> Budget:
    """Cells, memory and the limit of ``case``. ``precise=False`` (the run path): an unstructured
    mesh is counted by a coarse Gmsh mesh only when its area-based count is near the limit, so a
    run does not mesh twice."""
    from .mesh.gmsh_build import expected_cells

    avail = available_memory()
    per = BYTES_PER_CELL.get(case.solver_kind or "potential", BYTES_PER_CELL["euler"])
    limit = max_cells if max_cells is not None else int(max(0.0, MEMORY_FRACTION * avail - BASE_BYTES) / per)
    n, how = (None, "")
    if not precise:
        n, how = expected_cells(case.profile, case.mesh.size, case.mesh.level, case.mesh.cells, precise=False)
        if how != "counted" and ROUGH_MARGIN * n >= limit:
            n = None
    if n is None:
        n, how = _cells(case)
    return Budget(n, how, memory_estimate(n, case.solver_kind), avail, limit)


def refusal(b: Budget) -> str:
    return (f"the mesh would have {'' if b.how == 'counted' else 'about '}{b.cells:,} cells and need about "
            f"{b.memory_bytes / 1e9:.3g} GB of memory, above the limit of {b.limit_cells:,} cells for the "
            f"{b.available_bytes / 1e9:.3g} GB available: raise mesh.size or lower mesh.level, or override the limit "
            "with --max-cells N")
