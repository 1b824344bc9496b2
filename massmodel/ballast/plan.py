"""Ballast plans: candidate slots, the targets and the objective, read from a TOML file (see docs/ballast.md).

A plan is read against a model: its candidates name the model's ``[[slot]]`` tables (or define box slots of their
own), its values may use the model's parameters, and its materials come from the model's library. Every value with
a dimension carries its unit, unless the plan's ``[units]`` table declares a default length or mass unit; points and
sizes take the syntax of every input file (:mod:`massmodel.modelfile.reader`: ``"120, 100, 40 mm"`` or a list).
Errors name the file, the item and the field (:class:`PlanError`, an :class:`massmodel.core.errors.InputError`).
"""

from __future__ import annotations

import enum
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import expr, units
from massmodel.core.errors import InputError, NotFoundError, UsageError
from massmodel.core.frames import Pose, RotationKind, rotation_from_sequence
from massmodel.core.materials import Material
from massmodel.core.model import Model, in_group
from massmodel.modelfile.reader import TableReader, expression_message, parse_toml, read_text, read_units

from .block import BlockError
from .sizing import BlockSpec, Envelope, Fill, SizingError, spec_from_parts

__all__ = ["PlanError", "Objective", "Targets", "Candidate", "Plan", "load_plan", "loads_plan", "PLAN_FORMAT"]

PLAN_FORMAT = 1
TOP_KEYS = {"plan", "units", "targets", "defaults", "candidate", "margins"}
_UNIT_KINDS = {"length": units.LENGTH, "mass": units.MASS}
TARGET_FIELDS = {"mass_margin", "front_fraction", "fraction_margin", "cg_height_margin", "lateral_offset_max",
                 "objective", "weights", "ballast_allowance", "max_ballast", "scale_resolution", "cases"}
SPEC_FIELDS = {"material", "fill", "fixed", "increment", "holes", "chamfer", "stock", "max_segment_mass",
               "min_thickness"}
CANDIDATE_FIELDS = SPEC_FIELDS | {"slot", "box", "capacity", "path", "replace_existing", "note"}
HOLE_FIELDS = {"pattern", "count", "diameter", "axis", "pitch", "columns", "rows", "pcd", "along", "points",
               "counterbore", "counterbore_end"}


class PlanError(InputError):
    """A problem in a ballast plan, naming the file, the item and the field."""


class Objective(enum.Enum):
    """What the placement minimises once the rules are met with the least ballast."""

    CG_HEIGHT = "cg_height"
    YAW_INERTIA = "yaw_inertia"
    MIX = "mix"
    FRONT_FRACTION = "front_fraction"  # closest to the target front fraction (needs front_fraction.target)


@dataclass(frozen=True, slots=True)
class Targets:
    """Rules and targets of a placement (SI).

    Attributes
    ----------
    mass_margin : float
        kg above every mass minimum (``min_mass``, ``min_group_mass``, ``min_axle_load``), met at the LOW end of
        each ballast material's density band.
    fraction_target, fraction_tolerance : float or None
        Wanted front fraction and its half-band; intersected with the rule's band.
    fraction_margin : float
        Kept inside the front-fraction rule's band (fraction).
    cg_height_margin : float
        Kept below a ``max_cg_height`` rule, m.
    lateral_offset_max : float or None
        Largest CG offset from the centre plane, m (left/right balance).
    objective : Objective
    weight_height, weight_yaw : float
        Weights of the ``mix`` objective.
    ballast_allowance : float
        How much more than the least ballast meeting the rules the objective may use, kg (nominal): the choice
        between slots of different density bands shifts the least total by a few grams, and a larger allowance
        lets the optimiser add ballast where it lowers the CG.
    max_ballast : float or None
        Most ballast allowed in total, kg (nominal).
    scale_resolution : float
        Resolution of the scales the car is weighed on, kg: kept as a further margin on every mass rule.
    cases : tuple of str
        The load cases the targets (front-fraction target, lateral offset) apply in; empty: every case.
    """

    mass_margin: float
    fraction_target: float | None = None
    fraction_tolerance: float | None = None
    fraction_margin: float = 0.0
    cg_height_margin: float = 0.0
    lateral_offset_max: float | None = None
    objective: Objective = Objective.CG_HEIGHT
    weight_height: float = 0.5
    weight_yaw: float = 0.5
    ballast_allowance: float = 0.05
    max_ballast: float | None = None
    scale_resolution: float = 0.0
    cases: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class Candidate:
    """A slot the placement may put ballast in.

    Attributes
    ----------
    name : str
        Slot name.
    envelope : Envelope
    spec : BlockSpec
    path : str
        Part path of the new block (a group path for a plate stack).
    capacity : float or None
        Most ballast here at the HIGH end of the density band, kg (structure or handling limit).
    replace : tuple of str
        Paths of the parts now in the slot that the new block replaces.
    from_plan : bool
        True when the slot is defined by the plan (it is then written into the ballasted model).
    note : str
    """

    name: str
    envelope: Envelope
    spec: BlockSpec
    path: str
    capacity: float | None = None
    replace: tuple[str, ...] = ()
    from_plan: bool = False
    note: str = ""


