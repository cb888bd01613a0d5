"""Parameter sweeps: Dask points equal serial runs, an external cluster, interrupts and reruns,
shared points, validation before start, the [sweep] table, and design comparison."""

import json
import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from axibore.case import CaseError, load_case
from axibore.cli import main
from axibore.io.ownership import MANIFEST, record
from axibore.run import solve_case
from conftest import assert_page_fits

ROOT = Path(__file__).parents[1]
REDUCER = ROOT / "cases" / "water_main_reducer.toml"
DASK = Path(sys.executable).parent / "dask"
HEADLINE = (("forces", "wall_x_N"), ("forces", "total_x_N"), ("forces", "momentum_x_N"), ("flow", "volume_flow_m3_s"),
            ("flow", "mass_flow_kg_s"), ("pressure", "min_wall_gauge_Pa"))


def small():
    return load_case(REDUCER).with_updates({"mesh.size": 0.3})


def serial_summary(updates: dict) -> dict:
    """The reference: the same point solved in this process, without the sweep machinery."""
    return solve_case(small().with_updates(updates)).summary()


def assert_same(row: dict, ref: dict):
    for section, key in HEADLINE:
        assert row[f"{section}.{key}"] == pytest.approx(ref[section][key], rel=1e-12, abs=1e-12)


def complete_dirs(out: Path) -> list[Path]:
    return sorted(d for d in out.iterdir() if d.is_dir() and not d.name.startswith(".") and (d / "summary.json").is_file())


# ---------------------------------------------------------------------------------------------
# values and validation (no runs)


def test_values_lists_and_ranges():
    from axibore.study.sweep import parse_values, point_grid

    assert parse_values("k", "20 mm,25 mm, 30 mm") == ["20 mm", "25 mm", "30 mm"]
    assert parse_values("k", "3 bar:12 bar:10") == [f"{v} bar" for v in range(3, 13)]
    assert parse_values("k", "0:2:3") == [0, 1, 2]
    assert parse_values("k", "0.1:0.3:3") == pytest.approx([0.1, 0.2, 0.3], rel=1e-15)
    assert parse_values("k", "1,2.5,true") == [1, 2.5, True]
    with pytest.raises(CaseError, match="same unit"):
        parse_values("k", "3 bar:12 kPa:4")
    grid = point_grid({"a": [1, 2, 3], "b": ["x", "y"]})
    assert len(grid) == 6 and grid[1] == {"a": 1, "b": "y"}
    assert point_grid({"a": [1, 2], "b": ["x", "y"]}, zip_=True) == [{"a": 1, "b": "x"}, {"a": 2, "b": "y"}]
    with pytest.raises(CaseError, match="equal length"):
        point_grid({"a": [1, 2, 3], "b": ["x", "y"]}, zip_=True)


def test_bad_point_exits_2_and_writes_nothing(tmp_path, capsys):
    out = tmp_path / "sw"
    code = main(["sweep", str(REDUCER), "--vary", "mesh.size=0.3", "--vary", "bore.half_angle=10 deg,95 deg",
                 "--workers", "0", "--out", str(out)])
    assert code == 2
    e = capsys.readouterr().err
    assert "point 2 (mesh.size=0.3, bore.half_angle=95 deg): bore.half_angle" in e and "between 0 and 90 deg" in e
    assert "Traceback" not in e
    assert not out.exists()
    code = main(["sweep", str(REDUCER), "--vary", "bore.half_angel=10 deg", "--workers", "0", "--out", str(out)])
    assert code == 2 and "unknown key" in capsys.readouterr().err and not out.exists()
    code = main(["sweep", str(REDUCER), "--zip", "--vary", "mesh.size=0.3,0.4", "--vary", "mesh.level=0,1,2",
                 "--workers", "0", "--out", str(out)])
    assert code == 2 and "equal length" in capsys.readouterr().err and not out.exists()


def test_refuses_a_foreign_folder(tmp_path, capsys):
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep me")
    code = main(["sweep", str(REDUCER), "--vary", "mesh.size=0.3", "--workers", "0", "--out", str(foreign)])
    assert code == 2 and "did not write (notes.txt" in capsys.readouterr().err
    assert [p.name for p in foreign.iterdir()] == ["notes.txt"]


# ---------------------------------------------------------------------------------------------
# runs


