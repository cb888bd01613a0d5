"""Plots of a run directory (matplotlib, PNG): wall pressure 2D vs 1D, cumulative axial force,
the mesh with a zoom, the speed field with streamlines. Everything is read back from the run
directory (summary.json, wall.csv, centerbody.csv, fields.vtu), never from solver objects. Each
plot takes a run directory or a run loaded once with ``load_run``."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..io.files import atomic_file, intact_vtk, read_csv
from ..io.rundir import read_summary
from ..units import PRESSURE_UNITS

DRAW_CELLS_MAX = 60_000  # above this, fields are binned to pixels and the full mesh view shows the outline only
COLOURS = {"wall": "#1f4e79", "centerbody": "#b5462b", "onedim": "#6b6b6b", "band": "#f2c94c"}


def figure(width: float, height: float, dpi: int = 130, **subplots):
    """A matplotlib Figure of its own and its axes: no pyplot, no global backend or figure state,
    so runs can draw side by side."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=dpi)
    return fig, fig.subplots(**subplots)


def save(fig, path: Path) -> Path:
    path = Path(path)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png")
    return path


def load_run(run_dir: str | Path) -> dict:
    """Summary and wall tables of a run directory; the fields are read on first use (``fields``)."""
    run_dir = Path(run_dir)
    data = {"dir": run_dir, "summary": read_summary(run_dir)}
    data["tables"] = {n: read_csv(run_dir / f"{n}.csv") for n in ("wall", "centerbody") if (run_dir / f"{n}.csv").exists()}
    return data


def _as_run(run) -> dict:
    return run if isinstance(run, dict) else load_run(run)


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


def _triangles(cells) -> np.ndarray:
    tris = []
    for c in cells:
        if c.shape[1] == 3:
            tris.append(c)
        else:
            tris += [c[:, [0, 1, 2]], c[:, [0, 2, 3]]]
    return np.vstack(tris)


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
        ax.plot(t["x_m"] * 1e3, t["p_gauge_Pa"] / k, color=COLOURS[name], lw=1.6, label=f"{name}, 2D")
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
    ax.set_title(f"Wall pressure; shaded: 2D departs from 1D by more than {thr:.0%} of the outlet dynamic pressure", fontsize=8.5)
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
        ax.plot(t["x_m"] * 1e3, t["cumulative_force_x_N"] / 1e3, color=COLOURS[name], lw=1.6, label=name)
    ax.axhline(s["forces"]["onedim_x_N"] / 1e3, color=COLOURS["onedim"], ls="--", lw=1,
               label=f"1D formula (wall + body) {s['forces']['onedim_x_N'] / 1e3:.4g} kN")
    ax.set_xlabel("x [mm]")
    ax.set_ylabel("cumulative axial force [kN]")
    _plain_ticks(ax)
    ax.set_title("Axial force of the fluid on the part from the inlet (+x downstream)", fontsize=9)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7.5)
    fig.tight_layout()
    return save(fig, Path(path or run["dir"] / "plot_axial_force.png"))


def mesh_plot(run, path=None, zoom_at: tuple[float, float] | None = None) -> Path:
    """The meridional mesh, and a zoom around the minimum wall pressure (a lip or knuckle)."""
    from matplotlib.collections import PolyCollection
    from matplotlib.patches import Rectangle

    run = _as_run(run)
    s = run["summary"]
    f = fields(run)
    nodes, allc = f["nodes"] * 1e3, f["polygons"]  # drawn in millimetres
    zx, zr = zoom_at or (s["pressure"]["min_wall_x_m"], s["pressure"].get("min_wall_r_m", nodes[:, 1].max() * 1e-3))
    zx, zr = zx * 1e3, zr * 1e3
    span = 12 * s["mesh"]["target_h_m"] * 1e3
    fig, axes = figure(7.4, 3.4, nrows=1, ncols=2, gridspec_kw={"width_ratios": [2.2, 1]})
    centre = nodes[allc].mean(axis=1)
    inside = (np.abs(centre[:, 0] - zx) < 1.5 * span) & (np.abs(centre[:, 1] - zr) < 1.5 * span)
    if len(allc) <= DRAW_CELLS_MAX:
        axes[0].add_collection(PolyCollection(nodes[allc], facecolor="none", edgecolor="#2c3e50", linewidth=0.15))
    else:
        for name, t in run["tables"].items():
            axes[0].plot(t["x_m"] * 1e3, t["r_m"] * 1e3, color=COLOURS[name], lw=1)
        axes[0].text(0.5, 0.5, "cells too dense to draw here: see the zoom", transform=axes[0].transAxes, ha="center", fontsize=7)
    axes[1].add_collection(PolyCollection(nodes[allc[inside]], facecolor="none", edgecolor="#2c3e50", linewidth=0.5))
    for ax in axes:
        ax.set_aspect("equal")
    axes[0].set_xlim(nodes[:, 0].min(), nodes[:, 0].max())
    axes[0].set_ylim(0, nodes[:, 1].max() * 1.02)
    zr = min(zr, nodes[:, 1].max() - span)  # keep the zoom box inside the picture
    axes[0].add_patch(Rectangle((zx - span, zr - span), 2 * span, 2 * span, fill=False, ec="#c0392b", lw=1))
    axes[0].set_title(f"{s['mesh']['cells']:,} cells ({s['mesh']['method']})", fontsize=8.5)
    axes[1].set_xlim(zx - span, zx + span)
    axes[1].set_ylim(zr - span, zr + span)
    axes[1].set_title("zoom at the minimum wall pressure", fontsize=8.5)
    for ax in axes:
        ax.set_xlabel("x [mm]")
    axes[0].set_ylabel("r [mm]")
    fig.tight_layout()
    return save(fig, Path(path or run["dir"] / "plot_mesh.png"))


