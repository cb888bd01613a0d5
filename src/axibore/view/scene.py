"""PyVista scenes of a run directory: the meridional field revolved into a 3D cut-away, or the
flat meridional plane with streamlines. Rendered in a window where a display exists, or
off-screen to a PNG."""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..io.files import atomic_file, intact_vtk, read_csv
from ..io.rundir import read_summary
from ..io.wall_load import SEGMENTS, revolve
from ..units import PRESSURE_UNITS
from .style import BODY_INK, INK, body_name, colour_map, diverges, nice_ticks, tick_text

FIELDS = {
    "pressure": ("p_gauge_Pa", "gauge pressure"),
    "speed": ("speed_m_s", "speed [m/s]"),
    "mach": ("mach", "Mach number"),
    "cp": ("cp", "pressure coefficient (p - p_out) / q_exit"),
    "shear": ("speed_m_s", "wall shear [Pa]"),  # the wall coloured by its shear (the cut planes show the speed)
}


@dataclass(frozen=True)
class ViewOptions:
    """What a view shows: pressure unit, an x range (m) to zoom on, a fixed colour range (field units)."""

    unit: str = "bar"
    x_range: tuple[float, float] | None = None
    colour_range: tuple[float, float] | None = None


def _field(grid, field: str, opts: ViewOptions) -> tuple[str, str]:
    """Name of the cell array to colour by (pressures converted to the chosen unit) and its label."""
    name, label = FIELDS[field]
    if field == "pressure":
        shown = f"gauge pressure [{opts.unit}]"
        grid.cell_data[shown] = grid.cell_data[name] / PRESSURE_UNITS[opts.unit]
        return shown, shown
    return name, label


def _clip_x(grid, opts: ViewOptions):
    if opts.x_range is None:
        return grid
    x0, x1 = opts.x_range
    centres = grid.cell_centers().points[:, 0]
    keep = (centres >= x0) & (centres <= x1)
    if not keep.any():
        raise ValueError(f"the x range {x0:.4g} to {x1:.4g} holds no cell of this run "
                         f"(the bore spans {grid.bounds[0]:.4g} to {grid.bounds[1]:.4g}; lengths in the view's unit)")
    return grid.extract_cells(np.flatnonzero(keep))


@dataclass
class SceneInfo:
    bounds: tuple[float, float, float, float, float, float]  # of the revolved geometry
    field: str
    field_range: tuple[float, float]  # of the cut-plane field
    wall_range: tuple[float, float]  # of the wall pressure


def has_display() -> bool:
    if sys.platform.startswith("linux"):
        return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))
    return True


def _meridional_grid(run_dir: Path):
    import pyvista as pv

    return pv.read(intact_vtk(run_dir / "fields.vtu"))


def _rotated(grid, angle_rad: float):
    """Copy of the meridional grid (x, r, 0) turned about the x axis by ``angle_rad``."""
    g = grid.copy()
    p = g.points.copy()
    r = p[:, 1].copy()
    p[:, 1] = r * np.cos(angle_rad)
    p[:, 2] = r * np.sin(angle_rad)
    g.points = p
    return g


def revolved_bounds(x0: float, x1: float, rmax: float, angle_deg: float) -> tuple[float, ...]:
    """Exact bounds of the region x0 <= x <= x1, 0 <= r <= rmax revolved from 0 to ``angle_deg`` about x
    (y = r cos theta, z = r sin theta)."""
    a = np.radians(angle_deg)
    cos_min = -1.0 if a >= np.pi else np.cos(a)
    sin_max = 1.0 if a >= np.pi / 2 else np.sin(a)
    sin_min = -1.0 if a >= 1.5 * np.pi else min(0.0, np.sin(a))
    return (float(x0), float(x1), float(rmax * min(cos_min, 0.0)), float(rmax),
            float(rmax * sin_min), float(rmax * max(sin_max, 0.0)))


WALL_P = "wall gauge pressure [Pa]"


