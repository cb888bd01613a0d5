"""The pictures and page of a sweep: one plot per varied key, sweep.html."""

from __future__ import annotations

import base64
import html
import math
import re
from pathlib import Path

from ..io.files import atomic_write_text
from ..io.ownership import remove_own
from ..safety import CAUTIONS
from ..view.plots import figure, save
from ..view.report import CSS

_NUMBER_UNIT = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")


def _numeric(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


# how an output is drawn: summary-key suffix -> (factor from SI, unit)
_PLOT_UNITS = (("_x_N", 1e-3, "kN"), ("_Pa", 1e-5, "bar"), ("_m3_s", 6e4, "L/min"), ("_kg_s", 1.0, "kg/s"),
               ("_m_s", 1.0, "m/s"))


def _plot_unit(output: str) -> tuple[float, str]:
    return next(((k, u) for suffix, k, u in _PLOT_UNITS if output.endswith(suffix)), (1.0, "-"))


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
            for g, members in groups.items():
                k_o = _plot_unit(o)[0]
                pts = sorted((xval[id(r)], r[o] * k_o) for r in members if _numeric(r.get(o)))
                if not pts:
                    continue
                label = ", ".join(f"{k}={v}" for k, v in zip(others, g)) or None
                ax.plot([p[0] for p in pts], [p[1] for p in pts], marker="o", label=label)
            unit = _plot_unit(o)[1]
            ax.set_ylabel(f"{o} [{unit}]", fontsize=8)
            ax.ticklabel_format(axis="y", useOffset=False, style="plain")
            ax.grid(True, alpha=0.3)
            if others and len(groups) <= 8:
                ax.legend(fontsize=7)
        axes[-1, 0].set_xlabel(f"{key} [{given[1]}]" if given and given[1] else f"{key} (SI)")
        fig.suptitle(f"{result.title}: against {key}", fontsize=10)
        fig.tight_layout()
        paths.append(save(fig, out_dir / f"plot_vs_{key.replace('.', '_').replace('[', '_').replace(']', '')}.png"))
    return paths


def write_html(result: "SweepResult", out_dir: Path, pngs: list[Path]) -> Path:
    """sweep.html: the table and the plots (embedded), self-contained."""


    e = html.escape
    shown = ("forces.wall_x_N", "forces.total_x_N", "flow.volume_flow_m3_s", "flow.mass_flow_kg_s",
             "flow.discharge_coefficient", "pressure.min_wall_gauge_Pa")
    parts = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>axibore sweep: {e(result.title)}</title>",
             f"<style>{CSS}</style></head><body><h1>Sweep: {e(result.title)}</h1>",
             f"<p class='meta'>{len(result.rows)} points, {len(result.failed)} not ok; varied: {e(', '.join(result.keys))}</p>",
             "<div class='caution'><strong>Caution.</strong> " + " ".join(e(c) for c in CAUTIONS) + "</div>",
             "<h2>Points</h2><table><tr><th>#</th>" + "".join(f"<th>{e(k)}</th>" for k in result.keys)
             + "".join(f"<th>{e(s)}</th>" for s in shown) + "<th>status</th><th>run directory</th></tr>"]
    for r in result.rows:
        cells = "".join(f"<td>{e(str(r.get(k, '')))}</td>" for k in result.keys)
        cells += "".join(f"<td class='num'>{'-' if r.get(s) is None else f'{r[s]:.6g}'}</td>" for s in shown)
        status = e(r["status"]) + (f": {e(str(r['error']))}" if r.get("error") else "")
        cls = "" if r["status"] == "ok" else " class='warn'"
        parts.append(f"<tr><td>{r['point']}</td>{cells}<td{cls}>{status}</td>"
                     f"<td><a href='{e(r['run_dir'])}/summary.json'>{e(r['run_dir'])}</a></td></tr>")
    parts.append("</table>")
    if pngs:
        parts.append("<h2>Plots</h2>")
    for p in pngs:
        src = "data:image/png;base64," + base64.b64encode(Path(p).read_bytes()).decode("ascii")
        parts.append(f"<figure><img alt='{e(p.stem)}' src='{src}'><figcaption>{e(p.stem)}</figcaption></figure>")
    parts.append("</body></html>")
    return atomic_write_text(out_dir / "sweep.html", "\n".join(parts))
