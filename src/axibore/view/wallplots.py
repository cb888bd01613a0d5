"""Plots of the wall pressure for the people who use it: the pressure coefficient against x/D (for
comparing bores of any size and pressure) and the gauge pressure unrolled along the wall's arc length
(for the structural engineer: where on the part, between which corners, how much). Drawn from the run
directory only (summary.json, wall.csv, centerbody.csv, case.toml for the pieces of the wall)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ..case import CaseError, load_case
from ..units import PRESSURE_UNITS
from .style import BODY_INK, FOCUS, INK, WALL_INK, as_run, figure, headline, part_name, save

INK_OF = {"wall": WALL_INK, "centerbody": BODY_INK}


def reference(summary: dict) -> tuple[float, float]:
    """The reference of the pressure coefficient: (p_ref, q_ref) in Pa, the outlet gauge pressure and the exit
    dynamic pressure (the 1D answer's outlet dynamic pressure, else rho V_exit^2 / 2 of the mean exit speed)."""
    fl = summary["flow"]
    q = (summary.get("onedim") or {}).get("outlet_dynamic_pressure_Pa") or 0.5 * fl["density_kg_m3"] * fl["outlet_mean_velocity_m_s"] ** 2
    return float(summary["pressure"].get("outlet_gauge_Pa") or 0.0), float(q)


def inlet_plane(run: dict) -> tuple[float, float]:
    """(x of the inlet plane, the inlet bore diameter D = 2 r of the wall there), in metres."""
    w = run["tables"]["wall"]
    x0 = float(w["x_m"][0] - 0.5 * w["face_length_m"][0] * abs(w["n_r"][0]))
    return x0, 2.0 * float(w["r_m"][0])


def cp_figure(run):
    """Wall pressure coefficient Cp = (p - p_out) / q_exit against (x - x_inlet) / D, with the 1D model's."""
    run = as_run(run)
    s = run["summary"]
    p_ref, q = reference(s)
    x0, d = inlet_plane(run)
    q_out = (s.get("onedim") or {}).get("outlet_dynamic_pressure_Pa") or q
    fig, ax = figure(7.2, 3.8)
    for a, b in s["onedim"]["breakdown_x_ranges_m"]:
        ax.axvspan((a - x0) / d, (b - x0) / d, color="#f2c94c", alpha=0.3, lw=0)
    ax.axhline(0.0, color="#9aa3ab", lw=0.7)
    best = None
    for name, t in run["tables"].items():
        xd = (t["x_m"] - x0) / d
        cp = (t["p_gauge_Pa"] - p_ref) / q
        ax.plot(xd, cp, color=INK_OF[name], lw=1.6, label=f"{part_name(run, name)}, 2D")
        if "onedim_dev" in t:
            model = "quasi-1D isentropic" if s["flow"].get("compressible") else "Bernoulli"
            ax.plot(xd, cp - t["onedim_dev"] * q_out / q, "--", color="#6b6b6b", lw=1.0,
                    label=f"1D ({model})" if name == "wall" else None)
        i = int(np.argmin(cp))
        if best is None or cp[i] < best[1]:
            best = (xd[i], cp[i])
    ax.plot(*best, marker="o", ms=5, mfc="none", mec=FOCUS, mew=1.2, ls="none", label=f"least Cp {best[1]:.3g}")
    unit = "m" if d >= 1.0 else "mm"
    ax.set_xlabel(f"(x − x_inlet) / D,   D = {d * (1 if unit == 'm' else 1e3):.4g} {unit}, the inlet bore diameter")
    ax.set_ylabel("Cp = (p − p_out) / q_exit")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7.5, loc="best")
    headline(fig, s, f"Wall pressure coefficient; reference: the outlet pressure p_out and the exit dynamic pressure "
             f"q_exit = ρV²/2 = {q / 1e5:.4g} bar", ax)
    fig.tight_layout()
    return fig


def cp_plot(run, path=None) -> Path:
    run = as_run(run)
    return save(cp_figure(run), Path(path or run["dir"] / "plot_wall_cp.png"))


