"""Benchmark of the whole potential-flow run on the built-in demo at ~25k, ~100k and ~400k cells.

Times mesh, assembly, linear solve, post-processing and writing in one process, prints the ratio
of the whole run to the bare linear solve and the growth exponent of the run time with the cell
count, and saves the table to scripts/results/bench_potential.txt. The view stage (plots, 3D
picture, report.html) is timed in its own column and not counted in the ratio.

    .venv/bin/python scripts/bench_potential.py
"""

from __future__ import annotations

import platform
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from axibore.case import demo_case_path, load_case
from axibore.run import run_case
from axibore.view.report import build_report

TARGETS = (25_000, 100_000, 400_000)


def direct_vs_iterative(base, n0: int) -> list[str]:
    """The same matrix solved by SuperLU (direct) and by GMRES + AMG (the solver's choice)."""
    import scipy.sparse.linalg as spla

    from axibore.geometry import build_profile
    from axibore.mesh.gmsh_build import mesh_profile
    import axibore.solvers.potential as pot
    from axibore.solvers.potential import _solve_linear, assemble

    pot.DIRECT_MAX_CELLS = 0  # time the iterative path at every size

    out = ["linear solve of the demo matrix: SuperLU (spsolve) vs GMRES + Ruge-Stuben AMG"]
    for target in TARGETS[:2]:
        mesh = mesh_profile(build_profile(base), 0.05 * np.sqrt(n0 / target), 0, "quads").mesh
        is_value = np.zeros(mesh.n_faces, bool)
        is_value[mesh.boundary["outlet"]] = True
        data = np.zeros(mesh.n_faces)
        data[mesh.boundary["inlet"]] = -1.0
        ops = assemble(mesh, is_value)
        b = ops.R @ data
        t = time.perf_counter()
        x_direct = spla.spsolve(ops.K.tocsc(), b)
        t_direct = time.perf_counter() - t
        t = time.perf_counter()
        x_iter, *_ = _solve_linear(ops.K, b, ops.K_orth, 1e-10)
        t_iter = time.perf_counter() - t
        diff = np.abs(x_iter - x_direct).max() / np.abs(x_direct).max()
        out.append(f"  {mesh.n_cells:>9,} cells: SuperLU {t_direct:.3f} s, GMRES+AMG {t_iter:.3f} s, max relative difference {diff:.1e}")
    return out


def main() -> int:
    base = load_case(demo_case_path())
    n0 = 55_296  # cells of the demo at mesh.size 0.05 (mapped quads)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for target in TARGETS:
            size = 0.05 * np.sqrt(n0 / target)
            case = replace(base, mesh=base.mesh.model_copy(update={"size": float(size)}))
            t = time.perf_counter()
            res = run_case(case, Path(tmp) / f"run{target}", report=False)
            total = time.perf_counter() - t
            s = res.seconds
            t = time.perf_counter()
            build_report(Path(tmp) / f"run{target}")
            rep = time.perf_counter() - t
            rows.append((res.mesh.mesh.n_cells, s["mesh"], s["assembly"], s["linear_solve"], s["post"], s["write"], total, rep))
    lines = [
        f"axibore potential benchmark, demo case, {platform.processor() or platform.machine()}, python {sys.version.split()[0]}",
        f"{'cells':>9} {'mesh s':>8} {'assem s':>8} {'solve s':>8} {'post s':>8} {'write s':>8} {'total s':>8} {'total/solve':>11} {'report s':>9}",
    ]
    for n, m, a, lsolve, p, w, tot, rep in rows:
        lines.append(f"{n:>9,} {m:>8.3f} {a:>8.3f} {lsolve:>8.3f} {p:>8.3f} {w:>8.3f} {tot:>8.3f} {tot / lsolve:>11.2f} {rep:>9.3f}")
    lines.append("(solve s: the linear solve, SuperLU up to 40k cells, else AMG set-up + GMRES; total s: whole run from the case to a complete run directory, without the report)")
    n = np.array([r[0] for r in rows], float)
    tot = np.array([r[6] for r in rows])
    exponent = np.polyfit(np.log(n), np.log(tot), 1)[0]
    lines.append(f"growth exponent of the whole run with cells: {exponent:.3f} (target < 1.2)")
    lines += direct_vs_iterative(base, n0)
    k = int(np.argmin(np.abs(n - 100_000)))
    lines.append(f"whole run / bare linear solve at {int(n[k]):,} cells: {tot[k] / rows[k][3]:.2f} (target <= 4)")
    text = "\n".join(lines)
    print(text)
    out = Path(__file__).parent / "results" / "bench_potential.txt"
    out.write_text(text + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
