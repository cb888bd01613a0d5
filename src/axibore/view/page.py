"""One page scaffold for every HTML page the tool writes (report, sweep, grid study, compare, uncertainty).

A page is self-contained (pictures embedded), reads on screen and prints on A4: page numbers in the
bottom margin of every printed page, tables that scroll inside their own box on screen and shrink
to the page in print, numbers right-aligned with tabular figures, units under the column labels.

    page = Page("Sweep", title, meta=["12 points"])
    page.cautions()
    page.table([Col("point", num=False), Col("axial force on the part", "kN")], rows)
    page.figure(png, "caption")
    page.signoff(SignOff(...))
    page.write(path)
"""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import html
import socket
from dataclasses import dataclass
from pathlib import Path

from ..io.files import atomic_write_text
from ..safety import CAUTIONS
from ..version import __version__

CSS = """
@page { size: A4; margin: 13mm 12mm 15mm 12mm;
  @bottom-right { content: "page " counter(page) " of " counter(pages); font: 7.5pt "DejaVu Sans", Arial, sans-serif; color: #555; }
  @bottom-left { content: "__FOOT__"; font: 7.5pt "DejaVu Sans", Arial, sans-serif; color: #555; } }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 9.5pt; color: #1b1b1b; max-width: 186mm;
  margin: 6mm auto; padding: 0 3mm; line-height: 1.35; }
h1 { font-size: 15pt; margin: 0 0 1mm 0; color: #23395b; }
h1 .kind { font-weight: normal; color: #555; }
h2 { font-size: 11.5pt; margin: 5mm 0 1.5mm 0; color: #23395b; border-bottom: 0.4mm solid #23395b; break-after: avoid; }
h3 { font-size: 10pt; margin: 3mm 0 1mm 0; break-after: avoid; }
p { margin: 1.2mm 0; }
.meta { color: #555; font-size: 8pt; margin: 0 0 2mm 0; }
.caution { border: 0.5mm solid #9c3d26; background: #fbefea; padding: 2mm 3mm; margin: 2.5mm 0; font-size: 8.5pt;
  break-inside: avoid; }
.caution strong { color: #9c3d26; }
.warn { border-left: 1.2mm solid #c8941a; background: #fdf7e3; padding: 1.2mm 2.5mm; margin: 1.2mm 0; font-size: 8.5pt; }
.verdict { font-weight: bold; }
.ok { color: #2d6a36; } .bad { color: #9c3d26; }
.tablebox { overflow-x: auto; max-width: 100%; margin: 1.5mm 0 2.5mm 0; }
table.data { border-collapse: collapse; font-size: 8.8pt; min-width: 60%; }
table.data.full { width: 100%; }
table.data th, table.data td { border-bottom: 0.2mm solid #cfcfcf; padding: 0.8mm 1.8mm; text-align: left; vertical-align: top; }
table.data th { background: #edf1f6; font-weight: bold; vertical-align: bottom; }
table.data th .unit { display: block; font-weight: normal; color: #555; font-size: 0.92em; }
table.data th.num, table.data td.num { text-align: right; }
table.data td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
table.data td.name { overflow-wrap: break-word; word-break: normal; }
table.data td.nowrap { white-space: nowrap; }
table.data td.num.text { white-space: normal; text-align: left; font-variant-numeric: normal; }
table.data tr.group td { background: #f6f6f6; font-weight: bold; color: #23395b; }
table.data tr.note td { color: #6b4d00; font-size: 0.92em; }
figure { margin: 2.5mm 0; break-inside: avoid; }
figure img { max-width: 100%; height: auto; border: 0.2mm solid #ddd; display: block; }
figure.half { display: inline-block; width: 49%; vertical-align: top; }
figure.sketch img { max-height: 75mm; width: auto; margin: 0 auto; border: none; }
figure.sketch figcaption { text-align: center; }
code { font-size: 0.92em; background: #f2f2f2; padding: 0 0.8mm; overflow-wrap: anywhere; }
figcaption { font-size: 8pt; color: #444; }
pre { font-size: 7.5pt; white-space: pre-wrap; overflow-wrap: anywhere; background: #f6f6f6; padding: 2mm; }
.signoff { border: 0.3mm solid #888; padding: 2mm 3mm; margin: 4mm 0; break-inside: avoid; font-size: 8.5pt; }
.signoff table { border-collapse: collapse; width: 100%; }
.signoff td { padding: 0.8mm 1.5mm; vertical-align: bottom; white-space: nowrap; }
.signoff td.k { color: #555; width: 1%; }
.signoff td.wrap { white-space: normal; overflow-wrap: break-word; }
.signoff td.line { border-bottom: 0.2mm solid #333; height: 7mm; width: 21%; }
.pagebreak { break-before: page; }
@media print {
  body { margin: 0 auto; padding: 0; max-width: none; font-size: 9pt; }
  h2 { margin-top: 2.6mm; }
  .caution { font-size: 8pt; padding: 1.5mm 2.5mm; }
  figure.sketch img { max-height: 45mm; }
  table.data th, table.data td { padding: 0.35mm 1.5mm; }
  .tablebox { overflow: visible; }
  table.data { width: 100%; }
  table.data.wide { font-size: 7pt; }
  table.data.wide td.num { white-space: normal; }
  table.data tr { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"""

