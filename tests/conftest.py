import copy
import os

import pytest

os.environ.setdefault("PYVISTA_OFF_SCREEN", "true")

NOZZLE = {
    "title": "test nozzle",
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "bore": {
        "template": "conical", "inlet_diameter": "80 mm", "exit_diameter": "25 mm", "half_angle": "15 deg",
        "inlet_length": "120 mm", "tip_length": "30 mm", "lip_radius": "20 mm",
    },
    "inlet": {"pressure": "7 bar"},
    "outlet": {"kind": "exit-plane"},
}


@pytest.fixture
def nozzle_dict():
    return copy.deepcopy(NOZZLE)
