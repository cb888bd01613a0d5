"""Benchmark of the Euler solver on the compressed-air blow-off nozzle (cases/air_blowoff_nozzle.toml).

1. The solve as the registered solver runs it (the mesh sequence included: the coarser meshes are
   built and solved inside the timed span) at about 5k, 20k and 80k cells (mapped quads): Newton
   steps on the given mesh and on the coarser ones, seconds per step and in all, and the growth
   exponent of run time with cells.
2. Whole commands, one after the other in this run: ``axibore run cases/air_blowoff_nozzle.toml
   --out DIR`` against the liquid demo ``axibore run --out DIR2`` (twice each, alternating; the
   ratio of the faster of each).
Writes scripts/results/bench_euler.txt. Run: .venv/bin/python scripts/bench_euler.py
"""

from __future__ import annotations

import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def solver_rows(lines: list[str]) -> list[tuple[int, float, int, bool]]:
    from axibore.case import load_case
    from axibore.mesh import mesh_profile, target_size
    from axibore.solvers import onedim_gas as q1d
    from axibore.solvers.euler import EulerSettings, IdealGas, TotalInlet, coarse_meshes, solve_euler

    case = load_case(ROOT / "cases" / "air_blowoff_nozzle.toml")
    prof = case.profile
    gas = IdealGas.from_fluid(case.fluid)
    p_amb = case.ambient_pressure
    inlet = TotalInlet(case.inlet.total_pressure + p_amb, case.inlet.total_temperature)
    A_exit = float(prof.flow_area(np.array([prof.x_outlet]))[0])
    ideal = q1d.ideal_mass_flow(A_exit, inlet.total_pressure, inlet.total_temperature, p_amb, gas.gas_constant, gas.gamma)
    settings = EulerSettings()
    lines += [f"Euler benchmark: {case.title}; p0 = {inlet.total_pressure:.0f} Pa abs, T0 = {inlet.total_temperature:.2f} K, "
              f"back pressure {p_amb:.0f} Pa; mapped quads; machine: {platform.processor() or platform.machine()}, "
              f"{os.cpu_count()} cores, python {sys.version.split()[0]}",
              f"ideal (quasi-1D, choked) mass flow through the exit area: {ideal:.6g} kg/s",
              "total s: the coarse meshes' construction and solves included; steps: on the given mesh (coarse: on the "
              "coarser meshes, coarsest first)",
              f"{'cells':>7} {'steps':>5} {'coarse':>9} {'conv':>5} {'orders':>6} {'s/step':>7} {'total s':>8} {'cpu s':>7} "
              f"{'linear s':>8} {'jac s':>6} {'mdot kg/s':>10} {'Cd':>8} {'imbalance':>10} {'F_wall N':>9} {'load':>9}  linear"]
    rows = []
    for size in (0.1, 0.05, 0.025):
        m = mesh_profile(prof, size=size, level=0, cells="quads").mesh
        load0 = os.getloadavg()[0]
        t0, c0 = time.perf_counter(), time.process_time()
        cm = coarse_meshes(prof, m, target_size(prof, size, 0), "quads", settings.min_coarse_cells)
        res = solve_euler(m, gas, inlet, p_amb, settings, coarse_meshes=cm)
        wall, cpu = time.perf_counter() - t0, time.process_time() - c0
        r = res.record
        rows.append((m.n_cells, wall, r.steps, r.converged))
        coarse = "+".join(str(c.steps) for c in res.coarse) or "-"
        lines.append(f"{m.n_cells:7d} {r.steps:5d} {coarse:>9} {r.converged!s:>5} {r.orders:6.1f} {wall / max(r.steps, 1):7.3f} "
                     f"{wall:8.2f} {cpu:7.2f} {r.seconds_linear:8.2f} {r.seconds_jacobian:6.2f} {res.mass_flow:10.7g} "
                     f"{res.mass_flow / ideal:8.5f} {r.mass_imbalance:10.2e} {res.wall_force:9.5g} "
                     f"{load0:4.1f}-{os.getloadavg()[0]:.1f}  {r.linear_method} (coarse meshes {[c.n_cells for c in cm]})")
        print(lines[-1], flush=True)
    return rows


def command_seconds(argv: list[str], out: Path) -> float:
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "axibore.cli", *argv, "--out", str(out)], capture_output=True, text=True)
    if proc.returncode != 0:
        raise RuntimeError(f"axibore {' '.join(argv)} exited {proc.returncode}: {proc.stderr[-2000:]}")
    return time.perf_counter() - t0


def main() -> int:
    lines: list[str] = []
    rows = solver_rows(lines)
    c, s = np.log([x[0] for x in rows]), np.log([x[1] for x in rows])
    expo = float(np.polyfit(c, s, 1)[0])
    lines.append(f"run time ~ cells^{expo:.2f} (fit over all sizes); pairs "
                 + ", ".join(f"cells^{(s[i + 1] - s[i]) / (c[i + 1] - c[i]):.2f}" for i in range(len(rows) - 1)))
    gas_s, liquid_s = [], []
    with tempfile.TemporaryDirectory() as tmp:
        for k in range(2):
            gas_s.append(command_seconds(["run", str(ROOT / "cases" / "air_blowoff_nozzle.toml")], Path(tmp) / f"gas{k}"))
            liquid_s.append(command_seconds(["run"], Path(tmp) / f"liquid{k}"))
            print(f"whole commands, round {k + 1}: blow-off {gas_s[-1]:.2f} s, deck-wash {liquid_s[-1]:.2f} s", flush=True)
    ratio = min(gas_s) / min(liquid_s)
    lines.append("whole commands (axibore run, subprocesses, alternating): blow-off demo "
                 + ", ".join(f"{v:.2f}" for v in gas_s) + " s; liquid deck-wash demo "
                 + ", ".join(f"{v:.2f}" for v in liquid_s) + f" s; ratio of the faster of each {ratio:.2f}")
    k = int(np.argmin([abs(x[0] - 20000) for x in rows]))
    n, sec, steps, conv = rows[k]
    lines.append(f"targets: ~20k cells converged in at most 12 s: {'met' if conv and sec <= 12 else 'NOT met'} "
                 f"({n} cells, {steps} steps, {sec:.1f} s); growth no faster than cells^1.2: "
                 f"{'met' if expo <= 1.2 else 'NOT met'} ({expo:.2f}); blow-off demo at most 2x the liquid demo: "
                 f"{'met' if ratio <= 2.0 else 'NOT met'} ({ratio:.2f}); all converged: {all(x[3] for x in rows)}")
    out = ROOT / "scripts" / "results" / "bench_euler.txt"
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print("\n".join(lines[-3:]))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
