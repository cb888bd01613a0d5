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
    x_end = max([x1] + [float(bp[:, 0].max()) for *_, bp in body])  # a needle may reach past the wall
    planar = bool((s.get("geometry") or {}).get("per_unit_depth"))
    joints = s.get("joints") or []
    gmax = max([rmax] + [j["gasket_diameter_m"] / 2 for j in joints])
    stations = sorted({round(p[1][0], 12) for p in wall} | {round(p[2][0], 12) for p in wall}) if wall else [x0, x1]
    small = [b - a < 0.07 * L for a, b in zip(stations[:-1], stations[1:])]
    left, right = x0 - 0.08 * L - 0.1 * gmax, x_end + 0.08 * L + 0.1 * gmax
    top = gmax * (1.45 if joints else 1.2)
    # equal scales on both axes: the room for the dimension lines below the part is counted in lines of text,
    # whose height in metres depends on the figure's shape, which depends on that room (settles in a few passes)
    width, th, height = 6.4, 0.05 * L, 2.0  # inches: shown about full size on A4 (the page caps the height)
    rows = 4.2 + (1.4 if any(small) else 0.0)
    for _ in range(4):
        bottom = -gmax - rows * th
        height = min(max(width * (top - bottom) / (right - left), 1.4), 2.5)
        per_inch = max((right - left) / (0.98 * width), (top - bottom) / (0.98 * height))
        th = 9 / 72 * per_inch * 1.15  # one line of 9 pt text, in metres
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
        ax.text(x0 + 0.01 * L, 0.15 * th, "symmetry plane", fontsize=8.5, va="bottom", ha="left", color="#555555")
    # diameters at the two ends (beyond a needle that reaches past the exit, with extension lines)
    r_in, r_out = float(pts[0, 1]), float(pts[-1, 1])
    word = "height" if planar else "⌀"
    _vdim(ax, x0 - 0.045 * L, r_in, f"{word} {mm(2 * r_in)}", "left")
    x_dim = x_end + 0.045 * L
    if x_end > x1 + 1e-9:
        for sign in (1, -1):
            ax.plot([x1, x_dim + 0.01 * L], [sign * r_out, sign * r_out], color="#999999", lw=0.4)
    _vdim(ax, x_dim, r_out, f"{word} {mm(2 * r_out)}", "right")
    # stations: the ends of the wall's pieces; a chain of lengths below the part (the short ones a line lower),
    # the overall length below that
    y_chain = -gmax - 1.3 * th
    y_small = y_chain - 1.4 * th
    y_total = (y_small if any(small) else y_chain) - 1.5 * th
    for xs in stations:
        r_here = float(np.interp(xs, pts[:, 0], pts[:, 1]))
        ax.plot([xs, xs], [-r_here, y_total], color="#999999", lw=0.4, ls=":")
    for (a, b), short in zip(zip(stations[:-1], stations[1:]), small):
        if b - a > 1e-9:
            _dim(ax, a, b, y_small if short else y_chain, mm(b - a), fs=8 if short else 9)
    _dim(ax, x0, x1, y_total, f"{mm(L)}  overall")
    # radii of arcs and half angles of cones, on the upper wall
    for kind, a, b, radius, p in wall:
        if kind == "arc" and radius:
            m = p[len(p) // 2]
            ax.annotate(f"R{mm(abs(radius))}", xy=(m[0], m[1]), xytext=(m[0], m[1] + 1.6 * th), fontsize=8.5,
                        ha="center", color=DIM, arrowprops=dict(arrowstyle="-", color=DIM, lw=0.5))
        elif kind == "line" and abs(b[0] - a[0]) > 1e-12 and abs(b[1] - a[1]) > 1e-9 * L:
            ang = math.degrees(math.atan2(abs(b[1] - a[1]), abs(b[0] - a[0])))
            mx, my = (a[0] + b[0]) / 2, (a[1] + b[1]) / 2
            ax.text(mx, my + 0.3 * th, f"{ang:.3g}°", fontsize=8.5, color=DIM, ha="left", va="bottom")
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
