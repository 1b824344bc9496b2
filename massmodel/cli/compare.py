"""The ``crossweigh`` command: the model against a CAD estimate, with a diagnosis of convention mix-ups.

Exit 0 when the estimate as declared agrees within the tolerances, 1 when it does not (even when the diagnosis
explains why: the file is wrong as it stands), 2 for bad input.
"""

from __future__ import annotations

import argparse
import math
import re
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.cli import EXIT_FAIL

from .core import add_model_arguments, load_from_args

__all__ = ["register", "format_check"]

_STEP_SUFFIXES = (".step", ".stp")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "crossweigh",
        help="compare mass, CG and inertia tensor with a CAD estimate (JSON/CSV, or STEP + density); "
        "diagnose convention mix-ups",
        description="Compare the model (or one group) with a CAD estimate and, when they disagree, say which "
        "convention mix-up (product sign, units, reference point, axes) explains it. Exit 1 when the estimate as "
        "declared fails the tolerances.",
    )
    add_model_arguments(p)
    p.add_argument("estimate", type=Path, help="estimate file: .json or .csv (docs/compare.md), or .step/.stp")
    p.add_argument("--group", default="", metavar="PATH", help="compare this group or part of the model "
                   "(default: the whole model) with the estimate's whole ('*')")
    s = p.add_argument_group("STEP estimates (computed exactly with OpenCascade)")
    s.add_argument("--density", metavar="D", help="density of every solid: '7850 kg/m^3' or a material key")
    s.add_argument("--solid-density", action="append", default=[], metavar="SOLID=D",
                   help="density of one solid, chosen by name, assembly path or '#k' (file order); repeatable")
    s.add_argument("--solid-group", action="append", default=[], metavar="SOLID=PATH",
                   help="compare this solid (or several with the same PATH) with that model group or part")
    s.add_argument("--step-axes", metavar="AXES",
                   help="the STEP file's axes as model axes, e.g. 'x=-x, y=-y, z=+z' (default: the model's)")
    s.add_argument("--step-origin", metavar="X,Y,Z UNIT",
                   help="the STEP file's origin in model coordinates, e.g. '0, 0, -265 mm' (default: the model's)")
    t = p.add_argument_group("tolerances (defaults: common practice, no source)")
    t.add_argument("--mass-tol", default="1 %", metavar="F", help="mass difference (default 1 %%)")
    t.add_argument("--cg-tol", default="5 mm", metavar="L", help="total CG offset (default 5 mm)")
    t.add_argument("--term-tol", default="2 %", metavar="F",
                   help="each tensor term, relative to the largest principal moment (default 2 %%)")
    t.add_argument("--moment-tol", default="2 %", metavar="F", help="each principal moment (default 2 %%)")
    t.add_argument("--axis-tol", default="3 deg", metavar="A", help="angle between principal axes (default 3 deg)")
    t.add_argument("--degenerate-gap", default="5 %", metavar="F",
                   help="moments closer than this share of the largest: their axes are not compared (default 5 %%)")
    p.add_argument("--json", type=Path, metavar="FILE", help="also write the comparison and diagnosis (SI)")
    p.add_argument("--units", choices=["si", "mm"], default="si",
                   help="terminal inertia units: si (kg*m^2) or mm (kg*mm^2); CG offsets are always in mm")
    p.add_argument("--details", action="store_true",
                   help="show every item's tensor terms and principal axes (default: the first item's)")
    p.add_argument("--no-pairs", action="store_true", help="try single reinterpretations only")
    p.set_defaults(run=_run)


# --- option parsing (the edge: text → SI) -------------------------------------------------------------------

def _fraction(option: str, text: str) -> float:
    t = text.strip()
    try:
        value = float(t[:-1]) / 100.0 if t.endswith("%") else float(t)
    except ValueError:
        raise ValueError(f"{option}: expected a share such as '1 %' or 0.01, got {text!r}") from None
    if not (value > 0.0 and math.isfinite(value)):
        raise ValueError(f"{option}: must be positive, got {text!r}")
    return value


def _quantity(option: str, text: str, dim: Any, example: str) -> float:
    from massmodel.core.expr import evaluate

    try:
        q = evaluate(text)
    except ValueError as exc:
        raise ValueError(f"{option}: {exc}") from None
    if q.dim != dim:
        raise ValueError(f"{option}: expected {dim.describe()} such as '{example}', got {text!r}")
    return q.value


