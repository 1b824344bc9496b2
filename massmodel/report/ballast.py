"""Ballast results as plain data (JSON, SI, units in the keys) and as readable text (mm and kg at the edge)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from massmodel.ballast.block import AXES
from massmodel.ballast.sizing import BlockSizing
from massmodel.ballast.targets import denser_materials
from massmodel.core import cautions
from massmodel.core.materials import Material
from massmodel.report.rules import rule_dict

from .summary import table

__all__ = ["BALLAST_FORMAT", "sizing_dict", "format_sizing", "placement_dict", "format_placement",
           "format_rule_costs", "seat_dict", "format_seat", "suggestions"]

BALLAST_FORMAT = "massmodel-ballast/1"
CONVENTIONS = {
    "units": "SI: kg, m, kg*m^2 (unit in every key); text output in mm and kg",
    "frame": "model axes of the model file; block sizes in the slot's axes",
    "inertia": "tensor about the block's CG, model axes; off-diagonal I_xy = -integral(x*y dm) (tensor convention)",
    "density_band": "masses at the material's nominal, lowest and highest density; minimum-mass rules are met at "
                    "the lowest",
    "files": "STEP and STL in millimetres, model frame",
}


def _v(v: Any, scale: float = 1e3, digits: int = 1) -> str:
    return "(" + ", ".join(f"{x * scale:.{digits}f}" for x in v) + ")"


def suggestions(sizing: BlockSizing, library: Mapping[str, Material], other_slots: Sequence[tuple[str, float]] = ()
                ) -> list[str]:
    """What would reach a target the slot cannot hold: a denser class, more length, a second slot."""
    if sizing.reached or sizing.target is None:
        return []
    out = []
    target = sizing.target
    vol_full = float(sum(p.geometry.volume() for p in sizing.capacity))
    mat = sizing.spec.material
    reach = [m for m in denser_materials(mat, library) if m.band[0] * vol_full >= target]
    if reach:
        m = reach[0]
        out.append(f"a denser material: {m.key} ({m.name}) holds {m.band[0] * vol_full:.3f} kg in this slot at the "
                   f"low end of its band ({m.band[0]:.0f} kg/m^3)")
    else:
        dense = denser_materials(mat, library)
        if dense:
            m = dense[-1]
            out.append(f"no denser material in the library reaches it: even {m.key} ({m.band[0]:.0f} kg/m^3 at the "
                       f"low end) holds only {m.band[0] * vol_full:.3f} kg here")
        else:
            out.append(f"no material in the library is denser than {mat.key} at the low end of its band")
    k = sizing.spec.fill.axis
    if sizing.needed_fill_length is not None:
        extra = sizing.needed_fill_length - sizing.fill_length
        out.append(f"more length: a block {sizing.needed_fill_length * 1e3:.1f} mm long along the fill axis "
                   f"{AXES[k]} would reach it, so the slot would have to grow by {extra * 1e3:.1f} mm along "
                   f"{AXES[k]} (clearance kept)")
    short = target - sizing.capacity_masses()[1]
    text = f"a second slot: put the remaining {short:.3f} kg (low end of the band) in another slot"
    fits = [f"{n} ({cap:.2f} kg)" for n, cap in other_slots if cap >= short]
    if other_slots:
        text += ("; of the model's other slots, these hold it in this material: " + ", ".join(fits)) if fits else \
            "; none of the model's other slots holds that much alone in this material"
    out.append(text)
    return out


def sizing_dict(sizing: BlockSizing, fits: Sequence[Any] = (), extra: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """A sized block as plain data."""
    nom, lo, hi = sizing.masses()
    mp = sizing.props()
    cap = sizing.capacity_masses()
    mat = sizing.spec.material
    out: dict[str, Any] = {
        "format": BALLAST_FORMAT,
        "conventions": CONVENTIONS,
        "slot": sizing.envelope.name,
        "material": {"key": mat.key, "name": mat.name, "density_kg_m3": mat.density,
                     "density_min_kg_m3": mat.band[0], "density_max_kg_m3": mat.band[1], "source": mat.source},
        "target_at_low_density_kg": sizing.target,
        "reached": bool(sizing.reached),
        "shortfall_kg": sizing.shortfall,
        "fill": str(sizing.spec.fill),
        "fill_length_m": sizing.fill_length,
        "increment_m": sizing.spec.increment,
        "mass_kg": {"nominal": nom, "min": lo, "max": hi},
        "volume_m3": sizing.volume,
        "cg_m": mp.center.tolist(),
        "inertia_cg_kg_m2": mp.inertia.tolist(),
        "pieces": [
            {"size_m": list(p.geometry.size), "volume_m3": p.geometry.volume(),
             "mass_max_density_kg": sizing.spec.material.band[1] * p.geometry.volume(),
             "centre_m": p.pose.apply(p.geometry.centroid()).tolist(), "description": p.geometry.describe(),
             "removed_m3": p.geometry.removed_volume()}
            for p in sizing.pieces
        ],
        "heaviest_block_kg": {"nominal": cap[0], "min": cap[1], "max": cap[2]},
        "needed_fill_length_m": sizing.needed_fill_length,
        "fit": [{"fits": bool(f.fits), "clearance_m": f.clearance, "required_clearance_m": f.required_clearance,
                 "outside_volume_m3": f.outside_volume, "reason": f.reason, "method": f.method} for f in fits],
        "cautions": cautions.for_report("ballast", "machining", "handling"),
    }
    if extra:
        out.update(extra)
    return out


def format_sizing(sizing: BlockSizing, fits: Sequence[Any] = (), advice: Sequence[str] = (),
                  rule_lines: Sequence[str] = ()) -> str:
    """Readable text of a sized block."""
    env = sizing.envelope
    mat = sizing.spec.material
    nom, lo, hi = sizing.masses()
    out = [f"BALLAST BLOCK · slot {env.name}"]
    out.append(f"  slot {' x '.join(f'{s * 1e3:.1f}' for s in env.size)} mm, clearance {env.clearance * 1e3:.2f} mm "
               f"each side; room {' x '.join(f'{s * 1e3:.1f}' for s in env.available)} mm; fill {sizing.spec.fill} "
               f"in steps of {sizing.spec.increment * 1e3:g} mm")
    out.append(f"  material {mat.key}: {mat.density:.0f} kg/m^3 nominal, band {mat.band[0]:.0f} .. "
               f"{mat.band[1]:.0f} kg/m^3 ({mat.source})")
    out.extend(f"  {line}" for line in rule_lines)
    if sizing.target is not None:
        out.append(f"  target {sizing.target:.3f} kg at the LOW end of the density band")
    out.append("")
    rows = []
    for i, p in enumerate(sizing.pieces):
        g = p.geometry
        rows.append([str(i + 1), " x ".join(f"{s * 1e3:.1f}" for s in g.size),
                     f"{mat.density * g.volume():.3f}", f"{mat.band[1] * g.volume():.3f}",
                     _v(p.pose.apply(g.centroid()))])
    out.append(table(["piece", "size mm (slot axes)", "kg nominal", "kg at max density", "CG mm (model)"], rows,
                     "lrrrr"))
    g0 = sizing.pieces[0].geometry
    if g0.chamfer:
        out.append(f"  chamfer {g0.chamfer.describe()}")
    if g0.holes:
        out.append(f"  holes {sizing.spec.holes.describe() if sizing.spec.holes else g0.holes.describe()}")
    removed = {k: sum(p.geometry.removed_volume()[k] for p in sizing.pieces) for k in ("chamfers_m3", "holes_m3")}
    out.append(f"  removed exactly (closed form): chamfers {removed['chamfers_m3'] * 1e6:.3f} cm^3, holes and "
               f"counterbores {removed['holes_m3'] * 1e6:.3f} cm^3")
    out.append("")
    mp = sizing.props()
    out.append(f"  mass      nominal {nom:.3f} kg   min {lo:.3f} kg   max {hi:.3f} kg   (volume {sizing.volume * 1e6:.2f} cm^3)")
    out.append(f"  CG        {_v(mp.center)} mm, model frame")
    out.append("  inertia about the CG (kg*mm^2, model axes, tensor convention):")
    for row in mp.inertia * 1e6:
        out.append("    [" + "  ".join(f"{0.0 if abs(x) < 0.05 else x:>12.1f}" for x in row) + " ]")
    cap = sizing.capacity_masses()
    full = sizing.capacity
    out.append(f"  heaviest block this slot holds in {mat.key}: {cap[0]:.3f} kg nominal ({cap[1]:.3f} .. {cap[2]:.3f} kg), "
               f"{sum(p.geometry.size[sizing.spec.fill.axis] for p in full) * 1e3:.1f} mm along {sizing.spec.fill.letter}"
               + (f" in {len(full)} plates" if len(full) > 1 else ""))
    for i, f in enumerate(fits):
        out.append(f"  fit ({f.method}) piece {i + 1}: {'fits' if f.fits else 'DOES NOT FIT'}, clearance "
                   f"{f.clearance * 1e3:.3f} mm (required {f.required_clearance * 1e3:.3f} mm)"
                   + (f": {f.reason}" if f.reason else ""))
    out.append("")
    if sizing.target is not None:
        if sizing.reached:
            out.append(f"  TARGET REACHED: {lo:.3f} kg at the low end of the band >= {sizing.target:.3f} kg "
                       f"(rounded up to the increment: +{lo - sizing.target:.3f} kg)")
        else:
            out.append(f"  TARGET NOT REACHED: the slot holds {cap[1]:.3f} kg at the low end of the band, "
                       f"{sizing.shortfall:.3f} kg short of {sizing.target:.3f} kg. What would reach it:")
            out.extend(f"    - {a}" for a in advice)
    out.append("")
    out.append("CAUTIONS")
    out.extend(f"  - {c}" for c in cautions.for_report("ballast", "machining", "handling"))
    return "\n".join(out)


def _balance_dict(mp: Any, bal: Any) -> dict[str, Any]:
    out: dict[str, Any] = {"mass_kg": mp.mass, "cg_m": mp.center.tolist(), "inertia_cg_kg_m2": mp.inertia.tolist()}
    if bal is not None:
        out.update({"cg_height_m": bal.cg_height, "front_fraction": bal.front_fraction,
                    "axle_loads_kg": {"front": bal.front, "rear": bal.rear},
                    "corner_loads_kg": dict(zip(("front_left", "front_right", "rear_left", "rear_right"),
                                                map(float, bal.corners), strict=True)),
                    "cg_left_of_centre_m": bal.cg_left_of_centre})
    return out


def _requirement_dict(a: Any) -> dict[str, Any]:
    r = a.requirement
    return {"case": r.case, "key": r.key, "label": r.label, "kind": r.kind, "unit": r.unit, "bound": r.bound,
            "limit": r.limit, "margin_kept": r.margin, "nominal": a.nominal, "worst_of_band": a.worst,
            "margin_nominal": a.margin_nominal, "margin_worst": a.margin_worst, "binding": bool(a.binding),
            "passed": bool(a.passed)}


_DUAL_UNIT = {"kg": "kg_per_kg", "fraction": "kg_per_unit_fraction", "m": "kg_per_m"}


def _cost_dict(c: Any) -> dict[str, Any]:
    r = c.requirement
    step, label = c.per_step
    return {"case": r.case, "key": r.key, "label": r.label, "rule": r.rule, "unit": r.unit, "binding": bool(c.binding),
            "dual": {"value": c.dual, "unit": _DUAL_UNIT[r.unit]}, "dual_per_step": {"kg": step, "step": label},
            "least_ballast_kg": c.least, "least_ballast_without_kg": c.without, "saving_without_kg": c.saving}


def _sensitivity_dict(s: Any) -> dict[str, Any]:
    return {"case": s.case, "slot": s.slot, "mass_kg": s.mass,
            "per_kg_added": {"front_fraction_per_kg": s.front_fraction_per_kg, "cg_height_m_per_kg": s.cg_height_per_kg,
                             "cg_left_m_per_kg": s.lateral_per_kg, "yaw_inertia_kg_m2_per_kg": s.yaw_per_kg},
            "per_m_moved": {"front_fraction_per_m_forward": s.front_fraction_per_m_forward,
                            "cg_height_m_per_m_up": s.cg_height_per_m_up, "cg_left_m_per_m_left": s.lateral_per_m_left,
                            "yaw_inertia_kg_m2_per_m_forward": s.yaw_per_m_forward,
                            "yaw_inertia_kg_m2_per_m_left": s.yaw_per_m_left}}


def placement_dict(result: Any) -> dict[str, Any]:
    """A placement result as plain data: every case's balance, requirements and rule checks, what each rule costs,
    the slots' sensitivities and the trade-off curve."""
    out: dict[str, Any] = {
        "format": BALLAST_FORMAT,
        "conventions": CONVENTIONS,
        "model": result.model.name,
        "source": result.model.source,
        "plan": result.plan.name,
        "objective": result.plan.targets.objective.value,
        "cases": [c.name for c in result.cases],
        "feasible": bool(result.feasible),
        "passed": bool(result.passed),
        "rule_margins": {"per_rule_si": dict(result.margins or {}), "mass_margin_kg": result.plan.targets.mass_margin,
                         "scale_resolution_kg": result.plan.targets.scale_resolution,
                         "fraction_margin": result.plan.targets.fraction_margin,
                         "cg_height_margin_m": result.plan.targets.cg_height_margin},
        "solver": {"seconds": result.stats.seconds, "evaluations": result.stats.evaluations,
                   "lp_solves": result.stats.lp_solves, "lp_iterations": result.stats.lp_iterations,
                   "nonlinear_evaluations": result.stats.nonlinear_evaluations, "rounds": result.stats.rounds,
                   "methods": list(result.stats.methods)},
        "notes": list(result.notes),
        "cautions": cautions.for_report("ballast", "machining", "handling"),
    }
    if not result.feasible:
        out["shortfalls"] = [{"case": s.requirement.case, "requirement": s.requirement.label,
                              "kind": s.requirement.kind, "shortfall": {"value": s.amount, "unit": s.requirement.unit},
                              "best_alone": s.best_alone, "conflicts": list(s.conflicts),
                              "explanation": s.explanation} for s in result.shortfalls]
        return out
    nom, lo, hi = result.ballast_mass
    out["ballast_kg"] = {"nominal": nom, "min": lo, "max": hi, "least_continuous": result.least}
    out["removed"] = [p for al in result.allocations for p in al.candidate.replace]
    out["slots"] = []
    for al in result.allocations:
        entry: dict[str, Any] = {"slot": al.candidate.name, "material": al.candidate.spec.material.key,
                                 "planned_kg": al.planned, "capacity_kg": al.capacity, "thinnest_block_kg": al.floor,
                                 "parts": list(al.paths)}
        if al.sizing is not None:
            s = al.sizing
            entry["mass_kg"] = dict(zip(("nominal", "min", "max"), s.masses(), strict=True))
            entry["fill_length_m"] = s.fill_length
            entry["pieces"] = [{"size_m": list(p.geometry.size), "mass_max_density_kg": m}
                               for p, m in zip(s.pieces, s.segment_masses(), strict=True)]
            entry["cg_m"] = s.props().center.tolist()
        out["slots"].append(entry)
    out["case_results"] = [{"case": c.name, "passed": bool(c.passed),
                            "before": _balance_dict(c.props_before, c.balance_before),
                            "after": _balance_dict(c.props_after, c.balance_after),
                            "requirements": [_requirement_dict(a) for a in c.assessments],
                            "rules": [rule_dict(r) for r in c.rules]} for c in result.cases]
    out["rule_costs"] = [_cost_dict(c) for c in result.costs]
    out["rule_totals"] = [{"key": t.rule_key, "label": t.label, "unit": t.unit, "cases": list(t.cases),
                           "dual_sum": {"value": t.dual, "unit": _DUAL_UNIT[t.unit]},
                           "dual_sum_per_step": {"kg": t.per_step[0], "step": t.per_step[1]},
                           "least_ballast_kg": t.least, "least_ballast_without_in_every_case_kg": t.without,
                           "saving_without_kg": t.saving} for t in result.rule_totals]
    out["sensitivities"] = [_sensitivity_dict(s) for s in result.sensitivities]
    out["tradeoff"] = [{"weight_cg_height": p.weight_height, "mean_cg_height_m": p.cg_height,
                        "mean_yaw_inertia_kg_m2": p.yaw, "planned_kg": list(p.masses)} for p in result.tradeoff]
    return out


