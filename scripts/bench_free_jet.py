"""Benchmark: a free-jet run against an exit-plane run of the same bore at the same target cell size,
at two sizes (outer iterations, time, ratio). Targets (issue): at most 15 outer iterations and at
most 8 x the exit-plane run time. Output: scripts/results/bench_free_jet.txt.

The bore: a conical nozzle whose cone ends at the exit (a sharp lip, 30 deg half angle), water at
2 bar; both runs in memory (no run directory), the wall layer off, triangles for both (a free jet is
always meshed with triangles)."""

from __future__ import annotations

import time
from pathlib import Path

from axibore.case import case_from_dict
from axibore.run import solve_case

BORE = {"template": "conical", "inlet_diameter": "40 mm", "exit_diameter": "20 mm", "half_angle": "30 deg",
        "inlet_length": "20 mm", "tip_length": "0 mm"}


def case(kind: str, level: int):
    return case_from_dict({"fluid": {"kind": "water", "temperature": "15 degC"}, "bore": BORE,
                           "inlet": {"pressure": "2 bar"}, "outlet": {"kind": kind},
                           "mesh": {"size": 0.05, "level": level, "cells": "triangles"}, "viscous": {"model": "none"}})


def main() -> None:
    rows = ["level    cells  exit-plane s  free-jet s  ratio  outer its  Cc      flow free-jet / exit-plane"]
    for level in (0, 2):
        t = time.perf_counter()
        ep = solve_case(case("exit-plane", level))
        t_ep = time.perf_counter() - t
        t = time.perf_counter()
        fj = solve_case(case("free-jet", level))
        t_fj = time.perf_counter() - t
        rows.append(f"{level:5d} {fj.mesh.n_cells:8,d} {t_ep:13.2f} {t_fj:11.2f} {t_fj / t_ep:6.2f} {len(fj.jet.history):10d}  "
                    f"{fj.jet.contraction_coefficient:.4f}  {fj.flow.volume_flow / ep.flow.volume_flow:.4f}")
        print(rows[-1], flush=True)
    out = Path(__file__).parent / "results" / "bench_free_jet.txt"
    out.write_text("\n".join(rows) + "\n")  # the header with the date and machine is added by hand
    print("\n".join(rows))


if __name__ == "__main__":
    main()