def _density(option: str, text: str, materials: Any) -> float:
    from massmodel.core.units import DENSITY

    key = text.strip()
    if key in materials:
        return float(materials[key].density)
    try:
        return _quantity(option, text, DENSITY, "7850 kg/m^3")
    except ValueError as exc:
        raise ValueError(f"{exc} (or a material key: see 'massmodel materials')") from None


def _point(option: str, text: str) -> np.ndarray:
    """'0, 0, -265 mm' (one unit for all), '0 mm, 0 mm, -0.265 m' or '(0, 0, -265) mm' → (3,) m."""
    from massmodel.core.expr import evaluate
    from massmodel.core.units import DIMENSIONLESS, LENGTH

    parts = [p.strip() for p in re.sub(r"[\[\]()]", " ", text).split(",")]
    usage = f"{option}: expected 'x, y, z unit' such as '0, 0, -265 mm', got {text!r}"
    if len(parts) != 3 or not all(parts):
        raise ValueError(usage)
    try:
        qs = [evaluate(p) for p in parts]
        if qs[2].dim == LENGTH and all(q.dim == DIMENSIONLESS for q in qs[:2]):
            unit = parts[2].split(maxsplit=1)[1] if len(parts[2].split(maxsplit=1)) == 2 else ""
            qs = [evaluate(f"{p} {unit}") for p in parts[:2]] + [qs[2]]
    except ValueError as exc:
        raise ValueError(f"{option}: {exc}") from None
    if not all(q.dim == LENGTH for q in qs):
        raise ValueError(usage)
    return np.array([q.value for q in qs])


def _pairs(option: str, texts: list[str]) -> dict[str, str]:
    out: dict[str, str] = {}
    for text in texts:
        key, sep, value = text.partition("=")
        if not sep or not key.strip() or not value.strip():
            raise ValueError(f"{option}: expected SOLID=VALUE, got {text!r}")
        if key.strip() in out:
            raise ValueError(f"{option}: solid '{key.strip()}' given twice")
        out[key.strip()] = value.strip()
    return out


def _tolerances(args: argparse.Namespace) -> Any:
    from massmodel.compare.check import Tolerances
    from massmodel.core.units import ANGLE, LENGTH

    return Tolerances(
        mass=_fraction("--mass-tol", args.mass_tol),
        cg=_quantity("--cg-tol", args.cg_tol, LENGTH, "5 mm"),
        term=_fraction("--term-tol", args.term_tol),
        moment=_fraction("--moment-tol", args.moment_tol),
        axis=_quantity("--axis-tol", args.axis_tol, ANGLE, "3 deg"),
        degenerate=_fraction("--degenerate-gap", args.degenerate_gap),
    )


def _load_estimate(args: argparse.Namespace, model: Any) -> Any:
    path: Path = args.estimate
    if path.suffix.lower() in _STEP_SUFFIXES:
        from massmodel.compare.estimate import AxisMap
        from massmodel.compare.estimate_step import estimate_from_step
        from massmodel.core.materials import builtin_materials

        materials = {**builtin_materials(), **dict(model.materials)}
        default = _density("--density", args.density, materials) if args.density else None
        per_solid = {k: _density(f"--solid-density {k}", v, materials)
                     for k, v in _pairs("--solid-density", args.solid_density).items()}
        try:
            axes = AxisMap.parse(args.step_axes or "x=+x, y=+y, z=+z", model.vehicle)
        except ValueError as exc:
            raise ValueError(f"--step-axes: {exc}") from None
        return estimate_from_step(path, default_density=default, densities=per_solid,
                                  groups=_pairs("--solid-group", args.solid_group), axes=axes,
                                  origin=_point("--step-origin", args.step_origin or "0, 0, 0 mm"))
    used = [o for o, v in (("--density", args.density), ("--solid-density", args.solid_density),
                           ("--solid-group", args.solid_group), ("--step-axes", args.step_axes),
                           ("--step-origin", args.step_origin)) if v]
    if used:
        raise ValueError(f"{used[0]} applies to STEP estimates only; a JSON or CSV estimate declares its own numbers")
    from massmodel.compare.estimate import load_estimate

    return load_estimate(path, model.vehicle)


def _run(args: argparse.Namespace) -> int:
    from massmodel.compare.crosscheck import check_estimate
    from massmodel.report.summary import write_json_atomic

    tol = _tolerances(args)
    model = load_from_args(args)
    estimate = _load_estimate(args, model)
    result = check_estimate(model, estimate, args.group, tol, pairs=not args.no_pairs)
    print(format_check(result, inertia_mm=args.units == "mm", details=args.details))
    if args.json:
        write_json_atomic(result.to_dict(), args.json)
        print(f"\ncomparison written to {args.json}")
    return 0 if result.passed else EXIT_FAIL


