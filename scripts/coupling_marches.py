"""Marches of the wall layer's blockage coupling, and the viscous numbers, over 16 bores: the shipped
cases, ISO 5167-3 long-radius nozzles and ISO 5167-4 classical Venturi tubes as the tests write them
(issue 20: at most 3 marches in the typical case).

    .venv/bin/python scripts/coupling_marches.py /tmp/marches > scripts/results/coupling_marches.txt
"""
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))
from test_wall_layer_physics import venturi_case, iso_nozzle_case
from axibore.case import load_case
from axibore.run import solve_case

root = Path(sys.argv[1])
root.mkdir(parents=True, exist_ok=True)
SHIPPED = ("deck_wash_nozzle", "water_main_reducer", "spear_nozzle", "tank_drain_orifice", "air_test_nozzle_cd",
           "air_blowoff_nozzle")
cases = [ROOT / "cases" / f"{n}.toml" for n in SHIPPED]
for b, re in ((0.3, 1e5), (0.5, 1e4), (0.5, 1e6), (0.75, 1e4), (0.75, 1e6), (0.6, 3e5)):
    cases.append(iso_nozzle_case(root / f"iso{b}_{re:g}", b, re, 0.1))
for b, re in ((0.5, 2e5), (0.5, 1e6), (0.4, 1e6), (0.75, 5e5)):
    cases.append(venturi_case(root / f"ven{b}_{re:g}", b, re))


def fmt(a):
    return "None" if a is None else f"{a:.6f}"


tot = 0
for c in cases:
    t = time.perf_counter()
    r = solve_case(load_case(c))
    v = r.summary()["viscous"]
    if v is None:
        print(c.parent.name, c.name, "no viscous")
        continue
    cs = v["coupling_state"]
    tot += cs["iterations"]
    C, Ci, K = v["discharge_coefficient"], v["discharge_coefficient_inviscid"], v["loss_coefficient"]
    print(f"{c.parent.name:12s} {c.stem:22s} marches {cs['iterations']:2d} conv {cs['converged']} last {cs['last_change']:.2g} "
          f"C {fmt(C)} Cinv {fmt(Ci)} K {fmt(K)} Ff {v['friction_x_N']:.5g} t {time.perf_counter() - t:.1f}s")
print("total marches", tot)
