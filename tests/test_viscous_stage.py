"""The viscous stage in runs: published values, exact laws of the method, and the wiring.

Each check names its source beside it. Geometries built here (the ISO nozzle, the diffusers) are
test fixtures, not demos.
"""

import dataclasses
import json
import math

import numpy as np
import pytest

from axibore.case import CaseError, case_from_dict, load_case
from axibore.geometry import Profile, Segment
from axibore.run import run_case, solve_case
from axibore.fluids.viscosity import viscosity

# --- fixtures ------------------------------------------------------------------------------------

D_ISO, BETA = 0.1, 0.5


def iso_long_radius_profile(D=D_ISO, beta=BETA) -> Profile:
    """ISO 5167-3 long-radius nozzle, high-ratio form (0.25 <= beta <= 0.8), as SOURCES.md describes
    the standard's text (from memory): a quarter ellipse centred D/2 from the axis and D/2 downstream
    of the inlet face, semi-axes D/2 along the axis and (D - d)/2 across, then a cylindrical throat
    0.6 d long. The inlet plane is at the upstream tapping, D upstream of the inlet face; the outlet
    is the throat's exit plane (the downstream tapping at D/2 reads the jet's pressure)."""
    d = beta * D
    a, b = D / 2, (D - d) / 2
    t = np.linspace(0.0, np.pi / 2, 41)[1:-1]
    via = tuple((float(D / 2 - a * np.cos(u)), float(D / 2 - b * np.sin(u))) for u in t)
    wall = (Segment((-D, D / 2), (0.0, D / 2), key="pipe"),
            Segment((0.0, D / 2), (D / 2, d / 2), "spline", via=via, key="ellipse"),
            Segment((D / 2, d / 2), (D / 2 + 0.6 * d, d / 2), key="throat"))
    return Profile(wall, name="iso-5167-3")


def _water_case(data_extra: dict, profile: Profile | None = None):
    data = {"title": "viscous test", "fluid": {"kind": "water", "temperature": "20 degC"},
            "bore": {"template": "conical", "inlet_diameter": "100 mm", "exit_diameter": "50 mm", "half_angle": "30 deg",
                     "inlet_length": "100 mm", "tip_length": "30 mm"},
            "inlet": {"flow_rate": "0.01 m3/s"}, "outlet": {"kind": "exit-plane"}}
    data.update(data_extra)
    case = case_from_dict(data)
    return dataclasses.replace(case, profile=profile) if profile is not None else case


def iso_run(re_D: float, viscous: dict):
    case = _water_case({"viscous": viscous})
    mu = viscosity(case.fluid, None, 101325.0)
    V = re_D * mu / (case.fluid.density * D_ISO)
    case = _water_case({"viscous": viscous, "inlet": {"flow_rate": f"{V * math.pi * D_ISO**2 / 4!r} m^3/s"}},
                       iso_long_radius_profile())
    return solve_case(case)


def iso_equation(re_D: float, beta: float = BETA) -> float:
    # ISO 5167-3:2003, long-radius nozzle: C = 0.9965 - 0.00653 beta^0.5 (1e6/Re_D)^0.5
    return 0.9965 - 0.00653 * beta**0.5 * (1e6 / re_D) ** 0.5


# --- ISO 5167-3 long-radius nozzle ---------------------------------------------------------------
# The model on the default settings: an inviscid core (discharge coefficient 1: computed C_inv = 1.0000),
# the approach layer from the inlet plane (turbulent above Re 2300), which runs into the concave corner of
# the inlet face, its deficit carried on through the nozzle, and the nozzle's own layer, which starts
# afresh at the stagnation point in that corner (laminar, the two-equation method; Michel's transition). What it does not
# contain: a fully developed approach profile (the inviscid inflow is uniform), the tapping geometry and the
# real transition. tests/test_wall_layer_physics.py checks the same on cases written as a user writes them.

ISO_START = {}  # the default settings (the approach layer from the inlet plane)
ISO_LAMINAR = {"start": "laminar"}


def test_iso_long_radius_nozzle_discharge_coefficient_at_re_1e6():
    res = iso_run(1e6, ISO_START)
    v = res.summary()["viscous"]
    assert v["reynolds_number"] == pytest.approx(1e6, rel=1e-3)  # viscosity at the inlet pressure, not 1 atm
    assert v["discharge_coefficient_inviscid"] == pytest.approx(1.0, abs=2e-4)
    assert v["discharge_coefficient"] == pytest.approx(iso_equation(1e6), rel=0.005)
    # the nozzle's layer stays attached; the only separation is the approach layer running into the
    # concave corner of the inlet face (a corner vortex), where a new layer starts
    assert all(b <= 1e-3 for a, b in v["separation_x_ranges_m"])
    assert v["layers"]["wall"]["runs"][1]["start"] == "stagnation point in a concave corner"


