"""The closures of the integral layer methods: Thwaites' laminar functions, Head's shape and
entrainment functions, the turbulent skin friction (Schlichting's flat plate carried to Re_theta with
Ludwieg & Tillmann's shape dependence) and Michel's transition criterion. Sources and derivations
are in ``layer``'s module text and beside each constant."""

from __future__ import annotations

import math

import numpy as np


LAMINAR = 0
TURBULENT = 1
SEPARATED = 2
STATE_NAMES = ("laminar", "turbulent", "separated")

LAMINAR_SEPARATION_LAMBDA = -0.09  # Thwaites (White, sec. 4-6)
LAMBDA_MAX = 0.25  # end of Thwaites' table; l and H held beyond
MICHEL_COEFF = 2.9  # Michel (1951)
MICHEL_EXP = 0.4
TURBULENT_START_H = 1.4  # common practice
# A laminar layer that separates at a displacement-thickness Reynolds number ue delta*/nu above about
# 400-500 forms a short bubble and reattaches turbulent; below, a long bubble or open separation (Owen &
# Klanfer 1953, "On the laminar boundary layer separation from the leading edge of a thin aerofoil", ARC CP
# 220). The upper end is taken: below it the layer is reported separated, the cautious side.
SHORT_BUBBLE_RE_DELTA_STAR = 500.0


# --- Thwaites' correlations -------------------------------------------------------------------


def thwaites_l(lam):
    """Shear function l(lambda) (Cebeci & Bradshaw fit, White sec. 4-6)."""
    lam = np.minimum(np.asarray(lam, dtype=float), LAMBDA_MAX)
    pos = 0.22 + 1.57 * lam - 1.8 * lam**2
    with np.errstate(divide="ignore", invalid="ignore"):
        neg = 0.22 + 1.402 * lam + 0.018 * lam / (lam + 0.107)
    return np.where(lam >= 0.0, pos, neg)


def thwaites_H(lam):
    """Shape function H(lambda) (Cebeci & Bradshaw fit, White sec. 4-6)."""
    lam = np.minimum(np.asarray(lam, dtype=float), LAMBDA_MAX)
    pos = 2.61 - 3.75 * lam + 5.24 * lam**2
    with np.errstate(divide="ignore", invalid="ignore"):
        neg = 2.088 + 0.0731 / (lam + 0.14)
    return np.where(lam >= 0.0, pos, neg)


# --- Head's correlations -----------------------------------------------------------------------

_H1_KNEE = 3.3 + 0.8234 * (1.6 - 1.1) ** -1.287  # H1 at H = 1.6 on the lower branch


def head_H1(H):
    """Entrainment shape factor H1(H) (Head 1958, as usually cited)."""
    H = np.asarray(H, dtype=float)
    low = 3.3 + 0.8234 * np.maximum(H - 1.1, 1e-12) ** -1.287
    high = 3.3 + 1.5501 * np.maximum(H - 0.6778, 1e-12) ** -3.064
    return np.where(H <= 1.6, low, high)


def head_H(H1):
    """Inverse of ``head_H1``: H from H1 (H1 > 3.3)."""
    x = np.maximum(np.asarray(H1, dtype=float) - 3.3, 1e-12)
    low = 1.1 + (x / 0.8234) ** (-1.0 / 1.287)
    high = 0.6778 + (x / 1.5501) ** (-1.0 / 3.064)
    return np.where(x + 3.3 >= _H1_KNEE, low, high)


def head_F(H1):
    """Entrainment function F(H1) = 0.0306 (H1 - 3)^-0.6169 (Head 1958)."""
    return 0.0306 * np.maximum(np.asarray(H1, dtype=float) - 3.0, 1e-12) ** -0.6169


def ludwieg_tillmann_cf(H, re_theta):
    """cf = 0.246 10^(-0.678 H) Re_theta^-0.268 (Ludwieg & Tillmann 1949). Kept for comparison; the
    march uses ``turbulent_cf`` (below)."""
    return 0.246 * 10.0 ** (-0.678 * np.asarray(H)) * np.asarray(re_theta, dtype=float) ** -0.268


