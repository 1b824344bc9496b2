"""Load and validate massmodel model files (TOML, format 1; see docs/modelfile.md).

This is the edge where units are converted: everything past :func:`load_model` is SI. Every error names the file,
the item and the field (:class:`ModelFileError`).
"""

from __future__ import annotations

import copy
import gc
import math
import re
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import expr, units
from massmodel.core.frames import Pose, RotationKind, reflection_across_plane, rotation_from_sequence
from massmodel.core.loadcases import BASE_CASE
from massmodel.core.massprops import InertiaError
from massmodel.core.materials import Material, MaterialError, builtin_materials, material_from_fields
from massmodel.core.model import (
    AllowedContact,
    Component,
    Cutout,
    MassSource,
    Maturity,
    Model,
    Rule,
    RuleCheck,
    Slot,
    Vehicle,
    in_group,
)
from massmodel.core.shapes import MAX_LENGTH_M, SHAPE_KINDS, ShapeError

from . import cases as modelfile_cases
from . import chassis as modelfile_chassis
from . import driver as modelfile_driver
from .reader import SOURCE_KEY, ModelFileError, parse_toml, read_toml, resolve_extends

__all__ = ["ModelFileError", "ModelSource", "build_model", "load_model", "loads_model", "load_case_models", "read_source",
           "source_from_text", "SHAPE_FILE_FIELDS", "PALETTE"]

TOP_LEVEL_KEYS = {"model", "units", "parameters", "vehicle", "materials", "group", "part", "slot", "rule", "case",
                  "driver", "allowed_contact", "chassis"}
UNIT_KINDS: dict[str, units.Dimension] = {
    "length": units.LENGTH,
    "mass": units.MASS,
    "angle": units.ANGLE,
    "density": units.DENSITY,
    "inertia": units.INERTIA,
}
KIND_EXAMPLE = {"length": "250 mm", "mass": "2.1 kg", "angle": "5 deg", "density": "7850 kg/m^3",
                "inertia": "0.35 kg*m^2", "number": "0.42"}

#: Largest magnitude accepted per kind (SI value, unit): far beyond any car, and small enough that squares and
#: products of them (parallel-axis terms, inertia sums) stay finite instead of overflowing without a field's name.
MAGNITUDE_LIMITS: dict[str, tuple[float, str]] = {
    "length": (MAX_LENGTH_M, "m"), "mass": (1.0e9, "kg"), "density": (1.0e6, "kg/m^3"), "inertia": (1.0e12, "kg*m^2"),
}

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
RULE_FIELDS = {"name", "check", "limit", "min", "max", "groups", "exclude", "axle", "note", "case"}
VEHICLE_FIELDS = {"axes", "wheelbase", "track_front", "track_rear", "front_axle_station", "ground_level"}
MODEL_FIELDS = {"name", "description", "rulebook", "extends", "remove"}
AXIS_NAMES = ("forward", "left", "up")

# Colours given to parts with none, by top-level group (sorted), cycling. Muted, distinguishable hues.
PALETTE = ("#5b7fa6", "#b0704f", "#6d9a62", "#a3628e", "#c2a25a", "#4f9a9a", "#8c7bb8", "#9a9a6a",
           "#c07a7a", "#6a8fbf")
_AXES_RE = re.compile(r"[xyz]{1,3}")
_PATH_RE = re.compile(r"^[A-Za-z0-9_.\-]+(/[A-Za-z0-9_.\-]+)*$")
_COLOUR_RE = re.compile(r"^#[0-9a-fA-F]{6}$")


@dataclass
class _Group:
    pose: Pose
    colour: str | None
    maturity: Maturity | None
    mirror: bool
    optional: bool = False


