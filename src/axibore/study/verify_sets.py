"""The rows of the verification set: what each compares, against which source, and how it is judged.

Each row: quantity, exact or published value, computed value (finest grid), error, observed order
(where one is expected), source. One builder per set; ``study.verify`` runs them and writes the table.
Cases are built as a user writes them (``case_from_dict``) and solved by ``run.solve_case``, so the
rows verify the default path of each capability.
"""

from __future__ import annotations

import copy
import math
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .. import fluids
from ..case import case_from_dict
from ..fluids.viscosity import viscosity
from ..run import solve_case
from ..solvers import onedim_gas as q1d
from ..verification import (borda_contraction, channel_contraction, cone_sink, isentropic_mass_flow,
                            iso_long_radius_nozzle_c, kliegel_levine_cd, observed_order, sphere_in_stream)
from ..viscous.layer import LAMINAR, march
from .gci import gci


@dataclass(frozen=True)
class Row:
    quantity: str
    exact: float
    computed: float
    error: float
    observed_order: float | None
    expected_order: float | None
    source: str
    passed: bool
    capability: str = ""  # potential, gas, free jet, wall layer, GCI, fluid properties (set by study.verify)


def _order(h, err) -> float | None:

    h, err = np.asarray(h, float), np.abs(np.asarray(err, float))
    if len(h) < 2 or np.any(err <= 0):
        return None
    return observed_order(h, err)


def _row(q, exact, computed_seq, h, source, expected_order=2.0, tol_order=0.4, tol_error=None):
    """A quantity computed on grids of sizes ``h``: error of the finest (relative unless exact is 0)
    and the observed order over all grids; an expected order that cannot be observed fails."""
    comp = np.asarray(computed_seq, float)
    errs = comp - exact
    if exact != 0:
        errs = errs / abs(exact)
    p = _order(h, errs) if len(h) > 1 else None
    ok = True
    if expected_order is not None:
        ok &= p is not None and abs(p - expected_order) <= tol_order
    if tol_error is not None:
        ok &= abs(errs[-1]) <= tol_error
    return Row(q, float(exact), float(comp[-1]), float(errs[-1]), p, expected_order, source, bool(ok))


def _value(q, exact, computed, tol, source, relative=False):
    """A single published value: absolute (or relative) error within ``tol`` (a NaN fails)."""
    err = computed / exact - 1 if relative else computed - exact
    return Row(q, float(exact), float(computed), float(err), None, None, source, bool(abs(err) <= tol))


# --- GCI procedure, fluid properties ----------------------------------------------------------------


def celik_rows() -> list[Row]:

    h = [math.sqrt(1.0 / n) for n in (18000, 8000, 4500)]
    r = gci(h, [6.063, 5.972, 5.863])
    src = "Celik et al. 2008, J. Fluids Eng. 130(7) 078001, Table 1, first column"
    # tolerances: half a unit in the last printed digit
    return [
        _value("GCI procedure: observed order", 1.53, r.order, 0.005, src),
        _value("GCI procedure: extrapolated value", 6.1685, r.extrapolated, 5e-5, src),
        _value("GCI procedure: e_a21", 0.015, r.e_a21, 5e-4, src),
        _value("GCI procedure: GCI_fine21", 0.022, r.gci_fine, 5e-4, src),
    ]


def water_rows() -> list[Row]:

    src = "IAPWS-IF97 (Wagner et al., J. Eng. Gas Turbines Power 122, 2000), Table "
    src5, src35 = src + "5", src + "35"
    v = 1.0 / fluids.water_density(300.0, 3e6)
    ps = fluids.water_vapour_pressure(300.0)
    return [
        _value("water v(300 K, 3 MPa) [m^3/kg]", 0.100215168e-2, v, 1e-8, src5, relative=True),
        _value("water psat(300 K) [Pa]", 3.53658941e3, ps, 1e-8, src35, relative=True),
    ]


# --- potential flow ---------------------------------------------------------------------------------


def cone_rows(hs) -> list[Row]:

    res = [cone_sink(h) for h in hs]
    h = [r.h for r in res]
    src = "radial flow in a cone between spherical caps (derived; exact potential Q/(Omega r))"
    return [
        _row("cone sink, mapped quads: wall Cp rms error", 0.0, [r.wall_cp_rms_error for r in res], h, src, tol_order=0.35),
        _row("cone sink, mapped quads: axial wall force", res[0].wall_force_exact, [r.wall_force for r in res], h, src),
        _row("cone sink, mapped quads: flow rate", 1.0, [r.flow_rate for r in res], h, src, tol_order=0.2),
    ]


