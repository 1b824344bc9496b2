"""Reading the ``[chassis]`` section of a model file (syntax in docs/modelfile.md, "Chassis"; method in
docs/chassis.md).

Used by :mod:`massmodel.modelfile.loader` once the parts are built (the roll-axis check needs the sprung CG). Every
error names the file, the item (``[chassis]``, ``[chassis.front]``, ``[chassis.rear]``, ``[chassis.aero]``) and the
field.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from massmodel.core import expr, units
from massmodel.core.model import Component, Vehicle, in_group
from massmodel.vehicle.chassis import (
    DEFAULT_SHARED_SHARE,
    DEFAULT_SHARED_SOURCE,
    AeroSpec,
    AxleSuspension,
    ChassisError,
    ChassisSpec,
    split_mass,
)
from massmodel.vehicle.roll import roll_properties

__all__ = ["CHASSIS_FIELDS", "AXLE_FIELDS", "AERO_FIELDS", "read_chassis"]

CHASSIS_FIELDS = {"unsprung", "shared", "sprung", "shared_unsprung_share", "shared_share_source", "speed", "front",
                  "rear", "aero", "note"}
AXLE_FIELDS = {"roll_centre_height", "roll_stiffness", "spring_rate", "spring_motion_ratio", "bar_rate",
               "bar_motion_ratio", "anti", "cornering_stiffness", "tyre_cornering_stiffness", "tyre_reference_load",
               "tyre_load_sensitivity", "note"}
AERO_FIELDS = {"downforce_coefficient", "drag_coefficient", "reference_area", "air_density", "reference_speed",
               "downforce_at_reference", "drag_at_reference", "front_share", "drag_height", "note"}

# dimension, example text
_STIFFNESS = (units.Dimension(mass=1, time=-2), "60 N/mm")
_ROLL_STIFFNESS = (units.Dimension(mass=1, length=2, time=-2, angle=-1), "450 N*m/deg")
_CORNERING = (units.Dimension(mass=1, length=1, time=-2, angle=-1), "35000 N/rad")
_FORCE = (units.FORCE, "1500 N")
_SPEED = (units.Dimension(length=1, time=-1), "40 m/s")
_AREA = (units.AREA, "1.1 m^2")
_DENSITY = (units.DENSITY, "1.225 kg/m^3")


def _value(rd: Any, table: Mapping[str, Any], key: str, kind: tuple[units.Dimension, str], item: str) -> float:
    """A quantity of a dimension the loader's kinds do not cover, SI (units required)."""
    value = table[key]
    dim, example = kind
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise rd.error(item, key, f"expected a quantity such as '{example}', got {value!r}")
    try:
        q = rd.evaluate(value)
    except (expr.ExpressionError, units.UnitError) as exc:
        raise rd.error(item, key, str(exc).splitlines()[0]) from None
    if q.dim == units.DIMENSIONLESS and q.value == 0.0:
        return 0.0
    if q.dim != dim:
        raise rd.error(item, key, f"expected a quantity such as '{example}', got {value!r} ({q.dim})")
    return float(q.value)


def _number(rd: Any, table: Mapping[str, Any], key: str, item: str, lo: float | None = None,
            hi: float | None = None, positive: bool = False) -> float:
    v = rd.quantity(table[key], "number", item, key)
    if positive and not v > 0.0:
        raise rd.error(item, key, f"must be positive, got {table[key]!r}")
    if (lo is not None and v < lo) or (hi is not None and v > hi):
        raise rd.error(item, key, f"expected a number from {lo:g} to {hi:g}, got {table[key]!r}")
    return v


def _non_negative(rd: Any, table: Mapping[str, Any], key: str, kind: tuple[units.Dimension, str], item: str,
                  positive: bool = False) -> float:
    v = _value(rd, table, key, kind, item)
    if v < 0.0 or (positive and v == 0.0):
        raise rd.error(item, key, f"must be {'positive' if positive else 'zero or positive'}, got {table[key]!r}")
    return v


