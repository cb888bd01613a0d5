"""The run store shared by sweeps, grid studies and uncertainty studies: one point run on a worker
(its files sent back as bytes, so workers need not share the filesystem), installed on the client as
a run folder named by the hash of its resolved case, whole or not at all, and reused when complete."""

from __future__ import annotations

import json
import os
import shutil
import socket
import tempfile
import time
from pathlib import Path

from ..io.files import is_run_directory
from ..io.ownership import file_hash, read_manifest, replaceable, write_manifest
from ..io.rundir import FIELD_FILES
from ..run import run_case


def run_point(job: tuple) -> dict:
    """Run one point in a temporary directory of this worker; return the run directory's files as
    bytes (field files only with ``keep_fields``). A module-level function, sent to workers."""

    case, keep_fields = job
    t0 = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="axibore-point-") as tmp:
        run_dir = Path(tmp) / "run"
        run_case(case, run_dir, report=False)
        files = {f.name: f.read_bytes() for f in sorted(run_dir.iterdir())
                 if f.is_file() and (keep_fields or f.name not in FIELD_FILES)}
    return {"files": files, "seconds": time.perf_counter() - t0, "host": socket.gethostname(), "pid": os.getpid()}


def complete_summary(run_dir: Path, text: str) -> dict | None:
    """The summary of a complete run directory of exactly this resolved case, else None."""
    if not is_run_directory(run_dir):
        return None
    try:
        if (run_dir / "case.toml").read_text(encoding="utf-8") != text:
            return None
        summary = json.loads((run_dir / "summary.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not (isinstance(summary, dict) and summary.get("software", {}).get("name") == "axibore"):
        return None
    # every file the run wrote is still there, unchanged (a point missing its wall.csv, or with an edited
    # summary.json, is run again rather than reused)
    manifest = read_manifest(run_dir)
    if manifest is None or manifest.partial:
        return None
    for rel, digest in manifest.files.items():
        try:
            if file_hash(run_dir / rel) != digest:
                return None
        except OSError:
            return None
    return summary


def install_run(run_dir: Path, files: dict[str, bytes], text: str) -> bool:
    """Write a run directory whole: files into a temporary directory beside it, then one rename.

    If another sweep has meanwhile written the same point, its directory is kept and ours dropped
    (False). A stale directory (another case, incomplete) is replaced."""
    run_dir = Path(run_dir)
    parent = run_dir.parent
    parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{run_dir.name}.pid-{os.getpid()}.", suffix=".partial", dir=parent))
    try:
        os.chmod(tmp, 0o755)
        for name in sorted(files, key=lambda n: n == "summary.json"):  # the index last
            if "/" in name or name.startswith("."):
                continue
            (tmp / name).write_bytes(files[name])
        write_manifest(tmp, "run")
        for _ in range(5):
            if complete_summary(run_dir, text) is not None:
                shutil.rmtree(tmp, ignore_errors=True)
                return False
            try:
                os.rename(tmp, run_dir)  # fails if run_dir exists and is not empty
                return True
            except OSError:
                pass
            if complete_summary(run_dir, text) is not None:
                continue
            if not replaceable(run_dir, "run"):
                raise OSError(f"{run_dir}: holds files axibore did not write (or changed since): not replaced; move them "
                              "away or give the sweep another --out")
            old = parent / f".{run_dir.name}.old-{os.getpid()}-{time.monotonic_ns()}"
            try:
                os.rename(run_dir, old)
            except FileNotFoundError:
                continue
            shutil.rmtree(old, ignore_errors=True)
        raise OSError(f"{run_dir}: could not be written (changed by another process meanwhile)")
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
