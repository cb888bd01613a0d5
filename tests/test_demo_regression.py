"""Pinned headline numbers of the shipped demo cases (regression, not verification).

The values were recorded from the verified solver (see test_potential.py and `axibore verify` for
the checks against exact solutions); they pin the demos so that a refactor which changes a
number by more than round-off is caught. A deliberate change of the numerics re-records them in
the same commit, saying why.
"""

from pathlib import Path

import pytest

from axibore.case import load_case
from axibore.run import solve_case

CASES = Path(__file__).parents[1] / "cases"
REL = 1e-9

PINNED = {
    "deck_wash_nozzle": {
        "cells": 42176, "wall_x_N": 2892.481257413937, "centerbody_x_N": 0.0, "momentum_x_N": 2892.501251770847,
        "volume_flow_m3_s": 0.018228578567680565, "min_wall_gauge_Pa": -75924.48118299176, "max_speed_m_s": 39.078769214145886,
    },
    "water_main_reducer": {
        "cells": 8970, "wall_x_N": 156772.71641765046, "centerbody_x_N": 0.0, "momentum_x_N": 156772.7746193352,
        "volume_flow_m3_s": 0.49999999999999994, "min_wall_gauge_Pa": 992532.3560614877, "max_speed_m_s": 4.250878745415925,
        "outlet_gauge_Pa": 993651.0629755176,
    },
    "spear_nozzle": {
        "cells": 36270, "wall_x_N": 21449.21783020193, "centerbody_x_N": -5031.99151545261, "momentum_x_N": 16417.392500290873,
        "volume_flow_m3_s": 0.11872094857157299, "min_wall_gauge_Pa": -3209204.9192671133, "max_speed_m_s": 100.54626300186693,
    },
}

WHERE = {"cells": ("mesh", "cells"), "wall_x_N": ("forces", "wall_x_N"), "centerbody_x_N": ("forces", "centerbody_x_N"),
         "momentum_x_N": ("forces", "momentum_x_N"), "volume_flow_m3_s": ("flow", "volume_flow_m3_s"),
         "min_wall_gauge_Pa": ("pressure", "min_wall_gauge_Pa"), "max_speed_m_s": ("flow", "max_speed_m_s"),
         "outlet_gauge_Pa": ("pressure", "outlet_gauge_Pa")}


# the spear demo runs a free jet (tests/test_free_jet.py); its pin is the exit-plane model of the
# nozzle it had before, a 5 mm tip rounded at 5 mm, which still pins the potential solver on a centre body
UPDATES = {"spear_nozzle": {"outlet.kind": "exit-plane", "bore.tip_length": "5 mm", "bore.lip_radius": "5 mm"}}


@pytest.mark.parametrize("name", sorted(PINNED))
def test_demo_numbers_pinned(name):
    case = load_case(CASES / f"{name}.toml")
    if name in UPDATES:
        case = case.with_updates(UPDATES[name])
    s = solve_case(case).summary()
    for key, expected in PINNED[name].items():
        section, k = WHERE[key]
        got = s[section][k]
        if key == "cells":
            assert got == expected, key
        else:
            assert got == pytest.approx(expected, rel=REL, abs=1e-9), key
