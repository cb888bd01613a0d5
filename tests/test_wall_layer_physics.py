"""The wall layer on the default path, on cases written as a user writes them: physical bounds,
the flow-measurement standard's Reynolds trend, gas layers and bad input.

Each check names its source beside it.
"""

import json
import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from axibore.case import CaseError, case_from_dict, load_case
from axibore.cli import main
from axibore.fluids import resolve_water
from axibore.fluids.viscosity import viscosity
from axibore.run import solve_case
from axibore.viscous import layer
from axibore.viscous import march as stage

CASES = Path(__file__).resolve().parents[1] / "cases"


# --- ISO 5167-3 long-radius nozzle, written as a user writes it --------------------------------------


def iso_nozzle_case(folder: Path, beta: float, re_D: float, D: float = 0.1, extra: str = "") -> Path:
    """A high-ratio long-radius nozzle (ISO 5167-3:2003 as SOURCES.md describes its text): a quarter
    ellipse from the pipe wall at the inlet face, semi-axes D/2 along the axis and (D - d)/2 across,
    then a cylindrical throat 0.6 d long; the pipe from the upstream tapping, D before the inlet face.
    The outline goes into a points file in mm, the flow rate for Re_D into the case file, all else
    default. The outlet is the throat's exit plane: the downstream tapping D/2 after the inlet face
    lies in the pipe wall, in the dead space around the nozzle, and reads the jet's pressure."""
    folder.mkdir(parents=True, exist_ok=True)
    d = beta * D
    a, b = D / 2, (D - d) / 2
    rows = [(-D, D / 2), (0.0, D / 2)]
    rows += [(D / 2 - a * math.cos(u), D / 2 - b * math.sin(u)) for u in np.linspace(0.0, math.pi / 2, 41)[1:]]
    rows.append((D / 2 + 0.6 * d, d / 2))
    (folder / "nozzle.csv").write_text("x,r\n" + "\n".join(f"{x * 1e3:.6f},{r * 1e3:.6f}" for x, r in rows) + "\n")
    water = resolve_water(293.15, 101325.0)
    V = re_D * viscosity(water, 293.15, 101325.0) / (water.density * D)
    (folder / "case.toml").write_text(
        f'title = "ISO 5167-3 long-radius nozzle, beta {beta}"\n'
        '[fluid]\nkind = "water"\ntemperature = "20 degC"\n'
        '[bore]\ntemplate = "points"\nfile = "nozzle.csv"\nunit = "mm"\n'
        f'[inlet]\nflow_rate = "{V * math.pi * D**2 / 4 * 1e3:.9g} l/s"\n'
        '[outlet]\nkind = "exit-plane"\n' + extra)
    return folder / "case.toml"


def iso_C(beta: float, re_D: float) -> float:
    # ISO 5167-3:2003, long-radius nozzles: C = 0.9965 - 0.00653 beta^0.5 (1e6/Re_D)^0.5
    return 0.9965 - 0.00653 * beta**0.5 * (1e6 / re_D) ** 0.5


def iso_run(tmp_path: Path, beta: float, re_D: float) -> dict:
    # a pipe large enough that the throat speed stays that of a water meter (the water properties end at
    # 100 MPa): D = 100 mm up to Re_D = 1e6, 500 mm above
    D = 0.1 if re_D <= 1e6 else 0.5
    v = solve_case(load_case(iso_nozzle_case(tmp_path / f"b{beta}_re{re_D:g}", beta, re_D, D))).summary()["viscous"]
    assert v["reynolds_number"] == pytest.approx(re_D, rel=1e-2)  # viscosity at the inlet pressure (up to 25 MPa)
    assert v["discharge_coefficient_inviscid"] == pytest.approx(1.0, abs=3e-4)  # the well-rounded nozzle's inviscid C
    return v


def _check_bounds(v: dict):
    assert v["discharge_coefficient"] is not None, v["discharge_coefficient_note"]
    assert v["discharge_coefficient"] < v["discharge_coefficient_inviscid"]
    assert v["loss_coefficient"] is not None and v["loss_coefficient"] > 0.0, v["loss_coefficient_note"]


def test_iso_nozzle_reynolds_trend_on_the_default_path(tmp_path):
    # beta 0.5, Re_D 1e4 and 1e6. The standard's C rises by 0.0413 between them; the viscous change
    # C_inviscid - C_viscous must follow it within 25 % (0.010, a quarter of the effect), and at each
    # Re_D lie within 20 % of the standard's 1 - C (which includes its constant 0.0035, the approach
    # layer's deficit carried through the nozzle in the model). Before this work, the default path gave
    # C = 1.0051 (above the inviscid 1.0000) and K = -0.016 at beta 0.6, Re_D 3e5.
    lo, hi = (iso_run(tmp_path, 0.5, re) for re in (1e4, 1e6))
    for v in (lo, hi):
        _check_bounds(v)
    d_lo = lo["discharge_coefficient_inviscid"] - lo["discharge_coefficient"]
    d_hi = hi["discharge_coefficient_inviscid"] - hi["discharge_coefficient"]
    std = iso_C(0.5, 1e6) - iso_C(0.5, 1e4)
    assert d_lo - d_hi == pytest.approx(std, rel=0.25)
    assert d_lo == pytest.approx(1.0 - iso_C(0.5, 1e4), rel=0.2)
    assert d_hi == pytest.approx(1.0 - iso_C(0.5, 1e6), rel=0.25)
    # where the layers start: the approach layer at the inlet plane, a new laminar one at the stagnation
    # point of the inlet face's concave corner
    runs = hi["layers"]["wall"]["runs"]
    assert runs[0]["start"] == "inlet plane" and runs[1]["start"] == "stagnation point in a concave corner"
    assert hi["settings"]["start"] == "turbulent" and hi["settings"]["upstream_length_m"] is None
    # the blockage coupling settles, and says so in numbers (before: not settled after 25 iterations, B still
    # changing by 0.061, at beta 0.6 Re_D 3e5; 4 and 3 marches here while whole marches were iterated, 3 and 2
    # with the interaction solved in the march)
    for v in (lo, hi):
        c = v["coupling_state"]
        assert c["mode"] == "blockage" and c["converged"] and c["iterations"] <= 3
        assert c["last_change"] < c["tolerance"] and 0.0 < c["largest_blockage"] < 0.1


@pytest.mark.slow
@pytest.mark.parametrize("beta", [0.3, 0.5, 0.6])
def test_iso_nozzle_over_the_standards_range(tmp_path, beta, capsys):
    # C_inviscid - C_viscous against the standard's 1 - C over Re_D 1e4 to 1e7: within 20 % or 0.0035
    # (the larger; 1 - C is 0.0046 to 0.054 here, so an inviscid C = 1 fails everywhere), and falling with
    # Re_D as the standard's does. 0.0035 is the standard's own constant (0.9965 rather than 1), which is
    # not a Reynolds-number effect: at beta 0.3 and Re_D 1e7 the model gives 0.0014 against 0.0046.
    res = [1e4, 1e5, 1e6, 1e7]
    dC = []
    for re in res:
        v = iso_run(tmp_path, beta, re)
        _check_bounds(v)
        d = v["discharge_coefficient_inviscid"] - v["discharge_coefficient"]
        dC.append(d)
        with capsys.disabled():
            print(f"\nISO 5167-3 beta {beta} Re_D {re:.0e}: C_inv - C_visc {d:.5f}, standard 1 - C {1 - iso_C(beta, re):.5f}, "
                  f"K {v['loss_coefficient']:.4g}")
        assert abs(d - (1.0 - iso_C(beta, re))) <= max(0.0035, 0.2 * (1.0 - iso_C(beta, re)))
    assert np.all(np.diff(dC) < 0.0)


