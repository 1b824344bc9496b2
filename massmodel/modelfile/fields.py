"""The fields of a model file: its values converted to SI (quantities, points, poses, shapes), and the small
tables shared by parts, groups and seated drivers (paths, colours, maturity, flags, enclosing groups).

Used by :mod:`massmodel.modelfile.loader`, :mod:`massmodel.modelfile.parts`, :mod:`massmodel.modelfile.driver` and
:mod:`massmodel.modelfile.cases`; it imports only the file layer (:mod:`massmodel.modelfile.reader`) and the core.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import expr, units
from massmodel.core.frames import Pose, RotationKind, rotation_from_sequence
from massmodel.core.model import Maturity
from massmodel.core.shapes import SHAPE_KINDS, ShapeError

from .reader import ModelFileError, TableReader, expression_message, magnitude_problem, table_source

__all__ = ["FieldReader", "GroupFrame", "expression_message", "shape_keys", "maturity_of", "colour_of", "path_of",
           "group_frames", "flag", "enclosing_groups", "SHAPE_FILE_FIELDS", "PALETTE", "UNIT_KINDS"]

TOP_LEVEL_KEYS = {"model", "units", "parameters", "vehicle", "materials", "group", "part", "slot", "rule", "case",
                  "driver", "allowed_contact", "uncertainty", "chassis"}
UNIT_KINDS: dict[str, units.Dimension] = {
    "length": units.LENGTH,
    "mass": units.MASS,
    "angle": units.ANGLE,
    "density": units.DENSITY,
    "inertia": units.INERTIA,
}
KIND_EXAMPLE = {"length": "250 mm", "mass": "2.1 kg", "angle": "5 deg", "density": "7850 kg/m^3",
                "inertia": "0.35 kg*m^2", "number": "0.42"}

# File fields of each shape kind: name → "length" | "vector3" (split into *_x/_y/_z) | "polygon".
SHAPE_FILE_FIELDS: dict[str, dict[str, str]] = {
    "box": {"size": "vector3"},
    "cylinder": {"radius": "length", "length": "length"},
    "tube": {"outer_radius": "length", "inner_radius": "length", "length": "length"},
    "sphere": {"radius": "length"},
    "spherical_shell": {"outer_radius": "length", "inner_radius": "length"},
    "hemisphere": {"radius": "length"},
    "cone": {"radius": "length", "height": "length"},
    "frustum": {"base_radius": "length", "top_radius": "length", "height": "length"},
    "wedge": {"leg_x": "length", "leg_y": "length", "length": "length"},
    "extrusion": {"vertices": "polygon", "thickness": "length"},
    "torus": {"ring_radius": "length", "tube_radius": "length"},
    "ellipsoid": {"semi_x": "length", "semi_y": "length", "semi_z": "length"},
    "point": {},
    "step": {"file": "file", "unit": "unit"},
    "mesh": {"file": "file", "unit": "unit"},
}
FILE_SHAPE_KINDS = ("step", "mesh")  # geometry read from a file (massmodel.cad.imported), resolved from the model's folder
PLACEMENT_FIELDS = {"at", "rotate"}
PART_FIELDS = {"path", "shape", "material", "density", "mass", "measured", "colour", "maturity", "cut", "mirror",
               "pattern", "slot", "note", "optional"} | PLACEMENT_FIELDS
GROUP_FIELDS = {"path", "colour", "maturity", "mirror", "note", "optional"} | PLACEMENT_FIELDS
SLOT_FIELDS = {"name", "shape", "clearance", "note"} | PLACEMENT_FIELDS
CONTACT_FIELDS = {"between", "note"}
RULE_FIELDS = {"name", "check", "limit", "min", "max", "groups", "exclude", "axle", "note", "case", "reference", "band"}
VEHICLE_FIELDS = {"axes", "wheelbase", "track_front", "track_rear", "front_axle_station", "ground_level"}
MODEL_FIELDS = {"name", "description", "rulebook", "extends", "remove"}
AXIS_NAMES = ("forward", "left", "up")

# Colours given to parts with none, by top-level group (sorted), cycling. Muted, distinguishable hues.
PALETTE = ("#5b7fa6", "#b0704f", "#6d9a62", "#a3628e", "#c2a25a", "#4f9a9a", "#8c7bb8", "#9a9a6a",
           "#c07a7a", "#6a8fbf")
AXES_RE = re.compile(r"[xyz]{1,3}")
PATH_RE = re.compile(r"^[A-Za-z0-9_.\-]+(/[A-Za-z0-9_.\-]+)*$")
COLOUR_RE = re.compile(r"^#[0-9a-fA-F]{6}$")


@dataclass
class GroupFrame:
    """A declared group: its pose in its parent group and what its parts inherit."""


    pose: Pose
    colour: str | None
    maturity: Maturity | None
    mirror: bool
    optional: bool = False



class FieldReader(TableReader):
    """Converts the values of one model file (or rulebook) to SI, raising errors naming the file, item and field."""

    error_type = ModelFileError

    def __init__(self, file: str, defaults: Mapping[str, float], env: Mapping[str, units.Quantity],
                 base_dir: Path | None = None, cache: dict[str | float, units.Quantity] | None = None) -> None:
        super().__init__(file)
        self.defaults = defaults
        self.env = env
        self.base_dir = Path(file).parent if base_dir is None else base_dir  # geometry files resolve from here
        # expression text -> value: the parameters are fixed while a file is read, so each text is evaluated once;
        # (value, kind) -> SI float for values already accepted as that kind
        self.cache: dict[str | float, units.Quantity] = {} if cache is None else cache
        self.si: dict[tuple[str | float, str], float] = {}
        self.rotations: dict[tuple[str, str, tuple[float, ...]], np.ndarray] = {}

    def for_table(self, table: dict[str, Any]) -> FieldReader:
        """The reader for a table merged from a base file (errors then name that file, geometry paths resolve from
        its folder)."""
        source = table_source(table)
        if source is None:
            return self
        other = FieldReader(source, self.defaults, self.env, Path(source).parent, self.cache)
        other.si, other.rotations = self.si, self.rotations
        return other

    def evaluate(self, value: int | float | str) -> units.Quantity:
        """The value of a number or an expression text (remembered per text or number; bools are refused
        before this)."""
        q = self.cache.get(value)  # type: ignore[call-overload]
        if q is None:
            q = self.cache[value] = expr.evaluate(value, self.env)
        return q

    def quantity(self, value: Any, kind: str, item: str, field: str) -> float:
        """A scalar of the given kind ('length', 'mass', 'angle', 'density', 'inertia', 'number'), SI."""
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            article = "an" if kind[0] in "aeiou" else "a"
            raise self.error(item, field, f"expected {article} {kind} such as '{KIND_EXAMPLE[kind]}', got {value!r}")
        known = self.si.get((value, kind))
        if known is not None:
            return known
        plain = _plain_number(value) if kind in self.defaults else None
        if plain is not None:  # a finite number in the file's unit of this kind: what the expression path gives
            result = 0.0 if plain == 0.0 else plain * self.defaults[kind]
        else:
            result = self._evaluated(value, kind, item, field)
        problem = magnitude_problem(result, kind, value)
        if problem:
            raise self.error(item, field, problem)
        result = float(result)
        self.si[(value, kind)] = result
        return result

    def _evaluated(self, value: int | float | str, kind: str, item: str, field: str) -> float:
        """The SI value of a scalar of ``kind`` through the expression evaluator (units, parameters, checks of
        the dimension)."""
        try:
            q = self.evaluate(value)
        except (expr.ExpressionError, units.UnitError) as exc:
            raise self.error(item, field, expression_message(exc)) from None
        if kind == "number":
            if not q.dim == units.DIMENSIONLESS:
                raise self.error(item, field, f"expected a plain number, got a quantity in {q.dim}")
            result = q.value
        else:
            want = UNIT_KINDS[kind]
            if q.dim == units.DIMENSIONLESS and q.value == 0.0:
                result = 0.0  # zero means the same in every unit
            elif q.dim == units.DIMENSIONLESS:
                if kind not in self.defaults:
                    raise self.error(
                        item, field,
                        f"{value!r} has no unit and the file declares no default {kind} unit in [units]; "
                        f"write it like '{KIND_EXAMPLE[kind]}'",
                    )
                result = q.value * self.defaults[kind]
            elif q.dim == want:
                result = q.value
            else:
                article = "an" if kind[0] in "aeiou" else "a"
                raise self.error(item, field, f"expected {article} {kind} ({want}), got {value!r} in {q.dim}")
        return result

    def vector(self, value: Any, kind: str, item: str, field: str, n: int = 3) -> np.ndarray:
        """``n`` scalars of ``kind`` written in any form of :func:`massmodel.modelfile.reader.split_vector`."""
        what = "point" if n == 3 else "vector"
        return np.array([self.scalar(v, kind, item, field, i) for i, v in enumerate(self.entries(value, n, item, field, what))])

    def scalar(self, value: Any, kind: str, item: str, field: str, index: int) -> float:
        """Entry ``index`` of a list field (the field name ``field[index]`` is made only for an error)."""
        known = self.si.get((value, kind)) if isinstance(value, (int, float, str)) else None
        if known is not None and not isinstance(value, bool):
            return known
        return self.quantity(value, kind, item, f"{field}[{index}]")

    def text(self, table: Mapping[str, Any], key: str, item: str, required: bool = False) -> str | None:
        if key not in table:
            if required:
                raise self.error(item, key, "is missing")
            return None
        value = table[key]
        if not isinstance(value, str) or not value.strip():
            raise self.error(item, key, f"expected non-empty text, got {value!r}")
        return value

    def pose(self, table: Mapping[str, Any], item: str, prefix: str = "") -> Pose:
        """``at`` and ``rotate`` of a table (field names in errors start with ``prefix``, e.g. ``cut[0].``)."""
        # the position is finite (checked value by value) and the matrix a product of rotations: a valid pose
        at = self.vector(table["at"], "length", item, prefix + "at") if "at" in table else np.zeros(3)
        if "rotate" not in table:
            return Pose._trusted(np.eye(3), at)
        rot = table["rotate"]
        if not isinstance(rot, dict):
            raise self.error(item, prefix + "rotate", "expected a table like { extrinsic = \"xyz\", angles = [...] }")
        kinds = [k for k in ("extrinsic", "intrinsic") if k in rot]
        extra = set(rot) - {"extrinsic", "intrinsic", "angles"}
        if len(kinds) != 1 or extra or "angles" not in rot:
            raise self.error(
                item, "rotate",
                "give exactly one of 'extrinsic' or 'intrinsic' (an axis sequence such as \"xyz\") and 'angles'",
            )
        axes = rot[kinds[0]]
        if not isinstance(axes, str) or not AXES_RE.fullmatch(axes):
            raise self.error(item, f"{prefix}rotate.{kinds[0]}", f"expected 1-3 letters from 'xyz', got {axes!r}")
        angles = rot["angles"]
        if not isinstance(angles, list) or len(angles) != len(axes):
            raise self.error(item, prefix + "rotate.angles", f"expected {len(axes)} angles for sequence '{axes}'")
        values = tuple(self.scalar(a, "angle", item, prefix + "rotate.angles", i) for i, a in enumerate(angles))
        key = (kinds[0], axes, values)
        known = self.rotations.get(key)
        if known is None:  # the same rotation recurs often (read-only, so poses may share it)
            known = rotation_from_sequence(RotationKind(kinds[0]), axes, values)
            known.setflags(write=False)
            self.rotations[key] = known
        return Pose._trusted(known, at)

    def shape_kind(self, table: Mapping[str, Any], item: str, prefix: str = "") -> str:
        kind = table.get("shape")
        if not isinstance(kind, str) or kind not in SHAPE_FILE_FIELDS:
            raise self.error(item, prefix + "shape", f"expected one of {', '.join(SHAPE_FILE_FIELDS)}, got {kind!r}")
        return kind

    def shape(self, table: Mapping[str, Any], item: str, prefix: str = "") -> Any:
        kind = self.shape_kind(table, item, prefix)
        if kind in FILE_SHAPE_KINDS:
            return self.file_shape(kind, table, item, prefix)
        kwargs: dict[str, Any] = {}
        for name, how in SHAPE_FILE_FIELDS[kind].items():
            if name not in table:
                raise self.error(item, prefix + name, f"is missing (a {kind} needs {', '.join(SHAPE_FILE_FIELDS[kind])})")
            value = table[name]
            if how == "length":
                kwargs[name] = self.quantity(value, "length", item, prefix + name)
            elif how == "vector3":
                v = self.vector(value, "length", item, prefix + name)
                kwargs.update({f"{name}_x": v[0], f"{name}_y": v[1], f"{name}_z": v[2]})
            else:
                if not isinstance(value, list) or len(value) < 3:
                    raise self.error(item, prefix + name, "expected a list of at least 3 [x, y] vertices")
                kwargs[name] = tuple(
                    tuple(float(c) for c in self.vector(v, "length", item, f"{prefix}{name}[{i}]", n=2))
                    for i, v in enumerate(value)
                )
        try:
            return SHAPE_KINDS[kind](**kwargs)
        except ShapeError as exc:
            field = getattr(exc, "field", None)
            message = str(exc)
            if field and field[-2:] in ("_x", "_y", "_z") and SHAPE_FILE_FIELDS[kind].get(field[:-2]) == "vector3":
                own = field
                field = f"{field[:-2]}[{'xyz'.index(field[-1])}]"  # name the file's field: size_y -> size[1]
                message = message.replace(own, field)
            raise self.error(item, prefix + (field or "shape"), message) from None


    def file_shape(self, kind: str, table: Mapping[str, Any], item: str, prefix: str = "") -> Any:
        """A STEP or mesh shape: ``file`` (relative to the model file's folder) and its declared length ``unit``."""
        from massmodel.cad.imported import shape_from_fields

        try:
            return shape_from_fields(kind, table, self.base_dir)
        except ShapeError as exc:
            raise self.error(item, prefix + (getattr(exc, "field", None) or "file"), str(exc)) from None


def _plain_number(value: Any) -> float | None:
    """A TOML integer or float as a finite float (as :func:`massmodel.core.expr.evaluate` reads it), or None for
    anything else (texts, bools, numbers too large to be finite: the evaluator judges those)."""
    if type(value) is not float and type(value) is not int:
        return None
    try:
        number = float(value)
    except OverflowError:
        return None
    return number if math.isfinite(number) else None


def shape_keys(kind: Any) -> set[str]:
    return set(SHAPE_FILE_FIELDS.get(kind, {})) if isinstance(kind, str) else set()


def maturity_of(rd: FieldReader, value: Any, item: str) -> Maturity:
    try:
        return Maturity(value)
    except ValueError:
        raise rd.error(item, "maturity", f"expected one of {', '.join(m.value for m in Maturity)}, got {value!r}") from None


def colour_of(rd: FieldReader, value: Any, item: str) -> str:
    if not isinstance(value, str) or not COLOUR_RE.match(value):
        raise rd.error(item, "colour", f"expected '#rrggbb', got {value!r}")
    return value.lower()


def path_of(rd: FieldReader, table: Any, what: str, index: int) -> str:
    """The ``path`` of entry ``index`` of the ``[[what]]`` tables (an entry that is not a table is refused here)."""
    if not isinstance(table, dict):
        raise rd.error(f"{what} #{index + 1}", None, f"expected a table, got {table!r:.60}; write each entry as a "
                                                     f"[[{what}]] table")
    path = table.get("path")
    if not isinstance(path, str) or not PATH_RE.match(path):
        raise rd.error(f"{what} #{index + 1}", "path",
                       f"expected a path like 'suspension/front/left/upright', got {path!r}")
    return path


def group_frames(rd: FieldReader, tables: Any) -> dict[str, GroupFrame]:
    out: dict[str, GroupFrame] = {}
    if not isinstance(tables, list):
        raise rd.error("[[group]]", None, "write each group as a [[group]] table")
    for i, table in enumerate(tables):
        g = rd.for_table(table)
        path = path_of(g, table, "group", i)
        item = f"group '{path}'"
        g.check_fields(table, GROUP_FIELDS, item)
        if path in out:
            raise g.error(item, "path", "group declared twice")
        out[path] = GroupFrame(
            pose=g.pose(table, item),
            colour=colour_of(g, table["colour"], item) if "colour" in table else None,
            maturity=maturity_of(g, table["maturity"], item) if "maturity" in table else None,
            mirror=flag(g, table, "mirror", item),
            optional=flag(g, table, "optional", item),
        )
    return out


def flag(rd: FieldReader, table: Mapping[str, Any], key: str, item: str) -> bool:
    value = table.get(key, False)
    if not isinstance(value, bool):
        raise rd.error(item, key, f"expected true or false, got {value!r}")
    return value


def enclosing_groups(path: str, groups: Mapping[str, GroupFrame]) -> list[GroupFrame]:
    """Declared groups containing ``path``, outermost first."""
    segs = path.split("/")
    return [groups[g] for g in ("/".join(segs[:k]) for k in range(1, len(segs))) if g in groups]

