"""Compressible Euler solver and quasi-1D gas model: checks against exact laws and published values.

Every expected value comes from a published source or an exact law named beside it.
"""

import math

import numpy as np
import pytest

from axibore.geometry import Profile, Segment
from axibore.mesh import mesh_profile
from axibore.solvers import onedim_gas as q1d
from axibore.mesh import target_size
from axibore.solvers.euler import (EulerSettings, IdealGas, TotalInlet, coarse_meshes, conservative, make_scheme,
                                   quasi_1d_state, residual_of, solve_euler)

R_AIR = 287.05  # J/(kg K), as in SOURCES.md (NACA 1135 choked-flow constant)
G = 1.4


# ---- geometries ------------------------------------------------------------------------------
def pipe(R=0.01, L=0.05):
    return Profile((Segment((0.0, R), (L, R)),))


def _cosine_pts(R1, R2, L, n=41, x0=0.0):
    t = np.linspace(0.0, 1.0, n)
    return [(x0 + L * s, R2 + (R1 - R2) * 0.5 * (1 + math.cos(math.pi * s))) for s in t]


def smooth_nozzle(R1=0.02, R2=0.014, L=0.08, tip=0.0):
    """Cosine contraction (zero slope at both ends), optionally a straight tip after it."""
    pts = _cosine_pts(R1, R2, L)
    segs = [Segment(pts[0], pts[-1], "spline", via=tuple(pts[1:-1]))]
    if tip > 0:
        segs.append(Segment(pts[-1], (L + tip, R2)))
    return Profile(tuple(segs))


def cd_nozzle(rt=0.01, rc_ratio=2.0, r_in=2.0, conv=30.0, div=15.0, r_exit=1.25, l_in=0.5):
    """Converging-diverging nozzle: inlet pipe, 30 deg cone, circular-arc throat of radius
    rc_ratio * rt tangent to both cones, 15 deg diverging cone."""
    Rc = rc_ratio * rt
    a1, a2 = math.radians(conv), math.radians(div)
    r1, r2 = rt + Rc * (1 - math.cos(a1)), rt + Rc * (1 - math.cos(a2))
    x0 = l_in * rt
    x1 = x0 + (r_in * rt - r1) / math.tan(a1)
    xt = x1 + Rc * math.sin(a1)
    x2 = xt + Rc * math.sin(a2)
    x3 = x2 + (r_exit * rt - r2) / math.tan(a2)
    return Profile((Segment((0.0, r_in * rt), (x0, r_in * rt)), Segment((x0, r_in * rt), (x1, r1)),
                    Segment((x1, r1), (x2, r2), "arc", -Rc), Segment((x2, r2), (x3, r_exit * rt))))


def kliegel_levine_cd(rc_ratio: float, g: float) -> float:
    """Kliegel & Levine (1969), AIAA J. 7(7), correcting Hall (1962): throat discharge coefficient."""
    L = rc_ratio + 1.0
    return 1 - (g + 1) / L**2 * (1 / 96 - (8 * g - 27) / (2304 * L) + (754 * g**2 - 757 * g + 3615) / (276480 * L**2))


def quads(profile, size, level=0):
    return mesh_profile(profile, size=size, level=level, cells="quads").mesh


def solve_seq(profile, size, level, outlet_pressure, inlet, settings=EulerSettings()):
    """The solve as the registered solver runs it: from the solutions on 2, 4, ... times coarser meshes."""
    m = quads(profile, size, level)
    cm = coarse_meshes(profile, m, target_size(profile, size, level), "quads", settings.min_coarse_cells)
    return m, solve_euler(m, IdealGas(R_AIR, G), inlet, outlet_pressure, settings, coarse_meshes=cm)


