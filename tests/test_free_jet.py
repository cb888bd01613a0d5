"""Free jets past a sharp lip: contraction coefficients against free-streamline theory, the jet
reaction against the momentum of the far jet, and the exit-plane model where it is enough.

Sources (../shared/SOURCES.md):
- Borda mouthpiece (re-entrant tube from a large reservoir): Cc = 1/2 exactly, planar and
  axisymmetric, by the momentum argument (Encyclopaedia Britannica, 11th ed., 1911, "Hydraulics" s.37).
- Planar slot in an infinite wall: Cc = pi / (pi + 2) = 0.6110 (Kirchhoff 1869 / Helmholtz; same
  source, "Hydromechanics" s.41); walls at other angles and a channel of finite width: the hodograph
  solution (derived, verification.channel_contraction; Gurevich 1965, Theory of Jets in Ideal Fluids, ch. 1).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from axibore.case import case_from_dict
from axibore.post.jet import LIP_MISMATCH_LIMIT
from axibore.run import solve_case

WATER = {"kind": "water", "temperature": "15 degC"}


def _case(bore: dict, level: int = 0, size: float = 0.1, **inlet) -> object:
    return case_from_dict({"fluid": WATER, "bore": bore, "inlet": inlet or {"pressure": "1 bar"},
                           "outlet": {"kind": "free-jet"}, "mesh": {"size": size, "level": level, "cells": "triangles"}})


def borda(symmetry: str) -> dict:
    """A thin re-entrant tube (lip radius 1 mm, the tube's wall a single surface) reaching 13 radii
    into a reservoir 15 radii wide; the inlet plane 27 radii upstream of the lip."""
    return {"template": "segments", "symmetry": symmetry, "start": ["-30 mm", "15 mm"],
            "segment": [{"to": ["10 mm", "15 mm"]}, {"to": ["10 mm", "1 mm"]}, {"to": ["-3.1 mm", "1 mm"]}]}


SLOT = {"template": "segments", "symmetry": "planar", "start": ["-20 mm", "20 mm"],
        "segment": [{"to": ["0 mm", "20 mm"]}, {"to": ["0 mm", "1 mm"]}]}


def borda_finite_reservoir(beta: float) -> float:
    """Borda's momentum argument in a reservoir of finite width (derived): the walls round the tube
    see the stagnation pressure H, the inlet plane H - rho U^2 / 2 with momentum rho U^2 A_res, so
    rho V^2 Cc A = H A + rho U^2 A_res / 2 with U = Cc A V / A_res: Cc = (1 + beta Cc^2) / 2,
    beta = A_exit / A_reservoir, i.e. Cc = (1 - sqrt(1 - beta)) / beta (-> 1/2 as beta -> 0)."""
    return (1.0 - math.sqrt(1.0 - beta)) / beta


@pytest.mark.parametrize("symmetry, beta", [("axisymmetric", (1 / 15) ** 2), ("planar", 1 / 15)])
def test_borda_mouthpiece_contraction_is_one_half(symmetry, beta):
    # Borda: Cc = 1/2 from an infinite reservoir (Encyclopaedia Britannica 1911, "Hydraulics" s.37);
    # in this reservoir 15 lip radii wide the same momentum argument gives 0.500557 (axisymmetric) and
    # 0.508623 (planar). Measured at mesh level 0: 0.500559 and 0.508652.
    res = solve_case(_case(borda(symmetry)))
    assert res.jet.settled and res.jet.residual < res.jet.tolerance
    assert res.jet.contraction_coefficient == pytest.approx(borda_finite_reservoir(beta), abs=5e-4)
    # the jet boundary is at the ambient pressure: rms speed mismatch on it beyond the lip face
    assert res.jet_table.mismatch()[1] < 0.01
    # wall force equals the momentum balance through the far jet
    assert abs(res.forces.reconciliation_rel) < 5e-3


def test_planar_slot_contraction_in_its_channel():
    # Kirchhoff: pi / (pi + 2) = 0.611015 for a slot in an infinite wall (derived in
    # geometry.jet.kirchhoff_contraction); the channel here, 20 slot half widths wide, raises it to 0.611312
    # (hodograph_contraction with the channel, derived in verification.channel_contraction; an earlier comment
    # here put that rise at a few 1e-5 where it is 2.96e-4). Measured 2026-12-05: 0.611425 at level 0 (+1.1e-4),
    # 0.611334 and 0.611332 at levels 1 and 2 (+2e-5); in a channel 40 half widths wide 0.611213 against 0.611089
    # (+1.2e-4). The tolerance is below the channel's rise: against Kirchhoff's value this run is 4.1e-4 off
    res = solve_case(_case(SLOT))
    assert res.case.profile.planar and res.mesh.planar
    assert res.jet.contraction_coefficient == pytest.approx(hodograph_contraction(math.pi / 2, 1 / 20), abs=2e-4)


def test_the_settled_jet_does_not_depend_on_the_first_trial(monkeypatch):
    # Kirchhoff's slot from trials 5 % too narrow, 1 % too narrow and 3 % too wide must settle on one jet, within
    # 2e-4 of the hodograph value for its channel (0.611312, exact) and within 1e-4 of each other, leaving the lip tangentially (no lip warning).
    # With the tail face's integrated condition in place of the lip's Bernoulli row (before 2026-12-05) the
    # discrete problem had a one-parameter family of solutions and each trial settled elsewhere on it: 0.6021 and
    # 0.6169 from the trials 5 % narrow and 3 % wide, the lip's face 0.38 and 0.17 off the jet speed (a helper's
    # held-out runs on the default mesh: 1 % narrow 0.6094, 1 % wide 0.6128). Measured now: 0.611442 and
    # 0.611409 (and 0.611425 from the trial itself).
    import axibore.geometry.jet as GJ

    estimated = GJ.estimated_contraction
    cc = []
    for trial in (0.95, 0.99, 1.03):
        monkeypatch.setattr(GJ, "estimated_contraction", lambda a, t=trial: t * estimated(a))
        res = solve_case(_case(SLOT))
        assert res.jet.settled and len(res.jet.history) <= 12
        assert not any("leaves the lip at an angle" in w for w in res.checks.warnings)
        assert res.jet_table.lip_mismatch() < LIP_MISMATCH_LIMIT
        cc.append(res.jet.contraction_coefficient)
    assert max(cc) - min(cc) < 1e-4, cc
    assert np.allclose(cc, hodograph_contraction(math.pi / 2, 1 / 20), atol=2e-4), cc  # the channel's value (test above)


def test_a_jet_that_leaves_the_lip_tangentially_has_no_lip_warning():
    # the slot from its own trial (above) and the axisymmetric walls at 60 deg (lip faces 0.012 and 0.011 off V,
    # measured 2026-12-05; 0.035 and 0.062 before the lip's Bernoulli row)
    for bore in (SLOT, {**converging_walls(60.0), "symmetry": "axisymmetric"}):
        res = solve_case(_case(bore))
        assert res.jet_table.lip_mismatch() < 0.5 * LIP_MISMATCH_LIMIT
        assert not any("leaves the lip at an angle" in w for w in res.checks.warnings)


def converging_walls(degrees: float) -> dict:
    """A planar two-dimensional orifice: walls converging at ``degrees`` to the axis onto a slot of half
    width 1 mm, from a channel 20 half widths wide."""
    run = 19.0 / math.tan(math.radians(degrees))
    return {"template": "segments", "symmetry": "planar", "start": ["-60 mm", "20 mm"],
            "segment": [{"to": [f"{-run!r} mm", "20 mm"]}, {"to": ["0 mm", "1 mm"]}]}


def _simpson(f, n: int) -> float:
    u = np.linspace(0.0, math.pi, n)
    y = f(u)
    return (u[1] - u[0]) / 3.0 * (y[0] + y[-1] + 4.0 * y[1:-1:2].sum() + 2.0 * y[2:-1:2].sum())


def hodograph_contraction(a: float, opening_ratio: float = 0.0, n: int = 20001) -> float:
    """Contraction of the planar jet from walls at the angle ``a`` to the axis (derived from the
    hodograph, see geometry.jet.kirchhoff_contraction; the closed-form solution of Gurevich, Theory of Jets
    in Ideal Fluids, 1965, ch. 1, and Milne-Thomson, Theoretical Hydrodynamics, ch. XI): Cc = pi / (pi + I), I = integral over (0, pi) of
    sin(a u / pi) cot(u / 2) du, by Simpson's rule here (the integrand is finite: 2a/pi at u = 0). From a channel
    ``opening_ratio`` = lip half width / channel half width: Cc = pi / (pi + I - J), J = integral over (0, pi) of
    sin(a u / pi) sin u / (T - cos u) du, T = (tau + 1/tau) / 2, tau = (Cc opening_ratio)^(pi / a) (derived in
    verification.channel_contraction; computed here apart from it, by Simpson's rule and fixed-point steps)."""
    def kirchhoff(u):
        y = np.full_like(u, 2.0 * a / math.pi)
        y[1:] = np.sin(a * u[1:] / math.pi) / np.tan(0.5 * u[1:])
        y[-1] = 0.0
        return y

    integral = _simpson(kirchhoff, n)
    cc = math.pi / (math.pi + integral)
    for _ in range(60 if opening_ratio > 0 else 0):
        tau = (cc * opening_ratio) ** (math.pi / a)
        T = 0.5 * (tau + 1.0 / tau)
        cc = math.pi / (math.pi + integral - _simpson(lambda u: np.sin(a * u / math.pi) * np.sin(u) / (T - np.cos(u)), n))
    return cc


def test_hodograph_contraction_has_the_closed_forms():
    # the two closed forms of the family: Kirchhoff's slot pi / (pi + 2) and Borda's 1/2 (exact), and from a
    # channel, Borda's momentum result for that channel (borda_finite_reservoir with beta = b / B; derived in
    # verification.channel_contraction: J = pi (T - sqrt(T^2 - 1)) = pi U / V at a = pi). The product's
    # channel_contraction (quadrature) agrees with this Simpson computation
    from axibore.verification import channel_contraction

    assert hodograph_contraction(math.pi / 2) == pytest.approx(math.pi / (math.pi + 2), abs=1e-9)
    assert hodograph_contraction(math.pi) == pytest.approx(0.5, abs=1e-9)
    for beta in (1 / 15, 0.3, 0.6):
        assert hodograph_contraction(math.pi, beta) == pytest.approx(borda_finite_reservoir(beta), abs=1e-9)
    for degrees, ratio in ((90.0, 1 / 20), (45.0, 1 / 20), (60.0, 1 / 20), (30.0, 0.4), (90.0, 0.5)):
        a = math.radians(degrees)
        assert channel_contraction(a, ratio) == pytest.approx(hodograph_contraction(a, ratio), abs=1e-9)
    # At a = pi/2 the channel's term has a closed form (derived): with y = sin(u/2), J = integral_0^1 4 y^2 / (A + 2 y^2)
    # dy, A = T - 1 = (1/k - k)^2 / 2, k = U/V = Cc b/B, so J = 2 - 2 A integral_0^1 dy / (A + 2 y^2) = 2 - (1/k - k)
    # arctan(2k / (1 - k^2)) = 2 - 2 (1/k - k) arctan k, and Cc = pi / (pi + 2 (1/k - k) arctan k). It tests the
    # exponent pi/a, to which the Borda check (pi/a = 1) is blind
    for ratio in (1 / 20, 0.1, 0.5, 0.9):
        cc = 0.6
        for _ in range(200):
            k = cc * ratio
            cc = math.pi / (math.pi + 2.0 * (1.0 / k - k) * math.atan(k))
        assert hodograph_contraction(math.pi / 2, ratio) == pytest.approx(cc, abs=1e-9)
    # the slot's channel 20 half widths wide raises Kirchhoff's value by 2.96e-4 (the tests' slot and verify's)
    assert hodograph_contraction(math.pi / 2, 1 / 20) - math.pi / (math.pi + 2) == pytest.approx(2.96e-4, abs=1e-6)


@pytest.mark.parametrize("degrees", [45.0, 60.0])
def test_converging_walls_contraction_hodograph(degrees):
    # walls at 45 and 60 degrees from a channel 20 lip half widths wide: 0.746706 and 0.692130 (hodograph_contraction
    # with the channel; 5e-7 and 1.2e-5 above the infinite vessel's 0.746705 and 0.692118). Measured at level 0:
    # 0.746856 and 0.69236 (2026-12-05).
    res = solve_case(_case(converging_walls(degrees)))
    assert res.jet.settled and len(res.jet.history) <= 12
    assert res.jet.contraction_coefficient == pytest.approx(hodograph_contraction(math.radians(degrees), 1 / 20), abs=3e-4)


@pytest.mark.parametrize("name", ["planar-30deg-nozzle", "planar-60deg-nozzle", "planar-120deg-reservoir"])
def test_planar_lips_from_channels_against_the_hodograph(name):
    # Other angles and channel widths of the same family (the catalogue's lips): walls at 30 and 60 deg from a
    # channel 2.5 lip half widths wide, whose stream raises the contraction above the infinite vessel's by 2.6e-4
    # and 6.5e-3 (0.814025 and 0.698597), and walls running back at 120 deg, a funnel, from a channel 20 half widths
    # wide (0.558339, 1.4e-3 above). Exact: hodograph_contraction with the channel. Measured 2026-12-05 at level 0:
    # 0.814162, 0.698767, 0.558409 (+1.4e-4, +1.7e-4, +7e-5); the nozzles at levels 1 and 2 +1.1e-4 and +7.5e-5
    # (30 deg), +1.2e-4 and +9.4e-5 (60 deg)
    bore = dict(lip_catalogue())[name]
    ratio = 1.0 / float(bore["start"][1].split()[0])  # the lip's half width is 1 mm
    res = solve_case(_case(bore))
    assert res.jet.settled and len(res.jet.history) <= 12
    degrees = float(name.split("-")[1].removesuffix("deg"))
    assert res.jet.contraction_coefficient == pytest.approx(hodograph_contraction(math.radians(degrees), ratio), abs=2.5e-4)


@pytest.mark.parametrize("degrees", [90.0, 120.0])
def test_planar_orifice_in_a_duct_against_the_hodograph(degrees):
    # A slot (90 deg) and a funnel (120 deg) closing a duct only twice the lip's width (b/B = 1/2), the duct 8 half
    # widths long: the duct's stream raises the contraction far above the infinite vessel's (0.644353 against
    # 0.611015, 0.611248 against 0.556902; hodograph_contraction with the channel). Level 1. Measured 2026-12-05 at
    # levels 0-3: 90 deg +3.9e-4, +1.4e-4, +1.2e-4, +4.8e-5; 120 deg +3.0e-4, +1.5e-4, +8.5e-5, +4.9e-5
    if degrees == 90.0:
        segment = [{"to": ["0 mm", "2 mm"]}, {"to": ["0 mm", "1 mm"]}]
    else:
        segment = [{"to": [f"{1.0 / math.tan(math.radians(180.0 - degrees))!r} mm", "2 mm"]}, {"to": ["0 mm", "1 mm"]}]
    bore = {"template": "segments", "symmetry": "planar", "start": ["-16 mm", "2 mm"], "segment": segment}
    res = solve_case(_case(bore, level=1))
    assert res.jet.settled and len(res.jet.history) <= 12
    assert res.jet.contraction_coefficient == pytest.approx(hodograph_contraction(math.radians(degrees), 0.5), abs=2.5e-4)


def test_reentrant_tube_in_a_pipe_momentum():
    # a Borda tube of radius 1 mm inside a pipe of radius 4 mm: the momentum argument of
    # borda_finite_reservoir with beta = (1/4)^2 gives 0.508067. Measured at level 0: 0.5080666.
    bore = {"template": "segments", "start": ["-30 mm", "4 mm"],
            "segment": [{"to": ["10 mm", "4 mm"]}, {"to": ["10 mm", "1 mm"]}, {"to": ["-3.1 mm", "1 mm"]}]}
    res = solve_case(_case(bore))
    assert res.jet.settled and res.jet.condition == "momentum"
    assert res.jet.contraction_coefficient == pytest.approx(borda_finite_reservoir(1 / 16), abs=2e-4)
    assert res.exit_plane is not None and not res.exit_plane.meaningful  # said in one line, no crash


def test_jet_reaction_is_mdot_times_jet_speed():
    # momentum of the far, parallel jet at ambient pressure: R = mdot V_jet, V_jet = sqrt(2 p0 / rho)
    # (Bernoulli from the total head), independent of the solver's own plane integrals
    res = solve_case(_case(borda("axisymmetric")))
    rho = res.flow.inlet_density
    V = math.sqrt(2.0 * res.flow.total_pressure / rho)
    assert res.jet_reaction_N == pytest.approx(res.flow.mass_flow * V, rel=1e-3)
    # and the far jet carries the flow at that speed: Q = V A_jet
    assert res.flow.volume_flow == pytest.approx(V * res.jet.jet_area, rel=2e-3)


def test_rounded_tip_free_jet_agrees_with_exit_plane():
    # a contoured nozzle ending in a long parallel tip: the jet leaves parallel and hardly contracts,
    # so the exit-plane model is enough (Cc -> 1) and the two wall forces agree
    bore = {"template": "contoured", "inlet_diameter": "40 mm", "exit_diameter": "20 mm", "contraction_length": "40 mm",
            "inlet_length": "20 mm", "tip_length": "20 mm"}
    free = solve_case(_case(bore, size=0.1))
    plane = solve_case(case_from_dict({"fluid": WATER, "bore": bore, "inlet": {"pressure": "1 bar"},
                                       "outlet": {"kind": "exit-plane"}, "mesh": {"size": 0.1}}))
    assert free.jet.contraction_coefficient == pytest.approx(1.0, abs=0.01)
    assert free.forces.total_x_N == pytest.approx(plane.forces.total_x_N, rel=0.01)
    assert free.flow.volume_flow == pytest.approx(plane.flow.volume_flow, rel=0.01)


def test_exit_plane_on_a_sharp_lip_warns_and_names_free_jet():
    bore = {"template": "conical", "inlet_diameter": "40 mm", "exit_diameter": "20 mm", "half_angle": "30 deg",
            "inlet_length": "20 mm", "tip_length": "0 mm"}
    res = solve_case(case_from_dict({"fluid": WATER, "bore": bore, "inlet": {"pressure": "1 bar"},
                                     "outlet": {"kind": "exit-plane"}, "mesh": {"size": 0.1}}))
    text = " ".join(res.checks.warnings)
    assert "sharp lip" in text and '"free-jet"' in text and "30 deg" in text


def test_planar_symmetry_momentum_theorem_per_unit_depth():
    # a planar contraction between two channels: the inviscid force per unit depth equals
    # p1 h1 - p2 h2 + mdot (V1 - V2) with h the half heights (momentum theorem; Bernoulli pressures)
    bore = {"template": "reducer", "symmetry": "planar", "inlet_diameter": "40 mm", "outlet_diameter": "20 mm",
            "half_angle": "20 deg", "inlet_length": "30 mm", "outlet_length": "40 mm", "knuckle_radius": "10 mm"}
    res = solve_case(case_from_dict({"fluid": WATER, "bore": bore, "inlet": {"flow_rate": "1 L/s"},
                                     "outlet": {"pressure": "1 bar"}, "mesh": {"size": 0.1}}))
    rho = res.flow.inlet_density
    h1, h2 = 0.020, 0.010  # m per m of depth on one side of the symmetry plane
    Q = 1e-3  # m3/s per m of depth for the half section (planar flow rates are per unit depth)
    V1, V2 = Q / h1, Q / h2
    p2 = 1e5
    p1 = p2 + 0.5 * rho * (V2**2 - V1**2)
    expected = p1 * h1 - p2 * h2 + rho * Q * (V1 - V2)
    assert res.mesh.planar
    assert res.forces.total_x_N == pytest.approx(expected, rel=2e-3)
    # the 1D model uses the per-depth heights: in the straight inlet and outlet channels (uniform
    # flow) the 1D wall pressure is the 2D one
    t, dev = res.tables["wall"], res.onedim.deviation["wall"]
    straight = (t.x < 0.004) | (t.x > res.profile.x_outlet - 0.01)  # away from the bends (2D within a height of them)
    assert np.max(np.abs(dev[straight])) < 2e-3  # areas as pi r^2 would put it off by orders of magnitude
    assert res.flow.inlet_area == pytest.approx(h1, rel=1e-9)


@pytest.mark.slow
def test_sharp_edged_orifice_grid_study(tmp_path):
    # A sharp-edged circular orifice in a tank wall (the shipped case) over three mesh levels. There is
    # no closed form for the axisymmetric orifice (published inviscid computations exist, e.g. Jeppson
    # 1970, J. Fluid Mech. 40, whose table this project has not read): the test asks for what a grid
    # study needs, monotone convergence with an observed order and a tight GCI band; its extrapolated
    # value is the number the README quotes. Measured 2026-12-05 with the lip's Bernoulli row: 0.592019, 0.591762
    # and 0.591634 at levels 0-2 (differences 2.6e-4 then 1.3e-4, observed order about 2.2). Before it the
    # discrete problem had a one-parameter family of solutions and each step sequence settled elsewhere on it:
    # 0.584134, 0.584682, 0.585149 (order 0.31, this test failed), 0.609528, 0.609549, 0.609604 (differences
    # growing), 0.60508, 0.60708, 0.60811.
    from pathlib import Path

    from axibore.case import load_case
    from axibore.study.gridstudy import run_grid_study

    case = load_case(Path(__file__).parents[1] / "cases" / "tank_drain_orifice.toml")
    study = run_grid_study(case, [0, 1, 2], tmp_path)
    cc = study.results["contraction_coefficient"]
    values = np.asarray(cc.phi)
    d = np.diff(values)
    assert np.all(d > 0) or np.all(d < 0)  # monotone
    assert cc.order is not None and 0.5 < cc.order < 3.0, cc.flags
    assert cc.gci_fine < 0.005  # the band within half a per cent
    assert abs(cc.extrapolated - values[0]) < 0.005  # phi runs fine to coarse


@pytest.mark.parametrize("change, key, words", [
    ({"bore": {**SLOT, "symmetry": "planer"}}, "bore.symmetry", "'axisymmetric' or 'planar'"),
    ({"bore": {**SLOT, "symmetri": "planar"}}, "bore.symmetri", "did you mean 'symmetry'"),
    ({"bore": {"template": "spear", "inlet_diameter": "150 mm", "orifice_diameter": "60 mm", "half_angle": "40 deg",
               "inlet_length": "150 mm", "tip_length": "0 mm", "lip_radius": "5 mm", "needle_diameter": "80 mm",
               "needle_half_angle": "25 deg", "stroke": "25 mm"}}, "bore.lip_radius", "straight tip"),
    ({"bore": SLOT, "flange": {"gasket_diameter": "50 mm", "bolts": 4}}, "flange", "planar"),
    ({"bore": {"template": "segments", "start": ["-20 mm", "20 mm"],
               "segment": [{"to": ["0 mm", "20 mm"]}, {"to": ["0 mm", "0 mm"]}]}}, "bore.segment[2]", "away from the axis"),
])
def test_bad_free_jet_and_planar_input_names_the_key(change, key, words):
    from axibore.case import CaseError

    data = {"fluid": WATER, "bore": SLOT, "inlet": {"pressure": "1 bar"}, "outlet": {"kind": "free-jet"}, **change}
    with pytest.raises(CaseError) as err:
        case_from_dict(data, source="bad.toml")
    text = str(err.value)
    assert f"bad.toml: {key}:" in text and words in text, text


def test_mesh_command_meshes_the_first_trial_jet(tmp_path, capsys):
    # `axibore mesh` on a free-jet case shows what the first outer iteration meshes: the bore with
    # the jet boundary past the lip, ending at an outlet plane downstream (6 lip radii)
    from pathlib import Path

    import meshio

    from axibore.cli import main

    case = Path(__file__).parents[1] / "cases" / "tank_drain_orifice.toml"
    assert main(["mesh", str(case), "--out", str(tmp_path)]) == 0
    text = capsys.readouterr().out
    assert "first trial jet" in text and "jet " in text.split("boundary")[1]
    m = meshio.read(tmp_path / "mesh.vtu")
    assert m.points[:, 0].max() == pytest.approx(0.0 + 6 * 0.010, rel=0.05)  # lip at x = 0, r = 10 mm


def test_an_unsettled_jet_exits_1_like_any_unconverged_solve(tmp_path, capsys, monkeypatch):
    import tomli_w

    import axibore.outlets.freejet as fj
    from axibore.cli import main

    monkeypatch.setattr(fj, "MAX_ITERATIONS", 1)  # no lip settles in one step from the trial jet
    case = tmp_path / "slot.toml"
    case.write_text(tomli_w.dumps({"fluid": WATER, "bore": SLOT, "inlet": {"pressure": "1 bar"}, "outlet": {"kind": "free-jet"},
                                   "mesh": {"size": 0.1, "cells": "triangles"}}))
    assert main(["run", str(case), "--out", str(tmp_path / "r")]) == 1
    err = capsys.readouterr().err
    assert "NOT CONVERGED" in err and "did not settle (V from the faces: 1 step, the step limit (1)" in err
    assert not (tmp_path / "r").exists()


@pytest.mark.slow
def test_a_reentrant_tube_whose_momentum_steps_stall_settles():
    # A helper's held-out tube (lip radius 2 mm, 12 lip radii into a reservoir 10 lip radii wide, inlet 23 radii
    # upstream), level 0: with V from the momentum balance the steps stalled at a face residual of 3.7e-5 after 15
    # steps and the run stopped (JetNotSettled); its neighbours with the tube reaching 10 or 14 radii or the inlet
    # 20 radii upstream did too, those with reservoirs 9, 11 and 12 radii wide settled. Now the run goes on with V
    # from the faces: 0.5016275 (measured 2026-12-05), 3.7e-4 above Borda's value for that reservoir
    # (borda_finite_reservoir, beta = 0.01), 6.5e-6 below it at level 1. 13 steps in all: the momentum steps give up
    # after 8, and V from the faces starts from their last state (before: 17, giving up after 11 and starting again
    # from the trial; the issue asks for 12)
    bore = {"template": "segments", "symmetry": "axisymmetric", "start": ["-50 mm", "20 mm"],
            "segment": [{"to": ["20 mm", "20 mm"]}, {"to": ["20 mm", "2 mm"]}, {"to": ["-4 mm", "2 mm"]}]}
    res = solve_case(_case(bore))
    assert res.jet.settled and res.jet.condition == "local"
    assert res.jet.contraction_coefficient == pytest.approx(borda_finite_reservoir(0.01), rel=1e-3)
    assert res.jet.momentum_attempt[0] <= 8 and len(res.jet.history) <= 13


def test_a_momentum_jet_that_stalls_is_solved_with_v_from_the_faces(monkeypatch):
    # Where the steps with V from the momentum balance stall (a helper's held-out tube, test above), the run solves
    # the same mesh with V from the faces and says so (progress, a warning with both contraction coefficients, the
    # summary): here the momentum attempt is made to stall at its trial
    import axibore.outlets.freejet as fj

    real = fj.FreeJetOutlet._iterate

    def stalls(jp, u, tol, progress, stall=False, offset=(0, 0.0), V=None):
        if jp.momentum:
            st = jp.evaluate(u, None)
            return st, [fj.JetIteration(k, 1e-3, 0.5, 0.0, 0.5 * k) for k in (1, 2)], "stalled"
        return real(jp, u, tol, progress, stall, offset, V)

    monkeypatch.setattr(fj.FreeJetOutlet, "_iterate", staticmethod(stalls))
    said = []
    res = solve_case(_case(borda("axisymmetric")), progress=lambda stage, text: said.append(text))
    assert res.jet.settled and res.jet.condition == "local"
    assert any("did not settle (V from the momentum balance: 2 steps, stalled" in t and "again with V from the faces" in t
               for t in said)
    assert any("free jet 3:" in t for t in said)  # the steps' numbers go on
    # both attempts' steps are counted, numbered on and timed on
    steps = res.jet.history
    assert [h.iteration for h in steps] == list(range(1, len(steps) + 1)) and len(steps) >= 3
    assert all(b.seconds >= a.seconds for a, b in zip(steps, steps[1:])) and steps[2].seconds >= 1.0
    assert res.jet.momentum_attempt[0] == 2
    summary = res.summary()["solver"]["free_jet_momentum_attempt"]
    assert summary["steps"] == 2 and summary["contraction_coefficient"] == res.jet.momentum_attempt[2]
    warning = [w for w in res.checks.warnings if "did not settle" in w]
    assert len(warning) == 1 and f"{res.jet.contraction_coefficient:.6f}" in warning[0], res.checks.warnings
    # V from the faces: 0.500779 at level 0 (2026-12-05), Borda's 0.500557 for this reservoir
    assert res.jet.contraction_coefficient == pytest.approx(borda_finite_reservoir((1 / 15) ** 2), abs=5e-4)
    assert res.jet_table.lip_mismatch() < LIP_MISMATCH_LIMIT


def test_one_discharge_coefficient_with_the_approach_factor():
    # the flow-measurement definition (ISO 5167-1: C with E = 1 / sqrt(1 - beta^4), here beta^2 = area ratio):
    # Cd = Q / (A sqrt(2 dp / (rho (1 - beta^2)))). For a jet contracting to Cc A at the total head
    # p1 + rho V1^2 / 2 this is Cd = Cc sqrt(1 - beta^2) / sqrt(1 - Cc^2 beta^2) (derived), not Cc itself.
    res = solve_case(_case(SLOT))
    cc, beta = res.jet.contraction_coefficient, 1.0 / 20.0
    expected = cc * math.sqrt(1 - beta**2) / math.sqrt(1 - cc**2 * beta**2)
    assert res.onedim.discharge_coefficient == pytest.approx(expected, rel=1e-3)
    assert "velocity-of-approach" in res.onedim.discharge_coefficient_note


def lip_catalogue():
    """Twenty lips: wall angles from 0 to 180 degrees to the jet axis, planar and axisymmetric,
    reservoirs (20 lip radii wide) and nozzles (2.5 lip radii), with and without a centre body."""
    cases = []
    for sym in ("planar", "axisymmetric"):
        for deg in (0.0, 30.0, 60.0, 90.0, 120.0, 150.0, 180.0):
            if deg == 0.0:  # a straight tube ending in the reservoir's far wall: the jet leaves parallel
                bore = {"template": "segments", "symmetry": sym, "start": ["-60 mm", "20 mm"],
                        "segment": [{"to": ["-20 mm", "20 mm"]}, {"to": ["-20 mm", "1 mm"]}, {"to": ["0 mm", "1 mm"]}]}
            elif deg == 180.0:
                bore = borda(sym)
            elif deg < 90.0:
                bore = converging_walls(deg) | {"symmetry": sym}
            else:  # walls running back towards the lip: a re-entrant funnel
                run = 19.0 / math.tan(math.radians(180.0 - deg)) if deg < 180.0 else 0.0
                bore = {"template": "segments", "symmetry": sym, "start": ["-60 mm", "20 mm"],
                        "segment": [{"to": [f"{run!r} mm", "20 mm"]}, {"to": ["0 mm", "1 mm"]}]}
            cases.append((f"{sym}-{deg:g}deg-reservoir", bore))
    for sym in ("planar", "axisymmetric"):
        for deg in (30.0, 60.0):
            run = 1.5 / math.tan(math.radians(deg))
            bore = {"template": "segments", "symmetry": sym, "start": ["-10 mm", "2.5 mm"],
                    "segment": [{"to": [f"{-run!r} mm", "2.5 mm"]}, {"to": ["0 mm", "1 mm"]}]}
            cases.append((f"{sym}-{deg:g}deg-nozzle", bore))
    needle = {"start": ["-8 mm", "0 mm"], "segment": [{"to": ["-7 mm", "0.8 mm"]}, {"to": ["-1 mm", "0.8 mm"]},
                                                        {"to": ["1.5 mm", "0 mm"]}]}
    run = 1.5 / math.tan(math.radians(40.0))
    for sym in ("axisymmetric", "planar"):
        cases.append((f"{sym}-40deg-nozzle-needle", {"template": "segments", "symmetry": sym, "start": ["-10 mm", "2.5 mm"],
                                                     "segment": [{"to": [f"{-run!r} mm", "2.5 mm"]}, {"to": ["0 mm", "1 mm"]}],
                                                     "centerbody": needle}))
    return cases


def test_orifice_contraction_does_not_depend_on_the_reservoir():
    # A sharp-edged circular orifice in a wall: the shipped tank case (a reservoir 15 hole radii wide), the
    # catalogue's (20 radii) and a 4 mm hole in a reservoir 25 radii wide (a held-out case of a helper session)
    # must agree to the finite-reservoir effect, which Borda's momentum argument puts at (beta_15 - beta_25) / 8 =
    # 3.6e-4 for a re-entrant lip (d Cc / d beta = 1/8 at beta = 0, from borda_finite_reservoir; derived).
    # Allowed 2e-3. Before the lip's Bernoulli row the discrete problem had a one-parameter family of solutions:
    # the damped steps used first settled the first two at 0.6095 and 0.5921 (0.017 apart), the Newton steps the
    # third at 0.6079 until their first step from the trial could raise the residual (FIRST_STEP_RISE), then
    # all three near 0.584 with the jet leaving the lip at an angle. Measured 2026-12-05: 0.592019, 0.59197 and
    # 0.591986.
    from pathlib import Path

    from axibore.case import load_case

    tank = solve_case(load_case(Path(__file__).parents[1] / "cases" / "tank_drain_orifice.toml"))
    wide = solve_case(_case(dict(lip_catalogue())["axisymmetric-90deg-reservoir"]))
    wider = solve_case(_case({"template": "segments", "start": ["-100 mm", "100 mm"],
                              "segment": [{"to": ["0 mm", "100 mm"]}, {"to": ["0 mm", "4 mm"]}]}))
    cc = [r.jet.contraction_coefficient for r in (tank, wide, wider)]
    assert all(r.jet.settled for r in (tank, wide, wider))
    assert max(cc) - min(cc) < 2e-3, cc


@pytest.mark.parametrize("symmetry", ["axisymmetric", "planar"])
def test_a_reservoir_contracts_the_jet_more_than_a_nozzle_with_the_same_lip(symmetry):
    # Walls at 60 degrees to the axis at the lip, from a reservoir 20 lip radii wide and from a pipe 2.5 lip radii
    # wide: a stream that already moves towards the opening contracts less, so the reservoir's coefficient is the
    # smaller (von Mises 1917: in the planar hodograph solutions Cc rises with the ratio of the opening to the
    # channel at every wall angle; Borda's momentum argument gives the same rise, borda_finite_reservoir).
    # Measured 2026-12-05 with the lip's Bernoulli row: axisymmetric 0.66904 < 0.67089, planar 0.69236 < 0.69877
    # (before it, on jets leaving the lip at an angle: 0.66765 < 0.66793 and 0.69209 < 0.69384; the damped steps
    # used first settled the axisymmetric reservoir at 0.67948, 0.0116 above its nozzle).
    cat = dict(lip_catalogue())
    reservoir = solve_case(_case(cat[f"{symmetry}-60deg-reservoir"]))
    nozzle = solve_case(_case(cat[f"{symmetry}-60deg-nozzle"]))
    assert reservoir.jet.settled and nozzle.jet.settled
    assert reservoir.jet.contraction_coefficient < nozzle.jet.contraction_coefficient


@pytest.mark.slow
@pytest.mark.parametrize("name, bore", lip_catalogue(), ids=[n for n, _ in lip_catalogue()])
def test_lip_catalogue_settles(name, bore):
    # every lip of the catalogue settles at level 0 on the default path: no self-crossing, no
    # iteration limit, and a contraction between Borda's 1/2 and no contraction at all. Where the faces fix the
    # jet speed, the jet leaves the lip tangentially (measured 2026-12-05: the lip's face within 0.03 of V; before
    # the lip's Bernoulli row 0.13 to 0.66 for the orifices, the steep lips and the needles, and the axisymmetric
    # funnel at 150 deg did not settle); the re-entrant tubes, whose V comes from the momentum balance, still do not
    res = solve_case(_case(bore))
    assert res.jet.settled and len(res.jet.history) <= 12, name
    assert 0.49 < res.jet.contraction_coefficient <= 1.001
    assert res.jet.condition == "momentum" or res.jet_table.lip_mismatch() < LIP_MISMATCH_LIMIT
    if name.startswith("planar") and "needle" not in name and not name.startswith("planar-0deg"):
        # the planar lips without a needle have the hodograph's exact value for their channel (measured
        # 2026-12-05: +1.3e-4, +2.3e-4, +1.6e-4, +7e-5, -1.2e-4 and +2.9e-5 at 30 to 180 deg, +1.4e-4 and +1.7e-4
        # for the nozzles)
        degrees = float(name.split("-")[1].removesuffix("deg"))
        ratio = 1.0 / float(bore["start"][1].split()[0])
        assert res.jet.contraction_coefficient == pytest.approx(hodograph_contraction(math.radians(degrees), ratio),
                                                                abs=3e-4), name


def test_jet_response_by_the_interface_inverse_equals_the_column_solves(monkeypatch):
    # The transpiration response (potential_jet.PotentialJet.response) taken from the inverse of the trailing
    # block of a factorisation with the jet's cells ordered last equals the one taken by a solve per column,
    # and so do the M0 changes by the adjoint and by the direct solves (derived identities; round-off apart)
    import axibore.solvers.potential_jet as PJ
    from axibore.geometry.jet import trial_jet
    from axibore.mesh import target_size
    from axibore.outlets.freejet import _JetProblem

    case = _case(SLOT)
    h = target_size(case.profile, case.mesh.size, case.mesh.level)
    shape, theta = trial_jet(case.profile, h)
    jp = _JetProblem(case, case.profile, shape, theta, PJ.PotentialJet, h)
    field = jp.evaluate(jp.unknowns(theta), None)["field"]
    g = np.random.default_rng(1).normal(size=(len(jp.jet_faces), 7))
    taken = []
    inverse = PJ.PotentialJet._interface_inverse
    monkeypatch.setattr(PJ.PotentialJet, "_interface_inverse",
                        lambda self, *a: taken.append(inverse(self, *a)) or taken[-1])
    out = {}
    for label, columns in (("inverse", 1), ("solves", 10**9)):
        monkeypatch.setattr(PJ, "INVERSE_MIN_COLUMNS", columns)
        out[label] = jp.service.response(field, g)
    assert len(taken) == 1 and taken[0] is not None  # the inverse path was taken, once (not a quiet fall-back)
    near = jp.evaluate(jp.unknowns(theta) + 1e-7, None, near=jp.evaluate(jp.unknowns(theta), None))["field"]
    with pytest.raises(ValueError, match="no factorisation"):  # a field solved from a near one gives no response
        jp.service.response(near, g)
    scale = np.max(np.abs(out["solves"][0]))
    assert np.max(np.abs(out["inverse"][0] - out["solves"][0])) < 1e-10 * scale
    # M0 against a direct solve of the same data (not the adjoint): x = K^-1 R g
    x = field.solve_rhs(field.R_jet @ g)
    np.testing.assert_allclose(out["solves"][1], field.dmomentum0 @ x, rtol=1e-9, atol=1e-12 * np.abs(field.dmomentum0 @ x).max())
