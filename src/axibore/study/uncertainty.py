"""Every headline number with its uncertainty: numerical (grid) and input (tolerances), combined.

The method (ASME V&V 20-2009, "Standard for Verification and Validation in Computational Fluid
Dynamics and Heat Transfer", sec. 2-5; GUM, JCGM 100:2008, for the propagation):

* **Numerical.** A grid study over the levels (``study.gci``, Celik et al. 2008). The GCI of the finest
  level, with its safety factor 1.25 (three grids) or 3 (two), is read as an expanded uncertainty
  of about 95 % coverage, as V&V 20 reads it; the standard numerical uncertainty is GCI / 2 (the
  coverage factor of a normal distribution at 95 %). Dividing by 2 rather than by the factor of
  safety keeps the statement no less cautious than the GCI itself.
* **Input.** Each entry of ``[uncertainty]`` (or ``--input``) is one standard uncertainty u of a
  case key. First order (``method = "linear"``): the sensitivity c = (q(x + u) - q(x - u)) / 2u by
  central differences at the finest level, with the step u itself (the range the input really
  moves over, so that a curvature within it shows as a difference of the two one-sided slopes,
  reported as ``nonlinearity``), and the contribution c u. Monte Carlo (``method =
  "montecarlo"``): N Latin-hypercube samples of all inputs together (normal distributions), the
  mean, standard deviation and 2.5 / 97.5 % quantiles of each quantity.
* **Combined.** u_c = sqrt(u_num^2 + sum (c u)^2) (inputs taken as independent), and the expanded
  uncertainty U = 2 u_c (coverage factor k = 2, about 95 %).

Every run goes through the sweep machinery: points are run folders named by the hash of their
resolved case (shared with sweeps and grid studies of the same case), resumable, on a serial, local
Dask or remote executor.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np

from ..case import Case, CaseError
from ..case.resolved import _dimension_of
from ..io.files import atomic_write_text
from ..io.ownership import record
from ..io.rundir import resolved_case_text
from ..units import UnitError, to_si
from .gci import gci
from .gridstudy import DESIGN_ORDER
from .sweep import Point, _si_value, point_name, run_sweep, without_sweep
from .uncertaintyviews import plot_contributions, write_csv, write_html

CAUTION = ("Covered: the discretisation (grid study) and the stated input uncertainties. Not covered: model-form "
           "error (inviscid flow or a boundary-layer model, steady, axisymmetric or planar) and validation against "
           "measurements. Hydrodynamic load only; defer to the applicable codes and to licensed engineering practice.")
COVERAGE = 2.0  # k: expanded = k x standard (about 95 % for a normal distribution; GUM 6.2)
GCI_TO_STANDARD = 2.0  # the GCI read as a 95 % expanded uncertainty: standard = GCI / 2 (module docstring)


@dataclass(frozen=True)
class Input:
    key: str
    given: str  # as the user wrote it ("0.1 bar", "1 %")
    nominal: float  # SI
    u: float  # one standard uncertainty, SI
    dimension: str | None

    def shifted(self, sign: float) -> str | float:
        value = self.nominal + sign * self.u
        return _with_unit(value, self.dimension, self.key)


def _si_unit(dimension: str | None, key: str) -> str:
    """The SI unit a key's value is held in ("" for a plain number)."""
    if key.endswith("flow_rate"):
        return "m^3/s"  # the volume flow (a mass flow is refused in parse_inputs)
    return "" if dimension is None else SI_UNITS[dimension]


def _with_unit(value: float, dimension: str | None, key: str) -> str | float:
    unit = _si_unit(dimension, key)
    return f"{value!r} {unit}" if unit else value


SI_UNITS = {"length": "m", "pressure": "Pa", "temperature": "K", "angle": "rad", "density": "kg/m^3",
            "specific_gas_constant": "J/(kg*K)", "volume_flow": "m^3/s", "mass_flow": "kg/s", "dynamic_viscosity": "Pa*s"}


def _field_dimension(case: Case, key: str) -> str | None:
    """The quantity dimension of the schema field a dotted key names (None: a plain number)."""
    node: Any = case.model
    parts = key.split(".")
    for part in parts[:-1]:
        name = part.split("[")[0]
        node = getattr(node, name)
        if isinstance(node, list):
            node = node[int(part.split("[")[1].rstrip("]")) - 1]
    info = type(node).model_fields.get(parts[-1])
    return None if info is None else _dimension_of(info.annotation, info.metadata)