@pytest.mark.slow
def test_iso_long_radius_nozzle_discharge_coefficient_over_reynolds_numbers(capsys):
    # D = 100 mm, so Re_D stops at 1e6 (a throat speed of 40 m/s): above it this pipe's throat runs at 120 and
    # 400 m/s of water, where Michel's flat-plate transition first falls into the throat at Re_D 1e7 and not at
    # 3e6 (C 0.99624 and 0.99519). tests/test_wall_layer_physics.py takes Re_D up to 1e7 in a 500 mm pipe at a
    # meter's throat speed, with the standard's trend, for beta 0.3, 0.5 and 0.6.
    res_D = [1e5, 3e5, 1e6]
    cs = []
    for re in res_D:
        c = iso_run(re, ISO_START).summary()["viscous"]["discharge_coefficient"]
        cs.append(c)
        with capsys.disabled():
            print(f"\nISO 5167-3 beta 0.5, Re_D {re:.0e}: model {c:.5f}, standard {iso_equation(re):.5f}, "
                  f"difference {(c / iso_equation(re) - 1) * 100:+.3f} %")
        assert c == pytest.approx(iso_equation(re), rel=0.005)
    assert np.all(np.diff(cs) > 0)  # the same trend: C rises with Re_D, as the standard's equation


def test_displacement_pass_agrees_with_the_first_order_blockage():
    # the same nozzle solved again on the wall displaced by delta*: its discharge coefficient (2D, from
    # the re-solved pressures) equals the first-order estimate 1/(1 - B) of the stage to 1e-4, and an
    # iterated pass converges within its tolerance
    # (a laminar approach layer without transition: on the default path the turbulent approach layer, held across
    # its separation into the concave corner, folds a cell of the corner's fine mesh when the wall is displaced;
    # the run then stops with a message naming viscous.displacement, see the next test. With Michel's transition
    # the laminar approach layer turns turbulent 31 mm before the corner and separates into it too: the iterated
    # pass folds a cell there since the drop of its displacement at transition slows the core, so theta jumps
    # by 6.6 % (the momentum integral across that drop))
    laminar = {"start": "laminar", "transition": "none"}
    one = iso_run(1e6, {**laminar, "displacement": "one-pass"}).summary()["viscous"]
    d = one["displacement"]
    assert d["passes"] == 1 and d["converged"]
    assert d["discharge_coefficient"] == pytest.approx(one["discharge_coefficient"], abs=1e-4)
    assert d["flow_change_rel"] == pytest.approx(0.0, abs=1e-12)  # the flow rate is given
    assert d["inlet_pressure_change_Pa"] > 0.0  # the displaced wall needs more pressure for the same flow
    it = iso_run(1e6, {**laminar, "displacement": "iterate", "displacement_tolerance": 1e-3}).summary()["viscous"]
    di = it["displacement"]
    assert di["converged"] and 2 <= di["passes"] <= 8
    h = di["history"]
    assert abs(h[-1]["total_x_N"] - h[-2]["total_x_N"]) < 1e-3 * abs(h[-1]["total_x_N"])
    assert di["discharge_coefficient"] == pytest.approx(d["discharge_coefficient"], abs=5e-4)


# --- conical diffusers ---------------------------------------------------------------------------


def diffuser(half_angle_deg: float):
    # area ratio 2 (200 mm to 282.84 mm) between two pipes; water, 0.1 m^3/s (Re_D about 6e5); the
    # approach layer turbulent, grown over 10 pipe diameters (the default of a turbulent start)
    return case_from_dict({
        "title": "conical diffuser", "fluid": {"kind": "water", "temperature": "15 degC"},
        "bore": {"template": "reducer", "inlet_diameter": "200 mm", "outlet_diameter": "282.84 mm",
                 "half_angle": f"{half_angle_deg} deg", "inlet_length": "400 mm", "outlet_length": "800 mm"},
        "inlet": {"flow_rate": "0.1 m3/s"}, "outlet": {"kind": "pipe"}})


