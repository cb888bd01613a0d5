"""The ownership rule of output folders (io.ownership): the tool replaces only what it wrote.

Each test is one way a user's file was lost before the manifest existed (issue 23)."""

from __future__ import annotations

import json
import os
import socket
from pathlib import Path

import pytest

from axibore.cli import main
from axibore.io.ownership import MANIFEST, Manifest, claim, OwnershipError, read_manifest

CASES = Path(__file__).parents[1] / "cases"
SMALL = {"mesh.size": 0.3}


def small_case(tmp_path: Path) -> Path:
    text = (CASES / "water_main_reducer.toml").read_text() + "\n[mesh]\nsize = 0.3\n"
    path = tmp_path / "reducer.toml"
    path.write_text(text)
    return path


def cli(argv, capsys):
    rc = main([str(a) for a in argv])
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err, cap.err
    return rc, cap.out, cap.err


@pytest.fixture(scope="module")
def earlier_run(tmp_path_factory):
    """A complete run folder of the small reducer (written once for the module; tests copy it)."""
    base = tmp_path_factory.mktemp("earlier")
    case = small_case(base)
    assert main(["run", str(case), "--out", str(base / "run")]) == 0
    return base / "run", case


def copy_run(src: Path, dst: Path) -> Path:
    import shutil

    shutil.copytree(src, dst)
    return dst


def test_a_run_writes_a_manifest_of_every_file(earlier_run):
    run_dir, _ = earlier_run
    m = read_manifest(run_dir)
    assert m.kind == "run" and not m.partial
    on_disk = {p.relative_to(run_dir).as_posix() for p in run_dir.rglob("*") if p.is_file() and p.name != MANIFEST}
    assert set(m.files) == on_disk and {"summary.json", "case.toml", "report.html"} <= on_disk


def test_rerun_keeps_what_the_user_added(earlier_run, tmp_path, capsys):
    run_dir = copy_run(earlier_run[0], tmp_path / "run")
    (run_dir / "notes.txt").write_text("my notes")
    (run_dir / "fea").mkdir()
    (run_dir / "fea" / "model.inp").write_text("*NODE")
    rc, _, err = cli(["run", earlier_run[1], "--out", run_dir], capsys)
    assert rc == 2 and "notes.txt" in err and "fea/model.inp" in err
    # --force writes beside them and keeps them
    rc, out, _ = cli(["run", earlier_run[1], "--out", run_dir, "--force"], capsys)
    assert rc == 0 and "kept" in out
    assert (run_dir / "notes.txt").read_text() == "my notes" and (run_dir / "fea" / "model.inp").read_text() == "*NODE"
    assert json.loads((run_dir / "summary.json").read_text())["software"]["name"] == "axibore"
    # and they stay foreign for the next run
    assert cli(["run", earlier_run[1], "--out", run_dir], capsys)[0] == 2


def test_a_changed_file_is_no_longer_the_tools(earlier_run, tmp_path, capsys):
    run_dir = copy_run(earlier_run[0], tmp_path / "run")
    (run_dir / "case.toml").write_text((run_dir / "case.toml").read_text() + "\n# my edit\n")
    rc, _, err = cli(["run", earlier_run[1], "--out", run_dir], capsys)
    assert rc == 2 and "case.toml" in err and "# my edit" in (run_dir / "case.toml").read_text()


def test_a_copied_summary_does_not_make_a_folder_a_run(earlier_run, tmp_path, capsys):
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "summary.json").write_bytes((earlier_run[0] / "summary.json").read_bytes())
    (mine / "drawing.pdf").write_bytes(b"%PDF")
    rc, _, err = cli(["run", earlier_run[1], "--out", mine], capsys)
    assert rc == 2 and (mine / "drawing.pdf").exists() and (mine / "summary.json").exists()


def test_a_run_never_replaces_a_sweep_folder(earlier_run, tmp_path, capsys):
    from axibore.io.ownership import record

    sweep_dir = tmp_path / "sw"
    sweep_dir.mkdir()
    (sweep_dir / "sweep.json").write_text("{}\n")
    record(sweep_dir, "sweep", ["sweep.json"])
    rc, _, err = cli(["run", earlier_run[1], "--out", sweep_dir, "--force"], capsys)
    assert rc == 2 and "sweep output" in err and (sweep_dir / "sweep.json").exists()


