"""Benchmark of the whole potential-flow run on the built-in demo at ~25k, ~100k and ~400k cells.

Times mesh, assembly, linear solve, post-processing and writing in one process, prints the ratio
of the whole run to the bare linear solve and the growth exponent of the run time with the cell
count, and saves the table to scripts/results/bench_potential.txt.

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

TARGETS = (25_000, 100_000, 400_000)


def main() -> int:
    base = load_case(demo_case_path())
    n0 = 55_296  # cells of the demo at mesh.size 0.05 (mapped quads)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for target in TARGETS:
            size = 0.05 * np.sqrt(n0 / target)
            case = replace(base, mesh=base.mesh.model_copy(update={"size": float(size)}))
            t = time.perf_counter()
            res = run_case(case, Path(tmp) / f"run{target}")
            total = time.perf_counter() - t
            s = res.seconds
            rows.append((res.mesh.mesh.n_cells, s["mesh"], s["assembly"], s["linear_solve"], s["post"], s["write"], total))
    lines = [
        f"axibore potential benchmark, demo case, {platform.processor() or platform.machine()}, python {sys.version.split()[0]}",
        f"{'cells':>9} {'mesh s':>8} {'assem s':>8} {'solve s':>8} {'post s':>8} {'write s':>8} {'total s':>8} {'total/solve':>11}",
    ]
    for n, m, a, lsolve, p, w, tot in rows:
        lines.append(f"{n:>9,} {m:>8.3f} {a:>8.3f} {lsolve:>8.3f} {p:>8.3f} {w:>8.3f} {tot:>8.3f} {tot / lsolve:>11.2f}")
    n = np.array([r[0] for r in rows], float)
    tot = np.array([r[-1] for r in rows])
    exponent = np.polyfit(np.log(n), np.log(tot), 1)[0]
    lines.append(f"growth exponent of the whole run with cells: {exponent:.3f} (target < 1.2)")
    k = int(np.argmin(np.abs(n - 100_000)))
    lines.append(f"whole run / bare linear solve at {int(n[k]):,} cells: {tot[k] / rows[k][3]:.2f} (target <= 4)")
    text = "\n".join(lines)
    print(text)
    out = Path(__file__).parent / "results" / "bench_potential.txt"
    out.write_text(text + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
