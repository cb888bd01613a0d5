"""Joint loads and the jet reaction against the momentum theorem and the flange end force."""

import math
from pathlib import Path

import pytest

from axibore.case import CaseError, case_from_dict, load_case
from axibore.run import solve_case

CASES = Path(__file__).parents[1] / "cases"


def reducer_with_joints(**joint_kw):
    base = load_case(CASES / "water_main_reducer.toml")
    data = dict(base.data)
    data.pop("flange", None)
    data["joint"] = [{"name": "inlet flange", "at": "inlet", "gasket_diameter": "680 mm", "bolts": 20},
                     {"name": "outlet flange", "at": "outlet", "gasket_diameter": "470 mm", "bolts": 16}]
    return case_from_dict(data, source="r.toml")


def test_reducer_joint_loads_from_the_momentum_theorem():
    r = solve_case(reducer_with_joints())
    s = r.summary()
    inlet, outlet = s["joints"]
    # momentum theorem between uniform planes (exact inviscid): the whole reducer carries
    # p1 A1 - p2 A2 + rho Q (V1 - V2); with Bernoulli p2 = p1 + rho (V1^2 - V2^2) / 2
    rho, Q, p1 = r.case.fluid.density, 0.5, 10e5
    A1, A2 = math.pi * 0.3**2, math.pi * 0.2**2
    V1, V2 = Q / A1, Q / A2
    p2 = p1 + 0.5 * rho * (V1**2 - V2**2)
    F = p1 * A1 - p2 * A2 + rho * Q * (V1 - V2)
    annulus = p1 * math.pi * (0.68**2 - 0.6**2) / 4
    assert inlet["part_force_N"] == pytest.approx(F, rel=2e-5)
    assert inlet["load_N"] == pytest.approx(F + annulus, rel=2e-5)
    assert inlet["per_bolt_N"] == pytest.approx((F + annulus) / 20, rel=2e-5)
    # hydrostatic end force on the gasket circle, H = (pi/4) G^2 P = 0.785 G^2 P (derived: the pressure on the
    # circle's area; the form flange rules use, common practice)
    assert inlet["end_force_N"] == pytest.approx(0.785398 * 0.68**2 * p1, rel=1e-6)
    # nothing of the model lies beyond the outlet joint: the gasket annulus at the outlet pressure
    assert outlet["part_force_N"] == 0.0
    assert outlet["load_N"] == pytest.approx(p2 * math.pi * (0.47**2 - 0.4**2) / 4, rel=1e-5)
    assert "end force" in outlet["note"]
    assert s["forces"]["per_bolt_N"] == inlet["per_bolt_N"] and s["forces"]["jet_reaction_N"] is None
    assert any("EN 1591-1" in c for c in s["cautions"])


def test_joint_in_the_middle_carries_only_the_part_beyond(nozzle_dict):
    nozzle_dict["joint"] = [{"at": "200 mm", "gasket_diameter": "60 mm", "bolts": 4}]
    r = solve_case(case_from_dict(nozzle_dict))
    j = r.summary()["joints"][0]
    w = r.tables["wall"]
    assert j["part_force_N"] == pytest.approx(w.axial_force[w.x > 0.2].sum(), rel=1e-12)
    assert 0 < j["part_force_N"] < r.forces.wall_x_N


def test_nozzle_jet_reaction(nozzle_dict):
    # a nozzle to atmosphere: the jet reaction is mdot V2 with V2 from Bernoulli and continuity
    # (derived: V2 = sqrt(2 dp / (rho (1 - (A2/A1)^2))), exit pressure 0 gauge)
    r = solve_case(case_from_dict(nozzle_dict))
    rho = r.case.fluid.density
    beta2 = (25 / 80) ** 4
    V2 = math.sqrt(2 * 7e5 / (rho * (1 - beta2)))
    A2 = math.pi * 0.0125**2
    assert r.summary()["forces"]["jet_reaction_N"] == pytest.approx(rho * A2 * V2**2, rel=2e-3)


def test_joint_input_errors(nozzle_dict):
    nozzle_dict["joint"] = [{"at": "2 m", "gasket_diameter": "60 mm"}, {"at": "inlet", "gasket_diameter": "50 mm"}]
    with pytest.raises(CaseError) as exc:
        case_from_dict(nozzle_dict, source="n.toml")
    lines = exc.value.lines()
    assert any(line.startswith("n.toml: joint[1].at: expected a position on the bore") for line in lines)
    assert any(line.startswith("n.toml: joint[2].gasket_diameter: expected at least the bore diameter at the joint (80 mm)")
               for line in lines)
    nozzle_dict["joint"] = [{"at": "upstream"}]
    with pytest.raises(CaseError) as exc:
        case_from_dict(nozzle_dict, source="n.toml")
    assert 'joint[1].at: expected "inlet", "outlet" or an axial position x' in str(exc.value)
