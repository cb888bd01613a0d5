"""Memory estimate of axibore.budget against the measured peak resident memory of whole runs.

Each run is a fresh process (peak memory of the child, resource.getrusage); three sizes of the
potential demo and two of the Euler demo. Saves scripts/results/bench_memory.txt.

    .venv/bin/python scripts/bench_memory.py
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).parents[1]
RUNS = [("deck_wash_nozzle", 0), ("deck_wash_nozzle", 2), ("deck_wash_nozzle", 4),
        ("air_test_nozzle_cd", 2), ("air_test_nozzle_cd", 4)]
CODE = ("import sys; from axibore.case import load_case; from axibore.run import solve_case; "
        "from axibore.budget import budget; c = load_case(sys.argv[1]).with_level(int(sys.argv[2])); b = budget(c); "
        "r = solve_case(c); import resource; "
        "print(r.mesh.n_cells, b.cells, b.memory_bytes, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)")


def main() -> int:
    lines = ["axibore memory: estimate (axibore.budget) against the measured peak resident memory of a whole solve",
             f"{'case':<22} {'level':>5} {'cells':>9} {'estimated cells':>15} {'estimate MB':>11} {'measured MB':>11} {'ratio':>6}"]
    for name, level in RUNS:
        out = subprocess.run([sys.executable, "-c", CODE, str(ROOT / "cases" / f"{name}.toml"), str(level)],
                             capture_output=True, text=True, check=True).stdout.split()
        cells, est_cells, est = int(out[0]), int(out[1]), float(out[2])
        measured = float(out[3]) * 1024.0  # the child's own peak resident memory (kB on Linux)
        lines.append(f"{name:<22} {level:>5} {cells:>9,} {est_cells:>15,} {est / 1e6:>11.0f} {measured / 1e6:>11.0f} "
                     f"{est / measured:>6.2f}")
    lines.append("(ratio > 1: the estimate is on the safe side; each run is a fresh process reporting its own peak)")
    text = "\n".join(lines)
    print(text)
    (ROOT / "scripts" / "results" / "bench_memory.txt").write_text(text + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