def bar_args(title: str) -> dict:
    """Our colour bar: across the foot of the picture, its title above it."""
    return {"title": title, "vertical": False, "position_x": 0.30, "position_y": 0.015, "width": 0.44, "height": 0.12,
            "title_font_size": 15, "label_font_size": 13, "color": INK, "font_family": "arial", "n_labels": 2,
            "fmt": "%.4g", "outline": False}


def round_ticks(plotter, title: str, lo: float, hi: float) -> list[str]:
    """Put the colour bar's ticks at round numbers inside (lo, hi) (``style.nice_ticks``); returns their text."""
    import vtk

    ticks = nice_ticks(lo, hi)
    text = tick_text(ticks)
    places = len(text[0].split(".")[1]) if "." in text[0] else 0
    bar = plotter.scalar_bars[title]
    arr = vtk.vtkDoubleArray()
    for v in ticks:
        arr.InsertNextValue(float(v))
    bar.SetUseCustomLabels(True)
    bar.SetCustomLabels(arr)
    bar.SetLabelFormat(f"%.{places}f")
    bar.SetDrawTickLabels(True)
    bar.SetTitle("")  # the title is ours, at the bar's left (VTK puts a horizontal bar's title over its numbers)
    w, h = plotter.window_size
    pos = bar.GetPositionCoordinate().GetValue()
    height = bar.GetPosition2Coordinate().GetValue()[1]
    actor = plotter.add_text(title, position=(int(pos[0] * w) - 12, int((pos[1] + 0.3 * height) * h)), font_size=10,
                             color=INK, font="arial", name="bar-title")
    actor.GetTextProperty().SetJustificationToRight()
    return text


def _cmap(field: str, lo: float, hi: float):
    return colour_map("pressure" if field in ("pressure", "cp") else field, lo, hi)


def titles(plotter, title: str, quantity: str, note: str = "") -> None:
    """The case title (bold) and the quantity with its unit at the top left; a note at the top right."""
    w, h = plotter.window_size
    plotter.add_text(title, position=(int(0.015 * w), int(h - 38)), font_size=13, color=INK, font="arial", name="case-title")
    plotter.add_text(quantity, position=(int(0.015 * w), int(h - 66)), font_size=10, color="#3a4652", font="arial",
                     name="quantity")
    if note:
        plotter.add_text(note + "  ", position="upper_right", font_size=8, color="#5d6b78", font="arial", name="note")
    plotter.add_text("axibore", position="lower_right", font_size=7, color="#9aa3ab", font="arial", name="mark")


def _wall_surfaces(run_dir: Path, angle_deg: float) -> list:
    """Wall (and centre body) revolved from 0 to ``angle_deg``, gauge pressure as point data."""
    import pyvista as pv

    out = []
    for part in ("wall", "centerbody"):
        src = run_dir / f"{part}.csv"
        if src.exists():
            segments = max(8, int(round(angle_deg / 360 * SEGMENTS)))
            pts, quads, node_p, _ = revolve(read_csv(src), segments=segments, angle_deg=angle_deg)
            surf = pv.PolyData(pts, np.hstack([np.full((len(quads), 1), 4), quads]).ravel())
            surf.point_data[WALL_P] = node_p
            out.append(surf)
    return out


def _add_jet_surface(plotter, run_dir: Path, angle_deg: float, opts=None) -> None:
    """A free jet's boundary (jet.csv) revolved as a translucent surface."""
    import pyvista as pv

    src = run_dir / "jet.csv"
    if not src.exists():
        return
    segments = max(8, int(round(angle_deg / 360 * SEGMENTS)))
    pts, quads, _, _ = revolve(read_csv(src), segments=segments, angle_deg=angle_deg)
    surf = pv.PolyData(pts, np.hstack([np.full((len(quads), 1), 4), quads]).ravel())
    if opts is not None and opts.x_range is not None:
        surf = surf.clip_box((opts.x_range[0], opts.x_range[1], -1e9, 1e9, -1e9, 1e9), invert=False)
        if not surf.n_points:
            return
    plotter.add_mesh(surf, color="#5b9bd5", opacity=0.25, show_scalar_bar=False)