# ---- quasi-1D model ----------------------------------------------------------------------
def test_isentropic_relations_naca1135():
    # NACA Report 1135 (1953), isentropic-flow table, gamma = 1.4 (values in SOURCES.md)
    assert q1d.pressure_ratio(0.5) == pytest.approx(0.84302, abs=1e-5)
    assert q1d.density_ratio(0.5) == pytest.approx(0.88517, abs=1e-5)
    assert q1d.temperature_ratio(0.5) == pytest.approx(0.95238, abs=1e-5)
    assert q1d.area_ratio(0.5) == pytest.approx(1.33984, abs=1e-5)
    assert q1d.pressure_ratio(2.0) == pytest.approx(0.12780, abs=1e-5)
    assert q1d.area_ratio(2.0) == pytest.approx(1.68750, abs=1e-5)
    assert q1d.critical_pressure_ratio() == pytest.approx(0.528282, abs=1e-6)
    # choked flow: mdot sqrt(T0) / (p0 A*) = 0.040415 with R = 287.05 (NACA 1135 via SOURCES.md)
    assert q1d.choked_mass_flux(1.0, 1.0, R_AIR) == pytest.approx(0.040415, abs=1e-6)


def test_mach_from_area_ratio_both_branches():
    # inverse of NACA 1135 eq. 80 at the tabulated points (M = 0.5 subsonic, M = 2 supersonic)
    M = q1d.mach_from_area_ratio(np.array([1.33984375, 1.6875, 1.0]), supersonic=np.array([False, True, False]))
    np.testing.assert_allclose(M, [0.5, 2.0, 1.0], atol=1e-6)
    # round trip over a wide range (exact law: the area ratio of the returned Mach number)
    ar = np.geomspace(1.0001, 50.0, 40)
    for sup in (False, True):
        np.testing.assert_allclose(q1d.area_ratio(q1d.mach_from_area_ratio(ar, supersonic=sup)), ar, rtol=1e-12)


def test_normal_shock_relations():
    # Rankine-Hugoniot normal shock, M1 = 2, gamma 1.4: p2/p1 = 1 + 2g/(g+1)(M1^2 - 1) = 4.5 exactly;
    # M2 = 0.57735 and p02/p01 = 0.72087 (NACA Report 1135, 1953, eqs. 93-99, the values SOURCES.md lists)
    assert q1d.shock_pressure_ratio(2.0) == pytest.approx(4.5, rel=1e-14)
    assert q1d.shock_mach(2.0) == pytest.approx(0.57735, abs=1e-5)
    assert q1d.shock_total_pressure_ratio(2.0) == pytest.approx(0.72087, abs=1e-5)


def test_quasi_one_dim_shock_in_diverging_part():
    # exact laws: continuity (rho u A constant, across the shock too) and exit pressure = back pressure
    x = np.linspace(0.0, 2.0, 2001)
    A = 1.0 + (x - 0.5) ** 2
    p0, T0 = 1e5, 300.0
    reg = q1d.nozzle_regime(1.0, A[-1], 0.5)
    assert reg.regime == "shock in nozzle"
    sol = q1d.quasi_one_dim(x, A, p0, T0, 0.5e5, R_AIR)
    assert sol.x_shock is not None and 0.5 < sol.x_shock < 2.0
    assert sol.pressure[-1] == pytest.approx(0.5e5, rel=1e-9)
    mdot = sol.density * sol.mach * np.sqrt(G * R_AIR * sol.temperature) * A
    np.testing.assert_allclose(mdot, sol.mass_flow, rtol=1e-9)


# ---- Euler solver: discrete operator --------------------------------------------------------
@pytest.mark.parametrize("cells", ["quads", "triangles"])
def test_uniform_flow_preserved(cells):
    # exact law: a uniform axial stream in a straight pipe is a steady solution; the discrete
    # source (p - p_out) A_cell balances sum_f (p - p_out) n_r r_f L_f (divergence theorem, exact
    # for straight faces). Supersonic (M 1.5), so that the outlet takes the interior state and the
    # back pressure can differ from p: the radial momentum fluxes (p - p_out) n_r are not zero
    m = mesh_profile(pipe(), size=0.2, level=0, cells=cells).mesh
    p0, T0, M = 2e5, 300.0, 1.5
    p, T = p0 * q1d.pressure_ratio(M), T0 * q1d.temperature_ratio(M)
    rho, u = p / (R_AIR * T), M * math.sqrt(G * R_AIR * T)
    C = m.n_cells
    U = conservative(np.stack([np.full(C, rho), np.full(C, u), np.zeros(C), np.full(C, p)]), G)
    R, FA = residual_of(m, IdealGas(R_AIR, G), TotalInlet(p0, T0), 0.5 * p, U)
    rel = np.abs(R).max(axis=1) / np.abs(FA).max(axis=1)
    assert np.all(rel < 1e-13), rel


