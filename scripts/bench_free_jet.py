"""Benchmark: free-jet runs against exit-plane runs of the same bore at the same level, as a user runs
them (the shipped cases and the test bores, default settings), in one sitting so the ratios compare.

For each bore: the exit-plane run and the free-jet run (both in memory, no run folder), the free jet's
outer iterations, cells, contraction coefficient and the time ratio. Targets (issue 19): at most 12
outer iterations, the free-jet run at most 5 x the exit-plane run, the spear demo under 40 s.
Output: scripts/results/bench_free_jet.txt (with the date and the machine's CPU count).
"""

from __future__ import annotations

import datetime as dt
import os
import sys
import time
from pathlib import Path

from axibore.case import load_case
from axibore.run import solve_case

ROOT = Path(__file__).parents[1]
sys.path.insert(0, str(ROOT / "tests"))
from test_free_jet import SLOT, _case, borda, converging_walls  # noqa: E402  (the test bores)


def bores():
    yield "spear demo (cases/spear_nozzle.toml)", load_case(ROOT / "cases" / "spear_nozzle.toml")
    yield "tank drain orifice (cases/)", load_case(ROOT / "cases" / "tank_drain_orifice.toml")
    yield "planar slot (test)", _case(SLOT)
    yield "axisymmetric Borda tube (test)", _case(borda("axisymmetric"))
    yield "planar walls at 45 deg (test)", _case(converging_walls(45.0))


def main() -> None:
    rows = [f"# bench_free_jet, {dt.date.today()}, {os.cpu_count()} CPUs; times in s, whole solve_case calls",
            f"{'bore':40s} {'cells':>8s} {'exit-plane':>10s} {'free-jet':>9s} {'ratio':>6s} {'its':>4s} {'Cc':>8s}"]
    print("\n".join(rows), flush=True)
    for name, case in bores():
        plane = case.with_updates({"outlet.kind": "exit-plane"})
        t = time.perf_counter()
        solve_case(plane)
        t_ep = time.perf_counter() - t
        t = time.perf_counter()
        fj = solve_case(case)
        t_fj = time.perf_counter() - t
        rows.append(f"{name:40s} {fj.mesh.n_cells:8,d} {t_ep:10.2f} {t_fj:9.2f} {t_fj / t_ep:6.2f} "
                    f"{len(fj.jet.history):4d} {fj.jet.contraction_coefficient:8.5f}")
        print(rows[-1], flush=True)
    out = Path(__file__).parent / "results" / "bench_free_jet.txt"
    out.write_text("\n".join(rows) + "\n")


if __name__ == "__main__":
    main()