def _frame(plotter, grid, angle_deg: float, title: str, labels: bool = False) -> tuple[float, ...]:
    """The axis line (labelled inlet / outlet / axis when ``labels``), the title, a white background
    and the camera looking into the open wedge (its bisector) from slightly upstream; returns the
    revolved bounds."""
    import pyvista as pv

    gb = grid.bounds
    b = revolved_bounds(gb[0], gb[1], gb[3], angle_deg)
    x0, x1 = b[0], b[1]
    rmax = max(abs(v) for v in b[2:])
    plotter.add_mesh(pv.Line((x0, 0, 0), (x1, 0, 0)), color="black", line_width=2)
    if labels:
        plotter.add_point_labels(np.array([[x0, 0, 0], [x1, 0, 0], [0.5 * (x0 + x1), 0, 0]]), ["inlet", "outlet", "axis"],
                                 font_size=14, point_size=8, point_color="black", text_color="black", shape_opacity=0.4)
    plotter.set_background("white")
    tm = np.radians(angle_deg + 0.5 * (360.0 - angle_deg)) if angle_deg < 360 else np.radians(-45.0)
    dist = 2.5 * rmax + 1.25 * (x1 - x0)
    xc = 0.5 * (x0 + x1)
    plotter.camera_position = [(xc - 0.45 * (x1 - x0), dist * np.cos(tm), dist * np.sin(tm)), (xc, 0, 0),
                               (0, np.sin(tm), -np.cos(tm))]
    plotter.camera.Azimuth(-28.0)
    plotter.camera.Elevation(18.0)
    plotter.camera.OrthogonalizeViewUp()
    plotter.reset_camera()
    plotter.camera.Zoom(1.2)
    return b


def build_cutaway(plotter, run_dir: str | Path, field: str = "pressure", angle_deg: float = 270.0,
                  opts: ViewOptions = ViewOptions()) -> SceneInfo:
    """Add the 3D cut-away of a run to ``plotter``: cut planes coloured by ``field``; the wall in the
    same colour scale when the field is the pressure, else translucent grey (one colour bar)."""
    if field not in FIELDS:
        raise ValueError(f"field must be one of {', '.join(FIELDS)}, got {field!r}")
    if not 0 < angle_deg <= 360:
        raise ValueError(f"angle must be in (0, 360] degrees, got {angle_deg}")
    run_dir = Path(run_dir)
    grid = _clip_x(_meridional_grid(run_dir), opts)
    name, label = _field(grid, field, opts)
    values = grid.cell_data[name]
    surfaces = _wall_surfaces(run_dir, angle_deg)
    if opts.x_range is not None:
        surfaces = [sf.clip_box((opts.x_range[0], opts.x_range[1], -1e9, 1e9, -1e9, 1e9), invert=False) for sf in surfaces]
        surfaces = [sf for sf in surfaces if sf.n_points]
    lo, hi = float(values.min()), float(values.max())
    if field == "pressure":  # the wall values (face reconstruction) reach past the cell values at a suction peak
        for sf in surfaces:
            w = sf.point_data[WALL_P] / PRESSURE_UNITS[opts.unit]
            lo, hi = min(lo, float(w.min())), max(hi, float(w.max()))
    frange = opts.colour_range or (lo, hi)
    bar = bar_args(label)
    cmap = _cmap(field, *frange)
    planes = [grid] if angle_deg >= 360 else [grid, _rotated(grid, np.radians(angle_deg))]
    for k, g in enumerate(planes):
        if field == "shear":
            break
        plotter.add_mesh(g, scalars=name, cmap=cmap, clim=frange, show_scalar_bar=(k == 0), scalar_bar_args=bar, ambient=0.3,
                         diffuse=0.75)
    summary = read_summary(run_dir)
    if field != "shear":
        round_ticks(plotter, label, *frange)
        titles(plotter, summary.get("title") or run_dir.name, _quantity(label, angle_deg),
               "flow in +x" + ("; zero gauge is white" if field in ("pressure", "cp") and diverges(*frange) else ""))

    if field == "shear":
        return _shear_cutaway(plotter, run_dir, grid, angle_deg, opts, surfaces, planes, bar)
    wall_ranges = [(float(w.point_data[WALL_P].min()), float(w.point_data[WALL_P].max())) for w in surfaces]
    wr = (min(a for a, _ in wall_ranges), max(b for _, b in wall_ranges)) if wall_ranges else frange
    for surf in surfaces:
        if field == "pressure":  # one colour scale for planes and wall
            surf.point_data[name] = surf.point_data[WALL_P] / PRESSURE_UNITS[opts.unit]
            plotter.add_mesh(surf, scalars=name, cmap=cmap, clim=frange, show_scalar_bar=False, opacity=0.55)
        else:
            plotter.add_mesh(surf, color="#b0b8c0", opacity=0.35, show_scalar_bar=False)
    _add_jet_surface(plotter, run_dir, angle_deg, opts)
    _label_body(plotter, run_dir, opts)
    b = _frame(plotter, grid, angle_deg, "flow in +x", labels=True)
    return SceneInfo(b, field, frange, (float(wr[0]), float(wr[1])))


