"""Steady state by pseudo-transient continuation: Newton steps on the limited second-order residual.

Each step solves (V/dt dU/dW + dR/dW) dW = -R(W) for the primitive unknowns W with the assembled
Jacobian (jacobian.py) and a local time step dt = CFL V / sum_f (|u.n| + c) A_f, by GMRES with a
reused first-order LU preconditioner (linear.py). The CFL number follows the residual (switched
evolution relaxation, Mulder & van Leer 1985, J. Comput. Phys. 59: CFL = CFL0 r_ref / r), growing
by at most ``cfl_growth`` a step, so that the steps become Newton steps as the residual falls. A
step is scaled down so that density and pressure change by at most ``max_update`` (relative) in
any cell, and the next CFL number is then cut by that factor; a step after which the residual grew
more than ``reject_growth`` times is undone and retried at a quarter of the CFL number. Slow flows
start at CFL0 / M^2 (M the largest Mach number of the start): with the acoustic time step the
pseudo-time term stays O(1 / (M CFL)) of the convective Jacobian, and at Mach 0.001 the iteration
from CFL0 = 50 diverged while Newton from the start converged in 4 steps. (The cap on CFL growth,
100 a step, is a guard: on the normal-shock cases SER alone and SER capped at 100 took the same
steps, 18 at level 0 of each back pressure, fewer than caps of 2 to 10.)

Convergence: the scaled residual (all four equations, each divided by the reference conservative
state) down ``orders`` orders from the reference residual (that of the quasi-1D start on the same
mesh). Nothing else declares convergence.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from .jacobian import JacobianPattern, assemble
from .linear import ReusedLU
from .scheme import Evaluation, Scheme


@dataclass(frozen=True)
class EulerSettings:
    """Settings of the compressible solver (scheme, continuation, linear solves, sequencing)."""

    second_order: bool = True
    limiter_k: float = 5.0  # limiter threshold: eps = (K h / L)^3 in variables scaled by the inlet total state
    low_mach_fix: bool = True  # Thornber et al. 2008 velocity-jump scaling in the face states
    hll_jump: float = 0.05  # HLLC blended towards HLL where the face pressures differ by about this (relative)
    shock_sensor: float = 0.2  # ... and where h |grad p| / p of the two cells is about this
    max_steps: int = 150  # Newton steps on the final mesh
    residual_orders: float = 8.0  # converged: the scaled residual this many orders below the quasi-1D start's
    coarse_orders: float = 4.0  # coarse meshes of the sequence: this many orders
    coarse_steps: int = 80  # ... within this many steps (else the fine mesh starts from its quasi-1D state)
    sequencing: bool = True  # start from the solutions on meshes 2, 4, ... times coarser
    min_coarse_cells: int = 600  # the coarsest mesh of the sequence has at least this many cells
    cfl0: float = 50.0
    cfl_growth: float = 100.0  # largest factor of CFL growth in a step
    cfl_max: float = 1e12
    max_update: float = 0.3  # largest relative change of rho or p in a step (the step is scaled down)
    reject_growth: float = 10.0  # undo a step that multiplies the residual by more than this
    linear_rtol_min: float = 1e-4  # GMRES tolerance: Eisenstat & Walker (1996) choice 2, between these
    linear_rtol_max: float = 0.1
    krylov_iterations: int = 40
    refactor_iterations: int = 20  # keep the preconditioner's factor while GMRES needs at most this many
    single_factor: bool = True  # the preconditioner's LU factor in single precision


@dataclass(frozen=True)
class EulerRecord:
    """Why and how the Newton iteration on one mesh stopped."""

    converged: bool
    reason: str
    orders: float  # residual drop in orders of magnitude (reference residual to the last state)
    steps: int  # Newton steps taken (rejected ones included)
    residual_history: tuple[float, ...] = ()  # scaled residual over the reference, before each step
    cfl_history: tuple[float, ...] = ()
    seconds: float = 0.0
    seconds_jacobian: float = 0.0
    seconds_linear: float = 0.0
    seconds_residual: float = 0.0
    linear_method: str = ""
    mass_imbalance: float = float("nan")  # (inflow - outflow) / inflow
    rejected: int = 0


def residual_norm(scheme: Scheme, R: np.ndarray) -> float:
    return float(np.linalg.norm(R / scheme.cons_scale[:, None]))


@dataclass
class _Clock:
    jacobian: float = 0.0
    linear: float = 0.0
    residual: float = 0.0


def iterate(scheme: Scheme, W: np.ndarray, s: EulerSettings, position: np.ndarray, reference: float,
            orders: float, max_steps: int, progress=None) -> tuple[Evaluation, EulerRecord]:
    """Newton iteration from the primitive state W (4, C) until the residual is ``orders`` orders
    below ``reference`` or ``max_steps`` steps; the last evaluation and the record."""
    t_start = time.perf_counter()
    clock = _Clock()
    pattern = JacobianPattern(scheme, position)
    clock.jacobian = time.perf_counter() - t_start
    lin = ReusedLU(s.single_factor, s.refactor_iterations)
    ev = scheme.evaluate(W)
    r0 = max(reference, 1e-300)
    rel = residual_norm(scheme, ev.R) / r0
    hist, cfls = [], []
    # slow flows start nearer Newton: CFL0 / M^2 with M the largest Mach number of the start
    # (pseudo-time steps of the acoustic CFL diverged at Mach 0.001, Newton converged in 4 steps)
    mach = float(np.max(np.hypot(W[1], W[2]) / np.sqrt(scheme.gas.gamma * W[3] / W[0])))
    cfl0 = s.cfl0 / min(1.0, max(mach, 1e-4)) ** 2
    cfl = min(s.cfl_max, cfl0 / max(rel, 1e-300))
    rejected, eta_prev, step = 0, None, 0
    converged, reason = False, f"not converged in {max_steps} steps"
    for step in range(1, max_steps + 2):
        hist.append(rel)
        cfls.append(cfl)
        if progress is not None:
            progress(step, rel, cfl)
        if not np.isfinite(rel):
            reason = f"non-finite residual after {step - 1} steps"
            break
        if rel <= 10.0 ** (-orders):
            converged, reason = True, f"residual down {orders:g} orders"
            break
        if step > max_steps:
            break
        eta = min(s.linear_rtol_max, max(_forcing(hist, eta_prev, s), 0.1 * 10.0 ** (-orders) / rel))
        eta_prev = eta
        new, alpha = _step(scheme, pattern, lin, ev, cfl, eta, position, s, clock)
        rel_new = residual_norm(scheme, new.R) / r0 if new is not None else math.inf
        if not np.isfinite(rel_new) or rel_new > s.reject_growth * rel:
            rejected += 1
            cfl = max(0.25 * cfl, 0.1)
            lin.last_iterations = s.refactor_iterations + 1  # a fresh factor for the retry
            continue
        ev, rel = new, rel_new
        cfl_ser = min(s.cfl_max, cfl0 / max(rel, 1e-300))
        cfl = min(cfl_ser, s.cfl_growth * cfl) if alpha >= 1.0 else cfl * max(alpha, 0.1)
    steps = len(hist) - 1
    m_in, m_out = scheme.mass_flows(ev.F)
    st = lin.stats
    method = (f"newton (assembled second-order jacobian; gmres, first-order LU preconditioner): "
              f"{st.factorizations} factorizations, {st.iterations} GMRES iterations, factor reused in "
              f"{st.reused} steps" + (f", {rejected} steps rejected" if rejected else ""))
    record = EulerRecord(converged, reason, float(-math.log10(max(rel, 1e-300))), steps, tuple(hist), tuple(cfls),
                         time.perf_counter() - t_start, clock.jacobian, clock.linear, clock.residual, method,
                         (m_in - m_out) / m_in if m_in else float("nan"), rejected)
    return ev, record


def _step(scheme: Scheme, pattern: JacobianPattern, lin: ReusedLU, ev: Evaluation, cfl: float, eta: float,
          position: np.ndarray, s: EulerSettings, clock: _Clock):
    """One pseudo-time Newton step: the new evaluation (None if not physical) and the step scale."""
    C = scheme.C
    t0 = time.perf_counter()
    J, first_order = assemble(scheme, pattern, ev, scheme.spectral(ev.W) / cfl)
    t1 = time.perf_counter()
    b = np.empty((C, 4))
    b[position] = -(ev.R / scheme.cons_scale[:, None]).T
    x, _, _ = lin.solve(J, first_order, b.ravel(), eta, s.krylov_iterations)
    dW = x.reshape(C, 4)[position].T * scheme.scale[:, None]
    t2 = time.perf_counter()
    worst = max(float(np.max(np.abs(dW[0]) / ev.W[0])), float(np.max(np.abs(dW[3]) / ev.W[3])))
    alpha = 1.0 if worst <= s.max_update else (s.max_update / worst if np.isfinite(worst) else 0.0)
    trial = ev.W + alpha * dW
    new = scheme.evaluate(trial) if alpha > 0 and np.all(trial[0] > 0) and np.all(trial[3] > 0) else None
    clock.jacobian += t1 - t0
    clock.linear += t2 - t1
    clock.residual += time.perf_counter() - t2
    return new, alpha


def _forcing(hist: list[float], eta_prev: float | None, s: EulerSettings) -> float:
    """GMRES tolerance: Eisenstat & Walker (1996, SIAM J. Sci. Comput. 17) choice 2 with safeguard."""
    if len(hist) < 2:
        return s.linear_rtol_max
    eta = 0.9 * (hist[-1] / hist[-2]) ** 2
    if eta_prev is not None and 0.9 * eta_prev**2 > 0.1:
        eta = max(eta, 0.9 * eta_prev**2)
    return min(s.linear_rtol_max, max(s.linear_rtol_min, eta))