# --- terminal text ----------------------------------------------------------------------------------------------

def _signed(x: float, digits: int = 2) -> str:
    s = f"{x:+.{digits}f}"
    return "+" + s[1:] if s.startswith("-") and float(s) == 0.0 else s


def _summary_rows(cmp: Any) -> list[list[str]]:
    rows = []
    for it in cmp.items:
        k = int(np.argmax(np.abs(it.moment_rel)))
        angles = it.axis_angle
        axis = "-" if np.all(np.isnan(angles)) else f"{math.degrees(float(np.nanmax(angles))):.2f}"
        i, j = max(((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)), key=lambda ij: abs(it.term_rel[ij]))
        rows.append([
            it.group, f"{it.model.mass:.3f}", f"{it.estimate.mass:.3f}", _signed(100 * it.mass_rel),
            "(" + ", ".join(_signed(1e3 * v, 1) for v in it.cg_diff) + ")", f"{1e3 * it.cg_offset:.2f}",
            f"{it.worst_term} {_signed(100 * it.term_rel[i, j])}", f"{k + 1}: {_signed(100 * it.moment_rel[k])}",
            axis, f"{it.worst[1]:.2f}", "pass" if it.passed else "FAIL",
        ])
    return rows


_SUMMARY_HEAD = ["item", "model kg", "estimate kg", "Δmass %", "ΔCG x, y, z mm", "|ΔCG| mm", "worst term %",
                 "worst moment %", "axes deg", "ratio", "result"]


def _detail(it: Any, inertia_mm: bool) -> list[str]:
    from massmodel.report.summary import table

    unit, f = ("kg*mm^2", 1e6) if inertia_mm else ("kg*m^2", 1.0)
    digits = 0 if inertia_mm else 4
    names = (("xx", 0, 0), ("yy", 1, 1), ("zz", 2, 2), ("xy", 0, 1), ("xz", 0, 2), ("yz", 1, 2))
    rows = [[n, f"{it.model.inertia[i, j] * f:.{digits}f}", f"{it.estimate.inertia[i, j] * f:.{digits}f}",
             f"{it.term_diff[i, j] * f:+.{digits}f}", _signed(100 * it.term_rel[i, j], 3)] for n, i, j in names]
    out = [f"item '{it.group}' in detail: tensor about its CG ({unit}, model axes, tensor convention)",
           table(["term", "model", "estimate", "Δ", "Δ / largest moment %"], rows)]
    rows = []
    for k in range(3):
        a = it.axis_angle[k]
        rows.append([str(k + 1), f"{it.moments_model[k] * f:.{digits}f}", f"{it.moments_estimate[k] * f:.{digits}f}",
                     _signed(100 * it.moment_rel[k], 3), "-" if math.isnan(a) else f"{math.degrees(a):.3f}",
                     "(" + ", ".join(f"{v:+.4f}" for v in it.axes_model[k]) + ")"])
    out.append(table(["principal", f"model {unit}", f"estimate {unit}", "Δ %", "axis angle deg",
                      "model axis (model axes)"], rows))
    if it.axis_note:
        out.append(f"  {it.axis_note}")
    c = it.model.center * 1e3
    e = it.estimate.center * 1e3
    out.append(f"  CG model ({c[0]:.1f}, {c[1]:.1f}, {c[2]:.1f}) mm · estimate ({e[0]:.1f}, {e[1]:.1f}, {e[2]:.1f}) mm "
               f"(model frame)")
    return out


def _worst_words(it: Any) -> str:
    return "agrees to round-off" if it.worst[1] < 1e-6 else it.describe_worst()


def _side_by_side(raw: Any, corrected: Any) -> list[str]:
    from massmodel.report.summary import table

    rows = []
    for it in raw.items:
        c = corrected.item(it.group)
        rows.append([it.group, "pass" if it.passed else "FAIL", f"{it.worst[1]:.2f}", _worst_words(it),
                     "pass" if c.passed else "FAIL", f"{c.worst[1]:.2f}", _worst_words(c)])
    return [table(["item", "as declared", "ratio", "worst check", "read so", "ratio", "worst check"], rows,
                  "llrllrl")]