e = html.escape


@dataclass(frozen=True)
class Col:
    """A table column: its human label, its unit (shown under the label) and whether it holds numbers."""
    label: str
    unit: str = ""
    num: bool = True
    cls: str = ""


@dataclass(frozen=True)
class Cell:
    """A table cell whose text stands for a summary.json number (``data-key``/``data-value`` kept)."""
    text: str
    key: str = ""
    value: object = None
    cls: str = ""


def image_src(png: str | Path | bytes) -> str:
    data = png if isinstance(png, bytes) else Path(png).read_bytes()
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def text_hash(text: str) -> str:
    """The hash a resolved case is known by (the first 12 hex digits of the SHA-256 of its case.toml text;
    the name of a study's run folder)."""
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:12]


@dataclass(frozen=True)
class SignOff:
    """What identifies the result a page is signed off on."""
    title: str
    case_hash: str  # or several, joined
    version: str = __version__
    date: str = ""
    host: str = ""


def signoff_for(title: str, case_hash: str) -> SignOff:
    return SignOff(title, case_hash, __version__, dt.datetime.now().strftime("%Y-%m-%d %H:%M"), socket.gethostname())


def _cell(c, col: Col) -> str:
    if isinstance(c, Cell):
        cls = " ".join(x for x in ("num" if col.num else "", col.cls, c.cls) if x)
        data = f' data-key="{e(c.key)}" data-value="{e(_raw(c.value))}"' if c.key else ""
        return f"<td class='{cls}'{data}>{e(c.text)}</td>" if cls else f"<td{data}>{e(c.text)}</td>"
    cls = " ".join(x for x in ("num" if col.num else "", col.cls) if x)
    return f"<td class='{cls}'>{e(str(c))}</td>" if cls else f"<td>{e(str(c))}</td>"


def _css_string(text: str) -> str:
    """Text to stand inside a CSS string in a style element (quotes, backslashes and '<' escaped)."""
    return "".join(f"\\{ord(ch):x} " if ch in '\\"<>' or ord(ch) < 32 else ch for ch in text[:90])


