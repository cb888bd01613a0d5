"""Every code block of the README runs as written (issue 22): the commands of "Use" through the CLI
entry point, the Python API block, and the TOML snippets inside a case. The quick-start block is
the install and this test suite itself (what `.ci/run` does). In "Use", `compare` names two sweep
points as <hash-a> and <hash-b>: the test puts in the first two points of the sweep just run."""

import os
import re
import shlex
from pathlib import Path

import pytest

from axibore.cli import main

ROOT = Path(__file__).parents[1]
README = (ROOT / "README.md").read_text()


def blocks(lang: str = "") -> list[str]:
    return [m.group(2) for m in re.finditer(r"^```(\w*)\n(.*?)^```", README, re.S | re.M) if m.group(1) == lang]


def commands(block: str) -> list[list[str]]:
    out = []
    for line in block.replace("\\\n", " ").splitlines():
        line = line.split("  #")[0].strip()
        if line.startswith("axibore "):
            out.append(shlex.split(line)[1:])
    return out


@pytest.fixture
def in_a_project_folder(tmp_path, monkeypatch):
    (tmp_path / "cases").symlink_to(ROOT / "cases")
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("PYVISTA_OFF_SCREEN", "true")
    return tmp_path


def test_the_commands_of_use_run_as_written(in_a_project_folder):
    use = next(b for b in blocks() if b.lstrip().startswith("axibore check"))
    cmds = commands(use)
    assert len(cmds) >= 12
    for args in cmds:
        if args[0] == "compare":
            points = sorted(p for p in Path("runs/reducer-sweep").iterdir() if p.is_dir() and (p / "summary.json").exists())
            args = ["compare", str(points[0]), str(points[1])] + args[3:]
        assert main(args) == 0, args
    for made in ("m/mesh.msh", "runs/spear/report.html", "runs/air/summary.json", "spear.png", "tip.png", "air.png",
                 "runs/reducer-sweep/sweep.html", "cmp/compare.html"):
        assert Path(made).stat().st_size > 0, made


def test_the_python_api_and_uncertainty_blocks_run_as_written(in_a_project_folder, capsys):
    (api,) = blocks("python")
    exec(compile(api, "README.md (Python API)", "exec"), {})
    assert Path("runs/nozzle-12/summary.json").exists() and Path("runs/reducer-sweep/sweep.html").exists()
    unc = next(b for b in blocks() if b.lstrip().startswith("axibore uncertainty"))
    for args in commands(unc):
        assert main(args) == 0, args
    assert Path("runs/nozzle-uncertainty/uncertainty.html").exists()


def test_the_toml_snippets_are_valid_case_files(in_a_project_folder):
    from axibore.case import load_case

    base = ('[fluid]\nkind = "water"\ntemperature = "15 degC"\n[inlet]\npressure = "1 bar"\n')
    for i, snippet in enumerate(blocks("toml")):
        text = snippet if snippet.lstrip().startswith(("title", "[fluid]")) else base + snippet
        if "[bore]" not in text:  # a table to add to a case: the shipped nozzle's
            text = (ROOT / "cases" / "deck_wash_nozzle.toml").read_text() + "\n" + snippet
        path = Path(f"snippet{i}.toml")
        path.write_text(text)
        load_case(path)
        assert main(["check", str(path)]) == 0, snippet
