"""Parameter sweeps: one full run directory per point of a grid of case values, run on an executor.

A sweep varies dotted case keys (``bore.half_angle``, ``inlet.pressure``, ``mesh.level`` ...) over
lists of values written as in a case file. Several keys give their cartesian product, or with
``zip`` their pairs. Every point is validated (``Case.with_updates``) before anything runs.

Each point is a run directory in the sweep folder named by a short hash of its resolved case
(the case.toml text), so a point is the same directory whichever sweep asks for it. A worker runs
its point in a temporary directory of its own and sends the files back as bytes (the field files
only when kept), so workers need not share the client's filesystem; the client writes each run
directory under a temporary name and renames it whole. A complete run directory whose case.toml
matches is reused, so a rerun after an interrupt does only what is missing.
"""

from __future__ import annotations

import csv
import hashlib
import io
import itertools
import json
import math
import os
import re
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

from ..case import Case, case_from_dict, CaseError, demo_case_path, load_case
from ..io.files import atomic_write_text, check_output_dir, clean_stale_partials, write_table
from ..io.ownership import folder_lock, record, remove_own
from ..io.rundir import resolved_case_text
from ..safety import CAUTIONS
from .runner import executor, JobError, SerialExecutor
from .runstore import complete_summary, install_run, run_point  # noqa: F401  (the run store, used here and by studies)
from .sweepviews import plot_sweep, write_html

# headline outputs of a point: (column, summary section, key)
OUTPUTS = (
    ("forces.wall_x_N", "forces", "wall_x_N"),
    ("forces.total_x_N", "forces", "total_x_N"),
    ("forces.momentum_x_N", "forces", "momentum_x_N"),
    ("forces.reconciliation_rel", "forces", "reconciliation_rel"),
    ("flow.volume_flow_m3_s", "flow", "volume_flow_m3_s"),
    ("flow.mass_flow_kg_s", "flow", "mass_flow_kg_s"),
    ("flow.discharge_coefficient", "flow", "discharge_coefficient"),
    ("flow.max_speed_m_s", "flow", "max_speed_m_s"),
    ("pressure.min_wall_gauge_Pa", "pressure", "min_wall_gauge_Pa"),
    ("pressure.inlet_gauge_Pa", "pressure", "inlet_gauge_Pa"),
    ("mesh.cells", "mesh", "cells"),
)
OUTPUT_NAMES = tuple(name for name, _, _ in OUTPUTS)
DEFAULT_PLOTS = ("forces.total_x_N", "flow.discharge_coefficient", "pressure.min_wall_gauge_Pa")
HASH_CHARS = 12
MAX_POINTS = 10_000

_INT = re.compile(r"^[+-]?\d+$")
_FLOAT = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_NUMBER_UNIT = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")


# ---------------------------------------------------------------------------------------------
# values and points


def _scalar(text: str) -> Any:
    """A comma-list entry as a case file would hold it: integer, float, boolean or a string with units."""
    t = text.strip()
    if _INT.match(t):
        return int(t)
    if _FLOAT.match(t):
        return float(t)
    if t.lower() in ("true", "false"):
        return t.lower() == "true"
    return t


def parse_values(key: str, given: Any, source: str = "--vary") -> list:
    """Values of one varied key: a list (from a case file), a comma list ``"20 mm,25 mm"`` or a
    linear range with a count ``"3 bar:12 bar:10"`` (units on the ends)."""
    if isinstance(given, list):
        if not given:
            raise CaseError(source, [(key, "expected one or more values, got an empty list")])
        return list(given)
    if not isinstance(given, str):
        return [given]
    text = given.strip()
    if not text:
        raise CaseError(source, [(key, "expected values such as \"20 mm,25 mm\" or a range \"3 bar:12 bar:10\", got nothing")])
    if ":" in text and "," not in text:
        parts = [p.strip() for p in text.split(":")]
        if len(parts) != 3 or not _INT.match(parts[2]):
            raise CaseError(source, [(key, f"expected a range START:END:COUNT such as \"3 bar:12 bar:10\", got {given!r}")])
        count = int(parts[2])
        if not 1 <= count <= MAX_POINTS:
            raise CaseError(source, [(key, f"expected a count from 1 to {MAX_POINTS} in {given!r}, got {count}")])
        ends = [_NUMBER_UNIT.match(p) for p in parts[:2]]
        if not all(ends):
            raise CaseError(source, [(key, f"expected a number with an optional unit at both ends of {given!r}")])
        (a, ua), (b, ub) = (m.groups() for m in ends)
        if ua and ub and ua != ub:
            raise CaseError(source, [(key, f"expected the same unit at both ends of the range {given!r} ({ua!r} and {ub!r})")])
        unit = ua or ub
        lo, hi = float(a), float(b)
        vals = [lo] if count == 1 else [lo + (hi - lo) * i / (count - 1) for i in range(count)]
        if not unit:
            if _INT.match(a) and _INT.match(b) and all(float(v).is_integer() for v in vals):
                return [int(round(v)) for v in vals]
            return vals
        return [f"{v:.12g} {unit}" for v in vals]
    entries = [p.strip() for p in text.split(",")]
    if any(not e for e in entries):
        raise CaseError(source, [(key, f"expected comma-separated values, got {given!r} (an empty entry)")])
    return [_scalar(e) for e in entries]


