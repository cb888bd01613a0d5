"""`axibore run`: the run directory is complete (or absent), and summary.json keeps its contract."""

import json
from pathlib import Path

import meshio
import numpy as np
import pytest

from axibore.cli import main
from axibore.io.files import read_csv

KEYS = {
    "solver": {"kind", "converged", "iterations", "residual", "mass_imbalance", "seconds"},
    "mesh": {"cells", "level", "h_m"},
    "flow": {"volume_flow_m3_s", "mass_flow_kg_s", "inlet_mean_velocity_m_s", "outlet_mean_velocity_m_s", "max_speed_m_s"},
    "pressure": {"inlet_gauge_Pa", "outlet_gauge_Pa", "min_wall_gauge_Pa", "min_wall_x_m", "min_wall_absolute_Pa", "cavitation_index"},
    "forces": {"wall_x_N", "centerbody_x_N", "momentum_x_N", "onedim_x_N", "reconciliation_rel", "per_bolt_N"},
    "onedim": {"force_dev_rel", "wall_pressure_max_dev", "breakdown_x_ranges_m", "outlet_momentum_factor", "outlet_energy_factor"},
}


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("runs") / "demo"
    assert main(["run", "--out", str(out)]) == 0
    return out


def test_run_directory_contents(demo_run):
    for name in ("case.toml", "fields.vtu", "wall.csv", "summary.json"):
        assert (demo_run / name).stat().st_size > 0
    assert not list(demo_run.parent.glob(".*partial"))
    # compact (issue 22): compressed binary VTK, nothing written twice (the mesh is in fields.vtu, the
    # revolved load points in wall_load.vtu); the demo's run directory was 36 MB before
    assert not (demo_run / "mesh.msh").exists() and not (demo_run / "wall_load_points.csv").exists()
    assert b'compressor="vtkZLibDataCompressor"' in (demo_run / "fields.vtu").read_bytes()[:2000]
    assert sum(p.stat().st_size for p in demo_run.rglob("*") if p.is_file()) < 8e6


def test_summary_contract(demo_run):
    s = json.loads((demo_run / "summary.json").read_text())
    assert s["schema"] == 1 and isinstance(s["title"], str) and isinstance(s["warnings"], list)
    for section, keys in KEYS.items():
        assert keys <= set(s[section]), section
    f = s["forces"]
    # the inlet flange (G = 110 mm, 4 bolts) carries the whole wall force plus the 7 bar on the gasket
    # annulus between the 80 mm bore and G
    annulus = s["pressure"]["inlet_gauge_Pa"] * np.pi * (0.11**2 - 0.08**2) / 4
    assert s["pressure"]["inlet_gauge_Pa"] == pytest.approx(7e5, rel=1e-9)
    assert f["per_bolt_N"] == pytest.approx((f["wall_x_N"] + annulus) / 4, rel=1e-12)
    assert abs(f["reconciliation_rel"]) < 1e-3


def test_wall_csv_integrates_to_wall_force(demo_run):
    s = json.loads((demo_run / "summary.json").read_text())
    w = read_csv(demo_run / "wall.csv")
    F = 2 * np.pi * np.sum(w["p_gauge_Pa"] * w["n_x"] * w["r_m"] * w["face_length_m"])
    assert F == pytest.approx(s["forces"]["wall_x_N"], rel=1e-8)
    assert w["cumulative_force_x_N"][-1] == pytest.approx(s["forces"]["wall_x_N"], rel=1e-8)
    assert np.all(np.diff(w["s_m"]) >= 0)


def test_fields_vtu(demo_run):
    # the demo: seawater 1025 kg/m^3 (common-practice default), 7 bar gauge inlet, 80 mm inlet bore
    m = meshio.read(demo_run / "fields.vtu")
    s = json.loads((demo_run / "summary.json").read_text())
    assert sum(len(c.data) for c in m.cells) == s["mesh"]["cells"]
    vel = np.concatenate(m.cell_data["velocity_m_s"])
    speed = np.concatenate(m.cell_data["speed_m_s"])
    p = np.concatenate(m.cell_data["p_gauge_Pa"])
    assert np.allclose(speed, np.hypot(vel[:, 0], vel[:, 1]), rtol=1e-12)
    # Bernoulli in every cell (irrotational flow): p + rho q^2 / 2 = the inlet head p1 + rho V1^2 / 2,
    # with V1 from the volume flow and the inlet area pi (0.04 m)^2
    V1 = s["flow"]["volume_flow_m3_s"] / (np.pi * 0.04**2)
    head = 7e5 + 0.5 * 1025.0 * V1**2
    assert np.allclose(p + 0.5 * 1025.0 * speed**2, head, rtol=1e-9)
    # continuity: the exit mean velocity times the 25 mm exit area is the volume flow
    assert s["flow"]["outlet_mean_velocity_m_s"] * np.pi * 0.0125**2 == pytest.approx(s["flow"]["volume_flow_m3_s"], rel=1e-9)


def test_resolved_case_reloads(demo_run):
    from axibore.case import load_case

    c = load_case(demo_run / "case.toml")
    assert c.bore.exit_diameter == pytest.approx(0.025)
    assert c.inlet.pressure == pytest.approx(7e5)