def _jacobian_and_differences(profile, size, inlet, p_out, perturb, settings):
    """The assembled Jacobian and central differences of the residual (both scaled, dense)."""
    from axibore.solvers.euler.driver import _positions
    from axibore.solvers.euler.jacobian import JacobianPattern, assemble

    m = quads(profile, size)
    gas = IdealGas(R_AIR, G)
    s = make_scheme(m, gas, inlet, p_out, settings)
    W = perturb(quasi_1d_state(m, gas, inlet, p_out))
    C, pos = m.n_cells, _positions(m)
    ev = s.evaluate(W)
    J, first_order = assemble(s, JacobianPattern(s, pos), ev, np.zeros(C))
    J1 = first_order()
    D = np.zeros((4 * C, 4 * C))
    rows = (4 * pos[:, None] + np.arange(4)[None, :]).ravel()
    dyn = [W[0].mean(), np.abs(W[1]).mean(), np.abs(W[1]).mean(), max(inlet.total_pressure - p_out, 1.0)]
    for j in range(C):
        for k in range(4):
            h = 1e-6 * dyn[k]  # steps on the scale each variable varies on
            Wp, Wm = W.copy(), W.copy()
            Wp[k, j] += h
            Wm[k, j] -= h
            col = (s.evaluate(Wp).R - s.evaluate(Wm).R) / (2 * h) * s.scale[k] / s.cons_scale[:, None]
            D[rows, 4 * pos[j] + k] = col.T.ravel()
    return J.toarray(), J1.toarray(), D, pos


def test_jacobian_is_the_derivative_of_the_limited_residual():
    # exact law (definition of the derivative): the assembled Jacobian of the second-order residual
    # (limiter, ghost states, gradients' boundary values) equals central differences of the
    # residual. The state: quasi-1D with 2 % noise, so that the limiter is active on many faces.
    # The first-order-chain matrix (the preconditioner) differs by 13 %: the test tells them apart.
    rng = np.random.default_rng(1)

    def noisy(W):
        W = W * (1 + 0.02 * rng.standard_normal(W.shape))
        W[2] += 5.0 * rng.standard_normal(W.shape[1])
        return W

    J, J1, D, _ = _jacobian_and_differences(cd_nozzle(), 0.4, TotalInlet(5e5, 300.0), 0.5e5, noisy,
                                            EulerSettings(shock_sensor=0.0))
    assert np.linalg.norm(J - D) / np.linalg.norm(D) < 1e-5
    assert np.linalg.norm(J1 - D) / np.linalg.norm(D) > 1e-2


def test_jacobian_pressure_columns_at_mach_0001():
    # as above at Mach 0.001: p0 - p is 7e-7 of p, and the inlet ghost's Mach number goes as
    # sqrt(p0 - p); difference steps of 1e-7 p made the pressure columns 60 % wrong (measured),
    # steps on the dynamic pressure 7e-4 (limited by the central differences of the check itself)
    p_out = 101325.0
    p0 = p_out / q1d.pressure_ratio(0.001)
    rng = np.random.default_rng(1)

    def noisy(W):
        W[1] *= 1 + 0.01 * rng.standard_normal(W.shape[1])
        W[3] += 0.1 * (p0 - p_out) * rng.standard_normal(W.shape[1])
        return W

    J, _, D, pos = _jacobian_and_differences(smooth_nozzle(tip=0.03), 0.4, TotalInlet(p0, 293.15), p_out, noisy,
                                             EulerSettings())
    cols = (4 * pos + 3)
    assert np.linalg.norm(J[:, cols] - D[:, cols]) / np.linalg.norm(D[:, cols]) < 1e-2