def parse_inputs(case: Case, table: dict[str, str], source: str) -> list[Input]:
    """The validated input uncertainties: CaseError naming each bad key or value, before any work."""
    out, problems = [], []
    base = without_sweep(case)
    for key, given in table.items():
        where = f"uncertainty.{key}" if source != "--input" else key  # the message starts with its source
        try:
            nominal = _si_value(base, key)
        except (AttributeError, IndexError, ValueError, TypeError):
            problems.append((where, "not a key of this case (give a dotted key of the case file, such as "
                             "\"inlet.pressure\")"))
            continue
        if nominal is None:
            problems.append((where, f"{key} is not given in this case: an uncertainty needs a value to vary"))
            continue
        if key.endswith("flow_rate") and base.model.inlet.flow_rate[0] != "volume":
            problems.append((where, "give the flow rate's uncertainty on a volume flow rate (m^3/s, L/min)"))
            continue
        if isinstance(nominal, bool) or not isinstance(nominal, (int, float)) or key in ("mesh.level",):
            problems.append((where, f"cannot vary: {key} is a setting, not a measured quantity that can carry an "
                             f"uncertainty (got {nominal!r})"))
            continue
        dim = "volume_flow" if key.endswith("flow_rate") else _field_dimension(base, key)
        text = str(given).strip()
        try:
            if text.endswith("%"):
                pct = float(text[:-1])
                if pct <= 0:
                    raise ValueError("a percentage above zero")
                u = abs(float(nominal)) * pct / 100.0
            else:
                u = to_si(text, dim) if dim else float(text)
                if dim == "temperature":  # a temperature difference: "0.5 K" or "0.5 degC" both mean 0.5 K
                    u = float(text.split()[0])
        except (ValueError, UnitError) as exc:
            why = str(exc) if str(exc) else "not a number"
            problems.append((where, f"expected a positive standard uncertainty such as \"0.1 bar\" or \"1 %\", got "
                             f"{given!r} ({why})"))
            continue
        if not u > 0 or not math.isfinite(u):
            problems.append((where, f"expected a positive standard uncertainty, got {given!r}"))
            continue
        inp = Input(key, text, float(nominal), float(u), dim)
        for sign in (-1.0, 1.0):
            try:
                base.with_updates({key: inp.shifted(sign)})
            except CaseError as exc:
                problems += [(where, f"the case at {key} {'+' if sign > 0 else '-'} u is not valid: {msg}")
                             for _, msg in exc.problems]
        out.append(inp)
    if problems:
        raise CaseError(source, problems)
    return out


def headline(summary: dict) -> dict[str, float | None]:
    """The numbers an engineer signs off, by name with their unit."""
    f, fl, p = summary["forces"], summary["flow"], summary["pressure"]
    out: dict[str, float | None] = {"wall force on the part [N]": f["total_x_N"]}
    for j in summary.get("joints", []):
        out[f"joint {j['name']} load [N]"] = j["load_N"]
        if j.get("per_bolt_N") is not None:
            out[f"joint {j['name']} per bolt [N]"] = j["per_bolt_N"]
    if not fl.get("compressible"):
        out["volume flow [m3/s]"] = fl["volume_flow_m3_s"]
    out["mass flow [kg/s]"] = fl["mass_flow_kg_s"]
    out["discharge coefficient [-]"] = fl.get("discharge_coefficient")
    out["min wall pressure [Pa gauge]"] = p["min_wall_gauge_Pa"]
    if p.get("cavitation_index") is not None and p.get("inception_index") is not None:
        out["cavitation margin sigma - sigma_i [-]"] = p["cavitation_index"] - p["inception_index"]
    if f.get("jet_reaction_N") is not None:
        out["jet reaction [N]"] = f["jet_reaction_N"]
    if fl.get("contraction_coefficient") is not None:
        out["contraction coefficient [-]"] = fl["contraction_coefficient"]
    if fl.get("compressible") and fl.get("choked"):
        out["choked mass flow [kg/s]"] = fl["mass_flow_kg_s"]
    return {k: v for k, v in out.items() if v is not None}  # a number the model does not give is not listed