def sphere_rows(hs) -> list[Row]:

    res = [sphere_in_stream(h) for h in hs]
    h = [r.h for r in res]
    src = "sphere in a uniform stream, Lamb, Hydrodynamics (6th ed., 1932), ch. VI"
    return [
        _row("sphere, triangles: surface Cp rms error", 0.0, [r.cp_rms_error for r in res], h, src),
        _row("sphere, triangles: Cp_min", -1.25, [r.cp_min for r in res], h, src, expected_order=None, tol_error=2e-2),
        _row("sphere, triangles: front-hemisphere force / (q pi R^2)", -0.125, [r.front_force_coefficient for r in res], h,
             src + " (derived)", tol_order=0.5),
        _value("sphere, triangles: net force / (q pi R^2)", 0.0, res[-1].net_force_coefficient, 1e-3, src),
    ]


def momentum_rows(levels) -> list[Row]:

    data = {"fluid": {"kind": "water", "temperature": "15 degC"}, "inlet": {"flow_rate": "0.05 m^3/s", "pressure": "5 bar"},
            "outlet": {"kind": "pipe"},
            "bore": {"template": "contoured", "inlet_diameter": "200 mm", "exit_diameter": "100 mm",
                     "contraction_length": "200 mm", "inlet_length": "400 mm", "tip_length": "300 mm"}}
    h, dev = [], []
    for lv in levels:
        d = copy.deepcopy(data)
        d["mesh"] = {"size": 0.3, "level": lv}
        r = solve_case(case_from_dict(d))
        h.append(r.mesh.h)
        dev.append((r.forces.total_x_N - r.forces.onedim_x_N) / abs(r.flow.momentum_change))
    src = "momentum theorem between uniform planes: F = p1 A1 - p2 A2 + mdot (V1 - V2) (exact inviscid)"
    return [_row("contoured contraction: (F_wall - F_1D) / |mdot (V2 - V1)|", 0.0, dev, h, src, tol_error=5e-3)]


# --- gas: isentropic relations, converging and converging-diverging nozzles ----------------------------

NACA_1135 = "NACA Report 1135 (Ames Research Staff, 1953), Equations, Tables, and Charts for Compressible Flow"


def isentropic_rows() -> list[Row]:
    """The quasi-1D relations the gas model and the Euler solver's boundaries use, at g = 1.4.

    Derived from the relations of NACA 1135: at g = 1.4, (2/(g+1)) (1 + (g-1)/2 M^2) = (5 + M^2)/6 and
    (g+1)/(2(g-1)) = 3, so A/A* = (1/M) ((5 + M^2)/6)^3: 27/16 at M = 2 and 343/256 at M = 0.5 (the
    table's 1.68750 and 1.33984); p/p0 = (1 + M^2/5)^-3.5, (5/6)^3.5 = 0.528282 at M = 1; the choked
    mass flux mdot sqrt(T0) / (p0 A*) = sqrt(g/R) (5/6)^3 = 0.040415 for R = 287.05 J/(kg K).
    Round-off is the only error expected: 1e-12.
    """
    g, R = 1.4, 287.05
    src = f"{NACA_1135}, isentropic relations and table, g = 1.4"
    M_sup = float(np.asarray(q1d.mach_from_area_ratio(27 / 16, g, supersonic=True)))
    M_sub = float(np.asarray(q1d.mach_from_area_ratio(343 / 256, g, supersonic=False)))
    return [
        _value("isentropic A/A* at M = 2", 27 / 16, float(q1d.area_ratio(2.0, g)), 1e-12,
               src + " (1.68750; 27/16 derived)", relative=True),
        _value("isentropic A/A* at M = 0.5", 343 / 256, float(q1d.area_ratio(0.5, g)), 1e-12,
               src + " (1.33984; 343/256 derived)", relative=True),
        _value("Mach number from A/A* = 27/16, supersonic branch", 2.0, M_sup, 1e-12, src + " (inverse, derived)",
               relative=True),
        _value("Mach number from A/A* = 343/256, subsonic branch", 0.5, M_sub, 1e-12, src + " (inverse, derived)",
               relative=True),
        _value("critical pressure ratio p*/p0", (5 / 6) ** 3.5, float(q1d.critical_pressure_ratio(g)), 1e-12,
               src + " (0.528282; (5/6)^3.5 derived)", relative=True),
        _value("choked mass flux mdot sqrt(T0) / (p0 A*) [SI], R = 287.05", math.sqrt(g / R) * (5 / 6) ** 3,
               float(q1d.choked_mass_flux(1.0, 1.0, R, g)), 1e-12, src + " (0.040415; sqrt(g/R) (5/6)^3 derived)",
               relative=True),
    ]


