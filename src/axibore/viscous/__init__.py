"""Viscous wall layer stage: fluid viscosity and an integral boundary layer marched along a wall.

``viscosity.viscosity(fluid, temperature, pressure_abs)`` gives the dynamic viscosity;
``layer.march(s, r, ue, nu, ...)`` marches a laminar (two-equation, Falkner-Skan closure), transitional (Michel) and
turbulent (Head) layer from the inviscid wall speed (with the blockage interaction solved in it, if asked) and returns
a ``WallLayer``.
"""