@pytest.mark.slow
@pytest.mark.parametrize("re_D", [1e4, 1e6])
def test_iso_nozzle_high_ratio_keeps_the_bounds(tmp_path, re_D):
    # beta 0.75: the model's viscous change exceeds the standard's 1 - C by 40-50 %, while the throat blockage B
    # itself is within 7 % of it (issue 20: B = 0.0642 against 0.0600 at Re_D 1e4, 0.0087 against 0.0092 at 1e6).
    # The excess is the factor 1/(1 - beta^4) = 1.46: with a uniform approach, continuity and Bernoulli in the core
    # give C = (1 - B) sqrt(1 - beta^4)/sqrt(1 - beta^4 (1 - B)^2) = 1 - B/(1 - beta^4) + O(B^2) (derived: dp grows
    # with the throat's kinetic energy, 2B of it, but is only 1 - beta^4 of it). The factor is physical; it stays
    # with a developed approach profile (per-streamline Bernoulli through the contraction, 1/7 and 1/9 power laws:
    # B = 0.01 costs 0.0147-0.0149 at beta 0.75, as for a uniform one). What the standard's flow has and the
    # default (uniform approach, the layer from zero at the inlet plane) lacks is that profile's approach-velocity
    # effect, C higher by (alpha - 1) beta^4 / 2 (derived to first order; the same computation gives +0.0059 and
    # +0.0092 for alpha 1.037 and 1.058, the 1/9 and 1/7 laws): the same beta^4 growth as the excess (0.0035 at
    # Re_D 1e6, 0.028 at 1e4); the bounds hold
    v = iso_run(tmp_path, 0.75, re_D)
    _check_bounds(v)
    # the approach layer decelerating into the inlet face's corner blew up in the coupling before (momentum
    # thickness exploding, the carried deficit 5e4 times too large, 25 iterations without settling; then 5 and 3
    # marches, now 3 and 2)
    assert v["coupling_state"]["converged"] and v["coupling_state"]["iterations"] <= 3


# --- ISO 5167-4 classical Venturi tube, written as a user writes it ----------------------------------


def venturi_case(folder: Path, beta: float, re_D: float, D: float = 0.1, taps: bool = True) -> Path:
    """A classical Venturi tube with a machined convergent: an entrance cylinder of D before a conical convergent
    of 21 deg included angle (Reader-Harris et al. 2001, Flow Meas. Instrum. 12, "Discharge coefficients of Venturi
    tubes with standard and non-standard convergent angles": the standard angle is 21 deg), a cylindrical throat
    of length d, a divergent of 15 deg included angle (the largest the standard allows; the brief of issue 20
    gives 7-15 deg) back to D, and D of pipe. The corners are sharp (no junction radii). Taps (common practice, as
    issue 20 states the standard's positions): D/2 before the convergent, d/2 into the throat."""
    folder.mkdir(parents=True, exist_ok=True)
    d = beta * D
    x_c = (D - d) / 2 / math.tan(math.radians(10.5))
    x_t = x_c + d
    x_d = x_t + (D - d) / 2 / math.tan(math.radians(7.5))
    rows = [(-D, D / 2), (0.0, D / 2), (x_c, d / 2), (x_t, d / 2), (x_d, D / 2), (x_d + D, D / 2)]
    (folder / "venturi.csv").write_text("x,r\n" + "\n".join(f"{x * 1e3:.6f},{r * 1e3:.6f}" for x, r in rows) + "\n")
    water = resolve_water(293.15, 101325.0)
    V = re_D * viscosity(water, 293.15, 101325.0) / (water.density * D)
    tap = f'[viscous]\ntaps = ["{-D / 2 * 1e3:.6f} mm", "{(x_c + d / 2) * 1e3:.6f} mm"]\n' if taps else ""
    (folder / "case.toml").write_text(
        f'title = "ISO 5167-4 classical Venturi tube, beta {beta}"\n'
        '[fluid]\nkind = "water"\ntemperature = "20 degC"\n'
        '[bore]\ntemplate = "points"\nfile = "venturi.csv"\nunit = "mm"\n'
        f'[inlet]\nflow_rate = "{V * math.pi * D**2 / 4 * 1e3:.9g} l/s"\n'
        '[outlet]\nkind = "pipe"\n' + tap)
    return folder / "case.toml"


def test_venturi_discharge_coefficient_needs_its_throat_station(tmp_path):
    # A Venturi's default stations (the inlet and outlet planes, equal areas) span the throat and the divergent:
    # dp there is the recovered loss, not the meter's differential. Before issue 20 this printed an inviscid C
    # of 11835 (dp ~ 0); now no coefficient, with the reason and the key that sets the throat tap.
    v = solve_case(load_case(venturi_case(tmp_path / "plain", 0.5, 1e6, taps=False))).summary()["viscous"]
    assert v["discharge_coefficient"] is None and v["discharge_coefficient_inviscid"] is None
    assert "not at the narrowest section" in v["discharge_coefficient_note"] and "viscous.taps" in v["discharge_coefficient_note"]
    # with the standard's tappings: the inviscid C is 1 by continuity and Bernoulli (ISO 5167-1's C of a loss-free
    # flow with uniform sections); the wall taps sit a D/2 and a d/2 from sharp corners, where the wall pressure
    # differs from the section's by 0.2 % here (mesh-converged: levels 0-2 agree to 2e-5), inside the 0.5 %
    # allowed and far inside the 3 % of the approach factor E at beta 0.5 (1/sqrt(1 - beta^4) = 1.033)
    v = solve_case(load_case(venturi_case(tmp_path / "taps", 0.5, 1e6))).summary()["viscous"]
    assert v["discharge_coefficient_inviscid"] == pytest.approx(1.0, abs=5e-3)
    assert v["discharge_coefficient"] is not None and v["discharge_coefficient"] < v["discharge_coefficient_inviscid"]
    # the blockage coupling: 7 marches while whole marches were iterated (the divergent's layer near its
    # separation, B 0.13, changing most), 2 with the wall's own interaction solved in the march
    c = v["coupling_state"]
    assert c["converged"] and c["iterations"] <= 3


