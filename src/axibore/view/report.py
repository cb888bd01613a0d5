"""report.html of a run directory: self-contained (images embedded), printable on A4.

Built only from the run directory (summary.json, case.toml, wall.csv, fields.vtu) so that
``axibore report RUN_DIR`` rebuilds it at any time. Every headline number carries its
summary.json key and raw value as data attributes (``data-key``, ``data-value``).
"""

from __future__ import annotations

import datetime as dt
import html
from pathlib import Path

from ..case import CaseError, load_case
from ..describe import UNDERSTOOD
from ..io.files import atomic_write_text
from ..io.ownership import read_manifest, record
from ..io.rundir import read_summary
from ..post.joints import CAUTION as JOINT_CAUTION
from ..version import __version__
from . import plots
from .labels import display, number
from .page import Col, Page, signoff_for, text_hash
from .reportparts import bolt_table, detail_rows, headline_table, inputs_table, margins, grid_uncertainty, viscous_rows
from .sketch import bore_sketch


CAPTIONS = {
    "view3d": "Cut-away of the bore revolved 270° about the axis; cut planes and wall coloured by gauge pressure.",
    "view3d_planar": "The planar section coloured by gauge pressure, with streamlines (a planar case is not revolved).",
    "wall_pressure": "Wall gauge pressure along the axis: the 2D result and the 1D model (Bernoulli and continuity with the "
                     "local flow area).",
    "axial_force": "Cumulative axial force on the part from the inlet; its end value is the wall force.",
    "speed": "Speed in the meridional plane with streamlines; right: a zoom at the least wall pressure (the circle).",
    "cp": "Wall pressure coefficient Cp = (p − p_out) / q_exit against the distance from the inlet plane in inlet bore "
          "diameters: reference pressure the outlet pressure, reference dynamic pressure the exit dynamic pressure of the "
          "1D answer; dashed: the 1D model. Hydrodynamic (inviscid) pressure only.",
    "unrolled": "Wall gauge pressure unrolled along the wall, for the structural model: arc length s from the inlet, the "
                "pieces of the wall numbered, corners (solid, with their turn) and smooth joints (dotted) marked with their "
                "x; a centre body on its own row. Hydrodynamic (inviscid) pressure only.",
    "wall_layer": "Wall layer: wall shear along the flow and shape factor; shaded: separated ranges, where the inviscid "
                  "wall pressure is not reliable; dotted: transition.",
    "mesh": "The mesh, with a zoom at the least wall pressure (the circle).",
    "jet": "Free jet: the settled jet boundary from the lip, the far-jet radius and the vena contracta; below, the "
           "remaining speed mismatch along it (zero on an exact free streamline).",
    "gridstudy": "Grid convergence of the grid study this run belongs to.",
}


def _case(run_dir: Path):
    """The resolved case of the run (None where it does not load, e.g. a points file that moved)."""
    try:
        return load_case(run_dir / "case.toml")
    except (CaseError, OSError, ValueError):
        return None


