"""Design comparison: the headline numbers of several run directories side by side, with the
differences from the first (absolute, and relative where that means something), and their
wall-pressure curves overlaid.

Runs of a planar section (per metre of depth) and of a body of revolution (whole) are not compared:
their flows and forces are different quantities. Runs of a liquid and of a gas are compared but
flagged (the volume flow of a gas is not the same measure as that of a liquid).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path

from ..io.files import read_csv
from ..view.labels import display, label, number
from ..view.page import Col, Page, signoff_for, text_hash
from ..view.plots import figure, line_style, save

# (summary key, relative difference meaningful): gauge pressures have no natural zero (ambient), so no per cent
ROWS = (
    ("forces.total_x_N", True),
    ("forces.wall_x_N", True),
    ("forces.jet_reaction_N", True),
    ("flow.volume_flow_m3_s", True),
    ("flow.mass_flow_kg_s", True),
    ("flow.discharge_coefficient", True),
    ("flow.contraction_coefficient", True),
    ("pressure.inlet_gauge_Pa", False),
    ("pressure.min_wall_gauge_Pa", False),
    ("flow.max_speed_m_s", True),
)


class CompareError(ValueError):
    """Runs that cannot be compared (the message says which and why)."""


@dataclass
class Comparison:
    runs: list[Path]
    summaries: list[dict]
    rows: list[dict]  # key, label, dim, values (one per run), diff and rel against the first run
    names: list[str] = field(default_factory=list)  # one distinct name per run
    flags: list[str] = field(default_factory=list)  # what the reader must know (different fluids ...)

    @property
    def planar(self) -> bool:
        """Planar sections (all of them: check_comparable refuses a mix): flows and forces per metre of depth."""
        return bool((self.summaries[0].get("geometry") or {}).get("per_unit_depth"))

    def lines(self) -> list[str]:
        """The comparison as printed lines: values in the units of the pages (mm, bar, kN or N, L/s)."""
        names = self.names
        w = max(12, *(len(n) for n in names))
        lw = max([8] + [len(r["label"]) for r in self.rows]) + 2
        head = f"{'quantity':<{lw}}{'unit':<6}" + "".join(f"{n:>{w + 2}}" for n in names)
        head += "".join(f"{'d ' + n:>{w + 4}}{'rel':>11}" for n in names[1:])
        out = [head]
        for row in self.rows:
            unit, k = display(row["dim"], [v for v in row["values"] if v is not None], planar=self.planar)
            line = f"{row['label']:<{lw}}{unit:<6}" + "".join(f"{number(v, k, 6):>{w + 2}}" for v in row["values"])
            for d, rel in zip(row["diff"], row["rel"]):
                line += f"{_signed(d, k):>{w + 4}}{'-' if rel is None else f'{rel:+.3%}':>11}"
            out.append(line)
        return out + [f"note: {f}" for f in self.flags]


def _signed(d, k: float) -> str:
    if d is None:
        return "–"
    text = number(d, k, 4)
    return text if text.startswith("−") or text == "0" else "+" + text


def run_names(run_dirs: list[Path]) -> list[str]:
    """A distinct name for each run: its folder name, with as many parent folders as it takes to tell them apart."""
    paths = [Path(d).resolve() for d in run_dirs]
    depth = 1
    while True:
        names = ["/".join(p.parts[-depth:]) for p in paths]
        if len(set(names)) == len(names) or depth >= max(len(p.parts) for p in paths):
            break
        depth += 1
    if len(set(names)) < len(names):  # the same folder given twice
        names = [f"{n} ({i})" for i, n in enumerate(names, 1)]
    return names


def tags(n: int) -> list[str]:
    """Short column tags of the runs on the page: A, B, C ... (A1, B1 ... past Z)."""
    return [chr(65 + i % 26) + (str(i // 26) if i >= 26 else "") for i in range(n)]


def _numeric(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def check_comparable(names: list[str], summaries: list[dict]) -> list[str]:
    """CompareError for runs of different symmetry; the flags of runs that compare with care."""
    sym = [(s.get("geometry") or {}).get("symmetry", "axisymmetric") for s in summaries]
    if len(set(sym)) > 1:
        which = ", ".join(f"{n}: {y}" for n, y in zip(names, sym))
        raise CompareError(f"cannot compare a planar section (flows and forces per metre of depth, N/m) with a body of "
                           f"revolution (whole flows and forces, N): {which}; compare runs of one symmetry")
    flags = []
    gas = [bool(s["flow"].get("compressible")) for s in summaries]
    if len(set(gas)) > 1:
        flags.append("these runs mix a liquid and a gas: " + ", ".join(f"{n}: {'gas' if g else 'liquid'}"
                                                                          for n, g in zip(names, gas))
                     + "; the volume flow of a gas depends on where it is measured: compare its mass flow")
    solvers = {s["solver"]["kind"] for s in summaries}
    if len(solvers) > 1:
        flags.append(f"these runs were solved by different solvers ({', '.join(sorted(solvers))})")
    if sym[0] == "planar":
        flags.append("planar sections: flows and forces per metre of depth")
    return flags


def compare_runs(run_dirs: list[Path]) -> Comparison:
    summaries = [json.loads((Path(d) / "summary.json").read_text(encoding="utf-8")) for d in run_dirs]
    names = run_names(run_dirs)
    flags = check_comparable(names, summaries)
    specs: list[tuple[str, str, str, int, list, bool]] = []
    for key, rel in ROWS:
        lab = label(key)
        section, name = key.split(".")
        specs.append((key, lab.text, lab.dim, lab.digits, [s.get(section, {}).get(name) for s in summaries], rel))
    # the bolt load of each joint, by the joint's name (runs without it show a dash)
    joint_names: list[str] = []
    for s in summaries:
        for j in s.get("joints") or []:
            if j["name"] not in joint_names:
                joint_names.append(j["name"])
    for jn in joint_names:
        for field_, text, digits in (("load_N", "bolt load", 5), ("per_bolt_N", "load per bolt", 4)):
            vals = [next((j[field_] for j in s.get("joints") or [] if j["name"] == jn), None) for s in summaries]
            specs.insert(len([x for x in specs if x[0].startswith("joints.")]),
                         (f"joints.{jn}.{field_}", f"{text}, joint {jn}", "force", digits, vals, True))
    rows = []
    for key, text, dim, digits, vals, rel_ok in specs:
        vals = [v if _numeric(v) else None for v in vals]
        if all(v is None for v in vals):
            continue
        base = vals[0]
        scale = max((abs(v) for v in vals if v is not None), default=0.0)
        diff, rel = [], []
        for v in vals[1:]:
            d = None if v is None or base is None else v - base
            diff.append(d)
            meaningful = rel_ok and base is not None and abs(base) > 0.01 * scale and base != 0
            rel.append(d / abs(base) if d is not None and meaningful else None)
        rows.append({"key": key, "label": text, "dim": dim, "digits": digits, "values": vals, "diff": diff, "rel": rel})
    return Comparison([Path(d) for d in run_dirs], summaries, rows, names, flags)


def plot_wall_pressure(cmp: Comparison, path: Path) -> Path:
    fig, ax = figure(7.0, 4.0, dpi=120)
    for i, (d, name) in enumerate(zip(cmp.runs, cmp.names)):
        t = read_csv(d / "wall.csv")
        style = line_style(i)
        ax.plot(t["x_m"] * 1e3, t["p_gauge_Pa"] / 1e5, label=f"{tags(len(cmp.runs))[i]}: {name}", markevery=max(len(t["x_m"]) // 14, 1),
                **style)
    ax.set_xlabel("axial position x [mm]")
    ax.set_ylabel("wall pressure, gauge [bar]")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title("Wall pressure along the bore", fontsize=10)
    fig.tight_layout()
    return save(fig, path)


def write_html(cmp: Comparison, out_dir: Path) -> Path:
    """Write compare.html and its wall-pressure picture into ``out_dir``."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    png = plot_wall_pressure(cmp, out_dir / "compare_wall_pressure.png")
    names, tag = cmp.names, tags(len(cmp.names))
    page = Page("Comparison", f"{len(names)} runs", [f"differences against run A, {names[0]}"])
    page.cautions()
    for f in cmp.flags:
        page.warn(f)
    page.h2("Runs")
    hashes = [text_hash((d / "case.toml").read_text(encoding="utf-8")) if (d / "case.toml").exists() else "–"
              for d in cmp.runs]
    page.table([Col("tag", num=False), Col("run folder", num=False, cls="name"), Col("case", num=False),
                Col("solver", num=False), Col("case hash", num=False)],
               [[t, n, s.get("title", ""), s["solver"]["kind"], h] for t, n, s, h in zip(tag, names, cmp.summaries, hashes)])
    page.h2("Headline numbers")
    cols = [Col("quantity", num=False), Col("unit", num=False)] + [Col(t) for t in tag]
    for t in tag[1:]:
        cols += [Col(f"{t} − A"), Col(f"{t} − A", "%")]
    rows = []
    for row in cmp.rows:
        unit, k = display(row["dim"], [v for v in row["values"] if v is not None], planar=cmp.planar)
        cells = [row["label"], unit] + [number(v, k, row["digits"]) for v in row["values"]]
        for d, rel in zip(row["diff"], row["rel"]):
            cells += [_signed(d, k), "–" if rel is None else f"{rel * 100:+.2f}".replace("-", "−")]
        rows.append(cells)
    page.table(cols, rows)
    page.p("Relative differences are shown only where the first run's value is not near zero, and not for gauge "
           "pressures (their zero is the ambient pressure).", "meta")
    page.h2("Wall pressure")
    page.figure(png, "Wall gauge pressure of each run along the axis (wall.csv of each run folder).", "wall pressure")
    page.signoff(signoff_for("; ".join(dict.fromkeys(s.get("title", "") for s in cmp.summaries)), ", ".join(hashes)))
    return page.write(out_dir / "compare.html")
