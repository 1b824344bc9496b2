"""Terminal text of a ``crossweigh`` comparison (:class:`massmodel.compare.crosscheck.EstimateCheck`): the summary table,
the tensor of an item in detail, the diagnosis of convention mix-ups and the cautions. SI and mm as labelled."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .summary import table

__all__ = ["format_check"]


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
    rows = []
    for it in raw.items:
        c = corrected.item(it.group)
        rows.append([it.group, "pass" if it.passed else "FAIL", f"{it.worst[1]:.2f}", _worst_words(it),
                     "pass" if c.passed else "FAIL", f"{c.worst[1]:.2f}", _worst_words(c)])
    return [table(["item", "as declared", "ratio", "worst check", "read so", "ratio", "worst check"], rows,
                  "llrllrl")]


def format_check(result: Any, inertia_mm: bool = False, details: bool = False) -> str:
    """Readable text of an :class:`massmodel.compare.crosscheck.EstimateCheck` (every item in detail with ``details``)."""
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
