"""Seeing the result: off-screen 3D views, plots, report.html, the structural load export."""

import json
import re
import subprocess

import meshio
import numpy as np
import pytest

import pyvista as pv  # a dependency of the tool (pyproject)
pv.OFF_SCREEN = True

from axibore.cli import main  # noqa: E402
from axibore.io.files import read_csv  # noqa: E402
from conftest import _chromium_or_skip, assert_page_fits  # noqa: E402


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("view") / "spear"
    from pathlib import Path

    # the spear demo as an exit-plane nozzle with a rounded 5 mm tip (its suction peak at the orifice
    # tests the colour range); the free-jet demo has its own view test below
    text = (Path(__file__).parents[1] / "cases" / "spear_nozzle.toml").read_text()
    text = (text.replace('tip_length = "0 mm"', 'tip_length = "5 mm"').replace('lip_radius = "0 mm"', 'lip_radius = "5 mm"')
            .replace('kind = "free-jet"', 'kind = "exit-plane"'))
    case = out.parent / "spear_exit_plane.toml"
    case.write_text(text)
    assert main(["run", str(case), "--out", str(out), "--level", "0"]) == 0
    return out


def _png_pixels(path):
    import matplotlib.image as mpimg

    return mpimg.imread(str(path))


def test_offscreen_png_not_blank(run_dir, tmp_path):
    png = tmp_path / "v.png"
    assert main(["view", str(run_dir), "--png", str(png), "--field", "speed"]) == 0
    img = _png_pixels(png)
    assert img.shape[0] > 100 and img.shape[1] > 100
    assert img[..., :3].std() > 0.05  # not a blank (single-colour) image
    assert (img[..., :3] < 0.9).mean() > 0.05  # something drawn on the white background


def test_scene_bounds_and_scalar_range(run_dir):
    from axibore.view.scene import build_cutaway, revolved_bounds

    p = pv.Plotter(off_screen=True)
    info = build_cutaway(p, run_dir, "pressure", 270.0)
    m = meshio.read(run_dir / "fields.vtu")
    R, x0, x1 = m.points[:, 1].max(), m.points[:, 0].min(), m.points[:, 0].max()
    expected = revolved_bounds(x0, x1, R, 270.0)
    # revolved from 0 to 270 degrees: y = r cos(theta) spans [-R, R], z = r sin(theta) spans [-R, R]
    assert np.allclose(expected, (x0, x1, -R, R, -R, R), rtol=0, atol=1e-12)
    assert np.allclose(p.bounds, expected, rtol=0, atol=1e-9 * R)
    field = np.concatenate(m.cell_data["p_gauge_Pa"]) / 1e5  # shown in bar (the default unit)
    wall = np.concatenate([read_csv(run_dir / f"{n}.csv")["p_gauge_Pa"] for n in ("wall", "centerbody")]) / 1e5
    # the colour range holds the cells and the wall (whose suction peak reaches past the cells)
    lo, hi = info.field_range
    assert lo <= field.min() and hi >= field.max() and lo <= wall.min() * 0.97 and lo >= wall.min() * 1.001
    ranges = []
    for a in p.renderer.actors.values():
        mapper = getattr(a, "mapper", None)
        data = getattr(mapper, "dataset", None)
        if data is not None and "gauge pressure [bar]" in data.cell_data:
            ranges.append(mapper.scalar_range)
    assert ranges and all(np.allclose(r, (lo, hi)) for r in ranges)
    p.close()


def test_view_options_zoom_range_units_and_refusals(run_dir, tmp_path, capsys):
    from axibore.view.scene import ViewOptions, build_cutaway

    p = pv.Plotter(off_screen=True)
    info = build_cutaway(p, run_dir, "pressure", 270.0, ViewOptions(unit="kPa", x_range=(0.18, 0.21), colour_range=(-100.0, 500.0)))
    assert info.field_range == (-100.0, 500.0)
    assert 0.17 < p.bounds[0] and p.bounds[1] < 0.22  # zoomed on the orifice
    p.close()
    png = tmp_path / "zoom.png"
    assert main(["view", str(run_dir), "--png", str(png), "--x-range", "180 mm,210 mm", "--units", "psi"]) == 0 and png.exists()
    before = set(run_dir.iterdir())
    for argv, msg in ((["--png", str(tmp_path / "v.jpg")], "ending in .png"), (["--png", str(tmp_path)], "ending in .png"),
                      (["--png", str(tmp_path / "no" / "v.png")], "does not exist"), (["--x-range", "2,1", "--png", str(png), "--force"], "lower value first"),
                      (["--field", "mach", "--png", str(png), "--force"], "liquid"), ([], "no display"),
                      (["--png", str(png)], "exists")):  # a picture already there is not replaced without --force
        assert main(["view", str(run_dir), *argv]) == 2, argv
        assert msg in capsys.readouterr().err
    assert set(run_dir.iterdir()) == before  # a view never writes into the run directory


