"""Node moves of a mesh whose topology stays fixed: a free boundary moved without remeshing.

Given new positions for some boundary nodes (the others stay where they are), every interior
node moves by the solution of a discrete Laplace equation for the displacement on the mesh's edge
graph (spring stiffness 1/length of the reference mesh, so that small cells move nearly rigidly
with their neighbours). The displacement is taken from the reference mesh each time, never
accumulated, so the moved mesh is a smooth function of the boundary positions: a free-boundary
iteration on it sees a discrete problem without the noise of remeshing. The matrix is factored
once.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import scipy.sparse as sp

from .fvmesh import FVMesh, MeshError

# a move that shrinks a cell below this fraction of its reference area is refused
MIN_AREA_RATIO = 0.05


class NodeMover:
    """Moves of ``mesh`` with the boundary nodes ``driven`` placed where the caller says; every other
    boundary node stays fixed."""

    def __init__(self, mesh: FVMesh, driven: np.ndarray):
        import scipy.sparse.linalg as spla

        self.reference = mesh
        self.driven = np.asarray(driven, np.int64)
        X = mesh.nodes
        n = len(X)
        a, b = mesh.face_nodes[:, 0], mesh.face_nodes[:, 1]
        w = 1.0 / np.linalg.norm(X[a] - X[b], axis=1)
        W = sp.coo_matrix((np.r_[w, w], (np.r_[a, b], np.r_[b, a])), shape=(n, n)).tocsr()
        lap = (sp.diags(np.asarray(W.sum(axis=1)).ravel()) - W).tocsr()
        on_boundary = np.zeros(n, bool)
        on_boundary[mesh.face_nodes[mesh.boundary_faces].ravel()] = True
        self.inner = np.flatnonzero(~on_boundary)
        self._couple = lap[self.inner][:, self.driven].tocsr()
        self._solve = spla.factorized(lap[self.inner][:, self.inner].tocsc())

    def move(self, positions: np.ndarray) -> FVMesh:
        """The mesh with the driven nodes at ``positions`` (same order as ``driven``). Raises MeshError
        where a cell would collapse."""
        X0 = self.reference.nodes
        d_driven = np.asarray(positions, float) - X0[self.driven]
        nodes = X0.copy()
        nodes[self.driven] += d_driven
        if self.inner.size:
            rhs = -(self._couple @ d_driven)
            nodes[self.inner] += np.column_stack([self._solve(np.ascontiguousarray(rhs[:, k])) for k in range(2)])
        moved = replace(self.reference, nodes=nodes)
        if np.any(moved.cell_area < MIN_AREA_RATIO * self.reference.cell_area):
            raise MeshError("a moved cell would collapse")
        return moved
