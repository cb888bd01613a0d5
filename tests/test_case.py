"""Case files: units, schema, every kind of bad input gives a clear error naming file and key."""

import math
import subprocess
import sys

import pytest

from axibore.case import CaseError, case_from_dict, load_case
from axibore.cli import main
from axibore.units import UnitError, to_si


def problems(data):
    with pytest.raises(CaseError) as exc:
        case_from_dict(data, source="x.toml")
    return exc.value.lines()


def test_units_to_si():
    assert to_si("80 mm", "length") == pytest.approx(0.08)
    assert to_si("7 bar", "pressure") == pytest.approx(7e5)
    assert to_si("15 degC", "temperature") == pytest.approx(288.15)
    assert to_si("0.5 m^3/s", "volume_flow") == pytest.approx(0.5)
    assert to_si("31 kg/s", "mass_flow") == pytest.approx(31.0)
    assert to_si("12 deg", "angle") == pytest.approx(math.radians(12))
    assert to_si(0.25, "length") == 0.25  # bare numbers are SI
    with pytest.raises(UnitError, match='expected a length, got "25 kg"'):
        to_si("25 kg", "length")
    with pytest.raises(UnitError, match="expected an angle"):
        to_si("3 mm", "angle")


def test_valid_case_in_si(nozzle_dict):
    c = case_from_dict(nozzle_dict)
    assert c.bore.inlet_diameter == pytest.approx(0.08)
    assert c.bore.half_angle == pytest.approx(math.radians(15))
    assert c.inlet.pressure == pytest.approx(7e5)
    assert c.outlet.ambient_pressure == 101325.0
    assert c.solver_kind == "potential"
    assert c.mesh.size == 0.05 and c.mesh.level == 0


def test_wrong_unit_names_file_and_key(nozzle_dict):
    nozzle_dict["bore"]["exit_diameter"] = "25 kg"
    assert 'x.toml: bore.exit_diameter: expected a length, got "25 kg" (units: mm, m, in)' in problems(nozzle_dict)


def test_trade_units_and_gauge_or_absolute(nozzle_dict):
    # conversion factors: the US gallon is 231 in^3 and the pound-force per square inch
    # 0.45359237 kg x 9.80665 m/s^2 / (0.0254 m)^2, both exact by definition (NIST SP 811, 2008, app. B)
    assert to_si("36 m3/h", "volume_flow") == pytest.approx(0.01, rel=1e-15)
    assert to_si("600 L/min", "volume_flow") == pytest.approx(0.01, rel=1e-15)
    assert to_si("100 US gpm", "volume_flow") == pytest.approx(100 * 231 * 0.0254**3 / 60, rel=1e-15)
    assert to_si("100 psig", "pressure", "gauge") == pytest.approx(689475.729, rel=1e-9)
    assert to_si("8 barg", "pressure", "gauge") == to_si("8 bar(g)", "pressure", "gauge") == 8e5
    assert to_si("1.2 bara", "pressure", "absolute") == 1.2e5
    nozzle_dict["inlet"] = {"pressure": "8 bara"}
    assert problems(nozzle_dict) == ['x.toml: inlet.pressure: this key is a gauge pressure, got the absolute pressure "8 bara" '
                                     '(subtract the ambient pressure, or write it in bar or barg)']
    nozzle_dict["inlet"] = {"pressure": "8 bar"}
    nozzle_dict["outlet"]["ambient_pressure"] = "1 barg"
    assert "outlet.ambient_pressure: this key is an absolute pressure" in problems(nozzle_dict)[0]
    nozzle_dict["outlet"]["ambient_pressure"] = "1 bara"
    nozzle_dict["inlet"] = {"flow_rate": "27 m3/h"}
    assert case_from_dict(nozzle_dict).inlet.flow_rate == ("volume", pytest.approx(0.0075))


def test_unit_messages_are_one_line_and_bounded(nozzle_dict):
    for text, expected in (("9**9**9 Pa", 'expected a pressure, got "9**9**9 Pa"'), ("bar", "expected a number followed by a unit"),
                           ("7 furlong", 'expected a pressure, got "7 furlong"'), ("x" * 500, "a text of 500 characters")):
        nozzle_dict["inlet"] = {"pressure": text}
        lines = problems(nozzle_dict)
        assert len(lines) == 1 and expected in lines[0] and "Error" not in lines[0], lines
    nozzle_dict["inlet"] = {"pressure": "7 bar"}
    nozzle_dict["fluid"]["temperature"] = 15
    assert problems(nozzle_dict) == ['x.toml: fluid.temperature: expected a temperature; a bare number is read as kelvin (15 K): '
                                     'write e.g. "15 degC"']


def test_unknown_key_is_an_error(nozzle_dict):
    nozzle_dict["bore"]["tip_lenght"] = "30 mm"
    lines = problems(nozzle_dict)
    assert any(line.startswith("x.toml: bore.tip_lenght: unknown key") for line in lines)


