"""Slow studies (run with `pytest -m slow`): grid studies of every liquid demo case at the default
mesh, and the full verification set."""

from pathlib import Path

import pytest

from axibore.case import load_case
from axibore.study.gci import ROUND_OFF
from axibore.study.gridstudy import run_grid_study

CASES = Path(__file__).parents[1] / "cases"


@pytest.mark.slow
@pytest.mark.parametrize("name, rounded", [("deck_wash_nozzle", True), ("water_main_reducer", True), ("spear_nozzle", False)])
def test_demo_grid_studies(name, rounded, tmp_path):
    study = run_grid_study(load_case(CASES / f"{name}.toml"), [0, 1, 2], tmp_path)
    wall = study.results["wall_x_N"]
    assert wall.order is not None or wall.gci_fine <= ROUND_OFF  # converged: the band is the accuracy of the solve
    if rounded:
        assert wall.gci_fine < 0.01
    else:  # the spear needle has a sharp convex corner: flagged with the reason where it does not converge cleanly
        flagged = [k for k, r in study.results.items() if r.flags]
        assert flagged and all(any("sharp convex corner" in n for n in study.notes[k]) for k in flagged if k != "volume_flow_m3_s")


@pytest.mark.slow
def test_full_verification(tmp_path):
    from axibore.study.verify import run_verification

    rows = run_verification(tmp_path, quick=False)
    assert all(r.passed for r in rows), [r.quantity for r in rows if not r.passed]


# --- does the numerical band hold? (issue 24) ---------------------------------------------------------

COVERAGE_CASES = {
    "contoured nozzle": {"fluid": {"kind": "water", "temperature": "15 degC"}, "inlet": {"pressure": "6 bar"},
                         "outlet": {"kind": "exit-plane"},
                         "bore": {"template": "contoured", "inlet_diameter": "80 mm", "exit_diameter": "30 mm",
                                  "contraction_length": "90 mm", "inlet_length": "120 mm", "tip_length": "30 mm"}},
    "reducer": {"fluid": {"kind": "water", "temperature": "15 degC"}, "inlet": {"flow_rate": "0.05 m^3/s", "pressure": "5 bar"},
                "outlet": {"kind": "pipe"},
                "bore": {"template": "reducer", "inlet_diameter": "200 mm", "outlet_diameter": "120 mm",
                         "half_angle": "20 deg", "inlet_length": "300 mm", "outlet_length": "400 mm"}},
    "conical nozzle": {"fluid": {"kind": "water", "temperature": "15 degC"}, "inlet": {"pressure": "4 bar"},
                       "outlet": {"kind": "exit-plane"},
                       "bore": {"template": "conical", "inlet_diameter": "60 mm", "exit_diameter": "25 mm",
                                "half_angle": "15 deg", "inlet_length": "80 mm", "tip_length": "20 mm"}},
    "water main reducer": CASES / "water_main_reducer.toml",
    "air blow-off nozzle": CASES / "air_blowoff_nozzle.toml",
}


@pytest.mark.slow
def test_numerical_band_from_levels_0_to_2_holds_at_level_4(tmp_path, capsys):
    # The band value +- U (U = 2 u_num, the GCI of levels 0-2, cautious where the order is not the design
    # order) must hold the level-4 value (about 16 times the cells of level 0) for at least 9 in 10 of the
    # headline quantities of five cases (liquid exit plane, pipe reducer, a cone with sharp corners, a demo
    # case with joints, a gas nozzle). Measured 2026-12-05: 33 of 34; the miss is the pipe reducer's wall force,
    # whose changes between levels (2e-6 of the value) are at the accuracy of the solve (README).
    import axibore
    from axibore.case import case_from_dict
    from axibore.run import solve_case
    from axibore.study.uncertainty import headline

    held, total, missed = 0, 0, []
    for name, spec in COVERAGE_CASES.items():
        case = load_case(spec) if isinstance(spec, Path) else case_from_dict(spec)
        res = axibore.uncertainty(case, levels=(0, 1, 2), out=tmp_path / name.replace(" ", "_"))
        fine = headline(solve_case(case.with_updates({"mesh.level": 4})).summary())
        for q in res.quantities:
            if q.value is None or q.u_num is None or fine.get(q.name) is None:
                continue
            total += 1
            if abs(fine[q.name] - q.value) <= 2.0 * q.u_num:
                held += 1
            else:
                missed.append(f"{name}: {q.name} {q.value:.7g} +- {2 * q.u_num:.3g}, level 4 {fine[q.name]:.7g}")
    with capsys.disabled():
        print(f"\nnumerical band of levels 0-2 holds at level 4 for {held} of {total} quantities; missed: {missed}")
    assert total >= 10 and len(COVERAGE_CASES) == 5
    assert held >= 0.9 * total, missed
