"""Benchmark: an uncertainty study on 2 workers against the runs it holds, in one sitting.

The study: the shipped deck-wash nozzle, 3 inputs (inlet pressure, exit diameter, temperature) and
3 levels (0, 1, 2): 3 grid runs and 6 input runs (central differences at level 2), 9 runs. Target
(issue 24): the wall time on 2 workers at most (runs / 2) x one run x 1.2, one run being a level-2
run folder written by `axibore run` (serial, the same machine, just before).
Output: scripts/results/bench_uncertainty.txt (with the date and the machine's CPU count).
"""

from __future__ import annotations

import datetime as dt
import os
import shutil
import tempfile
import time
from pathlib import Path

import axibore
from axibore.case import load_case
from axibore.run import run_case

ROOT = Path(__file__).parents[1]
INPUTS = {"inlet.pressure": "0.1 bar", "bore.exit_diameter": "0.05 mm", "fluid.temperature": "2 K"}


def main() -> None:
    case = load_case(ROOT / "cases" / "deck_wash_nozzle.toml")
    work = Path(tempfile.mkdtemp(prefix="bench-uncertainty-"))
    try:
        t = time.perf_counter()
        run_case(case.with_updates({"mesh.level": 2}), work / "one", report=False)  # as a study runs its points
        t_one = time.perf_counter() - t
        t = time.perf_counter()
        res = axibore.uncertainty(case, inputs=INPUTS, levels=(0, 1, 2), workers=2, out=work / "study")
        t_study = time.perf_counter() - t
        runs = sum(1 for p in (work / "study" / "runs").iterdir() if p.is_dir())
    finally:
        shutil.rmtree(work, ignore_errors=True)
    bound = runs / 2 * t_one * 1.2
    rows = [f"# bench_uncertainty, {dt.date.today()}, {os.cpu_count()} CPUs; wall times in s",
            f"one level-2 run folder, no report      {t_one:8.2f}",
            f"study: {runs} runs on 2 workers          {t_study:8.2f}",
            f"target (runs / 2) x one run x 1.2      {bound:8.2f}",
            f"ratio study / target                   {t_study / bound:8.3f}  ({'met' if t_study <= bound else 'NOT met'})",
            f"quantities: {len(res.quantities)}"]
    print("\n".join(rows))
    (Path(__file__).parent / "results" / "bench_uncertainty.txt").write_text("\n".join(rows) + "\n")


if __name__ == "__main__":
    main()
