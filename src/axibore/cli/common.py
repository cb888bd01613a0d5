"""What every command shares: loading a case, printing, argument types, the progress line."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..case import MAX_LEVEL, Case, CaseError, demo_case_path, load_case


FORCE_HELP = ("write into an existing --out folder that holds files axibore did not write (or changed since): those "
              "are kept; only the tool's own unchanged files are replaced, and a file of yours with the name of one "
              "the command writes is refused, even with --force")


def out(text: str = "") -> None:
    print(text, flush=True)


def err(text: str) -> None:
    print(text, file=sys.stderr, flush=True)


def progress(stage: str, detail: str) -> None:
    out(f"[{stage}] {detail}")


def level(text: str) -> int:
    """A mesh level 0..MAX_LEVEL (the one check of a level on the command line)."""
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an integer level, got {text!r}") from None
    if not 0 <= v <= MAX_LEVEL:
        raise argparse.ArgumentTypeError(f"expected a level from 0 to {MAX_LEVEL}, got {v}")
    return v


def levels(text: str) -> list[int]:
    """Two or more distinct levels, comma-separated, in the order given."""
    parts = [p.strip() for p in text.split(",")]
    if any(not p for p in parts):
        raise argparse.ArgumentTypeError(f"expected comma-separated levels such as 0,1,2,3, got {text!r} (an empty entry)")
    out_levels = [level(p) for p in parts]
    if len(out_levels) < 2 or len(set(out_levels)) != len(out_levels):
        raise argparse.ArgumentTypeError(f"expected two or more distinct levels from 0 to {MAX_LEVEL}, e.g. 0,1,2,3")
    if out_levels != sorted(out_levels):
        raise argparse.ArgumentTypeError(f"expected levels from coarse to fine in increasing order, e.g. 0,1,2; got {text!r}")
    return out_levels


def add_case_arg(p: argparse.ArgumentParser) -> None:
    p.add_argument("case", nargs="?", help="case file (TOML); default: the built-in demo")


def load(args, level_override: int | None = None) -> Case:
    """The case of the command line (the demo when none is given), with --level and --solver applied."""
    case = load_case(args.case if getattr(args, "case", None) else demo_case_path())
    updates = {}
    if getattr(args, "level", None) is not None:
        updates["mesh.level"] = args.level
    if getattr(args, "solver", None) is not None:
        updates["solver.kind"] = args.solver
    return case.with_updates(updates) if updates else case


def stem(args) -> str:
    return Path(args.case).stem if getattr(args, "case", None) else "demo"


SUMMARY_SECTIONS = ("solver", "mesh", "flow", "pressure", "forces", "onedim")


def run_dir(path: str, need_fields: bool = False) -> Path:
    """A run directory whose summary.json and wall table can be read (else a CaseError saying what is wrong)."""
    import json

    p = Path(path)
    s = p / "summary.json"
    if not s.is_file():
        raise CaseError(str(p), [("", "not a run directory (no summary.json): give a directory written by `axibore run`")])
    try:
        data = json.loads(s.read_text(encoding="utf-8"))
    except (ValueError, OSError):
        raise CaseError(str(s), [("", "damaged: not readable JSON (rerun the case to write the run directory again)")]) from None
    missing = [k for k in SUMMARY_SECTIONS if not isinstance(data, dict) or not isinstance(data.get(k), dict)]
    if missing:
        raise CaseError(str(s), [("", f"damaged or not a run summary: no {', '.join(missing)} section (rerun the case)")])
    if not (p / "wall.csv").is_file():
        raise CaseError(str(p), [("", "damaged: wall.csv is missing (rerun the case)")])
    if need_fields and not (p / "fields.vtu").is_file():
        raise CaseError(str(p), [("", "fields.vtu is missing (a grid study keeps it for its finest level only; "
                                      "rerun with --keep fields or view the finest level)")])
    return p


def refused(case) -> bool:
    """Say why this version cannot run ``case`` (True), before any work."""
    why = case.unsupported()
    if why:
        err(f"{case.source}: cannot run this case yet: {'; '.join(why)}")
    return bool(why)
