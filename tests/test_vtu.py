"""The .vtu writer: what it writes reads back exactly through meshio and through VTK (PyVista)."""

from __future__ import annotations

import meshio
import numpy as np
import pyvista as pv

from axibore.io.vtu import BLOCK_BYTES, write_unstructured


def test_mixed_cells_and_multi_block_arrays_read_back_exactly(tmp_path):
    rng = np.random.default_rng(1)
    # 3 triangles and 5 quads on 12 points; a point array long enough to need several zlib blocks
    n_pts = BLOCK_BYTES // 8 * 3 + 7
    pts = rng.random((n_pts, 3))
    tri = rng.integers(0, n_pts, (3, 3))
    quad = rng.integers(0, n_pts, (5, 4))
    pscal = rng.random(n_pts)
    pvec = rng.random((n_pts, 3))
    cscal = [rng.random(3), rng.random(5)]
    path = write_unstructured(tmp_path / "t.vtu", pts, [("triangle", tri), ("quad", quad)],
                              {"s": pscal, "v": pvec}, {"c": cscal})
    m = meshio.read(path)
    assert np.array_equal(m.points, pts)
    assert [(b.type, b.data.tolist()) for b in m.cells] == [("triangle", tri.tolist()), ("quad", quad.tolist())]
    assert np.array_equal(m.point_data["s"], pscal) and np.array_equal(m.point_data["v"], pvec)
    assert all(np.array_equal(a, b) for a, b in zip(m.cell_data["c"], cscal))
    g = pv.read(path)
    assert g.n_cells == 8 and g.n_points == n_pts
    assert np.array_equal(np.asarray(g.cell_data["c"]), np.concatenate(cscal))
    assert np.array_equal(np.asarray(g.celltypes), [5, 5, 5, 9, 9, 9, 9, 9])
