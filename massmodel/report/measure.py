"""Terminal text of the measurement reports built by :mod:`massmodel.measure.analysis` (lengths in mm, loads in kg).

Every number carries its unit; frames are named in the headers. Conversion from SI happens only here.
"""

from __future__ import annotations

from typing import Any

from massmodel.measure.session import CORNERS

from .summary import table

__all__ = ["format_weighing", "format_lift", "format_pendulum"]

_SHORT = {"front_left": "FL", "front_right": "FR", "rear_left": "RL", "rear_right": "RR"}


def _pm(e: dict[str, Any] | None, scale: float = 1.0, digits: int = 1, unit: str = "", sign: bool = False) -> str:
    if e is None:
        return "-"
    fmt = f"+.{digits}f" if sign else f".{digits}f"
    tail = f" {unit}" if unit else ""
    if e.get("standard_uncertainty") is None:
        return f"{e['value'] * scale:{fmt}}{tail}"
    return f"{e['value'] * scale:{fmt}} ± {e['standard_uncertainty'] * scale:.{digits}f}{tail}"


def _cautions(lines: list[str], report: dict[str, Any]) -> None:
    lines.append("")
    lines.append("CAUTIONS")
    lines.extend(f"  - {c}" for c in report["cautions"])


def format_weighing(r: dict[str, Any]) -> str:
    """Text of a ``massmodel-weighing/1`` report."""
    out: list[str] = []
    out.append(f"massmodel weigh · {r['session']}   ({r['session_file']}{', ' + r['date'] if r['date'] else ''})")
    frame = f"model frame of {r['model']} ({r['model_file']})" if r["model"] else "no model: relative to the axles"
    out.append(f"loads: mass-equivalent kg · lengths mm · {frame} · values ± standard uncertainty")
    out.append("")
    rows = []
    for w in r["weighings"]:
        loads = w["loads_kg"]
        pads = " ".join(w["pads"][c] for c in CORNERS) if w["pads"] else "-"
        rows.append([w["label"], *(f"{loads[c]:.2f}" for c in CORNERS), f"{w['total_kg']:.2f}",
                     f"{w['cross_fraction']:.4f}", pads])
    mean = r["corner_loads_kg"]
    rows.append(["mean", *(f"{mean[c]:.2f}" for c in CORNERS), f"{r['total_mass']['value']:.2f}",
                 f"{r['cross_fraction']['value']:.4f}", ""])
    if r["corner_std_kg"]:
        sd = r["corner_std_kg"]
        rows.append(["std dev", *(f"{sd[c]:.2f}" for c in CORNERS), "", "", ""])
    if r["corner_standard_uncertainty_kg"]:
        u = r["corner_standard_uncertainty_kg"]
        rows.append(["u(mean)", *(f"{u[c]:.2f}" for c in CORNERS), f"{r['total_mass']['standard_uncertainty']:.2f}",
                     f"{r['cross_fraction']['standard_uncertainty']:.4f}", ""])
    out.append(f"WEIGHINGS ({r['weighing_count']}; corner loads kg, averaged corner by corner)")
    out.append(table(["weighing", "FL", "FR", "RL", "RR", "total", "cross", "pads FL FR RL RR"], rows, "lrrrrrrl"))
    if r["pad_standard_uncertainty_kg"] is not None:
        out.append(f"  u(mean) includes the stated pad uncertainty {r['pad_standard_uncertainty_kg']:.2f} kg "
                   "(treated as systematic: averaging does not reduce it)")
    if r["pad_offsets_kg"]:
        out.append("  pad zero offsets (least squares, relative to the pads' mean): " +
                   ", ".join(f"{k} {v:+.2f} kg" for k, v in r["pad_offsets_kg"].items()))
    for n in r["notes"]:
        out.append(f"  note: {n}")
    out.append("")
    a, s = r["axle_loads_kg"], r["side_loads_kg"]
    out.append("CORNER WEIGHTS (mean)")
    out.append(table(["kg", "left", "right", "axle"], [
        ["front", f"{mean['front_left']:.2f}", f"{mean['front_right']:.2f}", f"{a['front']:.2f}"],
        ["rear", f"{mean['rear_left']:.2f}", f"{mean['rear_right']:.2f}", f"{a['rear']:.2f}"],
        ["side", f"{s['left']:.2f}", f"{s['right']:.2f}", f"{r['total_mass']['value']:.2f}"],
    ]))
    out.append(f"  total mass      {_pm(r['total_mass'], 1, 2, 'kg')}")
    out.append(f"  front fraction  {_pm(r['front_fraction'], 1, 4)}    left fraction {_pm(r['left_fraction'], 1, 4)}")
    cw = r["cross_weight_kg"]
    out.append(f"  cross weight    FR+RL {cw['front_right_plus_rear_left']:.2f} kg, FL+RR "
               f"{cw['front_left_plus_rear_right']:.2f} kg, cross fraction (FR+RL)/total "
               f"{_pm(r['cross_fraction'], 1, 4)}")
    cg = r["cg"]
    out.append(f"  CG              {_pm(cg['behind_front_axle'], 1e3, 1, 'mm')} behind the front axle, "
               f"{_pm(cg['left_of_centre'], 1e3, 1, 'mm', sign=True)} left of the centre plane")
    if cg["station"] is not None:
        out.append(f"                  station (forward · p, model frame) {_pm(cg['station'], 1e3, 1, 'mm')}")
    if cg["height_above_ground"] is not None:
        out.append(f"  CG height       {_pm(cg['height_above_ground'], 1e3, 1, 'mm')} above the ground "
                   f"({cg['height_source']})")
    else:
        out.append(f"  CG height       {cg['height_source']}")
    w = r["diagonal_preload_kg"]
    npc = r["no_preload_corner_loads_kg"]
    out.append(f"  diagonal preload  the FL-RR diagonal carries {w:+.2f} kg at FL ({mean['rear_right'] - npc['rear_right']:+.2f} kg "
               "at RR) against a car with the same CG and no diagonal preload")
    g = r["geometry"]
    out.append(f"  geometry        wheelbase {g['wheelbase_m'] * 1e3:.1f} mm ({g['source']['wheelbase']}), tracks "
               f"{g['track_front_m'] * 1e3:.1f} / {g['track_rear_m'] * 1e3:.1f} mm ({g['source']['track_front']})")
    rec = r["reconciliation"]
    if rec is not None:
        out.append("")
        out.extend(_reconciliation_lines(rec))
    um = r.get("updated_model")
    if um:
        out.append("")
        out.append(f"UPDATED MODEL written to {um['file']}")
        out.append(f"  extends {um['extends']} (not changed) and adds '{um['part']}' (maturity measured), height "
                   f"{um['height_above_ground_m'] * 1e3:.1f} mm above the ground ({um['height_source']})")
        ch = um["check"]
        out.append(f"  check: the new model has {ch['mass_kg']:.3f} kg, CG station {ch['station_m'] * 1e3:.1f} mm, "
                   f"lateral {ch['lateral_m'] * 1e3:+.1f} mm, height {ch['height_above_ground_m'] * 1e3:.1f} mm")
    _cautions(out, r)
    return "\n".join(out)


