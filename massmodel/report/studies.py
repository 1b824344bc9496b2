"""Text, JSON and CSV of parameter sweeps, sensitivities and fuel-burn tracks.

JSON and CSV are SI with the unit in every key or column name (``cg_x_m``, ``fuel_mass_kg``); the terminal text
shows lengths in mm. Conversion happens only here.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from typing import Any

import numpy as np

from massmodel.core import cautions
from massmodel.core.atomic import write_text_atomic
from massmodel.studies.fuel import FuelTrack
from massmodel.studies.outputs import Output, RuleLimits, worst_points
from massmodel.studies.sweep import Sensitivity, SweepResult

from .summary import table

__all__ = ["unit_key", "display", "sweep_dict", "sweep_csv", "format_sweep", "sensitivity_dict", "format_sensitivity",
           "track_dict", "track_csv", "format_track", "write_csv_atomic", "SWEEP_FORMAT", "SENSITIVITY_FORMAT",
           "TRACK_FORMAT", "MAX_TEXT_ROWS"]

SWEEP_FORMAT = "massmodel-sweep/1"
SENSITIVITY_FORMAT = "massmodel-sensitivity/1"
TRACK_FORMAT = "massmodel-fuel-track/1"
#: Rows of a sweep shown in the terminal; longer sweeps show evenly spaced rows (the CSV has them all).
MAX_TEXT_ROWS = 25


def unit_key(name: str, unit: str) -> str:
    """A key with its SI unit: ``fuel_mass_kg``, ``density_kg_per_m3``, ``ratio`` (no unit)."""
    if not unit or unit in ("1", "fraction"):
        return name if not unit or unit == "1" else f"{name}_fraction"
    text = unit.replace("·", "_").replace("*", "_").replace("/", "_per_").replace("^", "")
    return f"{name}_{text}"


def display(value: float, unit: str) -> tuple[str, str]:
    """(number text, unit text) for the terminal: lengths in mm, masses in kg, inertia in kg*m^2."""
    if unit == "m":
        return f"{value * 1e3:.2f}", "mm"
    if unit == "kg":
        return f"{value:.3f}", "kg"
    if unit == "fraction":
        return f"{value:.4f}", ""
    if unit in ("kg*m^2", "kg·m^2"):
        return f"{value:.3f}", "kg*m^2"
    if unit == "rad":
        return f"{np.degrees(value):.3f}", "deg"
    return f"{value:.6g}", unit


def _head(o: Output) -> str:
    unit = display(0.0, o.unit)[1]
    return f"{o.key} ({unit})" if unit else o.key


def _param_head(name: str, unit: str) -> str:
    shown = display(0.0, unit)[1] if unit else ""
    return f"{name} ({shown})" if shown else name


def _rules_json(rules: Sequence[RuleLimits]) -> list[dict[str, Any]]:
    return [{"name": r.name, "check": r.check, "unit": r.unit, "lower": r.lower, "upper": r.upper} for r in rules]


def _outputs_json(outputs: Sequence[Output]) -> list[dict[str, Any]]:
    return [{"key": o.key, "label": o.label, "unit": o.unit, "column": unit_key(o.key, o.unit)} for o in outputs]


def sweep_dict(result: SweepResult) -> dict[str, Any]:
    """A sweep as plain data (JSON-ready, SI)."""
    pcols = [unit_key(r.name, r.unit) for r in result.parameters]
    ocols = [unit_key(o.key, o.unit) for o in result.outputs]
    return {
        "format": SWEEP_FORMAT,
        "model": result.model,
        "case": result.case,
        "method": result.method,
        "parameters": [{"name": r.name, "unit": r.unit, "column": c, "values": r.values.tolist(),
                        "file_value": float(b)} for r, c, b in zip(result.parameters, pcols, result.base_parameters,
                                                                  strict=True)],
        "outputs": _outputs_json(result.outputs),
        "rules": _rules_json(result.rules),
        "file_values": dict(zip(ocols, result.base_values.tolist(), strict=True)),
        "points": [{**dict(zip(pcols, p, strict=True)), **dict(zip(ocols, v, strict=True))}
                   for p, v in zip(result.points.tolist(), result.values.tolist(), strict=True)],
        "worst": [{"rule": result.rules[result.outputs[i].rule].name, "column": ocols[i], "point": k,  # type: ignore[index]
                   "margin": float(result.values[k, i]), **dict(zip(pcols, result.points[k].tolist(), strict=True))}
                  for i, k in result.worst()],
        "cautions": cautions.for_report(),
    }


def _csv_text(headers: Sequence[str], rows: Sequence[Sequence[float]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(headers)
    for row in rows:
        w.writerow([repr(float(x)) for x in row])
    return buf.getvalue()


def write_csv_atomic(text: str, path: Any) -> None:
    """Write CSV text through a temporary file and a rename."""
    write_text_atomic(path, text)


def sweep_csv(result: SweepResult) -> str:
    """One row per point: the parameters, then the outputs (SI, unit in each column name)."""
    headers = [unit_key(r.name, r.unit) for r in result.parameters] + [unit_key(o.key, o.unit) for o in result.outputs]
    return _csv_text(headers, np.hstack([result.points, result.values]).tolist())


def _rows_shown(n: int) -> list[int]:
    if n <= MAX_TEXT_ROWS:
        return list(range(n))
    return sorted(set(np.linspace(0, n - 1, MAX_TEXT_ROWS).round().astype(int).tolist()))


def _basic(outputs: Sequence[Output]) -> list[int]:
    return [i for i, o in enumerate(outputs) if o.rule is None]


def _worst_lines(outputs: Sequence[Output], rules: Sequence[RuleLimits], values: np.ndarray, where: Any) -> list[str]:
    lines = []
    for i, k in worst_points(outputs, values):
        margin = " ".join(display(float(values[k, i]), outputs[i].unit)).strip()
        verdict = "FAILS" if values[k, i] < 0 else "passes"
        lines.append(f"  {rules[outputs[i].rule].name}: worst margin {margin} at {where(k)} ({verdict} there)")  # type: ignore[index]
    return lines


def format_sweep(result: SweepResult) -> str:
    """The sweep as terminal text: a table of the points (evenly spaced rows when there are many) and the worst
    point of each rule."""
    n = len(result.points)
    lines = [f"Sweep of {result.model} (case {result.case}): {n} points over "
             + " x ".join(f"{r.name} ({len(r.values)})" for r in result.parameters), f"  {result.method}", ""]
    idx = _basic(result.outputs)
    heads = [_param_head(r.name, r.unit) for r in result.parameters] + [_head(result.outputs[i]) for i in idx]
    rows = []
    for k in _rows_shown(n):
        cells = [display(float(v), r.unit)[0] for v, r in zip(result.points[k], result.parameters, strict=True)]
        cells += [display(float(result.values[k, i]), result.outputs[i].unit)[0] for i in idx]
        rows.append(cells)
    lines.append(table(heads, rows))
    if n > MAX_TEXT_ROWS:
        lines.append(f"({len(rows)} of {n} points shown; the CSV and JSON hold all of them)")

    def where(k: int) -> str:
        return ", ".join(f"{r.name} = {' '.join(display(float(v), r.unit))}".rstrip()
                         for v, r in zip(result.points[k], result.parameters, strict=True))

    worst = _worst_lines(result.outputs, result.rules, result.values, where)
    if worst:
        lines += ["", "Rule margins (positive: inside the limit):", *worst]
    lines += ["", *cautions.for_report()]
    return "\n".join(lines)


def sensitivity_dict(s: Sensitivity) -> dict[str, Any]:
    """Sensitivities as plain data (JSON-ready, SI)."""
    cols = [unit_key(o.key, o.unit) for o in s.outputs]
    return {
        "format": SENSITIVITY_FORMAT,
        "model": s.model,
        "case": s.case,
        "method": "one at a time: each parameter moved by -step and +step from the file's value, the others kept; "
                  "effect = (plus - minus) / 2, per step",
        "outputs": _outputs_json(s.outputs),
        "file_values": dict(zip(cols, s.base.tolist(), strict=True)),
        "parameters": [
            {"name": n, "unit": u, "step": float(st), "minus": dict(zip(cols, mi, strict=True)),
             "plus": dict(zip(cols, pl, strict=True)), "effect_per_step": dict(zip(cols, ef, strict=True))}
            for n, u, st, mi, pl, ef in zip(s.names, s.units, s.steps, s.minus.tolist(), s.plus.tolist(),
                                            s.effect.tolist(), strict=True)
        ],
        "cautions": cautions.for_report(),
    }


def format_sensitivity(s: Sensitivity, rank_by: str) -> str:
    """The ranking of the parameters by their effect on ``rank_by``, then every output's effect per step."""
    k = next(i for i, o in enumerate(s.outputs) if o.key == rank_by)
    o = s.outputs[k]
    unit = display(0.0, o.unit)[1]
    lines = [f"Sensitivity of {s.model} (case {s.case}), one parameter at a time by -step and +step", "",
             f"Ranked by {o.label}{f' ({unit})' if unit else ''}; file value {display(float(s.base[k]), o.unit)[0]}:"]
    rows = []
    for rank, i in enumerate(s.ranking(rank_by), start=1):
        step = " ".join(display(float(s.steps[i]), s.units[i])).strip()
        rows.append([str(rank), s.names[i], step, display(float(s.minus[i, k]), o.unit)[0],
                     display(float(s.plus[i, k]), o.unit)[0], display(float(s.effect[i, k]), o.unit)[0]])
    lines.append(table(["#", "parameter", "step", "at -step", "at +step", "effect per step"], rows, "llrrrr"))
    idx = _basic(s.outputs)
    heads = ["parameter", "step"] + [_head(s.outputs[i]) for i in idx]
    rows = [[s.names[p], " ".join(display(float(s.steps[p]), s.units[p])).strip()]
            + [display(float(s.effect[p, i]), s.outputs[i].unit)[0] for i in idx] for p in range(len(s.names))]
    lines += ["", "Effect per step on every output ((plus - minus) / 2):", table(heads, rows, "ll" + "r" * len(idx))]
    lines += ["", "A one-at-a-time step shows the local slope only: it misses interactions between parameters.",
              *cautions.for_report()]
    return "\n".join(lines)


