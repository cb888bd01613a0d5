"""axibore report: rebuild report.html of a run directory."""

from __future__ import annotations

from ..units import PRESSURE_UNITS
from .common import out, run_dir

HELP = "rebuild report.html of a run directory"


def add_args(p) -> None:
    p.add_argument("run_dir", help="run directory written by `axibore run`")
    p.add_argument("--no-3d", action="store_true", help="leave out the rendered 3D view")
    p.add_argument("--units", choices=list(PRESSURE_UNITS), default="bar", help="pressure unit of tables and plots (default bar)")


def run(args) -> int:
    from ..view.report import build_report

    path = build_report(run_dir(args.run_dir), include_3d=not args.no_3d, unit=args.units)
    out(f"wrote {path}")
    return 0