def _gas_case(bore: dict, total_pressure: str, mesh: dict) -> dict:
    return {"fluid": {"kind": "ideal-gas", "gas": "air"}, "bore": bore,
            "inlet": {"total_pressure": total_pressure, "total_temperature": "300 K"},
            "outlet": {"kind": "exit-plane", "ambient_pressure": "1 bar"}, "mesh": mesh}


def _ideal_flow_ratio(case, res, area: float) -> float:
    """Computed mass flow over the isentropic flow through ``area`` to the back pressure (choked or not)."""
    g, R = case.fluid.gamma, case.fluid.gas_constant
    p0 = case.inlet.total_pressure + case.ambient_pressure
    ideal = isentropic_mass_flow(area, p0, case.inlet.total_temperature, case.ambient_pressure, R, g)
    return res.flow.mass_flow / ideal


def converging_nozzle_rows(size: float) -> list[Row]:
    """A 40 to 28 mm contraction 200 mm long (the fifth-order contoured template: zero slope and
    curvature at its ends) with a 20 mm parallel tip, to a back pressure of 1 bar: the exit plane is
    uniform, so the mass flow is the isentropic flow through the exit area (NACA 1135), choked at
    p_b/p0 = 0.2 (< 0.528) and at p_e = p_b for p_b/p0 = 1/1.3. A real throat passes less by its
    discharge coefficient: Kliegel & Levine's series gives 1 - Cd < 1e-5 for a wall radius of
    curvature above 50 throat radii, and the template's polynomial has one above 100 throat radii
    within 3 throat radii of the exit (L^2 / ((R_in - R_ex) max |f''|), f'' = 60 xi (1 - xi)(1 - 2 xi),
    xi > 0.89; derived). Tolerance 1e-4 (the test suite's, tests/test_euler.py); measured +1.6e-5
    choked and +9.9e-6 subsonic at size 0.2, +4.0e-6 and +2.9e-6 at 0.1."""
    bore = {"template": "contoured", "inlet_diameter": "40 mm", "exit_diameter": "28 mm",
            "contraction_length": "200 mm", "inlet_length": "10 mm", "tip_length": "20 mm"}
    area = math.pi * 0.014**2
    rows = []
    for p_gauge, label in (("4 bar", "choked, p_b/p0 = 0.2"), ("0.3 bar", "subsonic, p_b/p0 = 1/1.3")):
        case = case_from_dict(_gas_case(bore, p_gauge, {"size": size}))
        res = solve_case(case)
        rows.append(_value(f"converging nozzle, {label}: mdot / isentropic mdot", 1.0, _ideal_flow_ratio(case, res, area),
                           1e-4, f"{NACA_1135}, isentropic flow through the exit area (derived)", relative=True))
    return rows


def cd_nozzle_bore(rc_ratio: float, rt: float = 0.01, r_in: float = 2.0, conv: float = 30.0, div: float = 15.0,
                   r_exit: float = 1.25, l_in: float = 0.5) -> dict:
    """A converging-diverging bore as a case file writes it: an inlet pipe of radius r_in r*, a 30 deg
    cone, a circular-arc throat of wall radius rc_ratio r* tangent to both cones, a 15 deg cone to
    the exit radius r_exit r* (the geometry of tests/test_euler.py and cases/air_test_nozzle_cd.toml)."""
    Rc = rc_ratio * rt
    a1, a2 = math.radians(conv), math.radians(div)
    r1, r2 = rt + Rc * (1 - math.cos(a1)), rt + Rc * (1 - math.cos(a2))
    x0 = l_in * rt
    x1 = x0 + (r_in * rt - r1) / math.tan(a1)
    x2 = x1 + Rc * math.sin(a1) + Rc * math.sin(a2)
    x3 = x2 + (r_exit * rt - r2) / math.tan(a2)

    def mm(v: float) -> str:
        return f"{v * 1e3!r} mm"

    return {"template": "segments", "start": [mm(0.0), mm(r_in * rt)],
            "segment": [{"to": [mm(x0), mm(r_in * rt)]}, {"to": [mm(x1), mm(r1)]},
                        {"to": [mm(x2), mm(r2)], "radius": mm(-Rc)}, {"to": [mm(x3), mm(r_exit * rt)]}]}


