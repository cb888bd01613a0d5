"""The compressible solve on one mesh (with an optional sequence of coarser meshes), and its result.

``solve_euler`` starts from the quasi-1D state (its normal shock included) on the coarsest mesh
of the sequence, converges there ``coarse_orders`` orders, carries the solution to the next mesh
(start.prolong), and so on; on the given mesh it converges ``residual_orders`` orders below the
residual of the quasi-1D start on that mesh (the same reference with or without the sequence).
Measured on the blow-off demo (18.7k cells): 13 Newton steps and 8.9 s from the quasi-1D start;
6 steps after 6 and 4 on the 1.3k and 4.7k cell meshes, 4.7 s in all.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...mesh import FVMesh, mesh_profile
from ..ordering import nested_dissection
from .gas import IdealGas, TotalInlet, conservative, primitive
from .newton import EulerRecord, EulerSettings, iterate, residual_norm
from .scheme import Evaluation, Scheme
from .start import prolong, quasi_1d_state


@dataclass(frozen=True, eq=False)
class GasBoundary:
    """Face values on one named boundary (absolute pressure)."""

    faces: np.ndarray
    velocity: np.ndarray  # (2, m)
    pressure: np.ndarray  # (m,) absolute
    density: np.ndarray
    mach: np.ndarray


@dataclass(frozen=True, eq=False)
class EulerResult:
    U: np.ndarray  # (4, C) conservative state (restart with init=U)
    velocity: np.ndarray  # (2, C)
    pressure: np.ndarray  # (C,) absolute
    density: np.ndarray
    temperature: np.ndarray
    mach: np.ndarray
    boundary: dict[str, GasBoundary]
    face_mass_flux: np.ndarray  # (F,) kg/s per radian, out of each face's owner
    mass_flow: float  # kg/s through the inlet (full revolution)
    outlet_mass_flow: float
    wall_force: float  # N, axial force of (p - outlet_pressure) on wall and centre body
    record: EulerRecord  # the iteration on the given mesh
    gas: IdealGas = field(default_factory=IdealGas)
    coarse: tuple[EulerRecord, ...] = ()  # the iterations on the coarser meshes, coarsest first

    @property
    def total_pressure(self) -> np.ndarray:
        g = self.gas.gamma
        return self.pressure * (1.0 + 0.5 * (g - 1.0) * self.mach**2) ** (g / (g - 1.0))


def make_scheme(mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, p_out: float, s: EulerSettings) -> Scheme:
    return Scheme(mesh, gas, inlet, p_out, s.limiter_k, s.low_mach_fix, s.second_order, s.hll_jump, s.shock_sensor)


def _positions(mesh: FVMesh) -> np.ndarray:
    pos = np.empty(mesh.n_cells, np.int64)
    pos[nested_dissection(mesh, leaf_size=16)] = np.arange(mesh.n_cells)  # leaves of 16: 10 % less fill than 64
    return pos


def solve_euler(mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, outlet_pressure: float,
                settings: EulerSettings = EulerSettings(), init=None, progress=None,
                coarse_meshes: tuple[FVMesh, ...] = ()) -> EulerResult:
    """Steady axisymmetric Euler solution on ``mesh`` (groups inlet, outlet, wall, axis, centerbody).

    ``outlet_pressure``: static back pressure [Pa absolute]. ``init``: a previous EulerResult or a
    (4, C) conservative state (then no sequence); default the quasi-1D state, on the coarsest of
    ``coarse_meshes`` (coarsest first) when given and ``settings.sequencing``. ``progress(step,
    res, cfl)`` is called before each step on the given mesh. Non-convergence is reported in
    ``record``, not raised.
    """
    s = settings
    scheme = make_scheme(mesh, gas, inlet, outlet_pressure, s)
    W0 = quasi_1d_state(mesh, gas, inlet, outlet_pressure)
    reference = residual_norm(scheme, scheme.evaluate(W0).R)
    coarse_records = []
    if init is not None:
        W = primitive(np.asarray(init.U if isinstance(init, EulerResult) else init, float), gas.gamma)
    else:
        W = W0
        prev = None
        for cm in (coarse_meshes if s.sequencing else ()):
            cs = make_scheme(cm, gas, inlet, outlet_pressure, s)
            Wc0 = quasi_1d_state(cm, gas, inlet, outlet_pressure)
            start = Wc0 if prev is None else prolong(prev[0], prev[1], cm)
            ref = residual_norm(cs, cs.evaluate(Wc0).R)
            ev, rec = iterate(cs, start, s, _positions(cm), ref, s.coarse_orders, s.coarse_steps)
            coarse_records.append(rec)
            prev = (cs, ev.W) if rec.converged else None
        if prev is not None:
            W = prolong(prev[0], prev[1], mesh)
    ev, record = iterate(scheme, W, s, _positions(mesh), reference, s.residual_orders, s.max_steps, progress)
    return _result(scheme, ev, record, tuple(coarse_records))


def _result(scheme: Scheme, ev: Evaluation, record: EulerRecord, coarse: tuple[EulerRecord, ...]) -> EulerResult:
    gas, mesh, W, F = scheme.gas, scheme.mesh, ev.W, ev.F
    g = gas.gamma
    c = np.sqrt(g * W[3] / W[0])
    mach = np.hypot(W[1], W[2]) / c
    m_in, m_out = scheme.mass_flows(F)
    # boundary states: average of the interior face state and its ghost; on reflecting boundaries
    # the pressure carried by the momentum flux (the HLLC star pressure)
    nI = scheme.nI
    Wf = 0.5 * (ev.Wside[:, 2 * nI :] + ev.WG)
    refl = scheme.bkind == 2
    fr = scheme.fb[refl]
    Wf[3, refl] = F[1, fr] * scheme.n[0, fr] + F[2, fr] * scheme.n[1, fr] + scheme.p_out
    bpos = np.full(mesh.n_faces, -1)
    bpos[scheme.fb] = np.arange(scheme.nB)
    boundary = {}
    for name, faces in scheme.groups.items():
        wf = Wf[:, bpos[faces]]
        boundary[name] = GasBoundary(faces, wf[1:3].copy(), wf[3].copy(), wf[0].copy(),
                                     np.hypot(wf[1], wf[2]) / np.sqrt(g * wf[3] / wf[0]))
    return EulerResult(conservative(W, g), W[1:3].copy(), W[3].copy(), W[0].copy(), W[3] / (W[0] * gas.gas_constant),
                       mach, boundary, F[0] * scheme.A, m_in, m_out, scheme.wall_force(F), record, gas, coarse)


def coarse_meshes(profile, mesh: FVMesh, h: float, cells: str, min_cells: int) -> tuple[FVMesh, ...]:
    """Meshes of ``profile`` with cells 2, 4, ... times the size ``h`` of ``mesh`` (about a quarter,
    a sixteenth, ... of its cells), down to ``min_cells``; coarsest first."""
    out = []
    k = 1
    while mesh.n_cells / 4**k >= min_cells:
        out.append(mesh_profile(profile, cells=cells, h=h * 2**k).mesh)
        k += 1
    return tuple(reversed(out))


def residual_of(mesh: FVMesh, gas: IdealGas, inlet: TotalInlet, outlet_pressure: float, U: np.ndarray,
                settings: EulerSettings = EulerSettings()) -> tuple[np.ndarray, np.ndarray]:
    """Residual (4, C) of the conservative state U and the face fluxes times face areas (4, F) (the
    momentum fluxes carry the pressure relative to ``outlet_pressure``)."""
    scheme = make_scheme(mesh, gas, inlet, outlet_pressure, settings)
    ev = scheme.evaluate(primitive(np.asarray(U, float), gas.gamma))
    return ev.R, ev.F * mesh.face_area


__all__ = ["GasBoundary", "EulerResult", "solve_euler", "residual_of", "coarse_meshes", "make_scheme"]