def test_outlet_ghost_characteristic_and_continuous_at_sonic():
    # exact laws of the characteristic outlet: entropy p/rho^g and the outgoing Riemann invariant
    # u_n + 2c/(g-1) carried from inside; the back pressure when subsonic, but not below the
    # sonic pressure p* of those invariants; at M_n = 1 that p* is the interior pressure, so the
    # ghost state equals the interior state (no jump at a sonic exit)
    m = quads(pipe(), 0.2)
    p0, T0, pb = 7e5, 293.15, 101325.0
    prob = make_scheme(m, IdealGas(R_AIR, G), TotalInlet(p0, T0), pb, EulerSettings())
    o = prob.bkind == 1
    k = int(o.sum())
    nx = prob.n[0, prob.fb[o]]
    assert np.allclose(nx, 1.0)
    rho = 4.0
    for M, expect_pb in ((0.3, True), (0.999999, False), (1.0, False), (1.3, False)):
        p = 3.5e5 if expect_pb is False else 1.5e5
        c = math.sqrt(G * p / rho)
        WL = np.zeros((4, prob.fb.size))
        WL[:] = np.array([rho, M * c, 0.1 * c, p])[:, None]
        WG = prob.ghost(WL)[:, o]
        pg, rg = WG[3], WG[0]
        cg = np.sqrt(G * pg / rg)
        np.testing.assert_allclose(pg / rg**G, p / rho**G, rtol=1e-12)  # entropy
        np.testing.assert_allclose(WG[1] + 2 * cg / (G - 1), M * c + 2 * c / (G - 1), rtol=1e-12)  # J+
        np.testing.assert_allclose(WG[2], 0.1 * c, rtol=1e-12)  # tangential velocity
        if expect_pb:
            np.testing.assert_allclose(pg, pb, rtol=1e-12)
        else:  # sonic (p* > p_back) or supersonic: the interior state, continuous through M_n = 1
            np.testing.assert_allclose(pg, p, rtol=2e-6 if M < 1 else 1e-12)
    assert k > 0


# ---- Euler solver: converging nozzles ---------------------------------------------------------
@pytest.mark.parametrize("pb_p0", [0.77, 0.3])
def test_converging_nozzle_mass_flow_isentropic(pb_p0):
    # quasi-1D isentropic flow (NACA Report 1135, 1953, eqs. 44-45, 80): the exit plane of the
    # straight 20 mm tip after a 200 mm cosine contraction (40 to 28 mm, zero slope at both ends)
    # is uniform, so the mass flow is rho_e u_e A_e at p_e = p_back (subsonic, 0.77 > 0.528), or
    # the choked value p0 A* sqrt(g/(R T0)) (2/(g+1))^((g+1)/(2(g-1))) (0.3). The choked flow of a
    # real throat is smaller by the throat's discharge coefficient: the cosine ends with a wall
    # radius of curvature 2 L^2 / (pi^2 (R1 - R2)) = 1.35 m = 96 r*, for which Kliegel & Levine's
    # series (1969) gives 1 - Cd = 2.6e-6 (derived), far below the 1e-4 tested (a 80 mm contraction,
    # 15 r*, gave 1 - Cd = 1.3e-4 under refinement: too close). Measured at level 0 (3.3k cells):
    # +2.1e-6 and -1.0e-5.
    p0, T0 = 1.3e5, 300.0
    m, res = solve_seq(smooth_nozzle(L=0.2, tip=0.02), 0.1, 0, pb_p0 * p0, TotalInlet(p0, T0))
    assert res.record.converged, res.record.reason
    ideal = q1d.ideal_mass_flow(math.pi * 0.014**2, p0, T0, pb_p0 * p0, R_AIR, G)
    assert res.mass_flow == pytest.approx(ideal, rel=1e-4)
    assert res.outlet_mass_flow == pytest.approx(res.mass_flow, rel=1e-8)  # conservation at the steady state


