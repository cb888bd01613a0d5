"""report.html of a run directory: self-contained (images embedded), printable on A4.

Built only from the run directory (summary.json, case.toml, wall.csv, fields.vtu) so that
``axibore report RUN_DIR`` rebuilds it at any time. Every headline number carries its
summary.json key and raw value as data attributes (``data-key``, ``data-value``).
"""

from __future__ import annotations

import base64
import datetime as dt
import html
import math
from pathlib import Path

from ..version import __version__
from ..io.files import atomic_write_text
from ..io.ownership import read_manifest, record
from ..io.rundir import read_summary
from ..describe import UNDERSTOOD, absolute_wall_pressure, deviation_text
from ..post.joints import CAUTION as JOINT_CAUTION
from ..safety import CAUTIONS
from ..units import PRESSURE_UNITS
from . import plots


CSS = """
@page { size: A4; margin: 14mm 13mm; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 10pt; color: #1b1b1b; max-width: 184mm; margin: 8mm auto; line-height: 1.35; }
h1 { font-size: 16pt; margin: 0 0 2mm 0; color: #1f4e79; }
h2 { font-size: 12pt; margin: 6mm 0 2mm 0; color: #1f4e79; border-bottom: 0.4mm solid #1f4e79; page-break-after: avoid; }
.meta { color: #555; font-size: 8.5pt; }
.caution { border: 0.6mm solid #b5462b; background: #fbeee9; padding: 2.5mm 3.5mm; margin: 3mm 0; page-break-inside: avoid; }
.caution strong { color: #b5462b; }
.warn { border-left: 1.2mm solid #d4a017; background: #fdf7e3; padding: 1.5mm 3mm; margin: 1.5mm 0; font-size: 9pt; }
table { border-collapse: collapse; width: 100%; font-size: 9.5pt; page-break-inside: avoid; }
td, th { border-bottom: 0.2mm solid #ccc; padding: 1mm 2mm; text-align: left; vertical-align: top; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
th { background: #eef3f8; }
figure { margin: 3mm 0; page-break-inside: avoid; }
figure img { width: 100%; height: auto; border: 0.2mm solid #ddd; }
figcaption { font-size: 8.5pt; color: #444; }
pre { font-size: 8pt; white-space: pre-wrap; background: #f6f6f6; padding: 2mm; }
"""


def _img(path: Path) -> str:
    return "data:image/png;base64," + base64.b64encode(path.read_bytes()).decode("ascii")


def _num(summary: dict, key: str, text: str) -> str:
    section, name = key.split(".")
    v = summary[section].get(name)
    raw = "" if v is None else repr(v)
    return f'<td class="num" data-key="{key}" data-value="{html.escape(raw)}">{html.escape(text)}</td>'


def _fmt(v, unit="", digits=5, scale=1.0):
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    v = v * scale
    if abs(v) < 1e-12:
        v = 0.0
    return f"{v:.{digits}g} {unit}".strip()


