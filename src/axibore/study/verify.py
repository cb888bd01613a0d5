"""The project's verification set, rerunnable by an analyst on a new install or machine.

Every capability has its rows: the potential solver (exact flows, the momentum theorem), the gas
model and Euler solver (isentropic relations, converging and converging-diverging nozzles), free
jets (exact free-streamline contractions), the wall layer (Blasius, ISO 5167-3), the GCI procedure
and the fluid properties. Each row: quantity, exact or published value, computed value (finest
grid), error, observed order (where one is meaningful), source (``study.verify_sets``).
"""

from __future__ import annotations

import json
import math
import time
from dataclasses import asdict, replace
from pathlib import Path
from typing import Callable

from ..io.files import atomic_write_text, write_table
from ..io.ownership import record
from ..mesh import MeshError
from ..run import RunRefused
from ..solvers.base import FlowError
from .verify_sets import (Row, blasius_rows, borda_rows, howarth_rows, cd_nozzle_rows, celik_rows, cone_rows, converging_nozzle_rows,
                          isentropic_rows, iso_nozzle_rows, momentum_rows, slot_rows, sphere_rows, water_rows)

CAPABILITIES = ("potential", "gas", "free jet", "wall layer", "GCI", "fluid properties")


def verification_sets(quick: bool) -> list[tuple[str, str, Callable[[], list[Row]]]]:
    """(capability, set name, row builder), in the order they run. ``quick`` takes coarser grids and
    fewer levels; every set keeps the rows it has in the full run."""
    return [
        ("GCI", "GCI procedure", celik_rows),
        ("fluid properties", "water properties", water_rows),
        ("potential", "cone sink", lambda: cone_rows((0.02, 0.01, 0.005) if quick else (0.02, 0.01, 0.005, 0.0025))),
        ("potential", "sphere", lambda: sphere_rows((0.08, 0.04, 0.02) if quick else (0.04, 0.02, 0.01))),
        ("potential", "momentum theorem", lambda: momentum_rows((0, 2, 4) if quick else (0, 2, 4, 6))),
        ("gas", "isentropic relations", isentropic_rows),
        ("gas", "converging nozzle", lambda: converging_nozzle_rows(0.2 if quick else 0.1)),
        ("gas", "converging-diverging nozzle", lambda: cd_nozzle_rows(0 if quick else 2)),
        ("free jet", "planar slot", lambda: slot_rows(0.1)),
        ("free jet", "Borda tube", lambda: borda_rows(8, 0.2) if quick else borda_rows(15, 0.2)),
        ("wall layer", "flat plate", blasius_rows),
        ("wall layer", "retarded flow", howarth_rows),
        ("wall layer", "ISO 5167-3 nozzle", iso_nozzle_rows),
    ]


def not_computed(name: str, exc: Exception) -> Row:
    """The row of a set whose solve stopped (a flow, mesh or refusal message): it fails."""
    nan = float("nan")
    return Row(f"{name}: not computed ({exc})", nan, nan, nan, None, None, "the sources of this set", False)


def run_verification(out_dir: Path, quick: bool = False, progress: Callable[[str], None] | None = None) -> list[Row]:
    progress = progress or (lambda m: None)
    rows: list[Row] = []
    for capability, name, fn in verification_sets(quick):
        t = time.perf_counter()
        try:
            new = fn()
        except (FlowError, MeshError, RunRefused) as exc:  # a solve that stopped: a failed row, the other sets still run
            new = [not_computed(name, exc)]
        new = [replace(r, capability=capability) for r in new]
        rows += new
        progress(f"[verify] {capability}, {name}: {sum(r.passed for r in new)}/{len(new)} pass, "
                 f"{time.perf_counter() - t:.1f} s")
    write_rows(rows, Path(out_dir))
    return rows


def _json_number(v):
    return v if v is None or math.isfinite(v) else None  # a value not computed is null, never NaN


def _csv_text(text: str) -> str:
    return '"' + text.replace('"', '""') + '"'


def write_rows(rows: list[Row], out: Path) -> None:
    """verify.json (one object per row) and verify.csv (one line per row; the columns of earlier
    versions, then ``capability``)."""
    out.mkdir(parents=True, exist_ok=True)
    record(out, "verify", [])
    items = [{k: (_json_number(v) if isinstance(v, float) else v) for k, v in asdict(r).items()} for r in rows]
    atomic_write_text(out / "verify.json", json.dumps(items, indent=2) + "\n")
    lines = ["quantity,exact,computed,error,observed_order,expected_order,passed,source,capability"]
    for r in rows:
        po = "" if r.observed_order is None else f"{r.observed_order:.3f}"
        eo = "" if r.expected_order is None else f"{r.expected_order:g}"
        lines.append(f"{_csv_text(r.quantity)},{r.exact:.10g},{r.computed:.10g},{r.error:.4g},{po},{eo},{r.passed},"
                     f"{_csv_text(r.source)},{_csv_text(r.capability)}")
    write_table(out / "verify.csv", "\n".join(lines) + "\n",
                "axibore verify: a row a check; the exact or published value, the computed one, the error, the orders "
                "where a check has them, pass or fail, and the source of the value")
    record(out, "verify", ["verify.json", "verify.csv", "verify.csv.json"])


def table_lines(rows: list[Row]) -> list[str]:
    """The table printed by ``axibore verify``: the rows of each capability under its name."""
    w = max(len(r.quantity) for r in rows)
    out = [f"{'quantity':<{w}}  {'exact':>12}  {'computed':>12}  {'error':>10}  {'order':>6}  result"]
    capability = None
    for r in rows:
        if r.capability != capability:
            capability = r.capability
            out.append(f"-- {capability} --")
        po = "-" if r.observed_order is None else f"{r.observed_order:.2f}"
        out.append(f"{r.quantity:<{w}}  {r.exact:>12.6g}  {r.computed:>12.6g}  {r.error:>10.3g}  {po:>6}  {'pass' if r.passed else 'FAIL'}")
        out.append(f"{'':<{w}}  source: {r.source}")
    return out
