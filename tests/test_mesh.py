"""Meshes: valid template parameters always mesh; areas and volumes of revolution are exact
(theorem of Pappus) on polygonal profiles; every boundary face is in exactly one named group."""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from axibore.case import CaseError, case_from_dict
from axibore.cli import main
from axibore.mesh import FVMesh, MeshError
from axibore.mesh import mesh_profile

FLUID = {"kind": "water", "temperature": "15 degC"}
SETTINGS = settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _check_groups(mesh: FVMesh, expected: set[str]):
    assert set(mesh.boundary) == expected
    all_b = np.concatenate(list(mesh.boundary.values()))
    assert np.array_equal(np.sort(all_b), mesh.boundary_faces)  # each boundary face exactly once
    assert np.all(mesh.cell_area > 0)


@st.composite
def conical(draw):
    d_in = draw(st.floats(0.02, 0.5))
    d_ex = d_in * draw(st.floats(0.15, 0.9))
    return {"template": "conical", "inlet_diameter": d_in, "exit_diameter": d_ex,
            "half_angle": math.radians(draw(st.floats(5, 60))), "inlet_length": d_in * draw(st.floats(0.2, 2)),
            "tip_length": d_ex * draw(st.floats(0.2, 2)), "lip_radius": d_ex * draw(st.sampled_from([0.0, 0.3, 1.0]))}


@st.composite
def spear(draw):
    d_in = draw(st.floats(0.05, 0.5))
    d_o = d_in * draw(st.floats(0.3, 0.6))
    d_n = d_o * draw(st.floats(1.1, 1.5))
    return {"template": "spear", "inlet_diameter": d_in, "orifice_diameter": d_o, "half_angle": math.radians(draw(st.floats(30, 50))),
            "inlet_length": d_in, "tip_length": d_o * draw(st.floats(0.2, 1.0)), "needle_diameter": min(d_n, 0.9 * d_in),
            "needle_half_angle": math.radians(draw(st.floats(15, 28))), "stroke": d_o * draw(st.floats(0.1, 0.5))}


@st.composite
def reducer(draw):
    d_in = draw(st.floats(0.05, 1.0))
    d_out = d_in * draw(st.sampled_from([draw(st.floats(0.3, 0.9)), draw(st.floats(1.1, 2.0))]))
    return {"template": "reducer", "inlet_diameter": d_in, "outlet_diameter": d_out,
            "half_angle": math.radians(draw(st.floats(5, 45))), "inlet_length": d_in * draw(st.floats(0.3, 2)),
            "outlet_length": d_out * draw(st.floats(0.3, 2)), "knuckle_radius": min(d_in, d_out) * draw(st.sampled_from([0.0, 0.5]))}


@st.composite
def contoured(draw):
    d_in = draw(st.floats(0.02, 0.5))
    d_ex = d_in * draw(st.floats(0.2, 0.8))
    return {"template": "contoured", "inlet_diameter": d_in, "exit_diameter": d_ex,
            "contraction_length": d_in * draw(st.floats(0.5, 2.0)), "inlet_length": d_in * draw(st.floats(0.2, 1.5)),
            "tip_length": d_ex * draw(st.floats(0.2, 1.5))}


@st.composite
def polygon(draw):
    """A polygonal wall running forward in x (segments template)."""
    n = draw(st.integers(2, 6))
    xs = np.cumsum([draw(st.floats(0.01, 0.2)) for _ in range(n)])
    rs = [draw(st.floats(0.01, 0.1)) for _ in range(n + 1)]
    return {"template": "segments", "start": [0.0, rs[0]], "segment": [{"to": [float(x), r]} for x, r in zip(xs, rs[1:])]}


def _case(bore):
    return case_from_dict({"fluid": FLUID, "bore": bore, "inlet": {"pressure": "1 bar"}})