def parse_vary(text: str) -> tuple[str, str]:
    """``KEY=VALUES`` of the command line."""
    key, sep, values = text.partition("=")
    if not sep or not key.strip():
        raise CaseError("--vary", [("", f"expected KEY=VALUES such as bore.half_angle=\"10 deg,15 deg\", got {text!r}")])
    return key.strip(), values


def point_grid(vary: dict[str, list], zip_: bool = False, source: str = "--vary") -> list[dict]:
    """The points: the cartesian product of the value lists, or their pairs with ``zip_``."""
    keys = list(vary)
    if not keys:
        raise CaseError(source, [("", "nothing to vary: give --vary KEY=VALUES (or a [sweep] vary table)")])
    if zip_:
        lengths = {k: len(v) for k, v in vary.items()}
        if len(set(lengths.values())) > 1:
            raise CaseError(source, [("zip", "expected lists of equal length to pair, got "
                                             + ", ".join(f"{k}: {n}" for k, n in lengths.items()))])
        combos = list(zip(*vary.values()))
    else:
        n = math.prod(len(v) for v in vary.values())
        if n > MAX_POINTS:
            raise CaseError(source, [("", f"the product has {n} points, more than {MAX_POINTS}")])
        combos = list(itertools.product(*vary.values()))
    return [dict(zip(keys, c)) for c in combos]


def _si_value(case: Case, key: str) -> Any:
    """The validated (SI) value of a dotted key of ``case``."""
    node: Any = case.model
    for part in key.split("."):
        m = re.match(r"^(\w+)\[(\d+)\]$", part)
        node = getattr(node, m.group(1))[int(m.group(2)) - 1] if m else getattr(node, part)
    if isinstance(node, tuple) and len(node) == 2 and isinstance(node[0], str):  # flow_rate: (kind, value)
        return node[1]
    return node


def point_name(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:HASH_CHARS]


@dataclass
class Point:
    index: int  # from 1
    values: dict  # as given
    case: Case
    text: str  # resolved case.toml
    name: str  # run directory name (hash of text)
    si: dict = field(default_factory=dict)

    def label(self) -> str:
        return ", ".join(f"{k}={_shown(v)}" for k, v in self.values.items())


def _shown(value) -> str:
    """A point's value as a person reads it: numbers to 10 significant digits (no binary noise such as
    0.025050000000000003), the unit kept."""
    if isinstance(value, float):
        return f"{value:.10g}"
    if isinstance(value, str):
        num, sep, unit = value.partition(" ")
        try:
            return f"{float(num):.10g}{sep}{unit}"
        except ValueError:
            return value
    return str(value)


def without_sweep(case: Case) -> Case:
    if "sweep" not in case.data and "uncertainty" not in case.data:
        return case
    data = {k: v for k, v in case.data.items() if k not in ("sweep", "uncertainty")}
    return case_from_dict(data, source=case.source, base_dir=case.base_dir)


def sweep_from_case(case: Case) -> tuple[dict, bool]:
    """The vary table and zip flag of a case's [sweep] section ({} and False without one)."""
    spec = case.model.sweep
    return (dict(spec.vary), spec.zip) if spec is not None else ({}, False)


def build_points(case: Case, vary: dict[str, Any], zip_: bool = False, source: str = "--vary") -> list[Point]:
    """Every point validated before anything runs: CaseError naming each bad point and key."""
    base = without_sweep(case)
    lists = {key: parse_values(key, given, source) for key, given in vary.items()}
    points, problems = [], []
    for i, values in enumerate(point_grid(lists, zip_, source), 1):
        where = f"point {i} ({', '.join(f'{k}={v}' for k, v in values.items())})"
        try:
            pcase = base.with_updates(values)
        except CaseError as exc:
            problems += [(f"{where}: {path}" if path else where, msg) for path, msg in exc.problems]
            continue
        refused = pcase.unsupported()
        if refused:
            problems.append((where, "cannot run: " + "; ".join(refused)))
            continue
        text = resolved_case_text(pcase)
        points.append(Point(i, values, pcase, text, point_name(text), {k: _si_value(pcase, k) for k in values}))
    if problems:
        raise CaseError(case.source, problems)
    return points


