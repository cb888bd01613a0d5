"""Viscous wall layer stage against published values and exact laws of the methods."""

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from axibore import fluids
from axibore.viscous import layer
from axibore.viscous.layer import LAMINAR, SEPARATED, TURBULENT, march
from axibore.fluids.viscosity import SUTHERLAND, sutherland, viscosity

NU = 1.0e-6  # m^2/s
U = 10.0  # m/s


# --- laminar: Thwaites -------------------------------------------------------------------------


def test_flat_plate_laminar_against_blasius():
    # Blasius: theta sqrt(Re_x)/x = 0.664, cf = 0.664/sqrt(Re_x) (Schlichting, Boundary-Layer
    # Theory, ch. 7); Thwaites' method is within 1.2 % and 2 % of them.
    s = np.linspace(0.0, 0.2, 401)
    w = march(s, None, U, NU, planar=True, transition="none", rho=1000.0)
    x = s[1:]
    re_x = U * x / NU
    assert np.all(w.state == LAMINAR)
    np.testing.assert_allclose(w.theta[1:] * np.sqrt(re_x) / x, 0.664, rtol=0.012)
    np.testing.assert_allclose(w.cf[1:] * np.sqrt(re_x), 0.664, rtol=0.02)
    # Blasius H = 2.59 (Schlichting ch. 7); tau_w = cf rho U^2/2
    np.testing.assert_allclose(w.H[1:], 2.59, rtol=0.01)
    np.testing.assert_allclose(w.tau_w[1:], w.cf[1:] * 0.5 * 1000.0 * U**2, rtol=1e-12)
    # sharp leading edge: infinite shear, reported as NaN, not a division error
    assert w.theta[0] == 0.0 and np.isnan(w.cf[0])


def test_howarth_retarded_flow_separation():
    # Howarth (1938, Proc. R. Soc. A 164) ue = U0 (1 - x/L): exact separation x/L = 0.1199.
    # Thwaites' method, derived: theta^2 = 0.45 nu L/(6 U0) ((1 - xi)^-6 - 1) (see the next test), so
    # lambda = theta^2/nu due/dx = -0.075 ((1 - xi)^-6 - 1) reaches -0.09 at (1 - xi)^-6 = 2.2,
    # xi = 1 - 2.2^(-1/6) = 0.1231 (+2.7 % on Howarth's: the method's own error, issue 20's 2 % not met).
    L = 1.0
    s = np.linspace(0.0, 0.3, 601)
    w = march(s, None, U * (1.0 - s / L), NU, planar=True, transition="none")
    assert w.separation_kind == "laminar"
    assert w.separation_s / L == pytest.approx(1.0 - 2.2 ** (-1.0 / 6.0), abs=0.001)
    assert abs(w.separation_s / L - 0.1199) < 0.005
    assert np.all(w.state[s >= w.separation_s] == SEPARATED)
    assert np.all(np.isnan(w.theta[s >= w.separation_s]))
    assert np.all(w.state[s < w.separation_s] == LAMINAR)