def headline_rows(s: dict, unit: str = "bar") -> list[tuple[str, str, str]]:
    """(label, key, formatted) of the headline table, in order (pressures in ``unit``)."""
    k = 1.0 / PRESSURE_UNITS[unit]
    f, fl, p, o = s["forces"], s["flow"], s["pressure"], s["onedim"]
    rows = []
    if (s.get("geometry") or {}).get("per_unit_depth"):
        rows.append(("Planar section", "geometry.per_unit_depth",
                     "flows, areas and forces per metre of depth, for the half above the symmetry plane"))
    rows += [
        ("Volume flow", "flow.volume_flow_m3_s", _fmt(fl["volume_flow_m3_s"], "m³/s")),
        ("Mass flow", "flow.mass_flow_kg_s", _fmt(fl["mass_flow_kg_s"], "kg/s")),
        ("Mean velocity, inlet", "flow.inlet_mean_velocity_m_s", _fmt(fl["inlet_mean_velocity_m_s"], "m/s")),
        ("Mean velocity, outlet", "flow.outlet_mean_velocity_m_s", _fmt(fl["outlet_mean_velocity_m_s"], "m/s")),
        ("Maximum speed", "flow.max_speed_m_s", _fmt(fl["max_speed_m_s"], "m/s")),
        ("Discharge coefficient", "flow.discharge_coefficient",
         fl.get("discharge_coefficient_note", "-") if fl.get("discharge_coefficient") is None else _fmt(fl["discharge_coefficient"], "", 6)),
        ("Inlet pressure (gauge, mean)", "pressure.inlet_gauge_Pa", _fmt(p["inlet_gauge_Pa"], unit, 6, k)),
        ("Outlet pressure (gauge, mean)", "pressure.outlet_gauge_Pa", _fmt(p["outlet_gauge_Pa"], unit, 6, k)),
        ("Wall axial force (on the part, +x downstream)", "forces.wall_x_N", _fmt(f["wall_x_N"], "N", 6)),
        ("Centre-body axial force", "forces.centerbody_x_N", _fmt(f["centerbody_x_N"], "N", 6)),
        ("Momentum balance (inlet - outlet planes)", "forces.momentum_x_N", _fmt(f["momentum_x_N"], "N", 6)),
        ("Reconciliation (wall + body - momentum) / momentum (at least 1 % of the plane fluxes)", "forces.reconciliation_rel", _fmt(f["reconciliation_rel"], "", 3)),
        ("1D formula p1 A1 - p2 A2 + mdot (V1 - V2)", "forces.onedim_x_N", _fmt(f["onedim_x_N"], "N", 6)),
        ("Force deviation (2D - 1D) / |1D|", "onedim.force_dev_rel", _fmt(o.get("force_dev_rel"), "", 3)),
    ]
    hand = s.get("hand_1d")
    if hand:
        rows += [("By hand (1D, same inputs): volume flow", "hand_1d.volume_flow_m3_s", _fmt(hand["volume_flow_m3_s"], "m3/s", 6)),
                 ("By hand (1D): force p1 A1 - p2 A2 + mdot (V1 - V2)", "hand_1d.force_x_N", _fmt(hand["force_x_N"], "N", 6)),
                 ("By hand (1D): end force p1 A1 (a blind flange)", "hand_1d.end_force_N", _fmt(hand["end_force_N"], "N", 6))]
        if hand["jet_reaction_N"] is not None:
            rows.append(("By hand (1D): jet reaction mdot V2 + p2 A2", "hand_1d.jet_reaction_N", _fmt(hand["jet_reaction_N"], "N", 6)))
    if f.get("jet_reaction_N") is not None:
        rows.append(("Jet reaction on the holder (upstream): mdot V + p A at the exit", "forces.jet_reaction_N",
                     _fmt(f["jet_reaction_N"], "N", 6)))
    if fl.get("contraction_coefficient") is not None:
        rows += [
            ("Free jet: contraction coefficient (far-jet area / lip-plane area)", "flow.contraction_coefficient",
             _fmt(fl["contraction_coefficient"], "", 5)),
            ("Free jet: far-jet radius", "flow.jet_radius_m", _fmt(fl["jet_radius_m"], "mm", 5, 1e3)),
            ("Free jet: vena contracta at x", "flow.vena_contracta_x_m", _fmt(fl["vena_contracta_x_m"], "mm", 5, 1e3)),
        ]
        ep = s.get("exit_plane_model") or {}
        if ep.get("volume_flow_m3_s"):
            rows += [
                ("Exit-plane model: volume flow (off by)", "exit_plane_model.flow_rel_diff",
                 f"{_fmt(ep['volume_flow_m3_s'], 'm³/s')} ({ep['flow_rel_diff']:+.2%})"),
                ("Exit-plane model: wall + centre-body force (off by)", "exit_plane_model.force_rel_diff",
                 f"{_fmt(ep['total_x_N'], 'N', 6)} ({ep['force_rel_diff']:+.2%})"),
                ("Exit-plane model: minimum wall pressure (gauge)", "exit_plane_model.min_wall_gauge_Pa",
                 _fmt(ep["min_wall_gauge_Pa"], unit, 6, k)),
            ]
    if f.get("per_bolt_N") is not None:
        rows.append((f"Per bolt, first joint ({f.get('bolts')} bolts; hydrodynamic part)", "forces.per_bolt_N", _fmt(f["per_bolt_N"], "N", 5)))
    rows += [
        ("Minimum wall pressure (gauge)", "pressure.min_wall_gauge_Pa", _fmt(p["min_wall_gauge_Pa"], unit, 6, k)),
        ("  at x", "pressure.min_wall_x_m", _fmt(p["min_wall_x_m"], "mm", 5, 1e3)),
        ("Minimum wall pressure (absolute)", "pressure.min_wall_absolute_Pa", absolute_wall_pressure(p, unit)),
        ("Vapour pressure (absolute)", "pressure.vapour_pressure_Pa", _fmt(p["vapour_pressure_Pa"], unit, 5, k)),
        ("Cavitation index (p_out,abs - p_v) / (rho V_out² / 2)", "pressure.cavitation_index", _fmt(p["cavitation_index"], "", 4)),
        ("Inception index -Cp_min", "pressure.inception_index", _fmt(p["inception_index"], "", 4)),
        ("Largest wall-pressure deviation from 1D", "onedim.wall_pressure_max_dev_Pa", deviation_text(o, unit)),
        ("Outlet momentum correction factor", "onedim.outlet_momentum_factor", _fmt(o["outlet_momentum_factor"], "", 6)),
        ("Outlet kinetic-energy correction factor", "onedim.outlet_energy_factor", _fmt(o["outlet_energy_factor"], "", 6)),
    ]
    return rows