def kliegel_levine_last_term(rc_ratio: float, g: float) -> float:
    """The last term of Kliegel & Levine's series, (g+1)/L^2 (754 g^2 - 757 g + 3615)/(276480 L^2):
    the size of the series' own truncation error (derived from the formula in SOURCES.md)."""
    L = rc_ratio + 1.0
    return (g + 1) / L**2 * (754 * g**2 - 757 * g + 3615) / (276480 * L**2)


def _cd(rc_ratio, level, size=0.1):
    p0, T0, pb = 5e5, 300.0, 0.5e5  # supersonic exit: the outlet extrapolates
    m, res = solve_seq(cd_nozzle(rc_ratio=rc_ratio), size, level, pb, TotalInlet(p0, T0))
    assert res.record.converged, res.record.reason
    ideal = q1d.ideal_mass_flow(math.pi * 0.01**2, p0, T0, pb, R_AIR, G)  # the exact throat: r* = 10 mm
    return res.mass_flow / ideal


# Kliegel & Levine (1969), AIAA J. 7(7): the throat discharge coefficient of a circular-arc throat.
# The series' last term (the size of its own truncation error, kliegel_levine_last_term): 2.19e-3 at
# Rc/r* = 1, 4.32e-4 at 2, 5.6e-5 at 4. Our Cd under refinement (levels 0, 2, 4, measured;
# scripts/results/checks_euler.txt): Rc/r* = 1: +4.8e-4, +4.3e-4, +4.2e-4; 2: +1.3e-4, +8.0e-5,
# +6.8e-5; 4: +5.4e-5, +1.7e-5, +9.1e-6 from the series. At Rc/r* = 4 the 2e-4 tolerance is above
# the series' truncation and the check verifies the solver; at Rc/r* = 2 (2e-4) and 1 (5e-4) the
# tolerance is below it, and the check pins our converged value against the series rather than
# verifying it. The effect tested, 1 - Cd (1.0e-2, 3.8e-3, 1.2e-3), is larger than each tolerance.
@pytest.mark.parametrize("rc_ratio, tol", [(1.0, 5e-4), (2.0, 2e-4), (4.0, 2e-4)])
def test_cd_nozzle_discharge_coefficient_kliegel_levine(rc_ratio, tol):
    cd_ref = kliegel_levine_cd(rc_ratio, G)
    if rc_ratio == 2.0:
        assert cd_ref == pytest.approx(0.99618, abs=1e-5)  # the value SOURCES.md lists
    assert kliegel_levine_last_term(rc_ratio, G) == pytest.approx({1.0: 2.19e-3, 2.0: 4.32e-4, 4.0: 5.6e-5}[rc_ratio],
                                                                  rel=0.01)
    cd = _cd(rc_ratio, 2)
    assert abs(cd - cd_ref) < tol
    assert cd < 1.0


@pytest.mark.slow
def test_cd_nozzle_discharge_coefficient_fine():
    # Kliegel & Levine (1969), as above: refinement moves the answer towards the series (levels
    # 0, 2, 4; about 22k cells at level 4)
    cd_ref = kliegel_levine_cd(2.0, G)
    errs = np.abs(np.array([_cd(2.0, level) for level in (0, 2, 4)]) - cd_ref)
    assert errs[-1] < 1e-4
    assert errs[2] < errs[1] < errs[0]


def test_total_pressure_error_second_order():
    # exact law: smooth subsonic inviscid flow is isentropic (total pressure constant); the
    # numerical entropy error of a second-order scheme falls as h^2 (slope fit, common practice)
    prof = smooth_nozzle()
    p0 = 1.3e5
    errs, hs = [], []
    for level in (0, 2, 4):
        m = quads(prof, 0.2, level)
        res = solve_euler(m, IdealGas(R_AIR, G), TotalInlet(p0, 300.0), 1.0e5)
        assert res.record.converged, res.record.reason
        V = m.cell_volume
        errs.append(float(np.sum(np.abs(res.total_pressure / p0 - 1.0) * V) / V.sum()))
        hs.append(m.h)
    slope = np.polyfit(np.log(hs), np.log(errs), 1)[0]
    assert slope > 1.7, (slope, errs)
    assert errs[-1] < 5e-6


