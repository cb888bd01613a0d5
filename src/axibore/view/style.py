"""The look of axibore's pictures, shared by the plots (matplotlib) and the 3D views (PyVista): its own
colour maps, colour-bar ticks at round numbers, the case title over every picture, the name of the
centre body, and where the action is (the place a zoom window looks at).

Colour maps (our own, built here): ``DEPTH``, sequential, from deep ink through slate blue and sea
green to pale sand, with a CIE L* lightness rising evenly from 18 to 96 (perceptually ordered, and it
prints in grey as a ramp); ``TIDE``, diverging for gauge pressures that cross zero: suction in blue-green,
overpressure in umber, both arms rising evenly in lightness (from L* 40) to a paper-white zero (L* 97; equal distance from zero, equal lightness). Built by straight lines in CIELAB between anchors.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np

from ..io.files import atomic_file, read_csv
from ..io.rundir import read_summary
from ..version import __version__

INK = "#1d2733"  # text, axes and outlines
WALL_INK = "#1d2733"
BODY_INK = "#7a3b1e"  # the centre body's lines and labels
FOCUS = "#c2410c"  # the zoom window and its marker
JET = "#d9822b"
FONT = "DejaVu Sans"

# CIELAB anchors (L*, a*, b*) of the maps; L* is spaced evenly between consecutive anchors
_DEPTH = ((18, 18, -34), (38, 8, -42), (58, -26, -16), (78, -26, 22), (96, 0, 16))
_TIDE_LOW = ((40, -10, -40), (66, -26, -20), (97, 0, 2))  # suction arm, dark to light
_TIDE_HIGH = ((97, 0, 2), (68, 20, 44), (40, 32, 38))  # overpressure arm, light to dark
DIVERGE_FRACTION = 0.02  # a field crosses zero when its negative part reaches 2 % of its range


def lab_to_srgb(lab: np.ndarray) -> np.ndarray:
    """CIELAB (D65) to sRGB in [0, 1] (clipped to the gamut): the CIE 1976 formulas and the sRGB
    matrix and transfer curve of IEC 61966-2-1."""
    lab = np.atleast_2d(np.asarray(lab, float))
    fy = (lab[:, 0] + 16) / 116
    f = np.column_stack([fy + lab[:, 1] / 500, fy, fy - lab[:, 2] / 200])
    d = 6 / 29
    xyz = np.where(f > d, f ** 3, 3 * d * d * (f - 4 / 29)) * np.array([0.95047, 1.0, 1.08883])
    m = np.array([[3.2406, -1.5372, -0.4986], [-0.9689, 1.8758, 0.0415], [0.0557, -0.2040, 1.0570]])
    lin = np.clip(xyz @ m.T, 0, 1)
    return np.clip(np.where(lin <= 0.0031308, 12.92 * lin, 1.055 * lin ** (1 / 2.4) - 0.055), 0, 1)


def _ramp(anchors, n: int) -> np.ndarray:
    a = np.asarray(anchors, float)
    t = np.linspace(0, len(a) - 1, n)
    i = np.minimum(t.astype(int), len(a) - 2)
    w = (t - i)[:, None]
    return lab_to_srgb(a[i] * (1 - w) + a[i + 1] * w)


def colours(name: str, n: int = 256) -> np.ndarray:
    """(n, 3) sRGB colours of the map ``depth`` or ``tide``."""
    if name == "depth":
        return _ramp(_DEPTH, n)
    if name == "tide":
        half = n // 2
        return np.vstack([_ramp(_TIDE_LOW, half), _ramp(_TIDE_HIGH, n - half)])
    raise ValueError(f"no colour map {name!r}")


def diverges(lo: float, hi: float) -> bool:
    """The field crosses zero (its negative part is more than round-off): shown on the diverging map."""
    return lo < 0 < hi and -lo > DIVERGE_FRACTION * (hi - lo)


def colour_map(quantity: str, lo: float, hi: float):
    """A matplotlib colour map for a field spanning ``lo`` to ``hi`` shown with the limits (lo, hi):
    a pressure that crosses zero gets the diverging map cut so that zero is paper white and equal
    |values| on either side equal lightness; anything else the sequential map."""
    from matplotlib.colors import ListedColormap

    if quantity == "pressure" and diverges(lo, hi):
        m = max(-lo, hi)
        full = colours("tide", 512)
        t = np.linspace(0.5 + 0.5 * lo / m, 0.5 + 0.5 * hi / m, 256)
        rgb = np.column_stack([np.interp(t, np.linspace(0, 1, 512), full[:, k]) for k in range(3)])
        return ListedColormap(rgb, name="axibore-tide")
    return ListedColormap(colours("depth"), name="axibore-depth")


def nice_ticks(lo: float, hi: float, target: int = 6) -> np.ndarray:
    """Ticks at round numbers (steps of 1, 2, 2.5 or 5 times a power of ten) inside [lo, hi], about
    ``target`` of them (never fewer than 3 for a range wider than round-off)."""
    lo, hi = float(min(lo, hi)), float(max(lo, hi))
    span = hi - lo
    if not math.isfinite(span) or span <= 1e-12 * max(abs(lo), abs(hi), 1e-300):
        return np.array([lo])
    k = math.floor(math.log10(span / target))
    steps = [m * 10.0 ** e for e in (k - 1, k, k + 1) for m in (1, 2, 2.5, 5)]

    def count(st: float) -> int:
        return math.floor(hi / st + 1e-9) - math.ceil(lo / st - 1e-9) + 1
    step = min(steps, key=lambda st: (abs(count(st) - target), -st))  # nearest the target count; the coarser on a tie
    first, last = math.ceil(lo / step - 1e-9), math.floor(hi / step + 1e-9)
    ticks = np.arange(first, last + 1) * step
    return np.where(np.abs(ticks) < 1e-9 * step, 0.0, ticks)


def tick_text(ticks) -> list[str]:
    """The tick values as text with just the decimals their step needs (a minus sign, not a hyphen)."""
    ticks = np.asarray(ticks, float)
    step = float(np.min(np.diff(ticks))) if len(ticks) > 1 else abs(float(ticks[0])) or 1.0
    places = 0
    while places < 12 and abs(round(step, places) - step) > 1e-9 * step:
        places += 1
    return [f"{v:.{places}f}".replace("-", "\u2212") for v in ticks]


def figure(width: float, height: float, dpi: int = 130, layout: str | None = None, **subplots):
    """A matplotlib Figure of its own and its axes: no pyplot, no global backend or figure state,
    so runs can draw side by side."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=dpi, layout=layout)
    return fig, fig.subplots(**subplots)