def build_report(run_dir: str | Path, include_3d: bool = True, shown_dir: str | Path | None = None, unit: str = "bar") -> Path:
    """Write run_dir/report.html (the plots are drawn afresh from the run directory).

    ``shown_dir``: the directory name the report should show (a run is built in a temporary
    directory and renamed when complete). Page 1 holds what is signed off: the bolt load, the
    headline numbers 1D | 2D | difference, the sketch of the bore, the margins, the numerical
    uncertainty, the cautions and the sign-off block.
    """
    run_dir = Path(run_dir)
    shown = Path(shown_dir) if shown_dir is not None else run_dir
    s = read_summary(run_dir)
    case = _case(run_dir)
    figs = plots.all_plots(run_dir, unit)
    notes = []
    try:
        figs["sketch"] = bore_sketch(run_dir)
    except Exception as exc:  # the report is still useful without the sketch: say why it is missing
        notes.append(f"sketch of the bore not drawn ({type(exc).__name__}: {exc})")
    if not (run_dir / "fields.vtu").exists():
        include_3d = False
        notes.append("the fields of this run were not kept (a grid study keeps them for its finest level; "
                     "rerun it with --keep fields), so the field plots and the 3D view are left out")
    if include_3d:
        try:
            from .scene import render

            png, _ = render(run_dir, "pressure", 270.0, run_dir / "view_pressure.png", window_size=(1200, 700), unit=unit)
            figs["view3d"] = png
        except Exception as exc:  # the report is still useful without the 3D picture: say why it is missing
            notes.append(f"3D view not rendered here ({type(exc).__name__}: {exc})")
    study = run_dir.parent / "convergence.png"
    if (run_dir.parent / "gridstudy.json").exists() and study.exists():
        figs["gridstudy"] = study
    understood_file = run_dir / UNDERSTOOD
    if understood_file.exists():
        understood = [ln.replace(str(run_dir), str(shown)) for ln in understood_file.read_text().splitlines()]
    else:
        understood = [f"{UNDERSTOOD} is not in this run directory (written by an earlier version): see case.toml"]
    case_text = (run_dir / "case.toml").read_text(encoding="utf-8")
    planar = bool((s.get("geometry") or {}).get("per_unit_depth"))
    sv = s["solver"]

    page = Page("Run report", s["title"], [
        f"axibore {s.get('software', {}).get('version', __version__)}",
        f"built {dt.datetime.now().strftime('%Y-%m-%d %H:%M')}", f"run folder {shown.name}",
        f"solver {sv['kind']}", (s.get("geometry") or {}).get("symmetry", "axisymmetric")])
    if sv.get("result_note"):
        page.caution("Not a result.", sv["result_note"])
    if planar:
        page.warn("Planar section: flows, areas and forces are per metre of depth, for the half above the symmetry plane.")
    # page 1: what is signed off
    if s.get("joints"):
        page.h2("Bolt load (hydrodynamic part)")
        page.table(*bolt_table(s, unit))
    grid = grid_uncertainty(run_dir)
    page.h2("Headline numbers")
    page.table(*headline_table(s, unit, grid[0] if grid else None))
    if "sketch" in figs:
        page.figure(figs["sketch"], "The bore as it ran" + ("; joints with their gasket diameter G." if s.get("joints")
                                                               else "."), "sketch of the bore", cls="sketch")
    page.h2("Margins")
    page.table(*margins(s, case, unit, len(notes)))
    page.h2("Numerical uncertainty")
    if grid:
        page.p(grid[1])
    else:
        cmd = html.escape("axibore gridstudy case.toml --levels 0,1,2")
        page.add("<p>None: no grid study was run for this case. <code>" + cmd + "</code> (the case.toml of this run "
                 "folder) runs one; <code>axibore uncertainty</code> adds the input uncertainties (in its own "
                 "uncertainty.html, not looked up here).</p>")
    page.cautions()
    page.signoff(signoff_for(s["title"], text_hash(case_text)))
    # the pages after: warnings, inputs, details, plots
    page.add("<div class='pagebreak'></div>")
    if s["warnings"] or notes:
        page.h2("Warnings")
        page.add("".join(f"<div class='warn'>{html.escape(w)}</div>" for w in s["warnings"] + notes))
    page.h2("Inputs (the case as it ran)")
    cols, rows, groups = inputs_table(case_text)
    page.table(cols, rows, groups=groups)
    page.h2("More numbers")
    page.table([Col("quantity", num=False), Col("unit", num=False), Col("value")], detail_rows(s, unit))
    vrows = viscous_rows(s, unit)
    if vrows:
        v = s["viscous"]
        page.h2("Wall layer")
        page.table([Col("quantity", num=False), Col("unit", num=False), Col("value")], vrows)
        page.p(f"{v['discharge_coefficient_note']}. {v['loss_coefficient_note']}. Coupling: {v['coupling']}.", "meta")
        page.caution("Wall layer.", v["caution"])
    if s.get("joints"):
        page.h2("Joints in detail")
        page.table(*joint_detail(s))
        for j in s["joints"]:
            if j["note"]:
                page.warn(f"{j['name']}: {j['note']}")
        page.caution("Joints.", JOINT_CAUTION)
    page.h2("Plots")
    captions = dict(CAPTIONS, view3d=CAPTIONS["view3d_planar" if planar else "view3d"])
    for key in ("view3d", "wall_pressure", "unrolled", "cp", "axial_force", "jet", "wall_layer", "speed", "mesh", "gridstudy"):
        if key in figs:
            page.figure(figs[key], captions[key], key)
    page.h2("The case as understood")
    page.add("<pre>" + html.escape("\n".join(understood)) + "</pre>")
    m = s["mesh"]
    facts = [
        ("run folder", str(shown)),
        ("solver", f"{sv['kind']}, {sv.get('method', '')}, {sv['iterations']} iterations"),
        ("linear residual", f"{sv['residual']:.3g}"), ("mass imbalance", f"{sv['mass_imbalance']:.3g}"),
        ("solve time", f"{sv['seconds']:.3g} s" + (f" (the last solve; the free-jet iteration: {sv['free_jet_iterations']} "
                                                    f"outer iterations, {s['seconds'].get('mesh', 0) + s['seconds'].get('solve', 0):.3g} s "
                                                    "with remeshing)" if sv.get("free_jet_iterations") else "")),
        ("cells", f"{m['cells']:,} ({m.get('method', '')}, level {m['level']})"),
        ("representative cell size h", f"{m['h_m'] * 1e3:.4g} mm"),
        ("largest non-orthogonality", f"{m.get('max_non_orthogonality_deg', float('nan')):.3g} deg"),
        ("largest aspect ratio", f"{m.get('max_aspect_ratio', float('nan')):.3g}"),
    ]
    page.h2("Solver and mesh")
    page.table([Col("", num=False), Col("", num=False, cls="name")], [list(f) for f in facts])
    page.h2("Conventions")
    page.add("<ul>" + "".join(f"<li>{html.escape(n)}</li>" for n in s.get("notes", [])) +
             "<li>gauge pressure is relative to the ambient pressure outside the part</li></ul>")
    path = page.write(run_dir / "report.html")
    written = [path] + [Path(f) for f in figs.values() if Path(f).parent == run_dir]
    if read_manifest(run_dir) is not None:  # the run's folder: these files are the tool's
        record(run_dir, "run", written)
    return path