@pytest.mark.parametrize("re_L, bubble", [(1e5, False), (1e6, True)])
def test_laminar_separation_short_bubble_by_its_reynolds_number(re_L, bubble):
    # Howarth's retarded flow ue = U0 (1 - xi), xi = x/L. Thwaites' integral gives, derived,
    #   theta^2 = 0.45 nu/ue^6 int_0^x ue^5 dx = 0.45 nu L / (6 U0) ((1 - xi)^-6 - 1),
    # and at the laminar separation (xi_s = 0.123, lambda = -0.09, H = 2.088 + 0.0731/0.05 = 3.55):
    #   Re_delta* = ue delta*/nu = (1 - xi_s) 3.55 sqrt(0.45 (0.877^-6 - 1)/6) Re_L^1/2 = 0.93 Re_L^1/2,
    # 295 at Re_L = 1e5 and 932 at Re_L = 1e6: below and above the short-bubble bound 500 (Owen & Klanfer
    # 1953). Michel's transition (Re_theta 2.9 Re_x^0.4 = 297 at Re_x 1.05e5 against Re_theta 263 at the
    # separation) does not come first at Re_L = 1e6.
    L, U0 = 1.0, 1.0
    nu = U0 * L / re_L
    s = np.linspace(0.0, 0.3, 601)
    w = march(s, None, U0 * (1.0 - s / L), nu, planar=True, bubble_re_delta_star=layer.SHORT_BUBBLE_RE_DELTA_STAR)
    re_ds = (1 - 0.123) * 3.55 * np.sqrt(0.45 * (0.877**-6 - 1) / 6) * np.sqrt(re_L)
    assert bool(re_ds > 500) is bubble
    if bubble:
        assert w.separation_kind is None or w.separation_kind == "turbulent"
        assert w.bubble_s / L == pytest.approx(0.123, abs=0.002) and w.transition_s == w.bubble_s
        after = s > w.bubble_s
        assert np.all(w.state[after & np.isfinite(w.theta)] == TURBULENT)
        assert np.isfinite(w.theta[np.searchsorted(s, w.bubble_s)])  # theta continuous into the turbulent layer
    else:
        assert w.bubble_s is None and w.separation_kind == "laminar"
    # without the rule the laminar layer separates at the same place either way
    w0 = march(s, None, U0 * (1.0 - s / L), nu, planar=True)
    assert w0.separation_kind == "laminar" and w0.bubble_s is None


def test_planar_stagnation_point_start():
    # ue = a s (Hiemenz): Thwaites' integral gives theta^2 = 0.45 nu/(6 a), lambda = 0.075
    # exactly (Thwaites 1949); the ue = 0 first station must take the limit, not divide by zero.
    a = 50.0
    s = np.linspace(0.0, 0.01, 201)
    w = march(s, None, a * s, NU, planar=True, transition="none", rho=1000.0)
    np.testing.assert_allclose(w.theta, np.sqrt(0.075 * NU / a), rtol=1e-3)
    np.testing.assert_allclose(w.lam, 0.075, rtol=2e-3)
    assert np.all(np.isfinite(w.theta)) and w.tau_w[0] == 0.0


# --- axisymmetric forms ------------------------------------------------------------------------


def test_cylinder_wall_gives_the_planar_answer():
    # Rott & Crabtree (1952): with r constant the r^2 weights cancel (and so do Head's r-terms):
    # a pipe wall with ue constant is a flat plate, laminar, transition and turbulent alike.
    s = np.linspace(0.0, 2.0, 801)
    planar = march(s, None, U, NU, planar=True)
    pipe = march(s, np.full_like(s, 0.05), U, NU)
    assert planar.transition_s is not None
    assert pipe.transition_s == pytest.approx(planar.transition_s, rel=1e-12)
    np.testing.assert_array_equal(pipe.state, planar.state)
    np.testing.assert_allclose(pipe.theta[1:], planar.theta[1:], rtol=1e-9)
    np.testing.assert_allclose(pipe.cf[1:], planar.cf[1:], rtol=1e-8)


@pytest.mark.parametrize("direction", [-1.0, 1.0])
def test_cone_sink_and_source_flow_thwaites_integral(direction):
    # Axisymmetric Thwaites (Rott & Crabtree 1952): theta^2 = 0.45 nu/(r^2 ue^6) int r^2 ue^5 ds.
    # A cone wall of half angle alpha in sink (converging) or source (diverging) flow:
    # rho = rho0 + direction s from the apex, r = rho sin(alpha), ue = m/rho^2. The integral is
    # computed here independently by adaptive quadrature, and against its closed form for the sink.
    alpha, rho0, m = np.radians(15.0), 1.0, 5.0
    s = np.linspace(0.0, 0.5 if direction < 0 else 0.1, 1501)
    rho = rho0 + direction * s
    r, ue = rho * np.sin(alpha), m / rho**2
    w = march(s, r, ue, NU, transition="none")
    attached = w.state == LAMINAR
    idx = np.flatnonzero(attached)[1::50]
    expected = []
    for i in idx:
        integral = quad(lambda x: ((rho0 + direction * x) * np.sin(alpha)) ** 2 * (m / (rho0 + direction * x) ** 2) ** 5, 0.0, s[i])[0]
        expected.append(np.sqrt(0.45 * NU * integral / (r[i] ** 2 * ue[i] ** 6)))
    np.testing.assert_allclose(w.theta[idx], expected, rtol=1e-4)
    if direction < 0:
        closed = np.sqrt(0.45 * NU * rho**3 / (7.0 * m) * (1.0 - (rho / rho0) ** 7))
        np.testing.assert_allclose(w.theta[1:], closed[1:], rtol=1e-4)
        # the planar form (r = 1) differs: the r^2 weighting matters here
        assert not np.allclose(march(s, r, ue, NU, planar=True, transition="none").theta[idx], expected, rtol=1e-2)
    else:
        # adverse gradient: laminar separation where lambda = -0.09 (Thwaites; White sec. 4-6).
        # Here lambda = -(0.9/7) ((rho/rho0)^7 - 1), so separation is at (rho/rho0)^7 = 1.7.
        assert w.separation_kind == "laminar"
        assert (rho0 + w.separation_s) / rho0 == pytest.approx(1.7 ** (1.0 / 7.0), rel=1e-4)
        i = np.flatnonzero(attached)[-1]
        assert w.lam[i] > -0.09 and w.lam[i] == pytest.approx(-0.09, abs=0.005)