# ---------------------------------------------------------------------------------------------
# the sweep


@dataclass
class SweepResult:
    """The table of a sweep: one row (a dict) a point, in point order."""

    title: str
    keys: list[str]
    rows: list[dict]
    out_dir: Path | None = None
    ran: int = 0
    reused: int = 0
    seconds: float = 0.0

    @property
    def failed(self) -> list[dict]:
        return [r for r in self.rows if r["status"] != "ok"]

    @property
    def ok(self) -> bool:
        return not self.failed

    def columns(self) -> list[str]:
        return list(self.rows[0]) if self.rows else []

    def column(self, name: str) -> list:
        return [r.get(name) for r in self.rows]

    def lines(self, outputs: tuple[str, ...] = ("forces.wall_x_N", "forces.total_x_N", "flow.volume_flow_m3_s",
                                                "flow.discharge_coefficient", "pressure.min_wall_gauge_Pa")) -> list[str]:
        """The table as printed text."""
        heads = ["#"] + self.keys + [o.split(".", 1)[1] for o in outputs] + ["status"]
        body = []
        for r in self.rows:
            cells = [str(r["point"])] + [str(r.get(k, "")) for k in self.keys]
            cells += ["-" if r.get(o) is None else f"{r[o]:.6g}" for o in outputs]
            cells.append(r["status"] + (f": {r['error']}" if r.get("error") else ""))
            body.append(cells)
        widths = [max(len(h), *(len(c[i]) for c in body)) if body else len(h) for i, h in enumerate(heads[:-1])]
        fmt = lambda cells: "  ".join(c.rjust(w) for c, w in zip(cells, widths)) + "  " + cells[-1]  # noqa: E731
        return [fmt(heads)] + [fmt(c) for c in body]


def _row(p: Point, summary: dict | None, status: str, error: str | None, run_dir: Path, seconds: float | None,
         reused: bool) -> dict:
    row: dict[str, Any] = {"point": p.index}
    for k, v in p.values.items():
        row[k] = v
    for k, v in p.si.items():
        row[f"{k} [SI]"] = v
    for name, section, key in OUTPUTS:
        row[name] = summary.get(section, {}).get(key) if summary else None
    row["solver.converged"] = summary.get("solver", {}).get("converged") if summary else None
    row["status"] = status
    row["error"] = error
    row["run_dir"] = run_dir.name
    row["seconds"] = seconds
    row["reused"] = reused
    return row


def _status(summary: dict) -> tuple[str, str | None]:
    if not summary.get("solver", {}).get("converged"):
        return "not-converged", "the solver did not converge"
    return "ok", None


def _fmt_time(s: float) -> str:
    return f"{s:.0f} s" if s < 120 else f"{s / 60:.1f} min"


def run_sweep(case: Case, points: list[Point], out_dir: Path, executor=None, keep_fields: bool = False,
              plots: tuple[str, ...] | None = None, progress: Callable[[str], None] | None = None,
              vary: dict | None = None, zip_: bool = False) -> SweepResult:
    """Run the points not yet complete in ``out_dir`` on ``executor`` and write the results."""

    progress = progress or (lambda msg: None)
    executor = executor or SerialExecutor()
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    record(out_dir, "sweep", [])  # the folder is a sweep's from its first moment
    for d in clean_stale_partials(out_dir):
        progress(f"removed {d.name}, left by an interrupted sweep")
    keys = list(dict.fromkeys(k for p in points for k in p.values))  # every varied key, in order of first use
    rows: dict[int, dict] = {}
    todo: dict[str, list[Point]] = {}  # run directory name -> the points that share it
    reused = 0
    for p in points:
        summary = complete_summary(out_dir / p.name, p.text)
        if summary is not None:
            status, error = _status(summary)
            rows[p.index] = _row(p, summary, status, error, out_dir / p.name, None, True)
            reused += 1
        else:
            todo.setdefault(p.name, []).append(p)
    if not (out_dir / "sweep.json").exists():  # marks the folder as a sweep before the first point exists
        _write_json(out_dir, case, keys, [], "running", vary, zip_)
    progress(f"{len(points)} points: {reused} complete already (reused), {len(todo)} to run on "
             f"{executor.workers} worker{'s' if executor.workers != 1 else ''}")
    names = list(todo)
    jobs = [(todo[n][0].case, keep_fields) for n in names]
    t0 = time.perf_counter()
    done = failed = 0
    for i, result, error in executor.run(run_point, jobs):
        name = names[i]
        group = todo[name]
        err_file = out_dir / f"{name}.error.txt"
        if error is None:
            try:
                install_run(out_dir / name, result["files"], group[0].text)
                summary = complete_summary(out_dir / name, group[0].text)
                if summary is None:
                    raise OSError(f"{out_dir / name}: the run directory written is not complete")
            except OSError as exc:
                error = JobError(f"{type(exc).__name__}: {exc}", str(exc))
        if error is None:
            remove_own(out_dir, err_file.name)
            status, why = _status(summary)
            for p in group:
                rows[p.index] = _row(p, summary, status, why, out_dir / name, result["seconds"], False)
            done += 1
        else:
            with folder_lock(out_dir):
                atomic_write_text(err_file, f"{group[0].label()}\n{error.message}\n\n{error.traceback}")
                record(out_dir, "sweep", [err_file])
            for p in group:
                rows[p.index] = _row(p, None, "failed", error.message, out_dir / name, None, False)
            failed += 1
        finished = done + failed
        elapsed = time.perf_counter() - t0
        left = len(names) - finished
        eta = elapsed / finished * left
        last = rows[group[0].index]
        what = "FAILED: " + str(last["error"]) if last["status"] == "failed" else last["status"]
        progress(f"[{finished}/{len(names)}] done {done}, failed {failed}, left {left}, "
                 f"elapsed {_fmt_time(elapsed)}, about {_fmt_time(eta)} left | point {group[0].index} "
                 f"({group[0].label()}): {what}")
    result = SweepResult(case.title, keys, [rows[p.index] for p in points], out_dir, ran=done + failed, reused=reused,
                         seconds=time.perf_counter() - t0)
    write_results(result, case, out_dir, plots, vary, zip_)
    return result


