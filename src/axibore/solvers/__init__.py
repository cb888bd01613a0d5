"""Flow solvers: potential (incompressible, irrotational) and the 1D models."""