def test_local_cluster_equals_serial_runs(tmp_path):
    import axibore

    vary = {"inlet.flow_rate": "0.3 m^3/s,0.4 m^3/s,0.5 m^3/s", "bore.half_angle": "10 deg,20 deg"}
    table = axibore.sweep(small(), vary=vary, workers=2, out=tmp_path / "sw")
    assert table.ok and len(table.rows) == 6 and table.ran == 6
    for row in table.rows:
        ref = serial_summary({"inlet.flow_rate": row["inlet.flow_rate"], "bore.half_angle": row["bore.half_angle"]})
        assert_same(row, ref)
        run_dir = tmp_path / "sw" / row["run_dir"]
        assert json.loads((run_dir / "summary.json").read_text())["forces"]["wall_x_N"] == ref["forces"]["wall_x_N"]
        assert (run_dir / "wall.csv").is_file() and not (run_dir / "fields.vtu").exists()  # fields only with --keep
    # order and SI inputs: the product in the order given
    assert [r["inlet.flow_rate [SI]"] for r in table.rows] == pytest.approx([0.3, 0.3, 0.4, 0.4, 0.5, 0.5], rel=1e-15)
    assert table.rows[1]["bore.half_angle [SI]"] == pytest.approx(0.3490658503988659, rel=1e-15)
    lines = (tmp_path / "sw" / "sweep.csv").read_text().splitlines()
    assert len(lines) == 7 and "forces.wall_x_N" in lines[0] and "status" in lines[0]
    html = (tmp_path / "sw" / "sweep.html").read_text()
    assert "data:image/png;base64," in html and "Hydrodynamic load only" in html
    # a rerun runs nothing again
    again = axibore.sweep(small(), vary=vary, workers=0, out=tmp_path / "sw")
    assert again.ran == 0 and again.reused == 6
    assert [r["forces.wall_x_N"] for r in again.rows] == [r["forces.wall_x_N"] for r in table.rows]


def test_case_file_sweep_table_and_a_failing_point(tmp_path, capsys):
    text = REDUCER.read_text() + '\n[sweep]\nvary = {"mesh.size" = [0.3], "mesh.level" = "0:1:2"}\n'
    path = tmp_path / "swept.toml"
    path.write_text(text)
    out = tmp_path / "sw"
    assert main(["sweep", str(path), "--workers", "0", "--out", str(out), "--keep", "fields"]) == 0
    rows = json.loads((out / "sweep.json").read_text())["points"]
    assert [r["mesh.level"] for r in rows] == [0, 1]
    assert rows[1]["mesh.cells"] == serial_summary({"mesh.level": 1})["mesh"]["cells"]
    assert (out / rows[0]["run_dir"] / "fields.vtu").is_file()
    # a point that cannot be solved (a mesh above the cell limit) fails alone; the others complete
    code = main(["sweep", str(REDUCER), "--vary", "mesh.size=0.3,0.0001", "--workers", "0",
                 "--out", str(tmp_path / "sw2")])
    assert code == 1
    rows = json.loads((tmp_path / "sw2" / "sweep.json").read_text())["points"]
    assert [r["status"] for r in rows] == ["ok", "failed"] and "cell" in rows[1]["error"]
    assert (tmp_path / "sw2" / f"{rows[1]['run_dir']}.error.txt").is_file()
    assert "failed" in (tmp_path / "sw2" / "sweep.csv").read_text()


