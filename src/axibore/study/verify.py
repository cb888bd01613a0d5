"""The project's verification set, rerunnable by an analyst on a new install or machine.

Each row: quantity, exact or published value, computed value (finest grid), error, observed order
(from all grids), source. Sources are the published works named in each row.
"""

from __future__ import annotations

import copy
import json
import math
import time
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from ..io.files import atomic_write_text
from ..io.ownership import record
from .. import fluids
from ..case import case_from_dict
from ..run import solve_case
from ..verification import cone_sink, observed_order, sphere_in_stream
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
    """A single published value: absolute (or relative) error within ``tol``."""
    err = computed / exact - 1 if relative else computed - exact
    return Row(q, float(exact), float(computed), float(err), None, None, source, bool(abs(err) <= tol))


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


def water_rows() -> list[Row]:

    src5 = "IAPWS-IF97 (Wagner et al., J. Eng. Gas Turbines Power 122, 2000), Table 5"
    src35 = "IAPWS-IF97, Table 35"
    v = 1.0 / fluids.water_density(300.0, 3e6)
    ps = fluids.water_vapour_pressure(300.0)
    return [
        _value("water v(300 K, 3 MPa) [m^3/kg]", 0.100215168e-2, v, 1e-8, src5, relative=True),
        _value("water psat(300 K) [Pa]", 3.53658941e3, ps, 1e-8, src35, relative=True),
    ]


def run_verification(out_dir: Path, quick: bool = False, progress: Callable[[str], None] | None = None) -> list[Row]:
    progress = progress or (lambda m: None)
    sets = [
        ("GCI procedure", celik_rows),
        ("water properties", water_rows),
        ("cone sink", lambda: cone_rows((0.02, 0.01, 0.005) if quick else (0.02, 0.01, 0.005, 0.0025))),
        ("sphere", lambda: sphere_rows((0.08, 0.04, 0.02) if quick else (0.04, 0.02, 0.01))),
        ("momentum theorem", lambda: momentum_rows((0, 2, 4) if quick else (0, 2, 4, 6))),
    ]
    rows: list[Row] = []
    for name, fn in sets:
        t = time.perf_counter()
        new = fn()
        rows += new
        progress(f"[verify] {name}: {sum(r.passed for r in new)}/{len(new)} pass, {time.perf_counter() - t:.1f} s")
    write_rows(rows, Path(out_dir))
    return rows


def write_rows(rows: list[Row], out: Path) -> None:
    out.mkdir(parents=True, exist_ok=True)
    record(out, "verify", [])
    atomic_write_text(out / "verify.json", json.dumps([asdict(r) for r in rows], indent=2) + "\n")
    lines = ["quantity,exact,computed,error,observed_order,expected_order,passed,source"]
    for r in rows:
        po = "" if r.observed_order is None else f"{r.observed_order:.3f}"
        eo = "" if r.expected_order is None else f"{r.expected_order:g}"
        lines.append(f'"{r.quantity}",{r.exact:.10g},{r.computed:.10g},{r.error:.4g},{po},{eo},{r.passed},"{r.source}"')
    atomic_write_text(out / "verify.csv", "\n".join(lines) + "\n")
    record(out, "verify", ["verify.json", "verify.csv"])


def table_lines(rows: list[Row]) -> list[str]:
    w = max(len(r.quantity) for r in rows)
    out = [f"{'quantity':<{w}}  {'exact':>12}  {'computed':>12}  {'error':>10}  {'order':>6}  result"]
    for r in rows:
        po = "-" if r.observed_order is None else f"{r.observed_order:.2f}"
        out.append(f"{r.quantity:<{w}}  {r.exact:>12.6g}  {r.computed:>12.6g}  {r.error:>10.3g}  {po:>6}  {'pass' if r.passed else 'FAIL'}")
        out.append(f"{'':<{w}}  source: {r.source}")
    return out