def _reconciliation_lines(rec: dict[str, Any]) -> list[str]:
    out = ["MODEL VERSUS SCALES"]
    mc, sc, d = rec["model_cg"], rec["scales_cg"], rec["difference_scales_minus_model"]
    rows = [
        ["mass kg", f"{rec['model_mass_kg']:.2f}", _pm(rec["scales_mass"], 1, 2), f"{d['mass_kg']:+.2f}"],
        ["CG station mm", f"{mc['station_m'] * 1e3:.1f}", _pm(sc["station"], 1e3, 1), f"{d['station_m'] * 1e3:+.1f}"],
        ["CG lateral mm", f"{mc['lateral_m'] * 1e3:+.1f}", _pm(sc["lateral"], 1e3, 1, sign=True),
         f"{d['lateral_m'] * 1e3:+.1f}"],
        ["CG height mm", f"{mc['height_above_ground_m'] * 1e3:.1f}",
         _pm(sc["height_above_ground"], 1e3, 1) if sc["height_above_ground"] else "not measured",
         f"{d['height_m'] * 1e3:+.1f}" if d["height_m"] is not None else "-"],
    ]
    mcl, scl = rec["model_corner_loads_kg"], rec["scales_corner_loads_kg"]
    for c in CORNERS:
        rows.append([f"{_SHORT[c]} kg", f"{mcl[c]:.2f}", f"{scl[c]:.2f}", f"{scl[c] - mcl[c]:+.2f}"])
    out.append(table(["", "model", "scales", "scales - model"], rows, "lrrr"))
    out.append("  model corners: rigid chassis, no diagonal preload; station forward · p, lateral left · p, model frame")
    u = rec["unaccounted"]
    out.append("")
    out.append("UNACCOUNTED ITEM (what the model lacks for model and scales to agree)")
    out.append(f"  mass     {_pm(u['mass'], 1, 3, 'kg', sign=True)}")
    if u["station"] is not None:
        out.append(f"  station  {_pm(u['station'], 1e3, 0, 'mm')} (forward · p, model frame)")
        out.append(f"  lateral  {_pm(u['lateral'], 1e3, 0, 'mm', sign=True)} (left · p)")
    if u["height_above_ground"] is not None:
        out.append(f"  height   {_pm(u['height_above_ground'], 1e3, 0, 'mm')} above the ground ({u['height_source']})")
    else:
        out.append(f"  height   {u['height_source']}")
    if u["height_poorly_determined"]:
        out.append("  the item's height is poorly determined (its uncertainty exceeds the car's CG height): placing "
                   "it there matches the car's CG height, not the item's real place")
    if not u["determined"]:
        out.append("  the mass difference is within twice its uncertainty of zero: its position means little")
    if u["mass"]["value"] < 0.0:
        out.append("  the model is heavier than the car: the position is that of the model's over-estimate")
    out.append(f"  ({u['assumption']})")
    return out