class _Reader:
    """Converts TOML values of one file to SI, raising errors with file/item/field context."""

    def __init__(self, file: str, defaults: Mapping[str, float], env: Mapping[str, units.Quantity],
                 base_dir: Path | None = None, cache: dict[str | float, units.Quantity] | None = None) -> None:
        self.file = file
        self.defaults = defaults
        self.env = env
        self.base_dir = Path(file).parent if base_dir is None else base_dir  # geometry files resolve from here
        # expression text -> value: the parameters are fixed while a file is read, so each text is evaluated once;
        # (value, kind) -> SI float for values already accepted as that kind
        self.cache: dict[str | float, units.Quantity] = {} if cache is None else cache
        self.si: dict[tuple[str | float, str], float] = {}
        self.rotations: dict[tuple[str, str, tuple[float, ...]], np.ndarray] = {}

    def for_table(self, table: dict[str, Any]) -> _Reader:
        """The reader for a table merged from a base file (errors then name that file, geometry paths resolve from
        its folder); pops the marker."""
        source = table.pop(SOURCE_KEY, None)
        if source is None:
            return self
        other = _Reader(source, self.defaults, self.env, Path(source).parent, self.cache)
        other.si, other.rotations = self.si, self.rotations
        return other

    def evaluate(self, value: int | float | str) -> units.Quantity:
        """The value of a number or an expression text (remembered per text or number; bools are refused
        before this)."""
        q = self.cache.get(value)  # type: ignore[call-overload]
        if q is None:
            q = self.cache[value] = expr.evaluate(value, self.env)
        return q

    def error(self, item: str | None, field: str | None, message: str) -> ModelFileError:
        return ModelFileError(self.file, item, field, message)

    def quantity(self, value: Any, kind: str, item: str, field: str) -> float:
        """A scalar of the given kind ('length', 'mass', 'angle', 'density', 'inertia', 'number'), SI."""
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            article = "an" if kind[0] in "aeiou" else "a"
            raise self.error(item, field, f"expected {article} {kind} such as '{KIND_EXAMPLE[kind]}', got {value!r}")
        known = self.si.get((value, kind))
        if known is not None:
            return known
        try:
            q = self.evaluate(value)
        except (expr.ExpressionError, units.UnitError) as exc:
            raise self.error(item, field, _one_line(exc)) from None
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
        if not math.isfinite(result):
            raise self.error(item, field, f"{value!r} is not a finite number")
        limit = MAGNITUDE_LIMITS.get(kind)
        if limit is not None and abs(result) > limit[0]:
            raise self.error(item, field, f"{value!r} is {abs(result):g} {limit[1]}; no part of a car comes near "
                                          f"that (the limit is {limit[0]:g} {limit[1]})")
        result = float(result)
        self.si[(value, kind)] = result
        return result

    def vector(self, value: Any, kind: str, item: str, field: str, n: int = 3) -> np.ndarray:
        if not isinstance(value, list) or len(value) != n:
            raise self.error(item, field, f"expected a list of {n} values, got {value!r}")
        return np.array([self.scalar(v, kind, item, field, i) for i, v in enumerate(value)])

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

    def check_fields(self, table: Mapping[str, Any], allowed: set[str], item: str) -> None:
        unknown = sorted(set(table) - allowed)
        if unknown:
            raise self.error(item, unknown[0], f"unknown field; allowed: {', '.join(sorted(allowed))}")

    def pose(self, table: Mapping[str, Any], item: str, prefix: str = "") -> Pose:
        """``at`` and ``rotate`` of a table (field names in errors start with ``prefix``, e.g. ``cut[0].``)."""
        # the position is finite (checked value by value) and the matrix a product of rotations: a valid pose
        at = self.vector(table["at"], "length", item, prefix + "at") if "at" in table else np.zeros(3)
        linear = np.eye(3)
        if "rotate" in table:
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
            if not isinstance(axes, str) or not _AXES_RE.fullmatch(axes):
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
            linear = known
        return Pose._trusted(linear, at)

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


def _one_line(exc: Exception) -> str:
    """An expression error as one line: the message, then where in the text it is."""
    if isinstance(exc, expr.ExpressionError):
        where = f" (in '{exc.text}'" if exc.text else ""
        if where and exc.position is not None:
            where += f", at character {exc.position + 1}"
        return exc.message + (where + ")" if where else "")
    return str(exc)


def _shape_keys(kind: Any) -> set[str]:
    return set(SHAPE_FILE_FIELDS.get(kind, {})) if isinstance(kind, str) else set()


def _swap_side(path: str) -> str | None:
    segs = path.split("/")
    swapped = [{"left": "right", "right": "left"}.get(s, s) for s in segs]
    return "/".join(swapped) if swapped != segs else None


@dataclass(frozen=True)
class ModelSource:
    """A model file read once: its TOML tables with every ``extends`` merged, ready to be evaluated many times.

    Build models from it with :func:`build_model` (any parameter overrides, any load case) without reading or
    parsing the file again — what-if studies and sweeps re-evaluate the same source.

    Attributes
    ----------
    data : dict
        The merged tables (treat as read-only; :func:`build_model` works on a copy).
    label : str
        The file name used in messages.
    base_dir : Path
        Folder that relative file references (STEP and mesh shapes, rulebooks) resolve against.
    """

    data: dict[str, Any]
    label: str
    base_dir: Path


def read_source(path: str | Path) -> ModelSource:
    """Read and parse a model file once (``extends`` merged); see :class:`ModelSource`.

    Raises
    ------
    ModelFileError
        Naming the file, the item and the field.
    """
    p = Path(path)
    data = resolve_extends(read_toml(p, str(path)), str(path), p.parent, chain=(p.resolve(),))
    return ModelSource(data, str(path), p.parent)


def source_from_text(text: str, *, label: str = "<text>", base_dir: str | Path = ".") -> ModelSource:
    """Like :func:`read_source`, from a string (for tests and tools)."""
    data = resolve_extends(parse_toml(text, label), label, Path(base_dir), chain=())
    return ModelSource(data, label, Path(base_dir))


def build_model(
    source: ModelSource, overrides: Mapping[str, str] | None = None, case: str | None = None
) -> Model:
    """Evaluate a read model file with parameter overrides in one load case (None or ``"base"``: the base model).

    Parameters
    ----------
    source : ModelSource
        From :func:`read_source` or :func:`source_from_text`.
    overrides : mapping, optional
        Parameter name → expression text, replacing the file's definitions (``--set name=value``); applied after
        the load case's own overrides.
    case : str, optional
        A load case of the file (``[[case]]``).

    Raises
    ------
    ModelFileError
        Naming the file, the item and the field.
    """
    with _collector_paused():
        return _build_case(copy.deepcopy(source.data), label=source.label, base_dir=source.base_dir,
                           overrides=overrides, case=case)