def test_failed_run_leaves_nothing(tmp_path):
    case = tmp_path / "expander.toml"
    case.write_text('[fluid]\nkind = "water"\ntemperature = "15 degC"\n[bore]\ntemplate = "reducer"\n'
                    'inlet_diameter = "120 mm"\noutlet_diameter = "200 mm"\nhalf_angle = "8 deg"\n'
                    'inlet_length = "180 mm"\noutlet_length = "300 mm"\n[inlet]\npressure = "2 bar"\n[mesh]\nsize = 0.3\n')
    out = tmp_path / "run"
    assert main(["run", str(case), "--out", str(out)]) == 2
    assert not out.exists() and not list(tmp_path.glob(".run*"))


def test_report_failure_keeps_the_numbers(tmp_path, monkeypatch):
    import axibore.view.report as report

    def broken(*args, **kwargs):
        raise RuntimeError("no fonts")

    monkeypatch.setattr(report, "build_report", broken)
    out = tmp_path / "run"
    assert main(["run", str(Path(__file__).parents[1] / "cases" / "water_main_reducer.toml"),
                 "--out", str(out)]) == 0
    assert (out / "summary.json").exists() and not (out / "report.html").exists()
    assert "no fonts" in (out / "report_error.txt").read_text()


def test_resolved_case_reruns_to_the_same_numbers(tmp_path):
    """The run's case.toml describes what ran: loaded and run again it gives the same summary."""
    from axibore.case import load_case
    from axibore.run import solve_case

    out = tmp_path / "run"
    case_file = Path(__file__).parents[1] / "cases" / "water_main_reducer.toml"
    assert main(["run", str(case_file), "--out", str(out), "--level", "1"]) == 0
    first = json.loads((out / "summary.json").read_text())
    again = load_case(out / "case.toml")
    assert again.mesh.level == 1 and first["mesh"]["level"] == 1
    second = solve_case(again).summary()
    assert second["mesh"]["cells"] == first["mesh"]["cells"]
    for section in ("flow", "pressure", "forces"):
        for key, value in first[section].items():
            if isinstance(value, float):
                assert second[section][key] == pytest.approx(value, rel=1e-12, abs=1e-12), f"{section}.{key}"


def test_with_updates_revalidates_and_names_the_key(nozzle_dict):
    from axibore.case import CaseError, case_from_dict

    c = case_from_dict(nozzle_dict, source="n.toml")
    c2 = c.with_updates({"bore.half_angle": "20 deg", "mesh.level": 2, "inlet.pressure": 5e5})
    assert c2.bore.half_angle == pytest.approx(np.radians(20)) and c2.mesh.level == 2 and c2.inlet.pressure == 5e5
    assert c.mesh.level == 0 and c.bore.half_angle == pytest.approx(np.radians(15))  # the original is untouched
    assert c2.profile.x_outlet < c.profile.x_outlet  # the profile was built again: a steeper cone is shorter
    with pytest.raises(CaseError) as exc:
        c.with_updates({"bore.half_angle": "2 kg"})
    assert 'n.toml (updated: bore.half_angle): bore.half_angle: expected an angle, got "2 kg" (units: deg, rad)' in str(exc.value)
    with pytest.raises(CaseError) as exc:
        c.with_updates({"mesh.levle": 1})
    assert "mesh.levle: unknown key" in str(exc.value)
    seg = case_from_dict({**nozzle_dict, "bore": {"template": "segments", "start": [0, "40 mm"],
                                                  "segment": [{"to": ["0.1 m", "40 mm"]}, {"to": ["0.2 m", "20 mm"]}]}})
    assert seg.with_updates({"bore.segment[2].to": ["0.2 m", "25 mm"]}).profile.r_outlet == pytest.approx(0.025)
    with pytest.raises(CaseError) as exc:
        seg.with_updates({"bore.segment[3].to": ["0.3 m", "25 mm"]})
    assert "bore.segment[3]: no entry 3 (the case has 2; entries count from 1)" in str(exc.value)


def test_the_hand_answer_is_the_textbook_one():
    # A 100 mm hose converging conically to a 30 mm exit over 200 mm at 10 bar gauge, to air (the
    # classical case of issue 22). By hand (derived, common practice): V2 = sqrt(2 p1 / (rho (1 - (A2/A1)^2)))
    # = 44.9 m/s at rho = 1000; Q = A2 V2; p1 A1 = 7854 N; F = p1 A1 + rho Q (V1 - V2) = 6557 N; the jet
    # reaction rho Q V2. Computed here with the case's water density.
    import math

    from axibore.case import case_from_dict
    from axibore.run import solve_case

    res = solve_case(case_from_dict({
        "fluid": {"kind": "liquid", "density": "1000 kg/m^3", "vapour_pressure": "2.3 kPa"},
        "bore": {"template": "conical", "inlet_diameter": "100 mm", "exit_diameter": "30 mm", "half_angle": "9.93 deg",
                 "inlet_length": "20 mm", "tip_length": "0 mm"},
        "inlet": {"pressure": "10 bar"}, "outlet": {"kind": "exit-plane"}, "mesh": {"size": 0.2}}))
    h = res.hand
    A1, A2 = math.pi * 0.05**2, math.pi * 0.015**2
    V2 = math.sqrt(2e6 / (1000.0 * (1 - (A2 / A1) ** 2)))
    assert h.exit_velocity == pytest.approx(V2, rel=1e-9) and V2 == pytest.approx(44.90, abs=0.01)
    assert h.end_force == pytest.approx(7854.0, abs=0.5)
    assert h.force_x == pytest.approx(6557.0, abs=1.0)
    assert h.jet_reaction == pytest.approx(1000.0 * A2 * V2 * V2, rel=1e-9)
    s = res.summary()["hand_1d"]
    assert s["force_x_N"] == pytest.approx(h.force_x) and "Bernoulli" in s["note"]
