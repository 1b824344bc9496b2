"""The packaging check's results as plain data (JSON, SI) and as terminal tables (mm)."""

from __future__ import annotations

from typing import Any

import numpy as np

from massmodel.cad.packaging import Clearance, Interference, PackagingReport, SlotFit
from massmodel.core import cautions

from .summary import table

__all__ = ["PACKAGING_FORMAT", "packaging_dict", "format_packaging"]

PACKAGING_FORMAT = "massmodel-packaging/1"


def _interference(x: Interference) -> dict[str, Any]:
    out: dict[str, Any] = {"parts": [x.first, x.second], "volume_m3": x.volume, "center_m": x.center.tolist()}
    if x.allowed_by:
        out["allowed_by"] = x.allowed_by
    return out


def _fit(f: SlotFit) -> dict[str, Any]:
    out: dict[str, Any] = {"path": f.path, "slot": f.slot, "passed": f.passed, "reason": f.reason}
    if f.obstacle is not None:
        out["nearest_part_in_slot"] = {
            "path": f.obstacle.neighbour, "distance_m": f.obstacle.distance,
            "point_on_part_m": f.obstacle.point_part.tolist(),
            "point_on_other_m": f.obstacle.point_neighbour.tolist(),
        }
    if f.fit is not None:
        out.update({
            "outside_volume_m3": f.fit.outside_volume,
            "clearance_m": f.fit.clearance,
            "required_clearance_m": f.fit.required_clearance,
            "closest_point_part_m": f.fit.closest_block.tolist(),
            "closest_point_slot_wall_m": f.fit.closest_envelope.tolist(),
        })
    return out


def _clearance(c: Clearance) -> dict[str, Any]:
    return {
        "path": c.path,
        "passed": c.passed,
        "required_m": c.required,
        "required_from": c.required_from,
        "reach_m": c.reach,
        "nearest_m": None if not c.nearest else c.distance,
        "neighbours": [
            {"path": g.neighbour, "distance_m": g.distance, "point_on_part_m": g.point_part.tolist(),
             "point_on_neighbour_m": g.point_neighbour.tolist()}
            for g in c.nearest
        ],
    }


def packaging_dict(report: PackagingReport) -> dict[str, Any]:
    """The report as JSON-ready data: SI units in every key, model frame."""
    return {
        "format": PACKAGING_FORMAT,
        "model": report.model,
        "source": report.source,
        "conventions": {
            "units": "SI: m, m^3 (unit in every key)",
            "frame": "model axes of the model file; points in model coordinates",
            "distance": "smallest distance between the two solids; 0 when they touch or overlap",
        },
        "passed": report.passed,
        "failures": report.failures,
        "parts_checked": report.solids,
        "left_out": [{"path": p, "reason": r} for p, r in report.left_out],
        "pairs_total": report.total_pairs,
        "pairs_from_bounding_boxes": report.candidate_pairs,
        "sliver_m3": report.sliver,
        "interference": [_interference(x) for x in report.interferences],
        "allowed_contacts": [_interference(x) for x in report.allowed],
        "slots": [_fit(f) for f in report.fits],
        "clearance": [_clearance(c) for c in report.clearances],
        "seconds": report.seconds,
        "cautions": cautions.for_report("ballast") if report.fits else cautions.for_report(),
    }


def _mm(v: np.ndarray) -> str:
    return "(" + ", ".join(f"{x * 1e3:.1f}" for x in v) + ")"


def format_packaging(report: PackagingReport) -> str:
    """Readable text of a packaging report (lengths mm, volumes mm³, model frame)."""
    out: list[str] = []
    out.append(f"massmodel elbowroom · {report.model}   ({report.source})")
    out.append("frame: model axes · lengths mm · volumes mm^3")
    out.append(f"{report.solids} solids · {report.total_pairs} pairs · {report.candidate_pairs} with overlapping "
               f"bounding boxes, intersected exactly · overlaps under {report.sliver * 1e9:g} mm^3 count as touching")
    if report.left_out:
        out.append(f"left out (no solid): {', '.join(p for p, _ in report.left_out)}")
    out.append("")
    out.append("INTERFERENCE (largest first)")
    if report.interferences:
        rows = [[f"{x.volume * 1e9:.1f}", x.first, x.second, _mm(x.center)] for x in report.interferences]
        out.append(table(["mm^3", "part", "part", "centre of overlap mm"], rows, "rllr"))
    else:
        out.append("  none")
    if report.allowed:
        out.append("")
        out.append("DECLARED CONTACTS (overlaps the model file allows; not failures)")
        rows = [[f"{x.volume * 1e9:.1f}", x.first, x.second, x.allowed_by] for x in report.allowed]
        out.append(table(["mm^3", "part", "part", "allowed by"], rows, "rlll"))
    out.append("")
    out.append("FIT IN SLOT")
    if report.fits:
        rows = []
        for f in report.fits:
            if f.fit is None:
                rows.append(["FAIL", f.path, f.slot, "-", "-", "-", f.reason])
                continue
            rows.append(["pass" if f.passed else "FAIL", f.path, f.slot, f"{f.fit.clearance * 1e3:.3f}",
                         f"{f.fit.required_clearance * 1e3:.3f}", f"{f.fit.outside_volume * 1e9:.1f}", f.reason])
        out.append(table(["", "part", "slot", "gap to walls mm", "required mm", "outside mm^3", "why"], rows,
                         "lllrrrl"))
    else:
        out.append("  no part names a slot")
    out.append("")
    out.append("CLEARANCE TO NEIGHBOURS")
    if report.clearances:
        rows = []
        for c in report.clearances:
            mark = "pass" if c.passed else "FAIL"
            if not c.nearest:
                rows.append([mark, c.path, f"none within {c.reach * 1e3:.0f} mm", "-", f"{c.required * 1e3:.3f}",
                             c.required_from, "-", "-"])
                continue
            g = c.nearest[0]
            rows.append([mark, c.path, g.neighbour, f"{g.distance * 1e3:.3f}", f"{c.required * 1e3:.3f}",
                         c.required_from, _mm(g.point_part), _mm(g.point_neighbour)])
        out.append(table(["", "part", "nearest neighbour", "gap mm", "required mm", "from", "point on part mm",
                          "point on neighbour mm"], rows, "lllrrlrr"))
    else:
        out.append("  no part selected")
    out.append("")
    out.append("all packaging checks pass" if report.passed else f"PACKAGING CHECKS FAIL: {report.failures} finding(s)")
    out.append("")
    out.append("CAUTIONS")
    out.extend(f"  - {line}" for line in packaging_dict(report)["cautions"])
    return "\n".join(out)