# --- transition --------------------------------------------------------------------------------


def test_flat_plate_transition_where_michel_says():
    # Michel (1951, from memory): Re_theta,tr = 2.9 Re_x^0.4. On a flat plate Thwaites' method
    # gives Re_theta = sqrt(0.45 Re_x) exactly, so transition is at Re_x = (2.9/sqrt(0.45))^10.
    re_x_tr = (2.9 / np.sqrt(0.45)) ** 10
    s = np.linspace(0.0, 1.0, 2001)
    w = march(s, None, U, NU, planar=True)
    assert U * w.transition_s / NU == pytest.approx(re_x_tr, rel=1e-3)
    assert np.all(w.state[s < w.transition_s] == LAMINAR)
    assert np.all(w.state[s >= w.transition_s] == TURBULENT)
    # the momentum thickness is continuous through transition (Head's start)
    i = np.searchsorted(s, w.transition_s)
    assert w.theta[i] == pytest.approx(np.sqrt(0.45 * NU * s[i] / U), rel=0.01)
    # no transition when it is switched off
    assert march(s, None, U, NU, planar=True, transition="none").transition_s is None


# --- turbulent: Head -------------------------------------------------------------------------


def _turbulent_flat_plate():
    # turbulent from (nearly) x = 0, as Schlichting's formula assumes: started at Re_x = 1e4 with a tiny
    # theta0 (Re_theta = 10); marched to Re_x = 1e9
    s = np.geomspace(1e-3, 100.0, 600)
    w = march(s, None, U, NU, planar=True, start="turbulent", theta0=1e-6)
    assert np.all(w.state == TURBULENT) and w.separation_s is None
    return U * s / NU, w


def test_turbulent_flat_plate_skin_friction_against_schlichting():
    # Schlichting (Boundary-Layer Theory, 7th ed. 1979, ch. XXI, eq. 21.16 footnote):
    # cf = (2 log10 Re_x - 0.65)^-2.3, valid to Re_x = 1e9; within 3 % from Re_x = 1e5 to 1e9.
    # (Head with the Ludwieg-Tillmann law was 7 %, 9 % and 18 % low at 1e6, 1e7 and 1e8.)
    re_x, w = _turbulent_flat_plate()
    sel = (re_x >= 1e5) & (re_x <= 1e9)
    assert sel.sum() > 200 and re_x[sel].max() > 0.95e9
    np.testing.assert_allclose(w.cf[sel], (2.0 * np.log10(re_x[sel]) - 0.65) ** -2.3, rtol=0.03)