def load_model(path: str | Path, overrides: Mapping[str, str] | None = None, case: str | None = None) -> Model:
    """Read a model file.

    Parameters
    ----------
    path : str or Path
        The TOML model file.
    overrides : mapping, optional
        Parameter name → expression text, replacing the file's definitions (``--set name=value``); applied after
        the load case's own overrides.
    case : str, optional
        A load case of the file (``[[case]]``); None or ``"base"`` for the model as the file describes it.

    Returns
    -------
    Model
        SI throughout, mirrors and patterns expanded; ``model.case`` names the case.

    Raises
    ------
    ModelFileError
        Naming the file, the item and the field.
    """
    p = Path(path)
    with _collector_paused():
        data = resolve_extends(read_toml(p, str(path)), str(path), p.parent, chain=(p.resolve(),))
        return _build_case(data, label=str(path), base_dir=p.parent, overrides=overrides, case=case)


@contextmanager
def _collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector while a model is built: tens of thousands of new objects (none of
    them in reference cycles) would otherwise trigger repeated full collections (about a fifth of the load time of
    a 10,000-part file). Reference counting still frees everything; the collector is restored afterwards."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def loads_model(
    text: str,
    *,
    label: str = "<text>",
    base_dir: str | Path = ".",
    overrides: Mapping[str, str] | None = None,
    case: str | None = None,
) -> Model:
    """Like :func:`load_model`, from a string (for tests and tools)."""
    data = parse_toml(text, label)
    with _collector_paused():
        data = resolve_extends(data, label, Path(base_dir), chain=())
        return _build_case(data, label=label, base_dir=Path(base_dir), overrides=overrides, case=case)


def load_case_models(path: str | Path, overrides: Mapping[str, str] | None = None) -> dict[str, Model]:
    """The base model and the model of every load case of a file, read once.

    Returns
    -------
    dict of str to Model
        ``"base"`` first, then the cases in file order.
    """
    source = read_source(path)
    base = build_model(source, overrides, None)
    out = {BASE_CASE: base}
    for c in base.load_cases:
        out[c.name] = build_model(source, overrides, c.name)
    return out


def _build_case(
    data: dict[str, Any], *, label: str, base_dir: Path, overrides: Mapping[str, str] | None, case: str | None
) -> Model:
    """:func:`_build`, naming the load case in any error met while building it."""
    try:
        return _build(data, label=label, base_dir=base_dir, overrides=overrides, case=case)
    except ModelFileError as exc:
        if case is None or case == BASE_CASE or exc.item == f"case '{case}'":
            raise
        raise ModelFileError(exc.file, exc.item, exc.field, f"{exc.message} (in load case '{case}')") from None