def test_unknown_section_is_an_error(nozzle_dict):
    nozzle_dict["solvr"] = {"kind": "potential"}
    assert any(line.startswith("x.toml: solvr: unknown key") for line in problems(nozzle_dict))


def test_every_problem_is_listed(nozzle_dict):
    nozzle_dict["bore"]["exit_diameter"] = "25 kg"
    nozzle_dict["bore"]["half_angle"] = "95 deg"
    del nozzle_dict["bore"]["tip_length"]
    nozzle_dict["mesh"] = {"cells": "hexagons"}
    lines = problems(nozzle_dict)
    keys = {line.split(": ")[1] for line in lines}
    assert {"bore.exit_diameter", "bore.half_angle", "bore.tip_length", "mesh.cells"} <= keys
    assert any("missing" in line and "bore.tip_length" in line for line in lines)


def test_bare_number_angle_hint(nozzle_dict):
    nozzle_dict["bore"]["half_angle"] = 12
    assert any("read as radians" in line for line in problems(nozzle_dict))


def test_unknown_template(nozzle_dict):
    nozzle_dict["bore"]["template"] = "trumpet"
    assert any(line.startswith("x.toml: bore.template: expected template one of") for line in problems(nozzle_dict))


def test_fluid_rules(nozzle_dict):
    nozzle_dict["fluid"] = {"kind": "water"}
    assert any("fluid.temperature: missing" in line for line in problems(nozzle_dict))
    nozzle_dict["fluid"] = {"kind": "water", "temperature": "15 degC", "gas": "air"}
    assert any("fluid.gas: not used with" in line for line in problems(nozzle_dict))
    nozzle_dict["fluid"] = {"kind": "liquid", "density": "850 kg/m^3"}
    assert any("fluid.vapour_pressure: missing" in line for line in problems(nozzle_dict))
    nozzle_dict["fluid"] = {"kind": "water", "temperature": "300 degC"}
    assert any("fluid.temperature: expected 0.01 to 200 degC" in line for line in problems(nozzle_dict))


def test_inlet_rules(nozzle_dict):
    nozzle_dict["inlet"] = {}
    assert any("inlet: missing" in line for line in problems(nozzle_dict))
    nozzle_dict["inlet"] = {"pressure": "7 bar", "flow_rate": "0.02 m^3/s"}
    nozzle_dict["outlet"] = {"kind": "pipe", "pressure": "1 bar"}
    assert any("outlet.pressure: over-determined" in line for line in problems(nozzle_dict))
    nozzle_dict["inlet"] = {"flow_rate": "3 m"}
    assert any("inlet.flow_rate: expected a volume or mass flow rate" in line for line in problems(nozzle_dict))


def test_over_determined_discharge_is_refused(nozzle_dict, capsys, tmp_path):
    # a nozzle discharging to ambient with both an inlet pressure and a flow rate: the case names both
    # keys and the allowed combinations (a run would report a non-ambient exit pressure otherwise)
    nozzle_dict["inlet"] = {"pressure": "8 bar", "flow_rate": "750 L/min"}
    lines = problems(nozzle_dict)
    assert len(lines) == 1 and lines[0].startswith("x.toml: inlet.flow_rate: over-determined")
    assert "give inlet.pressure or inlet.flow_rate, not both" in lines[0] and 'outlet.kind = "pipe": two of' in lines[0]
    nozzle_dict["inlet"] = {"pressure": "8 bar"}
    nozzle_dict["outlet"] = {"kind": "exit-plane", "pressure": "1 bar"}
    assert "x.toml: outlet.pressure: not used with outlet.kind = \"exit-plane\"" in problems(nozzle_dict)[0]
    # the same through the command line: exit 2, no traceback
    import tomli_w

    nozzle_dict["outlet"] = {"kind": "exit-plane"}
    nozzle_dict["inlet"] = {"pressure": "8 bar", "flow_rate": "750 L/min"}
    path = tmp_path / "both.toml"
    path.write_text(tomli_w.dumps(nozzle_dict))
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "inlet.flow_rate: over-determined" in err and "Traceback" not in err


def test_flow_rate_volume_or_mass(nozzle_dict):
    nozzle_dict["inlet"] = {"flow_rate": "31 kg/s"}
    assert case_from_dict(nozzle_dict).inlet.flow_rate == ("mass", pytest.approx(31.0))
    nozzle_dict["inlet"] = {"flow_rate": "1200 L/min"}
    assert case_from_dict(nozzle_dict).inlet.flow_rate == ("volume", pytest.approx(0.02))


def test_solver_kind_must_be_registered_and_fit_the_fluid(nozzle_dict):
    from axibore.solvers import SOLVERS

    nozzle_dict["solver"] = {"kind": "lattice"}
    assert f"x.toml: solver.kind: expected one of the solvers of this version: {', '.join(SOLVERS)}; got 'lattice'" in problems(nozzle_dict)
    c = case_from_dict({**nozzle_dict, "solver": {}})
    assert c.solver_kind == "potential"


