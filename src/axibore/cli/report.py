"""axibore report: rebuild report.html of a run directory."""

from __future__ import annotations

from ..units import PRESSURE_UNITS
from .common import err, out, run_dir

HELP = "rebuild report.html of a run directory"


def add_args(p) -> None:
    p.add_argument("run_dir", help="run directory written by `axibore run`")
    p.add_argument("--no-3d", action="store_true", help="leave out the rendered 3D view")
    p.add_argument("--units", choices=list(PRESSURE_UNITS), default="bar", help="pressure unit of tables and plots (default bar)")


def run(args) -> int:
    from ..io.ownership import file_hash, read_manifest
    from ..view.report import build_report

    folder = run_dir(args.run_dir)
    m = read_manifest(folder)
    report = folder / "report.html"
    if report.exists() and (m is None or m.files.get("report.html") != file_hash(report)):
        err(f"{report}: was not written by axibore or was changed since: not replaced; move it away to rebuild the report")
        return 2
    path = build_report(folder, include_3d=not args.no_3d, unit=args.units)
    out(f"wrote {path}")
    return 0
