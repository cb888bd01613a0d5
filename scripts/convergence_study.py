"""A small mesh-convergence study from Python: the demo case at levels 0, 1 and 2 as a sweep.

    .venv/bin/python scripts/convergence_study.py [--workers N] [--out DIR]

Prints the table (one row a level) and the relative change of the axial force between levels.
"""

import argparse
import tempfile

import axibore
from axibore.case import demo_case_path


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workers", type=int, default=2, help="Dask workers (0: in this process)")
    ap.add_argument("--out", default=None, help="sweep folder (default: a temporary one)")
    args = ap.parse_args()
    out = args.out or tempfile.mkdtemp(prefix="axibore-convergence-")
    table = axibore.sweep(demo_case_path(), vary={"mesh.level": [0, 1, 2]}, workers=args.workers, out=out,
                          progress=print)
    print()
    for line in table.lines():
        print(line)
    forces = table.column("forces.total_x_N")
    cells = table.column("mesh.cells")
    print()
    for (c0, f0), (c1, f1) in zip(zip(cells, forces), list(zip(cells, forces))[1:]):
        if f0 is not None and f1 is not None:
            print(f"{c0:>8} -> {c1:>8} cells: total axial force changes by {(f1 - f0) / abs(f0):+.3e}")
    print(f"\nrun directories and sweep.html in {out}")


if __name__ == "__main__":
    main()