def test_a_downstream_tap_short_of_the_bores_narrowest_section_gives_no_c():
    # docs/case-file.md: the second tap must lie at the narrowest section. The demo reducer (600 to 400 mm) with the
    # second tap half-way down its cone gave C = 1.018 (inviscid 1.031: the wall there is not at the section's
    # pressure) where only the stretch between the taps was searched for the narrowest section (a helper's trial)
    import tomllib

    data = tomllib.loads((CASES / "water_main_reducer.toml").read_text())
    mid = solve_case(case_from_dict({**data, "viscous": {"taps": ["500 mm", "1280 mm"]}})).summary()["viscous"]
    assert mid["discharge_coefficient"] is None and mid["discharge_coefficient_inviscid"] is None
    assert "not at the narrowest section" in mid["discharge_coefficient_note"]
    pipe = solve_case(case_from_dict({**data, "viscous": {"taps": ["500 mm", "2000 mm"]}})).summary()["viscous"]
    assert pipe["discharge_coefficient"] is not None and pipe["discharge_coefficient"] < pipe["discharge_coefficient_inviscid"]
    # a free jet's C refers to the opening and the jet: taps on its wall are refused (a reviewing helper: a tap
    # half-way down a nozzle's cone gave C = 3.707, the narrowest-section check skipped for jets)
    tank = tomllib.loads((CASES / "tank_drain_orifice.toml").read_text())
    jet = solve_case(case_from_dict({**tank, "viscous": {"taps": ["-100 mm", "0 mm"]}})).summary()["viscous"]
    assert jet["discharge_coefficient"] is None and "leave taps out" in jet["discharge_coefficient_note"]


@pytest.mark.slow
@pytest.mark.parametrize("beta", [0.4, 0.5, 0.75])
def test_venturi_discharge_coefficient_against_iso_5167_4(tmp_path, beta):
    # ISO 5167-4:2003, classical Venturi tube with a machined convergent: C = 0.995 for Re_D 2e5 to 1e6
    # (SOURCES.md); issue 20 asks within 0.5 %. This test FAILS today, an open finding of issue 20. Measured
    # 2026-12-05 at level 0, C at Re_D 2e5 / 1e6: beta 0.4 0.9794 / 0.9852, beta 0.5 0.9780 / 0.9842, beta 0.75
    # 0.9708 / 0.9791 (inviscid 0.997-0.998 at the standard's tappings). Where the deficit comes from, beta 0.5
    # and Re_D 1e6: the convergent thins the approach layer from theta 294 to 58 um (H 1.19); over the throat's
    # first d/2 it grows to 135 um (delta* 170 um), friction giving 4/5 of that and the deceleration after the
    # convex junction's suction peak the rest; B = 4 delta*/d = 0.0136. Even a flat-plate turbulent layer from
    # the convergent's end (theta = 0.036 x Re_x^-0.2 with its virtual origin: 100 um, delta* 130 um at H 1.3)
    # gives C = 0.998 - 0.0104/(1 - beta^4) = 0.987 (derived). The standard's C is measured with tapping holes
    # of finite size, which read above the wall's static pressure by an amount that grows with the wall shear
    # and the hole's Reynolds number (Shaw 1960, J. Fluid Mech. 7; McKeon & Smits 2002, Meas. Sci. Technol. 13);
    # the model's taps are ideal. Not yet resolved which effect closes the rest. Since the edge speed is smoothed in
    # arc length (2026-12-05) the divergent's layer separates at all three ratios at Re_D 2e5, and at 0.4 and 0.5 at
    # 1e6 too (a third of the way along it; it was near separation before, B 0.13): no loss coefficient then; C is
    # unchanged to 1e-4 (0.97942, 0.98516; 0.97798, 0.98423; 0.97075, 0.97906)
    for re in (2e5, 1e6):
        v = solve_case(load_case(venturi_case(tmp_path / f"re{re:g}", beta, re))).summary()["viscous"]
        assert v["discharge_coefficient"] == pytest.approx(0.995, abs=0.005), (re, v["discharge_coefficient"])
        assert v["discharge_coefficient"] < v["discharge_coefficient_inviscid"]
        assert v["loss_coefficient"] is None or v["loss_coefficient"] > 0.0


def test_a_layer_never_thicker_than_a_quarter_of_the_channel():
    # a turbulent layer (theta0 = 1 mm) in a mild deceleration grows; in a channel of half-height 10 mm it is
    # ended where delta* reaches 2.5 mm (blockage 2 delta*/r = 0.5 of a round bore), marked separated
    from axibore.viscous.layer import SEPARATED, march

    s = np.linspace(0.0, 2.0, 201)
    w = march(s, None, 10.0 * (1.0 - 0.3 * s / 2.0), 1e-6, planar=True, start="turbulent", theta0=1e-3, rho=1000.0)
    assert w.separation_s is None and np.nanmax(w.delta_star) > 2.5e-3  # the unbounded march goes beyond
    b = stage._bounded_by_channel(w, np.full(s.size, 0.01), np.zeros(s.size))
    j = int(np.argmax(w.delta_star > 2.5e-3))
    assert b.separation_kind == "thick" and b.separation_s == s[j]
    assert np.all(b.state[j:] == SEPARATED) and np.all(np.isnan(b.delta_star[j:]))
    assert np.nanmax(b.delta_star) <= 2.5e-3
    np.testing.assert_array_equal(b.theta[:j], w.theta[:j])


# --- bounds on other shapes -----------------------------------------------------------------------


@pytest.mark.parametrize("name", ["deck_wash_nozzle", "water_main_reducer"])
def test_demo_cases_respect_the_bounds(name):
    v = solve_case(load_case(CASES / f"{name}.toml")).summary()["viscous"]
    if v["discharge_coefficient"] is not None:
        assert v["discharge_coefficient"] <= v["discharge_coefficient_inviscid"]
    assert v["loss_coefficient"] is None or v["loss_coefficient"] >= 0.0
    for c in v["layers"].values():
        assert c["friction_x_N"] != 0.0
    # the blockage coupling settles in a few marches (issue 20: at most 3 in the typical case; the deck-wash
    # nozzle took 9 before the smoothing window became continuous in its width and the first step undamped, 4
    # before the interaction was solved in the march: now 3, the reducer 2)
    c = v["coupling_state"]
    assert c["converged"] and c["iterations"] <= 3


def test_a_free_jets_wall_layer_lowers_its_discharge_coefficient():
    # The shipped tank orifice on its defaults: the plate's layer ends at the lip and its deficit passes into the
    # jet, where the downstream station lies. Before, that station saw no layer, and the inlet plane's saw the
    # turbulent march's virtual origin as an approach layer: C came out 1.0000001, above the inviscid 1, and was
    # withheld with a note blaming an approach layer the case does not have (the spear demo: 1.000002)
    res = solve_case(load_case(CASES / "tank_drain_orifice.toml"))
    v = res.summary()["viscous"]
    _check_bounds(v)
    assert "free jet" in v["discharge_coefficient_note"]
    # C refers to the opening at the lip plane, as the run's own discharge coefficient does (ISO 5167-1's C with the
    # approach factor): the inviscid C is the run's, contraction included. On the far jet's area (the narrowest) it was
    # a velocity coefficient, 0.998 beside the run's 0.592 (a helper's held-out trial)
    assert v["discharge_coefficient_inviscid"] == pytest.approx(res.summary()["flow"]["discharge_coefficient"], rel=1e-12)
    assert 0.58 < v["discharge_coefficient"] < v["discharge_coefficient_inviscid"] < 0.6
    wall = res.viscous.chains["wall"]
    assert wall.start_displacement_m2 == 0.0 and wall.start_deficit_W == 0.0  # no approach layer on the defaults
    # The jet's station is displaced by the layer's deficit passed into the jet; accelerating from the last face's
    # edge speed to the jet speed it only shrinks (layers.jet_displacement), so B lies between 0 and P delta* / A_jet,
    # and to first order C = C_inv (1 - B) (the tank's approach speed is 0.0026 V): the bounds below. Measured:
    # 1 - C/C_inv = 1.35e-3, P delta* / A_jet = 2.8e-3 (the layer's edge speed at its last face 0.92 V)
    B_full = 2 * math.pi * wall.r[-1] * wall.displacement[-1] / (res.jet.contraction_coefficient * math.pi * wall.r[-1] ** 2)
    assert 0.0 < 1.0 - v["discharge_coefficient"] / v["discharge_coefficient_inviscid"] < B_full


