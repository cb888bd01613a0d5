"""Plots of a run directory (matplotlib, PNG): wall pressure 2D vs 1D, cumulative axial force,
the mesh with a zoom, the speed field with streamlines. Everything is read back from the run
directory (summary.json, wall.csv, centerbody.csv, fields.vtu), never from solver objects. Each
plot takes a run directory or a run loaded once with ``load_run``."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..io.files import intact_vtk, read_csv
from ..units import PRESSURE_UNITS
from .style import (BODY_INK, FOCUS, INK, JET, WALL_INK, as_run, body_name, colour_bar, colour_map, figure, focus,
                    headline, load_run, part_name, save)
from .wallplots import cp_plot, unrolled_plot

DRAW_CELLS_MAX = 60_000  # above this, fields are binned to pixels and the full mesh view shows the outline only
COLOURS = {"wall": WALL_INK, "centerbody": BODY_INK, "onedim": "#6b6b6b", "band": "#f2c94c"}
__all__ = ["figure", "save", "load_run", "line_style", "all_plots"]
_as_run = as_run


def fields(run: dict) -> dict:
    """fields.vtu of a loaded run, read once: nodes (N, 2), cells (list of blocks), polygons
    (C, 4; triangles repeat their first node), cell data and point data."""
    if "fields" not in run:
        import meshio

        m = meshio.read(intact_vtk(run["dir"] / "fields.vtu"))
        cells = [c.data for c in m.cells]
        run["fields"] = {
            "nodes": m.points[:, :2],
            "cells": cells,
            "polygons": np.vstack([np.column_stack([c, c[:, :1]]) if c.shape[1] == 3 else c for c in cells]),
            "cell_data": {k: np.concatenate(v) for k, v in m.cell_data.items()},
            "point_data": dict(m.point_data),
        }
    return run["fields"]


def _plain_ticks(ax) -> None:
    """Tick labels as plain numbers (no offset or exponent such as 5.93e+05)."""
    from matplotlib.ticker import ScalarFormatter

    for axis in (ax.xaxis, ax.yaxis):
        fmt = ScalarFormatter(useOffset=False)
        fmt.set_scientific(False)
        axis.set_major_formatter(fmt)


def wall_pressure_plot(run, path=None, unit: str = "bar") -> Path:
    """Wall gauge pressure along x: 2D result and the 1D model, breakdown ranges shaded."""
    run = _as_run(run)
    s = run["summary"]
    q_out = s["onedim"].get("outlet_dynamic_pressure_Pa") or 0.5 * s["flow"]["density_kg_m3"] * s["flow"]["outlet_mean_velocity_m_s"] ** 2
    fig, ax = figure(7.2, 3.8)
    k = PRESSURE_UNITS[unit]
    for a, b in s["onedim"]["breakdown_x_ranges_m"]:
        ax.axvspan(a * 1e3, b * 1e3, color=COLOURS["band"], alpha=0.35, lw=0)
    for name, t in run["tables"].items():
        ax.plot(t["x_m"] * 1e3, t["p_gauge_Pa"] / k, color=COLOURS[name], lw=1.6, label=f"{part_name(run, name)}, 2D")
        if "onedim_dev" in t:
            p1 = t["p_gauge_Pa"] - t["onedim_dev"] * q_out
            model = "quasi-1D isentropic" if s["flow"].get("compressible") else "Bernoulli"
            ax.plot(t["x_m"] * 1e3, p1 / k, "--", color=COLOURS["onedim"], lw=1.1, label=f"{name}, 1D ({model})" if name == "wall" else None)
    pv = (s["pressure"]["vapour_pressure_Pa"] or -np.inf) - s["pressure"]["ambient_pressure_Pa"]
    if np.isfinite(pv) and s["pressure"]["min_wall_gauge_Pa"] < pv + 0.2 * abs(s["pressure"]["inlet_gauge_Pa"] - pv):
        ax.axhline(pv / k, color="#c0392b", lw=0.9, ls=":", label="vapour pressure (gauge)")
    ax.set_xlabel("x [mm]")
    ax.set_ylabel(f"gauge pressure [{unit}]")
    _plain_ticks(ax)
    thr = s["onedim"]["breakdown_threshold"]
    headline(fig, s, f"Wall gauge pressure along the axis; shaded: 2D departs from 1D by more than {thr:.0%} of the outlet "
             "dynamic pressure", ax)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7.5, loc="best")
    fig.tight_layout()
    return save(fig, Path(path or run["dir"] / "plot_wall_pressure.png"))


def axial_force_plot(run, path=None) -> Path:
    """Cumulative axial force on the part from the inlet, along x."""
    run = _as_run(run)
    s = run["summary"]
    fig, ax = figure(7.2, 3.4)
    for name, t in run["tables"].items():
        ax.plot(t["x_m"] * 1e3, t["cumulative_force_x_N"] / 1e3, color=COLOURS[name], lw=1.6, label=part_name(run, name))
    ax.axhline(s["forces"]["onedim_x_N"] / 1e3, color=COLOURS["onedim"], ls="--", lw=1,
               label=f"1D formula (wall + body) {s['forces']['onedim_x_N'] / 1e3:.4g} kN")
    ax.set_xlabel("x [mm]")
    ax.set_ylabel("cumulative axial force [kN]")
    _plain_ticks(ax)
    headline(fig, s, "Cumulative axial force of the fluid on the part from the inlet [kN] (+x downstream)", ax)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7.5)
    fig.tight_layout()
    return save(fig, Path(path or run["dir"] / "plot_axial_force.png"))


def _window(run: dict, zoom_at=None) -> tuple[dict, tuple[float, float, float, float]]:
    """The focus of the run (``style.focus``; ``zoom_at`` (x, r) in metres moves it) and its square window
    (x0, x1, r0, r1) in mm, kept above the axis."""
    fc = focus(run)
    if zoom_at is not None:
        fc = {**fc, "x": float(zoom_at[0]), "r": float(zoom_at[1])}
    x, h = fc["x"] * 1e3, fc["half"] * 1e3
    if zoom_at is not None:
        r0 = max(0.0, fc["r"] * 1e3 - h)
        return fc, (x - h, x + h, r0, r0 + 2 * h)
    return fc, (x - h, x + h, fc["r0"] * 1e3, fc["r1"] * 1e3)


def _height(nodes_mm: np.ndarray, extra: float) -> float:
    """Figure height (in) for a plane drawn to scale about 5 in wide, plus ``extra`` for titles and colour bar."""
    span = np.ptp(nodes_mm[:, 0]) or 1.0
    return float(min(5.2, max(3.0, extra + 5.0 * nodes_mm[:, 1].max() / span)))


def _outlines(ax, run: dict, label_body: bool = False, lw: float = 0.9) -> None:
    """The wall and the centre body as lines; the centre body named beside it."""
    for name, t in run["tables"].items():
        ax.plot(t["x_m"] * 1e3, t["r_m"] * 1e3, color=WALL_INK if name == "wall" else BODY_INK, lw=lw, solid_capstyle="round")
    cb = run["tables"].get("centerbody")
    if label_body and cb is not None:
        i = len(cb["x_m"]) // 3
        ax.annotate(body_name(run["dir"]), (cb["x_m"][i] * 1e3, cb["r_m"][i] * 1e3), xytext=(0, -9),
                    textcoords="offset points", ha="center", va="top", fontsize=7.5, color=BODY_INK, fontweight="bold")


def _mark_focus(ax, fc: dict, win=None) -> None:
    from matplotlib.patches import Rectangle

    ax.plot(fc["x"] * 1e3, fc["r"] * 1e3, marker="o", ms=4.5, mfc="none", mec=FOCUS, mew=1.2, ls="none")
    if win is not None:
        ax.add_patch(Rectangle((win[0], win[2]), win[1] - win[0], win[3] - win[2], fill=False, ec=FOCUS, lw=1.0))


def _focus_text(run: dict, fc: dict) -> str:
    return f"zoom at the least wall pressure, {part_name(run, fc['part'])} at x = {fc['x'] * 1e3:.4g} mm"


def _whole_and_zoom(axes, nodes, fc, win) -> None:
    """The whole meridian on the first panel (the zoom window boxed), the window on the second."""
    _mark_focus(axes[0], fc, win)
    _mark_focus(axes[1], fc)
    axes[0].set_xlim(nodes[:, 0].min(), nodes[:, 0].max())
    axes[0].set_ylim(0, nodes[:, 1].max() * 1.02)
    axes[1].set_xlim(win[0], win[1])
    axes[1].set_ylim(win[2], win[3])
    axes[0].set_ylabel("r [mm]")


def mesh_plot(run, path=None, zoom_at: tuple[float, float] | None = None) -> Path:
    """The meridional mesh, and a zoom around the least wall pressure (a lip, knuckle or needle tip)."""
    from matplotlib.collections import PolyCollection

    run = _as_run(run)
    s = run["summary"]
    f = fields(run)
    nodes, allc = f["nodes"] * 1e3, f["polygons"]  # drawn in millimetres
    fc, win = _window(run, zoom_at)
    fig, axes = figure(8.0, _height(nodes, 1.4), layout="constrained", nrows=1, ncols=2, gridspec_kw={"width_ratios": [2.3, 1]})
    centre = nodes[allc].mean(axis=1)
    pad = 0.25 * (win[1] - win[0])
    inside = ((centre[:, 0] > win[0] - pad) & (centre[:, 0] < win[1] + pad) & (centre[:, 1] > win[2] - pad)
              & (centre[:, 1] < win[3] + pad))
    if len(allc) <= DRAW_CELLS_MAX:
        axes[0].add_collection(PolyCollection(nodes[allc], facecolor="none", edgecolor="#5d6b78", linewidth=0.15))
    else:
        axes[0].text(0.5, 0.55, "cells too dense to draw here: see the zoom", transform=axes[0].transAxes, ha="center",
                     fontsize=7, color=INK)
    axes[1].add_collection(PolyCollection(nodes[allc[inside]], facecolor="none", edgecolor="#5d6b78", linewidth=0.45))
    jet_csv = run["dir"] / "jet.csv"
    for ax in axes:
        _outlines(ax, run, label_body=ax is axes[0], lw=1.1)
        if jet_csv.exists():
            j = read_csv(jet_csv)
            ax.plot(j["x_m"] * 1e3, j["r_m"] * 1e3, color=JET, lw=1.1, ls="--")
        ax.set_aspect("equal")
        ax.set_xlabel("x [mm]")
    _whole_and_zoom(axes, nodes, fc, win)
    headline(fig, s, f"Mesh: {s['mesh']['cells']:,} cells ({s['mesh']['method']})", axes[0])
    axes[1].set_title(_focus_text(run, fc).replace("zoom at the least wall pressure, ", "zoom: least wall pressure,\n"),
                      loc="left", fontsize=7.5, color=FOCUS)
    return save(fig, Path(path or run["dir"] / "plot_mesh.png"))


def _cell_triangles(allc: np.ndarray) -> np.ndarray:
    """Triangles of polygons (C, 4) whose triangles repeat their first node: two per quad, one per triangle."""
    quad = allc[:, 3] != allc[:, 0]
    return np.vstack([allc[:, [0, 1, 2]], allc[quad][:, [0, 2, 3]]])


def _draw_field(ax, f: dict, values: np.ndarray, cmap, lo: float, hi: float, levels, window=None, px: int = 900):
    """Cells coloured by ``values`` (limits lo, hi) with stream-function contours, on the whole plane or within
    ``window`` (x0, x1, r0, r1 in mm); meshes too fine for the picture are sampled at pixels."""
    nodes, allc = f["nodes"] * 1e3, f["polygons"]
    psi = f["point_data"]["stream_function_m3_s"]
    poly = nodes[allc]
    centre = poly.mean(axis=1)
    size = np.linalg.norm(poly - centre[:, None, :], axis=2).max(axis=1)  # circumscribed radius
    ext = window or (nodes[:, 0].min(), nodes[:, 0].max(), 0.0, nodes[:, 1].max())
    sel = ((centre[:, 0] > ext[0] - size) & (centre[:, 0] < ext[1] + size) & (centre[:, 1] > ext[2] - size)
           & (centre[:, 1] < ext[3] + size))
    if sel.sum() <= DRAW_CELLS_MAX:
        from matplotlib.collections import PolyCollection

        pc = PolyCollection(poly[sel], array=values[sel], cmap=cmap, edgecolor="face", linewidth=0.05, antialiased=False)
        pc.set_clim(lo, hi)
        ax.add_collection(pc)
        import matplotlib.tri as mtri

        tri = mtri.Triangulation(nodes[:, 0], nodes[:, 1], _cell_triangles(allc[sel]))
        _halo(ax.tricontour(tri, psi, levels=levels, colors="white", linewidths=0.6))
        return pc
    from scipy.spatial import cKDTree  # sample the nearest cell at each pixel: O(cells log cells)

    nx = px
    nr = max(20, int(nx * (ext[3] - ext[2]) / (ext[1] - ext[0])))
    xc, rc = np.linspace(ext[0], ext[1], nx), np.linspace(ext[2], ext[3], nr)
    X, Rr = np.meshgrid(xc, rc)
    idx_sel = np.flatnonzero(sel)
    dist, j = cKDTree(centre[idx_sel]).query(np.column_stack([X.ravel(), Rr.ravel()]))
    idx = idx_sel[j]
    inside = (dist <= size[idx]).reshape(X.shape)
    img = np.where(inside, values[idx].reshape(X.shape), np.nan)
    pc = ax.imshow(img, origin="lower", extent=ext, cmap=cmap, vmin=lo, vmax=hi, aspect="auto", interpolation="nearest")
    grid_psi = np.ma.masked_where(~inside, psi[allc].mean(axis=1)[idx].reshape(X.shape))
    _halo(ax.contour(xc, rc, grid_psi, levels=levels, colors="white", linewidths=0.6))
    return pc


def _halo(contours) -> None:
    """White streamlines with a faint dark edge: seen on the dark and on the light end of the colour map."""
    from matplotlib import patheffects

    contours.set_path_effects([patheffects.Stroke(linewidth=1.4, foreground=INK, alpha=0.35), patheffects.Normal()])


def speed_figure(run, lines: int = 12):
    """The figure of ``speed_plot`` (for a test to read back): the whole plane and a zoom at the least wall pressure."""
    run = _as_run(run)
    f = fields(run)
    nodes = f["nodes"] * 1e3
    mach = "mach" in f["cell_data"]
    speed = f["cell_data"]["mach" if mach else "speed_m_s"]
    lo, hi = float(speed.min()), float(speed.max())
    cmap = colour_map("speed", lo, hi)
    psi = f["point_data"]["stream_function_m3_s"]
    levels = np.linspace(psi.min(), psi.max(), lines + 2)[1:-1]
    fc, win = _window(run)
    fig, axes = figure(8.0, _height(nodes, 1.9), layout="constrained", nrows=1, ncols=2, gridspec_kw={"width_ratios": [2.3, 1]})
    pc = _draw_field(axes[0], f, speed, cmap, lo, hi, levels)
    _draw_field(axes[1], f, speed, cmap, lo, hi, levels, window=win, px=500)
    jet_csv = run["dir"] / "jet.csv"
    j = read_csv(jet_csv) if jet_csv.exists() else None
    for ax in axes:
        _outlines(ax, run, label_body=ax is axes[0])
        if j is not None:
            ax.plot(j["x_m"] * 1e3, j["r_m"] * 1e3, color=JET, lw=1.2, ls="--", label="free-jet boundary")
        ax.set_aspect("equal")
        ax.set_xlabel("x [mm]")
    if j is not None:
        axes[0].legend(fontsize=7, loc="upper right", framealpha=0.85)
    _whole_and_zoom(axes, nodes, fc, win)
    label = "Mach number" if mach else "speed [m/s]"
    headline(fig, run["summary"], f"{label[0].upper() + label[1:]}; white: streamlines, each band carries 1/{lines + 1} "
             "of the flow", axes[0])
    axes[1].set_title(_focus_text(run, fc).replace("zoom at the least wall pressure, ", "zoom: least wall pressure,\n"),
                      loc="left", fontsize=7.5, color=FOCUS)
    colour_bar(fig, pc, list(axes), lo, hi, label, orientation="horizontal", shrink=0.55, aspect=45, pad=0.02)
    return fig


def speed_plot(run, path=None, lines: int = 12) -> Path:
    """Speed field (Mach number for a gas) with streamlines (contours of the Stokes stream function at equal
    flow fractions), beside a zoom at the least wall pressure."""
    run = _as_run(run)
    return save(speed_figure(run, lines), Path(path or run["dir"] / "plot_speed.png"))


def wall_layer_plot(run, path=None) -> Path:
    """Wall shear and shape factor of the wall layer along x, separated ranges shaded."""
    run = _as_run(run)
    s = run["summary"]
    v = s.get("viscous") or {}
    fig, (ax1, ax2) = figure(7.2, 5.0, nrows=2, ncols=1, sharex=True)
    for a, b in v.get("separation_x_ranges_m", []):
        for ax in (ax1, ax2):
            ax.axvspan(a * 1e3, b * 1e3, color="#e8a09a", alpha=0.45, lw=0)
    for name, t in run["tables"].items():
        if "tau_w_Pa" not in t:
            continue
        ax1.plot(t["x_m"] * 1e3, t["tau_w_Pa"], color=COLOURS[name], lw=1.4, label=part_name(run, name))
        ax2.plot(t["x_m"] * 1e3, t["shape_factor"], color=COLOURS[name], lw=1.4, label=part_name(run, name))
    for x in v.get("transition_x_m", []):
        for ax in (ax1, ax2):
            ax.axvline(x * 1e3, color=COLOURS["onedim"], ls=":", lw=1)
    h_sep = (v.get("settings") or {}).get("separation_shape_factor")
    if h_sep:
        ax2.axhline(h_sep, color="#c0392b", ls="--", lw=0.9, label=f"turbulent separation H = {h_sep:g}")
    ax1.set_ylabel("wall shear [Pa]")
    ax2.set_ylabel("shape factor H = δ*/θ")
    ax2.set_xlabel("x [mm]")
    for ax in (ax1, ax2):
        _plain_ticks(ax)
        ax.grid(alpha=0.3)
    shaded = "; shaded: separated (indicative only)" if v.get("separation_x_ranges_m") else ""
    trans = "; dotted: transition" if v.get("transition_x_m") else ""
    headline(fig, s, f"Wall layer (Re {v.get('reynolds_number', float('nan')):.3g}){shaded}{trans}", ax1)
    ax1.legend(fontsize=7.5, loc="best")
    ax2.legend(fontsize=7.5, loc="best")
    fig.tight_layout()
    return save(fig, Path(path or run["dir"] / "plot_wall_layer.png"))


def jet_plot(run, path=None) -> Path:
    """The free-jet boundary from the lip (r against x, with the far radius and the vena contracta)
    and the remaining speed mismatch along it."""
    run = _as_run(run)
    j = read_csv(run["dir"] / "jet.csv")
    flow = run["summary"].get("flow", {})
    fig, (ax, ax2) = figure(7.0, 4.6, nrows=2, sharex=True)
    x, r = j["x_m"] * 1e3, j["r_m"] * 1e3
    ax.plot(x, r, color="#1f5fa8", lw=1.5, label="jet boundary")
    for name, t in run["tables"].items():
        ax.plot(t["x_m"] * 1e3, t["r_m"] * 1e3, color=COLOURS[name], lw=1.0, label=part_name(run, name))
    if flow.get("jet_radius_m"):
        ax.axhline(flow["jet_radius_m"] * 1e3, color="0.5", ls=":", lw=0.9,
                   label=f"far jet, contraction coefficient {flow.get('contraction_coefficient', float('nan')):.4f}")
    if flow.get("vena_contracta_x_m") is not None:
        ax.axvline(flow["vena_contracta_x_m"] * 1e3, color="#c0392b", ls="--", lw=0.9, label="vena contracta (1 % of the contraction left)")
    ax.set_ylim(0, None)
    ax.set_ylabel("r [mm]")
    ax.set_aspect("auto")
    ax.legend(fontsize=7, loc="best")
    headline(fig, run["summary"], "Free jet past the lip", ax)
    ax2.plot(x, j["speed_mismatch"] * 100, color="#ff8c1a", lw=1.0)
    ax2.axhline(0.0, color="0.5", lw=0.6)
    lim = max(1.0, float(np.percentile(np.abs(j["speed_mismatch"]), 95)) * 100 * 1.5)
    worst = float(np.max(np.abs(j["speed_mismatch"]))) * 100
    ax2.set_ylim(-lim, lim)
    ax2.set_ylabel("speed / jet speed - 1 [%]")
    if worst > lim:
        ax2.set_title(f"axis clipped at +-{lim:.2g} %: the largest mismatch, {worst:.3g} %, is next to the lip "
                      "(the flow round a sharp edge is singular)", fontsize=8)
    ax2.set_xlabel("x [mm]")
    for a in (ax, ax2):
        _plain_ticks(a)
    fig.tight_layout()
    return save(fig, Path(path or run["dir"] / "plot_jet.png"))


def all_plots(run_dir, unit: str = "bar") -> dict[str, Path]:
    """Every plot of a run; the field plots only where fields.vtu was kept (a grid study keeps it
    for its finest level unless asked)."""
    run = load_run(run_dir)  # read once for all plots
    out = {"wall_pressure": wall_pressure_plot(run, unit=unit), "axial_force": axial_force_plot(run)}
    if any("tau_w_Pa" in t for t in run["tables"].values()):
        out["wall_layer"] = wall_layer_plot(run)
    if (Path(run_dir) / "jet.csv").exists():
        out["jet"] = jet_plot(run)
    if (Path(run_dir) / "fields.vtu").exists():
        out["mesh"] = mesh_plot(run)
        out["speed"] = speed_plot(run)
    out["cp"] = cp_plot(run)
    out["unrolled"] = unrolled_plot(run, unit=unit)
    return out


_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "<", ">", "h")
_LINES = ("-", "--", "-.", ":")
_COLOURS = ("#23395b", "#b5462b", "#2d6a36", "#c8941a", "#6a3d9a", "#1b7f8c", "#7a5230", "#555555")


def line_style(i: int) -> dict:
    """The i-th line of a plot: colour, marker and dash cycle at different lengths, so that lines that cross or
    coincide stay apart (and in black-and-white print)."""
    return {"color": _COLOURS[i % len(_COLOURS)], "marker": _MARKERS[i % len(_MARKERS)],
            "ls": _LINES[(i // len(_COLOURS) + i) % len(_LINES)], "mfc": "none" if i % 2 else None, "ms": 5}