def _req_row(a: Any) -> list[str]:
    r = a.requirement
    scale, unit, fmt = (1e3, "mm", ".1f") if r.unit == "m" else (1.0, r.unit, ".4f" if r.unit == "fraction" else ".2f")
    op = "<=" if r.is_max else ">="
    state = "binding" if a.binding else "ok"
    if not a.passed:
        state = "FAIL"
    return [r.label, f"{a.nominal * scale:{fmt}}", f"{a.worst * scale:{fmt}}", f"{op} {r.bound * scale:{fmt}}",
            f"{a.margin_worst * scale:+{fmt}}", unit, state]


def _cautions(out: list[str]) -> None:
    out.append("")
    out.append("CAUTIONS")
    out.extend(f"  - {c}" for c in cautions.for_report("ballast", "machining", "handling"))


def format_rule_costs(result: Any, everything: bool = False) -> list[str]:
    """The table of what each rule costs (binding ones; every one with ``everything``)."""
    out = ["WHAT EACH RULE COSTS (continuous problem before rounding; least ballast "
           f"{result.least:.3f} kg over every case)"]
    shown = [c for c in result.costs if everything or c.binding]
    rows = []
    for c in shown:
        value, step = c.per_step
        rows.append([c.requirement.case, c.requirement.label, "binding" if c.binding else "-",
                     f"{value:.4f} kg {step}", f"{c.without:.3f}", f"{c.saving:.3f}"])
    if rows:
        out.append(table(["case", "rule or target", "", "dual: ballast per step of the limit", "kg without it",
                          "kg saved"], rows, "lllrrr"))
    if len({c.requirement.rule_key for c in shown}) < len(shown):
        out.append("  a rule binding in several cases at once shares its dual value between them (their sum is what "
                   "the rule costs); leaving it out of one case saves nothing while another case still holds it")
    totals = [t for t in result.rule_totals if t.dual > 1e-12 or t.saving > 1e-9]
    if totals:
        out.append("  each rule over every case it applies in:")
        out.append(table(["rule or target", "cases", "sum of duals", "kg without it in every case", "kg saved"],
                         [[t.label, str(len(t.cases)), f"{t.per_step[0]:.4f} kg {t.per_step[1]}", f"{t.without:.3f}",
                           f"{t.saving:.3f}"] for t in totals], "lrrrr"))
    hidden = len(result.costs) - len(shown)
    if hidden:
        out.append(f"  {hidden} further requirement(s) not binding: 0 kg per step, no ballast saved without them "
                   "(the JSON lists every one)")
    return out