def test_two_sweeps_sharing_points(tmp_path):
    """Two processes write the same sweep folder at once, sharing two of their three points."""
    out = tmp_path / "shared"
    cmd = [sys.executable, "-m", "axibore.cli", "sweep", str(REDUCER), "--vary", "mesh.size=0.3", "--workers", "0",
           "--out", str(out)]
    a = subprocess.Popen(cmd + ["--vary", "bore.half_angle=10 deg,12 deg,14 deg"], stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
    b = subprocess.Popen(cmd + ["--vary", "bore.half_angle=12 deg,14 deg,16 deg"], stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
    outs = [p.communicate(timeout=300)[0].decode() for p in (a, b)]
    assert a.returncode == 0 and b.returncode == 0, outs
    dirs = complete_dirs(out)
    assert len(dirs) == 4
    assert not [p for p in out.iterdir() if p.name.startswith(".") and p.name != MANIFEST]  # no partial or old folders
    for d in dirs:
        case = load_case(d / "case.toml")
        ref = solve_case(case).summary()
        s = json.loads((d / "summary.json").read_text())
        assert s["forces"]["wall_x_N"] == pytest.approx(ref["forces"]["wall_x_N"], rel=1e-12)
        assert {"case.toml", "summary.json", "wall.csv", "solver_history.csv"} <= {p.name for p in d.iterdir()}


def test_concurrent_install_never_shows_half_a_directory(tmp_path):
    """Three writers racing on each of many points and a reader: the reader sees no directory or a
    complete one, exactly one writer installs each point, and nothing temporary is left."""
    from axibore.study.sweep import complete_summary, install_run

    text = "# case\n"
    files = {"case.toml": text.encode(), **{f"f{i}.vtu": b"x" * 20000 for i in range(20)},
             "summary.json": b'{"software": {"name": "axibore"}}'}
    rounds = 12
    current = {"target": tmp_path / "pt0"}
    stop, seen, installed = threading.Event(), [], []

    def reader():
        while not stop.is_set():
            target = current["target"]
            if target.is_dir():
                seen.append({p.name for p in target.iterdir()} == set(files) | {MANIFEST})

    t = threading.Thread(target=reader)
    t.start()
    for k in range(rounds):
        current["target"] = target = tmp_path / f"pt{k}"
        barrier = threading.Barrier(3)

        def writer():
            barrier.wait()
            installed.append(install_run(target, files, text))

        ws = [threading.Thread(target=writer) for _ in range(3)]
        for w in ws:
            w.start()
        for w in ws:
            w.join()
        assert complete_summary(target, text) is not None
    stop.set()
    t.join()
    assert seen and all(seen)
    assert sum(installed) == rounds  # one writer per point; the others found it complete and dropped theirs
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]
    # a stale point of the tool's (another case) is replaced whole; a folder with a file the tool did not
    # write is not touched
    stale = tmp_path / "stale"
    stale.mkdir()
    (stale / "case.toml").write_text("# another case\n")
    record(stale, "run", ["case.toml"])
    assert install_run(stale, files, text) and {p.name for p in stale.iterdir()} == set(files) | {MANIFEST}
    foreign = tmp_path / "foreign"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("mine")
    with pytest.raises(OSError, match="did not write"):
        install_run(foreign, files, text)
    assert [p.name for p in foreign.iterdir()] == ["notes.txt"]


def _numbers(line: str) -> list[float]:
    """The numbers of a printed line (the pages' minus sign read as '-', per cent signs dropped)."""
    out = []
    for tok in line.replace("−", "-").replace("%", "").split():
        try:
            out.append(float(tok))
        except ValueError:
            pass
    return out


def test_compare_two_runs(tmp_path, capsys, page_layout):
    from axibore.run import run_case

    a, b = tmp_path / "x" / "run", tmp_path / "y" / "run"  # the same folder name: told apart by the parent
    run_case(small(), a, report=False)
    run_case(small().with_updates({"bore.half_angle": "20 deg"}), b, report=False)
    sa, sb = (json.loads((d / "summary.json").read_text()) for d in (a, b))
    assert main(["compare", str(a), str(b), "--out", str(tmp_path / "cmp")]) == 0
    printed = capsys.readouterr().out
    assert "x/run" in printed and "y/run" in printed
    # the wall force in kN (the reducer's is about 157 kN), the difference and the relative difference
    line = next(ln for ln in printed.splitlines() if ln.startswith("wall axial force"))
    va, vb, d, rel = _numbers(line)
    fa, fb = sa["forces"]["wall_x_N"], sb["forces"]["wall_x_N"]
    assert va == pytest.approx(fa / 1e3, rel=1e-5) and vb == pytest.approx(fb / 1e3, rel=1e-5)
    assert d == pytest.approx((fb - fa) / 1e3, rel=1e-3)
    assert rel == pytest.approx((fb - fa) / abs(fa) * 100, abs=5e-4)  # printed to 0.001 %
    # the bolt load of each joint of the case is compared
    for j, k in zip(sa["joints"], sb["joints"]):
        line = next(ln for ln in printed.splitlines() if ln.startswith(f"bolt load, joint {j['name']}"))
        assert _numbers(line)[:2] == pytest.approx([j["load_N"] / 1e3, k["load_N"] / 1e3], rel=1e-5)
    # gauge pressures: no per cent (their zero is the ambient)
    line = next(ln for ln in printed.splitlines() if ln.startswith("least wall pressure, gauge"))
    assert "%" not in line
    page = tmp_path / "cmp" / "compare.html"
    html = page.read_text()
    assert "data:image/png;base64," in html and "x/run" in html and "y/run" in html
    assert "bolt load, joint" in html and "Hydrodynamic load only" in html and "approved by" in html
    assert_page_fits(page_layout, page)
    assert main(["compare", str(a), str(tmp_path)]) == 2  # not a run directory


def test_compare_refuses_planar_beside_axisymmetric(tmp_path, capsys):
    from axibore.run import run_case

    a, p = tmp_path / "axi", tmp_path / "planar"
    run_case(small(), a, report=False)
    run_case(small().with_updates({"bore.symmetry": "planar", "joint": []}), p, report=False)  # joints are round
    capsys.readouterr()
    assert main(["compare", str(a), str(p), "--out", str(tmp_path / "cmp")]) == 2
    err = capsys.readouterr().err
    assert "planar" in err and "axisymmetric" in err and "Traceback" not in err
    assert not (tmp_path / "cmp").exists()  # refused before anything is written
    # the planar run's own report gives its flows and forces per metre of depth
    from axibore.view.report import build_report

    text = build_report(p, include_3d=False).read_text()
    assert "kN/m" in text and "L/(s m)" in text


def test_sweep_page_fits_screen_and_a4(tmp_path, page_layout):
    import axibore

    vary = {"inlet.flow_rate": "0.3 m^3/s,0.5 m^3/s", "bore.half_angle": "10 deg,20 deg"}
    axibore.sweep(small(), vary=vary, workers=0, out=tmp_path / "sw")
    page = tmp_path / "sw" / "sweep.html"
    html = page.read_text()
    assert "inlet flow rate" in html and "bore half angle" in html and "axial force on the part" in html
    assert "approved by" in html and "page " not in html.split("<body>")[1]  # page numbers live in the print margins
    assert_page_fits(page_layout, page)


# ---------------------------------------------------------------------------------------------
# an external cluster: scheduler and workers as separate processes on 127.0.0.1


class Cluster:
    def __init__(self, root: Path):
        self.root = root
        self.file = root / "scheduler.json"
        self.procs: list[subprocess.Popen] = []
        (root / "scheduler").mkdir()
        self.scheduler = self._start([str(DASK), "scheduler", "--host", "127.0.0.1", "--port", "0", "--scheduler-file",
                                      str(self.file), "--no-dashboard"], root / "scheduler")
        deadline = time.time() + 60
        while not self.file.is_file() and time.time() < deadline:
            time.sleep(0.2)
        assert self.file.is_file(), "the scheduler did not start"

    def _start(self, cmd, cwd: Path) -> subprocess.Popen:
        env = {**os.environ, "TMPDIR": str(cwd)}  # the worker's scratch space is its own
        p = subprocess.Popen(cmd, cwd=cwd, env=env, start_new_session=True, stdout=open(cwd / "log.txt", "w"),
                             stderr=subprocess.STDOUT)
        self.procs.append(p)
        return p

    def start_worker(self, name: str) -> subprocess.Popen:
        d = self.root / name
        d.mkdir()
        p = self._start([str(DASK), "worker", "--scheduler-file", str(self.file), "--nworkers", "1", "--nthreads", "1",
                         "--local-directory", str(d), "--no-dashboard"], d)
        self.wait_for_workers(1)
        return p

    def workers(self) -> int:
        from distributed import Client

        with Client(scheduler_file=str(self.file), timeout=30) as c:
            return len(c.scheduler_info()["workers"])

    def wait_for_workers(self, n: int, timeout: float = 90):
        deadline = time.time() + timeout
        while self.workers() < n:
            assert time.time() < deadline, "the worker did not join"
            time.sleep(0.3)

    def kill(self, p: subprocess.Popen, sig=signal.SIGKILL):
        try:
            os.killpg(p.pid, sig)
        except ProcessLookupError:
            pass
        p.wait(timeout=30)

    def kill_worker(self, p: subprocess.Popen):
        self.kill(p)
        deadline = time.time() + 60
        while self.workers() > 0 and time.time() < deadline:  # the scheduler has seen it go
            time.sleep(0.2)

    def stop(self):
        for p in reversed(self.procs):
            if p.poll() is None:
                self.kill(p, signal.SIGTERM)


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    c = Cluster(tmp_path_factory.mktemp("dask"))
    try:
        yield c
    finally:
        c.stop()


def test_external_scheduler_sweep_and_gridstudy(cluster, tmp_path, capsys):
    w = cluster.start_worker("w-basic")
    try:
        out = tmp_path / "sw"
        code = main(["sweep", str(REDUCER), "--vary", "mesh.size=0.3", "--vary", "inlet.pressure=8 bar,12 bar",
                     "--scheduler", str(cluster.file), "--out", str(out)])
        assert code == 0, capsys.readouterr()
        rows = json.loads((out / "sweep.json").read_text())["points"]
        for row in rows:
            assert_same(row, serial_summary({"inlet.pressure": row["inlet.pressure"]}))
        # a grid study through the same cluster: its levels are points
        assert main(["gridstudy", str(REDUCER), "--levels", "0,1", "--scheduler", str(cluster.file),
                     "--out", str(tmp_path / "gs")]) == 0
        for lv in (0, 1):
            s = json.loads((tmp_path / "gs" / f"level-{lv}" / "summary.json").read_text())
            ref = solve_case(load_case(REDUCER).with_level(lv)).summary()
            assert s["forces"]["wall_x_N"] == pytest.approx(ref["forces"]["wall_x_N"], rel=1e-12)
    finally:
        cluster.kill_worker(w)


@pytest.mark.slow
def test_killed_worker_and_client_then_rerun(cluster, tmp_path):
    """A worker dies (and the sweep with it) in the middle: finished points stay, the rerun runs the rest only."""
    w1 = cluster.start_worker("w-killed")
    out = tmp_path / "sw"
    cmd = [sys.executable, "-m", "axibore.cli", "sweep", str(REDUCER), "--vary", "mesh.level=2",
           "--vary", "bore.half_angle=8 deg,10 deg,12 deg,14 deg,16 deg,18 deg", "--scheduler", str(cluster.file),
           "--out", str(out)]
    sweep = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, start_new_session=True)
    deadline = time.time() + 180
    while not (out.is_dir() and complete_dirs(out)) and time.time() < deadline:
        time.sleep(0.05)
    cluster.kill_worker(w1)
    cluster.kill(sweep)
    finished = {d.name: ((d / "summary.json").stat().st_mtime_ns, (d / "summary.json").stat().st_ino)
                for d in complete_dirs(out)}
    assert 1 <= len(finished) < 6, "the kill came too late to interrupt anything"
    for name in finished:  # finished points are whole
        assert json.loads((out / name / "summary.json").read_text())["solver"]["converged"]
    w2 = cluster.start_worker("w-rerun")
    try:
        again = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
        assert again.returncode == 0, again.stdout + again.stderr
        rows = json.loads((out / "sweep.json").read_text())["points"]
        assert len(complete_dirs(out)) == 6 and all(r["status"] == "ok" for r in rows)
        for r in rows:  # none run twice: the finished ones reused untouched, the others run once now
            assert r["reused"] == (r["run_dir"] in finished)
        for name, stamp in finished.items():
            st = (out / name / "summary.json").stat()
            assert (st.st_mtime_ns, st.st_ino) == stamp
        assert f"{len(finished)} complete already (reused), {6 - len(finished)} to run" in again.stdout
    finally:
        cluster.kill_worker(w2)


