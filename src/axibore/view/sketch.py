"""A dimensioned sketch of the bore of a run (matplotlib, PNG): the wall as it ran, mirrored about the
axis, with the inlet and exit diameters, the axial lengths of its pieces, the overall length, the
arc radii and cone half angles, the joints and the place of the least wall pressure.

Drawn from the run directory only: the resolved case (case.toml) for the exact pieces of the wall,
else the wall table (wall.csv) for the outline and its two end diameters.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ..case import CaseError, load_case
from ..io.files import read_csv
from ..io.rundir import read_summary
from .plots import figure, save

WALL = "#23395b"
BODY = "#8a8a8a"
DIM = "#333333"
JOINT = "#9c3d26"


def _pieces(run_dir: Path):
    """(wall pieces, centre-body pieces) as (kind, start, end, radius, points) in metres, or None."""
    try:
        case = load_case(run_dir / "case.toml")
    except (CaseError, OSError, ValueError):
        return None

    def chain(segs):
        return [(s.kind, tuple(map(float, s.start)), tuple(map(float, s.end)), float(s.radius), s.sample())
                for s in segs]
    return chain(case.profile.wall), chain(case.profile.centerbody)


def _dim(ax, x0, x1, y, text, fs=9):
    """A horizontal dimension line from x0 to x1 at height y, its text above (left out when it cannot fit)."""
    ax.annotate("", xy=(x0, y), xytext=(x1, y), arrowprops=dict(arrowstyle="<|-|>", color=DIM, lw=0.6,
                                                                  shrinkA=0, shrinkB=0, mutation_scale=6))
    return ax.text((x0 + x1) / 2, y, text, ha="center", va="bottom", fontsize=fs, color=DIM)


def _vdim(ax, x, r, text, side, fs=9):
    """A diameter: a vertical dimension line from -r to r at x, its text beside it."""
    ax.annotate("", xy=(x, -r), xytext=(x, r), arrowprops=dict(arrowstyle="<|-|>", color=DIM, lw=0.6,
                                                                shrinkA=0, shrinkB=0, mutation_scale=6))
    ax.annotate(text, xy=(x, r / 2), xytext=(-2 if side == "left" else 2, 0), textcoords="offset points", rotation=90,
                ha="right" if side == "left" else "left", va="center", fontsize=fs, color=DIM)


def mm(v: float) -> str:
    x = v * 1e3
    return f"{x:.0f}" if abs(x) >= 100 else f"{x:.3g}"


def bore_sketch(run_dir: str | Path, path: str | Path | None = None) -> Path:
    """Write plot_sketch.png (or ``path``): the dimensioned sketch of the bore of a run."""
    run_dir = Path(run_dir)
    path = Path(path) if path is not None else run_dir / "plot_sketch.png"
    s = read_summary(run_dir)
    pieces = _pieces(run_dir)
    if pieces is not None:
        wall, body = pieces
        pts = np.vstack([p[4] for p in wall])
    else:
        t = read_csv(run_dir / "wall.csv")
        pts, wall, body = np.column_stack([t["x_m"], t["r_m"]]), [], []
        if (run_dir / "centerbody.csv").exists():
            c = read_csv(run_dir / "centerbody.csv")
            body = [("line", None, None, 0.0, np.column_stack([c["x_m"], c["r_m"]]))]
    x0, x1 = float(pts[:, 0].min()), float(pts[:, 0].max())
    L = x1 - x0
    rmax = float(pts[:, 1].max())
    planar = bool((s.get("geometry") or {}).get("per_unit_depth"))
    # the drawing's height in data units decides the figure's shape (equal scales on both axes)
    joints = s.get("joints") or []
    gmax = max([rmax] + [j["gasket_diameter_m"] / 2 for j in joints])
    below = 0.08 * max(L, 2 * gmax) + 0.25 * gmax  # room for the dimension chains
    top, bottom = gmax * (1.4 if joints else 1.15), -gmax - below
    left, right = x0 - 0.08 * L - 0.1 * gmax, x1 + 0.08 * L + 0.1 * gmax
    aspect = (top - bottom) / (right - left)
    width = 6.4  # inches: shown about full size on A4 (the page caps its height at 64 mm)
    height = min(max(width * aspect, 1.5), 2.5)
    fig, ax = figure(width, height, dpi=160)
    ax.set_aspect("equal", adjustable="box")
    # the fluid, the wall mirrored about the axis (a planar section: the symmetry plane)
    ax.fill_between(pts[:, 0], -pts[:, 1], pts[:, 1], color="#dfe9f5", lw=0)
    for sign in (1, -1):
        ax.plot(pts[:, 0], sign * pts[:, 1], color=WALL, lw=1.6, solid_capstyle="butt")
    for _, _, _, _, bp in body:
        ax.fill_between(bp[:, 0], -bp[:, 1], bp[:, 1], color=BODY, lw=0.8, ec="#555555")
    ax.plot([left, right], [0, 0], color="#555555", lw=0.6, ls=(0, (12, 3, 2, 3)))
    if planar:
        ax.text(right, 0, "symmetry plane ", fontsize=8.5, va="bottom", ha="right", color="#555555")
    # diameters at the two ends
    r_in, r_out = float(pts[0, 1]), float(pts[-1, 1])
    word = "height" if planar else "⌀"
    _vdim(ax, x0 - 0.045 * L, r_in, f"{word} {mm(2 * r_in)}" if not planar else f"2h {mm(2 * r_in)}", "left")
    _vdim(ax, x1 + 0.045 * L, r_out, f"{word} {mm(2 * r_out)}" if not planar else f"2h {mm(2 * r_out)}", "right")
    # stations: the ends of the wall's pieces; a chain of lengths below the part, the overall length below that
    y_chain = -gmax - 0.12 * below
    y_total = -gmax - 0.72 * below
    stations = sorted({round(p[1][0], 12) for p in wall} | {round(p[2][0], 12) for p in wall}) if wall else [x0, x1]
    for xs in stations:
        r_here = float(np.interp(xs, pts[:, 0], pts[:, 1]))
        ax.plot([xs, xs], [-r_here, y_total], color="#999999", lw=0.4, ls=":")
    for a, b in zip(stations[:-1], stations[1:]):
        if b - a > 1e-9:
            small = (b - a) < 0.07 * L
            t = _dim(ax, a, b, y_chain if not small else y_chain - 0.25 * below, mm(b - a), fs=8 if small else 9)
            if small:
                t.set_va("top")
    _dim(ax, x0, x1, y_total, f"{mm(L)}  overall")
    # radii of arcs and half angles of cones, on the upper wall
    for kind, a, b, radius, p in wall:
        if kind == "arc" and radius:
            m = p[len(p) // 2]
            ax.annotate(f"R{mm(abs(radius))}", xy=(m[0], m[1]), xytext=(m[0], m[1] + 0.22 * gmax), fontsize=8.5,
                        ha="center", color=DIM, arrowprops=dict(arrowstyle="-", color=DIM, lw=0.5))
        elif kind == "line" and abs(b[0] - a[0]) > 1e-12 and abs(b[1] - a[1]) > 1e-9 * L:
            ang = math.degrees(math.atan2(abs(b[1] - a[1]), abs(b[0] - a[0])))
            mx, my = (a[0] + b[0]) / 2, (a[1] + b[1]) / 2
            ax.text(mx, my + 0.06 * gmax, f"{ang:.3g}°", fontsize=8.5, color=DIM, ha="left", va="bottom")
    # joints: the gasket circle's diameter at the joint
    for j in joints:
        g = j["gasket_diameter_m"] / 2
        ax.plot([j["x_m"], j["x_m"]], [-g, g], color=JOINT, lw=1.0, ls="--")
        ax.text(j["x_m"], g * 1.04, f"joint {j['name']}\nG {mm(2 * g)}", fontsize=8.5, color=JOINT,
                ha="left" if j["x_m"] < x0 + 0.5 * L else "right", va="bottom")
    # the least wall pressure
    p = s.get("pressure") or {}
    if p.get("min_wall_x_m") is not None and p.get("min_wall_r_m") is not None:
        ax.plot([p["min_wall_x_m"]], [p["min_wall_r_m"]], marker="v", color="#c8941a", ms=6, mec="k", mew=0.4)
    ax.set_xlim(left, right)
    ax.set_ylim(bottom, top)
    ax.axis("off")
    ax.text(left, bottom, "dimensions in mm (as run); ▼ least wall pressure", fontsize=8.5, color="#555555",
            va="bottom")
    fig.subplots_adjust(0.01, 0.01, 0.99, 0.99)
    return save(fig, path)
