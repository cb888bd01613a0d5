"""Numbers behind tests/test_euler.py, on finer levels too: the discharge coefficient of the
Kliegel & Levine nozzles (Rc/r* = 1, 2, 4) under refinement, the observed order of the
total-pressure error, the low-Mach agreement with potential flow, and the normal shock in the 6 deg
conical divergent at three back pressures (position, total-pressure ratio, steps).
Writes scripts/results/checks_euler.txt. Run: .venv/bin/python scripts/checks_euler.py
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))


def say(out: list[str], line: str) -> None:
    out.append(line)
    print(line, flush=True)


def kliegel_levine(out: list[str]) -> None:
    import test_euler as T

    for rc in (1.0, 2.0, 4.0):
        ref = T.kliegel_levine_cd(rc, T.G)
        say(out, f"Kliegel & Levine (1969) Cd, Rc/r* = {rc:g}, gamma 1.4: {ref:.6f} (the series' last term "
                 f"{T.kliegel_levine_last_term(rc, T.G):.2e})")
        for level in (0, 2, 4):
            cd = T._cd(rc, level)
            say(out, f"  level {level}: Cd {cd:.6f}, Cd - Cd_KL {cd - ref:+.2e}")


def total_pressure_order(out: list[str]) -> None:
    import test_euler as T
    from axibore.solvers.euler import IdealGas, TotalInlet, solve_euler

    say(out, "total-pressure error (volume-weighted mean |p0/p0_in - 1|), cosine contraction, p_b/p0 = 0.769")
    errs, hs = [], []
    for level in (0, 2, 4):
        m = T.quads(T.smooth_nozzle(), 0.2, level)
        res = solve_euler(m, IdealGas(T.R_AIR, T.G), TotalInlet(1.3e5, 300.0), 1.0e5)
        V = m.cell_volume
        errs.append(float(np.sum(np.abs(res.total_pressure / 1.3e5 - 1.0) * V) / V.sum()))
        hs.append(m.h)
        say(out, f"  level {level}: {m.n_cells:6d} cells, h {m.h:.3e}, error {errs[-1]:.3e}, steps {res.record.steps}")
    say(out, f"  observed order (polyfit, all levels): {np.polyfit(np.log(hs), np.log(errs), 1)[0]:.2f}")


def low_mach(out: list[str]) -> None:
    import test_euler as T
    from axibore.numerics.reconstruct import boundary_gradients
    from axibore.solvers import onedim_gas as q1d
    from axibore.solvers.euler import IdealGas, TotalInlet, solve_euler
    from axibore.solvers.potential import BoundaryCondition, solve_potential

    m = T.quads(T.smooth_nozzle(tip=0.03), 0.1)
    bcs = {"inlet": BoundaryCondition("flux", -1.0), "outlet": BoundaryCondition("value", 0.0),
           "wall": BoundaryCondition("flux", 0.0), "axis": BoundaryCondition("flux", 0.0)}
    pot = solve_potential(m, bcs)
    wf, fo = m.boundary["wall"], m.boundary["outlet"]
    gw = boundary_gradients(m, pot.phi, wf, pot.is_value, pot.boundary_data)
    a = m.face_area[fo]
    cp_pot = (gw[0] ** 2 + gw[1] ** 2) / (-pot.face_flux[m.boundary["inlet"]].sum() / a.sum()) ** 2
    say(out, f"low Mach: max |Cp0_euler - Cp0_potential| on the wall, same mesh ({m.n_cells} cells)")
    for M_out in (0.05, 0.01, 0.001):
        p0 = 101325.0 / q1d.pressure_ratio(M_out)
        res = solve_euler(m, IdealGas(T.R_AIR, T.G), TotalInlet(p0, 293.15), 101325.0)
        rho = np.sum(res.boundary["outlet"].density * a) / a.sum()
        V = res.outlet_mass_flow / (2 * math.pi * rho * a.sum())
        cp = (p0 - res.boundary["wall"].pressure) / (0.5 * rho * V * V)
        say(out, f"  M_out {M_out:5.3f}: converged {res.record.converged} ({res.record.orders:.1f} orders) in "
                 f"{res.record.steps} steps, max dev {np.max(np.abs(cp - cp_pot)):.4f}")


def normal_shock(out: list[str]) -> None:
    import test_euler as T
    from axibore.solvers import onedim_gas as q1d
    from axibore.solvers.euler import TotalInlet

    say(out, "normal shock, 6 deg conical divergent (exit area ratio 2.56), levels 0-2 of mesh size 0.15: shock on "
             "the axis minus the quasi-1D position over the divergent length; total pressure behind it over the "
             "normal-shock relation at the Mach number in front of it, minus 1")
    for ar in (1.6, 2.0, 2.3):
        pb, xq, length = T.shock_case(ar)
        say(out, f"  A_s/A* {ar}: back pressure {pb:.0f} Pa, quasi-1D shock at x = {xq * 1e3:.3f} mm, divergent length "
                 f"{length * 1e3:.2f} mm")
        for level in (0, 1, 2):
            m, res = T.solve_seq(T.cd_nozzle(div=6.0, r_exit=T.RE / T.RT), 0.15, level, pb,
                                 TotalInlet(T.SHOCK_P0, T.SHOCK_T0))
            xs, M1, r0 = T.axis_shock(m, res)
            rel = float(q1d.shock_total_pressure_ratio(M1, T.G))
            r = res.record
            say(out, f"    level {level}: {m.n_cells:6d} cells, converged {r.converged} ({r.orders:.1f} orders), steps "
                     f"{r.steps} (coarse {'+'.join(str(c.steps) for c in res.coarse) or '-'}), mass imbalance "
                     f"{r.mass_imbalance:+.1e}; shock {(xs - xq) / length * 100:+.2f} % of the length (h {m.h / length * 100:.2f} %); "
                     f"M1 {M1:.4f}; p02/p01 {r0:.5f} vs {rel:.5f}: {(r0 / rel - 1) * 100:+.2f} %")


def main() -> int:
    out: list[str] = []
    kliegel_levine(out)
    total_pressure_order(out)
    low_mach(out)
    normal_shock(out)
    (ROOT / "scripts" / "results" / "checks_euler.txt").write_text("\n".join(out) + "\n", encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