@dataclass
class QuantityUncertainty:
    name: str
    value: float | None  # at the finest level
    u_num: float | None
    gci_fine: float | None  # relative
    observed_order: float | None
    contributions: dict[str, float] = field(default_factory=dict)  # key -> c u
    sensitivities: dict[str, float] = field(default_factory=dict)  # key -> c
    nonlinearity: dict[str, float] = field(default_factory=dict)  # key -> (slope+ - slope-) / |c| (0: linear)
    montecarlo: dict | None = None
    note: str = ""

    @property
    def u_input(self) -> float | None:
        if self.montecarlo is not None:
            return self.montecarlo["std"]
        if not self.contributions:
            return 0.0
        return math.sqrt(sum(c * c for c in self.contributions.values()))

    @property
    def u_combined(self) -> float | None:
        if self.u_num is None or self.u_input is None:
            return None
        return math.hypot(self.u_num, self.u_input)

    @property
    def expanded(self) -> float | None:
        u = self.u_combined
        return None if u is None else COVERAGE * u

    def as_dict(self) -> dict:
        return {"name": self.name, "value": self.value, "u_numerical": self.u_num, "gci_fine_rel": self.gci_fine,
                "observed_order": self.observed_order, "sensitivities": self.sensitivities,
                "contributions": self.contributions, "nonlinearity": self.nonlinearity, "u_input": self.u_input,
                "montecarlo": self.montecarlo, "u_combined": self.u_combined, "expanded_k2": self.expanded,
                "note": self.note}


@dataclass
class UncertaintyResult:
    title: str
    levels: list[int]
    inputs: list[Input]
    method: str
    quantities: list[QuantityUncertainty]
    failed: list[str]  # points that failed or did not converge
    out_dir: Path | None = None
    case_hash: str = "–"  # the name of the finest grid point's run folder (the hash of its resolved case)

    def as_dict(self) -> dict:
        return {"kind": "axibore uncertainty", "title": self.title, "levels": self.levels, "method": self.method,
                "coverage_factor": COVERAGE,
                "procedure": ("numerical: GCI of the finest level (Celik et al. 2008) read as a 95 % expanded "
                              "uncertainty, standard = GCI / 2; input: " +
                              ("central differences with the step u at the finest level, contribution c u"
                               if self.method == "linear" else "Latin-hypercube Monte Carlo at the finest level") +
                              "; combined u_c = sqrt(u_num^2 + u_input^2), expanded U = 2 u_c (ASME V&V 20-2009; "
                              "GUM, JCGM 100:2008)"),
                "inputs": [{"key": i.key, "given": i.given, "nominal_si": i.nominal, "u_si": i.u} for i in self.inputs],
                "quantities": [q.as_dict() for q in self.quantities], "failed": self.failed, "caution": CAUTION}

    @property
    def rows(self) -> list[dict]:
        return [q.as_dict() for q in self.quantities]

    def lines(self) -> list[str]:
        out = [f"{'quantity':40s} {'value':>12s} {'u_num':>10s} {'u_input':>10s} {'U (k=2)':>10s} {'U/|value|':>9s}"]
        for q in self.quantities:
            def g(v):
                return f"{v:10.4g}" if v is not None else f"{'-':>10s}"
            rel = f"{q.expanded / abs(q.value):9.2%}" if q.expanded is not None and q.value else f"{'-':>9s}"
            out.append(f"{q.name:40s} {q.value if q.value is not None else float('nan'):12.6g} {g(q.u_num)} "
                       f"{g(q.u_input)} {g(q.expanded)} {rel}" + (f"  ({q.note})" if q.note else ""))
        if self.method == "linear":
            for i in self.inputs:
                unit = f" {_si_unit(i.dimension, i.key)}".rstrip()
                out.append(f"  input {i.key} = {i.nominal:.6g}{unit} +- {i.u:.4g}{unit} (given {i.given})")
        return out


def _point(index: int, case: Case, values: dict) -> Point:
    pcase = case.with_updates(values) if values else case
    text = resolved_case_text(pcase)
    return Point(index, values, pcase, text, point_name(text))