def format_check(result: Any, inertia_mm: bool = False, details: bool = False) -> str:
    """Readable text of an :class:`massmodel.compare.crosscheck.EstimateCheck` (every item in detail with ``details``)."""
    from massmodel.report.summary import table

    est = result.estimate
    tol = result.as_declared.tolerances
    sel = f" (group '{result.selection}')" if result.selection else ""
    out = [f"massmodel crossweigh · model '{result.model.name}'{sel} ({result.model.source}) · estimate {est.source}"]
    if est.description:
        out.append(f"estimate: {est.description}")
    out.extend(f"  solid {line}" for line in est.notes)
    conv = est.conventions
    if est.kind == "step":
        o = ", ".join(f"{1e3 * v * conv.length_factor:g}" for v in conv.origin)
        out.append(f"STEP placement given: axes {conv.axes.text} · origin ({o}) mm in model axes · computed about "
                   "each CG, tensor convention")
    else:
        out.append(f"declared: {conv.describe()}")
    out.append("compared in model axes, each tensor about its item's CG, tensor convention (I_xy = -∫xy dm); "
               "differences are estimate - model")
    out.append(f"tolerances: mass {100 * tol.mass:g} % · CG offset {1e3 * tol.cg:g} mm · tensor terms "
               f"{100 * tol.term:g} % of the largest moment · principal moments {100 * tol.moment:g} % · principal "
               f"axes {math.degrees(tol.axis):g} deg (not compared for moments within {100 * tol.degenerate:g} % "
               "of the largest)")
    out.append("")
    out.append("AS DECLARED" + ("" if len(result.as_declared.items) == 1 else " (the whole first, then worst first)"))
    out.append(table(_SUMMARY_HEAD, _summary_rows(result.as_declared), "lrrrrrrrrrl"))
    out.append("ratio: the worst of the five checks as difference / tolerance (<= 1 passes)")
    for it in result.as_declared.items if details else result.as_declared.items[:1]:
        out.append("")
        out.extend(_detail(it, inertia_mm))
    diag = result.diagnosis
    if diag is not None:
        out.append("")
        out.append("DIAGNOSIS (the estimate file is not changed; this is a suspected cause, not a correction)")
        worst = result.as_declared.worst_item
        out.append(f"  as declared it fails: worst {diag.raw_score:.2f} x tolerance ('{worst.group}': "
                   f"{worst.describe_worst()})")
        t = diag.tested
        pairs = f" and {t['pair']} pairs" if t["pair"] else ""
        out.append(f"  tried {t['single']} single readings{pairs} of the declared conventions "
                   f"({t['impossible']} gave impossible tensors)")
        exp = diag.explanation
        if exp is not None:
            lead = "suspected cause" if len(exp.steps) == 1 else "suspected causes (together)"
            out.append(f"  {lead}:")
            out.extend(f"    - {s.label}" for s in exp.steps)
            how = ("agreement to round-off: nothing else differs" if exp.roundoff else
                   "within tolerance, not round-off: the remaining differences are the estimate's own")
            out.append(f"  read so, the comparison passes: worst {exp.comparison.score:.2f} x tolerance "
                       f"(relative residual {exp.relative_residual:.2g}; {how})")
            if diag.ambiguous:
                out.append("  AMBIGUOUS: other readings explain it as simply; the data cannot tell them apart:")
            elif diag.alternatives:
                out.append("  other readings that also pass (less likely: less simple or a larger residual):")
            out.extend(f"    - {a.label} (worst {a.comparison.score:.2f} x tolerance)" for a in diag.alternatives)
            out.append("  side by side:")
            out.extend("  " + line for line in "\n".join(_side_by_side(result.as_declared, exp.comparison)).split("\n"))
            out.append("  Have the estimate re-issued with its conventions declared correctly (or fix the declaration"
                       " after confirming with its author); this check passes only on the file as declared.")
        else:
            out.append("  no single reading (or pair of readings) of the conventions explains the difference: it "
                       "looks like a real disagreement between the model and the estimate.")
            if diag.closest is not None:
                fails = [f"'{it.group}' {it.describe_worst()}" for it in diag.closest.comparison.items if not it.passed]
                out.append(f"  closest reading, for information only: {diag.closest.label} - still "
                           f"{diag.closest.comparison.score:.2f} x tolerance ({'; '.join(fails[:3])})")
    out.append("")
    out.append("RESULT: pass - the estimate agrees within the tolerances" if result.passed else
               "RESULT: FAIL - the estimate as declared does not agree within the tolerances (exit 1)")
    out.append("")
    out.append("CAUTIONS")
    out.extend(f"  - {line}" for line in result.cautions)
    return "\n".join(out)