@pytest.mark.parametrize("M_out", [0.05, 0.01, 0.001])
def test_low_mach_wall_pressure_matches_potential_flow(M_out):
    # exact law: as M -> 0 the Euler solution tends to incompressible potential flow (same mesh,
    # same geometry); wall Cp_0 = (p0 - p_wall) / (rho V_out^2 / 2) within 1 % (the compressible
    # part of Cp is M^2/4: 6e-4 at Mach 0.05). Measured max deviations 0.81 %, 0.80 %, 0.79 %.
    from axibore.numerics.reconstruct import boundary_gradients
    from axibore.solvers.potential import BoundaryCondition, solve_potential

    m = quads(smooth_nozzle(tip=0.03), 0.1)
    bcs = {"inlet": BoundaryCondition("flux", -1.0), "outlet": BoundaryCondition("value", 0.0),
           "wall": BoundaryCondition("flux", 0.0), "axis": BoundaryCondition("flux", 0.0)}
    pot = solve_potential(m, bcs)
    wf, fo = m.boundary["wall"], m.boundary["outlet"]
    gw = boundary_gradients(m, pot.phi, wf, pot.is_value, pot.boundary_data)
    a = m.face_area[fo]
    cp_pot = (gw[0] ** 2 + gw[1] ** 2) / (-pot.face_flux[m.boundary["inlet"]].sum() / a.sum()) ** 2

    p_out = 101325.0
    p0 = p_out / q1d.pressure_ratio(M_out)
    res = solve_euler(m, IdealGas(R_AIR, G), TotalInlet(p0, 293.15), p_out)
    assert res.record.converged, res.record.reason
    rho = np.sum(res.boundary["outlet"].density * a) / a.sum()
    V = res.outlet_mass_flow / (2 * math.pi * rho * a.sum())
    cp_euler = (p0 - res.boundary["wall"].pressure) / (0.5 * rho * V * V)
    assert np.max(np.abs(cp_euler - cp_pot)) < 0.01


def test_blowoff_demo_converges_choked():
    # demo case cases/air_blowoff_nozzle.toml (20 mm bore, 20 deg cone, 4 mm lip radius to an
    # 8 mm straight tip, 6 bar gauge): choked, the exit supersonic behind the rounded throat.
    # Discharge coefficient against Kliegel & Levine (1969) for a circular-arc throat with
    # Rc/r* = 4 mm / 4 mm = 1 (their series is for a throat between two cones, not a straight
    # tip: 0.3 % tolerance); below the quasi-1D ideal; converged 8 orders within 30 steps
    from pathlib import Path

    from axibore.case import load_case

    case = load_case(Path(__file__).resolve().parents[1] / "cases" / "air_blowoff_nozzle.toml")
    prof = case.profile
    m = quads(prof, 0.1)
    gas = IdealGas.from_fluid(case.fluid)
    inlet = TotalInlet(case.inlet.total_pressure + case.ambient_pressure, case.inlet.total_temperature)
    res = solve_euler(m, gas, inlet, case.ambient_pressure)
    assert res.record.converged and res.record.orders >= 8, res.record.reason
    assert res.record.steps <= 30
    A_exit = float(prof.flow_area(np.array([prof.x_outlet]))[0])
    ideal = q1d.ideal_mass_flow(A_exit, inlet.total_pressure, inlet.total_temperature, case.ambient_pressure,
                                gas.gas_constant, gas.gamma)
    cd = res.mass_flow / ideal
    assert cd < 1.0
    assert cd == pytest.approx(kliegel_levine_cd(1.0, G), rel=3e-3)
    assert abs(res.record.mass_imbalance) < 1e-7
    exit_mach = res.boundary["outlet"].mach
    assert exit_mach.min() > 1.0  # supersonic over the whole exit plane


