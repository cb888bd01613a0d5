"""Second-order values and gradients on boundary faces from cell values (quadratic least squares).

For each boundary face, phi is fitted in the face's local frame (t along the face, n out of the
fluid, origin at the face centre) by ``a + b t + c n + d t^2 + e t n + f n^2`` over the cells
within two (quads) or three (triangles) face-neighbour rings of the owner, weighted by 1/distance^2, with the boundary
condition imposed exactly:

* flux faces (given dphi/dn = g): c = g;
* value faces on a straight plane of constant phi: a = phi_b and b = d = 0.

The tangential derivative b (and c on value faces) are second-order accurate for smooth fields,
unlike the owner-cell gradient which is first order at the face; a (flux faces) is the face value.

The fit is linear in the cell values and the boundary data, so it is built once as sparse
operators (``BoundaryFit``): value, tangential and normal derivative of every face of a set.
The stencils depend on the mesh topology only; a mesh whose nodes move keeps them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..arrays import rows
from ..mesh import FVMesh

# Face-neighbour rings around the owner in each fit. Three rings average the cell-scale noise of
# solutions on unstructured triangles (sphere, rms Cp error at h = R/100: 4.9e-4 with 3 rings,
# 5.7e-4 with 2; observed order 1.78 vs 1.43); on smooth quad meshes two rings are more accurate
# (cone sink at h = 0.005: 1.2e-4 with 2 rings, 2.1e-4 with 3).
RINGS_TRIANGLES = 3
RINGS_QUADS = 2


def stencils(mesh: FVMesh, faces: np.ndarray) -> np.ndarray:
    """(m, K) padded (-1) cell ids within the fit's rings of face neighbours of each face's owner."""
    rings = RINGS_TRIANGLES if np.mean(mesh.nvert == 3) > 0.5 else RINGS_QUADS
    A = mesh.cell_neighbours()
    own = mesh.owner[faces]
    # the rows of (A + I)^rings at the owners, without forming A + I over the whole mesh
    R = A[own] + sp.csr_matrix((np.ones(own.size), (np.arange(own.size), own)), shape=(own.size, mesh.n_cells))
    for _ in range(rings - 1):
        R = R @ A + R
    R = R.tocsr()
    R.sort_indices()
    counts = np.diff(R.indptr)
    K = int(counts.max())
    pos = np.arange(R.indices.size) - np.repeat(R.indptr[:-1], counts)
    out = np.full((faces.size, K), -1, np.int64)
    out[np.repeat(np.arange(faces.size), counts), pos] = R.indices
    return out


@dataclass(frozen=True, eq=False)
class BoundaryFit:
    """Face value and derivatives of phi on a set of boundary faces as sparse operators:
    ``value = V @ phi + v_data * data[faces]`` and the same for ``dt`` (along t) and ``dn`` (along n,
    out of the fluid); the face frame is (``t``, ``n``)."""

    faces: np.ndarray
    t: np.ndarray  # (m, 2) unit tangents (n rotated by +90 degrees)
    n: np.ndarray  # (m, 2) unit normals out of the fluid
    V: sp.csr_matrix
    v_data: np.ndarray
    Dt: sp.csr_matrix
    dt_data: np.ndarray
    Dn: sp.csr_matrix
    dn_data: np.ndarray

    def value(self, phi: np.ndarray, data: np.ndarray) -> np.ndarray:
        return self.V @ phi + self.v_data * data[self.faces]

    def gradient(self, phi: np.ndarray, data: np.ndarray) -> np.ndarray:
        """(2, m) gradient (x, r components)."""
        gt = self.Dt @ phi + self.dt_data * data[self.faces]
        gn = self.Dn @ phi + self.dn_data * data[self.faces]
        return (gt[:, None] * self.t + gn[:, None] * self.n).T


def boundary_fit(mesh: FVMesh, faces: np.ndarray, is_value: np.ndarray, stencil: np.ndarray | None = None) -> BoundaryFit:
    """The fit operators of ``faces`` (``is_value``: which faces carry a given value). ``stencil``:
    the cells of each fit from an earlier call on a mesh of the same topology."""
    faces = np.asarray(faces, np.int64)
    m = faces.size
    st = stencils(mesh, faces) if stencil is None else stencil
    valid = st >= 0
    cells = np.where(valid, st, 0)
    n = rows(mesh.face_normal, faces)
    t = np.column_stack([-n[:, 1], n[:, 0]])
    rel = rows(mesh.cell_centroid, cells) - rows(mesh.face_centroid, faces)[:, None, :]
    tt = np.einsum("mkj,mj->mk", rel, t)
    nn = np.einsum("mkj,mj->mk", rel, n)
    h2 = np.where(valid, tt * tt + nn * nn, np.inf)
    sw = np.where(valid, 1.0 / np.sqrt(np.where(valid, h2, 1.0)), 0.0)[..., None]  # sqrt of the 1/d^2 weights
    scale = np.sqrt(np.min(h2, axis=1)) if m else np.zeros(0)  # conditioning: units of the nearest distance
    ts, ns = tt / scale[:, None], nn / scale[:, None]
    Wv, Wt, Wn = (np.zeros(st.shape) for _ in range(3))
    v_data, dt_data, dn_data = np.zeros(m), np.zeros(m), np.zeros(m)
    flux = ~is_value[faces]
    if np.any(flux):  # unknowns a, b, d, e, f; data phi - g n
        k = flux
        X = np.stack([np.ones_like(ts[k]), ts[k], ts[k] ** 2, ts[k] * ns[k], ns[k] ** 2], axis=-1) * sw[k]
        P = _pseudo_inverse(X, sw[k])
        Wv[k], Wt[k] = P[:, 0, :], P[:, 1, :] / scale[k, None]
        v_data[k] = -np.sum(Wv[k] * nn[k], axis=1)
        dt_data[k] = -np.sum(Wt[k] * nn[k], axis=1)
        dn_data[k] = 1.0
    if np.any(~flux):  # unknowns c, e, f; data phi - phi_b
        k = ~flux
        X = np.stack([ns[k], ts[k] * ns[k], ns[k] ** 2], axis=-1) * sw[k]
        P = _pseudo_inverse(X, sw[k])
        Wn[k] = P[:, 0, :] / scale[k, None]
        dn_data[k] = -np.sum(Wn[k], axis=1)
        v_data[k] = 1.0
    fit_rows = np.repeat(np.arange(m), st.shape[1])

    def op(W):
        return sp.csr_matrix((np.where(valid, W, 0.0).ravel(), (fit_rows, cells.ravel())), shape=(m, mesh.n_cells))

    return BoundaryFit(faces, t, n, op(Wv), v_data, op(Wt), dt_data, op(Wn), dn_data)


def _pseudo_inverse(Xw: np.ndarray, sw: np.ndarray) -> np.ndarray:
    """(m, p, K): the weighted least-squares coefficients as linear maps of the stencil values."""
    AtA = np.einsum("mki,mkj->mij", Xw, Xw)
    return np.linalg.solve(AtA, np.transpose(Xw * sw, (0, 2, 1)))


def boundary_gradients(mesh: FVMesh, phi: np.ndarray, faces: np.ndarray, is_value: np.ndarray,
                       data: np.ndarray) -> np.ndarray:
    """(2, m) gradient of phi at the centres of ``faces`` (x, r components)."""
    faces = np.asarray(faces, np.int64)
    if faces.size == 0:
        return np.zeros((2, 0))
    return boundary_fit(mesh, faces, is_value).gradient(phi, data)