def _build(
    data: dict[str, Any], *, label: str, base_dir: Path, overrides: Mapping[str, str] | None, case: str | None = None
) -> Model:
    unknown = sorted(set(data) - TOP_LEVEL_KEYS)
    if unknown:
        raise ModelFileError(label, f"[{unknown[0]}]", None,
                             f"unknown section '{unknown[0]}'; sections: {', '.join(sorted(TOP_LEVEL_KEYS))}")
    head = data.get("model", {})
    if not isinstance(head, dict):
        raise ModelFileError(label, "[model]", None, "must be a table with at least a 'name'")
    if "name" not in head:
        raise ModelFileError(label, "[model]", "name", "is missing (every model needs a name)")
    if not isinstance(head["name"], str) or not head["name"].strip():
        raise ModelFileError(label, "[model]", "name", f"expected non-empty text, got {head['name']!r}")
    for key in sorted(set(head) - MODEL_FIELDS):
        raise ModelFileError(label, "[model]", key, f"unknown field; allowed: {', '.join(sorted(MODEL_FIELDS))}")
    for key in ("description", "rulebook"):
        if key in head and not isinstance(head[key], str):
            raise ModelFileError(label, "[model]", key, f"expected text, got {head[key]!r}")
    for key in ("units", "materials"):
        if not isinstance(data.get(key, {}), dict):
            raise ModelFileError(label, f"[{key}]", None, "must be a table")

    defaults: dict[str, float] = {}
    for kind, text in data.get("units", {}).items():
        if kind not in UNIT_KINDS:
            raise ModelFileError(label, "[units]", kind, f"unknown quantity kind; known: {', '.join(UNIT_KINDS)}")
        try:
            q = units.parse_unit(str(text))
        except units.UnitError as exc:
            raise ModelFileError(label, "[units]", kind, str(exc)) from None
        if q.dim != UNIT_KINDS[kind]:
            raise ModelFileError(label, "[units]", kind, f"'{text}' is not a {kind} unit")
        defaults[kind] = q.value

    params = data.get("parameters", {})
    if not isinstance(params, dict):
        raise ModelFileError(label, "[parameters]", None, "must be a table of name = value")
    crd = _Reader(label, defaults, {})  # case tables hold no quantities to evaluate
    cases = modelfile_cases.read_cases(crd, _table_list(crd, data, "case"), params)
    active = modelfile_cases.find_case(cases, case, label)
    try:
        env = expr.evaluate_parameters(params, overrides={**(active.override_map if active else {}), **(overrides or {})})
    except expr.ParameterError as exc:
        # an expression error as one line: the message, then where in the text (not the text and a caret line)
        message = _one_line(exc.__cause__) if isinstance(exc.__cause__, expr.ExpressionError) else exc.message
        if active is not None and exc.name in active.override_map:
            raise ModelFileError(active.file, f"case '{active.name}'", f"set.{exc.name}", message) from None
        if exc.name is not None and exc.name in (overrides or {}):
            raise ModelFileError(label, f"--set {exc.name}", None, message) from None
        raise ModelFileError(label, f"parameter '{exc.name}'", "value", message) from None
    modelfile_cases.check_case_parameters(cases, params, dict(overrides or {}), skip=active)
    rd = _Reader(label, defaults, env, base_dir)

    vehicle = _vehicle(rd, data.get("vehicle"))
    centre_normal = vehicle.left if vehicle is not None else np.array([0.0, 1.0, 0.0])
    mirror = Pose(reflection_across_plane(centre_normal), np.zeros(3))

    materials = dict(builtin_materials())
    for key, table in data.get("materials", {}).items():
        item = f"material '{key}'"
        if key in materials:
            raise rd.error(item, None, "already defined in the built-in library; give your material another name")
        if not isinstance(table, dict):
            raise rd.error(item, None, "expected a table with a 'density'")
        try:
            materials[key] = material_from_fields(
                key, table, lambda f, v, it=item: rd.quantity(v, "density", it, f), flag="user"
            )
        except MaterialError as exc:
            raise rd.error(item, exc.field, str(exc).removeprefix(f"material '{key}': ")) from None

    groups = _groups(rd, data.get("group", []))
    components: list[Component] = []
    optional: set[str] = set()
    seen: dict[str, str] = {}
    frames: dict[str, Pose] = {}

    def add(made: list[Component], reader: _Reader, item: str) -> None:
        for c in made:
            if c.path in seen:
                raise reader.error(item, "path", f"duplicate path '{c.path}' (also made by {seen[c.path]})")
            seen[c.path] = c.origin
            components.append(c)

    for i, table in enumerate(_table_list(rd, data, "part")):
        prd = rd.for_table(table)
        made = _parts(prd, table, i, groups, materials, mirror, frames)
        add(made, prd, f"part '{table['path']}'")
        if _optional(prd, table, f"part '{table.get('path')}'", _enclosing(str(table.get("path")), groups)):
            optional.update(c.path for c in made)
    for i, table in enumerate(_table_list(rd, data, "driver")):
        drd = rd.for_table(table)
        made = modelfile_driver.driver_components(drd, table, i, groups, vehicle)
        add(made, drd, f"driver '{table.get('path')}'")
        if _optional(drd, table, f"driver '{table.get('path')}'", _enclosing(made[0].path, groups)):
            optional.update(c.path for c in made)

    slots = []
    for i, table in enumerate(_table_list(rd, data, "slot")):
        slots.append(_slot(rd.for_table(table), table, i))
    names = [s.name for s in slots]
    for dup in {n for n in names if names.count(n) > 1}:
        raise rd.error(f"slot '{dup}'", "name", "is used by more than one slot")
    for c in components:
        if c.slot is not None and c.slot not in names:
            raise rd.error(f"part '{c.path}'", "slot", f"no slot named '{c.slot}'; slots: {', '.join(names) or 'none'}")
    contacts = tuple(
        _allowed_contact(rd.for_table(t), t, i, components)
        for i, t in enumerate(_table_list(rd, data, "allowed_contact"))
    )

    rule_tables: list[tuple[_Reader, dict[str, Any], int]] = []
    book = head.get("rulebook")
    if book is not None:
        book_path = base_dir / str(book)
        book_data = read_toml(book_path, str(book_path), (label, "[model]", "rulebook"))
        extra = sorted(set(book_data) - {"rule", "rulebook"})
        if extra:
            raise ModelFileError(str(book_path), f"[{extra[0]}]", None,
                                 f"unknown section '{extra[0]}'; a rulebook holds [[rule]] tables")
        brd = _Reader(str(book_path), defaults, env)
        rule_tables.extend((brd, t, i) for i, t in enumerate(_table_list(brd, book_data, "rule")))
    rule_tables.extend((rd.for_table(t), t, i) for i, t in enumerate(_table_list(rd, data, "rule")))
    rules = tuple(_rule(r, t, i, vehicle is not None) for r, t, i in rule_tables)
    case_names = {BASE_CASE, *(c.name for c in cases)}
    for rule in rules:
        where = (rule.origin.split(": ")[0], rule.origin.split(": ", 1)[-1])
        for g in rule.groups + rule.exclude:
            if not any(c.path == g or c.path.startswith(g + "/") for c in components):
                raise ModelFileError(*where, "groups" if g in rule.groups else "exclude", f"no part lies in group '{g}'")
        for name in rule.cases:
            if name not in case_names:
                raise ModelFileError(*where, "case", f"the model defines no load case '{name}'; cases: "
                                     f"{', '.join(sorted(case_names))}")
    components, rules = modelfile_cases.select_case(cases, active, components, optional, rules)
    if not components:  # nothing to weigh: the fractions and the CG of no mass are undefined
        empty = f"case '{active.name}'" if active else "[[part]]"
        raise rd.error(empty, None, "the model has no parts (none defined, or every one optional or switched off)")
    chassis = modelfile_chassis.read_chassis(rd, data.get("chassis"), vehicle, components)

    return Model(
        name=head["name"].strip(),
        components=tuple(components),
        vehicle=vehicle,
        rules=rules,
        slots=tuple(slots),
        parameters=env,
        materials=materials,
        source=label,
        description=str(head.get("description", "")),
        case=active.name if active else BASE_CASE,
        load_cases=cases,
        allowed_contacts=contacts,
        chassis=chassis,
    )