def viscous_section(s: dict, unit: str = "bar") -> list[str]:
    """The wall-layer table of the report (nothing when no layer ran)."""
    v = s.get("viscous") or {}
    if v.get("model") != "integral":
        return []
    e = html.escape
    k = 1.0 / PRESSURE_UNITS[unit]
    f = s["forces"]
    rows = [
        ("Reynolds number (" + v["reynolds_basis"].split(":")[0] + f", on {v['reynolds_length_m'] * 1e3:.4g} mm)",
         "viscous.reynolds_number", _fmt(v["reynolds_number"], "", 4)),
        ("Viscosity", "viscous.viscosity_Pa_s", _fmt(v["viscosity_Pa_s"], "Pa s", 5)),
        ("Friction force (wall shear, on the part, +x downstream)", "forces.friction_x_N", _fmt(f["friction_x_N"], "N", 5)),
        ("Total axial force with friction", "forces.total_with_friction_x_N", _fmt(f["total_with_friction_x_N"], "N", 6)),
        ("Momentum balance with the layer's momentum integral", "viscous.momentum_with_friction_x_N",
         _fmt(v["momentum_with_friction_x_N"], "N", 6)),
        ("Viscous discharge coefficient", "viscous.discharge_coefficient",
         _fmt(v["discharge_coefficient"], "", 6) if v["discharge_coefficient"] is not None else v["discharge_coefficient_note"]),
        ("Loss coefficient K", "viscous.loss_coefficient",
         _fmt(v["loss_coefficient"], "", 4) if v["loss_coefficient"] is not None else v["loss_coefficient_note"]),
        ("Head loss", "viscous.head_loss_m", _fmt(v["head_loss_m"], "m", 4)),
        ("Total-pressure loss", "viscous.total_pressure_loss_Pa", _fmt(v["total_pressure_loss_Pa"], unit, 4, k)),
        ("Transition at x", "viscous.transition_x_m", ", ".join(_fmt(x, "mm", 4, 1e3) for x in v["transition_x_m"]) or "none"),
        ("Separated ranges", "viscous.separation_x_ranges_m",
         ", ".join(f"{a * 1e3:.4g} to {b * 1e3:.4g} mm" + (" (into a concave corner)" if [a, b] in
                                                            [list(c) for c in v.get("corner_vortex_x_ranges_m", [])] else "")
                   for a, b in v["separation_x_ranges_m"]) or "none"),
        ("Largest shape factor", "viscous.max_shape_factor", _fmt(v["max_shape_factor"], "", 4)),
    ]
    d = v.get("displacement")
    out = ["<h2>Wall layer</h2><table><tr><th>quantity</th><th>value</th></tr>"]
    for label, key, text in rows:
        out.append(f"<tr><td>{e(label)}</td>{_num_nested(s, key, text)}</tr>")
    if d:
        out.append(f"<tr><td>Displacement pass ({e(d['mode'])}, {d['passes']} re-solves): change of the wall force</td>"
                   f"<td class='num'>{e(_fmt(d['force_change_N'], 'N', 5))} ({d['force_change_rel']:+.3%})</td></tr>")
        out.append(f"<tr><td>  change of the flow / inlet pressure</td><td class='num'>{d['flow_change_rel']:+.3%} / "
                   f"{e(_fmt(d['inlet_pressure_change_Pa'], unit, 4, k))}</td></tr>")
    out.append("</table>")
    out.append(f"<p class='meta'>{e(v['discharge_coefficient_note'])}. {e(v['loss_coefficient_note'])}. Coupling: "
               f"{e(v['coupling'])}.</p>")
    out.append(f"<div class='caution'><strong>Wall layer.</strong> {e(v['caution'])}</div>")
    return out