def _quantity(label: str, angle_deg: float) -> str:
    what = label[0].upper() + label[1:]
    return f"{what}: cut planes and wall, revolved {angle_deg:.0f}° about the axis" if angle_deg < 360 else what


def _label_body(plotter, run_dir: Path, opts: ViewOptions) -> None:
    """Name the centre body (the spear's needle, a plug) at the middle of its outline on the first cut plane."""
    src = run_dir / "centerbody.csv"
    if not src.exists():
        return
    t = read_csv(src)
    keep = np.ones(len(t["x_m"]), bool) if opts.x_range is None else (t["x_m"] >= opts.x_range[0]) & (t["x_m"] <= opts.x_range[1])
    if not keep.any():
        return
    i = np.flatnonzero(keep)[int(keep.sum()) // 2]
    plotter.add_point_labels(np.array([[t["x_m"][i], t["r_m"][i], 0.0]]), [body_name(run_dir)], font_size=14, bold=True,
                             point_size=7, point_color=BODY_INK, text_color=BODY_INK, shape_color="white",
                             shape_opacity=0.75, always_visible=True, name="centre-body")


WALL_TAU = "wall shear [Pa]"


def _shear_cutaway(plotter, run_dir: Path, grid, angle_deg, opts, surfaces, planes, bar) -> SceneInfo:
    """The cut-away with the wall coloured by the wall shear of the wall layer (grey cut planes)."""
    import pyvista as pv

    tau_surfaces = []
    for part in ("wall", "centerbody"):
        src = run_dir / f"{part}.csv"
        if not src.exists():
            continue
        cols = read_csv(src)
        if "tau_w_Pa" not in cols:
            raise ValueError("this run has no wall layer (viscous.model = \"none\"): no wall shear to show")
        tau = np.where(np.isfinite(cols["tau_w_Pa"]), cols["tau_w_Pa"], 0.0)  # separated: no shear
        segments = max(8, int(round(angle_deg / 360 * SEGMENTS)))
        pts, quads, node_t, _ = revolve({**cols, "p_gauge_Pa": tau}, segments=segments, angle_deg=angle_deg)
        surf = pv.PolyData(pts, np.hstack([np.full((len(quads), 1), 4), quads]).ravel())
        surf.point_data[WALL_TAU] = node_t
        if opts.x_range is not None:
            surf = surf.clip_box((opts.x_range[0], opts.x_range[1], -1e9, 1e9, -1e9, 1e9), invert=False)
        if surf.n_points:
            tau_surfaces.append(surf)
    if not tau_surfaces:
        raise ValueError("no wall of this run lies in the view")
    lo = min(float(sf.point_data[WALL_TAU].min()) for sf in tau_surfaces)
    hi = max(float(sf.point_data[WALL_TAU].max()) for sf in tau_surfaces)
    frange = opts.colour_range or (lo, hi)
    for g in planes:
        plotter.add_mesh(g, color="#c8ced4", opacity=0.5, show_scalar_bar=False)
    for k, sf in enumerate(tau_surfaces):
        plotter.add_mesh(sf, scalars=WALL_TAU, cmap=colour_map("shear", *frange), clim=frange, show_scalar_bar=(k == 0),
                         scalar_bar_args={**bar, "title": WALL_TAU})
    round_ticks(plotter, WALL_TAU, *frange)
    titles(plotter, read_summary(run_dir).get("title") or run_dir.name, "Wall shear [Pa] of the wall layer on the wall "
           "(separated: 0); grey: the cut planes", "flow in +x")
    _label_body(plotter, run_dir, opts)
    b = _frame(plotter, grid, angle_deg, "flow in +x; wall coloured by the wall shear (separated: 0)")
    return SceneInfo(b, "shear", frange, frange)


def build_meridional(plotter, run_dir: str | Path, field: str = "speed", lines: int = 12,
                     opts: ViewOptions = ViewOptions()) -> SceneInfo:
    """Flat meridional view coloured by ``field`` with streamlines (stream-function contours) and axes in mm."""
    run_dir = Path(run_dir)
    full = _meridional_grid(run_dir)
    full.points = full.points * 1e3  # drawn in millimetres
    psi_all = full.point_data["stream_function_m3_s"]
    grid = _clip_x(full, ViewOptions(opts.unit, None if opts.x_range is None else (opts.x_range[0] * 1e3, opts.x_range[1] * 1e3),
                                     opts.colour_range))
    name, label = _field(grid, field, opts)
    values = grid.cell_data[name]
    frange = opts.colour_range or (float(values.min()), float(values.max()))
    plotter.add_mesh(grid, scalars=name, cmap=_cmap(field, *frange), clim=frange, scalar_bar_args=bar_args(label))
    round_ticks(plotter, label, *frange)
    levels = np.linspace(psi_all.min(), psi_all.max(), lines + 2)[1:-1]  # the same flow fractions in a zoom
    iso = grid.cell_data_to_point_data().contour(isosurfaces=levels, scalars="stream_function_m3_s")
    if iso.n_points:
        iso.points[:, 2] += 1e-4 * (grid.bounds[1] - grid.bounds[0])  # just above the plane: no z-fighting hatching
        plotter.add_mesh(iso, color="white", line_width=1.5)
    plotter.set_background("white")
    plotter.show_bounds(xtitle="x [mm]", ytitle="r [mm]", ztitle="", color="black", location="outer", ticks="outside",
                        font_size=16, show_zaxis=False, use_2d=True, fmt="%.4g")
    titles(plotter, read_summary(run_dir).get("title") or run_dir.name, f"{label[0].upper() + label[1:]} in the meridional "
           "plane; white: streamlines", "flow in +x")
    plotter.view_xy()
    b = tuple(float(v) * 1e-3 for v in grid.bounds)  # back in metres
    return SceneInfo(b, field, frange, frange)


def render(run_dir: str | Path, field: str = "pressure", angle_deg: float = 270.0, png: str | Path | None = None,
           meridional: bool = False, window_size=(1400, 900), unit: str = "bar",
           opts: ViewOptions | None = None) -> tuple[Path | None, SceneInfo]:
    """Open a window (display and no ``png``) or render off-screen to ``png`` (required without a display)."""
    opts = opts or ViewOptions(unit=unit)
    if png is None and not has_display():
        raise ValueError("no display to open a window on: give --png FILE to render off-screen")
    if not has_display():
        # headless: render through EGL directly instead of trying (and warning about) an X server
        os.environ.setdefault("VTK_DEFAULT_OPENGL_WINDOW", "vtkEGLRenderWindow")
    import pyvista as pv

    off = png is not None
    plotter = pv.Plotter(off_screen=off, window_size=list(window_size))
    if (read_summary(run_dir).get("geometry") or {}).get("per_unit_depth"):
        meridional = True  # a planar section is not a body of revolution: show the section itself
    info = (build_meridional(plotter, run_dir, field, opts=opts) if meridional
            else build_cutaway(plotter, run_dir, field, angle_deg, opts))
    if not off:
        plotter.show(title=f"axibore: {Path(run_dir).name}")
        return None, info
    png = Path(png)
    with atomic_file(png) as tmp:
        plotter.screenshot(str(tmp))
    plotter.close()
    return png, info