def test_jet_displacement_of_a_layer_passed_into_a_free_jet():
    # derived in layers.jet_displacement: at the jet speed (r = 1) the deficit passes unchanged; below it the
    # streamlines accelerate to ambient pressure and it shrinks. Checked against a quadrature written here apart
    # (Simpson in eta, u = eta^(1/N), the 1/7 law; a reviewing helper found 0.71 at r = 0.918 by its own sum)
    from axibore.viscous.layers import jet_displacement

    assert jet_displacement(1e-4, 9 / 7, 1.0) == pytest.approx(1e-4, rel=1e-9)
    assert jet_displacement(1e-4, 2.59, 1.0) == pytest.approx(1e-4, rel=1e-4)  # laminar (N = 1.26): t^(N-1) at 0

    def simpson(r, N, n=200001):
        eta = np.linspace(0.0, 1.0, n)
        u = eta ** (1.0 / N)
        f = r * u / np.sqrt(r * r * u * u + 1.0 - r * r) - r * u
        w = np.ones(n)
        w[1:-1:2], w[2:-1:2] = 4.0, 2.0
        return (N + 1.0) * float(w @ f) / (3.0 * (n - 1))

    for r in (0.5, 0.918, 0.99):
        assert jet_displacement(1.0, 9 / 7, r) == pytest.approx(simpson(r, 7.0), rel=1e-5)  # Simpson: eta^(1/7) at 0
    assert jet_displacement(1.0, 9 / 7, 0.918) == pytest.approx(0.71, abs=0.01)
    assert jet_displacement(1.0, 9 / 7, 1.2) == pytest.approx(1.0)  # a layer faster than the jet: held at r = 1


def test_a_layer_that_ends_separated_before_a_free_jets_station_withholds_c():
    # the spear demo: the needle's layer separates on the decelerating flow before its tip, in the jet; the deficit it
    # carries on is not known, and the note says where (before: "above the inviscid 1 ... an approach layer")
    v = solve_case(load_case(CASES / "spear_nozzle.toml")).summary()["viscous"]
    assert v["discharge_coefficient"] is None and v["discharge_coefficient_inviscid"] is not None
    note = v["discharge_coefficient_note"]
    assert "centre body is separated" in note and "free jet" in note and "approach" not in note


def test_edge_speed_smoothing_is_continuous_in_its_width():
    # The smoothing width follows the layer thickness of the previous march; a window that takes a whole
    # station in as the width crosses a step made the coupling cycle between two states (deck-wash nozzle,
    # B jumping by 1.1e-3 at one face for ever). Linear trends stay exact.
    rng = np.random.default_rng(0)
    t = np.arange(200.0)
    u = 3.0 + 0.01 * t + rng.normal(0.0, 1.0, t.size)
    widths = np.linspace(2.0, 4.0, 2001)  # steps of 1e-3 stations
    out = np.array([stage.smooth_speed(u, w) for w in widths])
    assert np.max(np.abs(np.diff(out, axis=0))) < 0.01  # a station entering whole moves the fit by ~0.1
    np.testing.assert_allclose(stage.smooth_speed(3.0 + 0.01 * t, 2.7), 3.0 + 0.01 * t, rtol=1e-10)  # round-off of the sums


def test_edge_speed_smoothing_on_graded_faces_is_in_arc_length():
    # faces graded 27 000 : 1 towards one end, as a free jet's lip grades them: the window is measured in arc length
    h = 1e-3 * 0.95 ** np.arange(200)
    e = np.r_[0.0, np.cumsum(h)]
    c = 0.5 * (e[1:] + e[:-1])
    np.testing.assert_allclose(stage.smooth_speed(5.0 + 100.0 * c, 10.0, h), 5.0 + 100.0 * c, rtol=1e-12)  # linear kept
    # a step 1 mm before the fine end: 2 faces' width there is 1.3e-7 m, so the last faces keep their value exactly;
    # a window counted in stations (4 or more past the step's faces here) drew the step into them
    u = np.where(c < c[-1] - 1e-3, 1.0, 2.0)
    out = stage.smooth_speed(u, 2.0, h)
    assert np.all(out[-30:] == 2.0)
    assert np.max(np.abs(stage.smooth_speed(u, 2.0 * 40)[-30:] - 2.0)) > 0.01  # counted in stations: 40 faces reach it
    # on uniform faces the fit does not depend on the unit of length (faces of 0.2 mm against unit stations)
    rng = np.random.default_rng(1)
    v = np.sin(np.arange(200) / 10.0) + 0.1 * rng.standard_normal(200)
    for w in (0.3, 1.0, 2.7, 10.0):
        np.testing.assert_allclose(stage.smooth_speed(v, w, np.full(200, 2e-4)), stage.smooth_speed(v, w), atol=1e-11)


def test_edge_speed_at_a_free_jets_lip_follows_the_wall_and_converges():
    # A conical nozzle, 50 to 20 mm at 20 deg half angle, with a straight tip 10 mm long ending at a sharp lip,
    # 3 bar to air (a helper's held-out nozzle). The wall's faces are graded towards the lip (1e-5 m there), and the
    # smoothing window of 10 momentum thicknesses was counted in faces: at the lip it reached back over the tip into
    # the cone, the edge speed on the tip came out 0.90 of its uniform wall speed, and C 0.9759 at level 0 and 0.9717
    # at level 1 (0.8280 and 0.8237 without the tip: 0.56 of the wall speed at the lip). Measured in arc length: the
    # edge speed on the tip is the wall speed over 1 - B, above it, and C 0.98211 and 0.98207 (0.84127, 0.84129)
    from axibore.names import Boundary

    case = case_from_dict({"fluid": {"kind": "water", "temperature": "15 degC"},
                           "bore": {"template": "conical", "inlet_diameter": "50 mm", "exit_diameter": "20 mm",
                                    "half_angle": "20 deg", "inlet_length": "60 mm", "tip_length": "10 mm"},
                           "inlet": {"pressure": "3 bar"}, "outlet": {"kind": "free-jet"}})
    C = []
    for level in (0, 1):
        res = solve_case(case.with_level(level))
        v = res.summary()["viscous"]
        _check_bounds(v)
        w, table = res.viscous.chains[Boundary.WALL], res.tables[Boundary.WALL]
        assert w.ue[-1] >= table.speed[-1]  # the tip's wall speed is uniform: the edge speed is it over 1 - B
        C.append(v["discharge_coefficient"])
    assert abs(C[0] - C[1]) < 5e-4, C  # 4.2e-3 apart before


