"""Bad input, misuse and kills: exit 0 or 2 with a message naming the key or file, never a
traceback, never a lost user file, nothing half-written under a real name."""

import os
import signal
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import pytest
import tomli_w
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from axibore.cli import main

CASES = Path(__file__).parents[1] / "cases"
REDUCER = (CASES / "water_main_reducer.toml").read_text()


def write(tmp_path, text, name="c.toml"):
    p = tmp_path / name
    p.write_text(text) if isinstance(text, str) else p.write_bytes(text)
    return p


def run_cli(argv, capsys):
    rc = main(argv)
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err and "Error:" not in cap.err, cap.err
    return rc, cap.out, cap.err


# -- files and --out ---------------------------------------------------------------------------
def test_out_never_replaces_a_users_folder_or_file(tmp_path, capsys):
    case = write(tmp_path, REDUCER + "\n[mesh]\nsize = 0.3\n")
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("keep me")
    rc, _, err = run_cli(["run", str(case), "--out", str(mine)], capsys)
    assert rc == 2 and "did not write (notes.txt" in err and (mine / "notes.txt").read_text() == "keep me"
    afile = tmp_path / "afile"
    afile.write_text("data")
    rc, _, err = run_cli(["run", str(case), "--out", str(afile)], capsys)
    assert rc == 2 and "is a file" in err and afile.read_text() == "data"
    rc, _, err = run_cli(["run", str(case), "--out", "."], capsys)
    assert rc == 2 and "working directory" in err
    assert not list(tmp_path.glob(".*old*")) and not list(tmp_path.glob(".*partial"))
    # an earlier run is replaced; --force writes beside a foreign file and keeps it
    run_dir = tmp_path / "run"
    assert run_cli(["run", str(case), "--out", str(run_dir)], capsys)[0] == 0
    assert run_cli(["run", str(case), "--out", str(run_dir)], capsys)[0] == 0
    assert run_cli(["run", str(case), "--out", str(mine), "--force"], capsys)[0] == 0
    assert (mine / "notes.txt").read_text() == "keep me" and (mine / "summary.json").exists()
    # a symlinked --out writes through the link and leaves nothing hidden behind
    link = tmp_path / "link"
    link.symlink_to(run_dir)
    assert run_cli(["run", str(case), "--out", str(link)], capsys)[0] == 0
    assert (run_dir / "summary.json").exists() and not list(tmp_path.glob(".*"))


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write a read-only folder")
def test_read_only_out(tmp_path, capsys):
    ro = tmp_path / "ro"
    ro.mkdir(mode=0o555)
    rc, _, err = run_cli(["run", str(write(tmp_path, REDUCER)), "--out", str(ro / "run")], capsys)
    assert rc == 2 and "cannot write" in err


def test_impossible_out(tmp_path, capsys):
    rc, _, err = run_cli(["run", str(write(tmp_path, REDUCER)), "--out", "/proc/axibore-run"], capsys)
    assert rc == 2 and "--out" in err


def test_a_full_disk_is_one_line_and_leaves_nothing_half_written(tmp_path, capsys, monkeypatch):
    # The disk fills while fields.vtu is half written: the run names the file and the reason, exits
    # 2, leaves no partial folder, and an earlier run in --out is kept whole.
    import errno

    import axibore.io.files as files

    case = write(tmp_path, REDUCER)
    out = tmp_path / "run"
    assert run_cli(["run", str(case), "--out", str(out)], capsys)[0] == 0
    before = {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()}

    def full(path, *args, **kwargs):
        Path(path).write_bytes(b"<?xml version=\"1.0\"?>\n<VTKFile")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(path))

    monkeypatch.setattr(files, "write_unstructured", full)
    rc, _, err = run_cli(["run", str(case), "--out", str(out), "--force"], capsys)
    assert rc == 2 and "No space left on device" in err and "fields.vtu" in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1
    assert {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()} == before
    assert not list(tmp_path.glob(".*partial*"))