def test_vary_twice_for_one_key_is_refused(tmp_path, capsys):
    code = main(["sweep", str(REDUCER), "--vary", "mesh.size=0.3", "--vary", "mesh.size=0.2", "--workers", "0",
                 "--out", str(tmp_path / "sw")])
    assert code == 2 and "mesh.size given more than once" in capsys.readouterr().err
    assert not (tmp_path / "sw").exists()


def test_ctrl_c_during_a_local_dask_sweep_is_one_line(tmp_path):
    # Ctrl-C reaches the whole foreground process group: the workers ignore it (they are started with
    # SIGINT ignored), the client closes the cluster and says "interrupted", exit 130, no traceback
    out = tmp_path / "sw"
    cmd = [sys.executable, "-m", "axibore.cli", "sweep", str(REDUCER), "--vary", "mesh.level=4,5,6", "--workers", "1",
           "--out", str(out)]
    p = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)
    deadline = time.time() + 60
    while not (out / ".axibore-manifest.json").exists() and time.time() < deadline:  # the sweep is under way
        time.sleep(0.05)
    time.sleep(2.0)  # a worker is running a point
    os.killpg(p.pid, signal.SIGINT)
    stdout, stderr = p.communicate(timeout=120)
    assert p.returncode == 130, stdout + stderr
    # no traceback; the last line is the one the tool says (Dask may warn about a port in use on a busy machine)
    assert "Traceback" not in stderr and stderr.strip().splitlines()[-1] == "interrupted: nothing half-written was left behind"
    assert stderr.count("\n") <= 5, stderr


def test_a_point_missing_one_of_its_files_is_run_again(tmp_path, capsys):
    # a point folder whose wall.csv is gone (deleted by hand, a disk cleaned up) is not a complete run: the
    # next sweep runs it again instead of reporting it as reused (before, summary.json alone made it complete)
    argv = ["sweep", str(REDUCER), "--vary", "bore.half_angle=10 deg,12 deg", "--vary", "mesh.size=0.3",
            "--workers", "0", "--out", str(tmp_path / "s")]
    assert main(argv) == 0
    first, second = complete_dirs(tmp_path / "s")
    (first / "wall.csv").unlink()
    capsys.readouterr()
    assert main(argv) == 0
    assert "1 complete already (reused), 1 to run" in capsys.readouterr().out
    assert (first / "wall.csv").stat().st_size > 0
