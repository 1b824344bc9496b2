"""Reading the ``[[driver]]`` tables of a model file: a seated driver expanded into body-segment parts.

Syntax in docs/modelfile.md ("Seated driver"); the segment model is :mod:`massmodel.vehicle.driver`. Used by
:mod:`massmodel.modelfile.loader`. Every error names the file, the item (``driver 'PATH'``) and the field.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from massmodel.core.frames import Pose
from massmodel.core.model import Component, MassSource, Maturity, Vehicle
from massmodel.vehicle.driver import (
    SEGMENT_DATA,
    DriverError,
    SeatedPosture,
    seated_segments,
    segment_fractions,
)

from .fields import PALETTE, FieldReader, GroupFrame, colour_of, enclosing_groups, flag, path_of

__all__ = ["DRIVER_FIELDS", "driver_components"]

DRIVER_FIELDS = {"path", "segment_data", "mass", "measured", "stature", "seat_back_angle", "neck_angle", "hip_point",
                 "ankle_point", "wrist_point", "colour", "optional", "note"}
_REQUIRED = ("segment_data", "mass", "stature", "seat_back_angle", "hip_point", "ankle_point", "wrist_point")


def driver_components(
    rd: FieldReader, table: Mapping[str, Any], index: int, groups: Mapping[str, GroupFrame], vehicle: Vehicle | None
) -> list[Component]:
    """The body-segment parts of one ``[[driver]]`` table.

    The points are in the frame of the group ``path`` (the declared groups enclosing it, and ``path`` itself if
    declared, composed as for parts); the vehicle's forward, left and up directions give "vertical" and "rearwards".
    """
    path = path_of(rd, table, "driver", index)
    item = f"driver '{path}'"
    rd.check_fields(table, DRIVER_FIELDS, item)
    for key in _REQUIRED:
        if key not in table:
            raise rd.error(item, key, "is missing")
    if vehicle is None:
        raise rd.error(item, None, "a seated driver needs a [vehicle] section (for the forward and up directions)")
    enclosing = enclosing_groups(f"{path}/segment", groups)
    if any(g.mirror for g in enclosing):
        raise rd.error(item, "path", "a driver cannot lie in a mirrored group (it makes both sides itself)")
    key = table["segment_data"]
    if not isinstance(key, str) or key not in SEGMENT_DATA:
        raise rd.error(item, "segment_data", f"expected one of {', '.join(SEGMENT_DATA)}, got {key!r}")
    data = SEGMENT_DATA[key]
    group_pose = Pose.identity()
    for g in enclosing:
        group_pose = group_pose * g.pose
    to_group = group_pose.linear.T  # model axes -> group axes (a rotation: mirrored groups are refused above)
    posture = SeatedPosture(
        mass=rd.quantity(table["mass"], "mass", item, "mass"),
        stature=rd.quantity(table["stature"], "length", item, "stature"),
        seat_back_angle=rd.quantity(table["seat_back_angle"], "angle", item, "seat_back_angle"),
        hip_point=rd.vector(table["hip_point"], "length", item, "hip_point"),
        ankle_point=rd.vector(table["ankle_point"], "length", item, "ankle_point"),
        wrist_point=rd.vector(table["wrist_point"], "length", item, "wrist_point"),
        forward=to_group @ vehicle.forward,
        left=to_group @ vehicle.left,
        up=to_group @ vehicle.up,
        neck_angle=rd.quantity(table["neck_angle"], "angle", item, "neck_angle") if "neck_angle" in table else None,
    )
    try:
        segments = seated_segments(posture, data)
    except DriverError as exc:
        raise rd.error(item, exc.field, exc.message) from None
    measured = flag(rd, table, "measured", item)
    if "colour" in table:
        colour = colour_of(rd, table["colour"], item)
    else:
        colour = next((g.colour for g in reversed(enclosing) if g.colour is not None), None) or PALETTE[
            sum(map(ord, path.split("/")[0])) % len(PALETTE)]
    extra = rd.text(table, "note", item)
    fractions = segment_fractions(data)
    how = "weighed" if measured else "estimated"
    out = []
    for seg in segments:
        note = (f"seated-driver segment: {100 * fractions[seg.name]:.3f} % of the {how} {posture.mass:.2f} kg "
                f"({data.citation})" + (f"; {extra}" if extra else ""))
        out.append(Component(
            path=f"{path}/{seg.name}", shape=seg.shape, pose=group_pose * seg.pose, source=MassSource.MASS,
            maturity=Maturity.MEASURED if measured else Maturity.ESTIMATED, colour=colour, mass=seg.mass, note=note,
            origin=f"{rd.file}: {item}",
        ))
    return out