def _optional(rd: _Reader, table: Mapping[str, Any], item: str, enclosing: Sequence[_Group]) -> bool:
    """Whether a part or driver table is left out of the base model (its own flag or an enclosing group's)."""
    return _flag(rd, table, "optional", item) or any(g.optional for g in enclosing)


def _allowed_contact(rd: _Reader, table: dict[str, Any], index: int, components: Sequence[Component]) -> AllowedContact:
    """``[[allowed_contact]] between = [a, b]``: parts (or groups of parts) meant to touch or overlap."""
    item = f"allowed_contact #{index + 1}"
    rd.check_fields(table, CONTACT_FIELDS, item)
    pair = table.get("between")
    if not isinstance(pair, list) or len(pair) != 2 or not all(isinstance(p, str) and _PATH_RE.match(p) for p in pair):
        raise rd.error(item, "between", f"expected two part or group paths, got {pair!r}")
    for k, path in enumerate(pair):
        if not any(in_group(c.path, path) for c in components):
            raise rd.error(item, f"between[{k}]", f"no part lies at or under '{path}'")
    note = rd.text(table, "note", item) or ""
    return AllowedContact(pair[0], pair[1], note=note, origin=f"{rd.file}: {item}")


def _table_list(rd: _Reader, data: Mapping[str, Any], key: str) -> list[dict[str, Any]]:
    value = data.get(key, [])
    if not isinstance(value, list) or not all(isinstance(t, dict) for t in value):
        raise rd.error(f"[[{key}]]", None, f"write each entry as a [[{key}]] table")
    return value


def _vehicle(rd: _Reader, table: Any) -> Vehicle | None:
    if table is None:
        return None
    item = "[vehicle]"
    if not isinstance(table, dict):
        raise rd.error(item, None, "must be a table")
    rd.check_fields(table, VEHICLE_FIELDS, item)
    axes = table.get("axes", {"forward": "+x", "left": "+y", "up": "+z"})
    if not isinstance(axes, dict) or set(axes) != set(AXIS_NAMES):
        raise rd.error(item, "axes", "expected { forward = \"+x\", left = \"+y\", up = \"+z\" } (signed model axes)")
    vecs = {}
    for name in AXIS_NAMES:
        spec = axes[name] if isinstance(axes[name], str) else None
        m = re.fullmatch(r"([+-])([xyz])", spec or "")
        if not m:
            raise rd.error(item, f"axes.{name}", f"expected a signed model axis such as '+x' or '-z', got {spec!r}")
        v = np.zeros(3)
        v["xyz".index(m.group(2))] = 1.0 if m.group(1) == "+" else -1.0
        vecs[name] = v
    basis = np.array([vecs["forward"], vecs["left"], vecs["up"]])
    if abs(np.linalg.det(basis) - 1.0) > 1e-9:
        raise rd.error(item, "axes", "forward, left and up must be three different axes forming a right-handed set")
    vals = {}
    for name in ("wheelbase", "track_front", "track_rear"):
        if name not in table:
            raise rd.error(item, name, "is missing")
        vals[name] = rd.quantity(table[name], "length", item, name)
        if vals[name] <= 0.0:
            raise rd.error(item, name, "must be a positive length")
    for name in ("front_axle_station", "ground_level"):
        vals[name] = rd.quantity(table.get(name, 0.0), "length", item, name) if name in table else 0.0
    return Vehicle(vecs["forward"], vecs["left"], vecs["up"], **vals)


def _maturity(rd: _Reader, value: Any, item: str) -> Maturity:
    try:
        return Maturity(value)
    except ValueError:
        raise rd.error(item, "maturity", f"expected one of {', '.join(m.value for m in Maturity)}, got {value!r}") from None


def _colour(rd: _Reader, value: Any, item: str) -> str:
    if not isinstance(value, str) or not _COLOUR_RE.match(value):
        raise rd.error(item, "colour", f"expected '#rrggbb', got {value!r}")
    return value.lower()


def _path(rd: _Reader, table: Mapping[str, Any], what: str, index: int) -> str:
    path = table.get("path")
    if not isinstance(path, str) or not _PATH_RE.match(path):
        raise rd.error(f"{what} #{index + 1}", "path",
                       f"expected a path like 'suspension/front/left/upright', got {path!r}")
    return path


