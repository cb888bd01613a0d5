"""Exact solutions the solver is checked against (used by the tests and by ``axibore verify``).

Each problem meshes its own domain, solves, and returns computed and exact values. Sources are
named beside each problem.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .geometry import Segment
from .mesh import mesh_loop
from .mesh.session import add_loop_surface, generate, gmsh_session
from .solvers.potential import BoundaryCondition, solve_potential
from .numerics.reconstruct import boundary_gradients


@dataclass(frozen=True)
class ConeSinkResult:
    h: float
    cells: int
    wall_cp_rms_error: float  # rms over the wall of |Cp - Cp_exact|, Cp on q(r1)
    wall_cp_max_error: float
    wall_force: float  # rho = 1, p0 = 0
    wall_force_exact: float
    flow_rate: float
    flow_rate_exact: float


def cone_sink(h: float, half_angle_deg: float = 30.0, r1: float = 0.5, r2: float = 1.5, Q: float = 1.0,
              mapped: bool = True) -> ConeSinkResult:
    """Radial flow into a point sink at the apex of a cone, between spherical caps r1 < r2.

    Exact (derived from the point-sink potential phi = Q / (Omega r); a solid angle Omega of the
    sink's flow, e.g. Batchelor, An Introduction to Fluid Dynamics, 1967, sec. 2.5): speed q = Q / (Omega r^2),
    Omega = 2 pi (1 - cos alpha), phi = Q / (Omega r), p = p0 - rho q^2 / 2; axial force on the
    cone wall between the caps pi sin^2(alpha) [p0 (r2^2 - r1^2) - (rho/2)(Q/Omega)^2 (r1^-2 - r2^-2)].
    The caps are equipotentials and take the exact phi (Dirichlet); the wall has no normal flow.
    """
    al = math.radians(half_angle_deg)
    om = 2 * math.pi * (1 - math.cos(al))
    ca, sa = math.cos(al), math.sin(al)
    loop = [
        ("axis", Segment((-r2, 0.0), (-r1, 0.0))),
        ("outlet", Segment((-r1, 0.0), (-r1 * ca, r1 * sa), "arc", r1)),
        ("wall", Segment((-r1 * ca, r1 * sa), (-r2 * ca, r2 * sa))),
        ("inlet", Segment((-r2 * ca, r2 * sa), (-r2, 0.0), "arc", -r2)),
    ]
    mesh = mesh_loop(loop, h, "quads" if mapped else "triangles", mapped=mapped)
    xf = mesh.face_centroid

    def phi_exact(p):
        return Q / (om * np.hypot(p[:, 0], p[:, 1]))

    bcs = {
        "inlet": BoundaryCondition("value", phi_exact(xf[mesh.boundary["inlet"]])),
        "outlet": BoundaryCondition("value", phi_exact(xf[mesh.boundary["outlet"]])),
        "wall": BoundaryCondition("flux", 0.0),
        "axis": BoundaryCondition("flux", 0.0),
    }
    field = solve_potential(mesh, bcs)
    wf = mesh.boundary["wall"]
    g = boundary_gradients(mesh, field.phi, wf, field.is_value, field.boundary_data)
    rho_s = np.hypot(xf[wf, 0], xf[wf, 1])
    q_ref = Q / (om * r1**2)
    cp = -(g[0] ** 2 + g[1] ** 2) / q_ref**2
    cp_exact = -((Q / (om * rho_s**2)) ** 2) / q_ref**2
    err = np.abs(cp - cp_exact)
    p = -0.5 * (g[0] ** 2 + g[1] ** 2)
    force = mesh.revolution * float(np.sum(p * mesh.face_normal[wf, 0] * mesh.face_area[wf]))
    force_exact = math.pi * sa**2 * (-0.5 * (Q / om) ** 2 * (r1**-2 - r2**-2))
    flow = mesh.revolution * float(field.face_flux[mesh.boundary["outlet"]].sum())
    return ConeSinkResult(h, mesh.n_cells, float(np.sqrt(np.mean(err**2))), float(err.max()), force, force_exact, flow, Q)


def observed_order(h: np.ndarray, err: np.ndarray) -> float:
    """Least-squares slope of log(err) against log(h)."""
    return float(np.polyfit(np.log(h), np.log(err), 1)[0])


@dataclass(frozen=True)
class SphereResult:
    h: float
    cells: int
    cp_rms_error: float
    cp_min: float
    front_force_coefficient: float  # front-hemisphere force / (q pi R^2)
    net_force_coefficient: float


def sphere_in_stream(h: float, R: float = 1.0, R_far: float = 6.0) -> SphereResult:
    """Sphere of radius R in a uniform stream U = 1 (Lamb, Hydrodynamics, 6th ed., 1932, ch. VI).

    Exact: phi = U (rho + R^3 / (2 rho^2)) cos theta; surface Cp = 1 - (9/4) sin^2 theta,
    Cp_min = -1.25; zero net axial force; front hemisphere -(1/8) q pi R^2 (derived). The exact
    phi is imposed on a far sphere of radius R_far; triangles, refined towards the body.
    """
    loop = [
        ("axis", Segment((-R_far, 0.0), (-R, 0.0))),
        ("wall", Segment((-R, 0.0), (0.0, R), "arc", R)),
        ("wall", Segment((0.0, R), (R, 0.0), "arc", R)),
        ("axis", Segment((R, 0.0), (R_far, 0.0))),
        ("outlet", Segment((R_far, 0.0), (0.0, R_far), "arc", -R_far)),
        ("outlet", Segment((0.0, R_far), (-R_far, 0.0), "arc", -R_far)),
    ]
    mesh = mesh_sphere(loop, h, R)
    xf = mesh.face_centroid

    def phi_exact(p):
        rho = np.hypot(p[:, 0], p[:, 1])
        return (rho + R**3 / (2 * rho**2)) * p[:, 0] / rho

    bcs = {"outlet": BoundaryCondition("value", phi_exact(xf[mesh.boundary["outlet"]])),
           "wall": BoundaryCondition("flux", 0.0), "axis": BoundaryCondition("flux", 0.0)}
    field = solve_potential(mesh, bcs)
    wf = mesh.boundary["wall"]
    g = boundary_gradients(mesh, field.phi, wf, field.is_value, field.boundary_data)
    cp = 1.0 - (g[0] ** 2 + g[1] ** 2)
    theta = np.arctan2(xf[wf, 1], -xf[wf, 0])  # from the front stagnation point
    cp_exact = 1.0 - 2.25 * np.sin(theta) ** 2
    # force coefficient on q pi R^2 with q = 1/2: p - p_inf = q Cp
    dF = mesh.revolution * 0.5 * cp * mesh.face_normal[wf, 0] * mesh.face_area[wf] / (0.5 * math.pi * R**2)
    front = xf[wf, 0] < 0
    return SphereResult(h, mesh.n_cells, float(np.sqrt(np.mean((cp - cp_exact) ** 2))), float(cp.min()),
                        float(dF[front].sum()), float(dF.sum()))


def mesh_sphere(loop, h: float, R: float):
    """Triangles of size h on the body, growing to 8 h at the far boundary."""
    with gmsh_session("sphere") as gmsh:
        _, groups = add_loop_surface(gmsh, loop, h, 1e-9 * R)
        f = gmsh.model.mesh.field
        d = f.add("MathEval")
        f.setString(d, "F", f"{h} * (1 + 1.4 * (Sqrt(x*x + y*y) - {R}) / {R})")
        f.setAsBackgroundMesh(d)
        gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        return generate(gmsh, groups, [1])


# --- closed forms the gas, free-jet and wall-layer rows are compared with --------------------------
# Written out here from their sources, independently of the solvers' own gas and layer functions.


def isentropic_mass_flow(area: float, p0: float, T0: float, p: float, R: float, g: float) -> float:
    """Isentropic mass flow of an ideal gas through ``area`` where the static pressure is ``p``
    (NACA Report 1135, 1953, the isentropic relations): with pr = p / p0 not below the critical
    ratio (2/(g+1))^(g/(g-1)), mdot = A p0 sqrt(2 g / ((g-1) R T0)) pr^(1/g) sqrt(1 - pr^((g-1)/g))
    (derived: rho = rho0 pr^(1/g), u^2 = 2 cp T0 (1 - pr^((g-1)/g))); below it the choked flow,
    the same expression at the critical ratio: A p0 sqrt(g / (R T0)) (2/(g+1))^((g+1)/(2(g-1)))."""
    pr = max(p / p0, (2.0 / (g + 1.0)) ** (g / (g - 1.0)))
    return area * p0 * math.sqrt(2.0 * g / ((g - 1.0) * R * T0)) * pr ** (1.0 / g) * math.sqrt(1.0 - pr ** ((g - 1.0) / g))


def kliegel_levine_cd(rc_ratio: float, g: float) -> float:
    """Throat discharge coefficient of a nozzle with a circular-arc throat of wall radius Rc,
    rc_ratio = Rc / r* (Kliegel & Levine 1969, "Transonic flow in small throat radius of curvature
    nozzles", AIAA J. 7(7), correcting Hall 1962, Q. J. Mech. Appl. Math. 15(4)), L = Rc/r* + 1:
    Cd = 1 - (g+1)/L^2 [1/96 - (8g - 27)/(2304 L) + (754 g^2 - 757 g + 3615)/(276480 L^2)]."""
    L = rc_ratio + 1.0
    return 1.0 - (g + 1.0) / L**2 * (1.0 / 96.0 - (8.0 * g - 27.0) / (2304.0 * L)
                                     + (754.0 * g**2 - 757.0 * g + 3615.0) / (276480.0 * L**2))


def borda_contraction(beta: float) -> float:
    """Contraction coefficient of a re-entrant (Borda) tube of area A drawing from a reservoir of area
    A / beta (derived from Borda's momentum argument, Encyclopaedia Britannica, 11th ed., 1911,
    "Hydraulics" s.37, which gives 1/2 for an infinite reservoir): the walls round the tube see the
    total head H, the inlet plane H - rho U^2 / 2 and carries the momentum rho U^2 A / beta, so
    rho V^2 Cc A = H A + rho U^2 A / (2 beta) with V^2 = 2 H / rho and U = beta Cc V:
    Cc = (1 + beta Cc^2) / 2, i.e. Cc = (1 - sqrt(1 - beta)) / beta (-> 1/2 as beta -> 0)."""
    return (1.0 - math.sqrt(1.0 - beta)) / beta if beta > 0 else 0.5


def channel_contraction(a: float, opening_ratio: float) -> float:
    """Contraction coefficient of the planar jet from a channel of half width B closed by walls that meet
    the axis at the angle ``a`` (radians; pi/2 a slot in an end wall) and end at the lip, half width b;
    ``opening_ratio`` = b / B (0: an infinite vessel, Kirchhoff's problem). Derived from the hodograph
    as geometry.jet.kirchhoff_contraction, with the channel's stream as a source: the complex velocity
    (dw/dz)/V of the half flow fills the sector 0 < arg < a of the unit disc, the channel wall and the axis
    on its real side, with the channel's stream at zeta = U/V, U = Cc V b / B (continuity). tau = zeta^(pi/a)
    and s = -(tau + 1/tau)/2 map the sector to the upper half plane, the far jet to s = -1 and the channel's
    stream to s = -T, T = (tau_U + 1/tau_U)/2, so w = (Q/pi) [log(s + T) - log(s + 1)] + const. On the free
    streamline s = -cos u and dz = (Q / (pi V)) exp(-i a u / pi) [1/(s + T) - 1/(s + 1)] ds: the lip stands
    above the far jet by (Q / (pi V)) (I - J), I = integral_0^pi sin(a u / pi) cot(u / 2) du, J = integral_0^pi
    sin(a u / pi) sin u / (T - cos u) du, so Cc = pi / (pi + I - J), solved together with U (Brent's method).
    Checks: at a = pi, J = pi (T - sqrt(T^2 - 1)) = pi U / V, so Cc = 1 / (2 - beta Cc), Borda's momentum
    result (borda_contraction, planar beta = b / B); at b / B = 1/20 a slot gives 0.6113116, 2.96e-4 above
    Kirchhoff's pi / (pi + 2) (for small U the term is (8/3) (U/V)^2 Cc^2 / pi); walls at 45 deg 5e-7 above."""
    from scipy.integrate import quad
    from scipy.optimize import brentq

    if not (0.0 < a <= math.pi and 0.0 <= opening_ratio < 1.0):
        raise ValueError(f"channel_contraction: wall angle {a!r} rad (0 < a <= pi) and opening ratio {opening_ratio!r} "
                         "(0 <= b/B < 1)")

    def integral(f):
        return quad(f, 0.0, math.pi, limit=200, epsabs=1e-13, epsrel=1e-13)[0]

    I = integral(lambda u: math.sin(a * u / math.pi) / math.tan(0.5 * u) if u > 0 else 2.0 * a / math.pi)
    kirchhoff = math.pi / (math.pi + I)

    def contraction(cc: float) -> float:  # Cc from the stream that cc implies
        tau = (cc * opening_ratio) ** (math.pi / a)
        if tau < 1e-150:  # the stream is still: Kirchhoff's vessel
            return kirchhoff
        T = 0.5 * (tau + 1.0 / tau)
        return math.pi / (math.pi + I - integral(lambda u: math.sin(a * u / math.pi) * math.sin(u) / (T - math.cos(u))))

    if contraction(kirchhoff) - kirchhoff < 1e-15:
        return kirchhoff
    # the stream raises Cc, and Cc < 1: a root of contraction(cc) - cc between Kirchhoff's value and 1
    return brentq(lambda cc: contraction(cc) - cc, kirchhoff, 1.0, xtol=1e-15, rtol=1e-15)


def iso_long_radius_nozzle_c(beta: float, re_D: float) -> float:
    """Discharge coefficient of an ISO 5167-3:2003 long-radius nozzle:
    C = 0.9965 - 0.00653 beta^0.5 (1e6 / Re_D)^0.5 (0.2 <= beta <= 0.8, 1e4 <= Re_D <= 1e7)."""
    return 0.9965 - 0.00653 * beta**0.5 * (1e6 / re_D) ** 0.5