def format_placement(result: Any) -> str:
    """Readable text of a placement: every case's balance and rules, what each rule costs, the sensitivities."""
    names = ", ".join(c.name for c in result.cases)
    out = [f"BALLAST PLACEMENT · {result.model.name} · plan '{result.plan.name}' · load cases {names}"]
    t = result.plan.targets
    out.append(f"  objective: {t.objective.value} (mean over the cases) after the least ballast (allowance "
               f"{t.ballast_allowance:.3f} kg); the ballast is the same in every case")
    out.append(f"  margins: mass {t.mass_margin:.3f} kg at the LOW end of each density band"
               + (f" + scale resolution {t.scale_resolution:.3f} kg" if t.scale_resolution else "")
               + ("; per rule: " + ", ".join(f"{k} {v:g} (SI)" for k, v in (result.margins or {}).items())
                  if result.margins else ""))
    s = result.stats
    out.append(f"  solver: {', '.join(s.methods)} · {s.seconds:.3f} s · {s.evaluations} evaluations "
               f"({s.lp_solves} LP/MILP solves, {s.lp_iterations} iterations, {s.nonlinear_evaluations} nonlinear "
               f"function/gradient evaluations) · {s.rounds} round(s) of sizing and checking")
    out.append("")
    if not result.feasible:
        out.append("NO PLACEMENT MEETS EVERY RULE AND TARGET IN EVERY CASE")
        for sf in result.shortfalls:
            out.append(f"  - {sf.explanation}")
        if result.shortfalls:
            r = result.shortfalls[0].requirement
            out.append(f"  binding constraint: {r.label} in case '{r.case}'")
        out.extend(f"  note: {n}" for n in result.notes)
        _cautions(out)
        return "\n".join(out)
    rows = []
    for al in result.allocations:
        if al.sizing is None:
            rows.append([al.candidate.name, al.candidate.spec.material.key, "-", "-", "-", "-", f"{al.capacity:.2f}",
                         "unused"])
            continue
        sz = al.sizing
        nom, lo, hi = sz.masses()
        dims = " x ".join(f"{v * 1e3:.1f}" for v in sz.pieces[0].geometry.size)
        plates = f"{len(sz.pieces)} plates" if len(sz.pieces) > 1 else "1 block"
        rows.append([al.candidate.name, al.candidate.spec.material.key, f"{nom:.3f}", f"{lo:.3f} .. {hi:.3f}",
                     dims if len(sz.pieces) == 1 else f"{dims} ({sz.fill_length * 1e3:.1f} total)", plates,
                     f"{al.capacity:.2f}", ", ".join(al.paths[:1]) + (" ..." if len(al.paths) > 1 else "")])
    out.append("MASS PER SLOT")
    out.append(table(["slot", "material", "kg nominal", "kg band", "size mm", "pieces", "capacity kg", "part"], rows,
                     "llrrllrl"))
    removed = [p for al in result.allocations for p in al.candidate.replace]
    if removed:
        out.append(f"  replaced: {', '.join(removed)} "
                   f"({sum(result.model.component(p).props.mass for p in removed):.3f} kg taken out)")
    nom, lo, hi = result.ballast_mass
    out.append(f"  ballast added {nom:.3f} kg nominal ({lo:.3f} .. {hi:.3f} kg over the density bands)")
    for al in result.allocations:
        if al.sizing is not None and len(al.sizing.pieces) > 1:
            segs = ", ".join(f"{m:.3f}" for m in al.sizing.segment_masses())
            out.append(f"  {al.candidate.name}: plates at the high end of the band {segs} kg")
    out.append("")
    out.append("BALANCE IN EACH CASE (before -> after; model frame)")
    out.append(_balance_table(result))
    for c in result.cases:
        out.append("")
        out.append(f"RULES AND TARGETS · case '{c.name}' (bound includes the margins; worst = the worst mix of the "
                   "density bands)")
        if c.assessments:
            out.append(table(["rule or target", "nominal", "worst", "bound", "margin", "unit", ""],
                             [_req_row(a) for a in c.assessments], "lrrrrll"))
        else:
            out.append("  no rule or target applies in this case")
        binding = [a.requirement.label for a in c.assessments if a.binding]
        if binding:
            out.append(f"  binding constraints: {'; '.join(binding)}")
        failing = [r for r in c.rules if not r.passed]
        out.append(f"  rule checks of the ballasted model in '{c.name}': " +
                   ("all rules pass" if not failing else "FAIL: " + ", ".join(r.name for r in failing)))
    out.append("")
    out.extend(format_rule_costs(result))
    out.append("")
    out.extend(_format_sensitivities(result))
    if result.tradeoff:
        out.append("")
        out.append("CG HEIGHT / YAW INERTIA TRADE-OFF at the least ballast (means over the cases)")
        out.append(table(["weight on CG height", "CG height mm", "yaw inertia kg*m^2", "kg per slot"],
                         [[f"{p.weight_height:.2f}", f"{p.cg_height * 1e3:.2f}", f"{p.yaw:.3f}",
                           ", ".join(f"{m:.2f}" for m in p.masses)] for p in result.tradeoff], "rrrl"))
    failing_cases = [c.name for c in result.cases if not c.passed]
    out.append("")
    out.append("EVERY CASE PASSES" if not failing_cases else f"FAILS IN CASE(S): {', '.join(failing_cases)}")
    out.extend(f"  note: {n}" for n in result.notes)
    out.append("  (a linear estimate of the balance: check the car on the scales; the scrutineers decide)")
    _cautions(out)
    return "\n".join(out)


