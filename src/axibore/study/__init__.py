"""Studies over many cases: grid convergence (GCI), parameter sweeps."""
