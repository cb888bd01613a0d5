"""Names shared by every stage: boundary groups of a bore mesh and the measure of revolution.

Boundary names are a ``StrEnum``: a member compares equal to its string, so mesh groups, case
keys and file names (``wall.csv``) read the same everywhere, and a typo is an AttributeError
instead of a silently empty lookup.
"""

from __future__ import annotations

import math
from enum import StrEnum


class Boundary(StrEnum):
    INLET = "inlet"
    OUTLET = "outlet"
    WALL = "wall"
    AXIS = "axis"  # the symmetry line (the symmetry plane of a planar case)
    CENTERBODY = "centerbody"
    JET = "jet"  # free-jet boundary (a free streamline past the lip)


# boundaries that belong to the part and carry its load (wall tables, forces, structural export)
SOLID = (Boundary.WALL, Boundary.CENTERBODY)
# boundaries through which fluid crosses (plane integrals of the momentum balance)
PLANES = (Boundary.INLET, Boundary.OUTLET)

# outlet models (outlets/): through a plane inside a continuing pipe, through the exit plane to
# ambient, or a free jet solved past the lip
OUTLET_KINDS = ("pipe", "exit-plane", "free-jet")
# what the rest of the tool asks of an outlet kind (the outlet models themselves are in outlets/)
DISCHARGE_OUTLETS = frozenset({"exit-plane", "free-jet"})  # the bore discharges a jet to the surroundings
FREE_JET_OUTLETS = frozenset({"free-jet"})  # the jet boundary past the lip is solved (a free streamline)


def discharges(outlet_kind: str) -> bool:
    return outlet_kind in DISCHARGE_OUTLETS


def free_jet(outlet_kind: str) -> bool:
    return outlet_kind in FREE_JET_OUTLETS

# Measures of an FVMesh are per radian; full axisymmetric values are 2 pi times them.
TWO_PI = 2.0 * math.pi
