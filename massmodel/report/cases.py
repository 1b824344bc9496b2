"""Load cases side by side: mass, CG, front fraction, axle and corner loads, roll/pitch/yaw inertia, rule checks.

:func:`build_case_table` gives plain JSON-ready data (SI, unit in every key); :func:`format_case_table` the terminal
text, one column per case. Each case's numbers come from :func:`massmodel.report.summary.build_report` on that case's model,
so they are the same numbers ``massmodel report --case NAME`` shows.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

from massmodel.core.model import Model

from .summary import CONVENTIONS, DisplayUnits, _num, build_report, table

__all__ = ["CASES_FORMAT", "build_case_table", "format_case_table"]

CASES_FORMAT = "massmodel-cases/1"
_SUMMARY_KEYS = ("mass_kg", "cg_m", "cg_height_m", "cg_behind_front_axle_m", "cg_left_of_centre_m", "front_fraction",
                 "left_fraction", "cross_fraction", "axle_loads_kg", "corner_loads_kg", "inertia_vehicle_axes_kg_m2",
                 "rules", "rules_passed")


def build_case_table(models: Mapping[str, Model]) -> dict[str, Any]:
    """Every case's summary (JSON-ready, SI).

    Parameters
    ----------
    models : mapping of str to Model
        Case name → model of that case, base first (:func:`massmodel.modelfile.loader.load_case_models`).

    Returns
    -------
    dict
        ``format``, ``model``, ``source``, ``conventions``, ``cases`` (one dict per case: name, description,
        parameter overrides, switched groups, and the summary numbers of its report), ``rules_passed`` (every rule
        in every case it applies in) and ``cautions`` (those of every case's report, once each).
    """
    first = next(iter(models.values()))
    definitions = {c.name: c for c in first.load_cases}
    rows = []
    lines: list[str] = []
    for name, model in models.items():
        report = build_report(model)
        lines.extend(line for line in report["cautions"] if line not in lines)
        d = definitions.get(name)
        rows.append({
            "name": name,
            "description": d.description if d else "the model as the file describes it",
            "overrides": d.override_map if d else {},
            "switched_off": list(d.switch_off) if d else [],
            "switched_on": list(d.switch_on) if d else [],
            "general_rules": d.general_rules if d else True,
            "parts": len(model.components),
            **{k: report[k] for k in _SUMMARY_KEYS if k in report},
        })
    return {
        "format": CASES_FORMAT,
        "model": first.name,
        "source": first.source,
        "conventions": CONVENTIONS,
        "cases": rows,
        "rules_passed": all(r["rules_passed"] for r in rows),
        "cautions": lines,
    }


def format_case_table(data: dict[str, Any], units: DisplayUnits = DisplayUnits.SI) -> str:
    """Readable text of :func:`build_case_table`: quantities down, cases across."""
    lu, ls = units.length
    iu, isc = units.inertia
    ld = 1 if units is DisplayUnits.MM else 4
    idg = 0 if units is DisplayUnits.MM else 3
    cases = data["cases"]
    names = [c["name"] for c in cases]
    rows: list[list[str]] = []

    def row(label: str, cell: Callable[[dict[str, Any]], str]) -> None:
        rows.append([label, *(cell(c) for c in cases)])

    def length(key: str, i: int | None = None) -> Callable[[dict[str, Any]], str]:
        return lambda c: _num((c[key] if i is None else c[key][i]) * ls, f".{ld}f")

    def kg(key: str, sub: str) -> Callable[[dict[str, Any]], str]:
        return lambda c: _num(c[key][sub], ".2f")

    def inertia(axis: str) -> Callable[[dict[str, Any]], str]:
        return lambda c: _num(c["inertia_vehicle_axes_kg_m2"][axis] * isc, f".{idg}f")

    row("parameters set", lambda c: ", ".join(f"{k} = {v}" for k, v in c["overrides"].items()) or "-")
    row("switched off", lambda c: ", ".join(c["switched_off"]) or "-")
    row("switched on", lambda c: ", ".join(c["switched_on"]) or "-")
    row("parts", lambda c: str(c["parts"]))
    row("mass kg", lambda c: f"{c['mass_kg']:.2f}")
    for i, axis in enumerate("xyz"):
        row(f"CG {axis} {lu} (model axes)", length("cg_m", i))
    if all("front_fraction" in c for c in cases):
        row(f"CG height above ground {lu}", length("cg_height_m"))
        row(f"CG behind front axle {lu}", length("cg_behind_front_axle_m"))
        row("front fraction", lambda c: _num(c["front_fraction"], ".4f"))
        row("left fraction", lambda c: _num(c["left_fraction"], ".4f"))
        row("front axle kg", kg("axle_loads_kg", "front"))
        row("rear axle kg", kg("axle_loads_kg", "rear"))
        for key, label in (("front_left", "FL"), ("front_right", "FR"), ("rear_left", "RL"), ("rear_right", "RR")):
            row(f"corner {label} kg", kg("corner_loads_kg", key))
        for key in ("roll", "pitch", "yaw"):
            row(f"{key} inertia {iu} (about CG)", inertia(key))
    out = [f"LOAD CASES · {data['model']}   ({data['source']})",
           f"frame: model axes · lengths {lu} · loads as mass-equivalent kg · inertia about the CG, vehicle axes",
           "", table(["", *names], rows)]
    rule_names = list(dict.fromkeys(r["name"] for c in cases for r in c["rules"]))
    if rule_names:
        out += ["", "RULE CHECKS BY CASE (margin; '-' where the rule does not apply in the case)"]
        by_case = [{r["name"]: r for r in c["rules"]} for c in cases]
        grid = []
        for rn in rule_names:
            cells = []
            for results in by_case:
                r = results.get(rn)
                if r is None:
                    cells.append("-")
                    continue
                unit = r["margin"]["unit"]
                fmt = ".4f" if unit in ("fraction", "m") else ".2f"
                cells.append(f"{'pass' if r['passed'] else 'FAIL'} {r['margin']['value']:+{fmt}} {unit}")
            grid.append([rn, *cells])
        out.append(table(["rule", *names], grid))
        out.append("  " + ("all rules pass in every case" if data["rules_passed"] else "SOME RULES FAIL"))
    out += _descriptions(cases)
    out += ["", "CAUTIONS", *(f"  - {line}" for line in data["cautions"])]
    return "\n".join(out)


def _descriptions(cases: Sequence[dict[str, Any]]) -> list[str]:
    lines = ["", "CASES"]
    for c in cases:
        rules = "" if c["general_rules"] else " (only the rules tied to this case are checked)"
        lines.append(f"  {c['name']}: {c['description'] or '-'}{rules}")
    return lines
