"""Printed output of the commands: the headline numbers of a run, the mesh summary (formatting only)."""

from __future__ import annotations

from ..describe import absolute_wall_pressure, cavitation_verdict, deviation_text
from ..units import show


def table(rows: list[tuple[str, str]]) -> list[str]:
    """Two aligned columns (label, value)."""
    width = max(len(k) for k, _ in rows)
    return [f"  {k:<{width}}  {v}" for k, v in rows]


def headline(summary: dict, unit: str = "bar") -> list[str]:
    """The numbers an engineer signs off, as printed lines (pressures in ``unit``)."""
    fl, p, f, o = summary["flow"], summary["pressure"], summary["forces"], summary["onedim"]
    gas = fl.get("compressible")
    rows = [] if gas else [("volume flow", show(fl["volume_flow_m3_s"], "volume_flow"))]
    rows += [
        ("mass flow", show(fl["mass_flow_kg_s"], "mass_flow")
         + (f"  (ideal quasi-1D {show(fl['ideal_mass_flow_kg_s'], 'mass_flow')}, {fl['onedim_regime']})" if gas else "")),
        ("mean velocity in / out", f"{fl['inlet_mean_velocity_m_s']:.4g} / {fl['outlet_mean_velocity_m_s']:.4g} m/s"),
        ("discharge coefficient", fl.get("discharge_coefficient_note", "-") if fl["discharge_coefficient"] is None
         else f"{fl['discharge_coefficient']:.5f}"),
        ("inlet / outlet pressure", f"{show(p['inlet_gauge_Pa'], 'pressure', unit=unit)} / {show(p['outlet_gauge_Pa'], 'pressure', unit=unit)} gauge"),
    ]
    if gas:
        rows += [("inlet / outlet abs", f"{show(p['inlet_absolute_Pa'], 'pressure', unit=unit)} / {show(p['outlet_absolute_Pa'], 'pressure', unit=unit)}"),
                 ("max Mach number", f"{fl['mach_max']:.4g}" + (f"; minimum area at x = {show(fl['throat_x_m'], 'length')}"
                                                               if fl.get("throat_x_m") is not None else ""))]
    rows += [
        ("wall force x", show(f["wall_x_N"], "force") + "  (+x = downstream, on the part)"),
    ]
    if f["centerbody_x_N"]:
        rows.append(("centre-body force x", show(f["centerbody_x_N"], "force")))
    rows += [
        ("momentum balance x", f"{show(f['momentum_x_N'], 'force')}  (reconciliation {f['reconciliation_rel']:+.2e})"),
        ("1D formula x", f"{show(f['onedim_x_N'], 'force')}  (2D - 1D: {o['force_dev_rel']:+.3%})" if o["force_dev_rel"] is not None
         else show(f["onedim_x_N"], "force")),
    ]
    hand = summary.get("hand_1d")
    if hand:
        jet = f", jet reaction {show(hand['jet_reaction_N'], 'force')}" if hand["jet_reaction_N"] is not None else ""
        rows.append(("by hand (1D)", f"flow {show(hand['volume_flow_m3_s'], 'volume_flow')}, V in / out "
                                     f"{hand['inlet_velocity_m_s']:.4g} / {hand['exit_velocity_m_s']:.4g} m/s, force "
                                     f"{show(hand['force_x_N'], 'force')}{jet}; p1 A1 {show(hand['end_force_N'], 'force')} "
                                     "(the same inputs, uniform planes: continuity, Bernoulli, momentum)"))
    for j in summary.get("joints", []):
        bolts = f", {show(j['per_bolt_N'], 'force')} per bolt ({j['bolts']} bolts)" if j["per_bolt_N"] is not None else ""
        rows.append((f"joint {j['name']}", f"{show(j['load_N'], 'force')}{bolts}; G {show(j['gasket_diameter_m'], 'length')}, "
                     f"p {show(j['pressure_gauge_Pa'], 'pressure', unit=unit)} (hydrodynamic part)"))
    if f.get("jet_reaction_N") is not None:
        pe = f.get("jet_reaction_exit_gauge_Pa")
        used = f", p_e - p_a = {show(pe, 'pressure', unit=unit)}" if pe is not None else ""
        rows.append(("jet reaction", f"{show(f['jet_reaction_N'], 'force')} on the holder, upstream (mdot V_e + (p_e - p_a) A_e "
                                     f"at the exit{used})"))
    if fl.get("contraction_coefficient") is not None:
        rows.append(("free jet", f"contraction coefficient {fl['contraction_coefficient']:.4f}, far-jet radius "
                                 f"{show(fl['jet_radius_m'], 'length')}, vena contracta at x = {show(fl['vena_contracta_x_m'], 'length')}"))
        ep = summary.get("exit_plane_model") or {}
        if ep.get("volume_flow_m3_s"):
            rows.append(("exit-plane model", f"the same bore with the outlet pressure imposed across its exit plane: flow "
                                             f"{ep['flow_rel_diff']:+.2%} and force {ep['force_rel_diff']:+.2%} against the free "
                                             f"jet, min wall pressure {show(ep['min_wall_gauge_Pa'], 'pressure', unit=unit)} gauge"))
    rows += [
        ("min wall pressure", f"{show(p['min_wall_gauge_Pa'], 'pressure', unit=unit)} gauge at x = {show(p['min_wall_x_m'], 'length')} "
         f"({p['min_wall_boundary']})"),
        ("min wall pressure abs", absolute_wall_pressure(p, unit)),
    ]
    if not gas:
        rows.append(("cavitation", cavitation_verdict(p)))
    rows += [
        ("1D wall-pressure dev", deviation_text(o, unit)),
        (f"1D breakdown (> {o['breakdown_threshold']:.3g} q_out)",
         ", ".join(f"x {a * 1e3:.4g} to {b * 1e3:.4g} mm" for a, b in o["breakdown_x_ranges_m"]) or "nowhere"),
        ("outlet beta / alpha", f"{o['outlet_momentum_factor']:.5f} / {o['outlet_energy_factor']:.5f}"),
    ]
    rows += viscous_rows(summary)
    sv = summary["solver"]
    method = "superlu (direct)" if sv["method"] == "superlu" else sv["method"]
    solve = f"{summary['mesh']['cells']:,} cells ({summary['mesh']['method']}), {method}, residual {sv['residual']:.1e}, " \
            f"mass imbalance {sv['mass_imbalance']:.1e}"
    if not sv["converged"]:
        solve += "  NOT CONVERGED"
    rows.append(("mesh / solve", solve))
    if sv.get("result_note"):
        rows.insert(0, ("NOT A RESULT", sv["result_note"]))
    if (summary.get("geometry") or {}).get("per_unit_depth"):
        rows.insert(0, ("planar section", "flows, areas and forces are per metre of depth, for the half above the symmetry plane"))
    return table(rows)


