"""Sweep throughput on this machine: points per minute with 1 and 2 Dask workers (LocalCluster on
127.0.0.1), and the scheduling overhead per point against the run time of a point.

    .venv/bin/python scripts/bench_sweep.py [--points 8] [--level 2]

Overhead per point = (wall time of the sweep with one worker - sum of the point run times measured
on the worker) / points: sending the case, returning the files, writing the run directory. The
cluster start-up is timed apart. Results go to scripts/results/bench_sweep.txt. Not a test.
"""

import argparse
import os
import platform
import tempfile
import time
from pathlib import Path

from axibore.case import load_case
from axibore.study.runner import DaskExecutor
from axibore.study.sweep import build_points, run_sweep

ROOT = Path(__file__).parents[1]


def bench(workers: int, case, vary: dict) -> dict:
    points = build_points(case, vary)
    t0 = time.perf_counter()
    ex = DaskExecutor(workers)
    startup = time.perf_counter() - t0
    try:
        with tempfile.TemporaryDirectory(prefix="axibore-bench-") as d:
            t0 = time.perf_counter()
            res = run_sweep(case, points, Path(d) / "sw", ex, plots=())
            wall = time.perf_counter() - t0
    finally:
        ex.close()
    run_s = sum(r["seconds"] for r in res.rows)
    return {"workers": workers, "points": len(points), "startup_s": startup, "wall_s": wall, "run_s": run_s,
            "per_min": len(points) / wall * 60, "overhead_s": (wall * workers - run_s) / len(points),
            "point_s": run_s / len(points), "cells": res.rows[0]["mesh.cells"], "ok": res.ok}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--points", type=int, default=8)
    ap.add_argument("--level", type=int, default=2)
    args = ap.parse_args()
    case = load_case(ROOT / "cases" / "water_main_reducer.toml").with_updates({"mesh.level": args.level})
    vary = {"bore.half_angle": f"8 deg:22 deg:{args.points}"}
    results = [bench(w, case, vary) for w in (1, 2)]
    one, two = results
    lines = [f"axibore sweep benchmark: {platform.node()}, {os.cpu_count()} CPUs, {platform.python_version()}",
             f"case: water_main_reducer.toml, mesh.level {args.level} ({one['cells']:,} cells a point), "
             f"{one['points']} points of bore.half_angle; plots off",
             f"{'workers':>8}{'start-up s':>12}{'sweep s':>10}{'points/min':>12}{'run s/point':>13}{'overhead s/point':>18}"]
    for r in results:
        lines.append(f"{r['workers']:>8}{r['startup_s']:>12.2f}{r['wall_s']:>10.2f}{r['per_min']:>12.1f}"
                     f"{r['point_s']:>13.3f}{r['overhead_s']:>18.3f}")
    lines.append(f"speed-up 2 workers / 1 worker: {two['per_min'] / one['per_min']:.2f}x (target 1.8x)")
    lines.append(f"overhead per point (1 worker): {one['overhead_s']:.3f} s = {one['overhead_s'] / one['point_s']:.1%} of the "
                 f"run time of a point ({one['point_s']:.3f} s)")
    lines.append("overhead = (sweep wall time x workers - sum of point run times on the workers) / points; "
                 "with 2 workers it also holds the wait when the points do not divide evenly and any other load on the machine")
    text = "\n".join(lines) + "\n"
    print(text)
    out = ROOT / "scripts" / "results" / "bench_sweep.txt"
    out.write_text(text)
    print(f"saved {out}")


if __name__ == "__main__":
    main()