def test_conical_diffuser_separation_onset_between_5_and_8_degrees():
    # Area ratio 2 with a thin inlet layer (grown from the inlet plane over the 400 mm approach, the default
    # path): the layer must stay attached at 5 deg half angle and separate at 8 deg (issue 20's target; a
    # half angle of about 7 deg is the largest for attached flow in a conical diffuser, as reviewed by Azad
    # 1996, Exp. Therm. Fluid Sci. 13, "Turbulent flow in a conical diffuser: a review"). Measured: attached
    # at 5 and 5.5 deg (largest H 2.24 and 2.33), separated from 6 deg (before the interaction was solved in the
    # march: attached at 5 deg with H 2.36).
    at5, at8 = (solve_case(diffuser(a)).summary()["viscous"] for a in (5.0, 8.0))
    assert not at5["separated"] and at8["separated"]
    (a, b), = at8["separation_x_ranges_m"]
    assert 0.4 < a < 0.4 + (0.28284 - 0.2) / 2 / math.tan(math.radians(8.0))  # in the cone


@pytest.mark.parametrize("angle, separates", [(3.0, False), (15.0, True)])
def test_conical_diffuser_separation(angle, separates):
    # Common practice: conical diffusers are laid out near 3.5 to 4 deg half-angle to stay attached;
    # at 15 deg an area-ratio-2 diffuser stalls. The layer: turbulent (Head, separation at H = 2.4).
    v = solve_case(diffuser(angle)).summary()["viscous"]
    assert v["settings"]["start"] == "turbulent"
    assert v["separated"] is separates
    cone_end = 0.4 + (0.28284 - 0.2) / 2 / math.tan(math.radians(angle))
    if separates:
        (a, b), = v["separation_x_ranges_m"]
        assert 0.4 < a < cone_end  # in the cone
        assert v["loss_coefficient"] is None
    else:
        assert v["max_shape_factor"] < 2.2
        assert 0.0 < v["loss_coefficient"] < 0.5


# --- straight pipe: the method's exact flat-plate law, friction force and momentum integral -------


def _pipe(planar: bool = False):
    # a straight pipe of radius 50 mm, 1 m long, ue uniform (no blockage coupling): each wall is a flat
    # plate (r constant cancels from the integral equations)
    data = {"title": "pipe", "fluid": {"kind": "liquid", "density": "1000 kg/m^3", "vapour_pressure": "2 kPa",
                                      "viscosity": "1 mPa*s"},
            "bore": {"template": "segments", "start": ["0 mm", "50 mm"], "segment": [{"to": ["1000 mm", "50 mm"]}]},
            "inlet": {"flow_rate": f"{2.0 * (0.05 if planar else math.pi * 0.05**2)!r} m^3/s", "pressure": "1 bar"},
            "outlet": {"kind": "pipe"}, "mesh": {"size": 0.1},
            "viscous": {"start": "laminar", "transition": "none", "coupling": "none"}}
    case = case_from_dict(data)
    if planar:
        case = dataclasses.replace(case, profile=dataclasses.replace(case.profile, planar=True))
    return solve_case(case)


@pytest.mark.parametrize("planar", [False, True])
def test_pipe_friction_force_is_the_flat_plate_integral(planar):
    # Blasius on a flat plate (the laminar method is exact on it, tests/test_viscous.py):
    # tau_w = 0.332057 mu U sqrt(U/(nu x)) (Howarth 1938), so the wall-shear force over length L is
    # 0.664115 mu U sqrt(U L/nu) times the perimeter 2 pi R (axisymmetric) or 1 per unit depth (planar) (derived).
    res = _pipe(planar)
    s = res.summary()
    U, mu, nu, L, R = 2.0, 1e-3, 1e-6, 1.0, 0.05
    per_length = 0.664115 * mu * U * math.sqrt(U * L / nu)
    expected = per_length * (1.0 if planar else 2.0 * math.pi * R)
    v = s["viscous"]
    assert s["forces"]["friction_x_N"] == pytest.approx(expected, rel=0.03)  # the midpoint rule misses part of x^-1/2
    t = res.tables["wall"]  # the same law summed face by face (midpoint rule): the stage's integral to 0.5 %
    tau = 0.332057 * mu * U * np.sqrt(U / (nu * t.x))
    faces = np.sum(tau * t.length) * (1.0 if planar else 2.0 * math.pi * R)
    assert s["forces"]["friction_x_N"] == pytest.approx(faces, rel=0.005)
    # the momentum integral of the layer gives the same force (von Karman, derived): rho U^2 theta(L) times
    # the perimeter, theta(L) = 0.664115 sqrt(nu L/U), the same expression (Thwaites' method was 2 % off it)
    assert v["friction_momentum_integral_x_N"] == pytest.approx(expected, rel=0.005)
    assert s["forces"]["total_with_friction_x_N"] == pytest.approx(s["forces"]["total_x_N"] + s["forces"]["friction_x_N"], rel=1e-12)
    assert v["reynolds_number"] == pytest.approx(U * (4 * R if planar else 2 * R) / nu, rel=1e-6)
    # loss: the kinetic-energy deficit (rho/2) P U^3 delta_3 at the outlet over Q, K = dp_0 / (rho U^2 / 2) =
    # P delta_3 / A (derived), delta_3 = H* theta with the Blasius profile's own H* = 1.5726, from a fresh
    # solution of the Blasius equation (the power-law relation 4H/(3H - 1) = 1.530 used before is 2.7 % low)
    from axibore.viscous import falkner_skan

    theta = 0.664115 * math.sqrt(nu * L / U)
    d3 = theta * falkner_skan.family([0.0])[0, 3]
    P, A = (1.0, R) if planar else (2 * math.pi * R, math.pi * R * R)
    assert v["loss_coefficient"] == pytest.approx(P * d3 / A, rel=0.01)