def test_meridional_view_has_streamlines(run_dir, tmp_path):
    assert main(["view", str(run_dir), "--meridional", "--png", str(tmp_path / "m.png")]) == 0
    grid = pv.read(run_dir / "fields.vtu")
    psi = grid.point_data["stream_function_m3_s"]
    s = json.loads((run_dir / "summary.json").read_text())
    # stream function: 0 on the needle, the whole flow on the wall (discrete conservation)
    assert psi.min() == pytest.approx(0.0, abs=1e-9 * s["flow"]["volume_flow_m3_s"])
    assert psi.max() == pytest.approx(s["flow"]["volume_flow_m3_s"], rel=1e-9)


def test_wall_load_vtu_integrates_to_wall_force(run_dir):
    s = json.loads((run_dir / "summary.json").read_text())
    surf = pv.read(run_dir / "wall_load.vtu").extract_surface(algorithm="dataset_surface")
    surf = surf.compute_normals(cell_normals=True, point_normals=False, auto_orient_normals=False,
                                consistent_normals=False, split_vertices=False).compute_cell_sizes()
    p_cell = surf.point_data_to_cell_data(pass_point_data=False).cell_data["p_gauge_Pa"]
    F = np.sum(p_cell * surf.cell_data["Normals"][:, 0] * surf.cell_data["Area"])
    assert F == pytest.approx(s["forces"]["wall_x_N"], rel=5e-3)


def test_wall_load_csv(run_dir):
    s = json.loads((run_dir / "summary.json").read_text())
    w = read_csv(run_dir / "wall_load.csv")
    assert {"x_m", "r_m", "p_gauge_Pa", "n_x", "n_r"} <= set(w)
    assert np.allclose(np.hypot(w["n_x"], w["n_r"]), 1.0)
    assert np.sum(w["p_gauge_Pa"] * w["n_x"] * w["ring_area_m2"]) == pytest.approx(s["forces"]["wall_x_N"], rel=1e-9)
    c = read_csv(run_dir / "centerbody_load.csv")
    assert np.sum(c["p_gauge_Pa"] * c["n_x"] * c["ring_area_m2"]) == pytest.approx(s["forces"]["centerbody_x_N"], rel=1e-9)


def test_report_numbers_equal_summary(run_dir):
    s = json.loads((run_dir / "summary.json").read_text())
    text = (run_dir / "report.html").read_text()
    found = re.findall(r'data-key="([\w.]+)" data-value="([^"]*)"', text)
    keys = {k for k, _ in found}
    assert {"forces.wall_x_N", "forces.total_x_N", "forces.reconciliation_rel", "pressure.min_wall_gauge_Pa",
            "pressure.cavitation_index", "flow.volume_flow_m3_s", "forces.onedim_x_N", "hand_1d.volume_flow_m3_s",
            "hand_1d.force_x_N"} <= keys
    for key, value in found:
        node = s
        for part in key.split("."):  # joints.0.load_N indexes the list of joints
            node = node[int(part)] if isinstance(node, list) else node[part]
        if value:
            assert float(value) == node, key
    assert "hydrodynamic load only" in text.lower() and "licensed engineering practice" in text
    assert "<img" in text and "src='data:image/png;base64," in text and "http" not in text.split("<body>")[1]
    for w in s["warnings"]:
        assert w.split(":")[0][:40] in text


def test_report_rebuilds(run_dir):
    (run_dir / "report.html").unlink()
    assert main(["report", str(run_dir), "--no-3d"]) == 0
    assert (run_dir / "report.html").stat().st_size > 20_000


def test_bad_run_dir(tmp_path, capsys):
    assert main(["view", str(tmp_path)]) == 2
    assert "not a run directory" in capsys.readouterr().err


