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
    # wall pressure, axial force, wall layer, mesh, speed, wall Cp against x/D, wall pressure unrolled along the wall
    assert res.stdout.split() == ["clean", "7"]


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


# ---- the layers point one way -------------------------------------------------------------------
# Each package or module of axibore sits in one layer; a module imports only from its own layer or
# from layers below it (DEVELOPERS.md, "Architecture"). A solver never reads a case file, an outlet
# model never draws, the output layer never drives a view.
LAYERS = (
    ("names", "units", "fluids", "safety", "textin", "version", "estimate", "arrays"),
    ("geometry",),
    ("mesh",),
    ("numerics",),
    ("solvers",),
    ("case", "budget"),
    ("outlets",),
    ("viscous",),
    ("post",),
    ("io",),
    ("view", "describe"),
    ("run",),
    ("study", "verification"),
    ("cli", "__init__", "__main__"),
)
SRC = Path(__file__).parents[1] / "src" / "axibore"
MODULES = {".".join(p.relative_to(SRC.parent).with_suffix("").parts).removesuffix(".__init__") for p in SRC.rglob("*.py")}


def _imports():
    """(importing module, its top-level part, imported module, inside a function?) over the package."""
    import ast

    out = []
    for path in sorted(SRC.rglob("*.py")):
        parts = list(path.relative_to(SRC.parent).with_suffix("").parts)
        package = parts[-1] == "__init__"
        if package:
            parts = parts[:-1]
        name = ".".join(parts)
        tree = ast.parse(path.read_text())
        in_function = {id(n) for f in ast.walk(tree) if isinstance(f, (ast.FunctionDef, ast.AsyncFunctionDef))
                       for n in ast.walk(f)}
        for node in ast.walk(tree):
            targets = []
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = parts if package else parts[:-1]
                    base = base[: len(base) - (node.level - 1)]
                    mod = ".".join(base + ([node.module] if node.module else []))
                else:
                    mod = node.module or ""
                # "from pkg import name": the module pkg.name where there is one, else pkg
                targets = [mod + "." + a.name if mod + "." + a.name in MODULES else mod for a in node.names]
            elif isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            for t in targets:
                if t == "axibore" or t.startswith("axibore."):
                    me = parts[1] if len(parts) > 1 else "__init__"
                    out.append((name, me, t, id(node) in in_function))
    return out


def test_imports_point_down_the_layers():
    layer = {m: i for i, group in enumerate(LAYERS) for m in group}
    upward, unknown = [], set()
    for name, me, target, _ in _imports():
        top = target.split(".")[1] if "." in target else "__init__"
        if me not in layer or top not in layer:
            unknown.add(me if me not in layer else top)
        elif layer[top] > layer[me]:
            upward.append(f"{name} imports {target}")
    assert not unknown, f"modules in no layer (add them to LAYERS and DEVELOPERS.md): {sorted(unknown)}"
    assert not upward, "imports that run up a layer:\n" + "\n".join(upward)


def test_no_project_imports_hidden_in_functions():
    # an import inside a function hides a dependency (usually an upward one); only the command line
    # (which loads one command's modules) and the package's facade import lazily
    hidden = [f"{name} imports {t} inside a function" for name, me, t, inner in _imports()
              if inner and me not in ("cli", "__init__") and t.split(".")[1:2] != name.split(".")[1:2]]
    assert not hidden, "\n".join(hidden)


def test_no_import_cycles():
    # module to module (a package's __init__ counts as the package): no circle of imports, not even
    # inside a layer; a circle means two modules that are one, or a piece that belongs lower down
    graph: dict[str, set[str]] = {}
    for name, _, target, _ in _imports():
        if target != name:
            graph.setdefault(name, set()).add(target)
    cycles, state = [], {}

    def visit(node, path):
        state[node] = "open"
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == "open":
                cycles.append(" -> ".join(path[path.index(nxt):] + [nxt]))
            elif nxt not in state:
                visit(nxt, path + [nxt])
        state[node] = "done"

    for node in sorted(graph):
        if node not in state:
            visit(node, [node])
    assert not cycles, "import cycles:\n" + "\n".join(cycles)