def _groups(rd: _Reader, tables: Any) -> dict[str, _Group]:
    out: dict[str, _Group] = {}
    if not isinstance(tables, list):
        raise rd.error("[[group]]", None, "write each group as a [[group]] table")
    for i, table in enumerate(tables):
        g = rd.for_table(table)
        path = _path(g, table, "group", i)
        item = f"group '{path}'"
        g.check_fields(table, GROUP_FIELDS, item)
        if path in out:
            raise g.error(item, "path", "group declared twice")
        out[path] = _Group(
            pose=g.pose(table, item),
            colour=_colour(g, table["colour"], item) if "colour" in table else None,
            maturity=_maturity(g, table["maturity"], item) if "maturity" in table else None,
            mirror=_flag(g, table, "mirror", item),
            optional=_flag(g, table, "optional", item),
        )
    return out


def _flag(rd: _Reader, table: Mapping[str, Any], key: str, item: str) -> bool:
    value = table.get(key, False)
    if not isinstance(value, bool):
        raise rd.error(item, key, f"expected true or false, got {value!r}")
    return value


def _enclosing(path: str, groups: Mapping[str, _Group]) -> list[_Group]:
    """Declared groups containing ``path``, outermost first."""
    segs = path.split("/")
    return [groups[g] for g in ("/".join(segs[:k]) for k in range(1, len(segs))) if g in groups]


def _parts(
    rd: _Reader,
    table: dict[str, Any],
    index: int,
    groups: Mapping[str, _Group],
    materials: Mapping[str, Material],
    mirror: Pose,
    frames: dict[str, Pose],
) -> list[Component]:
    """The components one [[part]] table makes (its mirror and pattern copies included); ``frames`` remembers the
    model-frame pose of each group path."""
    path = _path(rd, table, "part", index)
    item = f"part '{path}'"
    rd.shape_kind(table, item)
    rd.check_fields(table, PART_FIELDS | _shape_keys(table.get("shape")), item)
    shape = rd.shape(table, item)
    local_pose = rd.pose(table, item)
    cutouts = _cutouts(rd, table, item, shape)

    sources = [k for k in ("material", "density", "mass", "measured") if k in table]
    if len(sources) != 1:
        raise rd.error(
            item, sources[1] if len(sources) > 1 else "material",
            "give exactly one mass source: material, density, mass or measured"
            + (f" (found {' and '.join(sources)})" if sources else " (none found)"),
        )
    source = MassSource(sources[0])
    kw: dict[str, Any] = {}
    if source is MassSource.MATERIAL:
        key = table["material"]
        if key not in materials:
            import difflib

            close = difflib.get_close_matches(str(key), list(materials), n=3)
            raise rd.error(item, "material", f"unknown material {key!r}" + (f"; did you mean {', '.join(close)}?" if close else
                           "; `massmodel materials` lists the library"))
        kw.update(material=key, density=materials[key].density)
    elif source is MassSource.DENSITY:
        kw["density"] = rd.quantity(table["density"], "density", item, "density")
        if kw["density"] <= 0.0:
            raise rd.error(item, "density", "must be positive")
    elif source is MassSource.MASS:
        kw["mass"] = rd.quantity(table["mass"], "mass", item, "mass")
        if kw["mass"] <= 0.0:
            raise rd.error(item, "mass", "must be positive")
    else:
        meas = table["measured"]
        if not isinstance(meas, dict):
            raise rd.error(item, "measured", "expected a table with 'mass', 'cg' and optionally 'inertia'")
        for key in ("mass", "cg"):
            if key not in meas:
                raise rd.error(item, f"measured.{key}", "is missing (measured properties need 'mass' and 'cg')")
        extra = sorted(set(meas) - {"mass", "cg", "inertia"})
        if extra:
            raise rd.error(item, f"measured.{extra[0]}", "unknown field; allowed: mass, cg, inertia")
        kw["mass"] = rd.quantity(meas["mass"], "mass", item, "measured.mass")
        if kw["mass"] <= 0.0:
            raise rd.error(item, "measured.mass", "must be positive")
        kw["measured_cg"] = rd.vector(meas["cg"], "length", item, "measured.cg")
        if "inertia" in meas:
            rows = meas["inertia"]
            if not isinstance(rows, list) or len(rows) != 3:
                raise rd.error(item, "measured.inertia", "expected 3 rows of 3 values (kg*m^2, tensor convention)")
            kw["measured_inertia"] = np.array(
                [rd.vector(r, "inertia", item, f"measured.inertia[{i}]") for i, r in enumerate(rows)]
            )
    if getattr(shape, "closed", True) is False and source is not MassSource.MEASURED:
        raise rd.error(
            item, source.value,
            f"the mesh '{shape.file}' is not closed ({shape.problem}), so it has no trustworthy volume or inertia and "
            "cannot carry a material, density or mass; fix the mesh, or give `measured` properties to show it as is",
        )
    if shape.volume() <= 0.0 and source in (MassSource.MATERIAL, MassSource.DENSITY):
        raise rd.error(item, source.value, "a point has no volume: give it a 'mass' or 'measured' properties")

    enclosing = _enclosing(path, groups)
    maturity = None
    if "maturity" in table:
        maturity = _maturity(rd, table["maturity"], item)
    else:
        maturity = next((g.maturity for g in reversed(enclosing) if g.maturity is not None), None)
    if maturity is None:
        raise rd.error(item, "maturity", "is missing (give it here or on an enclosing [[group]])")
    if "colour" in table:
        colour = _colour(rd, table["colour"], item)
    else:
        colour = next((g.colour for g in reversed(enclosing) if g.colour is not None), None) or PALETTE[
            sum(map(ord, path.split("/")[0])) % len(PALETTE)
        ]
    parent = path.rpartition("/")[0]
    group_pose = frames.get(parent)
    if group_pose is None:
        group_pose = Pose.identity()
        for g in enclosing:
            group_pose = group_pose * g.pose
        frames[parent] = group_pose

    copies: list[tuple[str, Pose]] = []
    if "pattern" in table:
        pat = table["pattern"]
        if not isinstance(pat, dict) or set(pat) != {"count", "step"}:
            raise rd.error(item, "pattern", "expected { count = N, step = [dx, dy, dz] }")
        count = pat["count"]
        if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= 10000:
            raise rd.error(item, "pattern.count", f"expected a whole number from 1 to 10000, got {count!r}")
        step = rd.vector(pat["step"], "length", item, "pattern.step")
        for k in range(count):
            copies.append((f"{path}-{k + 1}", group_pose * Pose.from_translation(k * step) * local_pose))
    else:
        copies.append((path, group_pose * local_pose if enclosing else local_pose))
    if _flag(rd, table, "mirror", item) or any(g.mirror for g in enclosing):
        mirrored = []
        for p, pose in copies:
            other = _swap_side(p)
            if other is None:
                raise rd.error(item, "mirror", "a mirrored part needs a path segment 'left' or 'right' to swap")
            mirrored.append((other, mirror * pose))
        copies.extend(mirrored)

    slot = rd.text(table, "slot", item)
    note = rd.text(table, "note", item) or ""
    out = []
    for p, pose in copies:
        try:
            out.append(Component(
                path=p, shape=shape, pose=pose, source=source, maturity=maturity, colour=colour,
                cutouts=cutouts, slot=slot, note=note,
                origin=f"{rd.file}: {item}" + (f" (copy '{p}')" if p != path else ""), **kw,
            ))
        except InertiaError as exc:
            raise rd.error(item, "measured.inertia", str(exc).split(": ", 2)[-1]) from None
        except ValueError as exc:
            raise rd.error(item, source.value, str(exc).split(": ", 2)[-1]) from None
    return out