def test_report_page_one_on_a4(tmp_path, page_pdf, page_layout):
    """Printed on A4, page 1 holds the bolt load, the headline numbers 1D | 2D, the sketch, the margins, the
    numerical uncertainty, the cautions and the sign-off; every printed page carries its number."""
    from pathlib import Path

    text = (Path(__file__).parents[1] / "cases" / "deck_wash_nozzle.toml").read_text().replace("size = 0.05", "size = 0.2")
    case = tmp_path / "deck.toml"
    case.write_text(text)
    out = tmp_path / "deck"
    assert main(["run", str(case), "--out", str(out), "--level", "0"]) == 0
    report = out / "report.html"
    pages = page_pdf(report)
    assert len(pages) >= 3
    first = pages[0]
    for words in ("Bolt load", "Headline numbers", "1D, by hand", "2D, axibore", "Margins", "cavitation",
                  "Numerical uncertainty", "axibore gridstudy", "Hydrodynamic load only", "checked by", "approved by",
                  "case hash"):
        assert words in first, words
    assert first.index("Bolt load") < first.index("Headline numbers")  # the bolt load near the top
    for i, page in enumerate(pages, 1):
        assert f"page {i} of {len(pages)}" in page
    assert "sketch of the bore" in report.read_text() and (out / "plot_sketch.png").exists()
    # the table labels fit: no header or first-column label of the headline and bolt tables over two lines
    m = assert_page_fits(page_layout, report)
    for t in m["tables"][:2]:
        assert all(n <= 2 for _, n in t["headers"] + t["labels"]), t


def test_hand_bolt_load_of_a_joint_at_the_inlet():
    # derived: the part beyond a joint at the inlet is the whole bore, so its 1D load is the 1D force on the
    # part plus the pressure on the gasket annulus, F + p1 pi (G^2 - D1^2) / 4; numbers invented
    import math

    from axibore.view.reportparts import hand_joint_load

    rho, d1, d2, p1 = 1000.0, 0.1, 0.05, 3e5
    a1, a2 = math.pi * d1 ** 2 / 4, math.pi * d2 ** 2 / 4
    q = a2 * math.sqrt(2 * p1 / (rho * (1 - (a2 / a1) ** 2)))
    v1, v2 = q / a1, q / a2
    force = p1 * a1 + rho * q * (v1 - v2)
    s = {"forces": {"centerbody_x_N": 0.0}, "geometry": {"per_unit_depth": False},
         "hand_1d": {"volume_flow_m3_s": q, "mass_flow_kg_s": rho * q, "inlet_velocity_m_s": v1, "exit_velocity_m_s": v2,
                     "inlet_gauge_Pa": p1, "exit_gauge_Pa": 0.0}}
    joint = {"bore_diameter_m": d1, "gasket_diameter_m": 0.14}
    assert hand_joint_load(s, joint) == pytest.approx(force + p1 * math.pi * (0.14 ** 2 - d1 ** 2) / 4, rel=1e-12)
    # a joint at the exit: the part beyond it is a zero-length stub, no wall force; p2 = 0 gauge leaves no load
    assert hand_joint_load(s, {"bore_diameter_m": d2, "gasket_diameter_m": 0.08}) == pytest.approx(0.0, abs=1e-6)


def test_report_renders_in_headless_chromium(run_dir, tmp_path):
    exe = _chromium_or_skip()  # a machine without Chromium skips (README); CI fails without it
    shot = tmp_path / "report.png"
    proc = subprocess.run(
        [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         f"--user-data-dir={tmp_path / 'profile'}", "--enable-logging=stderr", "--v=0", "--hide-scrollbars",
         "--window-size=900,1800", f"--screenshot={shot}", (run_dir / "report.html").as_uri()],
        capture_output=True, text=True, timeout=120)
    assert shot.exists(), proc.stderr[-2000:]
    img = _png_pixels(shot)
    assert img[..., :3].std() > 0.05
    console = [ln for ln in proc.stderr.splitlines() if "CONSOLE" in ln or "Uncaught" in ln]
    assert not console, console


def test_report_fits_screen_and_a4(run_dir, page_layout):
    # no horizontal overflow at 900 px nor at the printed A4 width; no table wider than the page; no raw keys
    assert_page_fits(page_layout, run_dir / "report.html")


def test_plots_of_dense_meshes_are_sampled(run_dir, tmp_path, monkeypatch):
    from axibore.view import plots

    monkeypatch.setattr(plots, "DRAW_CELLS_MAX", 1000)  # force the pixel-sampled path
    for fn in (plots.speed_plot, plots.mesh_plot, plots.wall_pressure_plot, plots.axial_force_plot):
        path = fn(run_dir, tmp_path / f"{fn.__name__}.png")
        img = _png_pixels(path)
        assert img[..., :3].std() > 0.05, fn.__name__


