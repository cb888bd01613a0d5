"""The closures of the integral layer methods: the laminar layer's from the Falkner-Skan family, Head's shape and
entrainment functions, the turbulent skin friction (Schlichting's flat plate carried to Re_theta with
Ludwieg & Tillmann's shape dependence) and Michel's transition criterion. Sources and derivations
are in ``layer``'s module text and beside each constant."""

from __future__ import annotations

import functools

import numpy as np


LAMINAR = 0
TURBULENT = 1
SEPARATED = 2
STATE_NAMES = ("laminar", "turbulent", "separated")

MICHEL_COEFF = 2.9  # Michel (1951)
MICHEL_EXP = 0.4
TURBULENT_START_H = 1.4  # common practice
# A laminar layer that separates at a displacement-thickness Reynolds number ue delta*/nu above about
# 400-500 forms a short bubble and reattaches turbulent; below, a long bubble or open separation (Owen &
# Klanfer 1953, "On the laminar boundary layer separation from the leading edge of a thin aerofoil", ARC CP
# 220). The upper end is taken: below it the layer is reported separated, the cautious side.
SHORT_BUBBLE_RE_DELTA_STAR = 500.0


# --- the laminar two-equation closure: the Falkner-Skan family ---------------------------------
#
# Rows (beta, f''(0), H, H*, l = cf Re_theta/2, d = 2 CD Re_theta/H*) of the attached Falkner-Skan layers,
# computed by ``falkner_skan.table()`` (``python -m axibore.viscous.falkner_skan`` prints them; a test
# recomputes rows), from beta = 20 to the separation profile (beta = -0.19884, f''(0) = 0), last.
_FS_TABLE = np.array([
    (20, 5.180718025, 2.079796166, 1.653488441, 0.4287793401, 0.2808488567),
    (15.8836667, 4.620780696, 2.082348464, 1.652919669, 0.427382767, 0.2803142669),
    (12.61454339, 4.122263658, 2.085526152, 1.652214339, 0.4256510945, 0.2796531958),
    (10.01826013, 3.678544483, 2.089470871, 1.651342973, 0.4235121655, 0.2788394179),
    (7.956335242, 3.283730126, 2.094350012, 1.650271581, 0.4208827265, 0.2778432701),
    (6.318788855, 2.932578911, 2.100357845, 1.648961983, 0.4176691258, 0.2766323035),
    (5.018276805, 2.620431197, 2.107714525, 1.647372816, 0.4137695517, 0.275172652),
    (3.985431808, 2.343147717, 2.116661677, 1.645461498, 0.4090784497, 0.2734313618),
    (3.165163524, 2.097054638, 2.127453052, 1.643187424, 0.403493741, 0.2713798685),
    (2.513720123, 1.878894339, 2.14033876, 1.640516553, 0.3969272053, 0.2689986258),
    (1.99635463, 1.685780828, 2.155542113, 1.637427218, 0.3893178115, 0.26628255),
    (1.585471577, 1.51515865, 2.173229483, 1.633916558, 0.3806468059, 0.2632464454),
    (1.259155105, 1.364764086, 2.193475649, 1.63000638, 0.3709521736, 0.2599290776),
    (1, 1.232587657, 2.216229726, 1.625746874, 0.3603390704, 0.2563943132),
    (0.9, 1.177727819, 2.227419313, 1.623703482, 0.355225964, 0.2547285461),
    (0.8, 1.120267657, 2.240463203, 1.621363265, 0.3493513757, 0.2528451995),
    (0.7, 1.059807773, 2.255868026, 1.61865638, 0.3425299269, 0.2506998789),
    (0.6, 0.9958364406, 2.274346333, 1.615488947, 0.3345097439, 0.2482356958),
    (0.5, 0.9276800398, 2.296935385, 1.6117315, 0.3249389225, 0.2453788196),
    (0.4, 0.8544212312, 2.325211288, 1.607199797, 0.3133086462, 0.2420322439),
    (0.3, 0.7747545803, 2.361704766, 1.60162109, 0.2988505011, 0.2380672604),
    (0.2, 0.686708181, 2.410791976, 1.594570162, 0.2803351441, 0.2333128724),
    (0.1, 0.5870352192, 2.4808859, 1.58533467, 0.255628854, 0.2275478244),
    (0, 0.4695999884, 2.59110027, 1.572583059, 0.2205241445, 0.2205241428),
    (-0.009817613168, 0.4566974328, 2.605576829, 1.571054426, 0.2162265629, 0.219760003),
    (-0.01938667917, 0.4438184634, 2.620582386, 1.569503479, 0.2118444099, 0.219002509),
    (-0.028707198, 0.4309647764, 2.636140389, 1.567930746, 0.2073773923, 0.2182529254),
    (-0.03777916966, 0.4181381608, 2.652275535, 1.566336846, 0.2028253464, 0.2175125684),
    (-0.04660259415, 0.4053405022, 2.669013847, 1.564722492, 0.1981882486, 0.2167828031),
    (-0.05517747148, 0.392573787, 2.686382769, 1.563088502, 0.1934662271, 0.2160650405),
    (-0.06350380163, 0.3798401062, 2.704411253, 1.561435804, 0.1886595731, 0.2153607336),
    (-0.07158158462, 0.36714166, 2.723129869, 1.55976545, 0.1837687533, 0.2146713724),
    (-0.07941082043, 0.3544807619, 2.742570915, 1.558078619, 0.1787944223, 0.2139984785),
    (-0.08699150908, 0.3418598429, 2.762768535, 1.556376631, 0.1737374358, 0.2133435983),
    (-0.09432365056, 0.3292814563, 2.783758857, 1.554660956, 0.1685988638, 0.212708295),
    (-0.1014072449, 0.3167482819, 2.805580132, 1.552933226, 0.1633800044, 0.2120941398),
    (-0.108242292, 0.3042631308, 2.828272892, 1.551195247, 0.1580823981, 0.2115027016),
    (-0.114828792, 0.2918289496, 2.851880121, 1.549449012, 0.152707842, 0.2109355349),
    (-0.1211667448, 0.2794488257, 2.876447445, 1.547696713, 0.1472584044, 0.2103941672),
    (-0.1272561504, 0.2671259916, 2.902023332, 1.545940761, 0.1417364399, 0.2098800834),
    (-0.1330970089, 0.2548638295, 2.928659318, 1.544183799, 0.136144604, 0.2093947101),
    (-0.1386893202, 0.2426658767, 2.956410252, 1.542428717, 0.1304858686, 0.2089393963),
    (-0.1440330843, 0.2305358297, 2.985334572, 1.540678679, 0.124763537, 0.2085153939),
    (-0.1491283013, 0.2184775498, 3.015494594, 1.538937134, 0.1189812586, 0.2081238349),
    (-0.1539749711, 0.2064950673, 3.046956849, 1.537207845, 0.1131430444, 0.2077657072),
    (-0.1585730937, 0.194592587, 3.079792438, 1.535494912, 0.1072532813, 0.2074418278),
    (-0.1629226692, 0.1827744928, 3.114077441, 1.533802796, 0.1013167465, 0.2071528141),
    (-0.1670236974, 0.1710453527, 3.149893355, 1.532136351, 0.09533862161, 0.2068990524),
    (-0.1708761786, 0.1594099243, 3.187327592, 1.530500852, 0.08932450607, 0.206680664),
    (-0.1744801125, 0.1478731592, 3.226474027, 1.528902033, 0.08328042973, 0.2064974697),
    (-0.1778354993, 0.1364402086, 3.26743361, 1.527346123, 0.07721286501, 0.2063489507),
    (-0.1809423389, 0.1251164284, 3.310315048, 1.525839888, 0.07112873792, 0.2062342073),
    (-0.1838006313, 0.1139073844, 3.355235573, 1.524390677, 0.06503543813, 0.2061519159),
    (-0.1864103766, 0.1028188583, 3.402321797, 1.523006475, 0.05894082777, 0.2061002823),
    (-0.1887715747, 0.09185685228, 3.451710674, 1.521695956, 0.05285324895, 0.206076994),
    (-0.1908842256, 0.08102759584, 3.503550587, 1.520468548, 0.04678152975, 0.2060791693),
    (-0.1927483294, 0.07033755114, 3.558002575, 1.519334504, 0.04073498844, 0.2061033047),
    (-0.194363886, 0.05979341958, 3.615241714, 1.518304981, 0.03472343605, 0.2061452206),
    (-0.1957308954, 0.04940214839, 3.675458694, 1.517392125, 0.02875717667, 0.2062000048),
    (-0.1968493577, 0.03917093775, 3.738861606, 1.516609174, 0.02284700572, 0.206261956),
    (-0.1977192728, 0.02910724832, 3.805677986, 1.515970569, 0.01700420573, 0.2063245248),
    (-0.1983406407, 0.01921880955, 3.876157148, 1.515492082, 0.01124053949, 0.2063802551),
    (-0.1987134615, 0.009513628531, 3.950572868, 1.51519096, 0.005568240421, 0.2064207258),
    (-0.198837735, 1.295728957e-26, 4.029226468, 1.515086091, 7.585638208e-27, 0.206436493),
])
FS_H_SEP = float(_FS_TABLE[-1, 2])  # 4.029: the shape factor of the separation profile
FS_HSTAR_SEP = float(_FS_TABLE[-1, 3])  # 1.5151: its energy shape factor, the least of the family
FS_HSTAR_MAX = float(_FS_TABLE[0, 3])  # beta = 20: closure held above (strong acceleration)
FS_BLASIUS = _FS_TABLE[np.flatnonzero(_FS_TABLE[:, 0] == 0.0)[0]]  # the flat plate's row