@dataclass(frozen=True, eq=False)
class Plan:
    """A ballast plan: candidates and targets."""

    name: str
    candidates: tuple[Candidate, ...]
    targets: Targets
    source: str = ""
    description: str = ""
    margins: tuple[tuple[str, float, str], ...] = ()  # [margins]: (rule name, SI value, "mass"/"length"/"number")

    def candidate(self, name: str) -> Candidate:
        for c in self.candidates:
            if c.name == name:
                return c
        raise NotFoundError(f"the plan has no candidate slot '{name}'; candidates: "
                       f"{', '.join(c.name for c in self.candidates)}")

    def without(self, names: Sequence[str]) -> Plan:
        """The plan without some candidates (unknown names are an error)."""
        for n in names:
            self.candidate(n)
        return replace(self, candidates=tuple(c for c in self.candidates if c.name not in names))

    def with_targets(self, **changes: Any) -> Plan:
        return replace(self, targets=replace(self.targets, **changes))

    def with_candidate(self, name: str, **changes: Any) -> Plan:
        self.candidate(name)
        return replace(self, candidates=tuple(replace(c, **changes) if c.name == name else c
                                              for c in self.candidates))


class _Reader(TableReader):
    error_type = PlanError

    def __init__(self, file: str, env: Mapping[str, units.Quantity], defaults: Mapping[str, float]) -> None:
        super().__init__(file)
        self.env = env
        self.defaults = defaults  # kind -> SI size of the [units] default

    def quantity(self, value: Any, dim: units.Dimension, what: str, item: str, field: str) -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise self.error(item, field, f"expected a {what}, got {value!r}")
        try:
            q = expr.evaluate(value, self.env)
        except (expr.ExpressionError, units.UnitError) as exc:
            raise self.error(item, field, expression_message(exc)) from None
        kind = next((k for k, d in _UNIT_KINDS.items() if d == dim), None)
        if q.dim == units.DIMENSIONLESS and kind is not None and kind in self.defaults:
            q = units.Quantity(q.value * self.defaults[kind], dim)
        if q.dim != dim:
            hint = " (the plan's [units] declares no default units: write the unit, e.g. '2 mm' or '1.5 kg')" \
                if q.dim == units.DIMENSIONLESS else ""
            raise self.error(item, field, f"expected a {what}, got {value!r} ({q.dim}){hint}")
        if not math.isfinite(q.value):
            raise self.error(item, field, "must be finite")
        return float(q.value)

    def length(self, value: Any, item: str, field: str, positive: bool = True) -> float:
        v = self.quantity(value, units.LENGTH, "length such as '2 mm'", item, field)
        if positive and v <= 0.0:
            raise self.error(item, field, f"must be a positive length, got {value!r}")
        return v

    def mass(self, value: Any, item: str, field: str, allow_zero: bool = False) -> float:
        v = self.quantity(value, units.MASS, "mass such as '1.5 kg'", item, field)
        if v < 0.0 or (v == 0.0 and not allow_zero):
            raise self.error(item, field, f"must be a {'non-negative' if allow_zero else 'positive'} mass, "
                             f"got {value!r}")
        return v

    def number(self, value: Any, item: str, field: str) -> float:
        return self.quantity(value, units.DIMENSIONLESS, "plain number", item, field)

    def lengths(self, value: Any, n: int, item: str, field: str, positive: bool = True) -> list[float]:
        entries = self.entries(value, n, item, field, "point" if n == 3 and not positive else "list of lengths")
        return [self.length(v, item, f"{field}[{i}]", positive) for i, v in enumerate(entries)]

    def check(self, table: Any, allowed: set[str], item: str) -> None:
        self.check_fields(table, allowed, item)


