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
        "cells": 53760, "wall_x_N": 2892.4884371293456, "centerbody_x_N": 0.0, "momentum_x_N": 2892.5012517709524,
        "volume_flow_m3_s": 0.018228578567696243, "min_wall_gauge_Pa": -75924.4524636817, "max_speed_m_s": 39.07876849716251,
    },
    "water_main_reducer": {
        "cells": 9150, "wall_x_N": 156772.7076772284, "centerbody_x_N": 0.0, "momentum_x_N": 156772.7746193352,
        "volume_flow_m3_s": 0.5, "min_wall_gauge_Pa": 992532.3827190442, "max_speed_m_s": 4.2508724711987895,
        "outlet_gauge_Pa": 993651.0629755179,
    },
    "spear_nozzle": {
        "cells": 42445, "wall_x_N": 21449.88637596325, "centerbody_x_N": -5032.158105428378, "momentum_x_N": 16417.391878365903,
        "volume_flow_m3_s": 0.11872090913469352, "min_wall_gauge_Pa": -3209262.3334804345, "max_speed_m_s": 100.54683390234358,
    },
}

WHERE = {"cells": ("mesh", "cells"), "wall_x_N": ("forces", "wall_x_N"), "centerbody_x_N": ("forces", "centerbody_x_N"),
         "momentum_x_N": ("forces", "momentum_x_N"), "volume_flow_m3_s": ("flow", "volume_flow_m3_s"),
         "min_wall_gauge_Pa": ("pressure", "min_wall_gauge_Pa"), "max_speed_m_s": ("flow", "max_speed_m_s"),
         "outlet_gauge_Pa": ("pressure", "outlet_gauge_Pa")}


@pytest.mark.parametrize("name", sorted(PINNED))
def test_demo_numbers_pinned(name):
    s = solve_case(load_case(CASES / f"{name}.toml")).summary()
    for key, expected in PINNED[name].items():
        section, k = WHERE[key]
        got = s[section][k]
        if key == "cells":
            assert got == expected, key
        else:
            assert got == pytest.approx(expected, rel=REL, abs=1e-9), key