def save(fig, path: Path) -> Path:
    path = Path(path)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", metadata={"Software": f"axibore {__version__}"})  # the tool's mark (io.files)
    return path


def load_run(run_dir: str | Path) -> dict:
    """Summary and wall tables of a run directory; the fields are read on first use (``plots.fields``)."""
    run_dir = Path(run_dir)
    data = {"dir": run_dir, "summary": read_summary(run_dir)}
    data["tables"] = {n: read_csv(run_dir / f"{n}.csv") for n in ("wall", "centerbody") if (run_dir / f"{n}.csv").exists()}
    return data


def as_run(run) -> dict:
    return run if isinstance(run, dict) else load_run(run)


def headline(fig, summary: dict, quantity: str, ax=None) -> None:
    """The case title over the picture (bold, left), the quantity with its unit under it (the title of ``ax``)."""
    fig.suptitle(summary.get("title") or "", x=0.01, ha="left", fontsize=10, fontweight="bold", color=INK)
    if ax is not None:
        import textwrap

        width = int(ax.get_position().width * fig.get_figwidth() * 72 / (8.5 * 0.56))
        ax.set_title(textwrap.fill(quantity, max(width, 40)), loc="left", fontsize=8.5, color="#3a4652")


def colour_bar(fig, mappable, ax, lo: float, hi: float, label: str, **kw):
    """A colour bar with ticks at round numbers inside the colour range."""
    cb = fig.colorbar(mappable, ax=ax, **kw)
    ticks = nice_ticks(lo, hi)
    cb.set_ticks(ticks, labels=tick_text(ticks))
    cb.set_label(label, color=INK, fontsize=8.5)
    cb.outline.set_edgecolor("#8a949e")
    cb.ax.tick_params(labelsize=7.5, colors=INK)
    return cb


def body_name(run_dir: Path) -> str:
    """What the centre body of the run is called: the spear's needle, else the centre body (plug)."""
    try:
        case = tomllib.loads((Path(run_dir) / "case.toml").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return "centre body"
    return "needle" if (case.get("bore") or {}).get("template") == "spear" else "centre body"


def part_name(run: dict, table: str) -> str:
    return "wall" if table == "wall" else body_name(run["dir"])


def focus(run: dict) -> dict:
    """Where the action is: the face of least wall pressure (wall or centre body) and a window around it,
    half as wide as the local channel height (at least 8 cells, at most the bore's radius). In metres:
    x, r, the part, half-width ``half``, and the window's r range ``r0``, ``r1`` (mostly on the fluid's side
    of the part)."""
    best = None
    for name, t in run["tables"].items():
        i = int(np.argmin(t["p_gauge_Pa"]))
        if best is None or t["p_gauge_Pa"][i] < best[3]:
            best = (name, float(t["x_m"][i]), float(t["r_m"][i]), float(t["p_gauge_Pa"][i]))
    name, x, r, p = best
    w = run["tables"]["wall"]
    r_wall = float(np.interp(x, w["x_m"], w["r_m"]))
    cb = run["tables"].get("centerbody")
    r_body = float(np.interp(x, cb["x_m"], cb["r_m"], left=0.0, right=0.0)) if cb is not None else 0.0
    gap = max(r_wall - r_body, 0.0)
    h = float(run["summary"]["mesh"].get("target_h_m") or run["summary"]["mesh"].get("h_m") or 0.0)
    rmax = float(np.max(w["r_m"]))
    half = min(max(0.6 * gap, 8 * h), rmax)
    r1 = r + 0.5 * half if name == "wall" else r + 1.5 * half
    r0 = max(0.0, r1 - 2 * half)
    return {"x": x, "r": r, "part": name, "p": p, "half": half, "r0": r0, "r1": r0 + 2 * half}
