"""Stokes stream function at mesh nodes from the discrete face fluxes.

Across a face from node a to node b (counter-clockwise for its owner) the volume flux per radian
out of the owner is psi_b - psi_a. The discrete field is divergence-free to the solver tolerance,
so integrating along any spanning tree of mesh edges gives psi; the tree is a breadth-first one
from a node on the axis (psi = 0 there) and the path sums are taken by pointer jumping
(vectorised, log2(depth) passes). 2 pi psi is the volume flow between the axis and a point.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import breadth_first_order

from ..mesh import FVMesh
from ..names import Boundary


def stream_function(mesh: FVMesh, face_flux: np.ndarray) -> np.ndarray:
    """2 pi psi [m^3/s] at each node: the volume flow between the axis (or centre body) and the node."""
    n = len(mesh.nodes)
    a, b = mesh.face_nodes[:, 0], mesh.face_nodes[:, 1]
    g = sp.coo_matrix((np.ones(a.size), (a, b)), shape=(n, n)).tocsr()
    bottom = mesh.boundary.get(Boundary.AXIS, mesh.boundary.get(Boundary.CENTERBODY))
    root = int(mesh.face_nodes[bottom[0], 0])
    order, pred = breadth_first_order(g, root, directed=False, return_predecessors=True)
    if order.size != n:
        raise ValueError("the mesh is not connected")
    key = np.minimum(a, b) * n + np.maximum(a, b)
    sorter = np.argsort(key)
    child = np.arange(n)
    par = np.where(pred < 0, root, pred)
    k = np.minimum(par, child) * n + np.maximum(par, child)
    f = sorter[np.searchsorted(key, k, sorter=sorter).clip(0, key.size - 1)]
    # psi_child - psi_parent = +flux if the face runs parent -> child, else -flux
    val = np.where(a[f] == par, face_flux[f], -face_flux[f])
    val[root] = 0.0
    for _ in range(int(math.ceil(math.log2(max(n, 2)))) + 2):
        if np.all(par == root):
            break
        val = val + val[par]
        par = par[par]
    return mesh.revolution * val