# --- turbulent skin friction: the flat-plate law in Re_theta with Ludwieg-Tillmann's H dependence ---
#
# Ludwieg-Tillmann's power law 0.246 Re_theta^-0.268 falls below the logarithmic flat-plate laws beyond
# Re_theta of about 2e4 (with Head's method: 7 %, 9 % and 18 % below Schlichting at Re_x 1e6, 1e7, 1e8).
# The closure used instead (derived here from two published relations):
#   cf = cf0(Re_theta) 10^(-0.678 (H - H0(Re_theta)))
# - cf0: Schlichting's turbulent flat-plate friction cf = (2 log10 Re_x - 0.65)^-2.3 (Schlichting,
#   Boundary-Layer Theory, 7th ed. 1979, ch. XXI, eq. 21.16 footnote; valid to Re_x = 1e9), carried
#   over to Re_theta by von Karman's momentum integral on the flat plate, Re_theta = int cf/2 dRe_x
#   (derived; the integral from Re_x = 10, where the formula's cf is 0.5: a virtual origin of no
#   consequence above Re_theta of about 100);
# - the H dependence 10^(-0.678 H): Ludwieg & Tillmann (1949, Ing.-Arch. 17, "Untersuchungen ueber
#   die Wandschubspannung in turbulenten Reibungsschichten"), relative to the flat plate's own H0;
# - H0: the shape factor at which Head's entrainment equation is in equilibrium with cf0 on a flat
#   plate, F(H1(H0)) = H1(H0) cf0/2 (from d(theta H1)/dx = F and d theta/dx = cf/2 with H1 constant;
#   derived), so that a flat-plate march returns cf0 and does not drift with Head's H.
# Below Re_x = 1e5 (Re_theta about 390), the low end of the range of Schlichting's formula, cf0 follows
# Ludwieg-Tillmann's power law Re_theta^-0.268 from there and H0 is held (the formula is a fit of
# developed turbulent layers; near the start of a turbulent layer it would give cf of 0.03 and more).
# Above Re_x = 1e13 cf0 and H0 are held at their last values.
FLAT_PLATE_RE_X_MIN = 1e5


def _flat_plate_table():
    re_x = np.geomspace(10.0, 1e13, 4001)
    cf = (2.0 * np.log10(re_x) - 0.65) ** -2.3
    lx = np.log(re_x)
    # Re_theta = int cf/2 dRe_x = int cf/2 Re_x dln(Re_x): trapezoid in ln Re_x
    g = 0.5 * cf * re_x
    re_th = np.concatenate([[0.0], np.cumsum(0.5 * (g[1:] + g[:-1]) * np.diff(lx))])
    keep = re_x >= FLAT_PLATE_RE_X_MIN
    re_th, cf = re_th[keep], cf[keep]
    low = np.geomspace(1.0, re_th[0], 41)[:-1]  # the power-law extension below the formula's range
    re_th, cf = np.r_[low, re_th], np.r_[cf[0] * (low / re_th[0]) ** -0.268, cf]
    # H0 from F(H1) = H1 cf/2 (F decreasing, H1 F... solved by bisection on H1 in (3.3, 20))
    lo, hi = np.full(cf.shape, 3.3 + 1e-9), np.full(cf.shape, 20.0)
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        f = head_F(mid) - mid * 0.5 * cf
        lo, hi = np.where(f > 0.0, mid, lo), np.where(f > 0.0, hi, mid)
    H0 = head_H(0.5 * (lo + hi))
    H0[: low.size] = H0[low.size]
    return np.log(re_th), np.log(cf), H0


_FP_LN_RETH, _FP_LN_CF, _FP_H0 = _flat_plate_table()
_FP_LIST = (_FP_LN_RETH.tolist(), _FP_LN_CF.tolist(), _FP_H0.tolist())


def flat_plate_cf0(re_theta):
    """The flat-plate friction cf0(Re_theta) and shape factor H0(Re_theta) of the closure (see above)."""
    lr = np.log(np.maximum(np.asarray(re_theta, dtype=float), 1.0))
    return np.exp(np.interp(lr, _FP_LN_RETH, _FP_LN_CF)), np.interp(lr, _FP_LN_RETH, _FP_H0)


def turbulent_cf(H, re_theta):
    """cf = cf0(Re_theta) 10^(-0.678 (H - H0(Re_theta))) (see above)."""
    cf0, H0 = flat_plate_cf0(re_theta)
    return cf0 * 10.0 ** (-0.678 * (np.asarray(H, dtype=float) - H0))


def michel_re_theta(re_x):
    """Michel's transition momentum-thickness Reynolds number 2.9 Re_x^0.4."""
    return MICHEL_COEFF * np.asarray(re_x, dtype=float) ** MICHEL_EXP


# --- result ------------------------------------------------------------------------------------
