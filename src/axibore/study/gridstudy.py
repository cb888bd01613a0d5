"""Grid-convergence study of a case: one full run per mesh level, GCI of the headline numbers."""

from __future__ import annotations

import json
import math
import shutil
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from ..estimate import remaining_time
from ..io.files import atomic_write_text, is_run_directory, write_table
from ..io.ownership import record, remove_own, replaceable
from ..io.rundir import FIELD_FILES, resolved_case_text
from .gci import gci, GCIResult
from ..run import run_case
from ..view.labels import display, label, number
from ..view.page import Col, Page, signoff_for, text_hash
from ..view.plots import figure, line_style, save
from ..view.report import write_report
from .runner import SerialExecutor
from .runstore import install_run, run_point

# (name, summary section, summary key)
QUANTITIES = (
    ("wall_x_N", "forces", "wall_x_N"),
    ("centerbody_x_N", "forces", "centerbody_x_N"),
    ("total_x_N", "forces", "total_x_N"),
    ("volume_flow_m3_s", "flow", "volume_flow_m3_s"),
    ("discharge_coefficient", "flow", "discharge_coefficient"),
    ("contraction_coefficient", "flow", "contraction_coefficient"),
    ("min_wall_gauge_Pa", "pressure", "min_wall_gauge_Pa"),
    ("max_speed_m_s", "flow", "max_speed_m_s"),
)
DESIGN_ORDER = 2.0


def quantity_label(name: str) -> str:
    """The human name of a quantity of the study (view/labels.py holds them all)."""
    section = next((sec for n, sec, _ in QUANTITIES if n == name), "")
    return label(f"{section}.{name}").text


@dataclass
class LevelResult:
    level: int
    run_dir: Path
    summary: dict | None = None
    error: str | None = None
    seconds: float = 0.0


@dataclass
class GridStudy:
    title: str
    levels: list[LevelResult]
    results: dict[str, GCIResult] = field(default_factory=dict)
    notes: dict[str, list[str]] = field(default_factory=dict)

    def as_dict(self) -> dict:
        return {
            "schema": 1,
            "title": self.title,
            "procedure": "Celik et al. 2008, J. Fluids Eng. 130(7) 078001",
            "design_order": DESIGN_ORDER,
            "levels": [{"level": lv.level, "run_dir": str(lv.run_dir), "ok": lv.error is None, "error": lv.error,
                        "cells": lv.summary["mesh"]["cells"] if lv.summary else None,
                        "h_m": lv.summary["mesh"]["h_m"] if lv.summary else None, "seconds": lv.seconds} for lv in self.levels],
            "quantities": {k: {**v.as_dict(), "notes": self.notes.get(k, [])} for k, v in self.results.items()},
        }


def _corner_notes(name: str, summary: dict, result: GCIResult) -> list[str]:
    """Why a quantity of a bore with sharp convex corners does not converge cleanly."""
    corners = [c for c in summary.get("corners", []) if c["convex"]]
    if not corners or (result.in_asymptotic_range is True and not result.flags):
        return []
    def where(cs):
        return ", ".join(f"{c['boundary']} x = {c['x_m'] * 1e3:.4g} mm ({c['key']})" for c in cs)

    if name in ("min_wall_gauge_Pa", "max_speed_m_s"):
        p = summary["pressure"]
        h = summary["mesh"]["target_h_m"]
        near = [c for c in corners if math.hypot(c["x_m"] - p["min_wall_x_m"], c["r_m"] - p["min_wall_r_m"]) < 6 * h]
        if near:
            return [f"the minimum pressure sits at a sharp convex corner ({where(near)}) where the exact potential-flow "
                    "suction is infinite: it grows without limit under refinement and has no converged value"]
    return [f"the bore has sharp convex corners ({where(corners)}): their singular suction slows the convergence"]