def _cutouts(rd: _Reader, table: Mapping[str, Any], item: str, parent: Any) -> tuple[Cutout, ...]:
    raw = table.get("cut", [])
    if not isinstance(raw, list) or not all(isinstance(t, dict) for t in raw):
        raise rd.error(item, "cut", "expected a list of tables like { shape = \"cylinder\", radius = ..., at = [...] }")
    if not raw:
        return ()
    cuts: list[Cutout] = []
    boxes: list[np.ndarray] = []
    scale = float(np.max(np.abs(parent.bounds()))) or 1.0
    for i, ct in enumerate(raw):
        prefix = f"cut[{i}]."
        rd.shape_kind(ct, item, prefix)
        allowed = {"shape"} | PLACEMENT_FIELDS | _shape_keys(ct.get("shape"))
        unknown = sorted(set(ct) - allowed)
        if unknown:
            raise rd.error(item, prefix + unknown[0], f"unknown field; allowed: {', '.join(sorted(allowed))}")
        if ct.get("shape") in FILE_SHAPE_KINDS:
            raise rd.error(item, prefix + "shape", "a cut-out is a primitive shape (model holes from a file in the file)")
        shape = rd.shape(ct, item, prefix)
        if shape.volume() <= 0.0:
            raise rd.error(item, prefix + "shape", "a cut-out needs a volume")
        pose = rd.pose(ct, item, prefix)
        pts = pose.apply(_surface_samples(shape))
        inside = parent.contains(pts, tol=1e-9 * scale)
        if not np.all(inside):
            worst = pts[~inside][0] * 1000.0
            raise rd.error(
                item, prefix.rstrip("."),
                f"the cut-out leaves its parent {parent.kind} (its surface point "
                f"[{worst[0]:.3f}, {worst[1]:.3f}, {worst[2]:.3f}] mm, part frame, lies outside)",
            )
        cuts.append(Cutout(shape, pose))
        boxes.append(np.array([pts.min(axis=0), pts.max(axis=0)]))
    _check_cutouts_disjoint(rd, item, cuts, boxes)
    return tuple(cuts)


@lru_cache(maxsize=512)
def _surface_samples(shape: Any) -> np.ndarray:
    """About 400 points on a cut-out's surface (shapes are immutable and hashable; the same hole recurs)."""
    points = shape.surface_points(400)
    points.setflags(write=False)
    return points


@lru_cache(maxsize=1)
def _overlap_grid(n: int = 24) -> np.ndarray:
    """(n³, 3) sample points in the unit cube, offset so that they miss the faces."""
    offsets = (np.arange(n) + 0.5 + 0.1234567) / (n + 1)
    return np.stack(np.meshgrid(offsets, offsets, offsets, indexing="ij"), axis=-1).reshape(-1, 3)