@SETTINGS
@given(bore=st.one_of(conical(), spear(), reducer(), contoured()), cells=st.sampled_from(["triangles", "quads"]))
def test_valid_templates_always_mesh(bore, cells):
    try:
        case = _case(bore)
    except CaseError as exc:  # a few random draws are not bores (a rounding too large): they say which key
        assert all(": bore." in line for line in exc.lines())
        assume(False)
    p = case.profile
    res = mesh_profile(p, size=0.3, level=0, cells=cells)
    m = res.mesh
    # the groups the geometry calls for: the axis is missing only where a centre body spans both planes
    expected = {"inlet", "outlet", "wall"} | ({"centerbody"} if bore["template"] == "spear" else set())
    if not (p.inlet_bottom > 0 and p.outlet_bottom > 0):
        expected.add("axis")
    _check_groups(m, expected)
    # the inlet and outlet planes are straight: their faces add up to the plane's height exactly
    assert m.face_length[m.boundary["inlet"]].sum() == pytest.approx(p.r_inlet - p.inlet_bottom, rel=1e-12)
    assert m.face_length[m.boundary["outlet"]].sum() == pytest.approx(p.r_outlet - p.outlet_bottom, rel=1e-12)
    # curved walls are approximated by chords: area within the chord error
    assert m.cell_area.sum() == pytest.approx(p.area, rel=2e-3)


@SETTINGS
@given(bore=polygon(), cells=st.sampled_from(["triangles", "quads"]))
def test_pappus_exact_on_polygons(bore, cells):
    p = _case(bore).profile
    m = mesh_profile(p, size=0.4, level=0, cells=cells).mesh
    _check_groups(m, {"inlet", "outlet", "wall", "axis"})
    assert m.cell_area.sum() == pytest.approx(p.area, rel=1e-9)
    assert m.cell_volume.sum() == pytest.approx(p.volume_per_radian, rel=1e-9)
    # boundary face areas: inlet and outlet planes integrate r dr exactly
    assert m.face_area[m.boundary["inlet"]].sum() == pytest.approx(p.r_inlet**2 / 2, rel=1e-12)
    assert m.face_area[m.boundary["outlet"]].sum() == pytest.approx(p.r_outlet**2 / 2, rel=1e-12)


def test_unassigned_boundary_face_is_an_error():
    nodes = np.array([[0, 0], [1, 0], [1, 1], [0, 1.0]])
    with pytest.raises(MeshError, match="exactly one named group"):
        FVMesh.from_cells(nodes, np.array([[0, 1, 2], [0, 2, 3]]), {"wall": np.array([[0, 1], [1, 2]])})


def test_hand_mesh_geometry():
    # two triangles of the unit square (one given clockwise): normals, areas, owner/neighbour
    nodes = np.array([[0, 0], [1, 0], [1, 1], [0, 1.0]])
    m = FVMesh.from_cells(nodes, np.array([[0, 1, 2], [0, 3, 2]]),
                          {"axis": [[0, 1]], "outlet": [[1, 2]], "wall": [[2, 3]], "inlet": [[3, 0]]})
    assert m.n_faces == 5 and m.interior.size == 1
    assert m.cell_area.sum() == pytest.approx(1.0)
    assert m.cell_volume.sum() == pytest.approx(0.5)  # integral of r over the unit square
    f = m.boundary["wall"][0]
    assert np.allclose(m.face_normal[f], [0, 1])  # out of the fluid
    assert m.face_area[f] == pytest.approx(1.0)  # length 1 at r = 1
    assert m.face_area[m.boundary["axis"][0]] == 0.0


def test_level_refines_by_sqrt2(nozzle_dict):
    p = case_from_dict(nozzle_dict).profile
    n0 = mesh_profile(p, 0.2, 0, "quads").mesh.n_cells
    n2 = mesh_profile(p, 0.2, 2, "quads").mesh.n_cells
    assert 3.3 < n2 / n0 < 4.7  # level 2 halves the size: about four times the cells


def test_convex_corner_is_refined():
    p = _case({"template": "reducer", "inlet_diameter": 0.2, "outlet_diameter": 0.1,
               "half_angle": math.radians(30), "inlet_length": 0.3, "outlet_length": 0.3}).profile
    m = mesh_profile(p, 0.2, 0, "triangles").mesh
    corner = np.array([[c.x, c.r] for c in p.corners() if c.convex][0])
    wf = m.boundary["wall"]
    dist = np.linalg.norm(m.face_centroid[wf] - corner, axis=1)
    h = 0.2 * 0.05
    assert m.face_length[wf][dist < 0.5 * h].max() < 0.5 * h


def test_cli_mesh_writes_files(tmp_path, capsys):
    assert main(["mesh", "--out", str(tmp_path), "--level", "0"]) == 0
    assert (tmp_path / "mesh.msh").stat().st_size > 0
    import meshio

    m = meshio.read(tmp_path / "mesh.vtu")
    assert sum(len(c.data) for c in m.cells) > 1000
    out = capsys.readouterr().out
    assert "cells" in out and "deg off the face normal" in out