def _reusable(run_dir: Path, case) -> dict | None:
    """The summary of a complete earlier run of exactly this resolved case, else None."""
    if not is_run_directory(run_dir):
        return None
    try:
        written = (run_dir / "case.toml").read_text(encoding="utf-8")
        summary = json.loads((run_dir / "summary.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if written != resolved_case_text(case) or not summary.get("solver", {}).get("converged"):
        return None
    return summary


def run_level(job: tuple) -> dict:
    """One level of a study (a module-level function, so that a process pool can run it)."""

    case, run_dir = job
    return run_case(case, run_dir, report=False).summary()



def run_grid_study(case, levels: list[int], out_dir: Path, progress: Callable[[str], None] | None = None,
                   executor=None, keep_fields: bool = False) -> GridStudy:
    """Run ``case`` at each of ``levels`` through ``executor`` (default: in this process), then the GCI.

    Summaries and wall tables of every level are kept; the field files only of the finest level,
    unless ``keep_fields``."""

    progress = progress or (lambda msg: None)
    executor = executor or SerialExecutor()
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    record(out_dir, "gridstudy", [])  # the folder is a grid study's from its first moment
    done = [LevelResult(level, out_dir / f"level-{level}") for level in levels]
    for stale in sorted(out_dir.glob("level-*")):  # levels of an earlier study that this one does not have
        if stale.is_dir() and stale.name not in {lv.run_dir.name for lv in done} and replaceable(stale, "run"):
            shutil.rmtree(stale, ignore_errors=True)
            progress(f"removed {stale.name}: a level of an earlier study that this one does not include")
    remove_own(out_dir, "level-*.error.txt")
    cases = {lv.level: case.with_level(lv.level) for lv in done}
    todo = []
    for lv in done:
        reused = _reusable(lv.run_dir, cases[lv.level])
        if reused is not None:
            lv.summary = reused
            progress(f"level {lv.level}: reused the complete run in {lv.run_dir.name} (same resolved case)")
        else:
            todo.append(lv)
    remote = getattr(executor, "remote", False)  # workers that may not share this filesystem: files come back
    if remote:

        fn, jobs = run_point, [(cases[lv.level], True) for lv in todo]
    else:
        fn, jobs = run_level, [(cases[lv.level], lv.run_dir) for lv in todo]
    progress(f"{len(todo)} of {len(levels)} levels to run on {executor.workers} worker{'s' if executor.workers > 1 else ''}")
    t0 = t_last = time.perf_counter()
    took: list[float] = []
    for k, (i, summary, error) in enumerate(executor.run(fn, jobs), 1):
        lv = todo[i]
        lv.seconds = time.perf_counter() - t0
        took.append(time.perf_counter() - t_last)
        t_last = time.perf_counter()
        # each level about twice the cells of the one before, and about twice the time
        ahead = remaining_time(took, len(todo) - k, growth=2.0, workers=executor.workers)
        if remote and error is None:
            install_run(lv.run_dir, summary["files"], resolved_case_text(cases[lv.level]))
            summary = json.loads(summary["files"]["summary.json"])
        if error is None and not summary["solver"]["converged"]:  # kept for diagnosis, left out of the GCI
            lv.error = (f"not converged (residual {summary['solver']['residual']:.2e}; "
                        f"{summary['solver'].get('criterion', '')}): left out of the study")
            progress(f"[{k}/{len(todo)}] level {lv.level}: NOT CONVERGED, left out of the study{ahead}")
        elif error is None:
            lv.summary = summary
            progress(f"[{k}/{len(todo)}] level {lv.level}: {summary['mesh']['cells']:,} cells, {lv.seconds:.1f} s{ahead}")
        else:  # a failed level is reported; the study goes on with the others
            lv.error = error.message
            atomic_write_text(out_dir / f"level-{lv.level}.error.txt", error.traceback)
            record(out_dir, "gridstudy", [f"level-{lv.level}.error.txt"])
            progress(f"[{k}/{len(todo)}] level {lv.level}: FAILED ({lv.error}){ahead}")
    study = GridStudy(case.title, done)
    ok = [lv for lv in done if lv.summary]
    for name, section, key in QUANTITIES:
        vals = [lv.summary[section].get(key) for lv in ok]
        if any(v is None for v in vals) or not ok:
            continue
        if name == "centerbody_x_N" and all(v == 0 for v in vals):
            continue
        r = gci([lv.summary["mesh"]["h_m"] for lv in ok], vals, DESIGN_ORDER, cautious=True)
        study.results[name] = r
        notes = _corner_notes(name, ok[-1].summary, r)
        if name == "volume_flow_m3_s" and case.inlet.flow_rate is not None:
            notes.append("given in the case (inlet.flow_rate): constant by construction")
        study.notes[name] = notes
    write_study(study, out_dir)
    if not keep_fields and ok:
        finest = max(lv.level for lv in ok)
        for lv in ok:
            if lv.level != finest:
                for name in FIELD_FILES:  # the level's own files only, its manifest kept true
                    remove_own(lv.run_dir, name)

    for lv in ok:  # reports last, so that each embeds the study's convergence plot
        error = write_report(lv.run_dir)
        if error:
            progress(f"level {lv.level}: report not built ({error})")
    return study


def write_study(study: GridStudy, out_dir: Path) -> None:
    data = study.as_dict()
    atomic_write_text(out_dir / "gridstudy.json", json.dumps(data, indent=2) + "\n")
    lines = ["quantity,level,cells,h_m,value,observed_order,extrapolated,gci_fine,in_asymptotic_range,flags"]
    ok = [lv for lv in study.levels if lv.summary]
    for name, r in study.results.items():
        for lv, h, v in zip(sorted(ok, key=lambda lv: lv.summary["mesh"]["h_m"]), r.h, r.phi):
            flags = "; ".join(r.flags + study.notes.get(name, [])).replace(",", ";")
            lines.append(f"{name},{lv.level},{lv.summary['mesh']['cells']},{h:.8g},{v:.10g},"
                         f"{'' if r.order is None else f'{r.order:.4f}'},{'' if r.extrapolated is None else f'{r.extrapolated:.10g}'},"
                         f"{'' if r.gci_fine is None else f'{r.gci_fine:.6g}'},{r.in_asymptotic_range},{flags}")
    write_table(out_dir / "gridstudy.csv", "\n".join(lines) + "\n",
                "axibore grid study: a row a quantity and level; the observed order, the extrapolated value and the "
                "GCI of the finest level (Celik et al. 2008) repeated on each row of a quantity")
    if len(ok) >= 2:
        plot_convergence(study, out_dir / "convergence.png")
    write_html(study, out_dir)
    record(out_dir, "gridstudy", ["gridstudy.json", "gridstudy.csv", "gridstudy.csv.json", "convergence.png", "gridstudy.html"])


def write_html(study: GridStudy, out_dir: Path) -> Path:
    """gridstudy.html: self-contained (the plot embedded), prints on A4."""
    ok = sorted([lv for lv in study.levels if lv.summary], key=lambda lv: -lv.summary["mesh"]["h_m"])
    page = Page("Grid study", study.title, ["procedure: Celik, Ghia, Roache, Freitas, Coleman & Raad, J. Fluids Eng. "
                                            "130(7) 078001, 2008", "safety factor 1.25 with three or more grids, 3 with two"])
    page.cautions()
    page.h2("Levels")
    rows = []
    for i, lv in enumerate(ok):
        sv, m = lv.summary["solver"], lv.summary["mesh"]
        ratio = number(ok[i - 1].summary["mesh"]["h_m"] / m["h_m"], 1.0, 4) if i else "–"
        rows.append([str(lv.level), f"{m['cells']:,}", number(m["h_m"], 1e3, 4), ratio,
                     f"{sv.get('method', '')}" + ("" if sv["converged"] else " (NOT converged)")])
    rows += [[str(lv.level), "–", "–", "–", f"failed: {lv.error}"] for lv in study.levels if lv.error]
    page.table([Col("level", num=False), Col("cells"), Col("cell size h", "mm"), Col("refinement ratio"),
                Col("linear solve", num=False)], rows)
    page.h2("Quantities")
    cols = [Col("quantity", num=False), Col("unit", num=False)] + [Col(f"level {lv.level}") for lv in ok]
    cols += [Col("observed order"), Col("extrapolated"), Col("GCI, finest", "%")]
    rows, notes = [], {}
    for name, r in study.results.items():
        section = next(sec for n, sec, _ in QUANTITIES if n == name)
        lab = label(f"{section}.{name}")
        unit, k = display(lab.dim, list(r.phi))
        vals = dict(zip(r.h, r.phi))
        cells = [number(vals[lv.summary["mesh"]["h_m"]], k, lab.digits + 1) if lv.summary["mesh"]["h_m"] in vals else "–"
                 for lv in ok]
        rows.append([lab.text, unit] + cells + ["–" if r.order is None else f"{r.order:.2f}",
                                                number(r.extrapolated, k, lab.digits + 1),
                                                "–" if r.gci_fine is None else number(r.gci_fine * 100, 1.0, 3)])
        notes[len(rows) - 1] = r.flags + study.notes.get(name, [])
    page.table(cols, rows, notes=notes)
    plot = out_dir / "convergence.png"
    if plot.exists():
        page.h2("Convergence")
        page.figure(plot, "Relative difference from the extrapolated value against the cell size, with a slope-2 guide.",
                    "convergence")
    finest = ok[-1] if ok else None
    case_hash = "–"
    if finest is not None and (finest.run_dir / "case.toml").exists():
        case_hash = f"{text_hash((finest.run_dir / 'case.toml').read_text(encoding='utf-8'))} (level {finest.level})"
    page.signoff(signoff_for(study.title, case_hash))
    return page.write(out_dir / "gridstudy.html")


def plot_convergence(study: GridStudy, path: Path) -> Path:
    """Log-log plot of |phi - phi_extrapolated| / |phi_extrapolated| against h, with a slope-2 guide."""

    fig, ax = figure(6.4, 4.6, dpi=120)
    hs_all = []
    for k, (name, r) in enumerate(study.results.items()):
        if r.extrapolated is None or not r.extrapolated or r.gci_fine in (None, 0.0):
            continue
        err = [abs(v - r.extrapolated) / abs(r.extrapolated) for v in r.phi]
        pts = [(h, e) for h, e in zip(r.h, err) if e > 0]
        if len(pts) < 2:
            continue
        hs, es = zip(*pts)
        hs_all += hs
        text = quantity_label(name)
        name_p = f"{text} (p = {r.order:.2f})" if r.order is not None else text
        ax.loglog([h * 1e3 for h in hs], es, label=name_p, **line_style(k))  # lines that coincide stay distinguishable
    if hs_all:
        h0, h1 = min(hs_all), max(hs_all)
        ref = [1e-3 * (h / h1) ** 2 for h in (h0, h1)]
        ax.loglog([h0 * 1e3, h1 * 1e3], ref, "k", lw=0.8, ls=(0, (1, 2)), label="slope 2")
    else:
        ax.text(0.5, 0.5, "no quantity has an extrapolated value to plot\n(converged to round-off, or no observed order)",
                transform=ax.transAxes, ha="center", va="center", fontsize=9)
    from matplotlib.ticker import FuncFormatter

    plain = FuncFormatter(lambda v, _: f"{v:g}")  # 4, 5, 6 mm rather than 4 x 10^0 on a log axis within a decade
    ax.xaxis.set_major_formatter(plain)
    ax.xaxis.set_minor_formatter(plain)
    ax.set_xlabel("representative cell size h [mm]")
    ax.set_ylabel("|value − extrapolated| / |extrapolated|")
    ax.set_title(f"Grid convergence: {study.title}", fontsize=10)
    ax.grid(True, which="both", alpha=0.3)
    if hs_all:
        ax.legend(fontsize=8)
    fig.tight_layout()
    return save(fig, path)


def table_lines(study: GridStudy) -> list[str]:
    ok = sorted([lv for lv in study.levels if lv.summary], key=lambda lv: -lv.summary["mesh"]["h_m"])
    head = f"{'quantity':<22}" + "".join(f"{'L' + str(lv.level):>14}" for lv in ok) + f"{'order':>8}{'extrapolated':>15}{'GCI fine':>10}"
    lines = [head]
    for name, r in study.results.items():
        vals = dict(zip(r.h, r.phi))
        row = f"{name:<22}" + "".join(f"{vals.get(lv.summary['mesh']['h_m'], math.nan):>14.6g}" for lv in ok)
        row += f"{'-' if r.order is None else f'{r.order:.2f}':>8}"
        row += f"{'-' if r.extrapolated is None else f'{r.extrapolated:.6g}':>15}"
        row += f"{'-' if r.gci_fine is None else f'{r.gci_fine:.3%}':>10}"
        lines.append(row)
        for flag in r.flags + study.notes.get(name, []):
            lines.append(f"{'':<22}! {flag}")
    for lv in study.levels:
        if lv.error:
            lines.append(f"level {lv.level} failed: {lv.error}")
    return lines
