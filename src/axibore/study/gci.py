"""Grid Convergence Index: the procedure of Celik, Ghia, Roache, Freitas, Coleman & Raad,
"Procedure for Estimation and Reporting of Uncertainty Due to Discretization in CFD
Applications", J. Fluids Eng. 130(7) 078001, 2008 (with Roache, J. Fluids Eng. 116, 1994).

Grids are given from fine to coarse (index 1 is the finest, as in the paper). With three or
more grids the observed order comes from the finest three by fixed-point iteration (eqs. 3-5)
and the safety factor is 1.25; with two grids the order is assumed (the solver's design order)
and the safety factor is 3.

``cautious=True`` (the grid study and the uncertainty study use it; the reproduction of the paper's
table does not) widens the band where the three grids do not show the design order, as Roy
prescribes (C. J. Roy, "Review of discretization error estimators in scientific computing", AIAA
Paper 2010-126; Oberkampf & Roy, "Verification and Validation in Scientific Computing", 2010, ch. 8):
- an observed order more than 10 % from the design order: safety factor 3 and the order
  min(max(0.5, p), p_design) in the GCI;
- oscillatory convergence: 3 x the largest relative change between the grids (no order);
- changes at the accuracy of the solve: that accuracy (``ROUND_OFF``), not zero.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

SAFETY_THREE_GRIDS = 1.25
SAFETY_TWO_GRIDS = 3.0
MIN_RATIO = 1.3
# Relative changes between grids below this are the accuracy of the solve itself (linear tolerance
# 1e-10 of the residual, the boundary reconstruction), not discretisation: the quantity is converged.
ROUND_OFF = 1e-6


@dataclass(frozen=True)
class GCIResult:
    h: tuple[float, ...]  # fine to coarse
    phi: tuple[float, ...]
    order: float | None  # observed (or assumed, two grids) order
    order_assumed: bool
    extrapolated: float | None
    e_a21: float | None  # |(phi1 - phi2) / phi1|
    e_ext21: float | None  # |(phi_ext - phi1) / phi_ext|
    gci_fine: float | None  # relative, with the safety factor
    gci_coarse: float | None  # GCI_32 (three grids)
    asymptotic_ratio: float | None  # GCI_32 / (r21^p GCI_21): ~1 in the asymptotic range
    ratios: tuple[float, ...]
    safety_factor: float
    flags: list[str] = field(default_factory=list)

    @property
    def in_asymptotic_range(self) -> bool | None:
        if self.asymptotic_ratio is None:
            return None
        return abs(self.asymptotic_ratio - 1.0) < 0.1

    def as_dict(self) -> dict:
        return {
            "h_m": list(self.h), "values": list(self.phi), "observed_order": self.order, "order_assumed": self.order_assumed,
            "extrapolated": self.extrapolated, "e_a21": self.e_a21, "e_ext21": self.e_ext21, "gci_fine": self.gci_fine,
            "gci_coarse": self.gci_coarse, "asymptotic_ratio": self.asymptotic_ratio, "in_asymptotic_range": self.in_asymptotic_range,
            "refinement_ratios": list(self.ratios), "safety_factor": self.safety_factor, "flags": list(self.flags),
        }


def _observed_order(r21: float, r32: float, e21: float, e32: float, max_iter: int = 200) -> tuple[float, list[str]]:
    """Fixed-point iteration of eqs. 3a-3c for p."""
    flags = []
    s = math.copysign(1.0, e32 / e21)
    if s < 0:
        flags.append("oscillatory convergence (the differences change sign): the order and GCI are not reliable")
    ratio = abs(e32 / e21)
    if ratio < 1.0 and s > 0:
        flags.append("divergent: the difference grows on the finer grids")
    p = abs(math.log(ratio)) / math.log(r21)
    for _ in range(max_iter):
        arg = (r21**p - s) / (r32**p - s)
        q = math.log(arg) if arg > 0 else 0.0
        p_new = abs(math.log(ratio) + q) / math.log(r21)
        if abs(p_new - p) < 1e-12:
            p = p_new
            break
        p = p_new
    return p, flags


ORDER_MARGIN = 0.1  # cautious: an observed order within 10 % of the design order keeps Fs = 1.25 (Roy 2010)
MIN_ORDER = 0.5  # cautious: the least order used in the GCI (Roy 2010)


def gci(h, phi, design_order: float = 2.0, cautious: bool = False) -> GCIResult:
    """GCI of a quantity ``phi`` on grids of sizes ``h`` (any order; sorted fine to coarse here).
    ``cautious``: widen the band where the grids do not show the design order (module docstring)."""
    h = np.asarray(h, float)
    phi = np.asarray(phi, float)
    if h.shape != phi.shape:
        raise ValueError(f"gci: {h.size} grid sizes but {phi.size} values")
    keep = np.isfinite(phi) & np.isfinite(h)
    h, phi = h[keep], phi[keep]
    order = np.argsort(h)
    h, phi = h[order], phi[order]
    flags: list[str] = []
    n = len(h)
    if n < 2:
        return GCIResult(tuple(h), tuple(phi), None, False, None, None, None, None, None, None, (), SAFETY_THREE_GRIDS,
                         ["fewer than two grids: no estimate"])
    ratios = tuple(float(h[i + 1] / h[i]) for i in range(n - 1))
    if min(ratios) < MIN_RATIO:
        flags.append(f"refinement ratio {min(ratios):.3f} below {MIN_RATIO} (Celik et al. 2008 recommend more)")
    phi1, phi2 = phi[0], phi[1]
    r21 = ratios[0]
    e21 = phi2 - phi1
    e_a21 = abs(e21 / phi1) if phi1 != 0 else None
    if n == 2:
        p, assumed, fs = design_order, True, SAFETY_TWO_GRIDS
        flags.append(f"two grids: order {design_order:g} assumed, safety factor {fs:g}")
    else:
        fs, assumed = SAFETY_THREE_GRIDS, False
        r32 = ratios[1]
        e32 = phi[2] - phi2
        floor = ROUND_OFF if cautious else 0.0
        if e21 == 0 or e32 == 0:
            flags.append("no change between grids: converged to round-off"
                         + (f"; the band is the solve's accuracy, {ROUND_OFF:g} of the value" if cautious else ""))
            return GCIResult(tuple(h), tuple(phi), None, False, float(phi1), 0.0, 0.0, floor, floor, None, ratios, fs, flags)
        if max(abs(e21), abs(e32)) <= ROUND_OFF * max(abs(phi1), 1e-300):
            flags.append(f"changes between grids below {ROUND_OFF:g} of the value: converged (or fixed by the case)"
                         + ("; the band is that accuracy of the solve" if cautious else ""))
            return GCIResult(tuple(map(float, h)), tuple(map(float, phi)), None, False, float(phi1), abs(e21 / phi1) if phi1 else 0.0,
                             0.0, floor, floor, None, ratios, fs, flags)
        p, f = _observed_order(r21, r32, e21, e32)
        flags += f
        if any(x.startswith("divergent") for x in f) or (cautious and any(x.startswith("oscillatory") for x in f)):
            # no extrapolation from a quantity that does not converge; its uncertainty is bounded by the
            # spread of the values with the two-grid safety factor (common practice for GCI without an order)
            spread = max(abs(e21), abs(e32)) / abs(phi1) if phi1 else None
            flags.append(f"no observed order: the uncertainty shown is {SAFETY_TWO_GRIDS:g} x the largest relative change")
            return GCIResult(tuple(map(float, h)), tuple(map(float, phi)), None, False, None, abs(e21 / phi1) if phi1 else None,
                             None, None if spread is None else SAFETY_TWO_GRIDS * spread, None, None, ratios, fs, flags)
    if e21 == 0:
        return GCIResult(tuple(h), tuple(phi), p, assumed, float(phi1), 0.0, 0.0, 0.0, None, None, ratios, fs, flags)
    ext = (r21**p * phi1 - phi2) / (r21**p - 1)
    e_ext = abs((ext - phi1) / ext) if ext != 0 else None
    p_gci = p
    if cautious and not assumed and abs(p - design_order) > ORDER_MARGIN * design_order:
        fs, p_gci = SAFETY_TWO_GRIDS, min(max(MIN_ORDER, p), design_order)
        flags.append(f"observed order {p:.2f} is more than {ORDER_MARGIN:.0%} from the design order {design_order:g}: the "
                     f"GCI uses order {p_gci:.2f} and safety factor {fs:g} (Roy 2010)")
    gci21 = fs * e_a21 / (r21**p_gci - 1) if e_a21 is not None else None
    if cautious and gci21 is not None:
        gci21 = max(gci21, ROUND_OFF)  # never below the accuracy of the solve
    gci32 = asym = None
    if n >= 3:
        e_a32 = abs((phi[2] - phi2) / phi2) if phi2 != 0 else None
        gci32 = fs * e_a32 / (ratios[1] ** p_gci - 1) if e_a32 is not None else None
        if gci32 is not None and gci21:
            asym = gci32 / (r21**p * gci21)
            if abs(asym - 1.0) >= 0.1:
                flags.append(f"not in the asymptotic range (GCI_32 / (r^p GCI_21) = {asym:.3f}, should be near 1)")
        if abs(p - design_order) > 0.5 and not any(f.startswith(("oscillatory", "observed order")) for f in flags):
            flags.append(f"observed order {p:.2f} differs from the design order {design_order:g}")
    def f(v):
        return None if v is None else float(v)

    return GCIResult(tuple(map(float, h)), tuple(map(float, phi)), float(p), assumed, float(ext), f(e_a21), f(e_ext),
                     f(gci21), f(gci32), f(asym), ratios, fs, flags)