# --- model = "none", cases, files -----------------------------------------------------------------


def test_model_none_leaves_every_number_as_it_was(tmp_path):
    # the pinned inviscid numbers of tests/test_demo_regression.py hold with the layer on (the
    # default there) and off; off, no wall-layer key carries a value
    from test_demo_regression import CASES, PINNED, WHERE

    case = load_case(CASES / "water_main_reducer.toml")
    off = solve_case(case.with_updates({"viscous.model": "none"})).summary()
    on = solve_case(case).summary()
    for key, expected in PINNED["water_main_reducer"].items():
        section, k = WHERE[key]
        assert off[section][k] == pytest.approx(expected, rel=1e-9, abs=1e-9), key
        assert on[section][k] == off[section][k], key
    assert off["viscous"]["model"] == "none" and off["forces"]["friction_x_N"] is None
    assert on["viscous"]["model"] == "integral" and on["forces"]["friction_x_N"] > 0.0
    assert on["viscous"]["caution"] in on["cautions"] and off["viscous"].get("caution") is None


def test_run_directory_carries_the_wall_layer(tmp_path):
    case = load_case("cases/water_main_reducer.toml").with_updates({"mesh.size": 0.1})
    out = tmp_path / "run"
    run_case(case, out)
    s = json.loads((out / "summary.json").read_text())
    assert s["viscous"]["model"] == "integral"
    head = (out / "wall.csv").read_text().splitlines()[0].split(",")
    for col in ("tau_w_Pa", "theta_m", "delta_star_m", "shape_factor", "layer_state", "cumulative_friction_x_N"):
        assert col in head
    from axibore.io.files import read_csv

    t = read_csv(out / "wall.csv")
    assert t["cumulative_friction_x_N"][-1] == pytest.approx(s["forces"]["friction_x_N"], rel=1e-9)
    assert set(np.unique(t["layer_state"])) <= {0.0, 1.0, 2.0}
    assert (out / "plot_wall_layer.png").stat().st_size > 10_000
    assert "alt='wall_layer'" in (out / "report.html").read_text()


def test_viscous_case_errors_name_the_key(nozzle_dict):
    d = dict(nozzle_dict, fluid={"kind": "liquid", "density": "900 kg/m^3", "vapour_pressure": "1 kPa"},
             viscous={"model": "integral"})
    with pytest.raises(CaseError) as e:
        case_from_dict(d, source="c.toml")
    assert "c.toml: fluid.viscosity: missing" in str(e.value)
    # without a viscosity and no model given, the layer is off
    d.pop("viscous")
    assert case_from_dict(d).viscous_model == "none"
    for bad, key, words in [({"taps": ["50 mm", "10 mm"]}, "viscous.taps", "first smaller"),
                            ({"taps": ["-1 m", "10 mm"]}, "viscous.taps", "position on the bore"),
                            ({"transition": "soon"}, "viscous.transition", '"michel", "none" or an axial position'),
                            ({"displacement": "twice"}, "viscous.displacement", "expected"),
                            ({"separation_shape_factor": 9}, "viscous.separation_shape_factor", "4"),
                            ({"start_momentum_thickness": "1 mm", "upstream_length": "1 m"}, "viscous.upstream_length", "not both")]:
        with pytest.raises(CaseError) as e:
            case_from_dict(dict(nozzle_dict, viscous=bad), source="c.toml")
        assert f"c.toml: {key}:" in str(e.value) and words in str(e.value), (bad, str(e.value))
    # units of a given liquid's viscosity
    ok = dict(nozzle_dict, fluid={"kind": "liquid", "density": "900 kg/m^3", "vapour_pressure": "1 kPa", "viscosity": "30 cP"})
    assert case_from_dict(ok).fluid.viscosity == pytest.approx(0.03)