def test_revolved_bounds_exact():
    from axibore.view.scene import revolved_bounds

    # y = r cos(theta), z = r sin(theta) for 0 <= theta <= angle, 0 <= r <= 2 (derived)
    assert revolved_bounds(0, 1, 2, 45) == pytest.approx((0, 1, 0, 2, 0, 2 * np.sin(np.pi / 4)))
    assert revolved_bounds(0, 1, 2, 120) == pytest.approx((0, 1, 2 * np.cos(2 * np.pi / 3), 2, 0, 2))
    assert revolved_bounds(0, 1, 2, 200) == pytest.approx((0, 1, -2, 2, 2 * np.sin(np.radians(200)), 2))
    assert revolved_bounds(0, 1, 2, 360) == pytest.approx((0, 1, -2, 2, -2, 2))


def test_wall_load_faceting_factor(run_dir):
    # the exported faces carry the exact face pressure; the faceted ring of N segments projects
    # N sin(2 pi / N) / (2 pi) of the true area on the x-normal plane (derived)
    from axibore.io.wall_load import SEGMENTS

    s = json.loads((run_dir / "summary.json").read_text())
    surf = pv.read(run_dir / "wall_load.vtu").extract_surface(algorithm="dataset_surface")
    surf = surf.compute_normals(cell_normals=True, point_normals=False, auto_orient_normals=False,
                                consistent_normals=False, split_vertices=False).compute_cell_sizes()
    F = np.sum(surf.cell_data["p_gauge_Pa"] * surf.cell_data["Normals"][:, 0] * surf.cell_data["Area"])
    factor = SEGMENTS * np.sin(2 * np.pi / SEGMENTS) / (2 * np.pi)
    # (VTK computes the normals in single precision: agreement to 1e-6, against 1 - factor = 3.2e-4)
    assert F / s["forces"]["wall_x_N"] == pytest.approx(factor, rel=1e-6)


def test_load_files_read_with_ordinary_readers(run_dir):
    # header first: numpy's genfromtxt with names=True reads every CSV of a run as it is
    for name in ("wall.csv", "wall_load.csv", "centerbody_load.csv", "solver_history.csv"):
        data = np.atleast_1d(np.genfromtxt(run_dir / name, delimiter=",", names=True))
        # the wall-layer columns are NaN (written "nan") where the layer is separated (layer_state 2), and only there
        attached = data["layer_state"] != 2 if "layer_state" in data.dtype.names else np.ones(data.size, bool)
        assert data.size >= 1 and all(np.isfinite(data[n][attached]).all() for n in data.dtype.names), name
        side = json.loads((run_dir / (name + ".json")).read_text())
        assert side["columns"] == list(data.dtype.names) and side["description"]
    # the revolved load surface, read by meshio as an FE pre-processor would: unit normals at its points,
    # which lie on the revolved wall (their distance from the axis is the wall radius at their x), each
    # face end once (consecutive faces share their ends)
    import meshio

    from axibore.io.wall_load import SEGMENTS

    surf = meshio.read(run_dir / "wall_load.vtu")
    pts, n = surf.points, surf.point_data["normal"]
    assert np.allclose(np.linalg.norm(n, axis=1), 1.0)
    w = read_csv(run_dir / "wall.csv")
    r = np.hypot(pts[:, 1], pts[:, 2])
    assert np.allclose(r, np.interp(pts[:, 0], w["x_m"], w["r_m"]), atol=2 * w["face_length_m"].max())
    assert len(pts) == (w["x_m"].size + 1) * SEGMENTS
    # the needle tip touches the axis: its revolved points there are merged into one
    m = pv.read(run_dir / "centerbody_load.vtu")
    key = np.round(np.asarray(m.points) / 1e-9)
    assert len(np.unique(key, axis=0)) == m.n_points
    assert "normal" in m.point_data


