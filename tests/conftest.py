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


@pytest.fixture(autouse=True)
def wall_layer_bounds_in_every_summary(request):
    """Every run a test writes under its tmp_path respects the wall layer's physical bounds: a wall layer
    only removes momentum and energy, so the viscous discharge coefficient is never above the inviscid one
    and the loss coefficient never negative (issue 20)."""
    yield
    tmp = request.node.funcargs.get("tmp_path") if hasattr(request.node, "funcargs") else None
    if tmp is None:
        return
    import json
    from pathlib import Path

    for path in Path(tmp).rglob("summary.json"):
        try:
            data = json.loads(path.read_text())
        except (OSError, ValueError):
            continue  # a test that damages a run directory on purpose
        v = data.get("viscous") if isinstance(data, dict) else None
        if not isinstance(v, dict):
            continue
        c, ci, k = v.get("discharge_coefficient"), v.get("discharge_coefficient_inviscid"), v.get("loss_coefficient")
        assert c is None or ci is None or c <= ci, f"{path}: viscous C {c} above the inviscid {ci}"
        assert k is None or k >= 0.0, f"{path}: negative loss coefficient {k}"