def _balance_table(result: Any) -> str:
    rows = []
    for c in result.cases:
        b0, b1, mp0, mp1 = c.balance_before, c.balance_after, c.props_before, c.props_after
        row = [c.name, f"{mp0.mass:.2f} -> {mp1.mass:.2f}"]
        if b0 is not None and b1 is not None:
            up = c.model.vehicle.up
            row += [f"{b0.front_fraction:.4f} -> {b1.front_fraction:.4f}",
                    f"{b0.cg_height * 1e3:.1f} -> {b1.cg_height * 1e3:.1f}",
                    f"{b0.cg_left_of_centre * 1e3:+.1f} -> {b1.cg_left_of_centre * 1e3:+.1f}",
                    f"{b1.front:.1f} / {b1.rear:.1f}",
                    f"{float(up @ mp0.inertia @ up):.2f} -> {float(up @ mp1.inertia @ up):.2f}"]
        else:
            row += ["-"] * 5
        rows.append(row + ["pass" if c.passed else "FAIL"])
    return table(["case", "mass kg", "front fraction", "CG height mm", "CG left mm", "axles kg (after)",
                  "yaw kg*m^2", ""], rows, "lrrrrrrl")


def _format_sensitivities(result: Any) -> list[str]:
    out = ["SENSITIVITIES PER SLOT (at the solution; per kg added, and per mm the block moves along the vehicle axes)"]
    rows = [[s.case, s.slot, f"{s.mass:.2f}", f"{s.front_fraction_per_kg * 1e3:+.4f}",
             f"{s.cg_height_per_kg * 1e3:+.3f}", f"{s.lateral_per_kg * 1e3:+.3f}", f"{s.yaw_per_kg:+.3f}",
             f"{s.front_fraction_per_m_forward:+.5f}", f"{s.cg_height_per_m_up:.5f}", f"{s.yaw_per_m_forward * 1e-3:+.4f}"]
            for s in result.sensitivities]
    out.append(table(["case", "slot", "kg", "front 0.001/kg", "CG h mm/kg", "CG left mm/kg", "yaw kg*m^2/kg",
                      "front 0.001/mm fwd", "CG h mm/mm up", "yaw kg*m^2/mm fwd"], rows, "llrrrrrrrr"))
    return out


