"""Load and validate massmodel model files (TOML, format 1; see docs/modelfile.md).

This is the edge where units are converted: everything past :func:`load_model` is SI. Every error names the file,
the item and the field (:class:`ModelFileError`). The file layer (reading, TOML, ``[units]``, the point syntax) is
:mod:`massmodel.modelfile.reader`; the fields of the tables are read by :mod:`massmodel.modelfile.fields`, the parts
by :mod:`massmodel.modelfile.parts`, the load cases and seated drivers by their own modules.
"""

from __future__ import annotations

import copy
import gc
import re
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import expr, units
from massmodel.core.errors import UserError
from massmodel.core.frames import Pose, reflection_across_plane
from massmodel.core.loadcases import BASE_CASE
from massmodel.core.materials import MaterialError, builtin_materials, material_from_fields
from massmodel.core.model import (
    AllowedContact,
    Component,
    Model,
    Rule,
    RuleCheck,
    Slot,
    Vehicle,
    in_group,
)

from . import cases as modelfile_cases
from . import chassis as modelfile_chassis
from . import driver as modelfile_driver
from .extends import resolve_extends
from .fields import (
    AXIS_NAMES,
    CONTACT_FIELDS,
    MODEL_FIELDS,
    PALETTE,
    PATH_RE,
    RULE_FIELDS,
    SHAPE_FILE_FIELDS,
    SLOT_FIELDS,
    TOP_LEVEL_KEYS,
    UNIT_KINDS,
    VEHICLE_FIELDS,
    FieldReader,
    GroupFrame,
    enclosing_groups,
    expression_message,
    flag,
    group_frames,
    shape_keys,
)
from .parts import part_components
from .partstream import WholeText, split_part_tables
from .reader import ModelFileError, parse_toml, read_text, read_toml, read_units
from .uncertainty import attach_uncertainty

__all__ = ["ModelFileError", "ModelSource", "build_model", "load_model", "loads_model", "load_case_models", "read_source",
           "source_from_text", "SHAPE_FILE_FIELDS", "PALETTE"]


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
        return _load_text(read_text(p, str(path), ModelFileError), str(path), p.parent, overrides, case,
                          chain=(p.resolve(),))


def _load_text(text: str, label: str, base_dir: Path, overrides: Mapping[str, str] | None, case: str | None,
               chain: tuple[Path, ...]) -> Model:
    """Build the model of a file's text, its ``[[part]]`` tables parsed a batch at a time while the parts are made
    (:mod:`massmodel.modelfile.partstream`: the parsed TOML and the model are never both whole in memory)."""
    cut = split_part_tables(text, label)
    if isinstance(cut, dict):
        data = cut
    elif _extends(cut.rest):
        data = cut.assembled()  # merging with a base file needs every table
    else:
        try:
            rest = resolve_extends(cut.rest, label, base_dir, chain=chain)
            return _build_case(rest, label=label, base_dir=base_dir, overrides=overrides, case=case,
                               parts=cut.tables())
        except WholeText as whole:
            data = whole.data
        except UserError:
            cut.whole()  # a syntax error anywhere in the file is reported first, as when the file is parsed whole
            raise
    data = resolve_extends(data, label, base_dir, chain=chain)
    return _build_case(data, label=label, base_dir=base_dir, overrides=overrides, case=case)


def _extends(data: Mapping[str, Any]) -> bool:
    head = data.get("model")
    return isinstance(head, dict) and "extends" in head


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
    with _collector_paused():
        return _load_text(text, label, Path(base_dir), overrides, case, chain=())


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


def _check_override_dimensions(label: str, params: Mapping[str, Any], env: Mapping[str, Any],
                               overrides: Mapping[str, str]) -> None:
    """A parameter set with ``--set`` keeps the dimension the file gives it: ``--set fuel_mass=3 m`` is refused by
    the option's name, not later by a part that uses the mass (a load case's ``set`` is reported at the part, with
    the case named)."""
    for name, text in overrides.items():
        if name not in params or name not in env:
            continue
        try:
            own = expr.evaluate(params[name], env)
        except (expr.ExpressionError, units.UnitError, expr.ParameterError):
            continue  # the file's own text is judged where it is used
        if own.dim != env[name].dim:
            raise ModelFileError(label, f"--set {name}", None, f"{text!r} is in {env[name].dim}, but the file gives "
                                                               f"{name} in {own.dim} ({name} = {params[name]!r})")


