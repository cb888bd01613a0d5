"""The pictures and page of a sweep: one plot per varied key, sweep.html."""

from __future__ import annotations

import math
import re
from pathlib import Path

from ..io.ownership import remove_own
from ..view.labels import case_key_label, display, label, number
from ..view.page import Cell, Col, Page, signoff_for
from ..view.plots import figure, line_style, save

_NUMBER_UNIT = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")


def _numeric(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _unit(output: str, rows: list[dict]) -> tuple[str, float]:
    """The display unit and factor of an output column (one unit for the whole column; view/labels.py)."""
    return display(label(output).dim, [r.get(output) for r in rows if _numeric(r.get(output))])


def _given_axis(rows: list[dict], key: str) -> tuple[list[float], str] | None:
    """The values of ``key`` as the user gave them, when all are numbers in one unit ("8 deg", ...)."""
    units, nums = set(), []
    for r in rows:
        m = _NUMBER_UNIT.match(str(r.get(key, "")))
        if not m:
            return None
        nums.append(float(m.group(1)))
        units.add(m.group(2))
    return (nums, units.pop()) if len(units) == 1 else None


def plot_sweep(result: "SweepResult", out_dir: Path, outputs: tuple[str, ...]) -> list[Path]:
    """One PNG per varied key: the chosen outputs against it, a line for each value of the other keys."""

    remove_own(out_dir, "plot_*.png")  # the earlier pass's plots (a user's file of that name is kept)
    paths = []
    rows = [r for r in result.rows if r["status"] == "ok"]
    outputs = tuple(o for o in outputs if any(_numeric(r.get(o)) for r in rows))
    if not rows or not outputs:
        return paths
    for key in result.keys:
        xs_key = f"{key} [SI]"
        if not all(_numeric(r[xs_key]) for r in rows) or len({r[xs_key] for r in rows}) < 2:
            continue
        others = [k for k in result.keys if k != key]
        given = _given_axis(rows, key)
        xval = {id(r): v for r, v in zip(rows, given[0])} if given else {id(r): r[xs_key] for r in rows}
        fig, axes = figure(6.4, 2.6 * len(outputs) + 0.6, dpi=110, nrows=len(outputs), squeeze=False)
        for ax, o in zip(axes[:, 0], outputs):
            groups: dict[tuple, list] = {}
            for r in rows:
                groups.setdefault(tuple(r.get(k) for k in others), []).append(r)
            unit, k_o = _unit(o, rows)
            for i, (g, members) in enumerate(groups.items()):
                pts = sorted((xval[id(r)], r[o] * k_o) for r in members if _numeric(r.get(o)))
                if not pts:
                    continue
                name = ", ".join(f"{case_key_label(k)} {v}" for k, v in zip(others, g)) or None
                ax.plot([p[0] for p in pts], [p[1] for p in pts], label=name, **line_style(i))
            ax.set_ylabel(f"{label(o).text}" + (f" [{unit}]" if unit else ""), fontsize=8)
            ax.ticklabel_format(axis="y", useOffset=False, style="plain")
            ax.grid(True, alpha=0.3)
            if others and len(groups) <= 8:
                ax.legend(fontsize=7)
        axes[-1, 0].set_xlabel(f"{case_key_label(key)} [{given[1]}]" if given and given[1] else f"{case_key_label(key)} (SI)")
        fig.suptitle(f"{result.title}: against {case_key_label(key)}", fontsize=10)
        fig.tight_layout()
        paths.append(save(fig, out_dir / f"plot_vs_{_stem(key)}.png"))
    return paths


SHOWN = ("forces.total_x_N", "flow.volume_flow_m3_s", "flow.mass_flow_kg_s", "flow.discharge_coefficient",
         "pressure.min_wall_gauge_Pa", "forces.wall_x_N")


def write_html(result: "SweepResult", out_dir: Path, pngs: list[Path], case_hash: str = "–") -> Path:
    """sweep.html: the table and the plots (embedded), self-contained, on the page scaffold."""
    ok = [r for r in result.rows if r["status"] == "ok"]
    shown = [o for o in SHOWN if any(_numeric(r.get(o)) for r in result.rows)]
    varied = ", ".join(case_key_label(k) for k in result.keys)
    page = Page("Sweep", result.title, [f"{len(result.rows)} points, {len(result.failed)} not ok", f"varied: {varied}"])
    page.cautions()
    page.h2("Points")
    cols = [Col("point")] + [Col(case_key_label(k), num=False) for k in result.keys]
    units = {o: _unit(o, ok) for o in shown}
    cols += [Col(label(o).text, units[o][0]) for o in shown]
    cols += [Col("status", num=False), Col("run folder", num=False, cls="name")]
    rows = []
    for r in result.rows:
        row = [str(r["point"])] + [str(r.get(k, "")) for k in result.keys]
        row += [Cell(number(r.get(o), units[o][1], label(o).digits), o, r.get(o)) for o in shown]
        row += [r["status"] + (f": {r['error']}" if r.get("error") else ""), r["run_dir"]]
        rows.append(row)
    page.table(cols, rows)
    page.p("Forces are by the fluid on the part, +x downstream; gauge pressures relative to the ambient. Each run "
           "folder holds the point's own report.", "meta")
    if pngs:
        page.h2("Plots")
    for p in pngs:
        key = next((k for k in result.keys if p.stem == f"plot_vs_{_stem(k)}"), None)
        page.figure(p, f"The outputs against {case_key_label(key)}" if key else p.stem, p.stem)
    page.signoff(signoff_for(result.title, case_hash))
    return page.write(out_dir / "sweep.html")


def _stem(key: str) -> str:
    return key.replace(".", "_").replace("[", "_").replace("]", "")
