"""Reading the ``[[case]]`` tables of a model file (load cases; syntax in docs/modelfile.md, "Load cases").

Used by :mod:`massmodel.modelfile.loader`; the data type and the selection rules are in :mod:`massmodel.core.loadcases`.
Every error names the file, the item (``case 'NAME'``) and the field.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from massmodel.core import expr
from massmodel.core.loadcases import BASE_CASE, LoadCase, case_includes, check_cases, rule_applies
from massmodel.core.model import Component, Rule

from .fields import PATH_RE, FieldReader, expression_message
from .reader import ModelFileError

__all__ = ["CASE_FIELDS", "read_cases", "find_case", "check_case_parameters", "rule_case_names", "select_case"]

CASE_FIELDS = {"name", "description", "set", "switch_off", "switch_on", "general_rules", "note"}
_NAME_RE = re.compile(r"^[A-Za-z0-9_.\-]+$")


def read_cases(rd: FieldReader, tables: Sequence[dict[str, Any]], parameters: Mapping[str, Any]) -> tuple[LoadCase, ...]:
    """Parse the ``[[case]]`` tables (syntax only; paths are checked once the parts are built).

    Parameters
    ----------
    rd : the loader's reader
        Gives ``for_table``, ``error`` and ``check_fields`` (see :mod:`massmodel.modelfile.loader`).
    tables : sequence of dict
        The raw ``[[case]]`` tables, in file order.
    parameters : mapping
        The file's parameter definitions (names a case may ``set``).
    """
    cases: list[LoadCase] = []
    seen: dict[str, str] = {}
    for i, table in enumerate(tables):
        crd = rd.for_table(table)
        name = table.get("name")
        if not isinstance(name, str) or not _NAME_RE.match(name):
            raise crd.error(f"case #{i + 1}", "name",
                            f"expected a name of letters, digits, '_', '.' or '-' (e.g. \"qualifying\"), got {name!r}")
        item = f"case '{name}'"
        if name == BASE_CASE:
            raise crd.error(item, "name", f"'{BASE_CASE}' is the model without any case; choose another name")
        if name in seen:
            raise crd.error(item, "name", f"case defined twice (also in {seen[name]})")
        seen[name] = crd.file
        crd.check_fields(table, CASE_FIELDS, item)
        overrides = _overrides(crd, table.get("set", {}), item, parameters)
        off = _paths(crd, table, "switch_off", item)
        on = _paths(crd, table, "switch_on", item)
        general = table.get("general_rules", True)
        if not isinstance(general, bool):
            raise crd.error(item, "general_rules", f"expected true or false, got {general!r}")
        description = table.get("description", "")
        if not isinstance(description, str):
            raise crd.error(item, "description", f"expected text, got {description!r}")
        cases.append(LoadCase(name, description, overrides, off, on, general, crd.file))
    return tuple(cases)


def _overrides(rd: FieldReader, value: Any, item: str, parameters: Mapping[str, Any]) -> tuple[tuple[str, str], ...]:
    if not isinstance(value, dict):
        raise rd.error(item, "set", "expected a table of parameter = value, e.g. set = { fuel_mass = \"10 kg\" }")
    out = []
    for key, text in value.items():
        if key not in parameters:
            import difflib

            close = difflib.get_close_matches(key, list(parameters), n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else f"; parameters: {', '.join(parameters) or 'none'}"
            raise rd.error(item, f"set.{key}", f"no parameter '{key}' in [parameters]{hint}")
        if isinstance(text, bool) or not isinstance(text, (str, int, float)):
            raise rd.error(item, f"set.{key}", f"expected a number or an expression such as \"10 kg\", got {text!r}")
        out.append((key, str(text)))
    return tuple(out)


def _paths(rd: FieldReader, table: Mapping[str, Any], key: str, item: str) -> tuple[str, ...]:
    value = table.get(key, [])
    if not isinstance(value, list) or not all(isinstance(p, str) and PATH_RE.match(p) for p in value):
        raise rd.error(item, key, f"expected a list of part or group paths such as [\"driver\"], got {value!r}")
    return tuple(value)


def find_case(cases: Sequence[LoadCase], name: str | None, label: str) -> LoadCase | None:
    """The case called ``name`` (None or "base": the base model); a :class:`ModelFileError` when unknown."""
    if name is None or name == BASE_CASE:
        return None
    for case in cases:
        if case.name == name:
            return case
    known = ", ".join([BASE_CASE, *(c.name for c in cases)])
    raise ModelFileError(label, f"case '{name}'", None, f"no such load case; the file defines: {known}")


def check_case_parameters(
    cases: Sequence[LoadCase], definitions: Mapping[str, Any], overrides: Mapping[str, str], skip: LoadCase | None
) -> None:
    """Evaluate the parameters of every case once, so that a bad value is reported whichever case is loaded."""
    for case in cases:
        if case is skip:
            continue
        mine = case.override_map
        try:
            expr.evaluate_parameters(definitions, overrides={**mine, **overrides})
        except expr.ParameterError as exc:
            field = f"set.{exc.name}" if exc.name in mine else "set"
            # the expression error as one line with its position (not the text and a caret line run together)
            why = expression_message(exc.__cause__) if isinstance(exc.__cause__, expr.ExpressionError) else exc.message
            raise ModelFileError(case.file, f"case '{case.name}'", field, f"parameter '{exc.name}': {why}") from None


def rule_case_names(rd: FieldReader, value: Any, item: str) -> tuple[str, ...]:
    """The ``case`` field of a [[rule]]: one case name or a list of them."""
    names = [value] if isinstance(value, str) else value
    if not isinstance(names, list) or not names or not all(isinstance(n, str) and _NAME_RE.match(n) for n in names):
        raise rd.error(item, "case", f"expected a load-case name or a list of them (\"{BASE_CASE}\" for the model "
                                     f"without a case), got {value!r}")
    return tuple(names)


def ballast_height_fields(rd: Any, table: Mapping[str, Any], item: str) -> dict[str, Any]:
    """Fields of a ``ballast_height`` [[rule]]: ``groups`` (the ballast's place) and either ``limit`` (least CG
    height above the ground) or ``reference`` (a group, e.g. the driver) with ``band`` (± length about its CG
    height)."""
    groups = table.get("groups")
    if not isinstance(groups, list) or not groups or not all(isinstance(g, str) and g for g in groups):
        raise rd.error(item, "groups", "name the group(s) the ballast sits in, e.g. [\"chassis/seat/ballast\"]")
    out: dict[str, Any] = {"groups": tuple(groups)}
    if ("limit" in table) == ("reference" in table):
        raise rd.error(item, "limit", "give either limit (least CG height above the ground) or reference (a group "
                                      "such as \"driver\") with band")
    if "limit" in table:
        out["limit"] = rd.quantity(table["limit"], "length", item, "limit")
    else:
        if not isinstance(table["reference"], str) or not table["reference"]:
            raise rd.error(item, "reference", "expected a group path such as \"driver\"")
        if "band" not in table:
            raise rd.error(item, "band", "is missing: how far above or below the reference's CG height, e.g. '50 mm'")
        out["reference"] = table["reference"]
        out["band"] = rd.quantity(table["band"], "length", item, "band")
        if out["band"] < 0.0:
            raise rd.error(item, "band", "must not be negative")
    return out


def select_case(
    cases: Sequence[LoadCase],
    active: LoadCase | None,
    components: Sequence[Component],
    optional: set[str],
    rules: Sequence[Rule],
) -> tuple[list[Component], tuple[Rule, ...]]:
    """Check every case's part selection, then keep the parts and rules of ``active`` (None: the base model)."""
    for case, field, message in check_cases(cases, (c.path for c in components), optional):
        raise ModelFileError(case.file, f"case '{case.name}'", field, message)
    kept = [c for c in components if case_includes(c.path, c.path in optional, active)]
    return kept, tuple(r for r in rules if rule_applies(r, active))