def test_non_convergence_is_reported():
    m = quads(smooth_nozzle(), 0.2)
    res = solve_euler(m, IdealGas(R_AIR, G), TotalInlet(1.3e5, 300.0), 1.0e5, EulerSettings(max_steps=3))
    rec = res.record
    assert not rec.converged
    assert rec.reason == "not converged in 3 steps"
    assert rec.steps == 3 and len(rec.residual_history) == 4  # before each step and after the last
    assert rec.orders < 8.0


# ---- Euler solver: a normal shock in a conical divergent ---------------------------------------
# Converging-diverging nozzle: 30 deg convergent, circular-arc throat Rc/r* = 2, r* = 10 mm, 6 deg
# conical divergent to r_e = 16 mm (exit area ratio 2.56). The back pressure is the one of the
# quasi-1D solution with the normal shock at area ratio A_s/A*: M1 from A_s/A* on the supersonic
# branch (NACA Report 1135, 1953, eq. 80), p02/p01 across the shock (eqs. 93-99), the subsonic exit
# Mach number from A_e/A*_2 with A*_2 = A* p01/p02, p_b = p02 (p/p0)(M_e) (Anderson, Modern
# Compressible Flow, ch. 5); onedim_gas.normal_shock_area inverts the same chain.
SHOCK_P0, SHOCK_T0 = 5e5, 300.0
RT, RE, DIV = 0.01, 0.016, math.radians(6.0)


def shock_case(area_ratio):
    """Back pressure [Pa] and quasi-1D shock position [m] for the shock at A_s/A* = area_ratio, and
    the length of the divergent (throat to exit) [m] (derived: the cd_nozzle geometry above)."""
    M1 = float(q1d.mach_from_area_ratio(area_ratio, G, supersonic=True))
    r0 = float(q1d.shock_total_pressure_ratio(M1, G))
    Me = float(q1d.mach_from_area_ratio((RE / RT) ** 2 * r0, G))
    pb = SHOCK_P0 * r0 * float(q1d.pressure_ratio(Me, G))
    Rc = 2.0 * RT
    x_throat = 0.5 * RT + (2.0 * RT - (RT + Rc * (1 - math.cos(math.radians(30))))) / math.tan(math.radians(30)) \
        + Rc * math.sin(math.radians(30))
    x2, r2 = x_throat + Rc * math.sin(DIV), RT + Rc * (1 - math.cos(DIV))  # arc meets the cone
    x_shock = x2 + (RT * math.sqrt(area_ratio) - r2) / math.tan(DIV)
    length = x2 + (RE - r2) / math.tan(DIV) - x_throat
    return pb, x_shock, length


def axis_shock(m, res):
    """Shock position on the axis, the Mach number in front of it and the total pressure behind it
    over the inlet total pressure. Along the axis cells: j the cell after the largest pressure
    rise; the two cells before it carry the captured shock's foot (their total pressure is off by
    up to 1 %), so the upstream Mach number is the straight line through cells j-7..j-3
    evaluated at the shock; the shock is where the integral of p over cells j-1..j+2 equals that
    of a step between quadratic fits of p upstream (j-7..j-3) and downstream (j+3..j+7)
    (conservation of the captured jump); the total pressure behind it, a line through j+3..j+7."""
    from scipy.optimize import brentq

    cells = m.owner[m.boundary["axis"]]
    o = cells[np.argsort(m.cell_centroid[cells, 0])]
    x, p, M, pt = m.cell_centroid[o, 0], res.pressure[o], res.mach[o], res.total_pressure[o]
    j = int(np.argmax(np.diff(p)))
    up, dn = slice(j - 7, j - 2), slice(j + 3, j + 8)
    Pu, Pd = np.polyint(np.polyfit(x[up], p[up], 2)), np.polyint(np.polyfit(x[dn], p[dn], 2))
    xa, xb = 0.5 * (x[j - 2] + x[j - 1]), 0.5 * (x[j + 2] + x[j + 3])
    edges = np.r_[xa, 0.5 * (x[j - 1 : j + 2] + x[j : j + 3]), xb]
    area = float(np.sum(p[j - 1 : j + 3] * np.diff(edges)))
    xs = brentq(lambda s: np.polyval(Pu, s) - np.polyval(Pu, xa) + np.polyval(Pd, xb) - np.polyval(Pd, s) - area,
                xa, xb)
    M1 = float(np.polyval(np.polyfit(x[up], M[up], 1), xs))
    p02 = float(np.polyval(np.polyfit(x[dn], pt[dn], 1), xs))
    return xs, M1, p02 / SHOCK_P0