def run_uncertainty(case: Case, inputs: list[Input], levels: list[int], out_dir: Path, executor=None,
                    method: str = "linear", samples: int = 32, progress: Callable[[str], None] | None = None,
                    seed: int = 20261204) -> UncertaintyResult:
    """Run the grid levels and the input points (module docstring); write uncertainty.json/.csv."""
    progress = progress or (lambda msg: None)
    out_dir.mkdir(parents=True, exist_ok=True)
    record(out_dir, "uncertainty", [])  # the folder is an uncertainty study's from its first moment
    base = without_sweep(case)
    finest = max(levels)
    grid = [_point(k + 1, base, {"mesh.level": lv}) for k, lv in enumerate(sorted(levels))]
    fine_case = grid[-1].case
    extra: list[Point] = []
    mc_values: list[dict] = []
    if method == "linear":
        for inp in inputs:
            for sign in (-1.0, 1.0):
                extra.append(_point(len(grid) + len(extra) + 1, fine_case, {inp.key: inp.shifted(sign)}))
    else:
        from scipy.stats import norm, qmc

        draws = qmc.LatinHypercube(d=max(len(inputs), 1), seed=seed).random(samples)
        z = norm.ppf(draws)
        for row in z:
            values = {inp.key: _with_unit(float(inp.nominal + zi * inp.u), inp.dimension, inp.key)
                      for inp, zi in zip(inputs, row)}
            mc_values.append(values)
            extra.append(_point(len(grid) + len(extra) + 1, fine_case, values))
    points, seen = [], set()
    for p in grid + extra:
        if p.name not in seen:  # the same resolved case once (one folder)
            seen.add(p.name)
            points.append(p)
    progress(f"{len(points)} runs: {len(levels)} grid levels, {len(extra)} input points at level {finest}")
    runs = out_dir / "runs"
    # the finest levels first (longest processing time first): the short coarse runs fill the workers' gaps
    # at the end instead of delaying the long ones
    order = sorted(points, key=lambda p: -p.case.mesh.level)
    run_sweep(base, order, runs, executor, progress=progress, plots=())

    def read(name: str) -> dict | None:
        try:
            s = json.loads((runs / name / "summary.json").read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        return s if s.get("solver", {}).get("converged") else None

    summaries = {p.name: read(p.name) for p in points}  # each run folder read once

    def summary(p: Point) -> dict | None:
        return summaries[p.name]

    failed = [p.label() or f"level {p.case.mesh.level}" for p in points if summary(p) is None]
    grid_s = [summary(p) for p in grid]
    names: list[str] = []
    for s in grid_s + [summary(p) for p in extra]:
        for n in (headline(s) if s else {}):
            if n not in names:
                names.append(n)
    quantities = []
    for name in names:
        vals = [headline(s).get(name) if s else None for s in grid_s]
        q = QuantityUncertainty(name, vals[-1], None, None, None)
        ok = [(s["mesh"]["h_m"], v) for s, v in zip(grid_s, vals) if s and v is not None]
        if len(ok) >= 2 and vals[-1] is not None:
            r = gci([h for h, _ in ok], [v for _, v in ok], DESIGN_ORDER, cautious=True)
            if r.gci_fine is not None:
                q.u_num = r.gci_fine * abs(vals[-1]) / GCI_TO_STANDARD
                q.gci_fine, q.observed_order = r.gci_fine, r.order
            else:
                q.note = "no GCI (the levels agree to round-off or show no order): numerical part taken as 0"
                q.u_num = 0.0
        else:
            q.note = "fewer than two converged levels: no numerical uncertainty"
        if method == "linear":
            for k, inp in enumerate(inputs):
                lo, hi = (summary(extra[2 * k]), summary(extra[2 * k + 1]))
                ql = headline(lo).get(name) if lo else None
                qh = headline(hi).get(name) if hi else None
                if ql is None or qh is None or q.value is None:
                    q.note = (q.note + "; " if q.note else "") + f"no sensitivity to {inp.key} (a run failed)"
                    q.contributions = {}
                    break
                c = (qh - ql) / (2.0 * inp.u)
                q.sensitivities[inp.key] = c
                q.contributions[inp.key] = c * inp.u
                up, down = (qh - q.value) / inp.u, (q.value - ql) / inp.u
                q.nonlinearity[inp.key] = (up - down) / abs(c) if c else 0.0
        else:
            got = [headline(s).get(name) for s in (summary(p) for p in extra) if s]
            got = [v for v in got if v is not None]
            if len(got) >= 2:
                a = np.asarray(got, float)
                q.montecarlo = {"samples": int(a.size), "mean": float(a.mean()), "std": float(a.std(ddof=1)),
                                "q2.5": float(np.quantile(a, 0.025)), "q97.5": float(np.quantile(a, 0.975))}
        quantities.append(q)
    result = UncertaintyResult(case.title, sorted(levels), inputs, method, quantities, failed, out_dir, grid[-1].name)
    write_result(result, out_dir)
    return result


def write_result(result: UncertaintyResult, out_dir: Path) -> None:
    """uncertainty.json, uncertainty.csv (the same numbers, a row a quantity), uncertainty.html and its chart."""
    out_dir.mkdir(parents=True, exist_ok=True)
    atomic_write_text(out_dir / "uncertainty.json", json.dumps(result.as_dict(), indent=2, default=str) + "\n")
    write_csv(result, out_dir)
    chart = plot_contributions(result, out_dir / "uncertainty_contributions.png")
    write_html(result, out_dir, chart, CAUTION, result.case_hash)
    record(out_dir, "uncertainty", ["uncertainty.json", "uncertainty.csv", "uncertainty.csv.json", "uncertainty.html"]
           + (["uncertainty_contributions.png"] if chart is not None else []))