def cd_nozzle_rows(level: int) -> list[Row]:
    """Throat discharge coefficient of a circular-arc throat, Rc/r* = 4, 5 bar to 1 bar (supersonic
    exit), against Kliegel & Levine (1969). The series' last term (its truncation) is 5.6e-5 here,
    1 - Cd is 1.19e-3: the tolerance 2e-4 lies between them, so the row verifies the solver (at
    Rc/r* = 2, the demo case, the truncation 4.3e-4 exceeds the solver's error). Measured, size 0.1:
    +5.4e-5 at level 0, +1.7e-5 at level 2 (scripts/results/checks_euler.txt). The computed value is
    the discharge coefficient the run reports (computed over the isentropic flow through r*)."""
    g = 1.4
    exact = kliegel_levine_cd(4.0, g)
    # between the series' last term, (g+1)/L^2 (754 g^2 - 757 g + 3615)/(276480 L^2) = 5.6e-5, and 1 - Cd
    tol = 2e-4
    res = solve_case(case_from_dict(_gas_case(cd_nozzle_bore(4.0), "4 bar", {"size": 0.1, "level": level})))
    src = ("Kliegel & Levine 1969, Transonic flow in small throat radius of curvature nozzles, AIAA J. 7(7), "
           "throat discharge coefficient series (correcting Hall 1962)")
    cd = res.onedim.discharge_coefficient
    return [_value("C-D nozzle, circular-arc throat Rc/r* = 4: discharge coefficient", exact,
                   float("nan") if cd is None else cd, tol, src)]


# --- free jets ---------------------------------------------------------------------------------------

BRITANNICA = "Encyclopaedia Britannica, 11th ed., 1911"


def _jet_case(bore: dict, size: float) -> dict:
    return {"fluid": {"kind": "water", "temperature": "15 degC"}, "bore": bore, "inlet": {"pressure": "1 bar"},
            "outlet": {"kind": "free-jet"}, "mesh": {"size": size, "cells": "triangles"}}


def slot_rows(size: float) -> list[Row]:
    """A planar slot of half width 1 mm in a wall closing a channel 20 half widths wide. Kirchhoff's
    jet from a slot in an infinite wall contracts to pi/(pi + 2) (the hodograph solution; Kirchhoff
    1869); the channel raises it by 2.96e-4 to 0.611312 (verification.channel_contraction, derived).
    Tolerance 2e-4, the test suite's, at its mesh size (0.1; the default is 0.05). Measured 2026-12-05 with
    the lip's Bernoulli row (outlets.freejet): +1.1e-4 at size 0.1 (+2e-5 at levels 1 and 2), +4.7e-4 at 0.2,
    +5.1e-4 at 0.15, the error of the speed on the lip's first face."""
    bore = {"template": "segments", "symmetry": "planar", "start": ["-20 mm", "20 mm"],
            "segment": [{"to": ["0 mm", "20 mm"]}, {"to": ["0 mm", "1 mm"]}]}
    res = solve_case(case_from_dict(_jet_case(bore, size)))
    return [_value("planar slot in a wall: contraction coefficient", channel_contraction(math.pi / 2, 1 / 20),
                   res.jet.contraction_coefficient, 2e-4,
                   f"Kirchhoff 1869, free-streamline jet from a slot, pi/(pi + 2); {BRITANNICA}, Hydromechanics s.41; "
                   "the hodograph with the channel 20 slot half widths wide, derived (verification.channel_contraction)")]