# ---- a solver is one module and one register call -----------------------------------------------
def stub_solve(case, profile, mesh, progress=None):
    """A registered solver for the test: the potential solver's flow, tagged, scaled by the stub's own
    [solver] key ``scale`` (so the test can see that the key reached it)."""
    from dataclasses import replace

    from axibore.solvers.potential import solve

    res = solve(case, profile, mesh, progress)
    return replace(res, solver="stub", record=replace(res.record, solver="stub"),
                   pressure=res.pressure * case.solver_settings.scale)


def test_a_registered_solver_runs_end_to_end(tmp_path, capsys):
    from pydantic import BaseModel, ConfigDict, Field

    from axibore.budget import bytes_per_cell
    from axibore.case import CaseError
    from axibore.cli import main
    from axibore.solvers import SOLVERS, register, unregister

    class Settings(BaseModel):
        model_config = ConfigDict(extra="forbid")
        kind: str = "stub"
        scale: float = Field(1.0, gt=0)

    register("stub", f"{__name__}:stub_solve", ("liquid",), "a test solver", outlets=("pipe", "exit-plane"),
             bytes_per_cell=1234.0, settings=Settings)
    try:
        base = load_case(CASES / "water_main_reducer.toml").with_updates({"mesh.size": 0.3})
        ref = solve_case(base)
        case = base.with_updates({"solver.kind": "stub", "solver.scale": 2.0})
        assert bytes_per_cell("stub") == 1234.0  # the budget reads the entry
        res = solve_case(case)
        assert res.flow.solver == "stub" and res.summary()["solver"]["kind"] == "stub"
        assert res.flow.pressure == pytest.approx(2.0 * ref.flow.pressure)  # its own key reached it
        # its keys are validated with the case file's messages; what it cannot do is refused
        with pytest.raises(CaseError, match="scale"):
            base.with_updates({"solver.kind": "stub", "solver.scale": -1.0})
        with pytest.raises(CaseError, match="tolerance"):
            base.with_updates({"solver.kind": "stub", "solver.tolerance": 1e-9})
        text = (CASES / "water_main_reducer.toml").read_text() + '\n[solver]\nkind = "stub"\n[mesh]\nsize = 0.3\n'
        path = tmp_path / "stub.toml"
        path.write_text(text)
        assert main(["run", str(path), "--out", str(tmp_path / "run")]) == 0
        assert json.loads((tmp_path / "run" / "summary.json").read_text())["solver"]["kind"] == "stub"
        path.write_text((CASES / "tank_drain_orifice.toml").read_text() + '\n[solver]\nkind = "stub"\n')
        capsys.readouterr()
        assert main(["check", str(path)]) == 0  # check says what run will refuse ...
        assert 'outlet.kind = "free-jet" with the solver "stub"' in capsys.readouterr().out
        assert main(["run", str(path), "--out", str(tmp_path / "free")]) == 2  # ... and run refuses it
        assert 'outlet.kind = "free-jet" with the solver "stub"' in capsys.readouterr().err
    finally:
        unregister("stub")
    assert "stub" not in SOLVERS


def test_countdown_of_an_iteration():
    # a residual falling by 10 a step from 1 to 1e-2 with 2 s a step: to 1e-6, four more steps, 8 s
    from axibore.estimate import Countdown, remaining_time

    ticks = iter([0.0, 2.0, 4.0, 6.0, 8.0])
    c = Countdown(1e-6, clock=lambda: next(ticks))
    slow = Countdown(1e-6, max_steps=5, clock=iter([0.0, 1.0, 2.0]).__next__)
    assert slow.update(1.0) == "" and slow.update(0.9) == ""
    assert slow.update(0.81) == ", too slow to reach 1e-06 in the 2 steps left"  # 131 more needed
    assert c.update(1.0) == "" and c.update(0.1) == ""
    assert c.update(1e-2) == ", about 4 more steps (8 s)"
    c.update(2e-2)
    assert c.update(0.2) == ", not converging at the moment"  # above where it was two steps before
    # grid levels of 10 s, each next about twice: 20 + 40 s on one worker
    assert remaining_time([5.0, 10.0], 2, growth=2.0) == ", about 60 s left"