def test_mesh_keeps_a_users_mesh_and_obeys_the_cell_limit(earlier_run, tmp_path, capsys):
    mine = tmp_path / "meshes"
    mine.mkdir()
    (mine / "mesh.msh").write_text("my own mesh")
    rc, _, err = cli(["mesh", earlier_run[1], "--out", mine], capsys)
    assert rc == 2 and "mesh.msh" in err and (mine / "mesh.msh").read_text() == "my own mesh"
    rc, _, err = cli(["mesh", earlier_run[1], "--out", mine, "--force"], capsys)  # same name: never replaced
    assert rc == 2 and "even with --force" in err and (mine / "mesh.msh").read_text() == "my own mesh"
    fresh = tmp_path / "fresh"
    assert cli(["mesh", earlier_run[1], "--out", fresh], capsys)[0] == 0 and read_manifest(fresh).kind == "mesh"
    assert cli(["mesh", earlier_run[1], "--out", fresh], capsys)[0] == 0  # its own mesh is replaced
    huge = tmp_path / "huge.toml"
    huge.write_text(earlier_run[1].read_text().replace("size = 0.3", "size = 1e-9"))
    rc, _, err = cli(["mesh", huge, "--out", tmp_path / "big"], capsys)
    assert rc == 2 and "--max-cells" in err and not (tmp_path / "big").exists()


def test_compare_does_not_overwrite_a_foreign_page(earlier_run, tmp_path, capsys):
    out = tmp_path / "cmp"
    out.mkdir()
    (out / "compare.html").write_text("<p>mine</p>")
    run = earlier_run[0]
    rc, _, err = cli(["compare", run, run, "--out", out], capsys)
    assert rc == 2 and (out / "compare.html").read_text() == "<p>mine</p>"
    rc, _, err = cli(["compare", run, run, "--out", tmp_path / "cmp2"], capsys)
    assert rc == 0 and read_manifest(tmp_path / "cmp2").kind == "compare"


def test_stale_partials_only_of_this_host_and_a_dead_process(tmp_path):
    from axibore.io.files import clean_stale_partials
    from axibore.io.ownership import _save

    def partial(name, host, pid, manifest=True):
        d = tmp_path / name
        d.mkdir()
        (d / "summary.json").write_text("{}")
        if manifest:
            _save(d, Manifest("run", host=host, pid=pid, partial=True))
        return d

    dead = 2**22 + 12345  # above the default pid_max of Linux (4194304 = 2^22): no such process
    mine_dead = partial(".run.pid-1.x.partial", socket.gethostname(), dead)
    other_host = partial(".run.pid-2.x.partial", "another-host", dead)
    alive = partial(".run.pid-3.x.partial", socket.gethostname(), os.getppid())
    users = partial(f".notes.pid-{dead}.partial", "", 0, manifest=False)  # a user's folder with such a name
    removed = clean_stale_partials(tmp_path)
    assert removed == [mine_dead]
    assert other_host.exists() and alive.exists() and users.exists()


def test_claim_names_the_foreign_files(tmp_path):
    d = tmp_path / "x"
    d.mkdir()
    (d / "a.txt").write_text("1")
    with pytest.raises(OwnershipError, match="a.txt"):
        claim(d, "run")
    c = claim(d, "run", force=True)
    assert [p.name for p in c.foreign] == ["a.txt"] and not c.own


def test_another_writers_temporary_is_neither_foreign_nor_replaced(tmp_path):
    # two sweeps sharing a folder: one checked the folder while the other was writing sweep.json and
    # refused on the other's temporary ("holds files axibore did not write (.sweep...tmp)"). A live
    # writer's temporary does not refuse the folder but stays foreign: never replaced, and a run
    # folder holding one is written beside it (a user's file of such a name too); a dead writer's
    # refuses like any foreign file.
    from axibore.io.files import atomic_write_text
    from axibore.io.ownership import in_flight_prefix, owned_files, record

    d = tmp_path / "sw"
    atomic_write_text(d / "sweep.json", "{}\n")
    record(d, "sweep", ["sweep.json"])
    dead = 2**22 + 12345  # above Linux's pid_max: no such process
    live = d / f"{in_flight_prefix('sweep')}abc123.tmp"
    gone = d / f".sweep.inflight-{dead}.def456.tmp"
    live.write_text("half a file")
    assert live.name.startswith(f".sweep.inflight-{os.getpid()}.")
    assert claim(d, "sweep").foreign == [live]  # not refused; kept
    gone.write_text("left by a crash")
    own, foreign = owned_files(d)
    assert sorted(foreign) == sorted([gone, live]) and [p.name for p in own] == ["sweep.json"]
    with pytest.raises(OwnershipError, match="inflight"):
        claim(d, "sweep")
    # a run folder replaced by a new run keeps a file named like a live writer's temporary (pid 1 lives)
    from axibore.io.files import atomic_dir

    run = tmp_path / "run"
    with atomic_dir(run, "run") as t:
        atomic_write_text(t / "summary.json", "{}\n")
    mine = run / ".mynotes.inflight-1.txt"
    mine.write_text("a user's notes")
    with atomic_dir(run, "run") as t:
        atomic_write_text(t / "summary.json", "{}\n")
    assert mine.read_text() == "a user's notes"