def borda_rows(reservoir_radii: int, size: float) -> list[Row]:
    """A thin re-entrant tube of radius 1 mm reaching 13 radii into a round reservoir ``reservoir_radii``
    tube radii wide. Borda: Cc = 1/2 from an infinite reservoir; the same momentum argument in this
    reservoir gives (1 - sqrt(1 - beta))/beta with beta = (1/reservoir_radii)^2 (verification.
    borda_contraction): 0.500556 at 15 radii, 0.501969 at 8. Tolerance 5e-4 (the test suite's); the
    reservoir's correction is 5.6e-4 at 15 radii and 2.0e-3 at 8, so the row tells the finite reservoir
    from the infinite one. The solver takes the jet speed from the momentum balance at such a lip
    (outlets/freejet.py), so the contraction checks that balance and the jet area; the shape is checked
    by the free streamline itself: beyond the lip face its pressure is ambient, its speed the jet speed
    V (Bernoulli), rms mismatch within 1 % (the test suite's tolerance; measured 0.0079 at size 0.2,
    0.0104 at 0.3). (The wall force against the momentum balance is not a row here: that balance fixes
    V, so they agree by construction, to 1e-10.)"""
    R = f"{reservoir_radii} mm"
    bore = {"template": "segments", "symmetry": "axisymmetric", "start": ["-30 mm", R],
            "segment": [{"to": ["10 mm", R]}, {"to": ["10 mm", "1 mm"]}, {"to": ["-3.1 mm", "1 mm"]}]}
    res = solve_case(case_from_dict(_jet_case(bore, size)))
    beta = (1.0 / reservoir_radii) ** 2
    src = f"Borda's mouthpiece, {BRITANNICA}, Hydraulics s.37: 1/2 in an infinite reservoir"
    return [
        _value(f"Borda tube, reservoir {reservoir_radii} tube radii: contraction coefficient", borda_contraction(beta),
               res.jet.contraction_coefficient, 5e-4,
               src + f"; (1 - sqrt(1 - beta))/beta, beta = 1/{reservoir_radii ** 2} (derived)"),
        _value("Borda tube: rms |q/V - 1| on the free streamline", 0.0, res.jet_table.mismatch()[1], 1e-2,
               "free streamline at ambient pressure: speed V = sqrt(2 p0/rho) (Bernoulli, exact inviscid)"),
    ]


# --- the wall layer ---------------------------------------------------------------------------------


def blasius_rows() -> list[Row]:
    """A flat plate, U = 10 m/s, nu = 1e-6 m^2/s, laminar to x = 0.2 m (Re_x = 2e6), values at its end.
    Blasius: the wall shear f''(0) = 0.332057 (Howarth 1938) gives cf sqrt(Re_x) = 0.664115, and the momentum
    integral d theta/dx = cf/2 then gives theta sqrt(Re_x)/x = 0.664115 (derived). The laminar method's closure is
    the Falkner-Skan family, of which the flat plate is a member, so it is exact here: tolerance 0.1 %
    (Thwaites' method, used before, was 1.0 % above in theta and 1.2 % below in cf)."""
    U, nu, L = 10.0, 1.0e-6, 0.2
    s = np.linspace(0.0, L, 401)
    w = march(s, None, U, nu, planar=True, transition="none", rho=1000.0)
    re = U * L / nu
    laminar = bool(np.all(w.state == LAMINAR))
    theta = w.theta[-1] * math.sqrt(re) / L if laminar else float("nan")
    cf = w.cf[-1] * math.sqrt(re) if laminar else float("nan")
    src = "Blasius 1908; Schlichting, Boundary-Layer Theory, ch. 7: flat plate"
    return [
        _value("flat plate, laminar: theta sqrt(Re_x) / x", 0.664115, theta, 0.001, src, relative=True),
        _value("flat plate, laminar: cf sqrt(Re_x)", 0.664115, cf, 0.001, src, relative=True),
    ]


def howarth_rows() -> list[Row]:
    """Howarth's retarded flow ue = U0 (1 - x/L), U0 = 10 m/s, L = 1 m, nu = 1e-6 m^2/s: the laminar layer's
    separation. Howarth (1938), Proc. R. Soc. A 164, "On the solution of the laminar boundary layer equations":
    x/L = 0.1199 from the series solution of the layer equations; tolerance 2 % (issue 20's), the method's own
    error 0.15 %. (Thwaites' one-equation method gives 0.1231: its integral is theta^2 = 0.45 nu L/(6 U0)
    ((1 - xi)^-6 - 1), so lambda = -0.075 ((1 - xi)^-6 - 1) reaches its -0.09 at xi = 1 - 2.2^(-1/6); derived.)"""
    s = np.linspace(0.0, 0.3, 601)
    w = march(s, None, 10.0 * (1.0 - s), 1.0e-6, planar=True, transition="none")
    x_sep = w.separation_s if w.separation_kind == "laminar" else float("nan")
    src = "Howarth 1938, Proc. R. Soc. A 164: retarded flow ue = U0 (1 - x/L), separation from the series solution"
    return [_value("retarded flow ue = U0 (1 - x/L): laminar separation x/L", 0.1199, x_sep, 0.02, src, relative=True)]