def _write_json(out_dir: Path, case: Case, keys: list[str], rows: list[dict], status: str, vary, zip_) -> None:

    data = {"kind": "axibore sweep", "schema": 1, "title": case.title, "case": case.source, "keys": keys,
            "vary": {k: v for k, v in (vary or {}).items()}, "zip": zip_, "status": status,
            "outputs": list(OUTPUT_NAMES), "points": rows, "cautions": list(CAUTIONS)}
    with folder_lock(out_dir):  # another sweep may share the folder (ownership.folder_lock)
        atomic_write_text(out_dir / "sweep.json", json.dumps(data, indent=2, default=str) + "\n")
        record(out_dir, "sweep", ["sweep.json"])


def write_results(result: SweepResult, case: Case, out_dir: Path, plots: tuple[str, ...] | None = None,
                  vary: dict | None = None, zip_: bool = False) -> None:
    """sweep.csv, sweep.json, the plots (plot_<output>_vs_<key>.png) and sweep.html."""
    with folder_lock(out_dir):  # another sweep may share the folder (ownership.folder_lock)
        _write_results(result, case, out_dir, plots, vary, zip_)


def _write_results(result: SweepResult, case: Case, out_dir: Path, plots, vary, zip_) -> None:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    cols = result.columns()
    w.writerow(cols)
    for r in result.rows:
        w.writerow(["" if r.get(c) is None else (repr(r[c]) if isinstance(r[c], float) else r[c]) for c in cols])
    write_table(out_dir / "sweep.csv", buf.getvalue(), "axibore sweep: a row a point; the varied keys, the status and "
                "the headline results of its run (SI units, as named in each column)")
    _write_json(out_dir, case, result.keys, result.rows, "complete" if result.ok else "some points failed", vary, zip_)
    pngs = plot_sweep(result, out_dir, DEFAULT_PLOTS if plots is None else plots)
    html_path = write_html(result, out_dir, pngs, point_name(resolved_case_text(without_sweep(case))))
    record(out_dir, "sweep", ["sweep.csv", "sweep.csv.json", html_path, *pngs])


def sweep(case_or_path=None, vary: dict | None = None, zip_: bool = False, workers: int | None = None,
          scheduler: str | None = None, out=None, plot=None, keep_fields: bool = False, progress=None,
          force: bool = False) -> SweepResult:
    """The Python form of ``axibore sweep`` (see ``axibore.sweep``)."""

    path = None if isinstance(case_or_path, Case) else Path(case_or_path or demo_case_path())
    case = case_or_path if isinstance(case_or_path, Case) else load_case(path)
    if vary is None:
        vary, zip_ = sweep_from_case(case)
    points = build_points(case, vary, zip_, source=case.source)
    stem = path.stem if path is not None else "case"
    out_dir = check_output_dir(Path(out) if out is not None else Path("runs") / f"{stem}-sweep", "sweep", force)
    workers = max(1, os.cpu_count() or 1) if workers is None else workers
    plots = tuple(plot.split(",")) if isinstance(plot, str) else (tuple(plot) if plot else None)
    with executor(max(workers, 1), scheduler=scheduler, dask=workers > 0) as ex:
        return run_sweep(case, points, out_dir, ex, keep_fields=keep_fields, plots=plots, progress=progress,
                         vary=vary, zip_=zip_)
