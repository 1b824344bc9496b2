"""Re-evaluate a model file read once at many parameter points, rebuilding only what the varied parameters reach.

A study varies a few parameters; most parts of a car do not depend on them. :class:`Evaluator` builds the model
once (the *base*), finds which [[part]], [[driver]] and [[group]] tables can be reached from the varied parameters
(their texts name a varied parameter or a parameter that depends on one, directly or through an enclosing group),
and at each point builds only those tables (:func:`massmodel.modelfile.loader.build_model` on a reduced source),
putting the rebuilt components in place of the base ones, in the base order. The result is the model a full build
would give: same components in the same order from the same arithmetic, so the sums agree to the last bit (the
tests compare against full builds).

The analysis is conservative: any identifier in an expression text counts as a use, so it may rebuild more than
needed, never less. It falls back to full builds when a varied parameter reaches a material or a rule (their
values are shared by parts the reduced source would not hold), or when it reaches no part at all (e.g. only the
[vehicle] section). The base model is checked in full (every rule group, every load case), so the reduced builds
can skip the checks that do not depend on parameters (paths, rule groups, case selections).
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from massmodel.core import batch, expr
from massmodel.core.errors import UsageError
from massmodel.core.loadcases import BASE_CASE
from massmodel.core.massprops import MassProperties
from massmodel.core.model import Model, part_arrays
from massmodel.modelfile.loader import ModelSource, build_model
from massmodel.modelfile.reader import ModelFileError, read_toml

__all__ = ["Evaluator", "affected_parameters"]

_IDENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")
# fields holding free text or names, never an expression (scanning them would only rebuild more than needed)
_TEXT_FIELDS = frozenset({"path", "note", "description", "colour", "maturity", "name", "slot"})


def _names_in_text(value: Any) -> set[str]:
    """Parameter names an expression may use (every identifier when the text does not parse: over, never under)."""
    if not isinstance(value, str):
        return set()
    try:
        return expr.referenced_names(value)
    except expr.ExpressionError:
        return set(_IDENT.findall(value))


def _mentions(value: Any, names: set[str]) -> bool:
    """Whether any text inside a TOML value (tables and lists searched) may use one of ``names``."""
    if isinstance(value, str):
        return not names.isdisjoint(_IDENT.findall(value))
    if isinstance(value, dict):
        return any(_mentions(v, names) for k, v in value.items() if k not in _TEXT_FIELDS)
    if isinstance(value, list):
        return any(_mentions(v, names) for v in value)
    return False


def affected_parameters(definitions: Mapping[str, Any], varied: Iterable[str]) -> set[str]:
    """The varied parameters and every parameter whose definition uses one of them, directly or not.

    Parameters
    ----------
    definitions : mapping of str to str or number
        Parameter name → expression text, with overrides already applied.
    varied : iterable of str
        Names whose values change.
    """
    deps = {name: _names_in_text(text) for name, text in definitions.items()}
    affected = set(varied)
    grew = True
    while grew:
        grew = False
        for name, uses in deps.items():
            if name not in affected and not uses.isdisjoint(affected):
                affected.add(name)
                grew = True
    return affected


def _under(path: Any, groups: set[str]) -> bool:
    """Whether a table's path lies at or under one of ``groups``."""
    if not isinstance(path, str):
        return True  # a bad table: let the build report it
    return any(path == g or path.startswith(g + "/") for g in groups)