def _build_case(
    data: dict[str, Any], *, label: str, base_dir: Path, overrides: Mapping[str, str] | None, case: str | None,
    parts: Iterator[dict[str, Any]] | None = None,
) -> Model:
    """:func:`_build`, naming the load case in any error met while building it."""
    try:
        return _build(data, label=label, base_dir=base_dir, overrides=overrides, case=case, parts=parts)
    except ModelFileError as exc:
        if case is None or case == BASE_CASE or exc.item == f"case '{case}'":
            raise
        raise ModelFileError(exc.file, exc.item, exc.field, f"{exc.message} (in load case '{case}')") from None


def _build(
    data: dict[str, Any], *, label: str, base_dir: Path, overrides: Mapping[str, str] | None, case: str | None = None,
    parts: Iterator[dict[str, Any]] | None = None,
) -> Model:
    """The model of a file's tables. ``parts``: the ``[[part]]`` tables, when they are not in ``data`` but parsed
    while they are consumed (:mod:`massmodel.modelfile.partstream`); else those of ``data`` are taken, and each is
    dropped from ``data`` once its components are made (``data`` is the builder's own: parsed for it, or a copy),
    so that the parsed TOML and the model are not both whole in memory."""
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

    defaults = read_units(data.get("units", {}), UNIT_KINDS, label)

    params = data.get("parameters", {})
    if not isinstance(params, dict):
        raise ModelFileError(label, "[parameters]", None, "must be a table of name = value")
    crd = FieldReader(label, defaults, {})  # case tables hold no quantities to evaluate
    cases = modelfile_cases.read_cases(crd, crd.table_list(data, "case"), params)
    active = modelfile_cases.find_case(cases, case, label)
    try:
        env = expr.evaluate_parameters(params, overrides={**(active.override_map if active else {}), **(overrides or {})})
    except expr.ParameterError as exc:
        # an expression error as one line: the message, then where in the text (not the text and a caret line)
        message = expression_message(exc.__cause__) if isinstance(exc.__cause__, expr.ExpressionError) else exc.message
        if active is not None and exc.name in active.override_map:
            raise ModelFileError(active.file, f"case '{active.name}'", f"set.{exc.name}", message) from None
        if exc.name is not None and exc.name in (overrides or {}):
            raise ModelFileError(label, f"--set {exc.name}", None, message) from None
        raise ModelFileError(label, f"parameter '{exc.name}'", "value", message) from None
    modelfile_cases.check_case_parameters(cases, params, dict(overrides or {}), skip=active)
    _check_override_dimensions(label, params, env, overrides or {})
    rd = FieldReader(label, defaults, env, base_dir)

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

    groups = group_frames(rd, data.get("group", []))
    components: list[Component] = []
    optional: set[str] = set()
    seen: dict[str, str] = {}
    frames: dict[str, Pose] = {}
    optional_groups = any(g.optional for g in groups.values())  # else no part is left out by its groups

    def add(made: list[Component], reader: FieldReader, item: str) -> None:
        for c in made:
            if c.path in seen:
                raise reader.error(item, "path", f"duplicate path '{c.path}' (also made by {seen[c.path]})")
            seen[c.path] = c.origin
            components.append(c)

    for i, table in enumerate(_consumed(rd.table_list(data, "part")) if parts is None else parts):
        prd = rd.for_table(table)
        made = part_components(prd, table, i, groups, materials, mirror, frames)
        add(made, prd, f"part '{table['path']}'")
        enclosing = enclosing_groups(str(table.get("path")), groups) if optional_groups else ()
        if _optional(prd, table, f"part '{table.get('path')}'", enclosing):
            optional.update(c.path for c in made)
    for i, table in enumerate(rd.table_list(data, "driver")):
        drd = rd.for_table(table)
        made = modelfile_driver.driver_components(drd, table, i, groups, vehicle)
        add(made, drd, f"driver '{table.get('path')}'")
        if _optional(drd, table, f"driver '{table.get('path')}'", enclosing_groups(made[0].path, groups)):
            optional.update(c.path for c in made)

    slots = []
    for i, table in enumerate(rd.table_list(data, "slot")):
        slots.append(_slot(rd.for_table(table), table, i))
    names = [s.name for s in slots]
    for dup in {n for n in names if names.count(n) > 1}:
        raise rd.error(f"slot '{dup}'", "name", "is used by more than one slot")
    for c in components:
        if c.slot is not None and c.slot not in names:
            raise rd.error(f"part '{c.path}'", "slot", f"no slot named '{c.slot}'; slots: {', '.join(names) or 'none'}")
    contacts = tuple(
        _allowed_contact(rd.for_table(t), t, i, components)
        for i, t in enumerate(rd.table_list(data, "allowed_contact"))
    )

    rule_tables: list[tuple[FieldReader, dict[str, Any], int]] = []
    book = head.get("rulebook")
    if book is not None:
        book_path = base_dir / str(book)
        book_data = read_toml(book_path, str(book_path), (label, "[model]", "rulebook"))
        extra = sorted(set(book_data) - {"rule", "rulebook"})
        if extra:
            raise ModelFileError(str(book_path), f"[{extra[0]}]", None,
                                 f"unknown section '{extra[0]}'; a rulebook holds [[rule]] tables")
        brd = FieldReader(str(book_path), defaults, env)
        rule_tables.extend((brd, t, i) for i, t in enumerate(brd.table_list(book_data, "rule")))
    rule_tables.extend((rd.for_table(t), t, i) for i, t in enumerate(rd.table_list(data, "rule")))
    rules = tuple(_rule(r, t, i, vehicle is not None) for r, t, i in rule_tables)
    case_names = {BASE_CASE, *(c.name for c in cases)}
    for rule in rules:
        where = (rule.origin.split(": ")[0], rule.origin.split(": ", 1)[-1])
        for g in (rule.groups if rule.check is not RuleCheck.BALLAST_HEIGHT else ()) + rule.exclude:  # a place may be empty
            if not any(c.path == g or c.path.startswith(g + "/") for c in components):
                raise ModelFileError(*where, "groups" if g in rule.groups else "exclude", f"no part lies in group '{g}'")
        for name in rule.cases:
            if name not in case_names:
                raise ModelFileError(*where, "case", f"the model defines no load case '{name}'; cases: "
                                     f"{', '.join(sorted(case_names))}")
    components = attach_uncertainty(rd, data.get("uncertainty"), components)  # [uncertainty]: modelfile/uncertainty.py
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