def viscous_rows(summary: dict) -> list[tuple[str, str]]:
    """The wall-layer lines of the headline (none when no layer ran)."""
    v = summary.get("viscous") or {}
    if v.get("model") != "integral":
        return []
    f = summary["forces"]
    def g(x, spec: str) -> str:  # a number the layer may not have given
        return "-" if x is None else format(x, spec)

    narrowest = v.get("reynolds_number_narrowest")
    at_narrowest = f", {g(narrowest, '.4g')} at the narrowest section" if narrowest is not None else ""
    rows = [("wall layer", f"Re {g(v['reynolds_number'], '.4g')} (on {show(v['reynolds_length_m'], 'length')}){at_narrowest}, start "
                           f"{v['settings']['start']}, " + (", ".join(f"transition x = {show(x, 'length')}" for x in v["transition_x_m"])
                                                          or "no transition")),
            ("friction force x", f"{show(f['friction_x_N'], 'force')}; with the wall pressure {show(f['total_with_friction_x_N'], 'force')}")]
    cd = v["discharge_coefficient"]
    rows.append(("viscous discharge coeff", f"{cd:.5f} (inviscid {g(v['discharge_coefficient_inviscid'], '.5f')})" if cd is not None
                 else v["discharge_coefficient_note"]))
    if v["loss_coefficient"] is not None:
        rows.append(("loss coefficient K", f"{v['loss_coefficient']:.4g} (head loss {v['head_loss_m']:.4g} m, "
                                           f"{show(v['total_pressure_loss_Pa'], 'pressure')})"))
    else:
        rows.append(("loss coefficient K", v["loss_coefficient_note"]))
    corner = [list(c) for c in v.get("corner_vortex_x_ranges_m", [])]
    sep = ", ".join(f"x {a * 1e3:.4g} to {b * 1e3:.4g} mm" + (" (into a concave corner, where a new layer starts)"
                                                              if [a, b] in corner else "")
                    for a, b in v["separation_x_ranges_m"])
    rows.append(("layer separated", sep or f"nowhere (largest shape factor {g(v['max_shape_factor'], '.3g')})"))
    d = v.get("displacement")
    if d:
        rows.append(("displacement pass", f"{d['mode']}, {d['passes']} re-solve(s): wall force {d['force_change_N']:+.4g} N "
                                          f"({d['force_change_rel']:+.3%}), flow {d['flow_change_rel']:+.3%}, inlet pressure "
                                          f"{d['inlet_pressure_change_Pa']:+.4g} Pa"))
    return rows


def mesh_lines(build, level: int) -> list[str]:
    q = build.mesh.quality()
    return [
        f"mesh      {q['cells']:,} cells ({q['triangles']:,} triangles, {q['quads']:,} quads), {q['faces']:,} faces, "
        f"level {level}, target {show(build.h_target, 'length')}, {build.seconds:.2f} s",
        f"cells     centre-to-centre lines up to {q['max_non_orthogonality_deg']:.1f} deg off the face normal (mean "
        f"{q['mean_non_orthogonality_deg']:.1f}), meeting faces up to {q['max_skewness']:.3f} face lengths off their "
        f"middle; sides at most {q['max_aspect_ratio']:.2f} : 1",
        "boundary  " + ", ".join(f"{k} {v}" for k, v in sorted(q["boundary_faces"].items())) + " faces",
    ]