def load_plan(path: str | Path, model: Model) -> Plan:
    """Read a ballast plan for a model.

    Parameters
    ----------
    path : str or Path
        The plan (TOML).
    model : Model
        The car: slots, materials, parameters and existing ballast.

    Raises
    ------
    PlanError
        Naming the file, the item and the field.
    """
    return loads_plan(read_text(Path(path), str(path), PlanError), model, label=str(path))


def loads_plan(text: str, model: Model, label: str = "<plan>") -> Plan:
    """Like :func:`load_plan`, from a string."""
    data = parse_toml(text, label, PlanError)
    rd = _Reader(label, model.parameters, read_units(data.get("units", {}), _UNIT_KINDS, label, PlanError))
    unknown = sorted(set(data) - TOP_KEYS)
    if unknown:
        raise rd.error(None, None, f"unknown section '{unknown[0]}'; sections: {', '.join(sorted(TOP_KEYS))}")
    head = data.get("plan", {})
    rd.check(head, {"name", "description", "format"}, "[plan]")
    if head.get("format", PLAN_FORMAT) != PLAN_FORMAT:
        raise rd.error("[plan]", "format", f"this massmodel reads plan format {PLAN_FORMAT}")
    name = head.get("name")
    if not isinstance(name, str) or not name.strip():
        raise rd.error("[plan]", "name", "is missing (every plan needs a name)")
    targets = _targets(rd, data.get("targets"))
    defaults = data.get("defaults", {})
    rd.check(defaults, SPEC_FIELDS, "[defaults]")
    tables = data.get("candidate", [])
    if not isinstance(tables, list) or not tables or not all(isinstance(t, dict) for t in tables):
        raise rd.error("[[candidate]]", None, "a plan needs at least one [[candidate]] table")
    candidates = [_candidate(rd, t, i, defaults, model) for i, t in enumerate(tables)]
    names = [c.name for c in candidates]
    for n in names:
        if names.count(n) > 1:
            raise rd.error(f"candidate '{n}'", "slot", "is listed more than once")
    paths = [c.path for c in candidates]
    for c in candidates:
        if paths.count(c.path) > 1:
            raise rd.error(f"candidate '{c.name}'", "path", f"'{c.path}' is used by more than one candidate")
    if targets.objective is Objective.FRONT_FRACTION and targets.fraction_target is None:
        raise rd.error("[targets]", "objective", "front_fraction needs front_fraction = { target = ..., tolerance = ... }")
    return Plan(name.strip(), tuple(candidates), targets, source=label, description=str(head.get("description", "")),
                margins=_margins(rd, data.get("margins", {})))