def track_dict(t: FuelTrack) -> dict[str, Any]:
    """A fuel-burn track as plain data (JSON-ready, SI)."""
    pcol = unit_key(t.parameter, t.unit)
    cols = [unit_key(o.key, o.unit) for o in t.outputs]
    return {
        "format": TRACK_FORMAT,
        "model": t.model,
        "case": t.case,
        "parameter": {"name": t.parameter, "unit": t.unit, "column": pcol},
        "left_out_when_empty": list(t.left_out),
        "outputs": _outputs_json(t.outputs),
        "rules": _rules_json(t.rules),
        "points": [{pcol: f, **dict(zip(cols, v, strict=True))}
                   for f, v in zip(t.fuel.tolist(), t.values.tolist(), strict=True)],
        "worst": [{"rule": t.rules[t.outputs[i].rule].name, "column": cols[i], "margin": float(t.values[k, i]),  # type: ignore[index]
                   pcol: float(t.fuel[k])} for i, k in t.worst()],
        "cautions": cautions.for_report(),
    }


def track_csv(t: FuelTrack) -> str:
    """One row per fuel load (SI)."""
    headers = [unit_key(t.parameter, t.unit)] + [unit_key(o.key, o.unit) for o in t.outputs]
    return _csv_text(headers, np.hstack([t.fuel[:, None], t.values]).tolist())