def test_an_approach_layer_at_the_upstream_station_withholds_a_c_above_the_inviscid(tmp_path):
    # a thick approach layer given at the inlet plane (the upstream station) speeds up the core there;
    # the quasi-1D estimate would give C above the inviscid one (the approach-velocity-profile effect,
    # not a loss): the number is withheld with the reason, never printed. (This thick approach layer also keeps
    # the blockage coupling from settling, B changing by 0.06; that withholds C first, with its own reason.)
    case = iso_nozzle_case(tmp_path / "approach", 0.6, 3e5, extra='[viscous]\nupstream_length = "1 m"\n')
    v = solve_case(load_case(case)).summary()["viscous"]
    if v["discharge_coefficient"] is None:
        note = v["discharge_coefficient_note"]
        assert "above the inviscid" in note or "did not settle" in note, note
    else:
        assert v["discharge_coefficient"] <= v["discharge_coefficient_inviscid"]
    assert v["loss_coefficient"] is None or v["loss_coefficient"] >= 0.0


# --- gas layers -------------------------------------------------------------------------------------


def test_gas_nozzle_layer_is_thin_and_attached(tmp_path):
    # The shipped air test nozzle (40 mm bore, 20 mm throat, 6 bar): an accelerating nozzle keeps a thin,
    # attached layer. A turbulent layer grown over the 45 mm wall at Re_x up to about 2e6 has theta of
    # order 0.036 x Re_x^-0.2 (one-seventh law, Schlichting ch. XXI) = 0.09 mm at most; before this work the
    # wall table showed theta = 31 m at the second face and the layer separated from 6.5 mm on.
    # The 30 deg convergent cone starts at a concave corner (x = 10 mm): the inviscid flow stagnates there,
    # the approach layer ends in a corner vortex just upstream of it and a new laminar layer starts at the
    # corner (the corner, drawn by end points to 1 um, computes as 29.99999 deg: it still restarts).
    case = load_case(CASES / "air_test_nozzle_cd.toml")
    res = solve_case(case)
    v = res.summary()["viscous"]
    assert not v["separated"]
    assert [r["start"] for r in v["layers"]["wall"]["runs"]] == ["inlet plane", "stagnation point in a concave corner"]
    assert v["layers"]["wall"]["runs"][1]["x_m"] == pytest.approx(0.010, abs=1e-6)
    assert all(0.008 < a and b < 0.010 for a, b in v["corner_vortex_x_ranges_m"])
    assert v["separation_x_ranges_m"] == v["corner_vortex_x_ranges_m"]
    c = res.viscous.chains["wall"]
    after = c.x > 0.010
    assert np.all(np.isfinite(c.theta[after])) and np.nanmax(c.theta) < 2e-4
    assert np.all(c.state[after] != 2)
    assert np.nanmax(c.delta_star / c.r) < 0.02
    # the edge speed is the Euler wall speed (smoothed over a few faces), raised by the blockage only (B
    # below 2 %); before, it fell to 8e-7 m/s at the second face
    # (compared where the flow is fast: the concave corner at the cone's start, a local dip of the wall speed
    # at the scale of a few faces, is smoothed over the layer's thickness on purpose)
    speed = res.tables["wall"].speed
    fast = speed > 150.0
    assert fast.sum() > 20
    np.testing.assert_allclose(c.ue[fast][1:-1], speed[fast][1:-1], rtol=0.03)
    assert v["discharge_coefficient"] < v["discharge_coefficient_inviscid"]


@pytest.mark.parametrize("half_angle", [30.0, 45.0])
def test_conical_nozzle_restarts_at_its_cone_and_reattaches_past_the_tip_corner(half_angle):
    # A water nozzle as a user writes it: 80 mm bore, a cone of 30 or 45 deg half angle, 30 mm parallel tip,
    # 5 bar. The cone's start is a concave corner of 30 deg or more (inviscid stagnation): the approach layer
    # ends in a corner vortex and a new laminar layer starts there. Past the convex cone-to-tip corner the
    # laminar layer meets the adverse gradient of the corner's suction peak and separates at ue delta*/nu
    # well above 500: a short bubble (Owen & Klanfer 1953), reattaching turbulent. Before, the 30 deg corner
    # computed as 29.99999 deg did not restart, and a laminar separation was carried to the exit (no C).
    res = solve_case(case_from_dict({
        "fluid": {"kind": "water", "temperature": "15 degC"},
        "bore": {"template": "conical", "inlet_diameter": "80 mm", "exit_diameter": "30 mm",
                 "half_angle": f"{half_angle} deg", "inlet_length": "100 mm", "tip_length": "30 mm"},
        "inlet": {"pressure": "5 bar"}, "outlet": {"kind": "exit-plane"}}))
    v = res.summary()["viscous"]
    assert [r["start"] for r in v["layers"]["wall"]["runs"]] == ["inlet plane", "stagnation point in a concave corner"]
    assert v["layers"]["wall"]["runs"][1]["x_m"] == pytest.approx(0.100, abs=1e-6)
    assert not v["separated"] and v["separation_x_ranges_m"] == v["corner_vortex_x_ranges_m"]
    tip_start = 0.100 + 0.025 / math.tan(math.radians(half_angle))
    bubbles = [n for n in v["notes"] if "short bubble" in n]
    assert len(bubbles) == 1 and any(tip_start < x < tip_start + 0.005 for x in v["transition_x_m"])
    assert v["discharge_coefficient"] is not None
    assert 0.0 < v["discharge_coefficient_inviscid"] - v["discharge_coefficient"] < 0.05
    assert v["loss_coefficient"] > 0.0


# air as the stage's gas functions read it (case.fluid: gas constant, gamma, name for the Sutherland table)
AIR = SimpleNamespace(fluid=SimpleNamespace(gas_constant=287.05, gamma=1.4, name="air"))


def test_reference_temperature_of_an_adiabatic_wall():
    # Eckert (1955, J. Aeronaut. Sci. 22): T*/Te = 1 + 0.032 Me^2 + 0.58 (Tw/Te - 1), with the adiabatic
    # wall Tw/Te = 1 + r (gamma - 1)/2 Me^2, r = Pr^(1/3) = 0.71^(1/3) = 0.8921: at Me = 1,
    # Tw/Te = 1.17843 and T*/Te = 1.13549 (hand-evaluated here)
    Te = 250.0
    p = np.array([1e5, 1e5])
    rho = p / (287.05 * Te)
    ue = np.array([0.0, math.sqrt(1.4 * 287.05 * Te)])
    props = stage._reference_state(AIR, p, rho, ue)
    rho_ref, k = props.rho, props.k
    assert k[0] == 0.0 and rho_ref[0] == pytest.approx(rho[0], rel=1e-12)
    assert k[1] == pytest.approx(0.17843, abs=2e-5)
    assert rho[1] / rho_ref[1] == pytest.approx(1.13549, abs=2e-5)
    # the turbulent part's (van Driest II, see the flat-plate test): rho_e/rho_t = Fc = k/arcsin^2 A,
    # A^2 = k/(1 + k): at Me = 1, A = 0.38911, arcsin A = 0.39967, Fc = 1.11700 (hand-evaluated here);
    # the edge state itself at Me = 0
    rho_t, nu_t = props.turbulent
    assert rho[1] / rho_t[1] == pytest.approx(1.11700, abs=2e-5) and rho_t[0] == pytest.approx(rho[0], rel=1e-12)
    assert np.array_equal(props.rho_edge, rho)