def _raw(v) -> str:
    return repr(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else ""


class Page:
    """An HTML page under construction (``add`` takes ready HTML; everything else escapes its text)."""

    def __init__(self, kind: str, title: str, meta: list[str] | tuple[str, ...] = ()):
        self.kind, self.title = kind, title
        self.parts: list[str] = [f"<h1><span class='kind'>{e(kind)}:</span> {e(title)}</h1>"]
        if meta:
            self.parts.append("<p class='meta'>" + " · ".join(e(m) for m in meta) + "</p>")

    def add(self, markup: str) -> "Page":
        self.parts.append(markup)
        return self

    def h2(self, text: str) -> "Page":
        return self.add(f"<h2>{e(text)}</h2>")

    def h3(self, text: str) -> "Page":
        return self.add(f"<h3>{e(text)}</h3>")

    def p(self, text: str, cls: str = "") -> "Page":
        return self.add(f"<p class='{cls}'>{e(text)}</p>" if cls else f"<p>{e(text)}</p>")

    def warn(self, text: str) -> "Page":
        return self.add(f"<div class='warn'>{e(text)}</div>")

    def caution(self, head: str, text: str) -> "Page":
        return self.add(f"<div class='caution'><strong>{e(head)}</strong> {e(text)}</div>")

    def cautions(self, *extra: str) -> "Page":
        """The cautions every page that carries loads or pressures carries (safety.CAUTIONS), and any more."""
        return self.caution("Caution.", " ".join(CAUTIONS + tuple(extra)))

    def table(self, cols: list[Col], rows: list[list], full: bool = True, wide: bool | None = None,
              groups: dict[int, str] | None = None, notes: dict[int, list[str]] | None = None) -> "Page":
        """A table in its own scrolling box. ``groups``: a heading row before row i; ``notes``: note rows after row i.
        ``wide`` (default: more than seven columns): smaller type in print."""
        wide = len(cols) > 7 if wide is None else wide
        cls = "data" + (" full" if full else "") + (" wide" if wide else "")
        head = "".join((f"<th class='num'>" if c.num else "<th>") + e(c.label)
                       + (f"<span class='unit'>[{e(c.unit)}]</span>" if c.unit else "") + "</th>" for c in cols)
        out = [f"<div class='tablebox'><table class='{cls}'><thead><tr>{head}</tr></thead><tbody>"]
        for i, row in enumerate(rows):
            if groups and i in groups:
                out.append(f"<tr class='group'><td colspan='{len(cols)}'>{e(groups[i])}</td></tr>")
            out.append("<tr>" + "".join(_cell(c, col) for c, col in zip(row, cols)) + "</tr>")
            for n in (notes or {}).get(i, []):
                out.append(f"<tr class='note'><td colspan='{len(cols)}'>{e(n)}</td></tr>")
        out.append("</tbody></table></div>")
        return self.add("".join(out))

    def figure(self, png: str | Path | bytes, caption: str, alt: str = "", cls: str = "") -> "Page":
        """An embedded PNG with its caption (``cls``: "half" beside another, "sketch" kept low on the page)."""
        cls = f" class='{cls}'" if cls else ""
        return self.add(f"<figure{cls}><img alt='{e(alt or caption[:60])}' src='{image_src(png)}'>"
                        f"<figcaption>{e(caption)}</figcaption></figure>")

    def signoff(self, s: SignOff) -> "Page":
        """The sign-off block: what the result is (case, its hash, version, date, machine) and lines to sign."""
        def k(text):
            return f"<td class='k'>{e(text)}</td>"
        line = "<td class='line'></td>"
        rows = (f"<tr>{k('case')}<td colspan='5' class='wrap'>{e(s.title)}</td>{k('case hash')}"
                f"<td class='wrap'>{e(s.case_hash)}</td></tr>"
                f"<tr>{k('axibore')}<td>{e(s.version)}</td>{k('date')}<td>{e(s.date)}</td>{k('machine')}"
                f"<td colspan='3'>{e(s.host)}</td></tr>"
                f"<tr>{k('checked by')}{line}{k('date')}{line}{k('approved by')}{line}{k('date')}{line}</tr>")
        return self.add(f"<div class='signoff'><table>{rows}</table></div>")

    def html(self) -> str:
        foot = _css_string(f"axibore {__version__} · {self.kind}: {self.title}")
        head = (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
                f"<meta name='viewport' content='width=device-width, initial-scale=1'>"
                f"<title>axibore {e(self.kind.lower())}: {e(self.title)}</title>"
                f"<style>{CSS.replace('__FOOT__', foot)}</style></head><body>")
        return head + "\n".join(self.parts) + "\n</body></html>\n"

    def write(self, path: str | Path) -> Path:
        return atomic_write_text(path, self.html())