def test_gmsh_failing_on_the_coarse_estimate_mesh_is_not_a_traceback(tmp_path, capsys, monkeypatch):
    # Gmsh refuses some outlines at the coarse size of the cell estimate ("1D mesh cannot be divided
    # by 2") while the real mesh works: `check` falls back to the area estimate and says so.
    import axibore.mesh.build as build

    def refuse(*args, **kwargs):
        raise Exception("1D mesh cannot be divided by 2")

    monkeypatch.setattr(build, "mesh_loop", refuse)
    case = write(tmp_path, REDUCER + '\n[mesh]\ncells = "triangles"\n')
    rc, out, err = run_cli(["check", str(case)], capsys)
    assert rc == 0 and "from the area (a coarse estimate mesh failed: 1D mesh cannot be divided by 2)" in out + err


def test_a_comparison_model_that_cannot_be_built_is_one_line(monkeypatch):
    # The exit-plane model beside a free jet is optional: whatever stops it is a note, the run goes on.
    from axibore.case import load_case
    from axibore.outlets import comparison

    def refuse(*args, **kwargs):
        raise RuntimeError("1D mesh cannot be divided by 2")

    monkeypatch.setattr(comparison.PlaneOutlet, "solve", refuse)
    case = load_case(CASES / "tank_drain_orifice.toml")
    note = comparison.exit_plane_comparison(case, case.profile, None, None)
    assert not note.meaningful and "could not be built or solved (RuntimeError: 1D mesh cannot be divided by 2)" in note.note


# -- input files -------------------------------------------------------------------------------
@pytest.mark.parametrize("content, expected", [
    (b"title = \"x\xff\"\n", "not UTF-8 text (byte 0xff on line 1)"),
    ("a = " + "[" * 2000 + "]" * 2000 + "\n", "nested too deeply"),
    (REDUCER.replace('flow_rate = "0.5 m^3/s"', 'flow_rate = "1e200 m^3/s"'), "inlet.flow_rate: expected a finite"),
    (REDUCER.replace('pressure = "10 bar"', 'pressure = "9**9**9 Pa"'), 'inlet.pressure: expected a pressure, got "9**9**9 Pa"'),
    (REDUCER.replace('pressure = "10 bar"', 'pressure = "bar"'), "inlet.pressure: expected a number followed by a unit"),
    (REDUCER + "\n[mesh]\nlevel = \"4\"\n", "mesh.level"),
    (REDUCER + "\n[mesh]\nsize = 1.0\n", "mesh.size: expected a number of at most 0.5, got 1.0"),
    (REDUCER + "\n[mesh]\nlevel = 2.5\n", "mesh.level: expected a whole number, got 2.5"),
    (REDUCER.replace("bolts = 20", "bolts = true", 1), "joint[1].bolts"),
    (REDUCER.replace('inlet_diameter = "600 mm"', 'inlet_diameter = "1e30 m"'), "bore.inlet_diameter: expected a length below"),
    (REDUCER.replace('half_angle = "10 deg"', 'half_angle = "1e-6 deg"'), "bore.half_angle"),
    (REDUCER.replace('temperature = "12 degC"', 'temperature = "0 degC"'), "fluid.temperature: expected 0.01 to 200 degC"),
])
def test_bad_case_files_name_the_problem(tmp_path, capsys, content, expected):
    rc, _, err = run_cli(["check", str(write(tmp_path, content))], capsys)
    assert rc == 2 and expected in err, err


def test_non_regular_and_huge_files(tmp_path, capsys):
    rc, _, err = run_cli(["check", "/dev/zero"], capsys)
    assert rc == 2 and "not a regular file" in err
    (tmp_path / "big.csv").write_text("x,r\n" + "0,0.1\n" * 30000)
    case = write(tmp_path, '[fluid]\nkind = "water"\ntemperature = "15 degC"\n[bore]\ntemplate = "points"\nfile = "big.csv"\n'
                 '[inlet]\nflow_rate = "0.01 m^3/s"\n')
    rc, _, err = run_cli(["check", str(case)], capsys)
    assert rc == 2 and "bore.file" in err and "more than the 20,000" in err
    case = write(tmp_path, case.read_text().replace("big.csv", "/dev/zero"))
    rc, _, err = run_cli(["check", str(case)], capsys)
    assert rc == 2 and "bore.file" in err and "not a regular file" in err