def joint_detail(s: dict) -> tuple[list[Col], list[list]]:
    """Each joint's free body: the force on the part beyond it, the gasket annulus, the load."""
    joints = s["joints"]
    fu, fk = display("force", [j["load_N"] for j in joints] + [j["part_force_N"] for j in joints])
    cols = [Col("joint", num=False), Col("at x", "mm"), Col("bore D", "mm"), Col("gasket G", "mm"),
            Col("force on the part beyond", fu), Col("gasket annulus", fu), Col("load", fu), Col("end force p π G²/4", fu)]
    rows = [[j["name"], number(j["x_m"], 1e3), number(j["bore_diameter_m"], 1e3), number(j["gasket_diameter_m"], 1e3),
             number(j["part_force_N"], fk, 5), number(j["annulus_force_N"], fk, 5), number(j["load_N"], fk, 5),
             number(j["end_force_N"], fk, 5)] for j in joints]
    return cols, rows


def write_report(run_dir: Path, shown_dir: Path | None = None, unit: str = "bar") -> str | None:
    """Build report.html; on failure keep the run's numbers, write report_error.txt and return why."""
    try:
        build_report(run_dir, shown_dir=shown_dir, unit=unit)
        return None
    except Exception as exc:  # the numbers are complete without the report: keep them, say why
        why = f"{type(exc).__name__}: {exc}"
        atomic_write_text(Path(run_dir) / "report_error.txt", f"report.html was not built: {why}\n"
                          "rebuild it with `axibore report RUN_DIR`\n")
        if read_manifest(run_dir) is not None:
            record(run_dir, "run", ["report_error.txt"])
        return why
