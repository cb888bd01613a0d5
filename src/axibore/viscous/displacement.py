"""The displacement correction: the inviscid flow solved again on the wall displaced by the layer.

The wall (and centre body) faces of the run's own mesh are moved into the fluid by the
displacement thickness delta* of their layer, and the nodes near them by a share that falls
linearly to zero over a blending distance, so the mesh keeps its cells, faces and numbering
(no remeshing: the change is the layer's effect, not a different discretisation). Nodes on the
inlet and outlet planes move along the plane, nodes on the axis stay. delta* is held from the
last attached face across a separated range, smoothed along the wall (a smooth offset) and
clipped where it would exceed ``CLIP_FRACTION`` of the local channel height.

The registered solver of the case solves the displaced mesh; its pressures act on the real wall
(the pressure is carried unchanged through a thin layer): the wall force with the displacement.
``one-pass``: once, from the layer of the inviscid flow. ``iterate``: the layer is marched again on
the wall speed of the displaced flow (without the quasi-1D blockage coupling, which the 2D solution
now carries itself), the wall displaced again, until the flow and the wall force change by less than
``viscous.displacement_tolerance`` (relative) between passes (at most ``MAX_PASSES``).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace

import numpy as np

from ..names import Boundary
from ..solvers import SOLVERS
from ..solvers.base import FlowError
from ..solvers.walls import wall_tables
from .layers import discharge_coefficient, wall_layers
from .march import smooth_speed

CLIP_FRACTION = 0.2  # delta* applied at most this share of the local channel height
FACE_FRACTION = 0.5  # ... and of the wall face's own length (a thick layer in a concave corner would fold cells)
BLEND_CELLS = 3.0  # the displacement fades to zero over this many cells from the wall (at least)
MAX_PASSES = 8
NEIGHBOURS = 16  # wall nodes whose displacement an interior node takes (inverse-distance weighted)
RELAXATION = 0.7  # of delta* between passes when iterating


@dataclass(frozen=True, eq=False)
class DisplacementResult:
    mode: str
    passes: int
    converged: bool
    tolerance: float
    wall_x_N: float  # wall-pressure force on the real wall with the displaced flow
    centerbody_x_N: float
    inviscid_total_x_N: float
    volume_flow_m3_s: float
    inviscid_volume_flow_m3_s: float
    inlet_pressure_Pa: float
    inviscid_inlet_pressure_Pa: float
    discharge_coefficient: float | None
    max_displacement_m: float
    clipped: bool
    history: list[dict]
    wall_pressure: dict[str, np.ndarray] = field(repr=False)  # per face, WallTable order
    warnings: list[str] = field(default_factory=list)
    seconds: float = 0.0

    @property
    def total_x_N(self) -> float:
        return self.wall_x_N + self.centerbody_x_N

    @property
    def force_change_N(self) -> float:
        return self.total_x_N - self.inviscid_total_x_N

    @property
    def flow_change_rel(self) -> float:
        return self.volume_flow_m3_s / self.inviscid_volume_flow_m3_s - 1.0

    def as_dict(self) -> dict:
        return {
            "mode": self.mode, "passes": self.passes, "converged": self.converged, "tolerance": self.tolerance,
            "wall_x_N": self.wall_x_N, "centerbody_x_N": self.centerbody_x_N, "total_x_N": self.total_x_N,
            "force_change_N": self.force_change_N,
            "force_change_rel": self.force_change_N / max(abs(self.inviscid_total_x_N), 1e-300),
            "volume_flow_m3_s": self.volume_flow_m3_s, "flow_change_rel": self.flow_change_rel,
            "inlet_pressure_gauge_Pa": self.inlet_pressure_Pa,
            "inlet_pressure_change_Pa": self.inlet_pressure_Pa - self.inviscid_inlet_pressure_Pa,
            "discharge_coefficient": self.discharge_coefficient,
            "max_displacement_m": self.max_displacement_m, "clipped": self.clipped, "history": self.history,
            "seconds": self.seconds,
            "note": "the inviscid flow solved again on the wall displaced by delta* (the run's mesh, wall nodes moved); "
                    "its pressure acts on the real wall; total_x_N is the wall-pressure force, friction not included",
        }


def _held(values: np.ndarray) -> np.ndarray:
    fin = np.isfinite(values)
    if not fin.any():
        return np.zeros_like(values)
    return np.interp(np.arange(values.size), np.flatnonzero(fin), values[fin])


def displaced_mesh(mesh, delta: dict[str, tuple[np.ndarray, np.ndarray]], channel: float, h: float):
    """The mesh with each solid boundary moved into the fluid by delta (face ids -> delta* per face).
    Returns (mesh, largest displacement applied, clipped?)."""
    from scipy.spatial import cKDTree

    nodes = mesh.nodes
    N = len(nodes)
    disp = np.zeros((N, 2))
    weight = np.zeros(N)
    on_wall = np.zeros(N, bool)
    clipped = False
    cap = CLIP_FRACTION * channel
    for name, (faces, d) in delta.items():
        d = np.asarray(d, float)
        cap_f = np.minimum(cap, FACE_FRACTION * mesh.face_length[faces])
        clipped |= bool(np.any(d > cap_f))
        d = np.clip(d, 0.0, cap_f)
        fn = mesh.face_nodes[faces]
        vec = -mesh.face_normal[faces] * d[:, None]  # into the fluid
        for k in (0, 1):
            np.add.at(disp, fn[:, k], vec)
            np.add.at(weight, fn[:, k], 1.0)
        on_wall[fn.ravel()] = True
    disp[on_wall] /= weight[on_wall, None]
    # nodes on the planes move along the plane only; nodes on the axis stay
    for name in (Boundary.INLET, Boundary.OUTLET):
        if name in mesh.boundary:
            disp[mesh.face_nodes[mesh.boundary[name]].ravel(), 0] = 0.0
    axis = mesh.face_nodes[mesh.boundary[Boundary.AXIS]].ravel() if Boundary.AXIS in mesh.boundary else np.zeros(0, int)
    dmax = float(np.max(np.hypot(disp[:, 0], disp[:, 1]))) if N else 0.0
    blend = min(max(BLEND_CELLS * h, 5.0 * dmax), 0.4 * channel)
    wall_ids = np.flatnonzero(on_wall)
    if wall_ids.size and dmax > 0.0:
        free = ~on_wall
        # the wall's displacement averaged over its nearest wall nodes (inverse-distance weights): a smooth
        # field also where the wall turns (a concave corner), faded linearly to zero over the blend distance
        k = min(NEIGHBOURS, wall_ids.size)
        dist, j = cKDTree(nodes[wall_ids]).query(nodes[free], k=k)
        dist, j = dist.reshape(-1, k), j.reshape(-1, k)
        wk = 1.0 / (dist + 1e-3 * h) ** 2
        avg = np.einsum("nk,nkc->nc", wk, disp[wall_ids[j]]) / wk.sum(1)[:, None]
        w = np.clip(1.0 - dist[:, 0] / blend, 0.0, 1.0)
        disp[free] = w[:, None] * avg
        plane = np.zeros(N, bool)
        for name in (Boundary.INLET, Boundary.OUTLET):
            if name in mesh.boundary:
                plane[mesh.face_nodes[mesh.boundary[name]].ravel()] = True
        disp[plane, 0] = 0.0
    disp[axis] = 0.0
    new = replace(mesh, nodes=nodes + disp)
    bad = new.cell_area <= 0.0
    if np.any(bad):
        c = mesh.cell_centroid[bad]
        raise ValueError(f"the displaced wall folds {int(bad.sum())} cells of the mesh, near x = {c[:, 0].min() * 1e3:.4g} to "
                         f"{c[:, 0].max() * 1e3:.4g} mm, r = {c[:, 1].min() * 1e3:.4g} to {c[:, 1].max() * 1e3:.4g} mm")
    return new, dmax, clipped


def _deltas(layer, tables) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """(faces, displacement thickness) of every chain, smoothed and never negative."""
    out = {}
    for name, c in layer.chains.items():
        d = _held(np.asarray(c.displacement, float))  # the layer's and the carried deficit fluid's
        out[name] = (np.asarray(tables[name].faces), np.maximum(smooth_speed(d, 3.0), 0.0))
    return out


def displacement_pass(case, profile, mesh, flow, tables, onedim, layer, progress=None) -> DisplacementResult:
    """The flow solved again on the wall displaced by the layer (module docstring)."""
    t0 = time.perf_counter()
    s = layer.settings
    mode = s.displacement
    solver = SOLVERS[case.solver_kind].load()
    planar = bool(getattr(profile, "planar", False))
    channel = profile.min_channel_height
    h = mesh.h
    inv_total = sum(t.total_force for t in tables.values())
    deltas = _deltas(layer, tables)
    history, warnings = [], []
    passes_max = 1 if mode == "one-pass" else MAX_PASSES
    converged = mode == "one-pass"
    prev = None
    clipped_any = False
    dmax = 0.0
    for k in range(1, passes_max + 1):
        try:
            mesh_k, dmax, clipped = displaced_mesh(mesh, deltas, channel, h)
        except ValueError as exc:
            raise FlowError("viscous.displacement", f"the wall cannot be displaced on this mesh: {exc}; refine the mesh "
                            '(mesh.level) or set viscous.displacement = "none" (the blockage coupling of the wall layer '
                            "still gives the viscous discharge coefficient)") from None
        clipped_any |= clipped
        flow_k = solver(case, profile, mesh_k, None)
        p_wall, F = {}, {}
        for name, t in tables.items():
            bv = flow_k.boundary[name]
            p_wall[name] = _by_face(bv, t.faces, bv.pressure)
            area_nx = t.nx * _full_area(t, planar)
            F[name] = float(np.sum(p_wall[name] * area_nx))
        Q = flow_k.volume_flow
        total = sum(F.values())
        history.append({"pass": k, "volume_flow_m3_s": Q, "total_x_N": total, "max_displacement_m": dmax})
        if progress:
            progress("viscous", f"displacement pass {k}: flow {Q / flow.volume_flow - 1:+.4%}, wall force {total:.6g} N")
        if prev is not None:
            dq = abs(Q - prev[0]) / abs(Q)
            df = abs(total - prev[1]) / max(abs(total), 1e-300)
            if dq < s.displacement_tolerance and df < s.displacement_tolerance:
                converged = True
                break
        prev = (Q, total)
        if k == passes_max:
            break
        # the layer again, on the displaced flow's wall speed (the 2D solution carries the blockage now)
        tables_k = wall_tables(flow_k, profile)
        case_k = case.with_updates({"viscous.coupling": "none"}) if case.viscous.coupling != "none" else case
        layer_k = wall_layers(case_k, profile, flow_k, tables_k, onedim)
        new = _deltas(layer_k, tables_k)
        for name in deltas:
            faces_old, d_old = deltas[name]
            faces_new, d_new = new[name]
            order = np.argsort(faces_new)
            d_new = d_new[order][np.searchsorted(faces_new[order], faces_old)]
            deltas[name] = (faces_old, d_old + RELAXATION * (d_new - d_old))
    cd = None
    if not flow_k.compressible:
        real = {n: replace(t, pressure=p_wall[n], speed=_by_face(flow_k.boundary[n], t.faces, flow_k.boundary[n].speed))
                for n, t in tables.items()}
        cd, _ = discharge_coefficient(flow_k, profile, real, s.taps, None, planar)
    if clipped_any:
        warnings.append(f"displacement pass: delta* clipped at {CLIP_FRACTION:.0%} of the narrowest channel height "
                        f"({channel * 1e3:.4g} mm) or {FACE_FRACTION:.0%} of a wall face's length: the layer is too thick "
                        "there for a displacement correction on this mesh")
    if mode == "iterate" and not converged:
        warnings.append(f"displacement pass: not converged in {MAX_PASSES} passes to {s.displacement_tolerance:g}")
    return DisplacementResult(
        mode=mode, passes=len(history), converged=converged, tolerance=s.displacement_tolerance,
        wall_x_N=F.get(Boundary.WALL, 0.0), centerbody_x_N=F.get(Boundary.CENTERBODY, 0.0), inviscid_total_x_N=inv_total,
        volume_flow_m3_s=flow_k.volume_flow, inviscid_volume_flow_m3_s=flow.volume_flow,
        inlet_pressure_Pa=flow_k.inlet_pressure, inviscid_inlet_pressure_Pa=flow.inlet_pressure,
        discharge_coefficient=cd, max_displacement_m=dmax, clipped=clipped_any, history=history,
        wall_pressure=p_wall, warnings=warnings,
        seconds=time.perf_counter() - t0,
    )


def _by_face(bv, faces: np.ndarray, values: np.ndarray) -> np.ndarray:
    """``values`` of a BoundaryState taken at ``faces`` (face ids), in that order."""
    pos = np.argsort(bv.faces)
    return values[pos[np.searchsorted(bv.faces[pos], faces)]]


def _full_area(table, planar: bool) -> np.ndarray:
    return table.length if planar else 2.0 * np.pi * table.r * table.length
