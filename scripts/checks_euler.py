"""Numbers behind tests/test_euler.py, on finer levels too: discharge coefficient of the
Kliegel & Levine nozzle under refinement, observed order of the total-pressure error, and the
low-Mach agreement with potential flow at several outlet Mach numbers.
Writes scripts/results/checks_euler.txt. Run: .venv/bin/python scripts/checks_euler.py
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))


def main() -> int:
    import test_euler as T
    from axibore.solvers import onedim_gas as q1d
    from axibore.solvers.euler import IdealGas, TotalInlet, solve_euler
    from axibore.solvers.potential import BoundaryCondition, solve_potential
    from axibore.numerics.reconstruct import boundary_gradients

    out = []
    cd_ref = T.kliegel_levine_cd(2.0, T.G)
    out.append(f"Kliegel & Levine (1969) Cd, Rc/r* = 2, gamma 1.4: {cd_ref:.6f}")
    for level in (0, 2, 4):
        m = T.quads(T.cd_nozzle(), 0.1, level)
        res = solve_euler(m, IdealGas(T.R_AIR, T.G), TotalInlet(5e5, 300.0), 0.5e5)
        ideal = q1d.ideal_mass_flow(math.pi * 0.01**2, 5e5, 300.0, 0.5e5, T.R_AIR, T.G)
        cd = res.mass_flow / ideal
        out.append(f"  level {level}: {m.n_cells:6d} cells, h {m.h:.3e} m, steps {res.record.steps:3d}, "
                   f"{res.record.seconds:6.1f} s, Cd {cd:.6f}, (Cd - Cd_KL)/Cd_KL {cd / cd_ref - 1:+.2e}")
        print(out[-1], flush=True)

    out.append("total-pressure error (volume-weighted mean |p0/p0_in - 1|), cosine contraction, p_b/p0 = 0.769")
    errs, hs = [], []
    for level in (0, 2, 4):
        m = T.quads(T.smooth_nozzle(), 0.2, level)
        res = solve_euler(m, IdealGas(T.R_AIR, T.G), TotalInlet(1.3e5, 300.0), 1.0e5)
        V = m.cell_volume
        errs.append(float(np.sum(np.abs(res.total_pressure / 1.3e5 - 1.0) * V) / V.sum()))
        hs.append(m.h)
        out.append(f"  level {level}: {m.n_cells:6d} cells, h {m.h:.3e}, error {errs[-1]:.3e}, steps {res.record.steps}")
        print(out[-1], flush=True)
    out.append(f"  observed order (polyfit, all levels): {np.polyfit(np.log(hs), np.log(errs), 1)[0]:.2f}; "
               f"pairwise: {', '.join(f'{math.log(errs[i] / errs[i + 1]) / math.log(hs[i] / hs[i + 1]):.2f}' for i in range(len(errs) - 1))}")

    m = T.quads(T.smooth_nozzle(tip=0.03), 0.1)
    bcs = {"inlet": BoundaryCondition("flux", -1.0), "outlet": BoundaryCondition("value", 0.0),
           "wall": BoundaryCondition("flux", 0.0), "axis": BoundaryCondition("flux", 0.0)}
    pot = solve_potential(m, bcs)
    wf, fo = m.boundary["wall"], m.boundary["outlet"]
    gw = boundary_gradients(m, pot.phi, wf, pot.is_value, pot.boundary_data)
    a = m.face_area[fo]
    cp_pot = (gw[0] ** 2 + gw[1] ** 2) / (-pot.face_flux[m.boundary["inlet"]].sum() / a.sum()) ** 2
    out.append(f"low Mach: max |Cp0_euler - Cp0_potential| on the wall, same mesh ({m.n_cells} cells)")
    from axibore.solvers.euler import EulerSettings

    for fix, single, machs in ((True, True, (0.05, 0.01, 0.005)), (False, True, (0.05,)), (False, False, (0.05,))):
        for M_out in machs:
            p0 = 101325.0 / q1d.pressure_ratio(M_out)
            res = solve_euler(m, IdealGas(T.R_AIR, T.G), TotalInlet(p0, 293.15), 101325.0,
                              EulerSettings(low_mach_fix=fix, max_steps=60, single_factor=single))
            rho = np.sum(res.boundary["outlet"].density * a) / a.sum()
            V = res.outlet_mass_flow / (2 * math.pi * rho * a.sum())
            cp = (p0 - res.boundary["wall"].pressure) / (0.5 * rho * V * V)
            out.append(f"  low-Mach fix {fix!s:5}, {'single' if single else 'double'}-precision preconditioner: M_out {M_out:5.3f}: converged {res.record.converged!s:5} "
                       f"({res.record.converged_by or res.record.reason}) in {res.record.steps:3d} steps, "
                       f"max dev {np.max(np.abs(cp - cp_pot)):.4f}")
            print(out[-1], flush=True)
    (ROOT / "scripts" / "results" / "checks_euler.txt").write_text("\n".join(out) + "\n", encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