def test_turbulent_flat_plate_skin_friction_against_coles_fernholz():
    # Coles-Fernholz relation cf = 2 [(1/0.41) ln Re_theta + 5.0]^-2 (Fernholz & Finley 1996, Prog.
    # Aerosp. Sci. 32), local cf against local Re_theta, 2e3 <= Re_theta <= 5e5, within 5 %. (The
    # power law of Ludwieg-Tillmann is 6 % and 12 % below it at Re_theta 3.5e4 and 9e4.) Schlichting's
    # formula, carried to Re_theta by the momentum integral Re_theta = int cf/2 dRe_x, is itself 7.2 %,
    # 4.9 % and 3.6 % above this relation at Re_theta 2.3e3, 1.5e4 and 1.1e5 (derived by quadrature), so
    # the two references cannot both be met within 2 %; the closure follows Schlichting.
    re_x, w = _turbulent_flat_plate()
    sel = (w.Re_theta >= 2e3) & (w.Re_theta <= 5e5)
    assert sel.sum() > 150
    cf_cf = 2.0 / (np.log(w.Re_theta[sel]) / 0.41 + 5.0) ** 2
    np.testing.assert_allclose(w.cf[sel], cf_cf, rtol=0.05)


def test_turbulent_closure_reduces_to_ludwieg_tillmann_shape_dependence():
    # the H dependence of the closure is Ludwieg & Tillmann's 10^(-0.678 H) (Ludwieg & Tillmann 1949):
    # at fixed Re_theta the ratio of cf at two shape factors is theirs, exactly
    for re_th in (5e2, 5e3, 5e4):
        ratio = layer.turbulent_cf(1.8, re_th) / layer.turbulent_cf(1.4, re_th)
        assert ratio == pytest.approx(10.0 ** (-0.678 * 0.4), rel=1e-12)
        lt = layer.ludwieg_tillmann_cf(1.8, re_th) / layer.ludwieg_tillmann_cf(1.4, re_th)
        assert ratio == pytest.approx(lt, rel=1e-12)


def test_turbulent_start_needs_theta0():
    with pytest.raises(ValueError, match="theta0"):
        march(np.linspace(0, 1, 5), None, U, NU, planar=True, start="turbulent")


@pytest.mark.parametrize("m", [-0.15, -0.255])
def test_mild_adverse_gradient_turbulent_layer_stays_attached(m):
    # Equilibrium layers in ue ~ x^m with m = -0.15 and -0.255 were measured attached over the
    # working section (Bradshaw 1967, J. Fluid Mech. 29; Clauser 1954, J. Aeronaut. Sci. 21;
    # from memory). Started at Re_theta = 1e4, marched over three times the start distance.
    x0 = 1.0
    s = np.linspace(0.0, 3.0, 301)
    w = march(s, None, U * (1.0 + s / x0) ** m, NU, planar=True, start="turbulent", theta0=1e-3)
    assert w.separation_s is None
    assert np.all(w.state == TURBULENT) and np.all(w.H < 2.4)


def test_strong_deceleration_turbulent_layer_separates():
    # ue falling linearly to 20 % of its start (Cp = 0.96): no attached turbulent layer recovers
    # that much pressure; Stratford's (1959, J. Fluid Mech. 5) limiting flows, on the verge of
    # separation all along, reach Cp of about 0.9 at most (from memory). Head's separation
    # (H = 2.4, a setting) must come before Cp = 0.9.
    s = np.linspace(0.0, 1.0, 401)
    ue = U * (1.0 - 0.8 * s)
    w = march(s, None, ue, NU, planar=True, start="turbulent", theta0=1e-3, rho=1000.0)
    assert w.separation_kind == "turbulent"
    ue_sep = np.interp(w.separation_s, s, ue)
    assert 1.0 - (ue_sep / U) ** 2 < 0.9
    before = s < w.separation_s
    assert np.all(w.state[before] == TURBULENT) and np.all(w.state[~before] == SEPARATED)
    assert np.all(np.isnan(w.cf[~before])) and np.nanmax(w.H) <= 2.4 + 1e-6
    # the separation setting is honoured: a lower limit separates earlier
    w2 = march(s, None, ue, NU, planar=True, start="turbulent", theta0=1e-3, turbulent_separation_H=2.0)
    assert w2.separation_s < w.separation_s


def test_head_correlation_branches_invert():
    # Head (1958) H1(H), both branches, and its inverse used by the march
    H = np.array([1.2, 1.4, 1.59, 1.7, 2.0, 2.4])
    np.testing.assert_allclose(layer.head_H(layer.head_H1(H)), H, rtol=1e-10)


# --- viscosity ---------------------------------------------------------------------------------