def iso_nozzle_points(beta: float, D: float) -> list[tuple[float, float]]:
    """A high-ratio long-radius nozzle (ISO 5167-3:2003 as ../shared/SOURCES.md describes it): a
    quarter ellipse from the pipe wall at the inlet face, semi-axes D/2 along the axis and (D - d)/2
    across, then a cylindrical throat 0.6 d long; the pipe from D before the inlet face [m]."""
    d = beta * D
    a, b = D / 2, (D - d) / 2
    rows = [(-D, D / 2), (0.0, D / 2)]
    rows += [(D / 2 - a * math.cos(u), D / 2 - b * math.sin(u)) for u in np.linspace(0.0, math.pi / 2, 41)[1:]]
    rows.append((D / 2 + 0.6 * d, d / 2))
    return rows


def iso_nozzle_run(beta: float, re_D: float, D: float = 0.1):
    """The nozzle written as a user writes it (an outline file in mm, the flow rate for Re_D, water at
    20 degC, all else default: the wall layer on the default path) and solved; the viscous result."""
    water = fluids.resolve_water(293.15, 101325.0)
    V = re_D * viscosity(water, 293.15, 101325.0) / (water.density * D)
    with tempfile.TemporaryDirectory(prefix="axibore-verify-") as tmp:
        (Path(tmp) / "nozzle.csv").write_text(
            "x,r\n" + "\n".join(f"{x * 1e3:.6f},{r * 1e3:.6f}" for x, r in iso_nozzle_points(beta, D)) + "\n")
        data = {"fluid": {"kind": "water", "temperature": "20 degC"},
                "bore": {"template": "points", "file": "nozzle.csv", "unit": "mm"},
                "inlet": {"flow_rate": f"{V * math.pi * D**2 / 4 * 1e3:.9g} l/s"}, "outlet": {"kind": "exit-plane"}}
        return solve_case(case_from_dict(data, base_dir=Path(tmp))).viscous


def iso_nozzle_rows() -> list[Row]:
    """ISO 5167-3:2003 long-radius nozzle, beta 0.5, at Re_D 1e4 and 1e6. The inviscid C of a
    well-rounded nozzle with a parallel throat is 1 (uniform exit, no loss; derived), tolerance 3e-4.
    The wall layer's change C_inviscid - C_viscous is compared with the standard's 1 - C, tolerances
    those of tests/test_wall_layer_physics.py: 20 % at Re_D 1e4 (1 - C = 0.0497), 25 % at 1e6
    (0.0081; the model falls 24 % short there, and the standard's 1 - C holds its constant 0.0035,
    which is no Reynolds-number effect), and the Reynolds trend, C(1e6) - C(1e4) = 0.0416, within
    25 %. Each tolerance is below the effect it tests; C = 1 (no wall layer) fails all three."""
    src = "ISO 5167-3:2003, long-radius nozzle, C = 0.9965 - 0.00653 beta^0.5 (1e6/Re_D)^0.5"
    beta = 0.5
    lo, hi = iso_nozzle_run(beta, 1e4), iso_nozzle_run(beta, 1e6)

    def change(v) -> float:
        ok = v is not None and v.discharge_coefficient is not None and v.discharge_coefficient_inviscid is not None
        return v.discharge_coefficient_inviscid - v.discharge_coefficient if ok else float("nan")

    c_inv = hi.discharge_coefficient_inviscid if hi is not None and hi.discharge_coefficient_inviscid is not None \
        else float("nan")
    c_lo, c_hi = (iso_long_radius_nozzle_c(beta, v.reynolds_number if v is not None else float("nan"))
                  for v in (lo, hi))
    return [
        _value("ISO long-radius nozzle, beta 0.5: inviscid C", 1.0, c_inv, 3e-4,
               "inviscid flow through a rounded nozzle with a parallel throat: uniform exit, C = 1 (derived)"),
        _value("ISO long-radius nozzle, beta 0.5, Re_D 1e4: C_inviscid - C_viscous", 1.0 - c_lo, change(lo), 0.20,
               src + ": 1 - C", relative=True),
        _value("ISO long-radius nozzle, beta 0.5, Re_D 1e6: C_inviscid - C_viscous", 1.0 - c_hi, change(hi), 0.25,
               src + ": 1 - C", relative=True),
        _value("ISO long-radius nozzle, beta 0.5: C change from Re_D 1e4 to 1e6", c_hi - c_lo, change(lo) - change(hi),
               0.25, src, relative=True),
    ]
