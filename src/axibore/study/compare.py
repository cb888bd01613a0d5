"""Design comparison: the headline numbers of several run directories side by side, with the
differences from the first (absolute and relative), and their wall-pressure curves overlaid."""

from __future__ import annotations

import base64
import html
import json
import math
from dataclasses import dataclass
from pathlib import Path

from .sweep import OUTPUTS
from ..io.files import atomic_write_text, read_csv
from ..safety import CAUTIONS
from ..view.plots import figure, save
from ..view.report import CSS


@dataclass
class Comparison:
    runs: list[Path]
    summaries: list[dict]
    rows: list[dict]  # name, values (one per run), diffs and rel diffs against the first run

    def lines(self) -> list[str]:
        names = [r.name for r in self.runs]
        head = f"{'quantity':<28}" + "".join(f"{n[:16]:>18}" for n in names)
        head += "".join(f"{'d(' + n[:10] + ')':>16}{'rel':>10}" for n in names[1:])
        out = [head]
        for row in self.rows:
            line = f"{row['name']:<28}" + "".join(f"{'-' if v is None else f'{v:.6g}':>18}" for v in row["values"])
            for d, rel in zip(row["diff"], row["rel"]):
                line += f"{'-' if d is None else f'{d:+.4g}':>16}{'-' if rel is None else f'{rel:+.3%}':>10}"
            out.append(line)
        return out


def compare_runs(run_dirs: list[Path]) -> Comparison:
    summaries = [json.loads((Path(d) / "summary.json").read_text(encoding="utf-8")) for d in run_dirs]
    rows = []
    for name, section, key in OUTPUTS:
        vals = [s.get(section, {}).get(key) for s in summaries]
        vals = [v if isinstance(v, (int, float)) and not isinstance(v, bool) else None for v in vals]
        if all(v is None for v in vals):
            continue
        base = vals[0]
        diff, rel = [], []
        for v in vals[1:]:
            d = None if v is None or base is None else v - base
            diff.append(d)
            rel.append(None if d is None or base == 0 or not math.isfinite(base) else d / abs(base))
        rows.append({"name": name, "values": vals, "diff": diff, "rel": rel})
    return Comparison([Path(d) for d in run_dirs], summaries, rows)


def plot_wall_pressure(cmp: Comparison, path: Path) -> Path:

    fig, ax = figure(7.0, 4.2, dpi=120)
    for d in cmp.runs:
        t = read_csv(d / "wall.csv")
        ax.plot(t["x_m"], t["p_gauge_Pa"] / 1e5, label=d.name)
    ax.set_xlabel("x [m]")
    ax.set_ylabel("wall pressure, gauge [bar]")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title("Wall pressure", fontsize=10)
    fig.tight_layout()
    return save(fig, path)


def write_html(cmp: Comparison, out_dir: Path) -> Path:
    """Write compare.html and its wall-pressure picture into ``out_dir``."""
    e = html.escape
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    png = plot_wall_pressure(cmp, out_dir / "compare_wall_pressure.png")
    names = [r.name for r in cmp.runs]
    parts = ["<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>axibore comparison</title>",
             f"<style>{CSS}</style></head><body><h1>Comparison of {len(names)} runs</h1>",
             "<p class='meta'>" + "; ".join(f"{e(n)}: {e(s.get('title', ''))}" for n, s in zip(names, cmp.summaries)) + "</p>",
             "<div class='caution'><strong>Caution.</strong> " + " ".join(e(c) for c in CAUTIONS) + "</div>",
             "<table><tr><th>quantity</th>" + "".join(f"<th>{e(n)}</th>" for n in names)
             + "".join(f"<th>{e(n)} - {e(names[0])}</th><th>relative</th>" for n in names[1:]) + "</tr>"]
    for row in cmp.rows:
        cells = "".join(f"<td class='num'>{'-' if v is None else f'{v:.7g}'}</td>" for v in row["values"])
        for d, rel in zip(row["diff"], row["rel"]):
            cells += f"<td class='num'>{'-' if d is None else f'{d:+.5g}'}</td><td class='num'>{'-' if rel is None else f'{rel:+.3%}'}</td>"
        parts.append(f"<tr><td>{e(row['name'])}</td>{cells}</tr>")
    src = "data:image/png;base64," + base64.b64encode(png.read_bytes()).decode("ascii")
    parts.append(f"</table><h2>Wall pressure</h2><figure><img alt='wall pressure' src='{src}'>"
                 "<figcaption>wall.csv: p_gauge_Pa against x_m of each run</figcaption></figure></body></html>")
    return atomic_write_text(out_dir / "compare.html", "\n".join(parts))