def _axle(rd: Any, table: Any, name: str) -> AxleSuspension:
    item = f"[chassis.{name}]"
    if not isinstance(table, dict):
        raise rd.error("[chassis]", name, f"expected a table [chassis.{name}]")
    rd.check_fields(table, AXLE_FIELDS, item)
    if "roll_centre_height" not in table:
        raise rd.error(item, "roll_centre_height", "is missing (height of the roll centre above the ground)")
    fields: dict[str, Any] = {"roll_centre_height": rd.quantity(table["roll_centre_height"], "length", item,
                                                                "roll_centre_height")}
    if "roll_stiffness" in table and "spring_rate" in table:
        raise rd.error(item, "roll_stiffness", "give either roll_stiffness or spring_rate (with bar_rate), not both")
    if "roll_stiffness" in table:
        fields["roll_stiffness"] = _non_negative(rd, table, "roll_stiffness", _ROLL_STIFFNESS, item)
    elif "spring_rate" in table:
        fields["spring_rate"] = _non_negative(rd, table, "spring_rate", _STIFFNESS, item, positive=True)
    else:
        raise rd.error(item, "spring_rate", "is missing: give spring_rate (with spring_motion_ratio) or "
                                            "roll_stiffness")
    for key in ("spring_motion_ratio", "bar_motion_ratio"):
        if key in table:
            fields[key] = _number(rd, table, key, item, positive=True)
    if "bar_rate" in table:
        fields["bar_rate"] = _non_negative(rd, table, "bar_rate", _STIFFNESS, item)
    if "anti" in table:
        fields["anti"] = _number(rd, table, "anti", item, 0.0, 1.0)
    if "cornering_stiffness" in table and "tyre_cornering_stiffness" in table:
        raise rd.error(item, "cornering_stiffness", "give either the axle's cornering_stiffness or the tyre's "
                                                    "tyre_cornering_stiffness, not both")
    if "cornering_stiffness" in table:
        fields["cornering_stiffness"] = _non_negative(rd, table, "cornering_stiffness", _CORNERING, item, True)
    if "tyre_cornering_stiffness" in table:
        fields["tyre_cornering_stiffness"] = _non_negative(rd, table, "tyre_cornering_stiffness", _CORNERING, item,
                                                           True)
        if "tyre_reference_load" not in table:
            raise rd.error(item, "tyre_reference_load", "is missing (the load at which tyre_cornering_stiffness "
                                                        "holds)")
        fields["tyre_reference_load"] = _non_negative(rd, table, "tyre_reference_load", _FORCE, item, True)
        if "tyre_load_sensitivity" in table:
            fields["tyre_load_sensitivity"] = _number(rd, table, "tyre_load_sensitivity", item, 0.0, 1.0)
    else:
        for key in ("tyre_reference_load", "tyre_load_sensitivity"):
            if key in table:
                raise rd.error(item, key, "needs tyre_cornering_stiffness")
    return AxleSuspension(**fields)


def _aero(rd: Any, table: Any) -> AeroSpec:
    item = "[chassis.aero]"
    if not isinstance(table, dict):
        raise rd.error("[chassis]", "aero", "expected a table [chassis.aero]")
    rd.check_fields(table, AERO_FIELDS, item)
    coeff = [k for k in ("downforce_coefficient", "drag_coefficient", "reference_area") if k in table]
    ref = [k for k in ("reference_speed", "downforce_at_reference", "drag_at_reference") if k in table]
    if coeff and ref:
        raise rd.error(item, ref[0], "give either coefficients with reference_area and air_density, or loads at a "
                                     "reference speed, not both")
    if ref:
        for k in ("reference_speed", "downforce_at_reference", "drag_at_reference"):
            if k not in table:
                raise rd.error(item, k, "is missing (loads at a reference speed need all three)")
        v = _non_negative(rd, table, "reference_speed", _SPEED, item, positive=True)
        down = _value(rd, table, "downforce_at_reference", _FORCE, item)
        drag = _non_negative(rd, table, "drag_at_reference", _FORCE, item)
        factors = (down / v**2, drag / v**2)
        basis = f"loads at {v:.2f} m/s scaled by speed squared"
    else:
        for k in ("downforce_coefficient", "drag_coefficient", "reference_area", "air_density"):
            if k not in table:
                raise rd.error(item, k, "is missing (give coefficients, reference_area and air_density, or "
                                        "reference_speed with downforce_at_reference and drag_at_reference)")
        area = _non_negative(rd, table, "reference_area", _AREA, item, positive=True)
        rho = _non_negative(rd, table, "air_density", _DENSITY, item, positive=True)
        cz = rd.quantity(table["downforce_coefficient"], "number", item, "downforce_coefficient")
        cx = _number(rd, table, "drag_coefficient", item, 0.0, 10.0)
        factors = (0.5 * rho * cz * area, 0.5 * rho * cx * area)
        basis = f"coefficients: C_z {cz:g}, C_x {cx:g}, area {area:g} m^2, air density {rho:g} kg/m^3"
    for k in ("front_share", "drag_height"):
        if k not in table:
            raise rd.error(item, k, "is missing")
    share = _number(rd, table, "front_share", item, 0.0, 1.0)
    height = rd.quantity(table["drag_height"], "length", item, "drag_height")
    return AeroSpec(factors[0], factors[1], share, height, basis)


