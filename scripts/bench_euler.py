"""Benchmark of the Euler solver on the compressed-air blow-off nozzle (cases/air_blowoff_nozzle.toml).

Cells, nonlinear steps, seconds per step and in all at about 5k, 20k and 80k cells (mapped quads),
and the growth exponent of run time with cells. Writes scripts/results/bench_euler.txt.
Run: .venv/bin/python scripts/bench_euler.py
"""

from __future__ import annotations

import math
import os
import platform
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def main() -> int:
    from axibore.case import load_case
    from axibore.mesh.gmsh_build import mesh_profile
    from axibore.solvers import onedim_gas as q1d
    from axibore.solvers.euler import IdealGas, TotalInlet, solve_euler

    case = load_case(ROOT / "cases" / "air_blowoff_nozzle.toml")
    prof = case.profile
    gas = IdealGas.from_fluid(case.fluid)
    p_amb = case.ambient_pressure
    inlet = TotalInlet(case.inlet.total_pressure + p_amb, case.inlet.total_temperature)
    A_exit = float(prof.flow_area(np.array([prof.x_outlet]))[0])
    ideal = q1d.ideal_mass_flow(A_exit, inlet.total_pressure, inlet.total_temperature, p_amb,
                                gas.gas_constant, gas.gamma)
    lines = [f"Euler benchmark: {case.title}; p0 = {inlet.total_pressure:.0f} Pa abs, T0 = "
             f"{inlet.total_temperature:.2f} K, back pressure {p_amb:.0f} Pa; mapped quads; machine: "
             f"{platform.processor() or platform.machine()}, {os.cpu_count()} cores, python {sys.version.split()[0]}",
             f"ideal (quasi-1D, choked) mass flow through the exit area: {ideal:.6g} kg/s",
             f"{'cells':>7} {'steps':>5} {'conv':>10} {'s/step':>7} {'total s':>8} {'cpu s':>7} {'linear s':>8} {'jac s':>6} "
             f"{'mdot kg/s':>10} {'Cd':>8} {'imbalance':>10} {'F_wall N':>9} {'frozen':>6} {'load':>9}  linear"]
    rows = []
    for size in (0.1, 0.05, 0.025):
        load0 = os.getloadavg()[0]
        t0 = time.perf_counter()
        m = mesh_profile(prof, size=size, level=0, cells="quads").mesh
        t_mesh = time.perf_counter() - t0
        c0 = time.process_time()
        res = solve_euler(m, gas, inlet, p_amb)
        cpu = time.process_time() - c0  # CPU seconds of this process (all its threads)
        r = res.record
        rows.append((m.n_cells, r.seconds, r.steps, r.converged))
        load = f"{load0:.1f}-{os.getloadavg()[0]:.1f}"  # 1-min load average before and after the run
        lines.append(f"{m.n_cells:7d} {r.steps:5d} {r.converged_by or 'NO':>10} {r.seconds / r.steps:7.3f} {r.seconds:8.2f} {cpu:7.2f} "
                     f"{r.seconds_linear:8.2f} {r.seconds_jacobian:6.2f} {res.mass_flow:10.7g} {res.mass_flow / ideal:8.5f} "
                     f"{r.mass_imbalance:10.2e} {res.wall_force:9.5g} {r.limiter_frozen_at or '-':>6} {load:>9}  "
                     f"{r.linear_method} (mesh {t_mesh:.2f} s)")
        print(lines[-1], flush=True)
    c, s = np.log([x[0] for x in rows]), np.log([x[1] for x in rows])
    expo = np.polyfit(c, s, 1)[0]
    lines.append(f"run time ~ cells^{expo:.2f} (fit over all sizes); pairs "
                 + ", ".join(f"cells^{(s[i + 1] - s[i]) / (c[i + 1] - c[i]):.2f}" for i in range(len(rows) - 1)))
    k = int(np.argmin([abs(x[0] - 20000) for x in rows]))
    n, sec, steps, conv = rows[k]
    met = conv and sec < 30 and steps < 60
    lines.append(f"targets: ~20k cells converged in < 30 s and < 60 steps: {'met' if met else 'NOT met'} "
                 f"({n} cells: {'converged' if conv else 'not converged'}, {steps} steps, {sec:.1f} s); "
                 f"run time growing no faster than cells^1.3: {'met' if expo <= 1.3 else 'NOT met'} ({expo:.2f}); "
                 f"all converged: {all(x[3] for x in rows)}")
    out = ROOT / "scripts" / "results" / "bench_euler.txt"
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print("\n".join(lines[-2:]))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
