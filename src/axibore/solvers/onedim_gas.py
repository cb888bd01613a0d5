"""Quasi-one-dimensional isentropic flow of an ideal gas, with normal shocks.

The relations are the classical ones of steady adiabatic flow of a perfect gas along a stream
tube of slowly varying area A(x) (NACA Report 1135, 1953, "Equations, tables and charts for
compressible flow", eqs. 44-45 and 80 for the isentropic relations and the area ratio, eqs. 93-99
for the normal shock). Every function is vectorised over its array arguments. Pressures are
absolute, SI throughout.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

GAMMA_AIR = 1.4


# ---- isentropic relations (NACA 1135, eqs. 43-45) ------------------------------------------
def temperature_ratio(M, g: float = GAMMA_AIR):
    """T / T0."""
    M = np.asarray(M, float)
    return 1.0 / (1.0 + 0.5 * (g - 1.0) * M * M)


def pressure_ratio(M, g: float = GAMMA_AIR):
    """p / p0."""
    return temperature_ratio(M, g) ** (g / (g - 1.0))


def density_ratio(M, g: float = GAMMA_AIR):
    """rho / rho0."""
    return temperature_ratio(M, g) ** (1.0 / (g - 1.0))


def critical_pressure_ratio(g: float = GAMMA_AIR) -> float:
    """p* / p0 = (2 / (g + 1))^(g / (g - 1))."""
    return float((2.0 / (g + 1.0)) ** (g / (g - 1.0)))


def area_ratio(M, g: float = GAMMA_AIR):
    """A / A* (NACA 1135, eq. 80)."""
    M = np.asarray(M, float)
    e = (g + 1.0) / (2.0 * (g - 1.0))
    return (2.0 / (g + 1.0) * (1.0 + 0.5 * (g - 1.0) * M * M)) ** e / M


def _dlog_area_ratio_dM(M, g):
    # d ln(A/A*) / dM = (M^2 - 1) / (M (1 + (g-1)/2 M^2))
    return (M * M - 1.0) / (M * (1.0 + 0.5 * (g - 1.0) * M * M))


def mach_from_pressure_ratio(p_p0, g: float = GAMMA_AIR):
    """Mach number of an isentropic state with p / p0 (0 < p/p0 <= 1)."""
    r = np.clip(np.asarray(p_p0, float), 1e-300, 1.0)
    return np.sqrt(np.maximum(2.0 / (g - 1.0) * (r ** (-(g - 1.0) / g) - 1.0), 0.0))


def mach_from_area_ratio(A_Astar, g: float = GAMMA_AIR, supersonic=False):
    """Mach number with A / A* on the subsonic (default) or supersonic branch.

    ``supersonic`` may be an array of bools (one per value). Bisection in ln M on a bracket
    that holds the root, then Newton polishing on ln(A/A*): robust and vectorised.
    """
    a = np.asarray(A_Astar, float)
    if np.any(a < 1.0 - 1e-12):
        raise ValueError("A/A* must be at least 1")
    a = np.maximum(a, 1.0)
    sup = np.broadcast_to(np.asarray(supersonic, bool), a.shape)
    lo = np.where(sup, 0.0, np.log(1e-12))  # ln M
    hi = np.where(sup, np.log(1e3), 0.0)
    la = np.log(a)
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        f = np.log(area_ratio(np.exp(mid), g)) - la
        # on the subsonic branch ln(A/A*) falls with M, on the supersonic branch it rises
        go_up = np.where(sup, f < 0.0, f > 0.0)
        lo = np.where(go_up, mid, lo)
        hi = np.where(go_up, hi, mid)
    M = np.exp(0.5 * (lo + hi))
    for _ in range(3):
        d = _dlog_area_ratio_dM(M, g)
        step = np.where(np.abs(d) > 1e-8, (np.log(area_ratio(M, g)) - la) / np.where(d == 0, 1.0, d), 0.0)
        M = np.where(np.abs(step) < 0.01 * M, M - step, M)
    return M


def choked_mass_flux(p0, T0, R: float, g: float = GAMMA_AIR):
    """mdot / A* [kg/(s m^2)] of choked flow: p0 / sqrt(R T0) sqrt(g) (2/(g+1))^((g+1)/(2(g-1)))."""
    return np.asarray(p0, float) / np.sqrt(R * np.asarray(T0, float)) * np.sqrt(g) * (2.0 / (g + 1.0)) ** (
        (g + 1.0) / (2.0 * (g - 1.0)))


def mass_flux(M, p0, T0, R: float, g: float = GAMMA_AIR):
    """rho u [kg/(s m^2)] of the isentropic state of Mach M."""
    T = T0 * temperature_ratio(M, g)
    p = p0 * pressure_ratio(M, g)
    return p / (R * T) * M * np.sqrt(g * R * T)


# ---- normal shock (NACA 1135, eqs. 93-99) ---------------------------------------------------
def shock_mach(M1, g: float = GAMMA_AIR):
    """Mach number behind a normal shock."""
    M1 = np.asarray(M1, float)
    return np.sqrt((1.0 + 0.5 * (g - 1.0) * M1**2) / (g * M1**2 - 0.5 * (g - 1.0)))


def shock_pressure_ratio(M1, g: float = GAMMA_AIR):
    """p2 / p1 across a normal shock."""
    M1 = np.asarray(M1, float)
    return 1.0 + 2.0 * g / (g + 1.0) * (M1**2 - 1.0)


def shock_total_pressure_ratio(M1, g: float = GAMMA_AIR):
    """p02 / p01 across a normal shock."""
    M1 = np.asarray(M1, float)
    a = ((g + 1.0) * M1**2 / ((g - 1.0) * M1**2 + 2.0)) ** (g / (g - 1.0))
    b = ((g + 1.0) / (2.0 * g * M1**2 - (g - 1.0))) ** (1.0 / (g - 1.0))
    return a * b


# ---- nozzles ----------------------------------------------------------------------------------
@dataclass(frozen=True)
class NozzleRegime:
    """Operating regime of a nozzle with throat area A_t and exit area A_e at p_b / p0."""

    choked: bool
    p_subsonic_limit: float  # p_e/p0 of the isentropic flow sonic at the throat, subsonic exit
    p_supersonic_limit: float  # p_e/p0 of the isentropic flow supersonic at the exit
    p_shock_at_exit: float  # p_b/p0 with a normal shock standing in the exit plane
    regime: str  # "subsonic", "shock in nozzle", "overexpanded", "ideally expanded", "underexpanded", "choked"


def nozzle_regime(A_throat: float, A_exit: float, p_back_p0: float, g: float = GAMMA_AIR) -> NozzleRegime:
    ar = A_exit / A_throat
    if ar <= 1.0 + 1e-12:  # converging nozzle: the exit is the throat
        ps = critical_pressure_ratio(g)
        choked = p_back_p0 <= ps
        return NozzleRegime(choked, ps, ps, ps, "choked" if choked else "subsonic")
    p_sub = float(pressure_ratio(mach_from_area_ratio(ar, g), g))
    Me = float(mach_from_area_ratio(ar, g, supersonic=True))
    p_sup = float(pressure_ratio(Me, g))
    p_sh = p_sup * float(shock_pressure_ratio(Me, g))
    if p_back_p0 >= p_sub:
        regime = "subsonic"
    elif p_back_p0 > p_sh:
        regime = "shock in nozzle"
    elif p_back_p0 > p_sup * (1 + 1e-9):
        regime = "overexpanded"
    elif p_back_p0 >= p_sup * (1 - 1e-9):
        regime = "ideally expanded"
    else:
        regime = "underexpanded"
    return NozzleRegime(p_back_p0 < p_sub, p_sub, p_sup, p_sh, regime)


def ideal_mass_flow(A_throat: float, p0: float, T0: float, p_back: float, R: float, g: float = GAMMA_AIR,
                    A_exit: float | None = None) -> float:
    """Isentropic mass flow [kg/s] through a nozzle of minimum area A_throat (exit area A_exit,
    default the throat: a converging nozzle) from total conditions p0, T0 to back pressure p_back.

    Choked: the sonic throat value; otherwise the subsonic flow whose exit pressure is p_back.
    """
    A_exit = A_throat if A_exit is None else A_exit
    reg = nozzle_regime(A_throat, A_exit, p_back / p0, g)
    if reg.choked:
        return float(choked_mass_flux(p0, T0, R, g) * A_throat)
    Me = mach_from_pressure_ratio(p_back / p0, g)
    return float(mass_flux(Me, p0, T0, R, g) * A_exit)


@dataclass(frozen=True)
class QuasiOneDim:
    x: np.ndarray
    area: np.ndarray
    mach: np.ndarray
    pressure: np.ndarray  # absolute static pressure
    temperature: np.ndarray
    density: np.ndarray
    total_pressure: np.ndarray
    mass_flow: float
    regime: str
    x_shock: float | None = None  # normal-shock position (diverging part), if any


def normal_shock_area(A_throat: float, A_exit: float, p_back_p0: float, g: float = GAMMA_AIR) -> float:
    """Area A_s of the diverging part where a normal shock stands so that the exit pressure is
    p_back (for p_shock_at_exit < p_back/p0 < p_subsonic_limit); brentq on A_s in (A_t, A_e)."""
    from scipy.optimize import brentq

    def exit_p(As):
        M1 = mach_from_area_ratio(As / A_throat, g, supersonic=True)
        r0 = shock_total_pressure_ratio(M1, g)  # p02 / p01; A*_2 = A_t / r0
        Me = mach_from_area_ratio(A_exit * r0 / A_throat, g)
        return float(r0 * pressure_ratio(Me, g)) - p_back_p0

    return float(brentq(exit_p, A_throat * (1 + 1e-12), A_exit, xtol=1e-14 * A_exit, rtol=1e-14))


def quasi_one_dim(x, area, p0: float, T0: float, p_back: float, R: float, g: float = GAMMA_AIR) -> QuasiOneDim:
    """Quasi-1D flow along x for the area distribution ``area`` (samples at increasing x, the
    outlet at the last sample), total conditions p0, T0 and back pressure p_back.

    Subsonic when the back pressure allows; else sonic at the minimum area with the supersonic
    branch downstream, a normal shock where the back pressure requires one, and the isentropic
    supersonic branch when the back pressure is at or below the shock-at-exit value (the jet
    adjusts outside).
    """
    x = np.asarray(x, float)
    A = np.asarray(area, float)
    it = int(np.argmin(A))
    At, Ae = float(A[it]), float(A[-1])
    reg = nozzle_regime(At, Ae, p_back / p0, g)
    p0x = np.full(A.shape, float(p0))
    x_shock = None
    if not reg.choked:
        Me = float(mach_from_pressure_ratio(p_back / p0, g))
        Astar = Ae / float(area_ratio(Me, g))
        M = mach_from_area_ratio(np.maximum(A / Astar, 1.0), g)
        mdot = float(mass_flux(Me, p0, T0, R, g) * Ae)
    else:
        down = np.arange(A.size) > it
        M = mach_from_area_ratio(np.maximum(A / At, 1.0), g, supersonic=down)
        mdot = float(choked_mass_flux(p0, T0, R, g) * At)
        if reg.regime == "shock in nozzle":
            As = normal_shock_area(At, Ae, p_back / p0, g)
            M1 = float(mach_from_area_ratio(As / At, g, supersonic=True))
            r0 = float(shock_total_pressure_ratio(M1, g))
            behind = down & (A >= As)
            # first sample past the shock area in the diverging part (A grows there)
            k = it + 1 + int(np.argmax(A[it + 1:] >= As))
            xa, xb = x[k - 1], x[k]
            x_shock = float(xa + (As - A[k - 1]) / (A[k] - A[k - 1]) * (xb - xa)) if A[k] != A[k - 1] else float(xb)
            M = np.where(behind, mach_from_area_ratio(np.maximum(A * r0 / At, 1.0), g), M)
            p0x = np.where(behind, p0 * r0, p0x)
    T = T0 * temperature_ratio(M, g)
    p = p0x * pressure_ratio(M, g)
    return QuasiOneDim(x, A, M, p, T, p / (R * T), p0x, mdot, reg.regime, x_shock)


__all__ = [
    "temperature_ratio", "pressure_ratio", "density_ratio", "critical_pressure_ratio", "area_ratio",
    "mach_from_pressure_ratio", "mach_from_area_ratio", "choked_mass_flux", "mass_flux", "shock_mach",
    "shock_pressure_ratio", "shock_total_pressure_ratio", "nozzle_regime", "ideal_mass_flow", "NozzleRegime",
    "QuasiOneDim", "normal_shock_area", "quasi_one_dim",
]
