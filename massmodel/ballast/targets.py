"""What a ballast block must reach and whether it fits: the mass the rules need from a new block, denser
materials to suggest, and the packaging check of sized pieces (closed form for a block square to its slot, the
exact OpenCascade check otherwise, loaded only then).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from massmodel.core.materials import Material
from massmodel.core.model import Model, in_group

from .sizing import BlockSizing, PlacedPiece, SizingError

__all__ = ["denser_materials", "RuleNeed", "rules_target", "check_fit", "box_block"]


def denser_materials(material: Material, library: Mapping[str, Material]) -> list[Material]:
    """Materials whose LOWEST density exceeds this material's lowest density, densest last."""
    lo = material.band[0]
    return sorted((m for m in library.values() if m.band[0] > lo and m.key != material.key),
                  key=lambda m: m.band[0])


@dataclass(frozen=True, slots=True)
class RuleNeed:
    """What one mass rule needs from a new ballast part: ``need`` kg (≤ 0 when it already passes with margin)."""

    rule: str
    check: str
    value: float
    limit: float
    margin: float
    need: float
    counts: bool


def rules_target(model: Model, margin: float, part_path: str, remove: Sequence[str] = ()) -> tuple[float, list[RuleNeed]]:
    """Mass a new part at ``part_path`` must add so that every mass minimum passes with ``margin``.

    Parameters
    ----------
    model : Model
        The car.
    margin : float
        kg above each minimum (``min_mass`` and ``min_group_mass`` rules the part counts towards), ≥ 0.
    part_path : str
        Path the new block will have (decides which rules it counts for, e.g. ``chassis/seat/ballast``).
    remove : sequence of str
        Paths of existing parts the block replaces (their mass comes off first).

    Returns
    -------
    target : float
        kg, the largest need over the rules the part counts for (0 when none is short).
    needs : list of RuleNeed
    """
    if not (math.isfinite(margin) and margin >= 0.0):
        raise SizingError(f"margin must be a mass >= 0, got {margin!r} kg", "margin")
    keep = [c for c in model.components if not any(in_group(c.path, r) for r in remove)]
    needs = []
    for rule in model.rules:
        if rule.check.value == "min_mass":
            value = sum(c.props.mass for c in keep if not any(in_group(c.path, g) for g in rule.exclude))
            counts = not any(in_group(part_path, g) for g in rule.exclude)
        elif rule.check.value == "min_group_mass":
            value = sum(c.props.mass for c in keep if any(in_group(c.path, g) for g in rule.groups))
            counts = any(in_group(part_path, g) for g in rule.groups)
        else:
            continue
        limit = float(rule.limit or 0.0)
        needs.append(RuleNeed(rule.name, rule.check.value, float(value), limit, margin, limit + margin - value, counts))
    short = [n.need for n in needs if n.counts and n.need > 0.0]
    return (max(short) if short else 0.0), needs


def check_fit(sizing: BlockSizing, pieces: Sequence[PlacedPiece] | None = None) -> list[Any]:
    """Packaging check of every piece against the slot, with the slot's clearance.

    A block whose axes are the slot's axes (up to order and sign) is checked in closed form
    (:func:`massmodel.cad.boxfit.box_fit`, numpy only) when it lies inside the slot; a plain box also when it does not.
    Otherwise the exact OpenCascade check (:func:`massmodel.cad.contact.fit_in_slot`) runs, loading OCP. Both give the
    same :class:`~massmodel.cad.contact.FitResult`.

    Returns
    -------
    list of FitResult
        One per piece, in order.
    """
    from massmodel.cad.boxfit import box_fit

    env = sizing.envelope
    out = []
    envelope = None
    for piece in (sizing.pieces if pieces is None else pieces):
        fit = box_fit(box_block(piece), env.size, env.pose, env.clearance)
        if fit is None:
            from massmodel.cad.contact import fit_in_slot
            from massmodel.cad.solids import place_solid, slot_solid

            envelope = slot_solid(env.to_slot()) if envelope is None else envelope
            fit = fit_in_slot(place_solid(piece.geometry.to_solid(), piece.pose), envelope, env.clearance)
        out.append(fit)
    return out


def box_block(piece: PlacedPiece) -> Any:
    """The piece as a :class:`massmodel.cad.boxfit.BoxBlock`: its box, pose, and a point of material on each face."""
    from massmodel.cad.boxfit import BoxBlock

    g = piece.geometry
    return BoxBlock(g.size, piece.pose, whole=g.holes is None and g.chamfer is None, face_points=g.face_points())