def seat_dict(study: Any) -> dict[str, Any]:
    """A seat-ballast study as plain data."""
    out: dict[str, Any] = {
        "format": BALLAST_FORMAT, "conventions": CONVENTIONS, "rule": study.rule.name,
        "groups": list(study.rule.groups), "group_mass_kg": study.group_mass,
        "limit_kg": float(study.rule.limit or 0.0), "margin_kg": study.margin,
        "need_at_low_density_kg": study.need, "seat_group": study.seat_group,
        "material": study.material.key, "ballast_mass_kg": study.ballast_mass,
        "station_m": study.station, "lateral_m": study.lateral,
        "seat_range_above_ground_m": list(study.seat_range), "base_cg_height_m": study.base_cg_height,
        "rows": [{"ballast_height_m": float(h), "cg_height_m": float(z), "front_fraction": float(f),
                  "allowed_by_height_rules": bool(ok)}
                 for h, z, f, ok in zip(study.heights, study.cg_heights, study.front_fractions, study.allowed,
                                        strict=True)],
        "height_rules": [{"rule": n, "lowest_m": lo, "highest_m": (hi if hi != float("inf") else None)}
                         for n, lo, hi in study.height_rules],
        "lowest_allowed_height_m": study.lowest_allowed,
        "cg_rise_per_ballast_height": study.slope,
        "cautions": cautions.for_report("ballast", "machining", "handling"),
    }
    if study.sizing is not None:
        out["plate"] = sizing_dict(study.sizing)
    return out


