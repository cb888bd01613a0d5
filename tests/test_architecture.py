"""The pipeline's seams: solver registry, executors, fall-backs recorded, no global library state."""

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from axibore.case import case_from_dict, load_case
from axibore.run import solve_case

CASES = Path(__file__).parents[1] / "cases"


def small_reducer():
    return load_case(CASES / "water_main_reducer.toml").with_updates({"mesh.size": 0.3})


def test_registry_drives_the_run():
    from axibore.solvers import SOLVERS

    assert SOLVERS["potential"].fluids == ("liquid",)
    r = solve_case(small_reducer())
    assert r.flow.solver == "potential" and r.flow.record.solver == "potential"
    # the general result: mass flow from the face fluxes equals rho Q of the case (0.5 m^3/s)
    assert r.flow.mass_flow == pytest.approx(r.case.fluid.density * 0.5, rel=1e-12)
    assert r.flow.density.shape == (r.mesh.n_cells,)


def test_process_pool_gives_the_serial_numbers(tmp_path):
    from axibore.study.gridstudy import run_grid_study
    from axibore.study.runner import executor

    case = small_reducer()
    with executor(1) as ex:
        serial = run_grid_study(case, [0, 1], tmp_path / "serial", executor=ex)
    with executor(2) as ex:
        pooled = run_grid_study(case, [0, 1], tmp_path / "pooled", executor=ex)
    for a, b in zip(serial.levels, pooled.levels):
        assert a.summary["mesh"]["cells"] == b.summary["mesh"]["cells"]
        for key in ("wall_x_N", "momentum_x_N"):
            assert a.summary["forces"][key] == pytest.approx(b.summary["forces"][key], rel=1e-12)
    saved = json.loads((tmp_path / "pooled" / "gridstudy.json").read_text())
    assert [lv["level"] for lv in saved["levels"]] == [0, 1]


def test_linear_fallback_is_said_and_recorded(tmp_path, capsys):
    from axibore.cli import main

    # an iterative solve given one short restart cycle cannot reach 1e-12: SuperLU takes over
    case = CASES / "water_main_reducer.toml"
    text = case.read_text() + '\n[solver]\nlinear = "iterative"\ntolerance = 1e-12\ngmres_restart = 5\ngmres_max_restarts = 1\n'
    path = tmp_path / "forced.toml"
    path.write_text(text)
    assert main(["run", str(path), "--out", str(tmp_path / "run")]) == 0
    printed = capsys.readouterr().out
    s = json.loads((tmp_path / "run" / "summary.json").read_text())
    assert s["solver"]["method"] == "superlu"
    assert "did not reach the tolerance 1e-12" in s["solver"]["fallback"]
    assert s["solver"]["fallback"] in printed
    assert s["solver"]["settings"]["gmres_restart"] == 5
    hist = np.genfromtxt(tmp_path / "run" / "solver_history.csv", delimiter=",", names=True, comments="#")
    assert hist["residual"][-1] == pytest.approx(s["solver"]["residual"], rel=1e-6)


def test_caller_gmsh_session_is_left_open():
    import gmsh

    from axibore.mesh import mesh_profile

    gmsh.initialize(readConfigFiles=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.add("callers-model")
        gmsh.option.setNumber("Mesh.Algorithm", 5)
        mesh_profile(small_reducer().profile, 0.3, 0, "triangles")
        assert gmsh.isInitialized()
        assert gmsh.model.getCurrent() == "callers-model"
        assert gmsh.option.getNumber("Mesh.Algorithm") == 5
    finally:
        gmsh.finalize()


def test_plots_use_no_global_matplotlib_state(tmp_path):
    from axibore.cli import main

    out = tmp_path / "run"
    assert main(["run", str(CASES / "water_main_reducer.toml"), "--out", str(out)]) == 0
    # no pyplot (no global figure manager, no backend switch): the plots draw on Figure objects of their own
    code = ("import sys; from axibore.view.plots import all_plots; paths = all_plots(sys.argv[1]); "
            "print('pyplot' if 'matplotlib.pyplot' in sys.modules else 'clean', len(paths))")
    res = subprocess.run([sys.executable, "-c", code, str(out)], capture_output=True, text=True, check=True)
    assert res.stdout.split() == ["clean", "5"]  # wall pressure, axial force, wall layer, mesh, speed


def test_planar_mesh_measures():
    # a planar section: measures per unit depth, no factor of revolution
    from axibore.mesh import mesh_loop
    from axibore.geometry import Segment

    loop = [("axis", Segment((0, 0), (2, 0))), ("outlet", Segment((2, 0), (2, 1))),
            ("wall", Segment((2, 1), (0, 1))), ("inlet", Segment((0, 1), (0, 0)))]
    m = mesh_loop(loop, 0.25, "quads", planar=True)
    assert m.revolution == 1.0
    assert m.cell_volume.sum() == pytest.approx(2.0, rel=1e-12)
    assert m.face_area[m.boundary["inlet"]].sum() == pytest.approx(1.0, rel=1e-12)
