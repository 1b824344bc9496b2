"""Text of the load-transfer report (`massmodel.vehicle.transfer.build_transfer_report`): one column per condition."""

from __future__ import annotations

from typing import Any

from massmodel.report.summary import table
from massmodel.vehicle.transfer import CORNERS

__all__ = ["format_transfer_report"]


def format_transfer_report(data: dict[str, Any]) -> str:
    """Readable text of :func:`build_transfer_report`: one column per condition."""
    conds = data["conditions"]
    rows = [
        ["a_x g (forward +)", *(f"{c['longitudinal_g']:+.2f}" for c in conds)],
        ["a_y g (left +)", *(f"{c['lateral_g']:+.2f}" for c in conds)],
        ["front axle kg", *(f"{c['axle_loads_kg']['front']:.2f}" for c in conds)],
        ["rear axle kg", *(f"{c['axle_loads_kg']['rear']:.2f}" for c in conds)],
        ["front fraction", *(f"{c['front_fraction']:.4f}" for c in conds)],
    ]
    for key, label in zip(CORNERS, ("FL", "FR", "RL", "RR"), strict=True):
        rows.append([f"corner {label} kg", *(f"{c['corner_loads_kg'][key]:.2f}" for c in conds)])
    rows.append(["front -> rear kg", *(f"{c.get('longitudinal_transfer_kg', 0.0):+.2f}" for c in conds)])
    for axle in ("front", "rear"):
        rows.append([f"{axle} left -> right kg",
                     *(f"{c['lateral_transfer_kg'][axle]:+.2f}" if "lateral_transfer_kg" in c else "+0.00"
                       for c in conds)])
    share = data["front_roll_share"]
    case = f" · load case {data['case']}" if data.get("case", "base") != "base" else ""
    out = [
        f"LOAD TRANSFER (steady state, rigid vehicle) · {data['model']}{case}   ({data['source']})",
        f"mass {data['mass_kg']:.2f} kg · CG {data['cg_height_m']:.4f} m above ground, "
        f"{data['cg_behind_front_axle_m']:.4f} m behind the front axle · wheelbase {data['wheelbase_m']:.4f} m · "
        f"tracks {data['track_m']['front']:.4f} / {data['track_m']['rear']:.4f} m",
        f"front share of the lateral load transfer {share['value']:.4f} ({share['source']})",
        "",
        table(["", *(c["label"] for c in conds)], rows),
    ]
    for c in conds:
        if c.get("wheels_lifted"):
            out.append(f"  WARNING {c['label']}: negative load at {', '.join(c['wheels_lifted'])}: that wheel would "
                       "lift, so the car cannot sustain this acceleration as modelled and the linear result no "
                       "longer holds")
    out += ["", "ASSUMPTIONS", *(f"  - {a}" for a in data["assumptions"])]
    out += ["", "CAUTIONS", *(f"  - {line}" for line in data["cautions"])]
    return "\n".join(out)
