"""axibore view: a run in 3D (PyVista window, or PNG off-screen)."""

from __future__ import annotations

import json
from pathlib import Path

from ..units import PRESSURE_UNITS, UnitError, to_si
from .common import err, out, run_dir

HELP = "show a run in 3D (PyVista window, or PNG off-screen)"


def add_args(p) -> None:
    p.add_argument("run_dir", help="run directory written by `axibore run`")
    p.add_argument("--field", choices=["pressure", "speed", "cp", "mach", "shear"], default="pressure",
                   help="field on the cut planes (shear: the wall coloured by the wall shear of its wall layer)")
    p.add_argument("--angle", type=float, default=270.0, help="revolution angle in degrees (default 270: a cut-away)")
    p.add_argument("--png", help="render off-screen to this PNG file instead of opening a window (required without a display)")
    p.add_argument("--force", action="store_true", help="replace an existing --png file that axibore wrote (a picture of anyone else is never replaced)")
    p.add_argument("--meridional", action="store_true", help="flat meridional view with streamlines and axes")
    p.add_argument("--units", choices=list(PRESSURE_UNITS), default="bar", help="pressure unit of the colour scale (default bar)")
    p.add_argument("--x-range", help='zoom on an axial range, e.g. "180 mm,215 mm" (numbers alone are metres)')
    p.add_argument("--range", dest="colour_range", help="colour range LO,HI in the field's unit (pressure: --units)")


def _pair(text: str, what: str, length: bool) -> tuple[float, float]:
    parts = [t.strip() for t in text.split(",")]
    if len(parts) != 2:
        raise ValueError(f"{what}: expected two values separated by a comma, got {text!r}")
    try:
        a, b = ((to_si(t if any(c.isalpha() for c in t) else float(t), "length") if length else float(t)) for t in parts)
    except (UnitError, ValueError) as exc:
        raise ValueError(f"{what}: expected {'lengths such as 180 mm' if length else 'numbers'}, got {text!r} ({exc})") from None
    if not a < b:
        raise ValueError(f"{what}: expected the lower value first, got {text!r}")
    return a, b


def run(args) -> int:
    from ..view.scene import ViewOptions, render

    run = run_dir(args.run_dir, need_fields=True)
    if args.field == "shear" and args.meridional:
        err("--field shear: the wall shear is shown on the wall of the 3D view; leave out --meridional")
        return 2
    if args.field == "mach" and not json.loads((run / "summary.json").read_text())["flow"].get("compressible"):
        err("--field mach: this run is of a liquid (no Mach number); use pressure, speed or cp")
        return 2
    if not 0 < args.angle <= 360:
        err(f"--angle: expected 0 < angle <= 360 degrees, got {args.angle:g}")
        return 2
    if args.png is not None:
        png = Path(args.png)
        if png.suffix.lower() != ".png" or png.is_dir():
            err(f"--png: expected a file name ending in .png, got {args.png!r}")
            return 2
        if png.exists() and not args.force:
            err(f"--png: {args.png} exists; give another file name, or --force to replace it")
            return 2
        if not png.parent.exists():
            err(f"--png: the folder {str(png.parent)!r} does not exist")
            return 2
    try:
        opts = ViewOptions(unit=args.units,
                           x_range=_pair(args.x_range, "--x-range", True) if args.x_range else None,
                           colour_range=_pair(args.colour_range, "--range", False) if args.colour_range else None)
        png, info = render(run, args.field, args.angle, args.png, meridional=args.meridional, opts=opts)
    except ValueError as exc:
        err(str(exc))
        return 2
    lo, hi = info.field_range
    if png is not None:
        unit = {"pressure": f" {args.units} gauge", "speed": " m/s", "mach": "", "cp": "", "shear": " Pa wall shear"}[args.field]
        out(f"wrote {png} ({args.field} {lo:.4g} to {hi:.4g}{unit})")
    return 0
