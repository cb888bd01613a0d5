"""Numerics shared by the solvers: least-squares gradients, boundary reconstruction, linear solves."""

from .gradients import GradientOperator, least_squares_gradient
from .linear import LinearResult, LinearSettings, solve_linear
from .reconstruct import boundary_gradients

__all__ = ["GradientOperator", "LinearResult", "LinearSettings", "boundary_gradients", "least_squares_gradient", "solve_linear"]