def _hyperboloid_case(tmp_path, smooth=True, points=41):
    # a hyperboloid throat: r = r* sqrt(1 + (x tan 30 deg / r*)^2) over six throat radii
    rs, t = 0.02, math.tan(math.radians(30))
    x = np.linspace(-3 * rs, 3 * rs, points)
    r = rs * np.sqrt(1 + (x * t / rs) ** 2)
    (tmp_path / "w.csv").write_text("x,r\n" + "\n".join(f"{float(a)!r},{float(b)!r}" for a, b in zip(x, r)) + "\n")
    return case_from_dict({"fluid": FLUID, "bore": {"template": "points", "file": "w.csv", "smooth": smooth},
                           "inlet": {"flow_rate": "0.001 m^3/s"}}, base_dir=tmp_path)


def test_mapped_spacing_follows_the_local_channel_height(tmp_path):
    # one spline with a throat in its middle: the cells at the throat are as short as they are high
    m = mesh_profile(_hyperboloid_case(tmp_path).profile, 0.05, 0, "quads")
    assert m.method == "mapped quads"
    assert m.mesh.quality()["max_aspect_ratio"] < 1.6
    # a long cone (reducer 600 -> 200 mm): the axial spacing at the wide end is about three times
    # that at the narrow end (the channel height ratio), not the narrow end's spacing all along
    p = _case({"template": "reducer", "inlet_diameter": 0.6, "outlet_diameter": 0.2, "half_angle": math.radians(5),
               "inlet_length": 0.2, "outlet_length": 0.2, "knuckle_radius": 0.5}).profile
    mesh = mesh_profile(p, 0.2, 0, "quads").mesh
    wall = mesh.boundary["wall"]
    xf = mesh.face_centroid[wall]
    cone = [s for s in p.wall if s.key == "bore.half_angle"][0]
    x0, x1 = cone.start[0], cone.end[0]
    wide = mesh.face_length[wall][(xf[:, 0] > x0) & (xf[:, 0] < x0 + 0.1 * (x1 - x0))].mean()
    narrow = mesh.face_length[wall][(xf[:, 0] < x1) & (xf[:, 0] > x1 - 0.1 * (x1 - x0))].mean()
    assert 3.0 / 1.25**2 < wide / narrow < 3.0 * 1.25
    assert mesh.quality()["max_aspect_ratio"] < 1.8


def test_polygon_of_many_gentle_vertices_warns(tmp_path):
    from axibore.post.checks import polygon_warnings

    assert polygon_warnings(_hyperboloid_case(tmp_path, smooth=True).profile) == []
    msg = polygon_warnings(_hyperboloid_case(tmp_path, smooth=False).profile)
    assert len(msg) == 1 and "bore.smooth = true" in msg[0]
    # a designed polygon with a few real corners does not warn
    assert polygon_warnings(_case({"template": "segments", "start": [0.0, 0.05], "segment": [
        {"to": [0.1, 0.05]}, {"to": [0.2, 0.03]}, {"to": [0.3, 0.03]}]}).profile) == []


def test_cell_estimate_of_check_is_honest():
    from axibore.mesh import expected_cells

    re_entrant = _case({"template": "segments", "start": [0, 0.3], "segment": [
        {"to": [0.5, 0.3]}, {"to": [0.5, 0.06]}, {"to": [0.3, 0.06]}, {"to": [0.3, 0.05], "radius": 0.005}, {"to": [0.8, 0.05]}]})
    n, how = expected_cells(re_entrant.profile, 0.05, 2, "quads")  # not mappable: estimated by a coarser Gmsh mesh
    built = mesh_profile(re_entrant.profile, 0.05, 2, "quads").mesh.n_cells
    assert how.startswith("meshed") and abs(n / built - 1) < 0.15
    cone = _case({"template": "conical", "inlet_diameter": 0.08, "exit_diameter": 0.025, "half_angle": math.radians(15),
                  "inlet_length": 0.12, "tip_length": 0.03, "lip_radius": 0.02})
    n, how = expected_cells(cone.profile, 0.1, 1, "quads")
    assert how == "counted" and n == mesh_profile(cone.profile, 0.1, 1, "quads").mesh.n_cells
