"""Fluids: properties of water (IAPWS-IF97), seawater, a given liquid and ideal gases
(``properties``), and their viscosity (``viscosity``): what a fluid is, and whether its viscosity is
known, lives here."""

from .properties import (GASES, SEAWATER_DENSITY, SEAWATER_T_MAX, SEAWATER_T_MIN, TRIPLE_POINT_PRESSURE, WATER_T_MAX,
                         WATER_T_MIN, Fluid, resolve_seawater, resolve_water, water_density, water_vapour_pressure)
from .viscosity import SUTHERLAND, sutherland, viscosity, viscosity_known

__all__ = ["GASES", "SEAWATER_DENSITY", "SEAWATER_T_MAX", "SEAWATER_T_MIN", "SUTHERLAND", "TRIPLE_POINT_PRESSURE",
           "WATER_T_MAX", "WATER_T_MIN", "Fluid", "resolve_seawater", "resolve_water", "sutherland", "viscosity",
           "viscosity_known", "water_density", "water_vapour_pressure"]