def test_case_without_a_solver_is_refused_by_run(tmp_path, nozzle_dict):
    from axibore.solvers import SOLVERS, register

    register("stub-gas-only", "axibore.solvers.potential:solve", ("gas",), "a registry entry for this test")
    try:  # a liquid case cannot take a gas-only solver
        assert 'x.toml: solver.kind: "stub-gas-only" is for gases; a liquid takes "potential"' in problems(
            {**nozzle_dict, "solver": {"kind": "stub-gas-only"}})
    finally:
        del SOLVERS["stub-gas-only"]
    path = tmp_path / "jet.toml"
    # a free jet is solved for liquids only: a gas free jet is refused, naming the key
    path.write_text('[fluid]\nkind = "ideal-gas"\ngas = "air"\n[bore]\ntemplate = "conical"\ninlet_diameter = "20 mm"\n'
                    'exit_diameter = "8 mm"\nhalf_angle = "20 deg"\ninlet_length = "30 mm"\ntip_length = "6 mm"\n'
                    '[inlet]\ntotal_pressure = "2 bar"\ntotal_temperature = "20 degC"\n[outlet]\nkind = "free-jet"\n')
    assert any('outlet.kind = "free-jet"' in m and '"euler"' in m and '"exit-plane"' in m for m in load_case(path).unsupported())
    assert main(["run", str(path), "--out", str(tmp_path / "run")]) == 2
    assert not (tmp_path / "run").exists()


def test_relative_points_file_resolves_against_case_folder(tmp_path):
    sub = tmp_path / "cases"
    sub.mkdir()
    (sub / "profile.csv").write_text("x,r\n0,0.05\n0.1,0.05\n0.2,0.03\n0.3,0.03\n")
    (sub / "c.toml").write_text(
        '[fluid]\nkind = "water"\ntemperature = "20 degC"\n[bore]\ntemplate = "points"\nfile = "profile.csv"\n'
        '[inlet]\npressure = "2 bar"\n'
    )
    c = load_case(sub / "c.toml")
    assert c.resolve_path(c.bore.file) == sub / "profile.csv"


def test_bad_toml_and_missing_file(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[fluid\nkind=")
    with pytest.raises(CaseError, match="bad.toml: not valid TOML"):
        load_case(bad)
    with pytest.raises(CaseError, match="cannot read the case file"):
        load_case(tmp_path / "nope.toml")


def test_cli_bad_input_exits_2_without_traceback(tmp_path):
    path = tmp_path / "x.toml"
    path.write_text('[fluid]\nkind = "water"\ntemperature = "15 degC"\n[bore]\ntemplate = "conical"\n'
                    'inlet_diameter = "80 mm"\nexit_diameter = "25 kg"\nhalf_angle = "15 deg"\n'
                    'inlet_length = "0.1 m"\ntip_length = "0.03 m"\n[inlet]\npressure = "7 bar"\n')
    proc = subprocess.run([sys.executable, "-m", "axibore.cli", "check", str(path)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert f'{path}: bore.exit_diameter: expected a length, got "25 kg"' in proc.stderr
    assert "Traceback" not in proc.stderr


def test_cli_check_prints_understood_case(capsys):
    assert main(["check"]) == 0
    out = capsys.readouterr().out
    assert "template conical" in out and "80 mm" in out and "7 bar" in out and "ok: the case is valid" in out


def test_demo_cases_load():
    from pathlib import Path

    files = sorted(Path(__file__).parents[1].joinpath("cases").glob("*.toml"))
    assert len(files) >= 3
    for f in files:
        load_case(f)


def test_every_command_has_help(capsys):
    from axibore.cli import COMMANDS

    for name in COMMANDS:
        with pytest.raises(SystemExit) as exc:
            main([name, "--help"])
        assert exc.value.code == 0
    assert "usage" in capsys.readouterr().out


def test_import_is_light():
    code = ("import sys, axibore, axibore.cli, axibore.run; "
            "heavy = [m for m in ('gmsh', 'pyvista', 'matplotlib', 'dask') if m in sys.modules]; print(heavy)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_bad_levels_exit_2(capsys):
    for argv in (["run", "--level", "-1"], ["mesh", "--out", "x", "--level", "99"], ["gridstudy", "--levels", "1"]):
        with pytest.raises(SystemExit) as exc:
            main(argv)
        assert exc.value.code == 2
    assert "level" in capsys.readouterr().err


def test_list_positions_count_from_one(nozzle_dict):
    # schema errors and profile errors name the same segment the same way
    nozzle_dict["bore"] = {"template": "segments", "start": [0, "40 mm"],
                           "segment": [{"to": ["0.1 m", "40 mm"]}, {"to": ["0.2 m", "20 mm"], "radius": "2 kg"}]}
    assert 'x.toml: bore.segment[2].radius: expected a length, got "2 kg" (units: mm, m, in)' in problems(nozzle_dict)