def format_seat(study: Any) -> str:
    """Readable text of a seat-ballast study."""
    out = [f"SEAT BALLAST · rule '{study.rule.name}' ({' + '.join(study.rule.groups)})"]
    limit = float(study.rule.limit or 0.0)
    out.append(f"  group mass {study.group_mass:.3f} kg, limit {limit:.3f} kg, margin {study.margin:.3f} kg")
    if study.need <= 0.0:
        out.append(f"  no seat ballast needed: the group is {-study.need:.3f} kg above limit + margin")
    else:
        s = study.sizing
        nom, lo, hi = s.masses()
        g = s.pieces[0].geometry
        out.append(f"  needed {study.need:.3f} kg at the LOW end of the density band of {study.material.key}")
        out.append(f"  plate {' x '.join(f'{v * 1e3:.1f}' for v in g.size)} mm (forward x left x up), "
                   f"{nom:.3f} kg nominal ({lo:.3f} .. {hi:.3f} kg), part of group {study.seat_group}")
    out.append(f"  placed at {study.station * 1e3:.1f} mm forward, {study.lateral * 1e3:.1f} mm left (model frame); "
               f"seat structure from {study.seat_range[0] * 1e3:.1f} to {study.seat_range[1] * 1e3:.1f} mm above "
               "the ground")
    out.append("")
    for name, lo, hi in study.height_rules:
        out.append(f"  rule '{name}': the ballast's CG " + (f"at least {lo * 1e3:.1f} mm above the ground"
                   if hi == float("inf") else f"between {lo * 1e3:.1f} and {hi * 1e3:.1f} mm above the ground"))
    rows = [[f"{h * 1e3:.1f}", f"{z * 1e3:.2f}", f"{(z - study.base_cg_height) * 1e3:+.2f}", f"{f:.4f}",
             "" if ok else "NOT ALLOWED by the ballast-height rule"]
            for h, z, f, ok in zip(study.heights, study.cg_heights, study.front_fractions, study.allowed, strict=True)]
    out.append(table(["ballast CG above ground mm", "car CG above ground mm", "car CG change mm", "front fraction",
                      ""], rows, "rrrrl"))
    if study.height_rules:
        low = study.lowest_allowed
        out.append("  lowest height the rules allow: " + (f"{low * 1e3:.1f} mm" if low is not None else
                   "none of the tabulated heights"))
    outside = [h for h in study.heights if not study.seat_range[0] <= h <= study.seat_range[1]]
    if outside:
        out.append(f"  NOTE: {', '.join(f'{h * 1e3:.1f}' for h in outside)} mm lie outside the seat structure "
                   f"({study.seat_range[0] * 1e3:.1f} .. {study.seat_range[1] * 1e3:.1f} mm above the ground): the "
                   "plate cannot be fixed there")
    out.append(f"  without the seat ballast the car's CG is {study.base_cg_height * 1e3:.2f} mm above the ground; "
               f"each 10 mm higher in the seat raises it {study.slope * 10:.3f} mm")
    if study.cg_limit is not None:
        worst = float(np.max(study.cg_heights))
        out.append(f"  CG height limit {study.cg_limit * 1e3:.1f} mm: margin {(study.cg_limit - worst) * 1e3:+.1f} mm "
                   "at the highest ballast position")
    out.append("")
    out.append("CAUTIONS")
    out.extend(f"  - {c}" for c in cautions.for_report("ballast", "machining", "handling"))
    return "\n".join(out)
