"""axibore view: a run in 3D (PyVista window, or PNG off-screen)."""

from __future__ import annotations

from .common import err, out, run_dir

HELP = "show a run in 3D (PyVista window, or PNG off-screen)"


def add_args(p) -> None:
    p.add_argument("run_dir", help="run directory written by `axibore run`")
    p.add_argument("--field", choices=["pressure", "speed", "cp", "mach"], default="pressure", help="field on the cut planes")
    p.add_argument("--angle", type=float, default=270.0, help="revolution angle in degrees (default 270: a cut-away)")
    p.add_argument("--png", help="render off-screen to this PNG instead of opening a window")
    p.add_argument("--meridional", action="store_true", help="flat meridional view with streamlines")


def run(args) -> int:
    from ..view.scene import render

    run = run_dir(args.run_dir)
    if args.field == "mach" and not __import__("json").loads((run / "summary.json").read_text())["flow"].get("compressible"):
        err("--field mach: this run is of a liquid (no Mach number); use pressure, speed or cp")
        return 2
    if not 0 < args.angle <= 360:
        err(f"--angle: expected 0 < angle <= 360 degrees, got {args.angle:g}")
        return 2
    png, info = render(run, args.field, args.angle, args.png, meridional=args.meridional)
    lo, hi = info.field_range
    if png is not None:
        out(f"wrote {png} ({args.field} {lo:.6g} to {hi:.6g})")
    return 0