@pytest.mark.parametrize("command, name", [
    (["sweep", "{case}", "--vary", "mesh.level=0", "--workers", "1"], "sweep.csv"),
    (["gridstudy", "{case}", "--levels", "0,1"], "gridstudy.json"),
    (["uncertainty", "{case}", "--levels", "0,1", "--input", "inlet.pressure=0.1 bar"], "uncertainty.csv"),
    (["run", "{case}"], "report.html"),
    (["run", "{case}"], "summary.json"),
])
def test_force_never_writes_over_a_users_file_of_an_output_name(tmp_path, capsys, command, name):
    # A folder without a manifest holding a user's file named as the command's own output: with --force
    # the study commands wrote over it while saying "they are kept" (sweep.csv, gridstudy.json,
    # uncertainty.csv), and `run` refused only after all its work. Now: refused at once, the file kept.
    import time

    out = tmp_path / "out"
    out.mkdir()
    (out / name).write_text("mine\n")
    (out / "notes.txt").write_text("notes\n")
    argv = [a.replace("{case}", str(small_case(tmp_path))) for a in command] + ["--out", out, "--force"]
    t = time.perf_counter()
    rc, _, err = cli(argv, capsys)
    assert rc == 2 and name in err and "not replaced, even with --force" in err
    assert time.perf_counter() - t < 3.0  # refused before any work
    assert (out / name).read_text() == "mine\n" and (out / "notes.txt").read_text() == "notes\n"
    assert sorted(p.name for p in out.iterdir()) == sorted([name, "notes.txt"])


def test_the_write_itself_never_replaces_a_users_file(tmp_path):
    # the last guard, in the one place every output file is written: a file that is not the tool's
    # (no manifest lists it, no output name of the folder's kind, no picture mark) is never replaced
    from axibore.io.files import ForeignFile, atomic_file, atomic_write_text, png_software

    user = tmp_path / "table.csv"
    user.write_text("mine\n")
    with pytest.raises(ForeignFile, match="table.csv: exists and was not written by axibore"):
        atomic_write_text(user, "x\n")
    with pytest.raises(ForeignFile):
        with atomic_file(user) as tmp:
            tmp.write_text("x\n")
    assert user.read_text() == "mine\n" and sorted(p.name for p in tmp_path.iterdir()) == ["table.csv"]
    # the tool's own file (written by this process) is replaced; a picture it wrote carries its mark
    own = atomic_write_text(tmp_path / "own.csv", "1\n")
    atomic_write_text(own, "2\n")
    assert own.read_text() == "2\n"
    from axibore.view.style import figure, save

    fig, ax = figure(2, 2)
    png = save(fig, tmp_path / "p.png")
    assert png_software(png).startswith(b"axibore")


def test_view_png_force_replaces_only_the_tools_picture(earlier_run, tmp_path, capsys):
    mine = tmp_path / "mine.png"
    mine.write_bytes(b"\x89PNG\r\n\x1a\n not a picture of axibore")
    run = earlier_run[0]
    rc, _, err = cli(["view", run, "--png", mine, "--force"], capsys)
    assert rc == 2 and "not replaced" in err and mine.read_bytes().endswith(b"not a picture of axibore")
    ours = tmp_path / "ours.png"
    assert cli(["view", run, "--png", ours], capsys)[0] == 0
    assert cli(["view", run, "--png", ours, "--force"], capsys)[0] == 0  # its own picture, again


def test_a_users_file_inside_a_level_folder_is_refused_before_the_grid_study(tmp_path, capsys):
    # before: the other levels ran, then exit 1 suggesting --force, which had been given
    out = tmp_path / "gs"
    (out / "level-0").mkdir(parents=True)
    (out / "level-0" / "notes.txt").write_text("mine\n")
    rc, _, err = cli(["gridstudy", small_case(tmp_path), "--levels", "0,1", "--out", out, "--force"], capsys)
    assert rc == 2 and "level-0/notes.txt" in err and "not replaced, even with --force" in err
    assert (out / "level-0" / "notes.txt").read_text() == "mine\n" and sorted(p.name for p in out.iterdir()) == ["level-0"]


def test_python_dash_m_runs_the_command_line():
    import subprocess
    import sys

    res = subprocess.run([sys.executable, "-m", "axibore", "--version"], capture_output=True, text=True, timeout=120)
    assert res.returncode == 0 and "axibore" in res.stdout + res.stderr