def _margins(rd: _Reader, table: Any) -> tuple[tuple[str, float, str], ...]:
    """``[margins]``: rule name = margin with its unit (mass, length, or a plain fraction); checked against the
    rule's kind when the rules of the cases are known (:func:`massmodel.ballast.requirements.resolve_margins`)."""
    if not isinstance(table, dict):
        raise rd.error("[margins]", None, "expected a table of rule name = margin")
    out = []
    for name, value in table.items():
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise rd.error("[margins]", name, f"expected a margin such as '0.3 kg', '3 mm' or 0.002, got {value!r}")
        try:
            q = expr.evaluate(value, rd.env)
        except (expr.ExpressionError, units.UnitError) as exc:
            raise rd.error("[margins]", name, str(exc)) from None
        dims = {units.MASS: "mass", units.LENGTH: "length", units.DIMENSIONLESS: "number"}
        if q.dim not in dims:
            raise rd.error("[margins]", name, f"a margin is a mass, a length or a plain fraction, got {value!r} "
                           f"({q.dim})")
        if not (math.isfinite(q.value) and q.value >= 0.0):
            raise rd.error("[margins]", name, f"must be >= 0 and finite, got {value!r}")
        out.append((str(name), float(q.value), dims[q.dim]))
    return tuple(out)


def _targets(rd: _Reader, table: Any) -> Targets:
    item = "[targets]"
    if table is None:
        raise rd.error(item, None, "is missing: a plan states at least mass_margin")
    rd.check(table, TARGET_FIELDS, item)
    if "mass_margin" not in table:
        raise rd.error(item, "mass_margin", "is missing (the mass kept above every rule minimum, e.g. '0.5 kg')")
    kw: dict[str, Any] = {"mass_margin": rd.mass(table["mass_margin"], item, "mass_margin", allow_zero=True)}
    if "front_fraction" in table:
        ff = table["front_fraction"]
        rd.check(ff, {"target", "tolerance"}, f"{item} front_fraction")
        if "target" not in ff or "tolerance" not in ff:
            raise rd.error(item, "front_fraction", "give { target = 0.436, tolerance = 0.004 }")
        t = rd.number(ff["target"], item, "front_fraction.target")
        tol = rd.number(ff["tolerance"], item, "front_fraction.tolerance")
        if not 0.0 < t < 1.0:
            raise rd.error(item, "front_fraction.target", "a fraction lies between 0 and 1")
        if not 0.0 <= tol < 0.5:
            raise rd.error(item, "front_fraction.tolerance", "must be a fraction from 0 to 0.5")
        kw["fraction_target"], kw["fraction_tolerance"] = t, tol
    if "fraction_margin" in table:
        kw["fraction_margin"] = rd.number(table["fraction_margin"], item, "fraction_margin")
        if not 0.0 <= kw["fraction_margin"] < 0.5:
            raise rd.error(item, "fraction_margin", "must be a fraction from 0 to 0.5")
    if "cg_height_margin" in table:
        kw["cg_height_margin"] = rd.length(table["cg_height_margin"], item, "cg_height_margin", positive=False)
        if kw["cg_height_margin"] < 0.0:
            raise rd.error(item, "cg_height_margin", "must not be negative")
    if "lateral_offset_max" in table:
        kw["lateral_offset_max"] = rd.length(table["lateral_offset_max"], item, "lateral_offset_max", positive=False)
        if kw["lateral_offset_max"] < 0.0:
            raise rd.error(item, "lateral_offset_max", "must not be negative")
    if "objective" in table:
        try:
            kw["objective"] = Objective(table["objective"])
        except ValueError:
            raise rd.error(item, "objective", f"expected one of {', '.join(o.value for o in Objective)}, "
                           f"got {table['objective']!r}") from None
    if "weights" in table:
        w = table["weights"]
        rd.check(w, {"cg_height", "yaw_inertia"}, f"{item} weights")
        kw["weight_height"] = rd.number(w.get("cg_height", 0.0), item, "weights.cg_height")
        kw["weight_yaw"] = rd.number(w.get("yaw_inertia", 0.0), item, "weights.yaw_inertia")
        if kw["weight_height"] < 0 or kw["weight_yaw"] < 0 or kw["weight_height"] + kw["weight_yaw"] <= 0:
            raise rd.error(item, "weights", "weights must be >= 0 and not both zero")
    if "ballast_allowance" in table:
        kw["ballast_allowance"] = rd.mass(table["ballast_allowance"], item, "ballast_allowance", allow_zero=True)
    if "max_ballast" in table:
        kw["max_ballast"] = rd.mass(table["max_ballast"], item, "max_ballast")
    if "cases" in table:
        cs = table["cases"]
        if not isinstance(cs, list) or not cs or not all(isinstance(c, str) and c for c in cs):
            raise rd.error(item, "cases", f"expected a list of load-case names, got {cs!r}")
        kw["cases"] = tuple(cs)
    if "scale_resolution" in table:
        kw["scale_resolution"] = rd.mass(table["scale_resolution"], item, "scale_resolution", allow_zero=True)
    return Targets(**kw)