@functools.cache
def laminar_tables(n: int = 4001) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """H*, H, l, d on a uniform grid of H* (the march's lookups): monotone cubic interpolation of the
    family in H*, which decreases monotonically from acceleration to separation. Built at first use
    (not at import: scipy.interpolate alone takes 0.2 s to import)."""
    from scipy.interpolate import PchipInterpolator

    T = _FS_TABLE[::-1]  # increasing H*
    grid = np.linspace(FS_HSTAR_SEP, FS_HSTAR_MAX, n)
    return grid, *(PchipInterpolator(T[:, 3], T[:, j])(grid) for j in (2, 4, 5))


@functools.cache
def laminar_lists() -> tuple:
    """``laminar_tables`` for the march's loop: (first H*, its step, H, l and d as lists of floats)."""
    hs, H, L, D = laminar_tables()
    return float(hs[0]), float(hs[1] - hs[0]), H.tolist(), L.tolist(), D.tolist()


def laminar_closure(Hstar):
    """H, l = cf Re_theta/2 and d = 2 CD Re_theta/H* of the Falkner-Skan layer with energy shape factor
    H* (held at the ends of the family)."""
    hs, *values = laminar_tables()
    Hs = np.clip(np.asarray(Hstar, dtype=float), FS_HSTAR_SEP, FS_HSTAR_MAX)
    return tuple(np.interp(Hs, hs, a) for a in values)


