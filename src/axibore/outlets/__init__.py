"""Outlet models: how the flow leaves the bore, each an object behind one interface (base.py),
selected here in one place. ``pipe`` and ``exit-plane`` (plane.py) mesh the bore and call the
registered solver once; ``free-jet`` (freejet.py) solves the jet boundary past the lip with the
solver's free-surface service; comparison.py solves the exit-plane model beside a free jet."""

from __future__ import annotations

from .base import ExitPlaneComparison, OutletFlow, OutletModel
from .freejet import FreeJetOutlet, JetNotSettled, JetSolution, jet_speed
from .plane import PlaneOutlet

MODELS: dict[str, OutletModel] = {"pipe": PlaneOutlet("pipe"), "exit-plane": PlaneOutlet("exit-plane"),
                                  "free-jet": FreeJetOutlet()}


def outlet_model(kind: str) -> OutletModel:
    return MODELS[kind]


__all__ = ["MODELS", "ExitPlaneComparison", "FreeJetOutlet", "JetNotSettled", "JetSolution", "OutletFlow",
           "OutletModel", "PlaneOutlet", "jet_speed", "outlet_model"]
