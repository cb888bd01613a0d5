"""Gas cases through the whole pipeline (registry, summary, run directory): each check names its source."""

import json
import math
from pathlib import Path

import meshio
import numpy as np
import pytest

from axibore.case import CaseError, case_from_dict, load_case
from axibore.cli import main
from axibore.run import solve_case

CASES = Path(__file__).parents[1] / "cases"


def kliegel_levine_cd(rc_ratio: float, g: float) -> float:
    """Kliegel & Levine (1969), AIAA J. 7(7), correcting Hall (1962): throat discharge coefficient."""
    L = rc_ratio + 1.0
    return 1 - (g + 1) / L**2 * (1 / 96 - (8 * g - 27) / (2304 * L) + (754 * g**2 - 757 * g + 3615) / (276480 * L**2))


def test_cd_nozzle_demo_discharge_coefficient(tmp_path):
    # the shipped converging-diverging demo: circular-arc throat, Rc/r* = 2, gamma 1.4, choked
    out = tmp_path / "cd"
    assert main(["run", str(CASES / "air_test_nozzle_cd.toml"), "--out", str(out)]) == 0
    s = json.loads((out / "summary.json").read_text())
    cd = kliegel_levine_cd(2.0, 1.4)
    assert cd == pytest.approx(0.99618, abs=5e-6)  # the value SOURCES lists for this formula
    assert s["flow"]["discharge_coefficient"] == pytest.approx(cd, abs=1e-3)  # within 0.1 %
    assert s["flow"]["choked"] is True and s["solver"]["converged"] is True
    # the ideal mass flow: mdot sqrt(T0) / (p0 A*) = 0.040415 for air (NACA Report 1135, R = 287.05),
    # through the exact throat (r* = 10 mm at the bottom of the arc): within the 1.2e-5 of the
    # constant's rounding (the minimum of the sampled wall was 6.2e-5 too large here)
    p0, T0, At = 6e5 + 101325.0, 293.15, math.pi * 0.01**2
    assert s["flow"]["ideal_mass_flow_kg_s"] == pytest.approx(0.040415 * p0 * At / math.sqrt(T0), rel=2e-5)
    assert abs(s["forces"]["reconciliation_rel"]) < 2e-3
    assert s["pressure"]["inlet_absolute_Pa"] == pytest.approx(s["pressure"]["inlet_gauge_Pa"] + 101325.0)
    m = meshio.read(out / "fields.vtu")
    mach = np.concatenate(m.cell_data["mach"])
    assert mach.max() == pytest.approx(s["flow"]["mach_max"]) and mach.max() > 1.0
    assert {"density_kg_m3", "temperature_K"} <= set(m.cell_data)
    assert any("sonic or supersonic" in w for w in s["warnings"])


def test_subsonic_converging_nozzle_mass_flow_matches_quasi_1d():
    # a gently converging cosine-like contraction at p_b/p0 = 0.85 (subsonic): quasi-1D isentropic
    # flow through the exit area (exact for uniform planes) within 0.3 %
    from axibore.solvers import onedim_gas as q1d

    pts = [[f"{80 * t:.6f} mm", f"{14 + 6 * 0.5 * (1 + math.cos(math.pi * t)):.6f} mm"] for t in np.linspace(0, 1, 21)]
    data = {"fluid": {"kind": "ideal-gas", "gas": "air"},
            "bore": {"template": "segments", "start": pts[0], "segment": [{"to": p} for p in pts[1:]] + [{"to": ["110 mm", "14 mm"]}]},
            "inlet": {"total_pressure": f"{101325.0 / 0.85 - 101325.0:.3f} Pa", "total_temperature": "15 degC"},
            "outlet": {"kind": "pipe"}, "mesh": {"size": 0.15}}
    r = solve_case(case_from_dict(data))
    p0 = 101325.0 / 0.85
    Me = float(q1d.mach_from_pressure_ratio(0.85, 1.4))
    ideal = float(q1d.mass_flux(Me, p0, 288.15, 287.05, 1.4)) * math.pi * 0.014**2
    assert r.flow.mass_flow == pytest.approx(ideal, rel=3e-3)
    assert r.summary()["flow"]["choked"] is False


def test_euler_with_a_liquid_is_refused(nozzle_dict):
    nozzle_dict["solver"] = {"kind": "euler"}
    with pytest.raises(CaseError) as exc:
        case_from_dict(nozzle_dict, source="n.toml")
    assert 'n.toml: solver.kind: "euler" is for gases; a liquid takes "potential"' in str(exc.value)