@pytest.mark.parametrize("Me", [1.5, 2.0, 2.5, 3.0])
def test_supersonic_flat_plate_friction_against_van_driest_ii(Me):
    # Turbulent air on an adiabatic flat plate at edge Mach Me (Te = 220 K, 0.2 bar), through the stage's
    # reference states and the march, against van Driest II (van Driest 1956, Aeronaut. Eng. Rev. 15(10)) in
    # Spalding & Chi's form (1964, J. Fluid Mech. 18): cf Fc = cf_i(Re_x F_Rx), F_Rx = (mu_e/mu_w)/Fc,
    # Fc = k/arcsin^2 A, A^2 = k/(1 + k), Taw/Te = 1 + k (the derivation is in march._reference_state), with
    # Schlichting's incompressible cf_i = (2 log10 Re_x - 0.65)^-2.3 (7th ed. 1979, eq. 21.16), which the
    # incompressible march meets within 3 % (test_viscous.py). Within 4 % from Re_x 1e6 to 1e8. The effect
    # tested: the incompressible law is 15-18 % (Me 1.5) to 52-63 % (Me 3) above van Driest II, and Eckert's
    # reference temperature, used for the turbulent part before, was 5 % (Me 1.5) to 13 % (Me 3) below it.
    # The momentum thickness at the edge state obeys the plate's momentum balance d theta/dx = cf/2 (1 %).
    from scipy.integrate import cumulative_trapezoid

    Te, p = 220.0, 2e4
    rho_e = p / (AIR.fluid.gas_constant * Te)
    ue = Me * math.sqrt(AIR.fluid.gamma * AIR.fluid.gas_constant * Te)
    s = np.geomspace(1e-5, 5.0, 1500)
    one = np.ones(s.size)
    props = stage._reference_state(AIR, p * one, rho_e * one, ue * one)
    w = layer.march(s, None, ue, props.nu, planar=True, start="turbulent", theta0=1e-9, rho=props.rho,
                    edge_rho=props.rho_edge, turbulent_state=props.turbulent)
    assert np.all(w.state == layer.TURBULENT)
    mu_e, mu_w = stage._gas_mu(AIR, np.array([Te, Te * (1.0 + props.k[0])]))
    re_x = rho_e * ue * s / mu_e
    k = props.k[0]
    Fc = k / math.asin(math.sqrt(k / (1.0 + k))) ** 2
    cf_vd = (2.0 * np.log10(re_x * (mu_e / mu_w) / Fc) - 0.65) ** -2.3 / Fc
    sel = (re_x >= 1e6) & (re_x <= 1e8)
    assert sel.sum() > 300
    np.testing.assert_allclose(w.cf[sel], cf_vd[sel], rtol=0.04)
    np.testing.assert_allclose(w.tau_w[sel], 0.5 * rho_e * ue**2 * w.cf[sel], rtol=1e-12)
    theta_balance = 1e-9 + cumulative_trapezoid(w.cf, s, initial=0.0) / 2.0
    np.testing.assert_allclose(w.theta[sel], theta_balance[sel], rtol=0.01)


def test_gas_layer_blockage_interaction_counts_its_compressible_displacement():
    # A turbulent air layer at Me 2 in a planar channel of half-height 20 mm with the interaction solved in the
    # march: the edge speed is ue/(1 - B) with B = delta*/h and the gas layer's delta* = (H + k (H + 1)) theta
    # at the edge state (march._reference_state; H here the incompressible one the march returns), though the
    # march runs in the reference variables (theta_ref = theta rho_e/rho_ref). Marched again on its own edge
    # speed without the interaction, the layer is the same (from Re_x 1e6: 2e-6, the PCHIP of that speed). The
    # compressible part is most of the displacement here (k (H + 1)/H = 1.23; B = 0.087 at the end): leaving it
    # out (theta 6.5 % off) or taking theta in the reference variables breaks the fixed point.
    Te, p = 220.0, 2e4
    rho_e = p / (AIR.fluid.gas_constant * Te)
    ue = 2.0 * math.sqrt(AIR.fluid.gamma * AIR.fluid.gas_constant * Te)
    s = np.linspace(0.0, 0.5, 401)
    one = np.ones(s.size)
    props = stage._reference_state(AIR, p * one, rho_e * one, ue * one)
    kw = dict(planar=True, start="turbulent", theta0=1e-7, rho=props.rho, edge_rho=props.rho_edge,
              turbulent_state=props.turbulent)
    g = np.full(s.size, 1.0 / 0.02)
    w = layer.march(s, None, ue, props.nu, blockage=(g, np.zeros(s.size), props.k), **kw)
    B = g * (w.delta_star + props.k * (w.H + 1.0) * w.theta)
    np.testing.assert_allclose(w.ue, ue / (1.0 - B), rtol=1e-12)
    assert 0.01 < B[-1] < 0.1 and props.k[0] * (w.H[-1] + 1.0) / w.H[-1] > 1.0
    again = layer.march(s, None, w.ue, props.nu, **kw)
    sel = rho_e * ue * s / stage._gas_mu(AIR, np.array([Te]))[0] >= 1e6
    np.testing.assert_allclose(again.theta[sel], w.theta[sel], rtol=1e-5)


