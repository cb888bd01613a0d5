"""Starting states: the quasi-1D solution along the bore (its normal shock included), and the
solution of a coarser mesh carried over to a finer one (grid sequencing).

The quasi-1D state (onedim_gas.quasi_one_dim) uses the flow area A(x) = pi (r_wall^2 - r_body^2)
read from the mesh's wall (and centre-body) faces, the inlet total state and the back pressure:
subsonic, choked, or choked with a normal shock in a diverging part where the back pressure puts
one. Choked without a shock, the state uses a sonic area INITIAL_SONIC_AREA times the minimum
area: quasi-1D flow is exactly sonic along a constant-area throat (a straight nozzle tip), the
singular point of the steady equations; the two-dimensional throat has its sonic line upstream of
the minimum section (a discharge coefficient below one: Kliegel & Levine 1969).

A coarse solution is carried to the fine cells by its linear reconstruction from the nearest
coarse cell centre (the coarse least-squares gradient, unlimited away from jumps): the fine
Newton iteration then starts inside the basin of its solution, with the shock and the sonic line
where the coarse mesh put them (Venkatakrishnan & Mavriplis 1993, J. Comput. Phys. 105, use the
same nested iteration for implicit unstructured solvers).
"""

from __future__ import annotations

import numpy as np

from ...mesh import FVMesh
from .. import onedim_gas as q1d
from .gas import IdealGas, TotalInlet
from .scheme import Scheme

INITIAL_SONIC_AREA = 0.99  # choked initial state: sonic area / minimum area (a typical throat Cd)


def area_function(mesh: FVMesh):
    """Flow area A(x) = pi (r_wall^2 - r_body^2) from the wall (and centre-body) faces."""

    def radius(name):
        faces = mesh.boundary.get(name, np.zeros(0, np.int64))
        if faces.size == 0:
            return lambda x: np.zeros_like(x)
        nd = mesh.nodes[mesh.face_nodes[faces].ravel()]
        order = np.argsort(nd[:, 0], kind="stable")
        return lambda x: np.interp(x, nd[order, 0], nd[order, 1])

    rw, rc = radius("wall"), radius("centerbody")
    return lambda x: np.pi * (rw(x) ** 2 - rc(x) ** 2)


def quasi_1d_state(mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, p_out: float) -> np.ndarray:
    """Primitive state (4, C): the quasi-1D solution at each cell's x, velocity along the axis."""
    g, R = gas.gamma, gas.gas_constant
    xs = np.linspace(mesh.nodes[:, 0].min(), mesh.nodes[:, 0].max(), 801)
    A = area_function(mesh)(xs)
    p0, T0 = inlet.total_pressure, inlet.total_temperature
    sol = q1d.quasi_one_dim(xs, A, p0, T0, p_out, R, g)
    Ms, ps, Ts = sol.mach, sol.pressure, sol.temperature
    if sol.regime != "subsonic" and sol.x_shock is None:
        it = int(np.argmin(A))
        down = np.arange(A.size) > it
        Ms = q1d.mach_from_area_ratio(A / (INITIAL_SONIC_AREA * A[it]), g, supersonic=down)
        ps, Ts = p0 * q1d.pressure_ratio(Ms, g), T0 * q1d.temperature_ratio(Ms, g)
    xc = mesh.cell_centroid[:, 0]
    M, p, T = np.interp(xc, xs, Ms), np.interp(xc, xs, ps), np.interp(xc, xs, Ts)
    return np.stack([p / (R * T), M * np.sqrt(g * R * T), np.zeros_like(M), p])


def prolong(coarse: Scheme, W: np.ndarray, mesh: FVMesh) -> np.ndarray:
    """The coarse solution W (4, Cc) on the cells of ``mesh``: nearest coarse cell centre plus its
    gradient times the offset, clipped to the range of that cell and its face neighbours (no new
    extrema at a shock)."""
    from scipy.spatial import cKDTree

    _, k = cKDTree(coarse.mesh.cell_centroid).query(mesh.cell_centroid)
    Wb = W[:, coarse.Pb]
    grad = coarse.gradients(W, 0.5 * (Wb + coarse.ghost(Wb)))
    dx = (mesh.cell_centroid - coarse.mesh.cell_centroid[k]).T
    out = W[:, k] + grad[:, 0, k] * dx[0] + grad[:, 1, k] * dx[1]
    adj = coarse.mesh.cell_neighbours()  # every cell has a face neighbour
    nb = W[:, adj.indices]
    lo = np.minimum(W, np.minimum.reduceat(nb, adj.indptr[:-1], axis=1))
    hi = np.maximum(W, np.maximum.reduceat(nb, adj.indptr[:-1], axis=1))
    return np.clip(out, lo[:, k], hi[:, k])