def _check_cutouts_disjoint(rd: _Reader, item: str, cuts: Sequence[Cutout], boxes: Sequence[np.ndarray]) -> None:
    """Overlapping cut-outs would be subtracted twice. For each pair whose bounding boxes (part frame) overlap, test a
    sampling grid over the common box (offset so that it misses shared faces); an overlap thinner than about 1/24 of
    that box may escape this test.
    """
    if len(cuts) < 2:
        return
    unit = _overlap_grid()
    for i in range(len(cuts)):
        for j in range(i + 1, len(cuts)):
            lo = np.maximum(boxes[i][0], boxes[j][0])
            hi = np.minimum(boxes[i][1], boxes[j][1])
            if np.any(hi <= lo):
                continue
            pts = lo + unit * (hi - lo)
            both = cuts[i].shape.contains(cuts[i].pose.inverse().apply(pts), tol=0.0) & cuts[j].shape.contains(
                cuts[j].pose.inverse().apply(pts), tol=0.0
            )
            if np.any(both):
                raise rd.error(item, f"cut[{j}]", f"overlaps cut[{i}] (each cut-out must remove material of its own)")


def _slot(rd: _Reader, table: dict[str, Any], index: int) -> Slot:
    name = table.get("name")
    if not isinstance(name, str) or not name.strip():
        raise rd.error(f"slot #{index + 1}", "name", "is missing")
    item = f"slot '{name}'"
    rd.shape_kind(table, item)
    rd.check_fields(table, SLOT_FIELDS | _shape_keys(table.get("shape")), item)
    shape = rd.shape(table, item)
    if not shape.volume() > 0.0:
        problem = getattr(shape, "problem", "") or "it has no volume"
        raise rd.error(item, "shape", f"a slot needs a closed envelope solid ({problem})")
    if "clearance" not in table:
        raise rd.error(item, "clearance", "is missing (the gap a block must keep to the slot walls)")
    clearance = rd.quantity(table["clearance"], "length", item, "clearance")
    if clearance < 0.0:
        raise rd.error(item, "clearance", "must not be negative")
    return Slot(name, shape, rd.pose(table, item), clearance, origin=f"{rd.file}: {item}")


def _rule(rd: _Reader, table: dict[str, Any], index: int, has_vehicle: bool) -> Rule:
    name = table.get("name", f"rule #{index + 1}")
    if not isinstance(name, str) or not name.strip():
        raise rd.error(f"rule #{index + 1}", "name", f"expected non-empty text, got {name!r}")
    item = f"rule '{name}'"
    rd.check_fields(table, RULE_FIELDS, item)
    try:
        check = RuleCheck(table.get("check"))
    except ValueError:
        raise rd.error(item, "check", f"expected one of {', '.join(c.value for c in RuleCheck)}, got {table.get('check')!r}") from None
    kw: dict[str, Any] = {}

    def paths(key: str) -> tuple[str, ...]:
        v = table.get(key, [])
        if not isinstance(v, list) or not all(isinstance(s, str) and _PATH_RE.match(s) for s in v):
            raise rd.error(item, key, "expected a list of group paths")
        return tuple(v)

    if check is RuleCheck.FRONT_FRACTION:
        if "min" not in table and "max" not in table:
            raise rd.error(item, "min", "a front_fraction rule needs 'min' and/or 'max'")
        for key, attr in (("min", "minimum"), ("max", "maximum")):
            if key in table:
                kw[attr] = rd.quantity(table[key], "number", item, key)
                if not 0.0 <= kw[attr] <= 1.0:
                    raise rd.error(item, key, "a fraction lies between 0 and 1")
        if kw.get("minimum", 0.0) > kw.get("maximum", 1.0):
            raise rd.error(item, "max", f"max ({kw['maximum']:g}) is below min ({kw['minimum']:g}): no car can pass")
    else:
        if "limit" not in table:
            raise rd.error(item, "limit", "is missing")
        kind = "length" if check is RuleCheck.MAX_CG_HEIGHT else "mass"
        kw["limit"] = rd.quantity(table["limit"], kind, item, "limit")
    if check is RuleCheck.MIN_MASS:
        kw["exclude"] = paths("exclude")
    if check is RuleCheck.MIN_GROUP_MASS:
        kw["groups"] = paths("groups")
        if not kw["groups"]:
            raise rd.error(item, "groups", "name at least one group")
    if check is RuleCheck.MIN_AXLE_LOAD:
        if table.get("axle") not in ("front", "rear"):
            raise rd.error(item, "axle", f"expected 'front' or 'rear', got {table.get('axle')!r}")
        kw["axle"] = table["axle"]
    if check in (RuleCheck.MIN_AXLE_LOAD, RuleCheck.FRONT_FRACTION, RuleCheck.MAX_CG_HEIGHT) and not has_vehicle:
        raise rd.error(item, "check", "this rule needs a [vehicle] section in the model")
    if "case" in table:
        kw["cases"] = modelfile_cases.rule_case_names(rd, table["case"], item)
    return Rule(name=str(name), check=check, origin=f"{rd.file}: {item}", **kw)