@pytest.mark.parametrize("start", ["laminar", "turbulent"])
def test_gas_approach_layer_is_the_plate_layer_grown_over_the_upstream_length(start):
    # viscous.upstream_length L: the layer at the inlet plane is the one grown on a plate of length L at the inlet's
    # edge state. A straight pipe at edge Mach 0.8 (T*/Te = 1.087, Fc = 1.075): the stage's first face carries the
    # theta that layer.march gives on such a plate (laminar: Blasius' flat plate is the estimate's own relation,
    # measured equal to 1e-15; turbulent: the one-seventh law (Schlichting ch. XXI) against the closure, measured
    # 0.6 % below, within 2 %). Before: the estimate was made in the reference variables and converted again,
    # 8.6 % (laminar) and 6.7 % (turbulent) too thick here (about T*/Te and Fc), more at higher Mach.
    from axibore.viscous.results import ViscousSettings

    Te, p, Me, L, r0 = 250.0, 2e5, 0.8, 0.05, 0.05
    rho_e = p / (AIR.fluid.gas_constant * Te)
    ue = Me * math.sqrt(AIR.fluid.gamma * AIR.fluid.gas_constant * Te)
    case = case_from_dict({"fluid": {"kind": "water", "temperature": "15 degC"},
                           "bore": {"template": "segments", "start": ["0 mm", f"{r0 * 1e3} mm"],
                                    "segment": [{"to": ["200 mm", f"{r0 * 1e3} mm"]}]},
                           "inlet": {"flow_rate": "1 l/s"}, "outlet": {"kind": "pipe"}})
    n = 200
    s = (np.arange(n) + 0.5) * 0.2 / n  # face centres along the wall
    one = np.ones(n)
    table = SimpleNamespace(s=s, x=s, r=r0 * one, speed=ue * one, length=0.2 / n * one, faces=np.arange(n),
                            nx=0 * one, nr=one)
    props = stage._reference_state(AIR, p * one, rho_e * one, ue * one)
    settings = ViscousSettings(start=start, upstream_length=L, transition="none")
    chain, _ = stage.march_chain("wall", table, props, settings, case.profile, planar=False)
    # the plate: from the leading edge (turbulent: its virtual origin at Re_theta 10) over L + the first face's s
    x = np.r_[0.0, np.geomspace(1e-6, L + s[0], 400)]
    theta0 = None if start == "laminar" else 10.0 * props.turbulent[1][0] / ue * props.turbulent[0][0] / rho_e
    w = layer.march(x[1:] if start == "turbulent" else x, None, ue, props.nu[0], planar=True, start=start, theta0=theta0,
                    transition="none", rho=props.rho[0], edge_rho=rho_e, turbulent_state=(props.turbulent[0][0], props.turbulent[1][0]))
    assert chain.theta[0] == pytest.approx(w.theta[-1], rel=1e-3 if start == "laminar" else 0.02)


SUPERSONIC = """title = "supersonic test-section nozzle (invented)"
[fluid]
kind = "ideal-gas"
gas = "air"
[bore]
template = "segments"
start = ["0 mm", "120 mm"]
[[bore.segment]]
to = ["100 mm", "120 mm"]
[[bore.segment]]
to = ["180 mm", "60 mm"]
radius = "-80 mm"
[[bore.segment]]
to = ["300 mm", "60 mm"]
radius = "-400 mm"
[[bore.segment]]
to = ["600 mm", "85 mm"]
[inlet]
total_pressure = "20 bar"
total_temperature = "20 degC"
[outlet]
kind = "exit-plane"
"""


def test_supersonic_nozzle_wall_layer_against_van_driest_ii(tmp_path):
    # A converging-diverging air nozzle written as a user writes it (default settings; 120 mm radius
    # inlet, about 56 mm throat, 85 mm exit, 20 bar: supersonic to the exit, Mach 2.4 there). Along the
    # divergent cone from 20 mm past its start (x = 320 mm; edge Mach 1.55 to 2.4; at the cone's start the
    # throat arc meets it at a 3.8 deg tangent break, with cf up to 1.21 times the relation's), the layer
    # is turbulent and attached and its local cf
    # (at the edge state) lies within 15 % of van Driest II in Spalding & Chi's local form, cf Fc =
    # cf_i(Re_theta mu_e/mu_w) (van Driest 1956; Spalding & Chi 1964, J. Fluid Mech. 18), with the
    # Coles-Fernholz relation cf_i = 2 [(1/0.41) ln Re_theta + 5.0]^-2 (Fernholz & Finley 1996) and the
    # adiabatic wall at r = Pr^(1/3) (common practice). Measured: 1.07-1.13 (the closure follows
    # Schlichting, 4-7 % above Coles-Fernholz at these Re_theta, and the expansion is a favourable
    # gradient). The effect tested: there the incompressible relation at the edge state is 1.22-1.47 times
    # van Driest II, so a layer without a compressibility treatment lies outside the band.
    path = tmp_path / "tunnel.toml"
    path.write_text(SUPERSONIC)
    case = load_case(path)
    res = solve_case(case)
    assert res.flow.record.converged
    v, table = res.viscous, res.tables["wall"]
    ch = v.chains["wall"]
    gas = case.fluid
    rho = res.flow.boundary["wall"].density
    Te = (table.pressure + case.ambient_pressure) / (rho * gas.gas_constant)
    M = table.speed / np.sqrt(gas.gamma * gas.gas_constant * Te)
    sup = (table.x >= 0.320) & (M >= 1.5)
    assert sup.sum() > 100 and M[sup].min() > 1.5 and M[-1] > 2.2
    assert np.all(ch.state[sup] == layer.TURBULENT)
    k = stage.AIR_PRANDTL**stage.RECOVERY_EXPONENT * 0.5 * (gas.gamma - 1.0) * M[sup] ** 2
    Fc = k / np.arcsin(np.sqrt(k / (1.0 + k))) ** 2
    mu_e, mu_w = stage._gas_mu(case, Te[sup]), stage._gas_mu(case, Te[sup] * (1.0 + k))
    re_theta = rho[sup] * table.speed[sup] * ch.theta[sup] / mu_e
    cf_vd = 2.0 / (np.log(re_theta * mu_e / mu_w) / 0.41 + 5.0) ** 2 / Fc
    np.testing.assert_allclose(ch.cf[sup], cf_vd, rtol=0.15)
    assert np.all(ch.delta_star[sup] < 0.05 * table.r[sup])  # thin


# --- bad input ------------------------------------------------------------------------------------------


OIL = """title = "oil nozzle"
[fluid]
kind = "liquid"
density = "870 kg/m^3"
vapour_pressure = "1 kPa"
viscosity = "{mu}"
[bore]
template = "conical"
inlet_diameter = "600 mm"
exit_diameter = "400 mm"
half_angle = "30 deg"
inlet_length = "600 mm"
tip_length = "100 mm"
[inlet]
flow_rate = "0.5 m3/s"
[outlet]
kind = "exit-plane"
"""


@pytest.mark.parametrize("extra, key, words", [
    ("", "fluid.viscosity", ["1e+30 Pa s", "1e-06 to 10000 Pa s"]),
    ("", "fluid.viscosity", ["1e-30 Pa s", "1e-06 to 10000 Pa s"]),
    ('[viscous]\nstart_momentum_thickness = "10 m"\n', "viscous.start_momentum_thickness", ["10000 mm", "at most 40 mm"]),
    ('[viscous]\nupstream_length = "10 km"\n', "viscous.upstream_length", ["10000 m", "at most 600 m"]),
    # a helper's held-out trial: "taps[2]: missing: this key is required", and the validation library's own words
    ('[viscous]\ntaps = ["-100 mm"]\n', "viscous.taps", ["item 2 is missing"]),
    ('[viscous]\ntaps = ["-100 mm", "0 mm", "5 mm"]\n', "viscous.taps", ["at most 2 items", "'5 mm'"]),
])
def test_bad_wall_layer_input_stops_before_any_work(tmp_path, capsys, extra, key, words):
    mu = "1e-30 Pa*s" if "1e-30" in words[0] else ("1e30 Pa*s" if "1e+30" in words[0] else "10 mPa*s")
    path = tmp_path / "oil.toml"
    path.write_text(OIL.format(mu=mu) + extra)
    with pytest.raises(CaseError) as exc:
        load_case(path)
    assert any(k == key for k, _ in exc.value.problems)
    rc = main(["run", str(path), "--out", str(tmp_path / "run")])
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err and key in err
    for w in words:
        assert w in err
    assert not (tmp_path / "run").exists()