def test_a_run_that_does_not_converge_says_so(tmp_path, capsys):
    text = (CASES / "air_test_nozzle_cd.toml").read_text() + "\n[solver]\nmax_steps = 2\n"
    path = tmp_path / "short.toml"
    path.write_text(text)
    out = tmp_path / "run"
    assert main(["run", str(path), "--out", str(out)]) == 1
    s = json.loads((out / "summary.json").read_text())
    assert s["solver"]["converged"] is False and s["solver"]["iterations"] == 2
    assert "not converged" in s["solver"]["criterion"]
    assert "NOT CONVERGED" in capsys.readouterr().out
    assert any("did not converge" in w for w in s["warnings"])
    # no figure of merit from an iterate: the discharge coefficient is withheld, and the page says so
    assert s["flow"]["discharge_coefficient"] is None and "flow.discharge_coefficient" in s["solver"]["withheld"]
    assert "Not a result" in (out / "report.html").read_text()
    # a grid study over such levels leaves them out and exits 1
    assert main(["gridstudy", str(path), "--levels", "0,1", "--out", str(tmp_path / "study")]) == 1
    study = json.loads((tmp_path / "study" / "gridstudy.json").read_text())
    assert [lv["ok"] for lv in study["levels"]] == [False, False] and "not converged" in study["levels"][0]["error"]


def test_air_demo_case_is_accepted():
    c = load_case(CASES / "air_blowoff_nozzle.toml")
    assert c.solver_kind == "euler" and not c.unsupported()


@pytest.mark.slow
def test_cd_nozzle_discharge_coefficient_converges_under_refinement(tmp_path):
    from axibore.study.gridstudy import run_grid_study

    study = run_grid_study(load_case(CASES / "air_test_nozzle_cd.toml"), [0, 1, 2], tmp_path)
    r = study.results["discharge_coefficient"]
    cd = kliegel_levine_cd(2.0, 1.4)
    errors = [abs(v - cd) for v in r.phi]  # fine to coarse
    assert errors[0] < errors[1] < errors[2]
    assert r.extrapolated == pytest.approx(cd, abs=2e-5)


def test_a_total_pressure_not_above_the_back_pressure_is_refused(tmp_path, capsys):
    # nothing drives a flow into the bore: the run stops with exit 2 and names the key (it divided
    # by the zero mass flow of the solve before)
    text = (CASES / "air_blowoff_nozzle.toml").read_text().replace('total_pressure = "6 bar"', 'total_pressure = "-0.1 bar"')
    path = tmp_path / "no_drive.toml"
    path.write_text(text)
    assert main(["run", str(path), "--out", str(tmp_path / "run")]) == 2
    assert "inlet.total_pressure" in capsys.readouterr().err


@pytest.mark.parametrize("line, key, words", [
    ('total_temperature = "1e30 K"', "inlet.total_temperature", "expected 50 to 3000 K"),
    ('total_temperature = "10 K"', "inlet.total_temperature", "expected 50 to 3000 K"),
    ('total_pressure = "0 bar"', "inlet.total_pressure", "more than the back pressure"),
    ('total_pressure = "5000 bar"', "inlet.total_pressure", "at most 1000 bar absolute"),
])
def test_absurd_gas_inlet_is_refused_by_check(tmp_path, capsys, line, key, words):
    import re

    name = line.split(" =")[0]
    text = re.sub(rf"^{name} = .*$", line, (CASES / "air_test_nozzle_cd.toml").read_text(), flags=re.M)
    path = tmp_path / "gas.toml"
    path.write_text(text)
    for command in ("check", "run"):
        assert main([command, str(path), "--out", str(tmp_path / "r")] if command == "run" else [command, str(path)]) == 2
        err = capsys.readouterr().err
        assert f"gas.toml: {key}:" in err and words in err, err
    assert not (tmp_path / "r").exists()


def test_underexpanded_exit_is_said_and_the_jet_reaction_names_its_pressures():
    # the cd test nozzle at its shipped back pressure: below the ratio that puts the quasi-1D normal shock
    # in the exit plane (NACA Report 1135, 1953, eqs. 93-99 with the isentropic area ratio), so the flow
    # adjusts outside; the jet reaction is mdot V_e + (p_e - p_a) A_e with the exit pressure it used
    from axibore.run import solve_case

    res = solve_case(load_case(CASES / "air_test_nozzle_cd.toml"))
    s = res.summary()
    assert any("where the quasi-1D normal shock reaches the exit" in w for w in s["warnings"])
    f = s["forces"]
    fl = res.flow
    assert f["jet_reaction_N"] == pytest.approx(fl.mass_flow * fl.outlet_velocity + f["jet_reaction_exit_gauge_Pa"]
                                                * f["jet_reaction_exit_area_m2"], rel=1e-12)
    assert f["jet_reaction_exit_gauge_Pa"] > 0  # under-expanded: the exit pressure above the ambient
