"""The sections of the page, each built from the report data of :mod:`massmodel.report` (never recomputed here).

A section builder takes the :class:`PageInputs` and returns a :class:`Section` or None (nothing to show). The page
lists its builders in :data:`SECTION_BUILDERS`; a new result (ballast costs, uncertainty, chassis, a diff) plugs
in by adding a builder that reads its own entry of ``PageInputs.extras``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from massmodel.core import cautions
from massmodel.page.extras import EXTRA_BUILDERS
from massmodel.page.html import chip, esc, num, table, tile
from massmodel.page.inputs import PageInputs, Section
from massmodel.report.rules import dict_limit_text

__all__ = ["PageInputs", "Section", "SECTION_BUILDERS", "summary_line"]

MM = 1000.0


def _rules(inputs: PageInputs) -> list[tuple[str, dict[str, Any]]]:
    return [(case, r) for case, rep in inputs.reports.items() for r in rep.get("rules", [])]


def _limit_text(rule: dict[str, Any]) -> str:
    return esc(dict_limit_text(rule))


def summary_line(inputs: PageInputs) -> str:
    """The job in one line: mass, CG height, front share and the rule verdicts across every case (plain text)."""
    b = inputs.base
    parts = [f"{b['model']}: {b['mass_kg']:.1f} kg"]
    if "cg_height_m" in b:
        parts.append(f"CG {b['cg_height_m'] * MM:.1f} mm above the ground")
    if "front_fraction" in b:
        parts.append(f"{100.0 * b['front_fraction']:.1f} % on the front axle")
    rules = _rules(inputs)
    if rules:
        failed = [(c, r) for c, r in rules if not r["passed"]]
        cases = len(inputs.reports)
        verdict = f"{len(rules) - len(failed)} of {len(rules)} rule checks pass across {cases} load case" + (
            "s" if cases != 1 else "")
        if failed:
            worst_case, worst = min(failed, key=lambda cr: cr[1]["margin"]["value"] if cr[1].get("margin") else 0.0)
            m = worst.get("margin") or {}
            verdict += (f"; worst: {worst['name']} in {worst_case}, "
                        f"{num(m.get('value'), 3, m.get('unit', ''))}".replace("\u2009", " "))
        parts.append(verdict)
    else:
        parts.append("no rules to check")
    return "; ".join(parts) + "."


def _summary(inputs: PageInputs) -> Section:
    b = inputs.base
    tiles = [tile("mass", num(b["mass_kg"], 1, "kg"))]
    if "front_fraction" in b:
        tiles.append(tile("front axle", num(b["front_fraction"], 1, "%", 100.0),
                          f"{num(b['axle_loads_kg']['front'], 1, 'kg')} front, {num(b['axle_loads_kg']['rear'], 1, 'kg')} rear"))
        tiles.append(tile("CG height", num(b["cg_height_m"], 1, "mm", MM), "above the ground"))
        tiles.append(tile("yaw inertia", num(b["inertia_vehicle_axes_kg_m2"]["yaw"], 1, "kg·m²"), "about the CG"))
    rules = _rules(inputs)
    if rules:
        ok = sum(1 for _, r in rules if r["passed"])
        tiles.append(tile("rule checks", f"{ok} / {len(rules)}", "pass, all load cases"))
    body = f'<p class="lede">{esc(summary_line(inputs))}</p><div class="tiles">{"".join(tiles)}</div>'
    return Section("summary", "Summary", body)


def _rules_section(inputs: PageInputs) -> Section | None:
    rules = _rules(inputs)
    if not rules:
        return None
    rows = []
    for case, r in rules:
        v, m = r.get("value") or {}, r.get("margin") or {}
        rows.append([esc(case), esc(r["name"]), num(v.get("value"), 4, v.get("unit", "")), _limit_text(r),
                     num(m.get("value"), 4, m.get("unit", "")), chip(r["passed"]), esc(r.get("detail", ""))])
    body = table(["load case", "rule", "value", "limit", "margin", "verdict", "what is counted"], rows,
                 numeric=(2, 4), sortable=True)
    body += ('<p class="note">Margin: how far the value is inside its limit (negative: outside), in the rule\'s '
             "unit. Each load case is checked with the rules that apply in it.</p>")
    return Section("rules", "Rule checks per load case", body)


def _cases_section(inputs: PageInputs) -> Section | None:
    if len(inputs.reports) < 2:
        return None
    headers = ["quantity"] + list(inputs.reports)
    reps = list(inputs.reports.values())

    def row(label: str, get: Callable[[dict[str, Any]], str]) -> list[str]:
        return [esc(label)] + [get(r) for r in reps]

    rows = [row("mass", lambda r: num(r["mass_kg"], 2, "kg"))]
    if "front_fraction" in reps[0]:
        rows += [
            row("front axle share", lambda r: num(r["front_fraction"], 2, "%", 100.0)),
            row("front axle load", lambda r: num(r["axle_loads_kg"]["front"], 2, "kg")),
            row("rear axle load", lambda r: num(r["axle_loads_kg"]["rear"], 2, "kg")),
            row("CG height above ground", lambda r: num(r["cg_height_m"], 1, "mm", MM)),
            row("CG behind front axle", lambda r: num(r["cg_behind_front_axle_m"], 1, "mm", MM)),
            row("CG left of centre", lambda r: num(r["cg_left_of_centre_m"], 1, "mm", MM)),
            row("yaw inertia about CG", lambda r: num(r["inertia_vehicle_axes_kg_m2"]["yaw"], 2, "kg·m²")),
        ]
    rows.append(row("rules passed", lambda r: f"{sum(x['passed'] for x in r.get('rules', []))} / {len(r.get('rules', []))}"))
    body = table(headers, rows, numeric=tuple(range(1, len(headers))))
    return Section("cases", "Load cases side by side", body)


def _budget_section(inputs: PageInputs) -> Section:
    b = inputs.base
    total = b["mass_kg"]
    grows = []
    for g in b.get("groups", []):
        if "/" in g["path"]:
            continue
        c = g["cg_m"]
        grows.append([esc(g["path"]), str(g["parts"]), num(g["mass_kg"], 3, "kg"),
                      num(g["mass_kg"] / total if total else None, 1, "%", 100.0),
                      num(c[0], 1, "", MM), num(c[1], 1, "", MM), num(c[2], 1, "", MM)])
    body = "<h3>Top-level groups</h3>" + table(
        ["group", "parts", "mass", "share", "CG x mm", "CG y mm", "CG z mm"], grows, numeric=(1, 2, 3, 4, 5, 6),
        sortable=True)
    prows = []
    for p in b.get("components", []):
        c = p["cg_m"]
        prows.append([esc(p["path"]), num(p["mass_kg"], 3, "kg"), num(c[0], 1, "", MM), num(c[1], 1, "", MM),
                      num(c[2], 1, "", MM), esc(p.get("mass_source", "")), esc(p.get("material") or ""),
                      esc(p.get("maturity", "")), esc(p.get("slot") or "")])
    body += (f"<h3>Parts ({len(prows)})</h3>" + '<p class="note">Click a header to sort. CG in model coordinates, '
             "mm (the model file's own axes).</p>"
             + table(["part", "mass", "CG x mm", "CG y mm", "CG z mm", "mass from", "material", "maturity", "slot"],
                     prows, numeric=(1, 2, 3, 4), sortable=True, css="parts"))
    mat = b.get("maturity_kg")
    if mat:
        body += "<h3>Mass by maturity</h3>" + table(
            ["maturity", "mass", "share"],
            [[esc(k), num(v, 2, "kg"), num(v / total if total else None, 1, "%", 100.0)] for k, v in mat.items()],
            numeric=(1, 2))
    return Section("budget", "Mass budget", body)


def _inertia_section(inputs: PageInputs) -> Section:
    b = inputs.base
    cg = b["cg_m"]
    tensor = np.asarray(b["inertia_cg_kg_m2"], float)
    labels = ("x", "y", "z")
    trows = [[f"<b>{a}</b>"] + [num(tensor[i, j], 4) for j in range(3)] for i, a in enumerate(labels)]
    body = (f"<p>Total CG in model coordinates: <b>{num(cg[0], 1, 'mm', MM)}, {num(cg[1], 1, 'mm', MM)}, "
            f"{num(cg[2], 1, 'mm', MM)}</b>.</p>")
    body += "<h3>Inertia tensor about the CG, kg·m²</h3>" + table(["", "x", "y", "z"], trows, numeric=(1, 2, 3))
    prow = []
    for k, (mom, ax) in enumerate(zip(b["principal_moments_kg_m2"], b["principal_axes"], strict=True)):
        prow.append([str(k + 1), num(mom, 4, "kg·m²"), num(b["radii_of_gyration_m"][k], 1, "mm", MM),
                     ", ".join(f"{v:+.4f}" for v in ax).replace("-", "−")])
    body += "<h3>Principal moments</h3>" + table(["axis", "moment", "radius of gyration", "direction (model axes)"],
                                                prow, numeric=(1, 2))
    veh = b.get("inertia_vehicle_axes_kg_m2")
    if veh:
        body += "<h3>About vehicle axes through the CG</h3>" + table(
            ["roll", "pitch", "yaw"], [[num(veh["roll"], 2, "kg·m²"), num(veh["pitch"], 2, "kg·m²"),
                                        num(veh["yaw"], 2, "kg·m²")]], numeric=(0, 1, 2))
    conv = b.get("conventions", {})
    body += "<h3>Conventions</h3><dl class=conventions>" + "".join(
        f"<dt>{esc(k.replace('_', ' '))}</dt><dd>{esc(v)}</dd>" for k, v in conv.items()) + "</dl>"
    if b.get("load_assumptions"):
        body += f'<p class="note">{esc(b["load_assumptions"])}</p>'
    return Section("inertia", "CG and inertia", body)


def _view_section(inputs: PageInputs) -> Section:
    if not inputs.view3d:
        return Section("view", "The car in 3-D",
                       '<p class="note">No 3-D view: the model has no part with a shape (only point masses), '
                       "or the viewer script was not built (see the notes at the top).</p>")
    boxes = "".join(
        f'<label class="swatch"><input type="checkbox" checked data-mm-group="{esc(n)}">'
        f'<span style="background:{esc(c)}"></span>{esc(n)} <small>{num(m, 1, "kg")}, {p} parts</small></label>'
        for n, c, m, p in inputs.view_groups)
    body = ('<div class="view-wrap"><div id="mm-view" role="img" aria-label="3-D view of the model"></div>'
            f'<div class="view-side"><p class="note">Drag to turn, wheel to zoom, right-drag to pan.</p>'
            f'<button type="button" id="mm-view-reset">reset view</button>{boxes}'
            '<p class="note"><span class="key cg"></span> total CG, principal axes ± radius of gyration · '
            '<span class="key slot"></span> slots · dark lines: axles</p></div></div>')
    return Section("view", "The car in 3-D", body)


def _pictures_section(inputs: PageInputs) -> Section | None:
    if not inputs.pictures:
        return None
    from massmodel.page.html import figure_png

    return Section("pictures", "Pictures", "".join(figure_png(d, a, c) for d, a, c in inputs.pictures))


def _cautions_section(inputs: PageInputs) -> Section:
    lines = cautions.for_report("ballast", "machining", "handling", "lifting", "scales")
    return Section("cautions", "Cautions", "<ul>" + "".join(f"<li>{esc(x)}</li>" for x in lines) + "</ul>")


SectionBuilder = Callable[[PageInputs], Section | None]

#: The page's sections, in order. Results of other commands add their builders here.
SECTION_BUILDERS: list[SectionBuilder] = [
    _summary,
    _rules_section,
    _view_section,
    _cases_section,
    _budget_section,
    _inertia_section,
    _pictures_section,
    *EXTRA_BUILDERS,
    _cautions_section,
]