def test_free_jet_views(tmp_path):
    """A free-jet run: jet.csv, the jet plot, and the translucent jet surface in the 3D view."""
    from axibore.view.scene import build_cutaway

    out = tmp_path / "borda"
    case = tmp_path / "borda.toml"
    case.write_text('[fluid]\nkind = "water"\ntemperature = "15 degC"\n[bore]\ntemplate = "segments"\n'
                    'start = ["-30 mm", "15 mm"]\nsegment = [ { to = ["0 mm", "15 mm"] }, { to = ["0 mm", "2 mm"] } ]\n'
                    '[inlet]\npressure = "1 bar"\n[outlet]\nkind = "free-jet"\n[mesh]\nsize = 0.2\n')
    assert main(["run", str(case), "--out", str(out)]) == 0
    assert (out / "jet.csv").exists() and (out / "plot_jet.png").exists()
    jet = read_csv(out / "jet.csv")
    assert np.all(np.diff(jet["s_m"]) > 0)  # ordered from the lip
    p = pv.Plotter(off_screen=True)
    n_before = 0
    build_cutaway(p, out, "pressure", 270.0)
    translucent = [a for a in p.renderer.actors.values() if getattr(a, "prop", None) is not None
                   and abs(a.prop.opacity - 0.25) < 1e-9]
    assert len(translucent) == 1 + n_before


# ---- pictures of our own (issue 22 item 6) ------------------------------------------------------------------
def _is_round_series(values):
    """Equally spaced by 1, 2, 2.5 or 5 times a power of ten, each a whole multiple of the step."""
    v = np.asarray(values, float)
    if len(v) < 3:
        return False
    steps = np.diff(v)
    step = steps[0]
    if not np.allclose(steps, step, rtol=1e-9):
        return False
    mant = step / 10.0 ** np.floor(np.log10(step))
    return (any(abs(mant - m) < 1e-9 for m in (1, 2, 2.5, 5))
            and np.allclose(v / step, np.round(v / step), atol=1e-6))


def _least_wall_point(run_dir):
    best = None
    for name in ("wall", "centerbody"):
        t = read_csv(run_dir / f"{name}.csv")
        i = int(np.argmin(t["p_gauge_Pa"]))
        if best is None or t["p_gauge_Pa"][i] < best[2]:
            best = (t["x_m"][i], t["r_m"][i], t["p_gauge_Pa"][i])
    return best


def test_3d_colour_bar_ticks_round_title_and_zero_white(run_dir):
    from axibore.view.scene import build_cutaway

    s = json.loads((run_dir / "summary.json").read_text())
    p = pv.Plotter(off_screen=True)
    info = build_cutaway(p, run_dir, "pressure", 270.0)
    bar = p.scalar_bars["gauge pressure [bar]"]
    labels = bar.GetCustomLabels()
    values = [labels.GetValue(i) for i in range(labels.GetNumberOfTuples())]
    assert bar.GetUseCustomLabels() and _is_round_series(values), values
    lo, hi = info.field_range
    assert all(lo <= v <= hi for v in values) and (values[-1] - values[0]) >= 0.5 * (hi - lo)
    shown = [bar.GetLabelFormat() % v for v in values]  # the text drawn: the round numbers themselves
    assert [float(t) for t in shown] == pytest.approx(values, abs=1e-12)
    texts = [a.GetInput() for a in p.renderer.actors.values() if hasattr(a, "GetInput") and isinstance(a.GetInput(), str)]
    assert s["title"] in texts and any("gauge pressure [bar]" in t.lower() for t in texts)
    # this spear has suction at its rounded lip (below 0 gauge): the diverging map, 0 gauge paper white
    assert lo < 0 < hi
    mapper = next(a.mapper for a in p.renderer.actors.values()
                  if getattr(getattr(a, "mapper", None), "dataset", None) is not None
                  and "gauge pressure [bar]" in a.mapper.dataset.cell_data)
    rgb = np.array(mapper.lookup_table.map_value(0.0)[:3], float)
    rgb = rgb / 255 if rgb.max() > 1 else rgb
    assert rgb.min() > 0.9, rgb
    # the needle is named in the view
    assert any(k.startswith("centre-body") for k in p.actors), list(p.actors)
    p.close()


def _lightness(rgb):
    # sRGB -> CIE L* (IEC 61966-2-1 transfer curve, Rec. 709 luminance weights; derived)
    c = np.asarray(rgb, float)
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    y = lin @ np.array([0.2126, 0.7152, 0.0722])
    return np.where(y > (6 / 29) ** 3, 116 * np.cbrt(y) - 16, y * (29 / 3) ** 3)


def test_colour_maps_are_perceptually_ordered():
    from axibore.view.style import colours

    L = _lightness(colours("depth", 64))
    assert np.all(np.diff(L) > 0) and L[0] < 25 and L[-1] > 90  # a ramp in lightness, also in grey print
    T = _lightness(colours("tide", 64))
    assert np.all(np.diff(T[:32]) > 0) and np.all(np.diff(T[32:]) < 0)  # light at zero, darker both ways
    assert np.allclose(T[:32], T[32:][::-1], atol=3.0)  # equal distance from zero, equal lightness


