"""Small array helpers shared by every layer.

``rows(a, i)`` gathers rows of an array by integer index, ``a[i]`` for a 1-D ``i``. With numpy 2.4
the fancy-index path for an (n, 2) array is 20-60 times slower than ``np.take`` (168k cells:
13.5 ms against 0.75 ms for 338k random rows; numpy 2.3: 4.1 ms against 0.53 ms), and the mesh
geometry, the gradient operators and the flux assembly gather rows of coordinates and normals by
the hundred thousand. The result is the same array (a copy), so use it wherever a hot path gathers
rows of a 2-D or 3-D array.
"""

from __future__ import annotations

import numpy as np


def rows(a: np.ndarray, i) -> np.ndarray:
    """``a[i]`` for an integer index array ``i`` along the first axis (negative indices wrap)."""
    return np.take(a, i, axis=0)