def speed_plot(run, path=None, lines: int = 12) -> Path:
    """Speed field with streamlines (contours of the Stokes stream function at equal flow fractions)."""
    import matplotlib.tri as mtri

    from matplotlib.collections import PolyCollection

    run = _as_run(run)
    f = fields(run)
    nodes, cells, allc = f["nodes"] * 1e3, f["cells"], f["polygons"]  # drawn in millimetres
    fig, ax = figure(7.4, 3.2)

    psi = f["point_data"]["stream_function_m3_s"]
    levels = np.linspace(psi.min(), psi.max(), lines + 2)[1:-1]
    mach = "mach" in f["cell_data"]
    speed = f["cell_data"]["mach" if mach else "speed_m_s"]
    if len(allc) <= DRAW_CELLS_MAX:
        pc = PolyCollection(nodes[allc], array=speed, cmap="viridis", edgecolor="none", antialiased=False)
        ax.add_collection(pc)
        tri = mtri.Triangulation(nodes[:, 0], nodes[:, 1], _triangles(cells))
        ax.tricontour(tri, psi, levels=levels, colors="white", linewidths=0.6)
    else:  # sample the nearest cell at each pixel: O(cells log cells), for meshes finer than the picture
        from scipy.spatial import cKDTree

        ext = (nodes[:, 0].min(), nodes[:, 0].max(), 0.0, nodes[:, 1].max())
        nx = 900
        nr = max(20, int(nx * (ext[3] - ext[2]) / (ext[1] - ext[0])))
        xc = np.linspace(ext[0], ext[1], nx)
        rc = np.linspace(ext[2], ext[3], nr)
        X, Rr = np.meshgrid(xc, rc)
        poly = nodes[allc]
        centre = poly.mean(axis=1)
        size = np.linalg.norm(poly - centre[:, None, :], axis=2).max(axis=1)  # circumscribed radius
        dist, idx = cKDTree(centre).query(np.column_stack([X.ravel(), Rr.ravel()]))
        inside = (dist <= size[idx]).reshape(X.shape)
        img = np.where(inside, speed[idx].reshape(X.shape), np.nan)
        pc = ax.imshow(img, origin="lower", extent=ext, cmap="viridis", aspect="auto", interpolation="nearest")
        psi_cell = psi[allc].mean(axis=1)
        grid_psi = np.ma.masked_where(~inside, psi_cell[idx].reshape(X.shape))
        ax.contour(xc, rc, grid_psi, levels=levels, colors="white", linewidths=0.6)
    jet_csv = run["dir"] / "jet.csv"
    if jet_csv.exists():
        j = read_csv(jet_csv)
        ax.plot(j["x_m"] * 1e3, j["r_m"] * 1e3, color="#ff8c1a", lw=1.2, ls="--", label="free-jet boundary")
        ax.legend(fontsize=7.5, loc="upper right")
    ax.set_xlim(nodes[:, 0].min(), nodes[:, 0].max())
    ax.set_ylim(0, nodes[:, 1].max() * 1.02)
    ax.set_aspect("equal")
    cb = fig.colorbar(pc, ax=ax, shrink=0.85)
    cb.set_label("Mach number" if mach else "speed [m/s]")
    ax.set_xlabel("x [mm]")
    ax.set_ylabel("r [mm]")
    ax.set_title(f"{'Mach number' if mach else 'Speed'}; white: streamlines, each band carries 1/{lines + 1} of the flow",
                 fontsize=8.5)
    fig.tight_layout()
    return save(fig, Path(path or run["dir"] / "plot_speed.png"))


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
        ax1.plot(t["x_m"] * 1e3, t["tau_w_Pa"], color=COLOURS[name], lw=1.4, label=name)
        ax2.plot(t["x_m"] * 1e3, t["shape_factor"], color=COLOURS[name], lw=1.4, label=name)
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
    ax1.set_title(f"Wall layer (Re {v.get('reynolds_number', float('nan')):.3g}){shaded}{trans}", fontsize=9)
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
        ax.plot(t["x_m"] * 1e3, t["r_m"] * 1e3, color="0.35" if name == "wall" else "0.6", lw=1.0,
                label={"wall": "wall", "centerbody": "centre body"}.get(name, name))
    if flow.get("jet_radius_m"):
        ax.axhline(flow["jet_radius_m"] * 1e3, color="0.5", ls=":", lw=0.9,
                   label=f"far jet, contraction coefficient {flow.get('contraction_coefficient', float('nan')):.4f}")
    if flow.get("vena_contracta_x_m") is not None:
        ax.axvline(flow["vena_contracta_x_m"] * 1e3, color="#c0392b", ls="--", lw=0.9, label="vena contracta (1 % of the contraction left)")
    ax.set_ylim(0, None)
    ax.set_ylabel("r [mm]")
    ax.set_aspect("auto")
    ax.legend(fontsize=7, loc="best")
    ax.set_title("Free jet past the lip", fontsize=9)
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
    return out


_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "<", ">", "h")
_LINES = ("-", "--", "-.", ":")
_COLOURS = ("#23395b", "#b5462b", "#2d6a36", "#c8941a", "#6a3d9a", "#1b7f8c", "#7a5230", "#555555")


def line_style(i: int) -> dict:
    """The i-th line of a plot: colour, marker and dash cycle at different lengths, so that lines that cross or
    coincide stay apart (and in black-and-white print)."""
    return {"color": _COLOURS[i % len(_COLOURS)], "marker": _MARKERS[i % len(_MARKERS)],
            "ls": _LINES[(i // len(_COLOURS) + i) % len(_LINES)], "mfc": "none" if i % 2 else None, "ms": 5}