def format_track(t: FuelTrack) -> str:
    """The track as terminal text: a table full to empty and the worst point of each rule."""
    lines = [f"Fuel burn of {t.model} (case {t.case}): {t.parameter} from "
             f"{' '.join(display(float(t.fuel[0]), t.unit))} to {' '.join(display(float(t.fuel[-1]), t.unit))}", ""]
    idx = _basic(t.outputs)
    rows = [[display(float(t.fuel[k]), t.unit)[0]] + [display(float(t.values[k, i]), t.outputs[i].unit)[0] for i in idx]
            for k in _rows_shown(len(t.fuel))]
    lines.append(table([_param_head(t.parameter, t.unit)] + [_head(t.outputs[i]) for i in idx], rows))
    if t.left_out:
        lines.append(f"At an empty load the file cannot build the fuel shape; the parts {', '.join(t.left_out)} "
                     "(whose masses scale with the load) are left out.")
    worst = _worst_lines(t.outputs, t.rules, t.values,
                         lambda k: f"{t.parameter} = {' '.join(display(float(t.fuel[k]), t.unit)).strip()}")
    if worst:
        lines += ["", "Rule margins along the track (positive: inside the limit):", *worst]
    lines += ["", "The fuel is modelled as the file shapes it (level, at rest): slosh under braking, cornering and "
              "acceleration moves it elsewhere.", *cautions.for_report()]
    return "\n".join(lines)
