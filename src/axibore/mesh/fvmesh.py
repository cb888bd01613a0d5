"""Finite-volume view of a 2D meridional mesh: cells, faces, owner/neighbour, r-weighted measures.

All measures of revolution are **per radian**: ``face_area = length * r_face`` is the integral of
r dl over a straight face (exact), ``cell_volume = area * r_centroid`` the integral of r dA over
a cell (theorem of Pappus, exact). Multiply by ``revolution`` (2 pi) for full 360-degree values.
A planar mesh (``planar=True``) has measures per unit depth and ``revolution`` 1.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from ..arrays import rows
from ..names import TWO_PI


class MeshError(ValueError):
    pass


@dataclass(frozen=True, eq=False)
class FVMesh:
    nodes: np.ndarray  # (N, 2) x, r
    cells: np.ndarray  # (C, 4) node ids, counter-clockwise; -1 pads triangles
    face_nodes: np.ndarray  # (F, 2) node ids, counter-clockwise as seen from the owner
    owner: np.ndarray  # (F,)
    neighbour: np.ndarray  # (F,) -1 on boundary faces
    boundary: dict[str, np.ndarray] = field(default_factory=dict)  # name -> face ids
    planar: bool = False  # planar (per unit depth) instead of axisymmetric (per radian)

    # ---- construction -----------------------------------------------------------------------
    @classmethod
    def from_cells(cls, nodes: np.ndarray, cells: np.ndarray, boundary_edges: dict[str, np.ndarray],
                   planar: bool = False) -> "FVMesh":
        """Build faces from cell connectivity and name boundary faces from node-pair lists.

        ``cells`` is (C, 3) or (C, 4) (-1 padding allowed in the fourth column); orientation is
        corrected to counter-clockwise. Every boundary face must belong to exactly one group.
        """
        nodes = np.asarray(nodes, float)
        cells = np.asarray(cells, np.int64)
        if cells.shape[1] == 3:
            cells = np.column_stack([cells, np.full(len(cells), -1)])
        nvert = np.where(cells[:, 3] >= 0, 4, 3)
        # orientation: signed area by the shoelace formula on the padded polygon
        closed = np.where(cells >= 0, cells, cells[:, :1])
        area = _shoelace(nodes, closed)
        if np.any(np.abs(area) <= 0):
            raise MeshError(f"{int(np.sum(np.abs(area) <= 0))} cells have zero area")
        flip = area < 0
        tri = nvert == 3
        cells = cells.copy()
        cells[flip & tri, :3] = cells[flip & tri, 2::-1]
        cells[flip & ~tri] = cells[flip & ~tri, ::-1]

        # all edges of all cells, in the cell's counter-clockwise order
        nxt = np.where(nvert[:, None] == 3, cells[:, [1, 2, 0, 0]], cells[:, [1, 2, 3, 0]])
        a, b = cells.ravel(), nxt.ravel()
        cell_of = np.repeat(np.arange(len(cells)), 4)
        keep = a >= 0  # the padding column of triangles
        a, b, cell_of = a[keep], b[keep], cell_of[keep]
        key = np.minimum(a, b) * (len(nodes) + 1) + np.maximum(a, b)
        order = np.argsort(key, kind="stable")
        key_s = key[order]
        first = np.ones(key_s.size, bool)
        first[1:] = key_s[1:] != key_s[:-1]
        face_id = np.cumsum(first) - 1
        nf = int(face_id[-1]) + 1
        counts = np.bincount(face_id, minlength=nf)
        if np.any(counts > 2):
            raise MeshError("an edge is shared by more than two cells (the mesh is not a 2D manifold)")
        idx_first = order[first]
        owner = cell_of[idx_first]
        face_nodes = np.column_stack([a[idx_first], b[idx_first]])
        neighbour = np.full(nf, -1, np.int64)
        second = order[~first]
        neighbour[face_id[~first]] = cell_of[second]

        bfaces = np.flatnonzero(neighbour < 0)
        bkey = key[idx_first][bfaces]
        boundary: dict[str, np.ndarray] = {}
        assigned = np.zeros(bfaces.size, np.int64)
        sorter = np.argsort(bkey)
        for name, edges in boundary_edges.items():
            edges = np.asarray(edges, np.int64).reshape(-1, 2)
            k = np.minimum(edges[:, 0], edges[:, 1]) * (len(nodes) + 1) + np.maximum(edges[:, 0], edges[:, 1])
            pos = np.searchsorted(bkey, k, sorter=sorter)
            pos = np.clip(pos, 0, bkey.size - 1)
            hit = sorter[pos]
            ok = bkey[hit] == k
            if not np.all(ok):
                raise MeshError(f"boundary group {name!r}: {int(np.sum(~ok))} edges are not boundary faces of the mesh")
            assigned[hit] += 1
            boundary[name] = np.sort(bfaces[hit])
        if np.any(assigned != 1):
            n0, n2 = int(np.sum(assigned == 0)), int(np.sum(assigned > 1))
            raise MeshError(f"every boundary face must be in exactly one named group: {n0} in none, {n2} in several")
        return cls(nodes, cells, face_nodes, owner, neighbour, boundary, planar)

    # ---- sizes ------------------------------------------------------------------------------
    @property
    def n_cells(self) -> int:
        return len(self.cells)

    @property
    def n_faces(self) -> int:
        return len(self.owner)

    @cached_property
    def nvert(self) -> np.ndarray:
        return np.where(self.cells[:, 3] >= 0, 4, 3)

    @cached_property
    def interior(self) -> np.ndarray:
        return np.flatnonzero(self.neighbour >= 0)

    @cached_property
    def boundary_faces(self) -> np.ndarray:
        return np.flatnonzero(self.neighbour < 0)

    # ---- face geometry ----------------------------------------------------------------------
    @cached_property
    def face_centroid(self) -> np.ndarray:
        return 0.5 * (rows(self.nodes, self.face_nodes[:, 0]) + rows(self.nodes, self.face_nodes[:, 1]))

    @cached_property
    def _face_vec(self) -> np.ndarray:
        return rows(self.nodes, self.face_nodes[:, 1]) - rows(self.nodes, self.face_nodes[:, 0])

    @cached_property
    def face_length(self) -> np.ndarray:
        return np.hypot(self._face_vec[:, 0], self._face_vec[:, 1])

    @cached_property
    def face_normal(self) -> np.ndarray:
        """Unit normal pointing out of the owner cell (out of the fluid on boundary faces)."""
        t = self._face_vec / self.face_length[:, None]
        return np.column_stack([t[:, 1], -t[:, 0]])

    @cached_property
    def face_area(self) -> np.ndarray:
        """Integral of r dl over each face, per radian (planar: the face length, per unit depth)."""
        return self.face_length if self.planar else self.face_length * self.face_centroid[:, 1]

    @property
    def revolution(self) -> float:
        """Factor from the mesh measures to full values: 2 pi (axisymmetric) or 1 (planar, per unit depth)."""
        return 1.0 if self.planar else TWO_PI

    # ---- cell geometry ----------------------------------------------------------------------
    @cached_property
    def _closed(self) -> np.ndarray:
        return np.where(self.cells >= 0, self.cells, self.cells[:, :1])

    @cached_property
    def cell_area(self) -> np.ndarray:
        """Meridional (x, r) area of each cell."""
        return _shoelace(self.nodes, self._closed)

    @cached_property
    def cell_centroid(self) -> np.ndarray:
        px, py = _corners(self.nodes, self._closed)  # relative to a corner of the cell (see _shoelace)
        qx, qy = np.roll(px, -1, axis=1), np.roll(py, -1, axis=1)
        cross = px * qy - qx * py
        cx, cr = (px + qx) * cross, (py + qy) * cross
        six_a = 6.0 * self.cell_area
        return rows(self.nodes, self._closed[:, 0]) + np.column_stack([_row_sum(cx), _row_sum(cr)]) / six_a[:, None]

    @cached_property
    def cell_volume(self) -> np.ndarray:
        """Integral of r dA over each cell, per radian (Pappus); planar: the cell area."""
        return self.cell_area if self.planar else self.cell_area * self.cell_centroid[:, 1]

    @property
    def h(self) -> float:
        """Representative cell size sqrt(total area / cells) (Celik et al. 2008, eq. 1 in 2D)."""
        return float(np.sqrt(self.cell_area.sum() / self.n_cells))

    def cell_neighbours(self):
        """Symmetric cell adjacency through interior faces (built once per mesh; do not modify)."""
        return self._adjacency

    @cached_property
    def _adjacency(self):
        import scipy.sparse as sp

        i, j = self.owner[self.interior], self.neighbour[self.interior]
        n = self.n_cells
        ones = np.ones(i.size)
        return sp.csr_matrix((np.r_[ones, ones], (np.r_[i, j], np.r_[j, i])), shape=(n, n))

    # ---- quality ----------------------------------------------------------------------------
    def quality(self) -> dict:
        """Mesh quality: non-orthogonality, aspect ratio, skewness, sizes."""
        # over interior faces: d from owner to neighbour centre
        f = self.interior
        c = self.cell_centroid
        p0 = rows(c, self.owner[f])
        d = rows(c, self.neighbour[f]) - p0
        nrm = rows(self.face_normal, f)
        L = self.face_length[f]
        dn = np.sqrt(d[:, 0] ** 2 + d[:, 1] ** 2)
        d_n = np.einsum("ij,ij->i", d, nrm)
        nonorth = np.degrees(np.arccos(np.clip(d_n / dn, -1, 1)))
        # skewness: distance from the face centre to where the centre-to-centre line crosses the
        # face, over the face length (the face tangent is the normal turned by +90 degrees)
        s = np.einsum("ij,ij->i", rows(self.nodes, self.face_nodes[f, 0]) - p0, nrm) / d_n
        off = p0 + s[:, None] * d - rows(self.face_centroid, f)
        skew = np.abs(off[:, 1] * nrm[:, 0] - off[:, 0] * nrm[:, 1]) / L
        # aspect ratio: longest over shortest edge (a triangle's padding edge has length 0);
        # column by column, faster than reductions along a short axis
        x, y = np.take(self.nodes[:, 0], self._closed), np.take(self.nodes[:, 1], self._closed)
        ex, ey = np.roll(x, -1, axis=1) - x, np.roll(y, -1, axis=1) - y
        edges = np.sqrt(ex * ex + ey * ey)
        emax = np.maximum(np.maximum(edges[:, 0], edges[:, 1]), np.maximum(edges[:, 2], edges[:, 3]))
        e = np.where(edges > 0, edges, np.inf)
        emin = np.minimum(np.minimum(e[:, 0], e[:, 1]), np.minimum(e[:, 2], e[:, 3]))
        aspect = emax / emin
        return {
            "cells": int(self.n_cells),
            "triangles": int(np.sum(self.nvert == 3)),
            "quads": int(np.sum(self.nvert == 4)),
            "faces": int(self.n_faces),
            "h_m": self.h,
            "min_cell_area_m2": float(self.cell_area.min()),
            "max_aspect_ratio": float(aspect.max()),
            "max_non_orthogonality_deg": float(nonorth.max()) if f.size else 0.0,
            "mean_non_orthogonality_deg": float(nonorth.mean()) if f.size else 0.0,
            "max_skewness": float(skew.max()) if f.size else 0.0,
            "boundary_faces": {k: int(v.size) for k, v in self.boundary.items()},
        }


def _shoelace(nodes: np.ndarray, closed: np.ndarray) -> np.ndarray:
    """Signed areas, from coordinates relative to each cell's first corner: in absolute coordinates
    the products x r cancel to the area with a round-off error of eps |x| |r|, which for a cell of
    size d far from the origin (d / |x| = 1e-5 at a lip 200 mm downstream refined to 2 um) is a
    relative error of eps |x|^2 / d^2 ~ 1e-6, enough to stall a Newton iteration on the mesh."""
    px, py = _corners(nodes, closed)
    return 0.5 * _row_sum(px * np.roll(py, -1, axis=1) - np.roll(px, -1, axis=1) * py)


def _corners(nodes: np.ndarray, closed: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(C, 4) x and r of each cell's corners relative to its first corner (1-D gathers: fast)."""
    x, y = np.take(nodes[:, 0], closed), np.take(nodes[:, 1], closed)
    return x - x[:, :1], y - y[:, :1]


def _row_sum(a: np.ndarray) -> np.ndarray:
    """Sum of the four columns of a (C, 4) array (faster than a reduction along the short axis)."""
    return (a[:, 0] + a[:, 1]) + (a[:, 2] + a[:, 3])
