"""The files of an uncertainty study that people read: uncertainty.csv (one row a headline quantity, its
columns the keys of uncertainty.json), uncertainty.html (on the page scaffold) and the contribution chart."""

from __future__ import annotations

import csv
import io
import math
import re
from pathlib import Path

from ..io.files import write_table
from ..view.labels import case_key_label, display, number
from ..view.page import Col, Page, signoff_for
from ..view.plots import figure, save

CSV_COLUMNS = ("name", "value", "u_numerical", "gci_fine_rel", "observed_order", "u_input", "u_combined", "expanded_k2")

# the unit a headline name carries (study/uncertainty.py::headline) -> the dimension it is shown in
_DIMS = {"N": "force", "m3/s": "volume_flow", "kg/s": "mass_flow", "Pa gauge": "pressure", "-": "ratio"}
_NAME = re.compile(r"^(.*?)\s*\[([^\]]*)\]\s*$")


_WORDS = ((re.compile(r"^wall force on the part$"), "axial force on the part"),
          (re.compile(r"^joint (.*) load$"), r"bolt load, joint \1"),
          (re.compile(r"^joint (.*) per bolt$"), r"load per bolt, joint \1"),
          (re.compile(r"^min wall pressure$"), "least wall pressure, gauge"),
          (re.compile(r"^cavitation margin sigma - sigma_i$"), "cavitation margin σ − σi"),
          (re.compile(r"^choked mass flow$"), "mass flow, choked"))


def split_name(name: str) -> tuple[str, str]:
    """The words a page shows for a headline name and its dimension: ("axial force on the part", "force") from
    "wall force on the part [N]" (the names in uncertainty.json stay as they are)."""
    m = _NAME.match(name)
    text, dim = (m.group(1), _DIMS.get(m.group(2), "ratio")) if m else (name, "ratio")
    for pattern, words in _WORDS:
        if pattern.match(text):
            return pattern.sub(words, text), dim
    return text, dim


def _nominal(i) -> tuple[str, str]:
    """(number, unit) of an input's nominal value and its uncertainty as the pages show them."""
    if i.dimension == "angle":
        return number(math.degrees(i.nominal), 1.0, 5), "deg"
    if i.dimension == "temperature":
        return number(i.nominal - 273.15, 1.0, 5), "degC"
    unit, k = display(i.dimension or "ratio", [i.nominal])
    if i.dimension not in ("length", "pressure", "volume_flow", "mass_flow"):
        unit, k = {"density": ("kg/m^3", 1.0)}.get(i.dimension or "", ("", 1.0))
    return number(i.nominal, k, 5), unit


def write_csv(result, out_dir: Path) -> Path:
    """uncertainty.csv: the columns of each quantity of uncertainty.json (``contributions.KEY``: c u of an input)."""
    keys = [i.key for i in result.inputs] if result.method == "linear" else []
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(list(CSV_COLUMNS) + [f"contributions.{k}" for k in keys])
    for q in result.quantities:
        d = q.as_dict()
        w.writerow([d["name"]] + ["" if d[c] is None else f"{d[c]:.10g}" for c in CSV_COLUMNS[1:]]
                   + ["" if q.contributions.get(k) is None else f"{q.contributions[k]:.10g}" for k in keys])
    return write_table(out_dir / "uncertainty.csv", buf.getvalue(),
                       "axibore uncertainty: a row a headline quantity; its value at the finest level, the numerical "
                       "(grid) and input standard uncertainties, the combined one and U at k = 2 (ASME V&V 20-2009), "
                       "and contributions.KEY = sensitivity x standard uncertainty of each input")


def _parts(q) -> list[tuple[str, float]]:
    """(what, standard uncertainty it contributes) of a quantity, the numerical part first."""
    parts = [("numerical (GCI / 2)", q.u_num or 0.0)]
    if q.montecarlo is not None:
        parts.append(("inputs together (Monte Carlo)", q.montecarlo["std"]))
    else:
        parts += [(case_key_label(k), abs(c)) for k, c in q.contributions.items()]
    return parts