def test_water_viscosity_iapws_2008():
    # IAPWS 2008 viscosity (Huber et al., J. Phys. Chem. Ref. Data 38, 2009): 20 degC, 0.1 MPa,
    # mu = 1.0016 mPa s (from memory)
    water = fluids.resolve_water(293.15, 1e5)
    assert viscosity(water, 293.15, 1e5) == pytest.approx(1.0016e-3, rel=1e-3)
    # the formulation's check table (Table 4, as documented by the iapws package):
    # mu(298.15 K, 998 kg/m^3) = 889.735100 uPa s; the pressure giving 998 kg/m^3 found here
    p = brentq(lambda p: fluids.water_density(298.15, p) - 998.0, 1e5, 1e8)
    assert viscosity(water, 298.15, p) == pytest.approx(889.735100e-6, rel=2e-5)


def test_seawater_viscosity():
    # ITTC 7.5-02-01-03 (2011), seawater 15 degC, 35 g/kg: nu = 1.1892e-6 m^2/s,
    # rho = 1025.9 kg/m^3 (from memory) -> mu = 1.2200e-3 Pa s
    sea = fluids.resolve_seawater(288.15, None)
    assert viscosity(sea, 288.15, 1e5) == pytest.approx(1.1892e-6 * 1025.9, rel=0.01)


def test_given_liquid_viscosity_is_passed_through():
    oil = fluids.Fluid(kind="liquid", name="oil", density=870.0, vapour_pressure=100.0)
    assert viscosity(oil, 300.0, 1e5, given=0.03) == 0.03
    with pytest.raises(ValueError, match="no viscosity"):
        viscosity(oil, 300.0, 1e5)


def test_air_sutherland():
    # Sutherland's law, mu0 = 1.716e-5 Pa s at T0 = 273.15 K by definition; 300 K about
    # 1.846e-5 Pa s (White, Viscous Fluid Flow, table 1-2, from memory)
    air = fluids.Fluid(kind="ideal-gas", name="air", gas_constant=287.05, gamma=1.4, temperature=300.0)
    assert viscosity(air, 273.15, 1e5) == pytest.approx(1.716e-5, rel=1e-12)
    assert viscosity(air, None, 1e5) == pytest.approx(1.846e-5, rel=5e-3)
    assert sutherland(300.0, *SUTHERLAND["air"]) == viscosity(air, 300.0, 2e6)


def test_forced_transition_and_no_density():
    # a transition forced at a given arc length starts Head's method there with the laminar
    # momentum thickness (Thwaites flat plate: theta = sqrt(0.45 nu s/U), exact for the method)
    s = np.linspace(0.0, 0.5, 501)
    w = march(s, None, U, NU, planar=True, transition=0.1)
    assert w.transition_s == 0.1 and w.tau_w is None
    assert np.all(w.state[s < 0.1] == LAMINAR) and np.all(w.state[s >= 0.1] == TURBULENT)
    assert w.theta[100] == pytest.approx(np.sqrt(0.45 * NU * 0.1 / U), rel=1e-9)
    assert w.H[100] == 1.4  # the turbulent start shape factor (common practice)


@pytest.mark.parametrize("m", [0.0, -0.2])
def test_turbulent_march_step_is_converged(monkeypatch, m):
    # The RK4 substep of the turbulent march (at most TURBULENT_STEP_THETAS momentum thicknesses) is
    # small enough that a step four times smaller changes theta and H by less than 1e-5 (relative): the
    # march's own discretisation error is far below the closure's (a few per cent), on a flat plate and
    # in an adverse gradient, starting from a thin layer where the substep limit binds.
    s = np.linspace(0.0, 2.0, 5)  # stations far apart: the substep limit, not the stations, sets the step
    ue = U * (1.0 + s) ** m
    runs = []
    for k in (layer.TURBULENT_STEP_THETAS, layer.TURBULENT_STEP_THETAS / 4):
        monkeypatch.setattr(layer, "TURBULENT_STEP_THETAS", k)
        runs.append(march(s, None, ue, NU, planar=True, start="turbulent", theta0=1e-5))
    a, b = runs
    assert a.separation_s is None and b.separation_s is None
    np.testing.assert_allclose(a.theta[1:], b.theta[1:], rtol=1e-5)
    np.testing.assert_allclose(a.H[1:], b.H[1:], rtol=1e-5)