def _paths(rd: Any, table: Mapping[str, Any], key: str, components: Sequence[Component]) -> tuple[str, ...]:
    value = table.get(key, [])
    if not isinstance(value, list) or not all(isinstance(p, str) and p for p in value):
        raise rd.error("[chassis]", key, f"expected a list of part or group paths, got {value!r}")
    for k, path in enumerate(value):
        if not any(in_group(c.path, path) for c in components):
            raise rd.error("[chassis]", f"{key}[{k}]", f"no part lies at or under '{path}'")
    return tuple(value)


def read_chassis(rd: Any, table: Any, vehicle: Vehicle | None, components: Sequence[Component]) -> ChassisSpec | None:
    """The :class:`ChassisSpec` of a ``[chassis]`` table (None when the file has none).

    ``rd`` is the loader's value reader (file, units and parameters); ``components`` are the model's parts (in the
    load case being built), used to check the paths and that the roll axis lies below the sprung CG.
    """
    if table is None:
        return None
    item = "[chassis]"
    if not isinstance(table, dict):
        raise rd.error(item, None, "must be a table")
    if vehicle is None:
        raise rd.error(item, None, "needs a [vehicle] section (wheelbase, tracks, ground level)")
    rd.check_fields(table, CHASSIS_FIELDS, item)
    for name in ("front", "rear"):
        if name not in table:
            raise rd.error(item, name, f"is missing: give the [chassis.{name}] table")
    share, source = DEFAULT_SHARED_SHARE, DEFAULT_SHARED_SOURCE
    if "shared_unsprung_share" in table:
        share = _number(rd, table, "shared_unsprung_share", item, 0.0, 1.0)
        text = rd.text(table, "shared_share_source", item)
        if not text or not text.strip():
            raise rd.error(item, "shared_share_source", "is missing: say where the unsprung share of the links "
                                                        "comes from (a measurement, a source, or 'common practice, "
                                                        "no source')")
        source = text.strip()
    elif "shared_share_source" in table:
        raise rd.error(item, "shared_share_source", "needs shared_unsprung_share")
    speed = None
    if "speed" in table:
        speed = _non_negative(rd, table, "speed", _SPEED, item, positive=True)
    front, rear = _axle(rd, table["front"], "front"), _axle(rd, table["rear"], "rear")
    if front.has_cornering_stiffness != rear.has_cornering_stiffness:
        missing = "rear" if front.has_cornering_stiffness else "front"
        raise rd.error(f"[chassis.{missing}]", "cornering_stiffness",
                       "is missing: the other axle has one, and the single-track model needs both")
    spec = ChassisSpec(
        front=front, rear=rear,
        unsprung=_paths(rd, table, "unsprung", components),
        shared=_paths(rd, table, "shared", components),
        sprung=_paths(rd, table, "sprung", components),
        shared_share=share, shared_source=source,
        aero=_aero(rd, table["aero"]) if "aero" in table else None,
        speed=speed, source=rd.file,
    )
    try:
        roll_properties(split_mass(components, vehicle, spec), vehicle, spec)
    except ChassisError as exc:
        raise rd.error(exc.item, exc.field, exc.message) from None
    return spec