def laminar_energy_shape(H):
    """H* of the Falkner-Skan layer with shape factor H (held at the ends of the family)."""
    return np.interp(np.asarray(H, dtype=float), _FS_TABLE[:, 2], _FS_TABLE[:, 3])  # H rises along the rows


def similar_start(m: float, k: int) -> tuple[float, float]:
    """(H*, Lambda = theta^2 ue/(nu x)) of the similar layer at the start of a wall where ue ~ x^m and
    r ~ x^k (k = 1: a pointed start on the axis; 0: a wall off the axis, or planar). Derived: with
    theta^2 = Lambda nu x/ue the momentum and energy equations become
        l/Lambda = (1 - m)/2 + (2 + H) m + k,   d/Lambda = (1 - m)/2 + 3 m + k,
    whose ratio fixes the family member: m = 0, k = 0 gives Blasius (l = d), m = 1, k = 0 Hiemenz."""
    grid, tH, tL, tD = laminar_tables()
    a = (1.0 - m) / 2.0 + 3.0 * m + k
    g = tL * a - tD * ((1.0 - m) / 2.0 + (2.0 + tH) * m + k)
    j = np.flatnonzero(np.sign(g[1:]) != np.sign(g[:-1]))
    if not j.size:
        raise ValueError(f"no similar laminar start for ue ~ x^{m}, r ~ x^{k}")
    i = int(j[0])
    t = g[i] / (g[i] - g[i + 1])
    Hs = float(grid[i] + t * (grid[i + 1] - grid[i]))
    return Hs, float(laminar_closure(Hs)[2] / a)


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
