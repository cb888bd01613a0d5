"""axibore: axisymmetric wall pressure, axial force and 1D-breakdown analysis of bores carrying fluid.

Heavy optional libraries (gmsh, pyvista, matplotlib, dask) are imported only by the leaf modules
that use them, so importing the package is fast.

Python API::

    import axibore
    res = axibore.run("cases/water_main_reducer.toml", mesh__level=1)   # RunResult; res.summary()
    table = axibore.sweep("cases/water_main_reducer.toml", vary={"bore.half_angle": "10 deg:20 deg:3"},
                          workers=2, out="runs/angles")                   # SweepResult; table.rows
    case = axibore.load_case("cases/x.toml").with_updates({"inlet.pressure": "8 bar"})
"""

from .version import __version__  # noqa: F401

from .case import Case, CaseError, load_case  # noqa: E402
from . import run  # noqa: E402  (the module is callable: axibore.run(case_or_path, out=None, **updates))


def sweep(case_or_path=None, vary: dict | None = None, zip: bool = False, workers: int | None = None,  # noqa: A002
          scheduler: str | None = None, out=None, plot=None, keep_fields: bool = False, progress=None, force: bool = False):
    """Run a parameter sweep and return its table (``SweepResult``: ``.rows``, ``.failed``, ``.lines()``).

    ``vary``: dotted key -> values as in a case file: a list, a comma list ``"20 mm,25 mm"`` or a range
    ``"3 bar:12 bar:10"``; default the case's [sweep] table. ``zip``: pair the lists. ``workers``: Dask
    worker processes of a local cluster on 127.0.0.1 (default: the CPU count; 0: in this process, no
    Dask); ``scheduler``: an existing cluster (address or scheduler file). ``out``: the sweep folder
    (default runs/<case name>-sweep); complete points in it are reused.
    """
    from .study.sweep import sweep as _sweep

    return _sweep(case_or_path, vary=vary, zip_=zip, workers=workers, scheduler=scheduler, out=out, plot=plot,
                  keep_fields=keep_fields, progress=progress, force=force)


__all__ = ["Case", "CaseError", "load_case", "run", "sweep", "__version__"]


def uncertainty(case_or_path=None, inputs: dict | None = None, levels=(0, 1, 2), workers: int = 1,
                scheduler: str | None = None, out=None, method: str = "linear", samples: int = 32, progress=None):
    """Every headline number with its numerical and input uncertainty (``UncertaintyResult``: ``.rows``,
    ``.lines()``). ``inputs``: dotted key -> standard uncertainty ("0.1 bar", "1 %"), added to the
    case's [uncertainty] table; ``out``: the study folder (default runs/<case name>-uncertainty)."""
    from pathlib import Path

    from .case import demo_case_path
    from .io.files import check_output_dir
    from .study.runner import executor
    from .study.uncertainty import parse_inputs, run_uncertainty

    case = case_or_path if isinstance(case_or_path, Case) else load_case(case_or_path or demo_case_path())
    table = {**(case.model.uncertainty or {}), **(inputs or {})}
    parsed = parse_inputs(case, table, case.source) if table else []
    stem = Path(str(case.source).split(" (")[0]).stem or "case"
    folder = check_output_dir(Path(out) if out is not None else Path("runs") / f"{stem}-uncertainty", "uncertainty")
    with executor(workers, scheduler=scheduler, dask=bool(scheduler)) as ex:
        return run_uncertainty(case, parsed, list(levels), folder, ex, method, samples, progress)
