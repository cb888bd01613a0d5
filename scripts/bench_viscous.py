"""Benchmark (not a test): the viscous stage's time against the whole run at about 100k cells.

The demo nozzle (deck-wash, seawater) meshed at mesh.size 0.032 (about 100k mapped quads), and
the water-main reducer at a size giving a similar count. For each: a run without the wall layer
(viscous.model = "none"), with it (the default), and with one displacement pass; each run is
``solve_case`` plus writing the run directory (no report: plots and the 3D view are timed
elsewhere), best of two. Targets: the stage under 10 % of the run without the displacement pass;
the run with one pass under 2.2 x the run without the layer.

    .venv/bin/python scripts/bench_viscous.py   # writes scripts/results/bench_viscous.txt
"""

from __future__ import annotations

import os
import platform
import tempfile
import time
from pathlib import Path

from axibore.case import load_case
from axibore.io.rundir import write_run
from axibore.run import solve_case

ROOT = Path(__file__).resolve().parents[1]
CASES = [("deck_wash_nozzle", 0.032), ("water_main_reducer", 0.0115)]


def timed_run(case) -> tuple[float, object]:
    best, res = float("inf"), None
    for _ in range(2):
        with tempfile.TemporaryDirectory() as d:
            t = time.perf_counter()
            res = solve_case(case)
            write_run(res, Path(d))
            best = min(best, time.perf_counter() - t)
    return best, res


def main() -> None:
    lines = [f"axibore viscous-stage benchmark, {time.strftime('%Y-%m-%d %H:%M')}, {platform.processor() or platform.machine()}, "
             f"python {platform.python_version()}, load average {os.getloadavg()[0]:.2f} (a shared machine: compare the ratios "
             "within one case, not times across runs)", ""]
    for name, size in CASES:
        base = load_case(ROOT / "cases" / f"{name}.toml").with_updates({"mesh.size": size})
        t_none, r0 = timed_run(base.with_updates({"viscous.model": "none"}))
        t_int, r1 = timed_run(base.with_updates({"viscous.model": "integral"}))
        t_one, r2 = timed_run(base.with_updates({"viscous.model": "integral", "viscous.displacement": "one-pass"}))
        stage = r1.seconds["viscous"]
        lines += [
            f"{name}: {r0.mesh.n_cells:,} cells",
            f"  run without the layer          {t_none:7.2f} s",
            f"  run with the layer             {t_int:7.2f} s   stage {stage:.3f} s = {stage / t_int:.1%} of the run "
            f"(target < 10 %)",
            f"  run with one displacement pass {t_one:7.2f} s   = {t_one / t_none:.2f} x the run without the layer "
            f"(target < 2.2 x); stage with the pass {r2.seconds['viscous']:.2f} s",
            f"  coupling: {r1.viscous.coupling.iterations} march{'es' if r1.viscous.coupling.iterations != 1 else ''}, last change of B {r1.viscous.coupling.last_change:.2g} "
            f"(target: at most 3 in the typical case, issue 20)",
            f"  friction {r1.viscous.friction_x_N:.4g} N; displacement pass: wall force "
            f"{r2.viscous.displacement.force_change_N:+.4g} N, flow {r2.viscous.displacement.flow_change_rel:+.3%}",
            "",
        ]
        print("\n".join(lines[-6:]))
    out = ROOT / "scripts" / "results" / "bench_viscous.txt"
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