def test_seawater_runs_at_sea_temperatures(tmp_path, capsys):
    # down to -2 degC without the wall layer (its viscosity, pure water's, starts at 0.01 degC: refused with it)
    text = (CASES / "deck_wash_nozzle.toml").read_text().replace('temperature = "15 degC"', 'temperature = "-1.9 degC"')
    rc, _, err = run_cli(["check", str(write(tmp_path, text))], capsys)
    assert rc == 2 and 'viscous.model = "none"' in err
    text += '\n[viscous]\nmodel = "none"\n'
    assert run_cli(["check", str(write(tmp_path, text))], capsys)[0] == 0
    text = text.replace('"-1.9 degC"', '"-5 degC"')
    rc, _, err = run_cli(["check", str(write(tmp_path, text))], capsys)
    assert rc == 2 and "expected -2 to 40 degC for seawater" in err


# -- runaway work ------------------------------------------------------------------------------
def test_runaway_meshes_are_refused_before_meshing(tmp_path, capsys):
    for extra in ("\n[mesh]\nsize = 1e-9\n", "\n[mesh]\nlevel = 12\n"):
        case = write(tmp_path, REDUCER + extra)
        rc, out, _ = run_cli(["check", str(case)], capsys)
        assert rc == 0 and "`run` will refuse this case" in out
        t = time.perf_counter()
        rc, _, err = run_cli(["run", str(case), "--out", str(tmp_path / "r")], capsys)
        assert rc == 2 and "--max-cells" in err and time.perf_counter() - t < 20
        assert not (tmp_path / "r").exists()


def test_max_cells_cannot_go_past_the_machines_memory(tmp_path, capsys):
    # --max-cells moves the cell limit, but a mesh that needs more memory than the machine has is refused
    # before meshing (before: Gmsh meshed until the kernel killed the process, exit 137, nothing said)
    case = write(tmp_path, REDUCER + "\n[mesh]\nlevel = 12\n")
    t = time.perf_counter()
    rc, _, err = run_cli(["run", str(case), "--max-cells", str(10**12), "--out", str(tmp_path / "r")], capsys)
    assert rc == 2 and "cannot go past the machine's memory" in err and time.perf_counter() - t < 20
    assert not (tmp_path / "r").exists()


# -- command-line misuse -----------------------------------------------------------------------
@pytest.mark.parametrize("argv", [["gridstudy", "--levels", "2,1"], ["gridstudy", "--levels", "1,,2"], ["run", "--level", "x"],
                                  ["view", "nowhere"], ["report", "nowhere"]])
def test_misused_commands(argv, capsys):
    with pytest.raises(SystemExit) if argv[0] == "gridstudy" or "--level" in argv else _no_raise():
        rc = main(argv)
        assert rc == 2
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err


class _no_raise:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False