def _material(rd: _Reader, key: Any, model: Model, item: str) -> Material:
    if not isinstance(key, str):
        raise rd.error(item, "material", f"expected a material key such as 'tungsten_b777_class4', got {key!r}")
    if key not in model.materials:
        import difflib

        close = difflib.get_close_matches(key, list(model.materials), n=3)
        raise rd.error(item, "material", f"unknown material {key!r}" +
                       (f"; did you mean {', '.join(close)}?" if close else "; `massmodel materials` lists the library"))
    return model.materials[key]


def _holes(rd: _Reader, table: Any, item: str, fill_letter: str) -> dict[str, Any]:
    rd.check(table, HOLE_FIELDS, f"{item} holes")
    out: dict[str, Any] = {}
    kind = table.get("pattern")
    if kind not in ("line", "grid", "circle", "points"):
        raise rd.error(item, "holes.pattern", f"expected line, grid, circle or points, got {kind!r}")
    out["kind"] = kind
    if "diameter" not in table:
        raise rd.error(item, "holes.diameter", "is missing")
    out["diameter"] = rd.length(table["diameter"], item, "holes.diameter")
    out["axis"] = table.get("axis", fill_letter)
    if out["axis"] not in ("x", "y", "z"):
        raise rd.error(item, "holes.axis", f"expected x, y or z, got {out['axis']!r}")
    if kind == "grid":
        for key in ("columns", "rows"):
            v = table.get(key)
            if isinstance(v, bool) or not isinstance(v, int) or v < 1:
                raise rd.error(item, f"holes.{key}", f"a grid needs a whole number of {key}, got {v!r}")
        out["columns"] = table["columns"]
        out["count"] = table["columns"] * table["rows"]
        pitch = table.get("pitch")
        out["pitch"], out["pitch2"] = rd.lengths(pitch, 2, item, "holes.pitch")
    elif kind == "points":
        pts = table.get("points")
        if not isinstance(pts, list) or not pts:
            raise rd.error(item, "holes.points", "expected a list of [p, q] hole centres")
        out["points"] = tuple(tuple(rd.lengths(pt, 2, item, f"holes.points[{i}]", positive=False))
                              for i, pt in enumerate(pts))
        out["count"] = len(pts)
    else:
        count = table.get("count")
        if isinstance(count, bool) or not isinstance(count, int):
            raise rd.error(item, "holes.count", f"expected a whole number, got {count!r}")
        out["count"] = count
        if kind == "line":
            if "pitch" in table:
                out["pitch"] = rd.length(table["pitch"], item, "holes.pitch")
            if "along" in table:
                out["along"] = table["along"]
        elif "pcd" in table:
            out["pcd"] = rd.length(table["pcd"], item, "holes.pcd")
    if "counterbore" in table:
        cb = table["counterbore"]
        rd.check(cb, {"diameter", "depth"}, f"{item} holes.counterbore")
        if "diameter" not in cb or "depth" not in cb:
            raise rd.error(item, "holes.counterbore", "give { diameter = ..., depth = ... }")
        out["counterbore_diameter"] = rd.length(cb["diameter"], item, "holes.counterbore.diameter")
        out["counterbore_depth"] = rd.length(cb["depth"], item, "holes.counterbore.depth")
    if "counterbore_end" in table:
        end = table["counterbore_end"]
        if end not in ("+", "-"):
            raise rd.error(item, "holes.counterbore_end", f"expected \"+\" or \"-\", got {end!r}")
        out["counterbore_end"] = 1 if end == "+" else -1
    return out