def _shock(area_ratio, level, size=0.15):
    pb, x_q1d, length = shock_case(area_ratio)
    m, res = solve_seq(cd_nozzle(div=6.0, r_exit=RE / RT), size, level, pb, TotalInlet(SHOCK_P0, SHOCK_T0))
    rec = res.record
    assert rec.converged and rec.orders >= 6.0, rec.reason
    assert abs(rec.mass_imbalance) < 1e-8
    xs, M1, r0 = axis_shock(m, res)
    return (xs - x_q1d) / length, r0 / float(q1d.shock_total_pressure_ratio(M1, G)) - 1.0, m.h / length


def test_normal_shock_in_divergent_converges():
    # the quasi-1D solution and its shock at A_s/A* = 2.0 (sources above): on the coarsest mesh
    # the residual falls 6 orders (8 asked), mass balance to 1e-8, the shock on the axis within
    # 1 % of the divergent length of the quasi-1D position (measured +0.60 %)
    err, _, _ = _shock(2.0, 0)
    assert abs(err) < 0.01


@pytest.mark.slow
@pytest.mark.parametrize("area_ratio", [1.6, 2.0, 2.3])
def test_normal_shock_in_divergent_levels(area_ratio):
    # levels 0-2 (1.5k, 2.7k, 5.5k cells): converged (6 orders, mass balance 1e-8) at each; the
    # shock on the axis within 1 % of the divergent length of the quasi-1D position at levels 1
    # and 2, and the level-2 position within half a level-2 cell of the level-1 one (the captured
    # shock settles under refinement; its limit is the two-dimensional one, which differs from the
    # quasi-1D position by 0.1-0.6 % of the length: measured level 1 / 2 errors +0.30/+0.22,
    # +0.59/+0.53, -0.07/-0.12 %, so "closer at level 2" holds for two of the three and is not
    # asserted). The total pressure behind the shock at level 2 within 0.5 % of the normal-shock
    # relation at the Mach number in front of it (NACA 1135, eqs. 93-99): measured -0.15, +0.14,
    # +0.18 % (up to 0.64 % at levels 0-1, where the shock's foot spans a larger part of the fits)
    errs = [_shock(area_ratio, level) for level in (0, 1, 2)]
    (e1, _, _), (e2, r2, h2) = errs[1], errs[2]
    assert abs(e1) < 0.01 and abs(e2) < 0.01
    assert abs(e2 - e1) < 0.5 * h2
    assert abs(r2) < 0.005


# ---- the exact throat of a profile -----------------------------------------------------------
def test_min_flow_area_is_the_exact_throat():
    # derived: the throat arc of cd_nozzle is tangent to both cones with its lowest point at r*, so
    # the exact minimum flow area is pi r*^2 at the arc's centre x; the sampled wall (48 points
    # per arc) gives a larger minimum
    from axibore.geometry.profile import min_flow_area

    for rc in (1.0, 2.0, 4.0):
        prof = cd_nozzle(rc_ratio=rc)
        x, area = min_flow_area(prof)
        arc = prof.wall[2]
        assert area == pytest.approx(math.pi * 0.01**2, rel=1e-12)
        assert x == pytest.approx(arc.arc_center()[0], abs=1e-9)
        sampled = float(prof.flow_area(prof.wall_points[:, 0]).min())
        assert sampled > area * (1 + 1e-7)
