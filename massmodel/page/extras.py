"""Sections of the page for the results of other commands: how sure the model is, the ballast plan and what each
rule costs, the chassis estimates, and what changed since a previous version.

:func:`collect_extras` computes (or reads) them once, as the plain data their own commands write as JSON
(``how-sure``, ``place-ballast --json``, ``roll-yaw --json``, ``changes --json``); each section builder here shows
its entry of ``PageInputs.extras`` and gives None when it is absent, so a page holds exactly the results it was
given.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from massmodel.core import cautions
from massmodel.core.errors import InputError
from massmodel.page.html import chip, confidence_chip, esc, num, table
from massmodel.page.inputs import PageInputs, Section

__all__ = ["EXTRA_BUILDERS", "collect_extras", "read_ballast_json"]

MM = 1000.0
BALLAST_FORMAT = "massmodel-ballast/1"


def read_ballast_json(path: str | Path) -> dict[str, Any]:
    """A ``place-ballast --json`` result, checked to be one (InputError naming the file otherwise)."""
    from massmodel.modelfile.reader import parse_json, read_text

    p = Path(path)
    data = parse_json(read_text(p, str(p)), str(p))
    if not isinstance(data, dict) or data.get("format") != BALLAST_FORMAT:
        raise InputError(str(p), None, "format", f"not a place-ballast result (expected \"format\": "
                                                 f"\"{BALLAST_FORMAT}\", written by place-ballast --json)")
    return data


def collect_extras(models: Mapping[str, Any], *, confidence: float = 0.95, ballast: str | Path | None = None,
                   previous: str | Path | None = None, speed: float | None = None) -> dict[str, Any]:
    """The extra results of a page, as plain data.

    Parameters
    ----------
    models : mapping of str to Model
        Case name → model, base first.
    confidence : float
        Confidence of the rule verdicts with uncertainty (one-sided), e.g. 0.95.
    ballast : path, optional
        A ``place-ballast --json`` result to show (the plan, the slots, what each rule costs).
    previous : path, optional
        A previous version of the model file: the page shows what changed since.
    speed : float, optional
        Speed for the aero loads and the yaw response of the chassis section, m/s.

    Returns
    -------
    dict
        ``uncertainty`` when the model declares uncertainties, ``chassis`` when it has a ``[chassis]`` section,
        ``ballast`` and ``changes`` when asked for.
    """
    base = next(iter(models.values()))
    out: dict[str, Any] = {}
    from massmodel.uncertainty.inputs import declares_uncertainty

    if declares_uncertainty(base):
        from massmodel.report.uncertainty import report_uncertainty

        per_case = [report_uncertainty(m, confidence) for m in models.values()]
        first = dict(per_case[0])
        first["rules_at_confidence"] = [r for d in per_case for r in d.get("rules_at_confidence", [])]
        out["uncertainty"] = first
    if getattr(base, "chassis", None) is not None:
        from massmodel.report.chassis import build_chassis_report

        out["chassis"] = build_chassis_report(base, speed=speed, need_yaw=False)
    if ballast is not None:
        out["ballast"] = read_ballast_json(ballast)
    if previous is not None:
        from massmodel.modelfile.loader import load_model
        from massmodel.report.changes import diff_dict
        from massmodel.studies.diff import diff_models

        old = load_model(previous)
        out["changes"] = diff_dict(diff_models(old, base, str(previous), str(base.source or "this version")))
    return out


def _uncertainty(inputs: PageInputs) -> Section | None:
    u = inputs.extras.get("uncertainty")
    if not u:
        return None
    q = u["quantities"]
    show = [("mass", "mass", 1.0, "kg", 2), ("cg_x", "CG x (model axes)", MM, "mm", 1),
            ("cg_y", "CG y (model axes)", MM, "mm", 1), ("cg_z", "CG z (model axes)", MM, "mm", 1),
            ("front", "front axle load", 1.0, "kg", 2), ("rear", "rear axle load", 1.0, "kg", 2),
            ("front_fraction", "front share", 100.0, "%", 2), ("cg_height", "CG height above ground", MM, "mm", 1),
            ("izz", "inertia about z through the CG", 1.0, "kg·m²", 2)]
    rows = [[esc(label), num(q[k]["value"], d, unit, s), "± " + num(q[k]["standard_uncertainty"], d, unit, s)]
            for k, label, s, unit, d in show if k in q]
    body = f'<p class="note">{esc(u["coverage"])}. Method: {esc(u["method"])}.</p>'
    body += table(["quantity", "value", "standard uncertainty"], rows, numeric=(1, 2))
    g = u.get("growth")
    if g:
        body += (f"<p>Predicted mass with the growth allowance by maturity: <b>{num(g['predicted_mass_kg'], 2, 'kg')}"
                 f"</b> (current {num(g['current_mass_kg'], 2, 'kg')} + allowance "
                 f"{num(g['growth_allowance_kg'], 2, 'kg')}; a predicted change, not an uncertainty).</p>")
    rules = u.get("rules_at_confidence", [])
    if rules:
        conf = rules[0]["confidence"]
        rrows = [[esc(r["case"]), esc(r["name"]), num(r["margin"], 4, r["unit"]),
                  "± " + num(r["standard_uncertainty"], 4, r["unit"]),
                  num(r["probability_pass_rss"], 1, "%", 100.0), num(r["required_margin_rss"], 4, r["unit"]),
                  confidence_chip(bool(r["passes_at_confidence"]), float(r["margin"]))] for r in rules]
        body += (f"<h3>Rules at {conf * 100:.0f} % confidence (one-sided)</h3>"
                 + table(["load case", "rule", "margin", "standard uncertainty", "probability of passing",
                          "margin needed", f"at {conf * 100:.0f} %"], rrows, numeric=(2, 3, 4, 5), sortable=True))
    return Section("uncertainty", "How sure the model is", body)


def _ballast(inputs: PageInputs) -> Section | None:
    b = inputs.extras.get("ballast")
    if not b:
        return None
    kg = b.get("ballast_kg") or {}
    body = (f"<p>Plan <b>{esc(b.get('plan', ''))}</b> for <b>{esc(b.get('model', ''))}</b>: "
            f"{num(kg.get('nominal'), 2, 'kg')} of ballast (nominal density; {num(kg.get('min'), 2, 'kg')} .. "
            f"{num(kg.get('max'), 2, 'kg')} over the density bands; least continuous "
            f"{num(kg.get('least_continuous'), 2, 'kg')}) over the load cases {esc(', '.join(b.get('cases', [])))}, "
            f"objective {esc(b.get('objective', ''))}; {chip(bool(b.get('passed')))} in every case.</p>")
    srows = [[esc(s["slot"]), esc(s.get("material") or ""), num(s.get("planned_kg"), 2, "kg"),
              num(s.get("capacity_kg"), 2, "kg"), str(len(s.get("parts", [])))] for s in b.get("slots", [])]
    body += "<h3>Slots</h3>" + table(["slot", "material", "ballast", "most it holds", "pieces"], srows,
                                     numeric=(2, 3, 4))
    crows = []
    for t in b.get("rule_totals", []):
        step = t.get("dual_sum_per_step") or {}
        crows.append([esc(t["label"]), esc(", ".join(t.get("cases", []))),
                      f"{num(step.get('kg'), 3, 'kg')} {esc(step.get('step', ''))}",
                      num(t.get("least_ballast_without_in_every_case_kg"), 2, "kg"),
                      num(t.get("saving_without_kg"), 2, "kg")])
    if crows:
        body += ("<h3>What each rule costs</h3>" + table(
            ["rule", "load cases", "ballast per step of its limit", "least ballast without it", "saving without it"],
            crows, numeric=(2, 3, 4), sortable=True)
            + '<p class="note">The ballast per step of a limit is the rule\'s dual value summed over the cases it '
              "binds in; the ballast without it comes from solving again with the rule left out.</p>")
    body += "<ul>" + "".join(f"<li>{esc(x)}</li>" for x in cautions.for_report("ballast", "machining",
                                                                              "handling")) + "</ul>"
    return Section("ballast", "Ballast plan and what each rule costs", body)


def _chassis(inputs: PageInputs) -> Section | None:
    c = inputs.extras.get("chassis")
    if not c:
        return None
    split, roll, st = c["mass_split"], c["roll"], c.get("single_track") or {}
    rows = [["sprung mass", num(split["sprung_mass_kg"], 2, "kg")],
            ["unsprung mass", num(split["unsprung_kg"], 2, "kg")],
            ["sprung CG height", num(split["sprung_cg_height_m"], 1, "mm", MM)],
            ["front share of the lateral load transfer", num(roll["lateral_load_transfer_front_share"], 1, "%", 100.0)],
            ["roll gradient", num(roll["roll_gradient_deg_per_g"], 3, "deg/g")]]
    if st:
        rows += [["understeer gradient", num(st.get("understeer_gradient_deg_per_g"), 3, "deg/g")],
                 ["balance", esc(st.get("balance", ""))]]
        if st.get("speed_m_per_s") is not None:
            rows += [[f"yaw natural frequency at {st['speed_m_per_s'] * 3.6:.0f} km/h",
                      num(st.get("natural_frequency_hz"), 3, "Hz")],
                     ["yaw damping ratio", num(st.get("damping_ratio"), 3)],
                     ["90 % of the steady yaw rate after a step steer", num(st.get("time_to_90_percent_s"), 0, "ms", MM)]]
    body = table(["quantity", "value"], [[esc(a), b] for a, b in rows], numeric=(1,))
    body += "<ul>" + "".join(f"<li>{esc(x)}</li>" for x in c.get("assumptions", []) + c.get("cautions", [])) + "</ul>"
    return Section("chassis", "Chassis: load transfer and yaw response", body)


def _changes(inputs: PageInputs) -> Section | None:
    d = inputs.extras.get("changes")
    if not d:
        return None
    counts = d["counts"]
    dc = d["delta_cg_m"]
    body = (f"<p>From <code>{esc(d['old']['name'])}</code> to <code>{esc(d['new']['name'])}</code>: mass "
            f"{num(d['delta_mass_kg'], 3, 'kg')}, CG moved ({num(dc[0], 1, '', MM)}, {num(dc[1], 1, '', MM)}, "
            f"{num(dc[2], 1, '', MM)}) mm (model axes); {counts['added']} parts added, {counts['removed']} removed, "
            f"{counts['changed']} changed.</p>")
    rows = [[esc(p["path"]), esc(p["status"]), esc(", ".join(p.get("changed", []))), num(p["delta_mass_kg"], 3, "kg"),
             num(p["delta_cg_share_m"][0], 2, "", MM), num(p["delta_cg_share_m"][2], 2, "", MM)]
            for p in d["parts"]]
    body += table(["part", "change", "fields", "mass change", "share of CG x change mm", "share of CG z change mm"],
                  rows, numeric=(3, 4, 5), sortable=True)
    return Section("changes", "What changed since the previous version", body)


#: The extra sections, in the order the page shows them (before the cautions).
EXTRA_BUILDERS: list[Callable[[PageInputs], Section | None]] = [_uncertainty, _ballast, _chassis, _changes]