def _spec(rd: _Reader, table: Mapping[str, Any], item: str, model: Model) -> BlockSpec:
    if "material" not in table:
        raise rd.error(item, "material", "is missing (here or in [defaults]): ballast has no default material")
    material = _material(rd, table["material"], model, item)
    fill = table.get("fill")
    if not isinstance(fill, str):
        raise rd.error(item, "fill", "is missing: say how the block grows, e.g. \"+z\" (from the slot floor upwards)")
    kw: dict[str, Any] = {}
    fixed = table.get("fixed", {})
    rd.check(fixed, {"x", "y", "z"}, f"{item} fixed")
    kw["fixed"] = {k: rd.length(v, item, f"fixed.{k}") for k, v in fixed.items()}
    if "increment" not in table:
        raise rd.error(item, "increment", "is missing (here or in [defaults]): the manufacturing increment, "
                       "e.g. '0.5 mm'")
    kw["increment"] = rd.length(table["increment"], item, "increment")
    if "chamfer" in table:
        ch = table["chamfer"]
        rd.check(ch, {"size", "edges"}, f"{item} chamfer")
        if "size" not in ch:
            raise rd.error(item, "chamfer.size", "is missing")
        edges = ch.get("edges", "xyz")
        if not isinstance(edges, str):
            raise rd.error(item, "chamfer.edges", "expected axis letters such as \"xyz\"")
        kw["chamfer"] = (rd.length(ch["size"], item, "chamfer.size"), edges)
    try:
        fill_letter = str(Fill.parse(fill))[-1]  # a bad fill is reported as the fill, not as the holes' axis
    except SizingError as exc:
        raise rd.error(item, "fill", str(exc)) from None
    if "holes" in table:
        kw["holes"] = _holes(rd, table["holes"], item, fill_letter)
    if "stock" in table:
        st = table["stock"]
        if not isinstance(st, list) or not st:
            raise rd.error(item, "stock", "expected a list of stock plate thicknesses")
        kw["stock"] = [rd.length(v, item, f"stock[{i}]") for i, v in enumerate(st)]
    if "max_segment_mass" in table:
        kw["max_segment_mass"] = rd.mass(table["max_segment_mass"], item, "max_segment_mass")
    if "min_thickness" in table:
        kw["min_thickness"] = rd.length(table["min_thickness"], item, "min_thickness")
    try:
        return spec_from_parts(material, fill, **kw)
    except (SizingError, BlockError) as exc:
        raise rd.error(item, getattr(exc, "field", None) or None, str(exc)) from None


def _box_envelope(rd: _Reader, name: str, table: Any, item: str) -> Envelope:
    rd.check(table, {"size", "at", "rotate", "clearance"}, f"{item} box")
    if "size" not in table or "clearance" not in table:
        raise rd.error(item, "box", "a plan slot needs size = [x, y, z], at = [x, y, z] (model frame) and clearance")
    size = rd.lengths(table["size"], 3, item, "box.size")
    at = rd.lengths(table.get("at", ["0 mm"] * 3), 3, item, "box.at", positive=False)
    clearance = rd.length(table["clearance"], item, "box.clearance", positive=False)
    if clearance < 0.0:
        raise rd.error(item, "box.clearance", "must not be negative")
    linear = np.eye(3)
    if "rotate" in table:
        rot = table["rotate"]
        rd.check(rot, {"extrinsic", "intrinsic", "angles"}, f"{item} box.rotate")
        kinds = [k for k in ("extrinsic", "intrinsic") if k in rot]
        if len(kinds) != 1 or "angles" not in rot or not isinstance(rot["angles"], list):
            raise rd.error(item, "box.rotate", "give one of extrinsic/intrinsic (e.g. \"xyz\") and angles")
        seq = rot[kinds[0]]
        if not isinstance(seq, str) or len(seq) != len(rot["angles"]) or any(ch not in "xyz" for ch in seq):
            raise rd.error(item, "box.rotate", "the axis sequence and the angles must match")
        angles = tuple(rd.quantity(a, units.ANGLE, "angle such as '5 deg'", item, f"box.rotate.angles[{i}]")
                       for i, a in enumerate(rot["angles"]))
        linear = rotation_from_sequence(RotationKind(kinds[0]), seq, angles)
    try:
        return Envelope(name, (size[0], size[1], size[2]), Pose(linear, np.array(at)), clearance)
    except SizingError as exc:
        raise rd.error(item, "box", str(exc)) from None