class Evaluator:
    """Models of one model file at many parameter points (see the module notes).

    Parameters
    ----------
    source : ModelSource
        The file read once.
    varied : iterable of str
        Parameters that the points set.
    overrides : mapping, optional
        Fixed overrides (name → expression text) applied at every point, before the point's own.
    case : str, optional
        Load case of every point.
    partial : bool
        False forces a full build at every point (the reference the partial builds are checked against).

    Attributes
    ----------
    base : Model
        The model with the fixed overrides only.
    reason : str
        Why full builds are used (empty when partial builds are used).
    rebuilt : tuple of str
        Paths of the components rebuilt at each point.

    Raises
    ------
    ModelFileError
        The base model cannot be built, or a varied name is not a parameter of the file.
    """

    def __init__(self, source: ModelSource, varied: Iterable[str], overrides: Mapping[str, str] | None = None,
                 case: str | None = None, partial: bool = True) -> None:
        self.source = source
        self.varied = tuple(dict.fromkeys(varied))
        self.overrides = dict(overrides or {})
        self.case = None if case in (None, BASE_CASE) else case
        self.base = build_model(source, self.overrides, self.case)
        params = source.data.get("parameters", {})
        for name in self.varied:
            if name not in params:
                known = ", ".join(params) or "none are defined"
                raise ModelFileError(source.label, f"parameter '{name}'", None,
                                     f"the model has no such parameter (parameters: {known})")
        active = next((c for c in self.base.load_cases if c.name == self.case), None)
        self._case_overrides = active.override_map if active is not None else {}
        self.reason = ""
        self.rebuilt: tuple[str, ...] = ()
        self._reduced: ModelSource | None = None
        if partial:
            self._plan()
        else:
            self.reason = "full builds requested"

    # --- planning --------------------------------------------------------------------------------------------
    def _plan(self) -> None:
        data = self.source.data
        definitions = {**data.get("parameters", {}), **self._case_overrides, **self.overrides}
        names = affected_parameters(definitions, self.varied)
        if _mentions(data.get("materials", {}), names):
            self.reason = "a varied parameter sets a material's density"
            return
        if _mentions(data.get("rule", []), names) or _mentions(self._rulebook_rules(), names):
            self.reason = "a varied parameter sets a rule's limit"
            return
        vehicle_touched = _mentions(data.get("vehicle", {}), names)
        groups = {g.get("path") for g in data.get("group", []) if isinstance(g, dict) and _mentions(g, names)}
        touched_groups = {g for g in groups if isinstance(g, str)}
        parts = [t for t in data.get("part", []) if _mentions(t, names) or _under(t.get("path"), touched_groups)]
        drivers = [t for t in data.get("driver", [])
                   if vehicle_touched or _mentions(t, names) or _under(t.get("path"), touched_groups)
                   or any(isinstance(t.get("path"), str) and g.startswith(t["path"] + "/") for g in touched_groups)]
        if not parts and not drivers:
            self.reason = "the varied parameters reach no part (e.g. only the [vehicle] section)"
            return
        head = {k: v for k, v in data.get("model", {}).items() if k != "rulebook"}
        # the reduced source builds parts only: sections that describe the whole car ([uncertainty] items name parts
        # that are not rebuilt, [chassis]) stay with the base model, whose values the point's model keeps
        reduced = {k: v for k, v in data.items()
                   if k not in ("part", "driver", "rule", "case", "allowed_contact", "uncertainty", "chassis")}
        reduced["model"] = head
        reduced["part"] = [_without(t, "optional") for t in parts]
        reduced["driver"] = [_without(t, "optional") for t in drivers]
        # only the groups enclosing a rebuilt table, the slots they name and the parameters all of it uses
        paths = [t.get("path") for t in parts + drivers if isinstance(t.get("path"), str)]
        reduced["group"] = [_without(g, "optional") for g in data.get("group", [])
                            if not isinstance(g, dict) or any(_under(p, {str(g.get("path"))}) for p in paths)]
        slots = {t.get("slot") for t in parts}
        reduced["slot"] = [t for t in data.get("slot", []) if not isinstance(t, dict) or t.get("name") in slots]
        reduced["parameters"] = _needed(definitions, data.get("parameters", {}), reduced,
                                        names | set(self._case_overrides) | set(self.overrides))
        self._reduced = ModelSource(reduced, self.source.label, self.source.base_dir)
        first = self._build_reduced({})
        base_paths = {c.path for c in self.base.components}
        self.rebuilt = tuple(c.path for c in first.components if c.path in base_paths)
        rebuilt = set(self.rebuilt)
        self._rebuilt_index = [i for i, c in enumerate(self.base.components) if c.path in rebuilt]
        self._base_arrays = self.base.arrays()
        if not self.rebuilt:  # every reachable part is switched off in this case
            self._reduced = None
            self.reason = "the varied parameters reach no part of this load case"

    def _rulebook_rules(self) -> list[Any]:
        book = self.source.data.get("model", {}).get("rulebook")
        if not isinstance(book, str):
            return []
        path = Path(self.source.base_dir) / book
        return list(read_toml(path, str(path)).get("rule", []))

    def _build_reduced(self, point: Mapping[str, str]) -> Model:
        assert self._reduced is not None
        return build_model(self._reduced, {**self._case_overrides, **self.overrides, **point}, None)

    # --- evaluation ------------------------------------------------------------------------------------------
    @property
    def partial(self) -> bool:
        """Whether points rebuild only the reachable parts."""
        return self._reduced is not None

    def model(self, point: Mapping[str, str]) -> Model:
        """The model at one point (varied name → expression text, e.g. ``{"fuel_mass": "12.5 kg"}``).

        Raises
        ------
        ModelFileError
            The file cannot be built at this point (e.g. a shape size becomes zero); the message names the
            file, the item and the field.
        """
        unknown = [n for n in point if n not in self.varied]
        if unknown:
            raise UsageError(f"'{unknown[0]}' is not one of the varied parameters ({', '.join(self.varied)})")
        if self._reduced is None:
            return build_model(self.source, {**self.overrides, **point}, self.case)
        reduced = self._build_reduced(point)
        fresh = {c.path: c for c in reduced.components}
        rebuilt = set(self.rebuilt)
        base = self.base
        components = tuple(fresh[c.path] if c.path in rebuilt else c for c in base.components)
        return Model(
            name=base.name, components=components, vehicle=reduced.vehicle, rules=base.rules, slots=reduced.slots,
            parameters={**base.parameters, **reduced.parameters}, materials=base.materials, source=base.source,
            description=base.description, case=base.case, load_cases=base.load_cases,
            allowed_contacts=base.allowed_contacts,
        )

    def evaluate(self, point: Mapping[str, str]) -> tuple[Model, MassProperties]:
        """The model at one point and its total mass properties.

        With partial rebuilds the total is combined from the base's stacked arrays with the rebuilt rows replaced:
        the arrays :meth:`Model.mass_properties` would stack, without stacking the unchanged rows again.
        """
        model = self.model(point)
        if self._reduced is None:
            return model, model.mass_properties()
        masses, centers, inertias = (a.copy() for a in self._base_arrays)
        idx = self._rebuilt_index
        if idx:  # the rebuilt rows by the same engine as a full build (massmodel.core.batch), then one roll-up
            masses[idx], centers[idx], inertias[idx] = part_arrays([model.components[i] for i in idx])
        model.adopt_arrays(masses, centers, inertias)  # the rows a full build would make: kept for rule values
        return model, batch.rollup(masses, centers, inertias)