def test_a_flow_without_thin_layers_gets_no_wall_layer(tmp_path, capsys):
    # 5000 Pa s: Re_D = 870 x 1.77 x 0.6 / 5000 = 0.18, far below 1000 (a laminar layer over one diameter would be 5/sqrt(Re_D) D thick):
    # no friction force of 1e15 kN added to the total, no number at all from the layer, and the reason told
    path = tmp_path / "tar.toml"
    path.write_text(OIL.format(mu="5000 Pa*s"))
    rc = main(["run", str(path), "--out", str(tmp_path / "run")])
    out = capsys.readouterr().out
    assert rc == 0 and "no wall layer: the Reynolds number of this flow is 0.18" in out and "below the 1000" in out
    s = json.loads((tmp_path / "run" / "summary.json").read_text())
    assert s["viscous"]["model"] == "none"
    assert s["viscous"]["note"].startswith("no wall layer: the Reynolds number")  # the reason, not "model = none"
    assert any("no wall layer" in w for w in s["warnings"])


def test_an_orifice_in_a_tank_has_its_wall_layer_where_the_hole_is_not_viscous():
    # The shipped tank's 20 mm hole in a tank 15 hole radii wide, with an oil of 30 cP at 1 bar: 349 on the inlet
    # plane, the tank's cross-section, but 4 rho Q / (mu P) = 9.5e3 in the hole. The gate on the inlet plane alone
    # gave no wall layer, saying "the inviscid answer itself is far from such a viscous flow" (a helper's held-out
    # trial: a 5 mm hole at 1 bar in water, refused in a tank drawn 50 hole radii wide, 835 on its inlet plane, and
    # given in one 15 radii wide). The plate's layer restarts in the tank's corner, where the flow all but stands:
    # the edge speed smoothed over a window cut off at that start went below zero at the first faces (a line fitted
    # to the faster rise beyond), the layer was thick from its first face and no C was given (the helper's oil of
    # 10 cP); the window is now kept centred there (smooth_along, from_rest)
    bore = {"template": "segments", "start": ["-300 mm", "150 mm"],
            "segment": [{"to": ["0 mm", "150 mm"]}, {"to": ["0 mm", "10 mm"]}]}
    fluid = {"kind": "liquid", "density": "880 kg/m^3", "vapour_pressure": "0.01 bar", "viscosity": "30 cP"}
    res = solve_case(case_from_dict({"fluid": fluid, "bore": bore, "inlet": {"pressure": "1 bar"},
                                     "outlet": {"kind": "free-jet"}}))
    v = res.summary()["viscous"]
    assert v["model"] == "integral" and v["reynolds_number"] < 1000.0 and v["friction_x_N"] != 0.0
    assert "no wall layer" not in " ".join(res.checks.warnings)
    _check_bounds(v)
    plate = [r for r in v["layers"]["wall"]["runs"] if r["start"] == "stagnation point in a concave corner"]
    assert len(plate) == 1 and not [s for s in v["layers"]["wall"]["separations"] if s["from_x_m"] >= plate[0]["x_m"]]
    # the gate's number for the hole, derived: Re = rho V d / mu with V = Q / (pi r^2), d = 2 r
    re_hole = 880.0 * res.flow.volume_flow / (math.pi * 0.01**2) * 0.02 / 0.03
    assert 5e3 < re_hole < 2e4
    assert v["reynolds_number_narrowest"] == pytest.approx(re_hole, rel=1e-9) and "opening at the lip" in v["reynolds_narrowest_at"]


def test_water_pressure_beyond_its_property_range_stops_before_any_work(tmp_path, capsys):
    # IAPWS-IF97 region 1 ends at 100 MPa (Wagner et al. 2000): a 2000 bar supply is refused by the case check
    path = tmp_path / "hp.toml"
    path.write_text('title = "hp"\n[fluid]\nkind = "water"\ntemperature = "20 degC"\n[bore]\ntemplate = "conical"\n'
                    'inlet_diameter = "100 mm"\nexit_diameter = "50 mm"\nhalf_angle = "30 deg"\ninlet_length = "100 mm"\n'
                    'tip_length = "30 mm"\n[inlet]\npressure = "2000 bar"\n[outlet]\nkind = "exit-plane"\n')
    rc = main(["run", str(path), "--out", str(tmp_path / "run")])
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err and "inlet.pressure" in err and "200 MPa" in err and "100 MPa" in err
    assert not (tmp_path / "run").exists()


def test_water_beyond_its_property_range_is_a_message(tmp_path, capsys):
    # beta 0.3 at Re_D 1e7 in a 100 mm pipe needs about 600 MPa: beyond IAPWS-IF97 region 1 (100 MPa,
    # Wagner et al. 2000), where the water viscosity is not defined
    path = iso_nozzle_case(tmp_path / "hp", 0.3, 1e7)
    rc = main(["run", str(path), "--out", str(tmp_path / "run")])
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err and "inlet.flow_rate" in err and "100 MPa" in err


def test_displacement_pass_that_cannot_displace_the_wall_is_a_message(tmp_path, capsys):
    # on the default path the approach layer is held across its separation into the inlet face's concave
    # corner; displacing the wall by it may fold a cell of the corner's fine mesh: never a traceback
    path = iso_nozzle_case(tmp_path / "disp", 0.5, 1e6, extra='[viscous]\ndisplacement = "one-pass"\n')
    rc = main(["run", str(path), "--out", str(tmp_path / "run")])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert rc == 0 or (rc == 2 and "viscous.displacement" in err)


def test_an_unsettled_coupling_gives_no_discharge_or_loss_coefficient(tmp_path, monkeypatch):
    # nothing is printed from an unconverged solution as if converged: with the blockage coupling stopped after
    # its first march (B still changes by its whole value, some 0.05, against the tolerance 1e-3), the viscous
    # C and K are withheld with the reason; a small laminar dosing nozzle written as a user writes it (Re_D 1650)
    # did this on the default path when its layer thickened before the cone
    import axibore.viscous.layers as layers

    monkeypatch.setattr(layers, "COUPLING_MAX_ITERATIONS", 1)
    v = iso_run(tmp_path, 0.5, 1e6)
    c = v["coupling_state"]
    assert not c["converged"] and c["last_change"] > 10 * c["tolerance"]
    assert v["discharge_coefficient"] is None and "did not settle" in v["discharge_coefficient_note"]
    assert v["loss_coefficient"] is None and "did not settle" in v["loss_coefficient_note"]
    assert v["discharge_coefficient_inviscid"] is not None  # the inviscid number stands


def test_a_withheld_discharge_coefficient_note_tells_the_two_values_apart():
    # the note of a C withheld as above the inviscid one read "gives 1, above the inviscid 1" (a Borda tube, 6
    # significant digits): the digits grow until the two differ
    from axibore.viscous.layers import _apart

    assert _apart(1.0000001234, 1.0000000018) == ("1.0000001", "1")
    assert _apart(0.98, 0.99) == ("0.98", "0.99")