def _candidate(rd: _Reader, table: dict[str, Any], index: int, defaults: Mapping[str, Any], model: Model) -> Candidate:
    name = table.get("slot")
    if not isinstance(name, str) or not name.strip():
        raise rd.error(f"candidate #{index + 1}", "slot", "is missing (the name of a model slot, or a new name "
                       "with a box)")
    item = f"candidate '{name}'"
    rd.check(table, CANDIDATE_FIELDS, item)
    merged = {**defaults, **{k: v for k, v in table.items() if k in SPEC_FIELDS}}
    model_slots = {s.name: s for s in model.slots}
    if "box" in table:
        if name in model_slots:
            raise rd.error(item, "box", f"the model already has a slot '{name}'; give the plan's slot another name")
        envelope = _box_envelope(rd, name, table["box"], item)
        from_plan = True
    else:
        if name not in model_slots:
            raise rd.error(item, "slot", f"the model has no slot '{name}' (slots: "
                           f"{', '.join(model_slots) or 'none'}); give a box = {{...}} to define one in the plan")
        try:
            envelope = Envelope.from_slot(model_slots[name])
        except SizingError as exc:
            raise rd.error(item, "slot", str(exc)) from None
        from_plan = False
    try:
        envelope.available  # noqa: B018 - raises when the slot is smaller than twice its clearance
    except SizingError as exc:
        raise rd.error(item, "slot", str(exc)) from None
    spec = _spec(rd, merged, item, model)
    path = table.get("path", f"ballast/{name}")
    if not isinstance(path, str) or not path or path.startswith("/") or "//" in path:
        raise rd.error(item, "path", f"expected a part path such as 'ballast/{name}', got {path!r}")
    occupants = tuple(c.path for c in model.components if c.slot == name)
    replace_existing = table.get("replace_existing", False)
    if not isinstance(replace_existing, bool):
        raise rd.error(item, "replace_existing", "expected true or false")
    if occupants and not replace_existing:
        raise rd.error(item, "replace_existing",
                       f"slot '{name}' already holds {', '.join(occupants)}; add replace_existing = true to size a new "
                       "block in its place, or leave the slot out of the plan")
    if not occupants and replace_existing:
        raise rd.error(item, "replace_existing", f"slot '{name}' holds no parts to replace")
    clash = [c.path for c in model.components
             if c.path not in occupants and (in_group(c.path, path) or in_group(path, c.path))]
    if clash:
        raise rd.error(item, "path", f"'{path}' collides with the model's part {clash[0]}")
    capacity = rd.mass(table["capacity"], item, "capacity") if "capacity" in table else None
    note = table.get("note", "")
    return Candidate(name, envelope, spec, path, capacity, occupants if replace_existing else (), from_plan,
                     str(note))


def material_override(plan: Plan, model: Model, assignments: Sequence[str]) -> Plan:
    """Apply ``--material`` overrides: ``KEY`` (every candidate) or ``SLOT=KEY``."""
    out = plan
    for text in assignments:
        slot, _, key = text.rpartition("=")
        if key not in model.materials:
            raise UsageError(f"--material {text}: unknown material {key!r}; `massmodel materials` lists the library")
        names = [slot] if slot else [c.name for c in out.candidates]
        for n in names:
            c = out.candidate(n)
            out = out.with_candidate(n, spec=replace(c.spec, material=model.materials[key]))
    return out


__all__ += ["material_override"]