def _texts(value: Any, out: set[str]) -> None:
    """Every identifier in the texts of a TOML value (free-text fields skipped)."""
    if isinstance(value, str):
        out.update(_IDENT.findall(value))
    elif isinstance(value, dict):
        for k, v in value.items():
            if k not in _TEXT_FIELDS:
                _texts(v, out)
    elif isinstance(value, list):
        for v in value:
            _texts(v, out)


def _needed(definitions: Mapping[str, Any], parameters: Mapping[str, Any], reduced: Mapping[str, Any],
            extra: set[str]) -> dict[str, Any]:
    """The file's parameters that the reduced tables (or ``extra`` names) use, with everything they use in turn
    (under ``definitions``, the texts after overrides), in file order."""
    wanted: set[str] = set(extra)
    for key, value in reduced.items():
        if key != "parameters":
            _texts(value, wanted)
    todo = [n for n in wanted if n in definitions]
    keep: set[str] = set()
    while todo:
        name = todo.pop()
        if name in keep:
            continue
        keep.add(name)
        todo.extend(n for n in _names_in_text(definitions[name]) if n in definitions and n not in keep)
    return {k: v for k, v in parameters.items() if k in keep}


def _without(table: Any, key: str) -> Any:
    """A shallow copy of a table without ``key`` (other values are shared; build_model copies before use)."""
    if not isinstance(table, dict) or key not in table:
        return table
    return {k: v for k, v in table.items() if k != key}