def _consumed(tables: list[Any]) -> Iterator[dict[str, Any]]:
    """The tables of a list, each dropped from the list as it is handed over."""
    for i in range(len(tables)):
        table, tables[i] = tables[i], None
        yield table


def _optional(rd: FieldReader, table: Mapping[str, Any], item: str, enclosing: Sequence[GroupFrame]) -> bool:
    """Whether a part or driver table is left out of the base model (its own flag or an enclosing group's)."""
    return flag(rd, table, "optional", item) or any(g.optional for g in enclosing)


def _allowed_contact(rd: FieldReader, table: dict[str, Any], index: int, components: Sequence[Component]) -> AllowedContact:
    """``[[allowed_contact]] between = [a, b]``: parts (or groups of parts) meant to touch or overlap."""
    item = f"allowed_contact #{index + 1}"
    rd.check_fields(table, CONTACT_FIELDS, item)
    pair = table.get("between")
    if not isinstance(pair, list) or len(pair) != 2 or not all(isinstance(p, str) and PATH_RE.match(p) for p in pair):
        raise rd.error(item, "between", f"expected two part or group paths, got {pair!r}")
    for k, path in enumerate(pair):
        if not any(in_group(c.path, path) for c in components):
            raise rd.error(item, f"between[{k}]", f"no part lies at or under '{path}'")
    note = rd.text(table, "note", item) or ""
    return AllowedContact(pair[0], pair[1], note=note, origin=f"{rd.file}: {item}")


def _vehicle(rd: FieldReader, table: Any) -> Vehicle | None:
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



def _slot(rd: FieldReader, table: dict[str, Any], index: int) -> Slot:
    name = table.get("name")
    if not isinstance(name, str) or not name.strip():
        raise rd.error(f"slot #{index + 1}", "name", "is missing")
    item = f"slot '{name}'"
    rd.shape_kind(table, item)
    rd.check_fields(table, SLOT_FIELDS | shape_keys(table.get("shape")), item)
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


def _rule(rd: FieldReader, table: dict[str, Any], index: int, has_vehicle: bool) -> Rule:
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
        if not isinstance(v, list) or not all(isinstance(s, str) and PATH_RE.match(s) for s in v):
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
    elif check is RuleCheck.BALLAST_HEIGHT:
        kw.update(modelfile_cases.ballast_height_fields(rd, table, item))
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
    if check in (RuleCheck.MIN_AXLE_LOAD, RuleCheck.FRONT_FRACTION, RuleCheck.MAX_CG_HEIGHT,
                 RuleCheck.BALLAST_HEIGHT) and not has_vehicle:
        raise rd.error(item, "check", "this rule needs a [vehicle] section in the model")
    if "case" in table:
        kw["cases"] = modelfile_cases.rule_case_names(rd, table["case"], item)
    return Rule(name=str(name), check=check, origin=f"{rd.file}: {item}", **kw)