def test_a_field_file_cut_short_is_named_without_reader_noise(tmp_path, capfd):
    # a fields.vtu cut in half (a full disk, a copy broken off): `view` and `report` name the file and exit 2;
    # the VTK reader (C++, writing to the process's stderr) is never handed the broken file
    case = write(tmp_path, REDUCER + "\n[mesh]\nsize = 0.3\n")
    run_dir = tmp_path / "run"
    assert main(["run", str(case), "--out", str(run_dir)]) == 0
    capfd.readouterr()
    f = run_dir / "fields.vtu"
    f.write_bytes(f.read_bytes()[: f.stat().st_size // 2])
    for argv in (["view", str(run_dir), "--png", str(tmp_path / "v.png")], ["report", str(run_dir)]):
        rc = main(argv)
        cap = capfd.readouterr()
        assert rc == 2 and "fields.vtu: damaged or cut short" in cap.err, cap.err
        assert "Traceback" not in cap.err and "ERROR" not in cap.err and "vtkXML" not in cap.err


@pytest.mark.parametrize("damage", ["garbage", "{}", "[]", "truncated", "no wall.csv", "no fields.vtu"])
def test_report_on_a_damaged_run(tmp_path, capsys, damage):
    case = write(tmp_path, REDUCER + "\n[mesh]\nsize = 0.3\n")
    run_dir = tmp_path / "run"
    assert main(["run", str(case), "--out", str(run_dir)]) == 0
    capsys.readouterr()
    s = run_dir / "summary.json"
    if damage == "garbage":
        s.write_text("not json at all")
    elif damage in ("{}", "[]"):
        s.write_text(damage)
    elif damage == "truncated":
        s.write_text(s.read_text()[:200])
    elif damage == "no wall.csv":
        (run_dir / "wall.csv").unlink()
    else:
        (run_dir / "fields.vtu").unlink()
    rc = main(["report", str(run_dir)])
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err
    if damage in ("garbage", "{}", "[]", "truncated", "no wall.csv"):
        assert rc == 2 and str(run_dir) in cap.err
    else:
        assert rc == 0 and "not kept" in (run_dir / "report.html").read_text()


# -- kills -------------------------------------------------------------------------------------
@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGKILL])
def test_killed_run_leaves_no_half_written_run(tmp_path, sig):
    case = write(tmp_path, REDUCER + "\n[mesh]\nlevel = 2\n")
    out = tmp_path / "run"
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    proc = subprocess.Popen([sys.executable, "-m", "axibore.cli", "run", str(case), "--out", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    for line in proc.stdout:  # kill it in the middle of the solve
        if line.startswith("[mesh]") and "cells" in line:
            break
    proc.send_signal(sig)
    proc.wait(timeout=60)
    assert not out.exists()
    if sig == signal.SIGTERM:
        assert not list(tmp_path.glob(".*partial"))  # cleaned on the way out
        assert "interrupted" in proc.stderr.read()
    # the next run into the same folder removes what a SIGKILL left, says so, and completes
    res = subprocess.run([sys.executable, "-m", "axibore.cli", "run", str(case), "--out", str(out), "--level", "0"],
                         capture_output=True, text=True, env=env)
    assert res.returncode == 0 and (out / "summary.json").exists()
    assert not list(tmp_path.glob(".*partial"))
    if sig == signal.SIGKILL:
        assert "left by an interrupted run" in res.stdout


# -- property-based fuzz of the shipped cases -----------------------------------------------------
def _mutations():
    values = st.one_of(st.integers(-10**6, 10**6), st.floats(allow_nan=True, allow_infinity=True), st.booleans(),
                       st.text(max_size=12), st.sampled_from(["1 bar", "3 mm", "-2 deg", "0 m", "1e300 Pa", "nan m", "12", ""]),
                       st.lists(st.integers(), max_size=3))
    return st.tuples(st.sampled_from(sorted(p.name for p in CASES.glob("*.toml"))), st.integers(0, 60), values)


def _leaf_keys(d, prefix=""):
    for k, v in d.items():
        if isinstance(v, dict):
            yield from _leaf_keys(v, f"{prefix}{k}.")
        else:
            yield f"{prefix}{k}"


def _fuzz_once(tmp_path, capsys, mutation):
    name, pick, value = mutation
    data = tomllib.loads((CASES / name).read_text())
    keys = list(_leaf_keys(data))
    key = keys[pick % len(keys)]
    node = data
    *parents, leaf = key.split(".")
    for part in parents:
        node = node[part]
    node[leaf] = value
    _check_once(tmp_path, capsys, data)


def _check_once(tmp_path, capsys, data):
    """`check` of ``data`` as a case file: exit 0, or exit 2 with a line naming the file and a key."""
    try:
        text = tomli_w.dumps(data)
    except (TypeError, ValueError):  # not representable in TOML (NaN in a table is, None is not)
        return
    path = tmp_path / "fuzz.toml"
    path.write_text(text)
    t = time.perf_counter()
    rc = main(["check", str(path)])
    cap = capsys.readouterr()
    assert time.perf_counter() - t < 20
    assert rc in (0, 2)
    assert "Traceback" not in cap.err
    assert "Input should" not in cap.err, cap.err  # the validation library's wording, not the tool's
    if rc == 2:
        assert any(line.startswith(f"{path}: ") and ": " in line[len(str(path)) + 2:] for line in cap.err.splitlines()), cap.err


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(mutation=_mutations())
def test_fuzzed_cases_exit_0_or_2_with_a_key(tmp_path, capsys, mutation):
    _fuzz_once(tmp_path, capsys, mutation)


@pytest.mark.slow
@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(mutation=_mutations())
def test_fuzzed_cases_many(tmp_path, capsys, mutation):
    _fuzz_once(tmp_path, capsys, mutation)


# -- every key of the schema, set on a shipped case (most keys are in no shipped case) -------------
def _schema_keys(template: str) -> list[str]:
    """Every dotted key a case may hold, read from the case schema and the solver registry (so a
    key added later is fuzzed without editing this test)."""
    from typing import get_args

    from pydantic import BaseModel

    from axibore.case import schema
    from axibore.solvers import SOLVERS

    keys = []
    for section, info in schema.CaseModel.model_fields.items():
        model = next((a for a in (info.annotation, *get_args(info.annotation)) if isinstance(a, type) and issubclass(a, BaseModel)), None)
        if section == "bore":
            model = next(m for m in get_args(get_args(schema.BoreSpec)[0])
                         if get_args(m.model_fields["template"].annotation) == (template,))
        if model is not None:
            keys += [f"{section}.{k}" for k in model.model_fields if k != "template"]
    for entry in SOLVERS.values():
        if entry.load_settings() is not None:
            keys += [f"solver.{k}" for k in entry.load_settings().model_fields]
    return keys + ["uncertainty.inlet.pressure", "uncertainty.bore.nothing", "sweep.vary.mesh.level", "joint"]


def _any_key_once(tmp_path, capsys, mutation):
    name, pick, value = mutation
    data = tomllib.loads((CASES / name).read_text())
    keys = _schema_keys(data["bore"]["template"])
    key = keys[pick % len(keys)]
    if key.startswith(("uncertainty.", "sweep.vary.")):  # a table whose keys are dotted case keys
        table, _, inner = key.partition(".vary.") if key.startswith("sweep") else key.partition(".")
        node = data.setdefault("sweep", {}).setdefault("vary", {}) if key.startswith("sweep") else data.setdefault(table, {})
        node[inner] = value
    elif "." not in key:
        data[key] = value
    elif key.startswith("joint."):  # [[joint]]: a list of tables
        joints = data.get("joint") if isinstance(data.get("joint"), list) else [{}]
        joints[0][key.split(".")[1]] = value
        data["joint"] = joints
    else:
        section, leaf = key.split(".")
        data.setdefault(section, {})[leaf] = value
    _check_once(tmp_path, capsys, data)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(mutation=st.tuples(st.sampled_from(sorted(p.name for p in CASES.glob("*.toml"))), st.integers(0, 200),
                          _mutations().map(lambda m: m[2])))
def test_every_schema_key_fuzzed_exits_0_or_2_with_a_key(tmp_path, capsys, mutation):
    _any_key_once(tmp_path, capsys, mutation)


@pytest.mark.slow
@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(mutation=st.tuples(st.sampled_from(sorted(p.name for p in CASES.glob("*.toml"))), st.integers(0, 200),
                          _mutations().map(lambda m: m[2])))
def test_every_schema_key_fuzzed_many(tmp_path, capsys, mutation):
    _any_key_once(tmp_path, capsys, mutation)


def test_killed_grid_study_resumes_without_rerunning_finished_levels(tmp_path):
    case = write(tmp_path, REDUCER.replace('[[joint]]', '[mesh]\nsize = 0.2\n\n[[joint]]', 1))
    out = tmp_path / "study"
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    cmd = [sys.executable, "-m", "axibore.cli", "gridstudy", str(case), "--levels", "0,1,6", "--out", str(out)]
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    for line in proc.stdout:
        if line.startswith("[2/3]"):  # two levels done, the finest under way
            break
    proc.send_signal(signal.SIGTERM)
    proc.wait(timeout=60)
    assert (out / "level-0" / "summary.json").exists() and (out / "level-1" / "summary.json").exists()
    assert not (out / "level-6").exists() and not list(out.glob(".*partial"))
    res = subprocess.run(cmd, capture_output=True, text=True, env=env)
    assert res.returncode == 0, res.stderr
    assert "level 0: reused" in res.stdout and "level 1: reused" in res.stdout and "[1/1] level 6" in res.stdout
    # a study with other levels removes the level it no longer has
    res = subprocess.run(cmd[:-4] + ["--levels", "0,1", "--out", str(out)], capture_output=True, text=True, env=env)
    assert res.returncode == 0 and "removed level-6" in res.stdout and not (out / "level-6").exists()


def test_scheduler_and_verify_out_are_checked_before_work(tmp_path, capsys):
    case = write(tmp_path, REDUCER + "\n[mesh]\nsize = 0.3\n")
    rc, _, err = run_cli(["sweep", str(case), "--vary", "mesh.size=0.3", "--scheduler", str(tmp_path / "missing.json"),
                          "--out", str(tmp_path / "sw")], capsys)
    assert rc == 2 and "--scheduler" in err and "no such scheduler file" in err
    afile = tmp_path / "afile"
    afile.write_text("data")
    t = time.perf_counter()
    rc, out, err = run_cli(["verify", "--quick", "--out", str(afile)], capsys)
    assert rc == 2 and "is a file" in err and afile.read_text() == "data"
    assert "pass" not in out and time.perf_counter() - t < 5  # refused before the verification ran


def test_an_internal_error_is_one_line_and_a_saved_traceback(tmp_path, capsys, monkeypatch):
    import axibore.cli.check as check_cmd

    def broken(args):
        raise RuntimeError("a fault of the tool")

    monkeypatch.setattr(check_cmd, "run", broken)
    from axibore.cli import main

    rc = main(["check", str(write(tmp_path, REDUCER))])
    err = capsys.readouterr().err
    assert rc == 3 and "internal error (RuntimeError: a fault of the tool)" in err and "Traceback" not in err
    saved = Path(err.split("the traceback is in ")[1].strip())
    assert "Traceback" in saved.read_text() and "a fault of the tool" in saved.read_text()
    saved.unlink()


def test_temperatures_at_the_stated_bounds(tmp_path, capsys):
    # the docs state 0.01 to 200 degC for water: 0.01 degC itself runs (it is 273.15 + 0.01 in floating
    # point, a hair below 273.16 K); seawater below 0.01 degC runs without the wall layer and is refused
    # with it, by check too (its viscosity is pure water's, defined from 0.01 degC)
    def nozzle(fluid, extra=""):
        return (f'[fluid]\n{fluid}\n[bore]\ntemplate = "conical"\ninlet_diameter = "40 mm"\nexit_diameter = "20 mm"\n'
                'half_angle = "20 deg"\ninlet_length = "20 mm"\ntip_length = "10 mm"\n[inlet]\npressure = "2 bar"\n'
                '[outlet]\nkind = "exit-plane"\n' + extra)

    water = write(tmp_path, nozzle('kind = "water"\ntemperature = "0.01 degC"'), "water.toml")
    rc, _, err = run_cli(["run", str(water), "--out", str(tmp_path / "w")], capsys)
    assert rc == 0, err
    cold = write(tmp_path, nozzle('kind = "seawater"\ntemperature = "-1 degC"'), "cold.toml")
    rc, _, err = run_cli(["check", str(cold)], capsys)
    assert rc == 2 and "cold.toml: fluid.temperature:" in err and 'viscous.model = "none"' in err
    cold = write(tmp_path, nozzle('kind = "seawater"\ntemperature = "-1 degC"', '[viscous]\nmodel = "none"\n'), "cold2.toml")
    rc, _, err = run_cli(["run", str(cold), "--out", str(tmp_path / "c")], capsys)
    assert rc == 0, err


NOZZLE = ('[fluid]\n{fluid}\n[bore]\ntemplate = "conical"\ninlet_diameter = "80 mm"\nexit_diameter = "25 mm"\n'
          'half_angle = "15 deg"\ninlet_length = "60 mm"\ntip_length = "20 mm"\nlip_radius = "20 mm"\n'
          '[inlet]\n{inlet}\n[outlet]\n{outlet}\n[mesh]\nsize = 0.3\n{extra}')
WATER = 'kind = "water"\ntemperature = "15 degC"'
LIQUID = 'kind = "liquid"\ndensity = "{rho}"\nvapour_pressure = "{pv}"'


@pytest.mark.parametrize("fluid, inlet, outlet, extra, key, words", [
    (LIQUID.format(rho="1e9 kg/m^3", pv="0.02 bar"), 'pressure = "7 bar"', 'kind = "exit-plane"', "", "fluid.density", "kg/m^3 for a liquid"),
    (LIQUID.format(rho="0.001 kg/m^3", pv="0.02 bar"), 'pressure = "7 bar"', 'kind = "exit-plane"', "", "fluid.density", "kg/m^3 for a liquid"),
    (LIQUID.format(rho="1000 kg/m^3", pv="50 bar"), 'pressure = "7 bar"', 'kind = "exit-plane"', "", "fluid.vapour_pressure", "boils"),
    (WATER, 'pressure = "70 mPa"', 'kind = "exit-plane"', "", "inlet.pressure", "expected a pressure"),
    (WATER, 'flow_rate = "5 L/s"', 'kind = "pipe"\npressure = "-2 bar"', "", "outlet.pressure", "absolute pressure above zero"),
    (WATER, 'pressure = "7 bar"', 'kind = "exit-plane"', '[flange]\nat = "inlet"\ngasket_diameter = "110 m"\nbolts = 4\n',
     "flange.gasket_diameter", "at most 10 times"),
    ('kind = "ideal-gas"\ngas_constant = "1e7 J/(kg*K)"\ngamma = 1.4', 'total_pressure = "3 bar"\ntotal_temperature = "300 K"',
     'kind = "exit-plane"', "", "fluid.gas_constant", "J/(kg K)"),
])
def test_absurd_physics_is_refused_by_check(tmp_path, capsys, fluid, inlet, outlet, extra, key, words):
    # each was exit 0 with an impossible result in the campaign of stop 26 (speeds of 37,600 m/s, a joint
    # load of 6.6 GN, 70 mPa read as 700 bar)
    case = write(tmp_path, NOZZLE.format(fluid=fluid, inlet=inlet, outlet=outlet, extra=extra))
    rc, _, err = run_cli(["check", str(case)], capsys)
    assert rc == 2 and f"c.toml: {key}:" in err and words in err, err


def test_the_tools_own_pictures_and_pages_never_replace_a_users(tmp_path, capsys):
    import shutil

    case = write(tmp_path, NOZZLE.format(fluid=WATER, inlet='pressure = "7 bar"', outlet='kind = "exit-plane"', extra=""))
    run_dir = tmp_path / "run"
    assert run_cli(["run", str(case), "--out", str(run_dir)], capsys)[0] == 0
    photo = tmp_path / "photo.png"
    photo.write_bytes(b"my photo")
    rc, _, err = run_cli(["view", str(run_dir), "--png", str(photo)], capsys)
    assert rc == 2 and "exists" in err and photo.read_bytes() == b"my photo"
    edited = tmp_path / "edited"
    shutil.copytree(run_dir, edited)
    (edited / "report.html").write_text((edited / "report.html").read_text() + "<!-- my notes -->")
    rc, _, err = run_cli(["report", str(edited)], capsys)
    assert rc == 2 and "report.html" in err and "my notes" in (edited / "report.html").read_text()
    # a changed file of the tool's own is refused before any work, even with --force
    (edited / "wall.csv").write_text((edited / "wall.csv").read_text() + "# my edit\n")
    before = {p.name: p.stat().st_mtime_ns for p in edited.iterdir()}
    t = time.perf_counter()
    rc, _, err = run_cli(["run", str(case), "--out", str(edited), "--force"], capsys)
    assert rc == 2 and "wall.csv" in err and "changed since" in err and time.perf_counter() - t < 5
    assert {p.name: p.stat().st_mtime_ns for p in edited.iterdir()} == before


def test_damaged_files_and_odd_out_paths_are_messages(tmp_path, capsys):
    import shutil

    case = write(tmp_path, NOZZLE.format(fluid=WATER, inlet='pressure = "7 bar"', outlet='kind = "exit-plane"', extra=""))
    run_dir = tmp_path / "run"
    assert run_cli(["run", str(case), "--out", str(run_dir)], capsys)[0] == 0
    cut = tmp_path / "cut"
    shutil.copytree(run_dir, cut)
    (cut / "wall.csv").write_bytes((cut / "wall.csv").read_bytes()[:500])  # cut short
    for argv in (["compare", str(run_dir), str(cut), "--out", str(tmp_path / "cmp")], ["report", str(cut)]):
        if argv[0] == "report":
            (cut / "report.html").unlink()  # (a report the tool would otherwise refuse to replace: not the point here)
        rc, _, err = run_cli(argv, capsys)
        assert rc == 2 and "wall.csv: damaged or cut short" in err, (argv, err)
    afile = tmp_path / "afile"
    afile.write_text("data")
    rc, _, err = run_cli(["mesh", str(case), "--out", str(afile)], capsys)
    assert rc == 2 and "is a file" in err and afile.read_text() == "data"
    rc, _, err = run_cli(["run", str(case), "--out", str(tmp_path / ("x" * 300))], capsys)
    assert rc == 2 and "too long" in err.lower()
