"""The ``[uncertainty]`` section of a model file: standard uncertainties per part or group, defaults by maturity.

::

    [uncertainty]
    scale_resolution = "0.1 kg"     # measured parts: u = resolution / (2√3), unless an item gives their mass
    builtin_defaults = true         # false: every maturity in use needs its own [uncertainty.maturity.*] table

    [uncertainty.maturity.estimated]   # replaces massmodel's defaults for this maturity, field by field
    mass = "12 %"                      # a percentage of each part's mass, or a mass ("0.4 kg")
    cg = "25 mm"                       # each coordinate, or three: ["25 mm", "5 mm", "10 mm"] (model axes x, y, z)
    inertia = "30 %"                   # relative error of the part's own tensor
    growth = "20 %"                    # growth allowance (not an uncertainty)

    [[uncertainty.item]]
    path = "chassis/frame"             # a part or a group: the most specific item gives each field
    mass = "2 %"                       # on a group only a percentage (each part's own mass)
    cg = "3 mm"

Values are standard uncertainties (k = 1). Every part of a file with this section gets a
:class:`~massmodel.core.uncertainty.PartUncertainty`; the shared density error of banded materials is added by the
propagation (:mod:`massmodel.uncertainty.inputs`).
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from massmodel.core.model import Component, Maturity
from massmodel.core.uncertainty import PartUncertainty
from massmodel.uncertainty.inputs import MATURITY_DEFAULTS, RECTANGULAR

from .reader import SourcedTable

__all__ = ["attach_uncertainty", "merge_uncertainty", "SECTION_FIELDS", "VALUE_FIELDS"]

SECTION_FIELDS = {"scale_resolution", "builtin_defaults", "maturity", "item"}
VALUE_FIELDS = {"mass", "cg", "inertia", "growth"}
ITEM_FIELDS = VALUE_FIELDS | {"path", "scale_resolution", "note"}
_PERCENT = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*%\s*$")


def _percent(value: Any) -> float | None:
    """A fraction from text such as "12 %" (None when the value is not a percentage)."""
    if isinstance(value, str):
        m = _PERCENT.match(value)
        if m:
            return float(m.group(1)) / 100.0
    return None


def _values(rd: Any, table: Mapping[str, Any], item: str, is_group: bool) -> dict[str, Any]:
    """The value fields of a table in SI: mass → ("rel" | "abs", v); cg → (3,) m; inertia, growth → fractions."""
    out: dict[str, Any] = {}

    def non_negative(field: str, v: float) -> float:
        if v < 0.0:
            raise rd.error(item, field, "an uncertainty or allowance cannot be negative")
        return v

    if "mass" in table:
        rel = _percent(table["mass"])
        if rel is not None:
            out["mass"] = ("rel", non_negative("mass", rel))
        elif is_group:
            raise rd.error(item, "mass", "on a group give a percentage of each part's mass, such as '3 %'")
        else:
            out["mass"] = ("abs", non_negative("mass", rd.quantity(table["mass"], "mass", item, "mass")))
    if "cg" in table:
        value = table["cg"]
        if isinstance(value, list):
            out["cg"] = tuple(non_negative("cg", float(v)) for v in rd.vector(value, "length", item, "cg"))
        else:
            out["cg"] = (non_negative("cg", rd.quantity(value, "length", item, "cg")),) * 3
    for field in ("inertia", "growth"):
        if field in table:
            rel = _percent(table[field])
            if rel is None:
                raise rd.error(item, field, f"expected a percentage such as '10 %', got {table[field]!r}")
            out[field] = non_negative(field, rel)
    if "scale_resolution" in table:
        out["scale_resolution"] = non_negative(
            "scale_resolution", rd.quantity(table["scale_resolution"], "mass", item, "scale_resolution"))
    return out


def merge_uncertainty(base: Any, child: Any, removed: Sequence[str], base_file: str) -> Any:
    """The ``[uncertainty]`` of a model that ``extends`` a base file.

    The child's ``scale_resolution`` and ``builtin_defaults`` win; its table for a maturity replaces the base's for
    that maturity; its items are added after the base's, replacing a base item of the same path. Base items under a
    path the child removes are dropped. Base items keep the base file's name for messages. A section that is not a
    table is passed on as it is (the loader reports it).
    """
    if base is None:
        return child
    child = {} if child is None else child
    if not isinstance(base, dict) or not isinstance(child, dict):
        return child or base
    merged = {**base, **{k: v for k, v in child.items() if k not in ("maturity", "item")}}
    if isinstance(base.get("maturity"), dict) and isinstance(child.get("maturity"), dict):
        merged["maturity"] = {**base["maturity"], **child["maturity"]}
    elif "maturity" in child:
        merged["maturity"] = child["maturity"]
    base_items, child_items = base.get("item", []), child.get("item", [])
    if isinstance(base_items, list) and isinstance(child_items, list):
        mine = {t.get("path") for t in child_items if isinstance(t, dict)}
        kept = []
        for t in base_items:
            path = t.get("path") if isinstance(t, dict) else None
            if isinstance(path, str) and (path in mine or any(path == r or path.startswith(r + "/") for r in removed)):
                continue
            kept.append(SourcedTable(t, base_file) if isinstance(t, dict) and not isinstance(t, SourcedTable) else t)
        merged["item"] = kept + child_items
    elif "item" in child:
        merged["item"] = child_items
    return merged


def attach_uncertainty(rd: Any, section: Any, components: Sequence[Component]) -> list[Component]:
    """Give every component its :class:`PartUncertainty` from the file's ``[uncertainty]`` section.

    Parameters
    ----------
    rd : the loader's reader of the file (converts values to SI; errors name file, item and field)
    section : dict or None
        The ``[uncertainty]`` table; None leaves the components as they are (the propagation then uses the defaults
        by maturity).
    components : sequence of Component

    Raises
    ------
    ModelFileError
        A negative value, a value of the wrong dimension, an unknown field, an item matching no part, or a part
        whose maturity has no default when ``builtin_defaults = false``.
    """
    if section is None:
        return list(components)
    where = "[uncertainty]"
    if not isinstance(section, dict):
        raise rd.error(where, None, "must be a table")
    rd.check_fields(section, SECTION_FIELDS, where)
    head = _values(rd, {k: v for k, v in section.items() if k == "scale_resolution"}, where, False)
    builtin = section.get("builtin_defaults", True)
    if not isinstance(builtin, bool):
        raise rd.error(where, "builtin_defaults", f"expected true or false, got {builtin!r}")

    by_maturity: dict[Maturity, dict[str, Any]] = {}
    tables = section.get("maturity", {})
    if not isinstance(tables, dict):
        raise rd.error(where, "maturity", "expected tables [uncertainty.maturity.<maturity>]")
    for key, table in tables.items():
        item = f"[uncertainty.maturity.{key}]"
        try:
            maturity = Maturity(key)
        except ValueError:
            raise rd.error("[uncertainty.maturity]", key,
                           f"unknown maturity; known: {', '.join(m.value for m in Maturity)}") from None
        if not isinstance(table, dict):
            raise rd.error(item, None, "must be a table of mass, cg, inertia, growth")
        rd.check_fields(table, VALUE_FIELDS, item)
        by_maturity[maturity] = _values(rd, table, item, is_group=True)

    items: dict[str, tuple[dict[str, Any], str]] = {}
    listed = section.get("item", [])
    if not isinstance(listed, list):
        raise rd.error(where, "item", "expected [[uncertainty.item]] tables")
    paths = [c.path for c in components]
    for i, table in enumerate(listed):
        if not isinstance(table, dict):
            raise rd.error(f"[[uncertainty.item]] #{i + 1}", None, "must be a table")
        ird = rd.for_table(table)
        path = table.get("path")
        item = f"uncertainty item '{path}'" if isinstance(path, str) else f"[[uncertainty.item]] #{i + 1}"
        if not isinstance(path, str) or not path.strip():
            raise ird.error(item, "path", "is missing (a part or group path)")
        ird.check_fields(table, ITEM_FIELDS, item)
        if path in items:
            raise ird.error(item, "path", "is given by more than one [[uncertainty.item]]")
        is_part = path in paths
        if not is_part and not any(p.startswith(path + "/") for p in paths):
            raise ird.error(item, "path", "no part lies at or under this path")
        items[path] = (_values(ird, table, item, is_group=not is_part), f"{ird.file}: {item}")

    out = []
    for c in components:
        fields: dict[str, Any] = {}
        origin = []
        segs = c.path.split("/")
        for k in range(1, len(segs) + 1):  # outermost group first, the part itself last: the specific one wins
            hit = items.get("/".join(segs[:k]))
            if hit is not None:
                fields.update(hit[0])
                origin.append(hit[1])
        out.append(c.with_uncertainty(_resolve(rd, c, fields, by_maturity, head, builtin, origin)))
    return out


def _resolve(rd: Any, c: Component, fields: dict[str, Any], by_maturity: Mapping[Maturity, dict[str, Any]],
             head: Mapping[str, Any], builtin: bool, origin: list[str]) -> PartUncertainty:
    """Fill the fields an item left open from the file's defaults for the maturity, then massmodel's."""
    mine = by_maturity.get(c.maturity, {})
    mass = c.props.mass
    resolution = fields.get("scale_resolution", head.get("scale_resolution"))
    if "mass" not in fields and c.maturity is Maturity.MEASURED and resolution is not None:
        fields["mass"] = ("abs", 0.5 * resolution * RECTANGULAR)
        origin.append(f"scale resolution {resolution:g} kg")
    missing = [f for f in ("mass", "cg", "inertia", "growth") if f not in fields and f not in mine]
    if missing and not builtin:
        raise rd.error(f"part '{c.path}'", "maturity",
                       f"no uncertainty default for maturity '{c.maturity.value}' ({', '.join(missing)}; "
                       f"builtin_defaults = false): add [uncertainty.maturity.{c.maturity.value}] or an "
                       "[[uncertainty.item]] for it")
    default = MATURITY_DEFAULTS[c.maturity]
    given = {**mine, **fields}
    kind, value = given.get("mass", ("rel", default.mass))
    u_mass = value * mass if kind == "rel" else value
    if missing:
        origin.append(f"massmodel default for {c.maturity.value} ({', '.join(missing)})")
    if mine:
        origin.append(f"[uncertainty.maturity.{c.maturity.value}]")
    return PartUncertainty(u_mass, given.get("cg", (default.cg,) * 3), given.get("inertia", default.inertia),
                           given.get("growth", default.growth), origin="; ".join(origin))