def _num_nested(summary: dict, key: str, text: str) -> str:
    section, name = key.split(".")
    v = summary.get(section, {}).get(name)
    raw = repr(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else ""  # numbers only
    return f'<td class="num" data-key="{key}" data-value="{html.escape(raw)}">{html.escape(text)}</td>'


def build_report(run_dir: str | Path, include_3d: bool = True, shown_dir: str | Path | None = None, unit: str = "bar") -> Path:
    """Write run_dir/report.html (the plots are drawn afresh from the run directory).

    ``shown_dir``: the directory name the report should show (a run is built in a temporary
    directory and renamed when complete).
    """
    run_dir = Path(run_dir)
    shown = Path(shown_dir) if shown_dir is not None else run_dir
    s = read_summary(run_dir)
    figs = plots.all_plots(run_dir, unit)
    notes = []
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
        understood = [f"{UNDERSTOOD} is not in this run directory (written by an earlier version): see case.toml below"]

    e = html.escape
    parts = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>axibore report: {e(s['title'])}</title>",
             f"<style>{CSS}</style></head><body>"]
    parts.append(f"<h1>{e(s['title'])}</h1>")
    if s["solver"].get("result_note"):
        parts.append(f"<div class='caution'><strong>Not a result.</strong> {e(s['solver']['result_note'])}</div>")
    parts.append(f"<p class='meta'>axibore {e(s.get('software', {}).get('version', __version__))} · report built "
                 f"{dt.datetime.now().strftime('%Y-%m-%d %H:%M')} · run directory {e(str(shown))} · solver {e(s['solver']['kind'])}</p>")
    parts.append("<div class='caution'><strong>Caution.</strong> " + " ".join(e(c) for c in CAUTIONS) + "</div>")
    parts.append("<h2>Headline numbers</h2><table><tr><th>quantity</th><th>value</th></tr>")
    for label, key, text in headline_rows(s, unit):
        parts.append(f"<tr><td>{e(label)}</td>{_num(s, key, text)}</tr>")
    ranges = s["onedim"]["breakdown_x_ranges_m"]
    rtext = ", ".join(f"{a * 1e3:.4g} to {b * 1e3:.4g} mm" for a, b in ranges) or "none"
    parts.append(f"<tr><td>x ranges where the wall pressure departs from 1D by more than "
                 f"{s['onedim']['breakdown_threshold']:.3g} of the outlet dynamic pressure</td><td class='num'>{e(rtext)}</td></tr>")
    parts.append("</table>")
    parts += viscous_section(s, unit)
    if s.get("joints"):
        parts.append("<h2>Joint loads (hydrodynamic part)</h2><table><tr><th>joint</th><th>x</th><th>bore D / gasket G</th>"
                     "<th>gauge pressure</th><th>force on the part beyond</th><th>gasket annulus</th><th>load</th><th>per bolt</th></tr>")
        for j in s["joints"]:
            per = "-" if j["per_bolt_N"] is None else f"{_fmt(j['per_bolt_N'], 'N', 5)} ({j['bolts']} bolts)"
            parts.append(f"<tr><td>{e(j['name'])}</td><td class='num'>{_fmt(j['x_m'], 'mm', 5, 1e3)}</td>"
                         f"<td class='num'>{_fmt(j['bore_diameter_m'], 'mm', 5, 1e3)} / {_fmt(j['gasket_diameter_m'], 'mm', 5, 1e3)}</td>"
                         f"<td class='num'>{_fmt(j['pressure_gauge_Pa'], unit, 5, 1 / PRESSURE_UNITS[unit])}</td><td class='num'>{_fmt(j['part_force_N'], 'N', 6)}</td>"
                         f"<td class='num'>{_fmt(j['annulus_force_N'], 'N', 6)}</td><td class='num'>{_fmt(j['load_N'], 'N', 6)}</td>"
                         f"<td class='num'>{e(per)}</td></tr>")
        parts.append("</table>")
        for j in s["joints"]:
            if j["note"]:
                parts.append(f"<div class='warn'>{e(j['name'])}: {e(j['note'])}</div>")
        parts.append(f"<div class='caution'><strong>Joints.</strong> {e(JOINT_CAUTION)}</div>")
    if s["warnings"] or notes:
        parts.append("<h2>Warnings</h2>")
        parts += [f"<div class='warn'>{e(w)}</div>" for w in s["warnings"] + notes]
    captions = {
        "view3d": ("The planar section coloured by gauge pressure, with streamlines (a planar case is not revolved)."
                   if (s.get("geometry") or {}).get("per_unit_depth") else
                   "Cut-away of the bore revolved 270° about the axis; cut planes and wall coloured by gauge pressure."),
        "wall_pressure": "Wall gauge pressure along the axis: the 2D result and the 1D model (Bernoulli and continuity with the local flow area).",
        "axial_force": "Cumulative axial force on the part from the inlet; its end value is the wall force.",
        "speed": "Speed in the meridional plane with streamlines.",
        "wall_layer": "Wall layer: wall shear along the flow and shape factor; shaded: separated ranges, where the inviscid "
                      "wall pressure is not reliable; dotted: transition.",
        "mesh": "The mesh, with a zoom at the minimum wall pressure.",
        "jet": "Free jet: the settled jet boundary from the lip, the far-jet radius and the vena contracta; below, the "
               "remaining speed mismatch along it (zero on an exact free streamline).",
        "gridstudy": "Grid convergence of the grid study this run belongs to.",
    }
    parts.append("<h2>Plots</h2>")
    for key in ("view3d", "wall_pressure", "axial_force", "jet", "wall_layer", "speed", "mesh", "gridstudy"):
        if key in figs:
            parts.append(f"<figure><img alt='{e(key)}' src='{_img(Path(figs[key]))}'><figcaption>{e(captions[key])}</figcaption></figure>")
    parts.append("<h2>The case as understood (SI with units)</h2><pre>" + e("\n".join(understood)) + "</pre>")
    sv, m = s["solver"], s["mesh"]
    facts = [
        ("solver", f"{sv['kind']}, {sv.get('method', '')}, {sv['iterations']} iterations"),
        ("linear residual", f"{sv['residual']:.3g}"), ("mass imbalance", f"{sv['mass_imbalance']:.3g}"),
        ("solve time", f"{sv['seconds']:.3g} s" + (f" (the last solve; the free-jet iteration: {sv['free_jet_iterations']} "
                                                    f"outer iterations, {s['seconds'].get('mesh', 0) + s['seconds'].get('solve', 0):.3g} s "
                                                    "with remeshing)" if sv.get("free_jet_iterations") else "")),
        ("cells", f"{m['cells']:,} ({m.get('method', '')}, level {m['level']})"),
        ("representative cell size h", f"{m['h_m'] * 1e3:.4g} mm"),
        ("max non-orthogonality", f"{m.get('max_non_orthogonality_deg', float('nan')):.3g} deg"),
        ("max aspect ratio", f"{m.get('max_aspect_ratio', float('nan')):.3g}"),
    ]
    parts.append("<h2>Solver and mesh</h2><table>" + "".join(f"<tr><td>{e(a)}</td><td class='num'>{e(b)}</td></tr>" for a, b in facts) + "</table>")
    parts.append("<h2>Conventions</h2><ul>" + "".join(f"<li>{e(n)}</li>" for n in s.get("notes", [])) +
                 "<li>gauge pressure is relative to the ambient pressure outside the part</li></ul>")
    parts.append(f"<p class='meta'>axibore {e(__version__)}</p>")
    parts.append("</body></html>")
    path = atomic_write_text(run_dir / "report.html", "\n".join(parts))
    written = [path] + [Path(f) for f in figs.values() if Path(f).parent == run_dir]
    if read_manifest(run_dir) is not None:  # the run's folder: these files are the tool's
        record(run_dir, "run", written)
    return path


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
