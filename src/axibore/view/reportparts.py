"""The tables of a run's report, built from summary.json alone: the bolt load, the headline numbers
1D | 2D | difference, the margins with their verdicts, the inputs, the detailed numbers.

Each function returns (columns, rows) for ``page.Page.table``; a cell that stands for a number of
summary.json carries its key and raw value (``Cell``), so a test can check the page against the file.
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

from ..describe import absolute_wall_pressure, cavitation_verdict, choke_verdict, deviation_text
from .labels import case_key_label, display, label, number
from .page import Cell, Col

DASH = "–"


def _get(s: dict, key: str):
    """The value at a dotted key of the summary (``joints.0.load_N`` indexes the list)."""
    node = s
    for part in key.split("."):
        if isinstance(node, list):
            node = node[int(part)] if part.isdigit() and int(part) < len(node) else None
        elif isinstance(node, dict):
            node = node.get(part)
        else:
            return None
    return node


def _planar(s: dict) -> bool:
    return bool((s.get("geometry") or {}).get("per_unit_depth"))


def _finite(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def cell(s: dict, key: str, k: float = 1.0, digits: int = 4) -> Cell:
    v = _get(s, key)
    return Cell(number(v, k, digits), key, v)


def hand_joint_load(s: dict, j: dict) -> float | None:
    """The bolt load of joint ``j`` by hand, from the 1D answer of the case (``hand_1d``), derived by the
    free body of the part beyond the joint with uniform planes (the same as post/joints.py with the 1D flow):

        load = p_j A_j - p_2 A_2 + mdot (V_j - V_2) + p_j pi (G^2 - D_j^2) / 4,
        V_j = Q / A_j, p_j = p_1 + rho (V_1^2 - V_j^2) / 2 (Bernoulli), A_j = pi D_j^2 / 4.

    None for a planar section or a bore with a centre body (the flow area is not pi D^2 / 4 there)."""
    h = s.get("hand_1d")
    if not h or (s.get("geometry") or {}).get("per_unit_depth") or s["forces"].get("centerbody_x_N"):
        return None
    Q, mdot = h["volume_flow_m3_s"], h["mass_flow_kg_s"]
    rho = mdot / Q
    a_j = math.pi * j["bore_diameter_m"] ** 2 / 4
    a_2 = Q / h["exit_velocity_m_s"]
    v_j = Q / a_j
    p_j = h["inlet_gauge_Pa"] + rho * (h["inlet_velocity_m_s"] ** 2 - v_j ** 2) / 2
    g = j["gasket_diameter_m"]
    return (p_j * a_j - h["exit_gauge_Pa"] * a_2 + mdot * (v_j - h["exit_velocity_m_s"])
            + p_j * math.pi * (g * g - j["bore_diameter_m"] ** 2) / 4)


def _decimals(text: str) -> int:
    return len(text.split(".")[1]) if "." in text and "e" not in text else 0


def _diff_cells(v1, v2, k: float, digits: int, relative: bool = True) -> list:
    """2D - 1D in the row's unit, to the decimals of the values themselves (a round-off difference reads 0), and
    relative to |1D| in per cent where the 1D value is not near zero."""
    if not (_finite(v1) and _finite(v2)):
        return [DASH, DASH]
    places = max(_decimals(number(v1, k, digits)), _decimals(number(v2, k, digits)))
    d = round((v2 - v1) * k, places)
    text = "0" if d == 0 else f"{d:+.{places}f}".replace("-", "−")
    rel = DASH
    if relative and abs(v1) > 1e-12 and abs(v1) >= 0.01 * max(abs(v1), abs(v2)):
        r = round((v2 - v1) / abs(v1) * 100, 2)
        rel = "0.00" if r == 0 else f"{r:+.2f}".replace("-", "−")
    return [text, rel]


def bolt_table(s: dict, unit: str) -> tuple[list[Col], list[list]]:
    """The joints: bolt load (hydrodynamic part) by the 2D result and by hand, per bolt."""
    joints = s.get("joints") or []
    loads = [j["load_N"] for j in joints] + [j["per_bolt_N"] or 0.0 for j in joints]
    fu, fk = display("force", loads)
    pu, pk = display("pressure", (), unit)
    cols = [Col("joint", num=False), Col("at x", "mm"), Col("gasket G", "mm"), Col("pressure, gauge", pu),
            Col("bolt load, 2D", fu), Col("bolt load, 1D", fu), Col("per bolt, 2D", fu)]
    rows = []
    for i, j in enumerate(joints):
        h = hand_joint_load(s, j)
        per = DASH if j["per_bolt_N"] is None else f"{number(j['per_bolt_N'], fk, 4)} ({j['bolts']})"
        rows.append([j["name"], cell(s, f"joints.{i}.x_m", 1e3), cell(s, f"joints.{i}.gasket_diameter_m", 1e3),
                     cell(s, f"joints.{i}.pressure_gauge_Pa", pk, 4), cell(s, f"joints.{i}.load_N", fk, 5),
                     number(h, fk, 5), Cell(per, f"joints.{i}.per_bolt_N", j["per_bolt_N"])])
    return cols, rows


def headline_table(s: dict, unit: str, gci: dict | None = None) -> tuple[list[Col], list[list]]:
    """The headline numbers in three columns: 1D (the hand answer, or the quasi-1D model of a gas), the 2D
    result and their difference (absolute and, where the 1D value is not near zero, relative); with ``gci``
    (summary key -> relative GCI of a grid study) a column of the numerical uncertainty."""
    fl, f = s["flow"], s["forces"]
    hand = s.get("hand_1d")
    gas = fl.get("compressible")
    planar = _planar(s)
    # (2D key, 1D key or a number or None, relative difference meaningful)
    spec: list[tuple[str, object, bool]] = []
    if gas:
        spec += [("flow.mass_flow_kg_s", "flow.ideal_mass_flow_kg_s", True)]
    else:
        spec += [("flow.volume_flow_m3_s", "hand_1d.volume_flow_m3_s" if hand else None, True),
                 ("flow.mass_flow_kg_s", "hand_1d.mass_flow_kg_s" if hand else None, True),
                 ("flow.inlet_mean_velocity_m_s", "hand_1d.inlet_velocity_m_s" if hand else None, True),
                 ("flow.outlet_mean_velocity_m_s", "hand_1d.exit_velocity_m_s" if hand else None, True),
                 ("pressure.inlet_gauge_Pa", "hand_1d.inlet_gauge_Pa" if hand else None, True)]
    spec += [("flow.discharge_coefficient", 1.0, True),
             ("forces.total_x_N", "hand_1d.force_x_N" if hand else "forces.onedim_x_N", True)]
    if f.get("jet_reaction_N") is not None:
        spec.append(("forces.jet_reaction_N", "hand_1d.jet_reaction_N" if hand else None, True))
    if fl.get("contraction_coefficient") is not None:
        spec.append(("flow.contraction_coefficient", None, False))
    if gas:
        spec.append(("flow.mach_max", None, False))
    spec += [("pressure.min_wall_gauge_Pa", None, False)]
    cols = [Col("quantity", num=False), Col("unit", num=False), Col("1D, by hand" if not gas else "1D, quasi-1D"),
            Col("2D, axibore"), Col("2D − 1D"), Col("2D − 1D", "%")]
    if gci is not None:
        cols.append(Col("GCI", "%"))
    rows = []
    for key2, one, rel in spec:
        v2 = _get(s, key2)
        if key2 == "flow.discharge_coefficient" and v2 is None:
            continue  # a pipe outlet has none (the note is in the details)
        v1 = _get(s, one) if isinstance(one, str) else one
        lab = label(key2)
        u, k = display(lab.dim, (v1 or 0.0, v2 or 0.0), unit, planar)
        c2 = Cell(number(v2, k, lab.digits), key2, v2)
        c1 = Cell(number(v1, k, lab.digits), one, v1) if isinstance(one, str) else (number(v1, k, lab.digits) if one is not None else DASH)
        rows.append([lab.text, u, c1, c2] + _diff_cells(v1, v2, k, lab.digits, rel))
        if gci is not None:
            g = gci.get(key2)
            rows[-1].append(DASH if g is None else number(g * 100, 1.0, 2))
    return cols, rows


def margins(s: dict, case, unit: str, notes: int = 0) -> tuple[list[Col], list[list]]:
    """The margins an engineer checks, with their verdicts (``notes``: warnings of the page beside the run's)."""
    fl, p, o = s["flow"], s["pressure"], s["onedim"]
    rows = []
    n = len(s["warnings"]) + notes
    if n:
        rows.append(["warnings", f"{n} warning{'s' if n > 1 else ''}", "under Warnings, on the next page"])
    if fl.get("compressible"):
        v = choke_verdict(fl, case)
        rows.append(["choking", v.split(":")[0], v.split(":", 1)[1].strip()])
    else:
        v = cavitation_verdict(p)
        head, _, rest = v.partition(":")
        if head == "EXPECTED":
            head = f"EXPECTED at x = {number(p['min_wall_x_m'], 1e3, 4)} mm"
        rest = rest.strip().replace("; cavitation where the index is below the inception index", "")
        rows.append(["cavitation", head, rest.replace("against the inception index", "against inception")])
        pv, pa = p.get("vapour_pressure_Pa"), p.get("min_wall_absolute_Pa")
        rows.append(["least pressure", "" if pv is None else "above vapour" if pa > pv
                     else "BELOW vapour", absolute_wall_pressure(p, unit)])
    where = ", ".join(f"{a * 1e3:.4g}–{b * 1e3:.4g} mm" for a, b in o["breakdown_x_ranges_m"])
    rows.append(["1D model", "holds everywhere" if not where else f"off at x = {where}",
                 f"wall pressure off 1D by over {o['breakdown_threshold']:.3g} of the exit dynamic pressure; largest "
                 f"{deviation_text(o, unit).split(', ')[0]}"])
    v = s.get("viscous") or {}
    if v.get("model") == "integral":
        sep = ", ".join(f"{a * 1e3:.4g}–{b * 1e3:.4g} mm" for a, b in v["separation_x_ranges_m"])
        rows.append(["wall layer", "attached" if not sep else f"separated at x = {sep}",
                     f"largest shape factor {v['max_shape_factor']:.3g}" if v.get("max_shape_factor") is not None else ""])
    return [Col("margin", num=False, cls="nowrap"), Col("verdict", num=False, cls="verdict"), Col("figures", num=False)], rows


GRID_KEYS = {"total_x_N": "forces.total_x_N", "volume_flow_m3_s": "flow.volume_flow_m3_s",
             "discharge_coefficient": "flow.discharge_coefficient", "contraction_coefficient": "flow.contraction_coefficient",
             "min_wall_gauge_Pa": "pressure.min_wall_gauge_Pa"}


def grid_uncertainty(run_dir: Path) -> tuple[dict[str, float | None], str] | None:
    """The grid study this run is a level of (gridstudy.json beside it): the GCI of the finest level of each
    headline quantity (summary key -> relative GCI, None where there is none), and a sentence saying which."""
    path = run_dir.parent / "gridstudy.json"
    if not path.exists():
        return None
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        mine = [lv for lv in data["levels"] if Path(lv["run_dir"]).name == run_dir.name]
        ok = [lv["level"] for lv in data["levels"] if lv.get("ok")]
        q = data["quantities"]
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        return None
    if not mine or not ok:
        return None
    gci = {key: (q.get(name) or {}).get("gci_fine") for name, key in GRID_KEYS.items() if name in q}
    text = (f"From the grid study of this folder (levels {', '.join(map(str, sorted(ok)))}; gridstudy.html): the GCI of "
            f"the finest level, {max(ok)} (Celik et al. 2008; safety factor 1.25 with three or more grids, 3 with two), "
            f"in the headline table. This run is level {mine[0]['level']}.")
    return gci, text


# the inputs shown, in this order (the rest of the resolved case is in case.toml)
_INPUT_SECTIONS = ("fluid", "bore", "inlet", "outlet", "flange", "joint", "mesh", "viscous")


def inputs_table(case_toml: str) -> tuple[list[Col], list[list], dict[int, str]]:
    """The case as it ran (case.toml), as a table: input, value as written, its key in the case file."""
    data = tomllib.loads(case_toml)
    rows, groups = [], {}
    for section in _INPUT_SECTIONS:
        node = data.get(section)
        items: list[tuple[str, object]] = []
        if isinstance(node, dict):
            items = _flat(section, node)
        elif isinstance(node, list):
            for i, entry in enumerate(node, 1):
                items += _flat(f"{section}[{i}]", entry) if isinstance(entry, dict) else []
        if not items:
            continue
        groups[len(rows)] = section
        for key, value in items:
            rows.append([case_key_label(key.split(".", 1)[1] if "." in key else key), _value(value), key])
    cols = [Col("input", num=False), Col("value", num=False), Col("case-file key", num=False, cls="name")]
    return cols, rows, groups


def _flat(prefix: str, node: dict) -> list[tuple[str, object]]:
    out = []
    for k, v in node.items():
        if isinstance(v, dict):
            out += _flat(f"{prefix}.{k}", v)
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for i, x in enumerate(v, 1):
                out += _flat(f"{prefix}.{k}[{i}]", x)
        else:
            out.append((f"{prefix}.{k}", v))
    return out


def _value(v) -> str:
    if isinstance(v, list):
        return "(" + ", ".join(_value(x) for x in v) + ")"
    if isinstance(v, bool):
        return "yes" if v else "no"
    return str(v)


def detail_rows(s: dict, unit: str) -> list[list]:
    """The other numbers of the run (label, unit, value), each with its summary key."""
    f = s["forces"]
    keys = ["forces.wall_x_N", "forces.centerbody_x_N", "forces.momentum_x_N", "forces.onedim_x_N",
            "forces.reconciliation_rel", "onedim.force_dev_rel", "hand_1d.end_force_N", "forces.per_bolt_N",
            "flow.max_speed_m_s", "pressure.outlet_gauge_Pa", "pressure.min_wall_x_m", "pressure.vapour_pressure_Pa",
            "pressure.cavitation_index", "pressure.inception_index", "onedim.outlet_momentum_factor",
            "onedim.outlet_energy_factor", "flow.jet_radius_m", "flow.vena_contracta_x_m"]
    rows = []
    for key in keys:
        v = _get(s, key)
        if v is None and key in ("hand_1d.end_force_N", "forces.per_bolt_N", "flow.jet_radius_m", "flow.vena_contracta_x_m",
                                 "pressure.vapour_pressure_Pa", "pressure.cavitation_index", "pressure.inception_index"):
            continue
        if key == "forces.centerbody_x_N" and not v:
            continue
        lab = label(key)
        u, k = display(lab.dim, [v or 0.0], unit, _planar(s))
        rows.append([lab.text, u, Cell(number(v, k, lab.digits), key, v)])
    ep = s.get("exit_plane_model") or {}
    if ep.get("volume_flow_m3_s"):
        rows.append(["exit-plane model: volume flow, off by", "%", Cell(number(ep["flow_rel_diff"] * 100, 1, 3),
                                                                       "exit_plane_model.flow_rel_diff", ep["flow_rel_diff"])])
        rows.append(["exit-plane model: axial force, off by", "%", Cell(number(ep["force_rel_diff"] * 100, 1, 3),
                                                                       "exit_plane_model.force_rel_diff", ep["force_rel_diff"])])
    for r in rows:
        if r[2].key == "forces.per_bolt_N" and f.get("bolts"):
            r[0] += f" ({f['bolts']} bolts)"
    return rows


def viscous_rows(s: dict, unit: str) -> list[list]:
    v = s.get("viscous") or {}
    if v.get("model") != "integral":
        return []
    pu, pk = display("pressure", (), unit)
    rows = [["Reynolds number, on " + number(v["reynolds_length_m"], 1e3, 4) + " mm", "", cell(s, "viscous.reynolds_number", 1, 4)],
            ["viscosity", "Pa s", cell(s, "viscous.viscosity_Pa_s", 1, 5)]]
    for key, text in (("forces.friction_x_N", "friction force (wall shear, on the part)"),
                      ("forces.total_with_friction_x_N", "axial force with friction"),
                      ("viscous.momentum_with_friction_x_N", "momentum balance with the layer")):
        u, k = display("force", [_get(s, key) or 0.0], planar=_planar(s))
        rows.append([text, u, cell(s, key, k, 5)])
    cd, kk = v["discharge_coefficient"], v["loss_coefficient"]
    rows.append(["discharge coefficient with the wall layer", "", cell(s, "viscous.discharge_coefficient", 1, 5) if cd is not None
                 else Cell(v["discharge_coefficient_note"], cls="text")])
    rows.append(["loss coefficient K", "", cell(s, "viscous.loss_coefficient", 1, 4) if kk is not None
                 else Cell(v["loss_coefficient_note"], cls="text")])
    if v.get("head_loss_m") is not None:
        rows.append(["head loss", "m", cell(s, "viscous.head_loss_m", 1, 4)])
        rows.append(["total-pressure loss", pu, cell(s, "viscous.total_pressure_loss_Pa", pk, 4)])
    rows.append(["transition at x", "mm", Cell(", ".join(number(x, 1e3, 4) for x in v["transition_x_m"]) or "none", cls="text")])
    corner = [list(c) for c in v.get("corner_vortex_x_ranges_m", [])]
    rows.append(["separated ranges of x", "mm", Cell(", ".join(f"{a * 1e3:.4g} to {b * 1e3:.4g}" + (" (into a concave corner)" if [a, b] in corner else "")
                                                       for a, b in v["separation_x_ranges_m"]) or "none", cls="text")])
    rows.append(["largest shape factor", "", cell(s, "viscous.max_shape_factor", 1, 4)])
    d = v.get("displacement")
    if d:
        u, k = display("force", [d["force_change_N"]])
        rows.append([f"displacement pass ({d['mode']}, {d['passes']} re-solves): change of the wall force", u,
                     f"{number(d['force_change_N'], k, 4)} ({d['force_change_rel']:+.3%})"])
    return rows