def format_lift(r: dict[str, Any]) -> str:
    """Text of a ``massmodel-axle-lift/1`` report."""
    out: list[str] = []
    out.append(f"massmodel tilt · {r['session']}   ({r['session_file']}{', ' + r['date'] if r['date'] else ''})")
    out.append(f"method: {r['method']}")
    out.append("loads: mass-equivalent kg · heights above the ground, mm · values ± standard uncertainty")
    for s in r["series"]:
        out.append("")
        out.append(f"SERIES '{s['name']}': {s['lifted']} axle lifted, {s['axle_on_scales']} axle on the scales")
        out.append(f"  W = {s['total_mass_kg']:.2f} kg (level loads), level load on the scales "
                   f"F = {s['level_load_kg']:.2f} kg, L = {s['wheelbase_m'] * 1e3:.1f} mm, "
                   f"r_s = {s['tyre_loaded_radius_m'] * 1e3:.1f} mm")
        rows = [[x["direction"], f"{x['angle_deg']:.3f}", f"{x['tan_angle']:.5f}", f"{x['load_kg']:.2f}",
                 f"{x['load_change_kg']:+.2f}", f"{x['cg_height_m'] * 1e3:.1f}", f"{x['fit_residual_kg']:+.3f}"]
                for x in s["readings"]]
        out.append(table(["", "angle deg", "tan", "load kg", "dF kg", "h_i mm", "residual kg"], rows, "lrrrrrr"))
        fit = s["fit"]
        slope_se = f" ± {fit['slope_standard_error_kg']:.3f}" if fit["slope_standard_error_kg"] is not None else ""
        out.append(f"  fit: load = {fit['intercept_kg']:.3f} kg + {fit['slope_kg']:.3f}{slope_se} kg × tan θ; "
                   f"residual std {fit['residual_std_kg']:.3f} kg, {fit['degrees_of_freedom']} degrees of freedom")
        ci = s["cg_height_interval95_m"]
        ci_text = f", 95 % interval {ci[0] * 1e3:.1f} .. {ci[1] * 1e3:.1f} mm" if ci else ""
        out.append(f"  CG height from the fit   {_pm(s['cg_height_fit'], 1e3, 1, 'mm')} (standard error of the fit"
                   f"{ci_text})")
        pv = s["point_values"]
        if pv["std_m"] is not None:
            out.append(f"  scatter of the readings' h_i: mean {pv['mean_m'] * 1e3:.1f} mm, std "
                       f"{pv['std_m'] * 1e3:.1f} mm")
        for k, v in s["by_direction"].items():
            out.append(f"  {k} only: {_pm(v, 1e3, 1, 'mm')}")
        sens = s["sensitivities"]
        out.append("  sensitivity of h to an error in: " + "; ".join(
            f"{k.replace('_', ' ')} {v['display']:+.3f} {v['display_unit']}" for k, v in sens.items()))
        bud = s["uncertainty_budget_m"]
        extra = {k: v for k, v in bud.items() if k != "fit"}
        if extra:
            out.append("  uncertainty budget: " + ", ".join(
                f"{k.replace('_', ' ')} {v * 1e3:.2f} mm" for k, v in bud.items() if v is not None))
        out.append(f"  CG height                {_pm(s['cg_height'], 1e3, 1, 'mm')} above the ground")
    out.append("")
    out.append("RESULT")
    out.append(f"  CG height above the ground {_pm(r['cg_height'], 1e3, 1, 'mm')}"
               + (" (weighted mean of the series)" if len(r["series"]) > 1 else ""))
    if len(r["series"]) > 1 and r["shared_inputs_m"]:
        out.append("  shared inputs, not averaged down: " + ", ".join(
            f"{k.replace('_', ' ')} {v * 1e3:.2f} mm" for k, v in r["shared_inputs_m"].items()))
    if r["series_chi2"] is not None:
        verdict = {True: "the series agree within their uncertainties", False: "the series DISAGREE (chi² above its "
                   "99 % point): look for a moving mass, a slipping block or an angle error", None: ""}
        out.append(f"  chi² {r['series_chi2']:.2f} on {len(r['series']) - 1} degree(s) of freedom: "
                   f"{verdict[r['series_consistent']]}")
    if r["model_cg_height_above_ground_m"] is not None:
        out.append(f"  model CG height           {r['model_cg_height_above_ground_m'] * 1e3:.1f} mm "
                   f"({r['model']}); measured - model {r['difference_measured_minus_model_m'] * 1e3:+.1f} mm")
    out.append("  assumptions: " + "; ".join(r["assumptions"]))
    _cautions(out, r)
    return "\n".join(out)


