"""Text and JSON of what changed between two versions of a model (:mod:`massmodel.studies.diff`)."""

from __future__ import annotations

from typing import Any

import numpy as np

from massmodel.studies.diff import ModelDiff, PartChange

from .summary import table

__all__ = ["diff_dict", "format_diff", "DIFF_FORMAT"]

DIFF_FORMAT = "massmodel-changes/1"
_DIAG = (("xx", 0, 0), ("yy", 1, 1), ("zz", 2, 2))


def _props(mp: Any) -> dict[str, Any]:
    return {"mass_kg": mp.mass, "cg_m": mp.center.tolist(), "inertia_cg_kg_m2": mp.inertia.tolist()}


def _part(c: PartChange) -> dict[str, Any]:
    def side(comp: Any) -> dict[str, Any] | None:
        if comp is None:
            return None
        return {**_props(comp.props), "mass_source": comp.source.value, "maturity": comp.maturity.value,
                "material": comp.material}

    return {"path": c.path, "status": c.status, "changed": list(c.fields), "old": side(c.old), "new": side(c.new),
            "delta_mass_kg": c.delta_mass, "delta_cg_share_m": c.delta_cg.tolist(),
            "delta_inertia_share_kg_m2": c.delta_inertia.tolist()}


def diff_dict(d: ModelDiff) -> dict[str, Any]:
    """The comparison as plain data (JSON-ready, SI)."""
    return {
        "format": DIFF_FORMAT,
        "old": {"name": d.old_name, **_props(d.old), "balance": d.old_balance},
        "new": {"name": d.new_name, **_props(d.new), "balance": d.new_balance},
        "delta_mass_kg": d.delta_mass,
        "delta_cg_m": d.delta_cg.tolist(),
        "delta_inertia_cg_kg_m2": d.delta_inertia.tolist(),
        "recentre_inertia_kg_m2": d.recentre.tolist(),
        "conventions": {
            "frame": "model axes of the model files; inertia about each version's CG, tensor convention",
            "shares": "delta_cg_share_m of the parts add up to delta_cg_m; delta_inertia_share_kg_m2 (each part's "
                      "tensor about the OLD CG) plus recentre_inertia_kg_m2 (-M' S(C'-C)) add up to "
                      "delta_inertia_cg_kg_m2",
        },
        "counts": {s: sum(1 for c in d.changes if c.status == s) for s in ("added", "removed", "changed")},
        "parts": [_part(c) for c in d.changes],
        "groups": [{"path": g.path, "parts": g.parts, "delta_mass_kg": g.delta_mass, "delta_cg_share_m": g.delta_cg.tolist(),
                    "delta_inertia_share_kg_m2": g.delta_inertia.tolist()} for g in d.groups],
    }


def _mm(v: Any) -> str:
    return "(" + ", ".join(f"{x * 1e3:+.2f}" for x in v) + ")"


def _diag(t: Any) -> list[str]:
    return [f"{t[i, j]:+.4f}" for _, i, j in _DIAG]


def format_diff(d: ModelDiff, max_parts: int = 40) -> str:
    """The comparison as terminal text (lengths in mm, inertia in kg*m^2, tensor diagonal shown)."""
    counts = {s: sum(1 for c in d.changes if c.status == s) for s in ("added", "removed", "changed")}
    lines = [f"Changes from {d.old_name} to {d.new_name}: {counts['added']} added, {counts['removed']} removed, "
             f"{counts['changed']} changed", ""]
    rows = [["mass (kg)", f"{d.old.mass:.3f}", f"{d.new.mass:.3f}", f"{d.delta_mass:+.3f}"]]
    for k, axis in enumerate("xyz"):
        rows.append([f"CG {axis} (mm)", f"{d.old.center[k] * 1e3:.2f}", f"{d.new.center[k] * 1e3:.2f}",
                     f"{d.delta_cg[k] * 1e3:+.2f}"])
    for name, i, j in _DIAG:
        rows.append([f"I{name} about CG (kg*m^2)", f"{d.old.inertia[i, j]:.4f}", f"{d.new.inertia[i, j]:.4f}",
                     f"{d.delta_inertia[i, j]:+.4f}"])
    if d.old_balance and d.new_balance:
        for key, label, scale, digits in (("front_fraction", "front share", 1.0, 4), ("cg_height_m", "CG height (mm)",
                                                                                      1e3, 2)):
            a, b = d.old_balance[key] * scale, d.new_balance[key] * scale
            rows.append([label, f"{a:.{digits}f}", f"{b:.{digits}f}", f"{b - a:+.{digits}f}"])
    lines.append(table(["", "old", "new", "change"], rows, "lrrr"))
    if d.empty:
        lines += ["", "No part was added, removed or changed."]
        return "\n".join(lines)
    lines += ["", "Parts, largest mass change first (shares of the total change; the shares add up to it):"]
    rows = []
    for c in d.changes[:max_parts]:
        what = ", ".join(c.fields) if c.status == "changed" else ""
        extra = []
        if c.old is not None and c.new is not None:
            for name in ("source", "maturity"):
                a, b = getattr(c.old, name).value, getattr(c.new, name).value
                if a != b:
                    extra.append(f"{a}->{b}")
        rows.append([c.status, c.path, f"{c.delta_mass:+.3f}", _mm(c.delta_cg), *_diag(c.delta_inertia),
                     "; ".join(filter(None, [what, *extra]))])
    heads = ["", "part", "dm (kg)", "CG share (mm)", "dIxx", "dIyy", "dIzz", "what changed"]
    lines.append(table(heads, rows, "llrrrrrl"))
    if len(d.changes) > max_parts:
        rest = d.changes[max_parts:]
        lines.append(f"... and {len(rest)} more parts ({sum(c.delta_mass for c in rest):+.3f} kg); the JSON lists all")
    lines.append(f"moving the reference point to the new CG: dIxx {d.recentre[0, 0]:+.4f}, dIyy {d.recentre[1, 1]:+.4f}, "
                 f"dIzz {d.recentre[2, 2]:+.4f} kg*m^2 (parallel-axis, whole new model)")
    top = [g for g in d.groups if "/" not in g.path]
    if top:
        lines += ["", "By top-level group:"]
        lines.append(table(["group", "parts", "dm (kg)", "CG share (mm)", "dIxx", "dIyy", "dIzz"],
                           [[g.path, str(g.parts), f"{g.delta_mass:+.3f}", _mm(g.delta_cg), *_diag(g.delta_inertia)]
                            for g in top], "lrrrrrr"))
    shares = np.sum([c.delta_cg for c in d.changes], axis=0)
    lines.append(f"check: the CG shares add up to {_mm(shares)} mm; the CG moved {_mm(d.delta_cg)} mm")
    return "\n".join(lines)
