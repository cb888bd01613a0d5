"""The Falkner-Skan family of similar laminar layers, computed here: the closure of the laminar
two-equation method (``closure.laminar_closure``) is read off these exact solutions, so that no
correlation has to be quoted.

The similar layers of an edge speed ue = C x^m (Falkner & Skan 1931, Phil. Mag. 12; Hartree 1937,
Proc. Camb. Phil. Soc. 33) solve, with beta = 2m/(m + 1), eta = y sqrt((m + 1) ue/(2 nu x)), u/ue = f'(eta):

    f''' + f f'' + beta (1 - f'^2) = 0,   f(0) = f'(0) = 0,   f'(inf) = 1.

From a profile, with the integrals over eta:
    H   = delta*/theta,            delta* = int (1 - f'),   theta = int f' (1 - f')
    H*  = theta*/theta,            theta* = int f' (1 - f'^2)   (kinetic-energy thickness)
    l   = cf Re_theta/2 = f''(0) theta_eta                         (tau_w = mu ue f''(0)/g, theta = theta_eta g)
    d   = 2 CD Re_theta/H* = 2 theta_eta int f''^2 / H*        (CD = nu/ue^3 int (du/dy)^2 dy, the dissipation)
(g = sqrt(2 nu x/((m + 1) ue)) is the length scale; the ratios are free of it; derived.) These four are the
whole closure of the momentum and kinetic-energy integral equations for the one-parameter family.

The attached branch runs from the separation profile (f''(0) = 0, beta = -0.1988, Hartree 1937) to strong
acceleration; the family is solved by continuation in beta with scipy's collocation solver, the separation
profile with beta as the unknown of the condition f''(0) = 0. ``python -m axibore.viscous.falkner_skan``
prints the table ``closure`` carries (``_FS_TABLE``); a test recomputes rows of it.
"""

from __future__ import annotations

import numpy as np

ETA_MAX = 12.0  # the outer edge in eta: f' - 1 ~ exp(-eta^2/2) is below 1e-30 there for the attached branch
BETA_MAX = 20.0  # strong acceleration (H = 2.08, against 2.22 at a stagnation point); beyond it the closure is held


def _integrals(sol, beta: float) -> tuple[float, ...]:
    eta = np.linspace(0.0, ETA_MAX, 24001)
    f, fp, fpp = sol.sol(eta)
    w = np.full(eta.size, eta[1])  # trapezoid weights
    w[0] = w[-1] = 0.5 * eta[1]
    ds, th = np.sum(w * (1.0 - fp)), np.sum(w * fp * (1.0 - fp))
    ts, diss = np.sum(w * fp * (1.0 - fp**2)), np.sum(w * fpp**2)
    Hs = ts / th
    return beta, float(fpp[0]), ds / th, Hs, float(fpp[0]) * th, 2.0 * diss * th / Hs


def family(betas) -> np.ndarray:
    """Rows (beta, f''(0), H, H*, l, d) for each beta (solved in the given order, each from the last)."""
    eta = np.linspace(0.0, ETA_MAX, 300)
    y = np.vstack([eta - 1.0 + np.exp(-eta), 1.0 - np.exp(-eta), np.exp(-eta)])
    rows = []
    for beta in betas:
        sol = _solve(float(beta), eta, y)
        eta, y = sol.x, sol.y
        rows.append(_integrals(sol, float(beta)))
    return np.array(rows)


def _solve(beta: float, eta, y):
    from scipy.integrate import solve_bvp

    def rhs(x, v, b=float(beta)):
        return np.vstack([v[1], v[2], -v[0] * v[2] - b * (1.0 - v[1] ** 2)])

    sol = solve_bvp(rhs, lambda a, b: np.array([a[0], a[1], b[1] - 1.0]), eta, y, tol=1e-9, max_nodes=100000)
    if not sol.success:
        raise RuntimeError(f"Falkner-Skan beta = {beta}: {sol.message}")
    return sol


def separation_profile() -> tuple[float, ...]:
    """The row of the separation profile: beta unknown, with f''(0) = 0 as its extra condition; started
    from the profile at beta = -0.198, reached by continuation from the flat plate."""
    from scipy.integrate import solve_bvp

    eta = np.linspace(0.0, ETA_MAX, 300)
    y = np.vstack([eta - 1.0 + np.exp(-eta), 1.0 - np.exp(-eta), np.exp(-eta)])
    for beta in (0.0, -0.1, -0.15, -0.19, -0.198):
        sol = _solve(beta, eta, y)
        eta, y = sol.x, sol.y

    def rhs(x, v, p):
        return np.vstack([v[1], v[2], -v[0] * v[2] - p[0] * (1.0 - v[1] ** 2)])

    def bc(a, b, p):
        return np.array([a[0], a[1], b[1] - 1.0, a[2]])

    sol = solve_bvp(rhs, bc, eta, y, p=[-0.198], tol=1e-9, max_nodes=100000)
    if not sol.success:
        raise RuntimeError(f"Falkner-Skan separation profile: {sol.message}")
    return _integrals(sol, float(sol.p[0]))


def table_betas(beta_sep: float) -> np.ndarray:
    """The table's betas: from BETA_MAX down to just above separation, dense where H changes fast."""
    strong = np.geomspace(BETA_MAX, 1.0, 14)
    mild = np.linspace(1.0, 0.0, 11)[1:]
    t = np.linspace(0.0, 1.0, 41)[1:-1]
    adverse = beta_sep * (1.0 - (1.0 - t) ** 2)  # 0 -> beta_sep, clustered near separation
    return np.concatenate([strong, mild, adverse])


def table() -> np.ndarray:
    """The whole attached branch, ordered by decreasing beta, the separation profile last."""
    sep = separation_profile()
    return np.vstack([family(table_betas(sep[0])), np.array(sep)[None, :]])


if __name__ == "__main__":  # pragma: no cover - prints the table that closure carries
    np.set_printoptions(precision=10, suppress=False, linewidth=160)
    for row in table():
        print("    (" + ", ".join(f"{v:.10g}" for v in row) + "),")