def format_pendulum(r: dict[str, Any]) -> str:
    """Text of a ``massmodel-pendulum/1`` report."""
    out: list[str] = []
    out.append(f"massmodel swing · {r['session']}   ({r['session_file']}{', ' + r['date'] if r['date'] else ''})")
    out.append("inertia kg*m^2 about the stated axis · periods s · values ± standard uncertainty")
    for t in r["tests"]:
        out.append("")
        out.append(f"TEST '{t['name']}': {t['kind']} pendulum, {r['formulas'][t['kind']]}")
        inputs = ", ".join(f"{k.replace('_', ' ')} {v:.3f} kg" if k == "body_mass" else
                           f"{k.replace('_', ' ')} {v * 1e3:.1f} mm" for k, v in t["inputs"].items())
        out.append(f"  {inputs}; g = {t['gravity_m_s2']:.5f} m/s^2 ({t['gravity_source']})")
        out.append(f"  period {_pm(t['period'], 1, 4, 's')} from {t['period_count']} values"
                   + (f" (divided by the amplitude factor {t['amplitude_factor']:.6f})" if t["amplitude_factor"] else ""))
        if t["fixture_period"] is not None:
            out.append(f"  fixture swung empty: period {_pm(t['fixture_period'], 1, 4, 's')}")
        out.append(f"  body and fixture   {t['inertia_system_kg_m2']:.4f} kg*m^2")
        if t["inertia_fixture_kg_m2"] is not None:
            out.append(f"  fixture            {t['inertia_fixture_kg_m2']:.4f} kg*m^2 (subtracted)")
        axis = "pivot axis" if t["kind"] == "compound" else "pendulum axis"
        out.append(f"  body about the {axis}   {_pm(t['inertia_about_pendulum_axis'], 1, 4, 'kg*m^2')}")
        if t["inertia_about_cg"] is not None:
            out.append(f"  body about the parallel axis through its CG   {_pm(t['inertia_about_cg'], 1, 4, 'kg*m^2')}")
        out.append("  sensitivity: " + "; ".join(
            f"{k.replace('_', ' ')} {v['value']:+.4g} {v['unit']}" for k, v in t["sensitivities"].items()))
        if t["uncertainty_budget_kg_m2"]:
            out.append("  uncertainty budget: " + ", ".join(
                f"{k.replace('_', ' ')} {v:.4f}" for k, v in t["uncertainty_budget_kg_m2"].items()) + " kg*m^2")
        c = t["comparison"]
        if c is not None:
            where = "through the CG of the selection" if c["about_cg"] else (
                "through (" + ", ".join(f"{x * 1e3:.1f}" for x in c["axis_point_m"]) + ") mm, model frame")
            sel = ", ".join(g or "whole model" for g in c["groups"])
            if c["exclude"]:
                sel += " without " + ", ".join(c["exclude"])
            out.append(f"  MODEL about axis {c['axis']} {where}: {c['model_inertia_kg_m2']:.4f} kg*m^2 "
                       f"(selection: {sel}, {c['model_mass_kg']:.3f} kg)")
            rel = c["relative_difference"]
            rel_text = f" ({100 * rel:+.1f} %)" if rel is not None else ""
            out.append(f"    measured - model {c['difference_kg_m2']:+.4f} kg*m^2{rel_text}")
            if c["model_pivot_to_cg_m"] is not None:
                out.append(f"    model CG to the pivot axis {c['model_pivot_to_cg_m'] * 1e3:.1f} mm (test: "
                           f"{t['inputs']['pivot_to_cg'] * 1e3:.1f} mm)")
            for n in c["notes"]:
                out.append(f"    note: {n}")
    _cautions(out, r)
    return "\n".join(out)