def _pieces(run_dir: Path) -> dict[str, list[tuple[float, float, float]]]:
    """The joints between the pieces of each chain, (x, r, turn in degrees; 0 where the tangent runs on), from
    case.toml; from summary corners (tangent breaks only) where the case does not load."""
    try:
        prof = load_case(Path(run_dir) / "case.toml").profile
    except (CaseError, OSError, ValueError):
        return {}
    turns = {(round(c.x, 9), round(c.r, 9)): math.degrees(c.turn) for c in prof.corners()}
    out = {}
    for name, chain in (("wall", prof.wall), ("centerbody", prof.centerbody)):
        out[name] = [(float(g.start[0]), float(g.start[1]), turns.get((round(g.start[0], 9), round(g.start[1], 9)), 0.0))
                     for g in chain[1:]]
    return out


def joint_s(t: dict, x: float, r: float) -> float:
    """Arc length from the inlet (m) of the face end nearest to the point (x, r)."""
    ends = np.cumsum(t["face_length_m"])
    c = np.column_stack([t["x_m"], t["r_m"]])
    mids = np.vstack([0.5 * (c[:-1] + c[1:]), c[-1:]])
    return float(ends[int(np.argmin(np.hypot(mids[:, 0] - x, mids[:, 1] - r)))])


def unrolled_figure(run, unit: str = "bar"):
    """Gauge pressure against the arc length along the wall from the inlet, the joints of its pieces marked
    (corners solid with their turn, smooth joints dotted) and numbered; the centre body in a row of its own."""
    run = as_run(run)
    s = run["summary"]
    k = PRESSURE_UNITS[unit]
    names = list(run["tables"])
    fig, axes = figure(7.4, 1.0 + 2.4 * len(names), nrows=len(names), ncols=1, squeeze=False)
    pieces = _pieces(run["dir"])
    if not pieces:
        pieces = {n: [(c["x_m"], c["r_m"], c["turn_deg"]) for c in s.get("corners", []) if c["boundary"] == n] for n in names}
    for ax, name in zip(axes[:, 0], names):
        t = run["tables"][name]
        sm = t["s_m"] * 1e3
        p = t["p_gauge_Pa"] / k
        if p.min() < 0.5 * p.max():  # the load from zero gauge where it shows the variation; else the variation alone
            ax.axhline(0.0, color="#9aa3ab", lw=0.7)
            ax.fill_between(sm, 0.0, p, color=INK_OF[name], alpha=0.12, lw=0)
        ax.plot(sm, p, color=INK_OF[name], lw=1.5)
        total = float(np.sum(t["face_length_m"])) * 1e3
        ax.set_xlim(0.0, total)
        joints = sorted((joint_s(t, x, r) * 1e3, x, turn) for x, r, turn in pieces.get(name, []))
        for sj, x, turn in joints:
            corner = abs(turn) >= 2.0
            ax.axvline(sj, color=INK if corner else "#7d8790", lw=0.9 if corner else 0.7, ls="-" if corner else ":")
            ax.annotate(f"x {x * 1e3:.4g}" + (f", {'convex' if turn > 0 else 'concave'} corner {abs(turn):.0f}°" if corner else ""),
                        (sj, 1.0), xycoords=("data", "axes fraction"), xytext=(2, -3), textcoords="offset points",
                        rotation=90, va="top", ha="left", fontsize=6.5, color=INK)
        edges = [0.0] + [j[0] for j in joints] + [total]
        for n, (a, b) in enumerate(zip(edges[:-1], edges[1:]), 1):
            ax.text(0.5 * (a + b), 0.02, str(n), transform=ax.get_xaxis_transform(), ha="center", va="bottom",
                    fontsize=7, color="#5d6b78", bbox={"boxstyle": "circle,pad=0.2", "fc": "white", "ec": "#b8c0c7", "lw": 0.6})
        i = int(np.argmin(p))
        ax.plot(sm[i], p[i], marker="o", ms=4.5, mfc="none", mec=FOCUS, mew=1.2)
        ax.set_ylabel(f"{part_name(run, name)}\ngauge pressure [{unit}]", color=INK_OF[name])
        ax.set_xlabel(f"s along the {part_name(run, name)} from the inlet [mm] (total {total:.4g} mm)")
        ax.grid(alpha=0.25)
    headline(fig, s, f"Gauge pressure unrolled along the wall [{unit}]; pieces numbered from the inlet, solid lines: "
             "corners, dotted: smooth joints", axes[0, 0])
    fig.tight_layout()
    return fig


def unrolled_plot(run, path=None, unit: str = "bar") -> Path:
    run = as_run(run)
    return save(unrolled_figure(run, unit), Path(path or run["dir"] / "plot_wall_unrolled.png"))
