"""axibore: axisymmetric wall pressure, axial force and 1D-breakdown analysis of bores carrying fluid.

Heavy optional libraries (gmsh, pyvista, matplotlib, dask) are imported only by the leaf modules
that use them, so importing the package is fast.
"""

__version__ = "0.1.0"

from .case import Case, CaseError, load_case  # noqa: E402

__all__ = ["Case", "CaseError", "load_case", "__version__"]
