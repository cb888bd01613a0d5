"""The 1D models an engineer uses by hand, and where the 2D answer departs from them.

Continuity and Bernoulli along x with the local flow area A(x) (an annulus where a centre body
is present): V(x) = Q / A(x), p(x) = H - rho V(x)^2 / 2, with the same flow rate Q and total
head H as the 2D solution, so that differences are the 1D assumption (uniform velocity on every
cross-section) alone.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..geometry import Profile
from ..solvers.base import FlowResult


@dataclass(frozen=True)
class OneDimComparison:
    force_dev_rel: float  # (F_2D - F_1D) / |F_1D|
    wall_pressure_max_dev: float  # max |p_2D - p_1D| / (rho V_out^2 / 2) over wall and centre body
    wall_pressure_max_dev_x_m: float
    breakdown_x_ranges_m: list[list[float]]  # x ranges where the deviation exceeds the threshold
    threshold: float
    outlet_momentum_factor: float  # beta = integral u_x^2 dA / (A V^2)
    outlet_energy_factor: float  # alpha = integral u_x q^2 dA / (A V^3)
    discharge_coefficient: float | None  # computed by the model (None where the model makes it 1 by construction)
    discharge_coefficient_note: str  # how it was obtained, or why there is none
    flow_ratio_to_1d: float | None  # Q / Q_1D(delta p) for the same plane pressure difference (inviscid: 1 for uniform planes)
    wall_pressure_max_dev_Pa: float = 0.0  # the largest |p_2D - p_1D| in pascals
    wall_pressure_max_dev_local: float | None = None  # the same over the local |gauge pressure| (None near 0 gauge)
    meaningful: bool = True  # False when the wall runs backwards in x
    deviation: dict = field(default_factory=dict, repr=False)  # boundary name -> per-face deviation


def onedim_pressure(profile: Profile, x: np.ndarray, Q: float, H: float, rho: float) -> np.ndarray:
    A = profile.flow_area(x)
    return H - 0.5 * rho * (Q / A) ** 2


def _ranges(x: np.ndarray, mask: np.ndarray) -> list[list[float]]:
    """x extents of the runs of consecutive True in ``mask`` (faces in arc-length order)."""
    if not np.any(mask):
        return []
    m = np.r_[False, mask, False].astype(int)
    starts = np.flatnonzero(np.diff(m) == 1)
    ends = np.flatnonzero(np.diff(m) == -1)
    return [[float(x[a:b].min()), float(x[a:b].max())] for a, b in zip(starts, ends)]


def _merge(ranges: list[list[float]]) -> list[list[float]]:
    out: list[list[float]] = []
    for a, b in sorted(ranges):
        if out and a <= out[-1][1]:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return out


def compare(profile: Profile, flow: FlowResult, tables: dict, force_2d: float, force_1d: float, threshold: float,
            outlet_kind: str = "exit-plane") -> OneDimComparison:
    rho, Q, H = flow.inlet_density, flow.volume_flow, flow.total_pressure
    V_out = flow.outlet_velocity
    q_out = flow.outlet_dynamic_pressure
    ranges, devs = [], {}
    worst, worst_x, worst_p = 0.0, float("nan"), float("nan")
    for name, t in tables.items():
        dev = (t.pressure - onedim_pressure(profile, t.x, Q, H, rho)) / q_out
        devs[name] = dev
        k = int(np.argmax(np.abs(dev)))
        if abs(dev[k]) > worst:
            worst, worst_x, worst_p = float(abs(dev[k])), float(t.x[k]), float(t.pressure[k])
        ranges += _ranges(t.x, np.abs(dev) > threshold)

    out = flow.outlet
    a = out.area
    ux = out.velocity[0]
    q2 = ux**2 + out.velocity[1] ** 2
    A = a.sum()
    beta = float(np.sum(ux**2 * a) / (A * V_out**2))
    alpha = float(np.sum(ux * q2 * a) / (A * V_out**3))

    ratio = flow.outlet_area / flow.inlet_area
    dp = flow.inlet_pressure - flow.outlet_pressure
    ratio_1d = None
    if dp > 0 and ratio < 1 - 1e-9:
        Q1 = flow.outlet_area * np.sqrt(2 * dp / (rho * (1 - ratio**2)))
        ratio_1d = float(Q / Q1)
    # An inviscid flow leaving through a plane at a given pressure has no losses and no jet
    # contraction: its discharge coefficient is 1 by construction of the model.
    cd = None
    if outlet_kind == "pipe":
        cd_note = "none for a pipe outlet (inviscid flow between two planes has no losses)"
    else:
        cd_note = "1 by the inviscid exit-plane model (not computed: a free-jet outlet or the viscous wall layer computes it)"
    dev_pa = worst * q_out
    local = dev_pa / abs(worst_p) if np.isfinite(worst_p) and abs(worst_p) > 0.1 * q_out else None
    return OneDimComparison(
        force_dev_rel=float((force_2d - force_1d) / abs(force_1d)) if force_1d else float("nan"),
        wall_pressure_max_dev=worst,
        wall_pressure_max_dev_x_m=worst_x,
        breakdown_x_ranges_m=_merge(ranges),
        threshold=threshold,
        outlet_momentum_factor=beta,
        outlet_energy_factor=alpha,
        discharge_coefficient=cd,
        discharge_coefficient_note=cd_note,
        flow_ratio_to_1d=ratio_1d,
        wall_pressure_max_dev_Pa=float(dev_pa),
        wall_pressure_max_dev_local=local,
        meaningful=profile.monotone,
        deviation=devs,
    )