def test_speed_plot_round_ticks_title_and_zoom_on_least_pressure(run_dir):
    from axibore.view.plots import speed_figure

    s = json.loads((run_dir / "summary.json").read_text())
    fig = speed_figure(run_dir)
    assert fig.get_suptitle() == s["title"]
    bar = next(a for a in fig.axes if a.get_xlabel() == "speed [m/s]")
    ticks = bar.get_xticks()
    assert _is_round_series(ticks)
    assert [t.get_text().replace("\u2212", "-") for t in bar.get_xticklabels()] == [f"{v:g}" for v in ticks]
    speed = np.concatenate(meshio.read(run_dir / "fields.vtu").cell_data["speed_m_s"])
    assert ticks.min() >= speed.min() and ticks.max() <= speed.max()
    x, r, _ = _least_wall_point(run_dir)
    zoom = fig.axes[1]
    (x0, x1), (r0, r1) = zoom.get_xlim(), zoom.get_ylim()
    assert x0 < x * 1e3 < x1 and r0 < r * 1e3 < r1
    whole = fig.axes[0]
    assert (x1 - x0) < 0.5 * np.diff(whole.get_xlim())[0]  # a zoom, not the whole bore
    assert "needle" in [t.get_text() for t in whole.texts]


def test_cp_plot_is_cp_of_wall_csv(run_dir):
    from axibore.view.wallplots import cp_figure

    s = json.loads((run_dir / "summary.json").read_text())
    w = read_csv(run_dir / "wall.csv")
    q = 0.5 * s["flow"]["density_kg_m3"] * s["flow"]["outlet_mean_velocity_m_s"] ** 2  # the exit dynamic pressure
    cp = (w["p_gauge_Pa"] - s["pressure"]["outlet_gauge_Pa"]) / q
    d, x_in = 0.150, 0.0  # the spear case: inlet_diameter 150 mm, the bore starts at x = 0
    fig = cp_figure(run_dir)
    ax = fig.axes[0]
    line = next(ln for ln in ax.get_lines() if ln.get_label() == "wall, 2D")
    assert np.allclose(line.get_ydata(), cp, rtol=1e-6, atol=1e-9)
    assert np.allclose(line.get_xdata(), (w["x_m"] - x_in) / d, rtol=1e-9, atol=1e-9)
    assert "D = 150 mm" in ax.get_xlabel() and "outlet pressure" in ax.get_title(loc="left")
    assert cp[0] == pytest.approx(1.0, abs=0.05)  # the inlet stagnates near the exit's dynamic pressure (Bernoulli)


def test_unrolled_wall_pressure_spans_the_wall(run_dir):
    from axibore.view.wallplots import unrolled_figure

    fig = unrolled_figure(run_dir, unit="kPa")
    wall_ax, body_ax = fig.axes[:2]
    for ax, name in ((wall_ax, "wall"), (body_ax, "centerbody")):
        t = read_csv(run_dir / f"{name}.csv")
        pts = np.column_stack([t["x_m"], t["r_m"]])
        chord = np.sum(np.linalg.norm(np.diff(pts, axis=0), axis=1)) + 0.5 * (t["face_length_m"][0] + t["face_length_m"][-1])
        lo, hi = ax.get_xlim()
        assert lo == 0 and hi == pytest.approx(chord * 1e3, rel=2e-3)
        curve = max(ax.get_lines(), key=lambda ln: len(ln.get_xdata()))
        assert np.allclose(curve.get_ydata(), t["p_gauge_Pa"] / 1e3)
    # the wall's corner at the end of the 150 mm inlet pipe (x = 150 mm) is marked at s = 150 mm
    marks = [ln.get_xdata()[0] for ln in wall_ax.get_lines() if len(ln.get_xdata()) == 2 and ln.get_xdata()[0] == ln.get_xdata()[1]]
    assert any(abs(m - 150.0) < 1.0 for m in marks), marks
    assert body_ax.get_ylabel().startswith("needle")


def test_report_carries_the_new_plots(run_dir):
    text = (run_dir / "report.html").read_text()
    for key in ("unrolled", "cp"):
        assert (run_dir / {"unrolled": "plot_wall_unrolled.png", "cp": "plot_wall_cp.png"}[key]).exists()
    assert "unrolled along the wall" in text and "Wall pressure coefficient" in text
    assert "hydrodynamic load only" in text.lower()
