"""Integral boundary layer marched along a wall from the inviscid wall speed (with the displacement
blockage of the section solved in the march when ``blockage`` is given).

Methods and sources
-------------------
- Laminar: the momentum and kinetic-energy integral equations (a two-equation method),
      d theta/ds  = cf/2 - (2 + H) theta/ue due/ds - theta/r dr/ds
      d theta*/ds = 2 CD - 3 theta*/ue due/ds - theta*/r dr/ds     (theta* = H* theta)
  closed by the Falkner-Skan family of similar layers (Falkner & Skan 1931; Hartree 1937), computed in
  ``falkner_skan``: H, cf Re_theta/2 and 2 CD Re_theta/H* as functions of H*, which falls monotonically
  from strong acceleration (beta = 20, where the closure is held) to the separation profile
  (f''(0) = 0, H = 4.03, H* = 1.515). Laminar separation is where H* reaches that least value. The
  method is exact for every member of the family (the flat plate, Hiemenz' stagnation point, wedge
  flows) and puts Howarth's retarded flow's separation at x/L = 0.1197 against the exact 0.1199
  (Thwaites' one-equation method: 0.1231). Marched as the turbulent layer (RK4 on the PCHIP curves,
  substeps limited by the energy equation's relaxation length, theta/theta' and, approaching
  separation, the distance to it), with step doubling: a step whose two ways differ by more than
  LAMINAR_TOLERANCE is halved, so that the layer does not depend on where the stations sit. The start
  is a similar layer (``closure.similar_start``, derived): at a stagnation point (ue = 0 at the first
  station; ue ~ x^m with m from the first two intervals) over the first interval; at a sharp leading
  edge or a pointed start on the axis (Mangler's cone) a thousandth of the first interval in, marched
  from there; a given theta0 at a wall where ue > 0 starts with the flat plate's H*. cf = 2 nu l/(ue theta). A sharp leading edge
  (ue > 0, theta = 0) has an infinite wall shear, reported as NaN at that one station.
- Transition: Michel (1951), Re_theta,tr = 2.9 Re_x^0.4, with x = s, the arc
  length from the wall's upstream end, and Re_x = ue s/nu. Or forced at a given s, or none.
- Turbulent: Head's entrainment method (Head 1958, ARC R&M 3152), as usually cited:
      d theta/ds = cf/2 - (H + 2) theta/ue due/ds - theta/r dr/ds
      d(r ue theta H1)/ds = r ue F(H1),   F = 0.0306 (H1 - 3)^-0.6169
      H1 = 3.3 + 0.8234 (H - 1.1)^-1.287   (H <= 1.6)
      H1 = 3.3 + 1.5501 (H - 0.6778)^-3.064 (H > 1.6)
  with the skin friction cf = cf0(Re_theta) 10^(-0.678 (H - H0(Re_theta))): Schlichting's flat-plate
  law carried to Re_theta, with Ludwieg & Tillmann's (1949) shape dependence (see ``turbulent_cf``;
  their own power law 0.246 10^(-0.678 H) Re_theta^-0.268 is 7-18 % low at Re_x 1e6-1e8), integrated by classical RK4 on the PCHIP interpolants of ue and r (substeps of
  at most TURBULENT_STEP_THETAS momentum thicknesses). Momentum thickness is continuous at
  transition (with the blockage interaction: across the drop of the edge speed there, see
  ``march``); the turbulent shape factor starts at H = 1.4 (a setting; common practice).
  Turbulent separation when H reaches 2.4 (a setting; values of 1.8-2.8 are quoted in the
  literature).

Limits
------
Past separation the march stops; the remaining stations are marked "separated" and their values
are NaN. Near and beyond separation the results are indicative only: the displacement interaction
is the quasi-1D blockage of the section (``blockage``, solved in the march), not the 2D flow about
the displaced wall, so the separation point is an estimate and the flow downstream of it is not
represented. Michel's criterion is a flat-plate, low-disturbance correlation; freestream
turbulence, roughness and laminar separation bubbles move transition. A boundary-layer estimate is
not a turbulence-resolving simulation.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import dataclass, field

import numpy as np

from .closure import (  # noqa: F401  (LAMINAR ... turbulent_cf are this module's names too)
    _FP_LIST,
    _FS_TABLE,
    _H1_KNEE,
    FS_BLASIUS,
    FS_H_SEP,
    FS_HSTAR_MAX,
    FS_HSTAR_SEP,
    head_H,
    head_H1,
    LAMINAR,
    laminar_closure,
    laminar_energy_shape,
    laminar_lists,
    ludwieg_tillmann_cf,
    michel_re_theta,
    SEPARATED,
    SHORT_BUBBLE_RE_DELTA_STAR,
    similar_start,
    STATE_NAMES,
    TURBULENT,
    turbulent_cf,
    TURBULENT_START_H,
)


def _frozen(a):
    a = np.array(a, copy=True)
    a.flags.writeable = False
    return a


@dataclass(frozen=True)
class WallLayer:
    """The wall layer at each station. Arrays are (n,); NaN where separated (or undefined)."""

    s: np.ndarray
    theta: np.ndarray  # momentum thickness [m]
    delta_star: np.ndarray  # displacement thickness [m]
    H: np.ndarray  # shape factor delta*/theta
    cf: np.ndarray  # skin friction tau_w/(rho ue^2/2)
    tau_w: np.ndarray | None  # wall shear [Pa], when the density was given
    state: np.ndarray  # LAMINAR / TURBULENT / SEPARATED per station
    Re_theta: np.ndarray
    lam: np.ndarray  # the pressure-gradient parameter lambda = theta^2/nu due/ds (Pohlhausen's, Thwaites')
    transition_s: float | None
    separation_s: float | None
    separation_kind: str | None = None  # "laminar" | "turbulent" | None
    notes: tuple[str, ...] = field(default_factory=tuple)
    bubble_s: float | None = None  # a short laminar separation bubble (transition placed there)
    ue: np.ndarray | None = None  # the edge speed: the inviscid one given, or with the blockage interaction

    @property
    def state_names(self) -> list[str]:
        return [STATE_NAMES[k] for k in self.state]

    @property
    def attached(self) -> np.ndarray:
        return self.state != SEPARATED


# --- the march ---------------------------------------------------------------------------------


def _crossing(s, f, i):
    """s where f crosses zero between stations i-1 and i (f[i-1] < 0 <= f[i] or the reverse)."""
    if i == 0:
        return float(s[0])
    f0, f1 = f[i - 1], f[i]
    t = f0 / (f0 - f1) if f1 != f0 else 1.0
    return float(s[i - 1] + t * (s[i] - s[i - 1]))


# substeps of the laminar march: at most this share of the energy equation's relaxation length (RK4 is
# stable below 2.8 of it), of theta/|theta'| and of the distance to separation at the rate of H* (see
# ``_laminar``'s max_step), and never below LAMINAR_MIN_STEP of the interval.
LAMINAR_STEP_SHARE = 0.5
LAMINAR_MIN_STEP = 1e-3
LAMINAR_TOLERANCE = 1e-7  # step doubling: the two ways of a step agree within this (relative theta + H*)
LAMINAR_START_SHARE = 1e-3  # the similar start this share of the first interval in (then marched)


def _laminar(edge, theta0, planar):
    """The laminar two-equation march (momentum and kinetic-energy integrals with the Falkner-Skan
    closure, see the module text) over all stations. Returns (theta, H*, s_separation or None, theta there);
    theta and H* are NaN from the laminar separation on.

    Also theta where the march stopped (at the separation), or None. The start: see the module text.
    RK4 with step doubling on the PCHIP interpolants of ue and r (``_rk4_march``)."""
    s, ue, r, nu = edge.s, edge.ue, edge.r, edge.nu
    n = s.size
    theta = np.full(n, np.nan)
    Hs = np.full(n, np.nan)
    k = 0 if planar or r[0] > 0.0 else 1
    i0, x0 = 0, float(s[0])
    if ue[0] == 0.0:
        # a stagnation point: ue ~ x^m, m from the first two intervals (1 at a blunt face); the similar layer
        # at the second station (a cubic curve cannot follow x^m in the first interval), its value also given
        # to the first (theta ~ x^((1 - m)/2): constant at a blunt face)
        u1, u2 = ue[1] * edge.factor(1), ue[2] * edge.factor(2)
        m = float(np.clip(math.log(u2 / u1) / math.log((s[2] - s[0]) / (s[1] - s[0])), 0.0, 4.0))
        hs0, Lam = similar_start(m, k)
        i0, x0 = 1, float(s[1])
        th0 = math.sqrt(Lam * nu[1] * (s[1] - s[0]) / u1)
        theta[:2], Hs[:2] = th0, hs0
    elif theta0 is None or not theta0 > 0.0 or k == 1:
        # a sharp edge (or a pointed start on the axis): the similar layer (m = 0) a small share of the first
        # interval in, marched from there, so that the first interval's own gradient counts
        hs0, Lam = similar_start(0.0, k)
        x0 = float(s[0] + LAMINAR_START_SHARE * (s[1] - s[0]))
        st = edge.at(0, x0)
        u0, nu0 = st[0] / (1.0 - st[_REST]) if edge.coupled else st[0], st[4]
        th0 = math.sqrt(Lam * nu0 * (x0 - s[0]) / u0)
        theta[0], Hs[0] = 0.0, hs0
    else:
        theta[0], Hs[0] = float(theta0), float(FS_BLASIUS[3])
        th0, hs0 = theta[0], Hs[0]
    hs_lo, dhs, tH, tL, tD = laminar_lists()
    last = len(tH) - 2

    def closure_at(hs):  # held at the table's ends (a NaN of a failed trial step at its start)
        t = (hs - hs_lo) / dhs
        if not t > 0.0:
            return 0, 0.0
        if t >= last + 1:
            return last, 1.0
        j = int(t)
        return j, t - j

    def rhs(state, th, hs):
        u, du, rr, dr_, nu_x = state
        th = max(th, 1e-300)
        j, t = closure_at(hs)  # laminar_closure(hs), inline
        H = tH[j] + t * (tH[j + 1] - tH[j])
        ll = tL[j] + t * (tL[j + 1] - tL[j])
        dd = tD[j] + t * (tD[j + 1] - tD[j])
        re = u * th / nu_x
        g = th * du / u
        return ll / re - (2.0 + H) * g - th * dr_ / rr, hs * ((dd - ll) / re + (H - 1.0) * g) / th

    def shape(hs):  # (H, dH/dH*) of the closure, for the interaction (H held, slope 0, beyond the table)
        j, t = closure_at(hs)
        inside = hs_lo < hs < hs_lo + (last + 1) * dhs
        return tH[j] + t * (tH[j + 1] - tH[j]), (tH[j + 1] - tH[j]) / dhs if inside else 0.0

    if edge.coupled:
        rhs = _interacting(rhs, shape, lambda hs, H: hs * (H - 1.0))

    def max_step(i, x, th, hs):
        """The least of: LAMINAR_STEP_SHARE of the energy equation's relaxation length theta Re_theta
        |dH*/d(d - l)|/H* (stability), of theta/|theta'| and, when H* falls, of the distance at which it
        would reach separation (accuracy; the steps shorten towards separation). At least LAMINAR_MIN_STEP
        of the interval."""
        state = edge.station[i] if x == edge.s[i] else edge.at(i, x)
        j, _ = closure_at(hs)
        dg = abs((tD[j + 1] - tL[j + 1]) - (tD[j] - tL[j]))
        h = LAMINAR_STEP_SHARE * th * th * state[0] / state[4] * dhs / (hs * dg) if dg > 0.0 else math.inf
        dth, dhs_ds = rhs(state, th, hs)
        if dth != 0.0:
            h = min(h, LAMINAR_STEP_SHARE * th / abs(dth))
        if dhs_ds < 0.0:
            h = min(h, LAMINAR_STEP_SHARE * (hs - FS_HSTAR_SEP) / -dhs_ds)
        return float(max(h, LAMINAR_MIN_STEP * (edge.s[i + 1] - edge.s[i])))

    stop = _rk4_march(edge, i0, x0, float(th0), float(hs0), rhs, max_step, FS_HSTAR_SEP, theta, Hs, LAMINAR_TOLERANCE)
    if stop is None:
        return theta, Hs, None, None
    gone = s >= stop[0]
    theta[gone], Hs[gone] = np.nan, np.nan
    return theta, Hs, stop[0], stop[1]


# substeps of the turbulent march: at most this many momentum thicknesses per step (the entrainment
# equation relaxes over some 30 theta; RK4 is accurate and stable well below that). The steps also
# end at every station: on the demo at level 0, steps of 4 theta across up to 4 stations (cubic
# Hermite output at the stations) moved the friction force by 19 % (18.15 -> 21.60 N; steps of
# theta / 4: 18.1526 N), and steps of 2 theta across 4 stations were twice as slow at level 2.
TURBULENT_STEP_THETAS = 4.0


def _turbulent(edge, s_start, theta_start, H_start, H_sep):
    """Head's method from ``s_start`` over the stations s > s_start. Returns
    (theta, H, s_separation or None) on those stations (NaN after separation).

    ``edge``: the PCHIP interpolants of ue and r and linear nu (``_EdgeCurves``, nu the turbulent part's).
    Classical RK4 (``_rk4_march``), each station interval cut into substeps of at most
    TURBULENT_STEP_THETAS momentum thicknesses.
    """
    s = edge.s
    out_theta = np.full(s.shape, np.nan)
    out_H1 = np.full(s.shape, np.nan)
    H1_sep = float(head_H1(H_sep))
    H1_0 = float(head_H1(H_start))
    if H1_0 <= H1_sep:
        return out_theta, out_H1, float(s_start)
    if s[-1] <= s_start:
        return out_theta, out_H1, None
    knee, pw_lo, pw_hi = _H1_KNEE, -1.0 / 1.287, -1.0 / 3.064
    lr, lc, lh, last = _FP_LIST[0], _FP_LIST[1], _FP_LIST[2], len(_FP_LIST[0]) - 2
    log, exp, bisect_right = math.log, math.exp, bisect.bisect_right

    def rhs(state, theta, H1):
        theta = max(theta, 1e-300)
        u, du, rr, dr_, nu_x = state
        x = max(H1 - 3.3, 1e-12)  # head_H(H1), inline (the march's inner loop)
        H = 1.1 + (x / 0.8234) ** pw_lo if H1 >= knee else 0.6778 + (x / 1.5501) ** pw_hi
        # turbulent_cf(H, u theta / nu) for one station, inline (its table, interpolated alike)
        lx = log(max(u * theta / nu_x, 1.0))
        j = bisect_right(lr, lx) - 1
        if j < 0:
            j, t = 0, 0.0
        elif j > last:
            j, t = last, 1.0
        else:
            t = (lx - lr[j]) / (lr[j + 1] - lr[j])
        cf = exp(lc[j] + t * (lc[j + 1] - lc[j])) * 10.0 ** (-0.678 * (H - (lh[j] + t * (lh[j + 1] - lh[j]))))
        dtheta = 0.5 * cf - (H + 2.0) * theta / u * du - theta / rr * dr_
        dH1 = 0.0306 * max(H1 - 3.0, 1e-12) ** -0.6169 / theta - H1 * (dr_ / rr + du / u + dtheta / theta)
        return dtheta, dH1

    def shape(H1):  # (H, dH/dH1) of head_H, for the interaction
        x = max(H1 - 3.3, 1e-12)
        if H1 >= knee:
            return 1.1 + (x / 0.8234) ** pw_lo, pw_lo / 0.8234 * (x / 0.8234) ** (pw_lo - 1.0)
        return 0.6778 + (x / 1.5501) ** pw_hi, pw_hi / 1.5501 * (x / 1.5501) ** (pw_hi - 1.0)

    if edge.coupled:
        rhs = _interacting(rhs, shape, lambda H1, H: H1 * (H + 1.0))

    def max_step(i, x, theta, H1):
        return TURBULENT_STEP_THETAS * theta

    i = max(int(np.searchsorted(s, s_start, side="right")) - 1, 0)
    stop = _rk4_march(edge, i, float(s_start), float(theta_start), H1_0, rhs, max_step, H1_sep, out_theta, out_H1)
    with np.errstate(invalid="ignore"):
        return out_theta, np.where(np.isfinite(out_H1), head_H(out_H1), np.nan), None if stop is None else stop[0]


def _hermite_basis(t, h):
    """The cubic Hermite basis at t in [0, 1] of an interval of length h, and its derivatives in s
    (floats or arrays alike: the same arithmetic either way)."""
    t2, t3 = t * t, t * t * t
    return ((2 * t3 - 3 * t2 + 1, t3 - 2 * t2 + t, -2 * t3 + 3 * t2, t3 - t2),
            ((6 * t2 - 6 * t) / h, 3 * t2 - 4 * t + 1, (6 * t - 6 * t2) / h, 3 * t2 - 2 * t))


def _hermite(basis, h, y0, d0, y1, d1):
    """Value and slope of the cubic with values y and slopes d at an interval's ends."""
    (h00, h10, h01, h11), (d00, d10, d01, d11) = basis
    return h00 * y0 + h10 * h * d0 + h01 * y1 + h11 * h * d1, d00 * y0 + d10 * d0 + d01 * y1 + d11 * d1


class _EdgeCurves:
    """The edge state along the wall between stations: ue and r as the cubic Hermite curves of their
    station values and PCHIP slopes, nu linear. ``at(i, x)`` is (ue, due/ds, r, dr/ds, nu) at x in
    interval i; ``mid``/``end``/``station`` hold it for whole-interval steps, vectorised with the same
    arithmetic (the same floats). With ``extra`` curves (value and slope pairs at the stations: the
    blockage interaction, ``_interacting``) each state goes on with their values and slopes."""

    def __init__(self, s, ue, due, r, dr, nu, extra=()):
        self.s, self.ue, self.r, self.nu = s, ue, r, nu
        self.coupled = bool(extra)
        cols = (s, ue, due, r, dr, nu) + tuple(a for pair in extra for a in pair)
        self.lists = tuple(a.tolist() for a in cols)
        gap = s[1:] - s[:-1]
        self.mid = self._all(cols, s[:-1] + 0.5 * gap)
        self.end = self._all(cols, s[:-1] + gap)
        self.station = list(zip(*self.lists[1:]))

    def factor(self, i) -> float:
        """1/(1 - b) at station i, b the rest of the section's blockage (1 without the interaction): the edge
        speed where the layer's own displacement is still nil (its start)."""
        return 1.0 / (1.0 - self.station[i][_REST]) if self.coupled else 1.0

    def at(self, i, x):
        sl, uel, duel, rl, drl, nul = self.lists[:6]
        h = sl[i + 1] - sl[i]
        t = (x - sl[i]) / h
        basis = _hermite_basis(t, h)
        u, du = _hermite(basis, h, uel[i], duel[i], uel[i + 1], duel[i + 1])
        rr, dr_ = _hermite(basis, h, rl[i], drl[i], rl[i + 1], drl[i + 1])
        out = (u, du, rr, dr_, nul[i] + t * (nul[i + 1] - nul[i]))
        if self.coupled:
            ex = self.lists[6:]
            for v, d in zip(ex[0::2], ex[1::2]):
                out += _hermite(basis, h, v[i], d[i], v[i + 1], d[i + 1])
        return out

    @staticmethod
    def _all(cols, x) -> list[tuple]:
        s, ue, due, r, dr, nu = cols[:6]
        h = s[1:] - s[:-1]
        t = (x - s[:-1]) / h
        basis = _hermite_basis(t, h)
        u, du = _hermite(basis, h, ue[:-1], due[:-1], ue[1:], due[1:])
        rr, dr_ = _hermite(basis, h, r[:-1], dr[:-1], r[1:], dr[1:])
        out = [u, du, rr, dr_, nu[:-1] + t * (nu[1:] - nu[:-1])]
        for v, d in zip(cols[6::2], cols[7::2]):
            out += _hermite(basis, h, v[:-1], d[:-1], v[1:], d[1:])
        return list(zip(*(a.tolist() for a in out)))


_REST = 9  # the index of b, the rest of the section's blockage, in a state with the interaction's curves (below)
MAX_BLOCKAGE = 0.5  # the interaction holds the blockage at this (half the section; see march.THICK_FRACTION)


def _interacting(rhs, shape, second):
    """The march's right-hand side with the blockage interaction solved in it (quasi-simultaneous).

    The edge speed is the inviscid U over (1 - B), B = b + theta (c1 H + c2) the blockage of the section:
    b that of the rest of the section (other walls, deficit fluid carried from earlier layers), the layer's
    own displacement theta (c1 H + c2) with c1 = (P/A)(1 + k) rho_ref/rho_e, c2 = (P/A) k rho_ref/rho_e (P/A
    the wall's perimeter over the flow area; k a gas layer's compressible part of H, theta marched in reference
    variables; liquids k = 0, c1 = P/A). The state then carries U, U', r, r', nu, c1, c1', c2, c2', b, b'
    (``_EdgeCurves`` with extra curves). Both integral equations are affine in w = ue'/ue, y' = z + q w,
    y = (theta, second variable), q = (-(H + 2) theta, ``second(y2, H)``): H* (H - 1) for the energy
    equation, H1 (H + 1) for the entrainment equation (derived from the right-hand sides). And w = w0 + c.y'
    with w0 = U'/U + (b' + theta (c1' H + c2'))/(1 - B), c = ((c1 H + c2), theta c1 dH/dy2)/(1 - B), so
    y' = z + q (c.z)/(1 - c.q) (derived; Sherman-Morrison). c.q < 0 for both closures (H falls as H* or H1
    rises), so the solve is regular up to separation. ``shape(y2)`` gives (H, dH/dy2). A state of five
    entries (no interaction) goes to ``rhs`` unchanged."""

    def coupled(state, a, b):
        if len(state) == 5 or not state[0] > 0.0:  # no interaction; or a stagnation point's U = 0
            return rhs(state[:5], a, b)
        U, dU, rr, dr_, nu_x, c1, dc1, c2, dc2, br, dbr = state
        H, dH = shape(b)
        th = max(a, 0.0)
        B = br + th * (c1 * H + c2)
        held = B > MAX_BLOCKAGE
        f = 1.0 / (1.0 - min(B, MAX_BLOCKAGE))
        u = U * f
        w0 = dU / U + (0.0 if held else (dbr + th * (dc1 * H + dc2)) * f)
        za, zb = rhs((u, u * w0, rr, dr_, nu_x), a, b)
        if held:
            return za, zb
        qa, qb = -(H + 2.0) * th, second(b, H)  # d(y')/dw of both integral equations (above)
        ca, cb = (c1 * H + c2) * f, th * c1 * dH * f
        m = (ca * za + cb * zb) / (1.0 - (ca * qa + cb * qb))
        return za + qa * m, zb + qb * m

    return coupled


def _rk4_step(rhs, s0, s_mid, s_end, a, b, h):
    k1 = rhs(s0, a, b)
    k2 = rhs(s_mid, a + 0.5 * h * k1[0], b + 0.5 * h * k1[1])
    k3 = rhs(s_mid, a + 0.5 * h * k2[0], b + 0.5 * h * k2[1])
    k4 = rhs(s_end, a + h * k3[0], b + h * k3[1])
    return a + h / 6.0 * (k1[0] + 2 * k2[0] + 2 * k3[0] + k4[0]), b + h / 6.0 * (k1[1] + 2 * k2[1] + 2 * k3[1] + k4[1])


# a step that fails (theta not positive and finite) or misses the error tolerance is halved, down to this
# share of its interval
RK4_MIN_SHARE = 1e-6


def _rk4_march(edge, i, x, a, b, rhs, max_step, b_stop, out_a, out_b, tolerance=None):
    """Classical RK4 for the two integral variables (a, b) = (theta, H1 or H*) from x in interval i to the
    wall's end, on ``edge``'s curves; substeps of at most max_step(i, x, a, b), ending at every station,
    where (a, b) is written to out_a, out_b. A step whose theta fails is halved and taken again. With a
    ``tolerance`` each step is also taken as two half steps (step doubling): kept (the halves' result)
    where the two agree within it (relative in a, absolute in b), else halved. Stops where b falls to
    b_stop (separation) and returns (that s, a there), linear in b within the step; else None. The march
    is sequential by nature (an initial-value problem along the wall); its loop runs over stations with
    plain floats."""
    sl, n = edge.lists[0], len(edge.lists[0])
    s_end, s_end_at = None, None
    while i < n - 1:
        x_end = sl[i + 1]
        gap = x_end - sl[i]
        h_cap = None
        while x < x_end:
            h = min(x_end - x, max_step(i, x, a, b))
            if h_cap is not None:
                h = min(h, h_cap)
            if x_end - x - h < 1e-12 * gap:
                h = x_end - x
            # the edge state at the step's start, middle and end (the start is the last step's end)
            if x == sl[i] and h == x_end - x:
                s0, s_mid, s_end = edge.station[i], edge.mid[i], edge.end[i]
            else:
                s0 = s_end if s_end_at == (i, x) else edge.at(i, x)
                s_mid, s_end = edge.at(i, x + 0.5 * h), edge.at(i, x + h)
            s_end_at = (i, x + h)
            a_n, b_n = _rk4_step(rhs, s0, s_mid, s_end, a, b, h)
            if tolerance is not None:
                q1, q3 = edge.at(i, x + 0.25 * h), edge.at(i, x + 0.75 * h)
                a_1, b_1 = _rk4_step(rhs, s0, q1, s_mid, a, b, 0.5 * h)
                a_2, b_2 = _rk4_step(rhs, s_mid, q3, s_end, a_1, b_1, 0.5 * h)
                ok = a_1 > 0.0 and a_2 > 0.0 and math.isfinite(a_2) and math.isfinite(b_2)
                err = abs(a_n - a_2) / a_2 + abs(b_n - b_2) if ok else math.inf
                if err > tolerance and h > RK4_MIN_SHARE * gap:
                    h_cap, s_end_at = 0.5 * h, None
                    continue
                if b_1 <= b_stop:  # the stop in the first half
                    a_n, b_n, h = a_1, b_1, 0.5 * h
                elif b_2 <= b_stop:  # in the second: from the middle
                    x, a, b, a_n, b_n, h = x + 0.5 * h, a_1, b_1, a_2, b_2, 0.5 * h
                else:
                    a_n, b_n = a_2, b_2
            elif not (a_n > 0.0 and math.isfinite(a_n)) and h > RK4_MIN_SHARE * gap:
                h_cap, s_end_at = 0.5 * h, None
                continue
            if not (b_n > b_stop and a_n > 0.0 and math.isfinite(a_n)):
                f = (b - b_stop) / (b - b_n) if math.isfinite(b_n) and b != b_n else 0.0
                f = min(max(f, 0.0), 1.0)
                return x + f * h, (a + f * (a_n - a) if math.isfinite(a_n) else a)
            x, a, b = (x_end if h == x_end - x else x + h), a_n, b_n
            h_cap = None if h_cap is None else 2.0 * h_cap  # grow back after a halved step
        i += 1
        out_a[i], out_b[i] = a, b
    return None


def march(
    s,
    r,
    ue,
    nu,
    *,
    planar: bool = False,
    start: str = "laminar",
    theta0: float | None = None,
    transition: str | float = "michel",
    turbulent_separation_H: float = 2.4,
    turbulent_start_H: float = TURBULENT_START_H,
    rho=None,
    bubble_re_delta_star: float | None = None,
    edge_rho=None,
    turbulent_state: tuple | None = None,
    blockage: tuple | None = None,
) -> WallLayer:
    """March the wall layer along the wall.

    s: (n,) arc length from the wall's upstream end, increasing [m]; r: (n,) wall radius [m]
    (ignored when ``planar``); ue: (n,) inviscid edge speed (> 0; 0 allowed at the first station,
    a stagnation point) [m/s]; nu: kinematic viscosity, scalar or (n,) [m^2/s].
    start: "laminar" (the two-equation method from the first station, with ``theta0`` if given, else from zero;
    ``theta0`` is not used at a stagnation point, ue = 0, or a pointed start on the axis, r = 0, where the
    layer starts as the similar one)
    or "turbulent" (Head from the first station, ``theta0`` required, H = ``turbulent_start_H``).
    transition: "michel", "none", or an arc length where it is forced.
    rho: density, scalar or (n,) [kg/m^3]; if given, the wall shear ``tau_w`` is returned.
    bubble_re_delta_star: if given, a laminar layer that separates before its transition with the
    displacement-thickness Reynolds number ue delta*/nu at or above this value forms a short separation
    bubble: transition is placed at the laminar separation and the layer goes on turbulent (theta
    continuous) instead of being marked separated (``bubble_s``). See ``SHORT_BUBBLE_RE_DELTA_STAR``.
    edge_rho, turbulent_state: a gas layer by reference states (``march._reference_state``): ``rho`` and
    ``nu`` are then the laminar part's reference state, ``turbulent_state`` = (rho_t, nu_t) the turbulent
    part's, and ``edge_rho`` the density at the layer's edge. Each part is marched in its own reference
    variables, in which the momentum thickness is theta_ref = theta rho_e/rho_ref (on a flat plate the march
    integrates d theta_ref/ds = cf_ref/2 = tau_w/(rho_ref ue^2), where the momentum balance of the layer is
    d theta/ds = tau_w/(rho_e ue^2); derived); theta (continuous at transition but for the interaction's
    jump), delta* = H theta and cf = 2 tau_w/(rho_e ue^2) come out at the edge state, theta0 goes in at it,
    and Re_theta is the closure's ue theta_ref/nu_ref.
    blockage: (g, b, k) at the stations, to solve the displacement interaction in the march
    (``_interacting``): the edge speed is then ue / (1 - B), ue the inviscid speed given, B = b + g delta*
    the blockage of the section (g = P/A, the wall's perimeter over the flow area; b the rest of the
    section's; delta* = (H + k (H + 1)) theta at the edge state, k a gas layer's compressible part, 0 for
    liquids). The layer's ``ue`` is that edge speed.
    """
    from scipy.interpolate import PchipInterpolator

    s = np.asarray(s, dtype=float)
    n = s.size
    ue = np.broadcast_to(np.asarray(ue, dtype=float), s.shape).copy()
    nu = np.broadcast_to(np.asarray(nu, dtype=float), s.shape).copy()
    r = np.ones(n) if planar else np.broadcast_to(np.asarray(r, dtype=float), s.shape).copy()
    if s.ndim != 1 or n < 3:
        raise ValueError("s must be a 1D array of at least 3 stations")
    if np.any(np.diff(s) <= 0.0):
        raise ValueError("s must increase strictly along the wall")
    if np.any(ue[1:] <= 0.0) or ue[0] < 0.0:
        raise ValueError("ue must be positive (zero allowed only at the first station, a stagnation point)")
    if np.any(nu <= 0.0):
        raise ValueError("nu must be positive")
    if not planar and (np.any(r[1:] <= 0.0) or r[0] < 0.0):
        raise ValueError("r must be positive for an axisymmetric wall (zero allowed only at the first station)")
    if start not in ("laminar", "turbulent"):
        raise ValueError(f"start must be 'laminar' or 'turbulent', got {start!r}")
    if start == "turbulent" and (theta0 is None or not theta0 > 0.0):
        raise ValueError("start='turbulent' needs a positive theta0")
    if not (transition in ("michel", "none") or isinstance(transition, (int, float))):
        raise ValueError(f"transition must be 'michel', 'none' or an arc length, got {transition!r}")

    due = PchipInterpolator(s, ue).derivative()(s)
    dr = np.zeros(n) if planar else PchipInterpolator(s, r).derivative()(s)
    gas = edge_rho is not None
    if gas:
        rho_e = np.broadcast_to(np.asarray(edge_rho, dtype=float), s.shape)
        rho_l = np.broadcast_to(np.asarray(rho, dtype=float), s.shape)
        rho_t, nu_t = (np.broadcast_to(np.asarray(a, dtype=float), s.shape) for a in (turbulent_state or (rho_l, nu)))
        if theta0 is not None:  # given at the edge state: into the reference variables of the part that starts
            theta0 = float(theta0 * rho_e[0] / (rho_t[0] if start == "turbulent" else rho_l[0]))
    else:
        rho_l = rho_t = None
        nu_t = nu

    state = np.full(n, LAMINAR, dtype=np.int8)
    theta = np.full(n, np.nan)
    H = np.full(n, np.nan)
    cf = np.full(n, np.nan)
    lam = np.full(n, np.nan)
    notes: list[str] = []
    transition_s = None
    separation_s = None
    separation_kind = None
    bubble_s = None

    U = ue  # the inviscid edge speed; ``ue`` becomes the coupled one where the layer is known
    if blockage is None:
        edge_l = _EdgeCurves(s, ue, due, r, dr, nu)
        edge_t = edge_l if nu_t is nu else _EdgeCurves(s, ue, due, r, dr, nu_t)
        ue_of = None
    else:
        g, b_rest, kc = (np.broadcast_to(np.asarray(a, dtype=float), s.shape) for a in blockage)
        ratio_l, ratio_t = (rho_l / rho_e, rho_t / rho_e) if gas else (1.0, 1.0)

        def curves(ratio):
            c1, c2 = g * (1.0 + kc) * ratio, g * kc * ratio
            return tuple((a, PchipInterpolator(s, a).derivative()(s)) for a in (c1, c2, b_rest)), (c1, c2)

        (ex_l, c_l), (ex_t, c_t) = curves(ratio_l), curves(ratio_t)
        edge_l = _EdgeCurves(s, ue, due, r, dr, nu, ex_l)
        edge_t = _EdgeCurves(s, ue, due, r, dr, nu_t, ex_t)

        def ue_of(th, H, turbulent):  # the coupled edge speed at the stations where the layer is known
            c1, c2 = np.where(turbulent, c_t[0], c_l[0]), np.where(turbulent, c_t[1], c_l[1])
            B = b_rest + np.where(np.isfinite(th) & np.isfinite(H), th * (c1 * H + c2), 0.0)
            return U / (1.0 - np.minimum(B, MAX_BLOCKAGE))
    if start == "laminar":
        th_l, hs_l, s_lsep, th_lsep = _laminar(edge_l, theta0, planar)
        H_l, l_l, _ = laminar_closure(np.where(np.isfinite(hs_l), hs_l, FS_BLASIUS[3]))  # NaN past separation: unused
        if ue_of is not None:
            ue = ue_of(th_l, H_l, False)
            due = PchipInterpolator(s, ue).derivative()(s)
        # laminar separation: the energy shape factor falls to the separation profile's
        i_sep = int(np.searchsorted(s, s_lsep)) if s_lsep is not None else n
        # transition
        i_tr = n
        if transition == "michel":
            re_x = ue * s / nu
            re_th = ue * th_l / nu
            f = np.where(s > 0.0, re_th - michel_re_theta(re_x), -np.inf)
            hit = np.flatnonzero(f[:i_sep] >= 0.0)
            if hit.size:
                i_tr = int(hit[0])
                fi = f.copy()
                fi[~np.isfinite(fi)] = -1.0
                transition_s = _crossing(s, fi, i_tr)
        elif transition != "none":
            st = float(transition)
            if st <= s[-1] and (s_lsep is None or st < s_lsep):
                i_tr = int(np.searchsorted(s, st))
                transition_s = max(st, float(s[0]))
        if bubble_re_delta_star is not None and s_lsep is not None and transition_s is None:
            # the displacement-thickness Reynolds number at the laminar separation (H of the separation profile)
            re_ds = float(np.interp(s_lsep, s, ue) * th_lsep / np.interp(s_lsep, s, nu)) * FS_H_SEP
            if re_ds >= bubble_re_delta_star:
                bubble_s = transition_s = float(s_lsep)
                i_tr = i_sep
                notes.append(f"laminar separation at s = {s_lsep:.6g} m with ue delta*/nu = {re_ds:.4g}: a short bubble, "
                             "transition assumed there and the layer goes on turbulent")
        n_lam = min(i_tr, i_sep)
        sl = slice(0, n_lam)
        theta[sl] = th_l[sl]
        H[sl], lvals = H_l[sl], l_l[sl]
        lam[sl] = th_l[sl] ** 2 / nu[sl] * due[sl]
        held = hs_l[sl] > FS_HSTAR_MAX
        with np.errstate(divide="ignore", invalid="ignore"):
            cf[sl] = np.where((theta[sl] > 0.0) & (ue[sl] > 0.0), 2.0 * nu[sl] * lvals / (ue[sl] * theta[sl]), np.nan)
        if n_lam < n and transition_s is None:
            separation_s = s_lsep
            separation_kind = "laminar"
            state[n_lam:] = SEPARATED
        elif n_lam < n:
            th_tr = th_lsep if transition_s == bubble_s else float(np.interp(transition_s, s[:i_sep], th_l[:i_sep]))
            if gas:  # theta continuous at the edge state: from the laminar part's reference variables to the turbulent's
                th_tr *= float(np.interp(transition_s, s, rho_l)) / float(np.interp(transition_s, s, rho_t))
            if ue_of is not None:
                # with the interaction the displacement falls at transition (H from the laminar value to the turbulent
                # start's) and the edge speed with it, at one point: across that drop the momentum integral, with no
                # length for friction, gives theta_t = theta_l (ue_l/ue_t)^(H + 2) at the turbulent start's H (derived;
                # ue_t depends on theta_t, a contraction solved by substitution)
                u_l = float(np.interp(transition_s, s[:max(i_sep, 1)], ue[:max(i_sep, 1)]))
                U_tr, b_tr, c1, c2 = (float(np.interp(transition_s, s, a)) for a in (U, b_rest, c_t[0], c_t[1]))
                th_l_tr = th_tr
                for _ in range(50):
                    u_t = U_tr / (1.0 - min(b_tr + th_tr * (c1 * turbulent_start_H + c2), MAX_BLOCKAGE))
                    th_new = th_l_tr * (u_l / u_t) ** (turbulent_start_H + 2.0)
                    done = abs(th_new - th_tr) <= 1e-12 * th_tr
                    th_tr = th_new
                    if done:
                        break
            s_start, th_start = transition_s, th_tr
    else:
        n_lam = 0
        held = np.zeros(0, dtype=bool)
        s_start, th_start = float(s[0]), float(theta0)

    if n_lam < n and separation_kind is None:
        mask = np.arange(n) >= n_lam
        th_t, H_t, s_tsep = _turbulent(edge_t, s_start, th_start, turbulent_start_H, turbulent_separation_H)
        at_start = np.isclose(s, s_start, rtol=0.0, atol=1e-12 * max(1.0, abs(s_start))) & mask
        th_t[at_start] = th_start
        H_t[at_start] = turbulent_start_H
        theta[mask] = th_t[mask]
        H[mask] = H_t[mask]
        state[mask] = TURBULENT
        if s_tsep is not None:
            separation_s = s_tsep
            separation_kind = "turbulent"
            gone = mask & ((s >= s_tsep) | np.isnan(th_t))
            theta[gone] = np.nan
            H[gone] = np.nan
            state[gone] = SEPARATED
        good = mask & (state == TURBULENT)
        if ue_of is not None:
            ue = np.where(good, ue_of(theta, H, True), ue)
            due = PchipInterpolator(s, ue).derivative()(s)
        cf[good] = turbulent_cf(H[good], ue[good] * theta[good] / nu_t[good])
        lam[good] = theta[good] ** 2 / nu_t[good] * due[good]

    turb = state == TURBULENT
    re_theta = ue * theta / np.where(turb, nu_t, nu)
    tau_w = None
    if rho is not None:
        rho_a = np.broadcast_to(np.asarray(rho, dtype=float), s.shape)
        if gas:
            rho_a = np.where(turb, rho_t, rho_l)
        tau_w = 0.5 * rho_a * ue**2 * cf
        if start == "laminar" and ue[0] == 0.0 and state[0] == LAMINAR:
            tau_w[0] = 0.0  # stagnation point: mu ue l/theta with ue = 0
    if gas:  # from the reference variables to the edge state (see the docstring)
        ratio = np.where(turb, rho_t, rho_l) / rho_e
        theta = theta * ratio
        cf = cf * ratio
    if start == "laminar" and theta[0] == 0.0:
        notes.append("sharp leading edge at the first station: wall shear infinite there (NaN)")
    if separation_kind is not None:
        notes.append(
            f"{separation_kind} separation at s = {separation_s:.6g} m: the rest of the wall is marked separated"
            " (values NaN); results near separation are indicative only"
        )
    if np.any(held):
        notes.append("laminar layer accelerated beyond the Falkner-Skan layers tabulated (beta above "
                     f"{_FS_TABLE[0, 0]:g}): its closure held at their end")

    return WallLayer(
        s=_frozen(s),
        theta=_frozen(theta),
        delta_star=_frozen(H * theta),
        H=_frozen(H),
        cf=_frozen(cf),
        tau_w=None if tau_w is None else _frozen(tau_w),
        state=_frozen(state),
        Re_theta=_frozen(re_theta),
        lam=_frozen(lam),
        transition_s=transition_s,
        separation_s=separation_s,
        separation_kind=separation_kind,
        notes=tuple(notes),
        bubble_s=bubble_s,
        ue=_frozen(ue),
    )