def plot_contributions(result, path: Path) -> Path | None:
    """One bar chart a quantity: the standard uncertainty each source contributes, in the quantity's unit."""
    qs = [q for q in result.quantities if q.value is not None and q.u_combined is not None]
    if not qs:
        return None
    n_bars = max(len(_parts(q)) for q in qs)
    ncols = 2 if len(qs) > 1 else 1
    nrows = math.ceil(len(qs) / ncols)
    fig, axes = figure(7.2, nrows * (0.45 + 0.28 * n_bars) + 0.3, dpi=120, nrows=nrows, ncols=ncols, squeeze=False)
    for ax, q in zip(axes.flat, qs):
        text, dim = split_name(q.name)
        unit, k = display(dim, [q.value])
        parts = _parts(q)
        labels = [p[0] for p in parts]
        vals = [p[1] * k for p in parts]
        big = max(range(len(vals)), key=lambda i: vals[i])
        ax.barh(range(len(vals)), vals, color=["#c8941a" if i == big else "#23395b" for i in range(len(vals))],
                height=0.6)
        ax.set_yticks(range(len(vals)), labels, fontsize=7)
        ax.invert_yaxis()
        ax.set_title(text, fontsize=8)
        ax.set_xlabel(f"standard uncertainty [{unit}]" if unit else "standard uncertainty", fontsize=7)
        ax.tick_params(axis="x", labelsize=7)
        ax.grid(True, axis="x", alpha=0.3)
    for ax in list(axes.flat)[len(qs):]:
        ax.axis("off")
    fig.tight_layout()
    return save(fig, path)


def write_html(result, out_dir: Path, chart: Path | None, caution: str, case_hash: str = "–") -> Path:
    """uncertainty.html: the inputs, each quantity's value with its numerical, input, combined and expanded
    uncertainty and its dominant source, and the contribution chart."""
    method = "first order (central differences)" if result.method == "linear" else "Monte Carlo (Latin hypercube)"
    page = Page("Uncertainty", result.title, [f"grid levels {', '.join(map(str, result.levels))}", f"input propagation: {method}",
                                              "coverage factor k = 2 (about 95 %)"])
    page.cautions()
    page.caution("Scope.", caution)
    for f in result.failed:
        page.warn(f"run failed or did not converge: {f}")
    page.h2("Inputs")
    if result.inputs:
        page.table([Col("input", num=False), Col("case-file key", num=False, cls="name"), Col("nominal"),
                    Col("unit", num=False), Col("standard uncertainty u, as given", num=False)],
                   [[case_key_label(i.key), i.key, *_nominal(i), i.given] for i in result.inputs])
    else:
        page.p("No input uncertainties were given ([uncertainty] in the case or --input): the numerical part alone.")
    page.h2("Headline numbers with their uncertainty")
    cols = [Col("quantity", num=False), Col("unit", num=False), Col("value"), Col("u numerical"), Col("u inputs"),
            Col("u combined"), Col("U, k = 2"), Col("U / |value|", "%"), Col("largest source", num=False)]
    rows, notes = [], {}
    for q in result.quantities:
        text, dim = split_name(q.name)
        unit, k = display(dim, [q.value] if q.value is not None else [])
        rel = "–" if q.expanded is None or not q.value else number(q.expanded / abs(q.value) * 100, 1.0, 2)
        parts = _parts(q)
        top = max(parts, key=lambda p: p[1])[0] if any(p[1] for p in parts) else "–"
        rows.append([text, unit, number(q.value, k, 5), number(q.u_num, k, 3), number(q.u_input, k, 3),
                     number(q.u_combined, k, 3), number(q.expanded, k, 3), rel, top])
        if q.note:
            notes[len(rows) - 1] = [q.note]
    page.table(cols, rows, notes=notes)
    page.p("u numerical: the GCI of the finest level (Celik et al. 2008) read as a 95 % expanded uncertainty, "
           "standard = GCI / 2; u inputs: sqrt of the sum of (c u)^2 over the inputs (independent), or the Monte Carlo "
           "standard deviation; u combined = sqrt(u numerical^2 + u inputs^2); U = 2 u combined (ASME V&V 20-2009; GUM, "
           "JCGM 100:2008).", "meta")
    if chart is not None:
        page.h2("Where the uncertainty comes from")
        page.figure(chart, "Standard uncertainty each source contributes to each quantity; the largest in ochre.",
                    "contributions")
    page.signoff(signoff_for(result.title, case_hash))
    return page.write(out_dir / "uncertainty.html")
