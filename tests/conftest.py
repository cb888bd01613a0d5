import copy
import os

import pytest
from hypothesis import settings

os.environ.setdefault("PYVISTA_OFF_SCREEN", "true")

# The fuzz tests draw the same examples on every run (same numbers on two runs, issue 23); set
# HYPOTHESIS_PROFILE=explore to draw new ones.
settings.register_profile("repeatable", derandomize=True)
settings.register_profile("explore", derandomize=False)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "repeatable"))

NOZZLE = {
    "title": "test nozzle",
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "bore": {
        "template": "conical", "inlet_diameter": "80 mm", "exit_diameter": "25 mm", "half_angle": "15 deg",
        "inlet_length": "120 mm", "tip_length": "30 mm", "lip_radius": "20 mm",
    },
    "inlet": {"pressure": "7 bar"},
    "outlet": {"kind": "exit-plane"},
}


@pytest.fixture
def nozzle_dict():
    return copy.deepcopy(NOZZLE)


@pytest.fixture(autouse=True)
def wall_layer_bounds_in_every_summary(request):
    """Every run a test writes under its tmp_path respects the wall layer's physical bounds: a wall layer
    only removes momentum and energy, so the viscous discharge coefficient is never above the inviscid one
    and the loss coefficient never negative (issue 20)."""
    yield
    tmp = request.node.funcargs.get("tmp_path") if hasattr(request.node, "funcargs") else None
    if tmp is None:
        return
    import json
    from pathlib import Path

    from axibore.io.ownership import MANIFEST, output_name, read_manifest

    # every file a command records at the top of its folder has a name its kind declares (io.ownership:
    # a foreign file of such a name is refused before any work, so the list must be complete)
    for path in Path(tmp).rglob(MANIFEST):
        m = read_manifest(path.parent)
        if m is not None:
            undeclared = [rel for rel in m.files if "/" not in rel and not output_name(m.kind, rel)]
            assert not undeclared, f"{path.parent}: {m.kind} output wrote {undeclared}, not in io.ownership.OUTPUT_NAMES"
            # and every CSV its NAME.csv.json sidecar (README: the columns and what the file holds)
            bare = [rel for rel in m.files if rel.endswith(".csv") and rel + ".json" not in m.files]
            assert not bare, f"{path.parent}: {bare} written without the NAME.csv.json sidecar"
    for path in Path(tmp).rglob("summary.json"):
        try:
            data = json.loads(path.read_text())
        except (OSError, ValueError):
            continue  # a test that damages a run directory on purpose
        v = data.get("viscous") if isinstance(data, dict) else None
        if not isinstance(v, dict):
            continue
        c, ci, k = v.get("discharge_coefficient"), v.get("discharge_coefficient_inviscid"), v.get("loss_coefficient")
        assert c is None or ci is None or c <= ci, f"{path}: viscous C {c} above the inviscid {ci}"
        assert k is None or k >= 0.0, f"{path}: negative loss coefficient {k}"


# ---------------------------------------------------------------------------------------------
# pages in headless Chromium: layout measured by a script run in the page, the printed PDF read back

def chromium():
    import shutil

    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


def _chromium_or_skip():
    exe = chromium()
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("headless Chromium is needed in CI (.ci/run installs it)")
        pytest.skip("chromium is not installed")
    return exe


def _chromium_args(exe, profile):
    return [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
            "--disable-background-networking", "--disable-component-update", "--disable-sync",
            f"--user-data-dir={profile}", "--hide-scrollbars"]


# measured in the page: the document's overflow, each data table against its box, and how many lines each
# header and first-column label takes
_MEASURE = """<script>
window.addEventListener('load', () => {
  const doc = document.documentElement;
  const lines = el => { const lh = parseFloat(getComputedStyle(el).lineHeight) || 14;
                        const pad = parseFloat(getComputedStyle(el).paddingTop) + parseFloat(getComputedStyle(el).paddingBottom);
                        return Math.round((el.getBoundingClientRect().height - pad) / lh); };
  const tables = [...document.querySelectorAll('table.data')].map(t => ({
    width: t.getBoundingClientRect().width, box: t.parentElement.clientWidth,
    headers: [...t.querySelectorAll('th')].map(th => [th.textContent, lines(th)]),
    labels: [...t.querySelectorAll('tbody tr:not(.group):not(.note) td:first-child')].map(td => [td.textContent, lines(td)])}));
  const out = document.createElement('pre');
  out.id = 'measured';
  out.textContent = JSON.stringify({scrollWidth: doc.scrollWidth, clientWidth: doc.clientWidth, tables});
  document.body.appendChild(out);
});
</script>"""


@pytest.fixture
def page_layout(tmp_path):
    """measure(html_path, width_px, print_rules) -> the measurements of _MEASURE at that window width;
    ``print_rules``: the page's @media print rules applied on screen (the printed layout on A4)."""
    import json
    import re
    import subprocess

    exe = _chromium_or_skip()

    def measure(path, width=900, print_rules=False):
        text = path.read_text(encoding="utf-8")
        if print_rules:
            text = text.replace("@media print", "@media all")
        probe = tmp_path / f"probe-{width}-{int(print_rules)}-{path.name}"
        probe.write_text(text.replace("</body>", _MEASURE + "</body>"), encoding="utf-8")
        proc = subprocess.run(_chromium_args(exe, tmp_path / "profile") + [
            "--dump-dom", "--virtual-time-budget=5000", f"--window-size={width},1200", probe.as_uri()],
            capture_output=True, text=True, timeout=120)
        m = re.search(r'<pre id="measured">(.*?)</pre>', proc.stdout, re.S)
        assert m, proc.stderr[-2000:]
        return json.loads(m.group(1).replace("&quot;", '"').replace("&amp;", "&").replace("&lt;", "<").replace("&gt;", ">"))

    return measure


@pytest.fixture
def page_pdf(tmp_path):
    """print(html_path) -> the text of each page of the page printed to PDF by Chromium (A4, as a user prints it)."""
    import subprocess

    import pypdf  # a test dependency (pyproject's test extra): missing is an install error, not a skip

    exe = _chromium_or_skip()

    def print_(path):
        pdf = tmp_path / (path.stem + ".pdf")
        subprocess.run(_chromium_args(exe, tmp_path / "profile") + ["--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                                                                    path.as_uri()], capture_output=True, timeout=120)
        assert pdf.exists()
        return [p.extract_text() for p in pypdf.PdfReader(str(pdf)).pages]

    return print_


A4_PRINT_WIDTH_PX = 703  # 210 mm less the 2 x 12 mm side margins of the page's @page rule, at 96 px per inch


def assert_page_fits(measure, path, label_lines=None):
    """The page does not overflow the window on screen (900 px) nor the printed A4 width; no data table is wider
    than its box when printed; no column header holds a raw dotted summary key."""
    import re

    for width, printed in ((900, False), (A4_PRINT_WIDTH_PX, True)):
        m = measure(path, width, printed)
        assert m["scrollWidth"] <= m["clientWidth"], (path.name, width, m["scrollWidth"], m["clientWidth"])
        assert m["tables"], path.name
        for t in m["tables"]:
            if printed:
                assert t["width"] <= t["box"] + 1, (path.name, [h for h, _ in t["headers"]], t["width"], t["box"])
            for text, _ in t["headers"]:
                assert not re.search(r"[a-z]\.[a-z]|_", text), (path.name, text)
    return m
