"""Rules and targets of a ballast placement as bounds, one set per load case, with their margins.

Every rule of every load case considered becomes one or two :class:`Requirement` (a front-share window gives a
lower and an upper one). The bound already holds the margin kept inside the rule's limit:

* the plan's general margin of the rule's kind (``mass_margin``, ``fraction_margin``, ``cg_height_margin``);
* plus the scales' resolution (``scale_resolution``) on every mass rule (mass, group mass, axle load);
* plus a per-rule margin, from the plan's ``[margins]`` table or given to :func:`resolve_margins` as
  ``margins: Mapping[rule name, float SI]`` (kg for mass rules, a plain fraction for front-share rules, m for CG
  height) — the hook through which model-uncertainty margins (e.g. ``rule_margins(model, confidence)``) come in.

Margins only ever make a rule harder to meet (common practice, no source: a margin is kept inside the limit).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

from massmodel.core.errors import UsageError
from massmodel.core.model import Model, RuleCheck, in_group

from .plan import Plan, PlanError

__all__ = ["Requirement", "MARGIN_UNITS", "resolve_margins", "case_requirements"]

#: The dimension a per-rule margin must have, by rule kind ("number" is a plain fraction).
MARGIN_UNITS = {
    RuleCheck.MIN_MASS: "mass",
    RuleCheck.MIN_GROUP_MASS: "mass",
    RuleCheck.MIN_AXLE_LOAD: "mass",
    RuleCheck.FRONT_FRACTION: "number",
    RuleCheck.MAX_CG_HEIGHT: "length",
}
_EXAMPLE = {"mass": "'0.3 kg'", "number": "0.002 (a fraction)", "length": "'3 mm'"}


@dataclass(frozen=True, slots=True)
class Requirement:
    """One rule or target of one load case as a bound.

    ``kind`` is min_mass, min_group_mass, axle_front, axle_rear, fraction_min, fraction_max, cg_height_max,
    lateral_max, lateral_min or max_ballast; ``bound`` is in ``unit`` (kg, fraction, m) and already includes the
    margins; ``limit`` is the rule's own value; ``margin`` is the total margin kept inside it (same unit, ≥ 0).
    ``key`` is unique over every case (``"<case>/rule:<name>[:min|:max]"``); ``rule_key`` drops the case.
    """

    key: str
    label: str
    kind: str
    bound: float
    limit: float
    unit: str
    source: str  # "rule" or "target"
    members: tuple[bool, ...] = ()  # mass rules: which candidates count
    base: float = 0.0  # mass rules: rule mass of the baseline, kg
    case: str = "base"
    rule: str = ""  # the rule's name ('' for a plan target)
    margin: float = 0.0

    @property
    def is_max(self) -> bool:
        return self.kind in ("fraction_max", "cg_height_max", "lateral_max", "max_ballast")

    @property
    def rule_key(self) -> str:
        return self.key.split("/", 1)[1]

    def moved(self, delta: float) -> Requirement:
        """The same requirement made harder by ``delta`` (its unit): a higher minimum or a lower maximum."""
        from dataclasses import replace

        return replace(self, bound=self.bound + (-delta if self.is_max else delta))


def resolve_margins(plan: Plan, cases: Mapping[str, Model], margins: Mapping[str, float] | None = None,
                    other_rules: Iterable[str] = ()) -> dict[str, float]:
    """Per-rule margins (SI) of the plan's ``[margins]`` table and of ``margins`` (which win), checked.

    ``other_rules`` names rules of load cases left out of the placement: margins for them are passed over.

    Raises
    ------
    PlanError
        A plan margin naming no rule of the cases considered, or of the wrong dimension for its rule (file, item
        ``[margins]``, field = the rule's name).
    ValueError
        The same for ``margins`` given in Python, or a margin that is negative or not finite.
    """
    defined = {"base", *cases, *(lc.name for m in cases.values() for lc in m.load_cases)}
    for c in plan.targets.cases:
        if c not in defined:
            raise PlanError(plan.source, "[targets]", "cases", f"the model defines no load case {c!r} (cases: "
                            f"{', '.join(sorted(defined))})")
    kinds: dict[str, RuleCheck] = {}
    for model in cases.values():
        for r in model.rules:
            kinds.setdefault(r.name, r.check)
    known = ", ".join(sorted(kinds)) or "none"
    out: dict[str, float] = {}
    skip = set(other_rules) - set(kinds)
    for name, value, dim in plan.margins:
        if name in skip:
            continue
        if name not in kinds:
            raise PlanError(plan.source, "[margins]", name, f"no rule of that name applies in the cases considered "
                            f"({', '.join(cases)}); rules: {known}")
        want = MARGIN_UNITS.get(kinds[name])
        if want is None:
            raise PlanError(plan.source, "[margins]", name, f"a {kinds[name].value} rule takes no margin")
        if dim != want:
            raise PlanError(plan.source, "[margins]", name, f"a {kinds[name].value} rule needs a margin that is a "
                            f"{want}, e.g. {_EXAMPLE[want]}; got a {dim}")
        out[name] = value
    for name, value in (margins or {}).items():
        if name in skip:
            continue
        if name not in kinds:
            raise UsageError(f"margins: no rule named {name!r} applies in the cases considered "
                             f"({', '.join(cases)}); rules: {known}")
        if kinds[name] not in MARGIN_UNITS:
            raise UsageError(f"margins: rule {name!r} ({kinds[name].value}) takes no margin")
        v = float(value)
        if not (math.isfinite(v) and v >= 0.0):
            raise UsageError(f"margins: the margin of rule {name!r} must be >= 0 and finite "
                             f"({MARGIN_UNITS[kinds[name]]}, SI), got {value!r}")
        out[name] = v
    return out


def case_requirements(case: str, model: Model, baseline: Model, plan: Plan, margins: Mapping[str, float],
                      tighten: Mapping[str, float], with_max_ballast: bool) -> list[Requirement]:
    """The requirements of one load case (its model holds the rules that apply in it)."""
    t = plan.targets
    reqs: list[Requirement] = []
    cands = plan.candidates
    mass_general = t.mass_margin + t.scale_resolution

    def add(key: str, label: str, kind: str, limit: float, margin: float, unit: str, rule: str,
            members: tuple[bool, ...] = (), base: float = 0.0) -> None:
        full = f"{case}/{key}"
        req = Requirement(full, label, kind, limit, limit, unit, "rule" if rule else "target", members, base, case,
                          rule, margin)
        reqs.append(req.moved(margin + tighten.get(full, 0.0)))

    for rule in model.rules:
        key = f"rule:{rule.name}"
        extra = margins.get(rule.name, 0.0)
        lim = float(rule.limit or 0.0)
        if rule.check is RuleCheck.MIN_MASS:
            members = tuple(not any(in_group(c.path, g) for g in rule.exclude) for c in cands)
            base = float(sum(c.props.mass for c in baseline.select(exclude=rule.exclude)))
            add(key, rule.name, "min_mass", lim, mass_general + extra, "kg", rule.name, members, base)
        elif rule.check is RuleCheck.MIN_GROUP_MASS:
            members = tuple(any(in_group(c.path, g) for g in rule.groups) for c in cands)
            base = float(sum(c.props.mass for c in baseline.select(include=rule.groups)))
            add(key, rule.name, "min_group_mass", lim, mass_general + extra, "kg", rule.name, members, base)
        elif rule.check is RuleCheck.MIN_AXLE_LOAD:
            add(key, rule.name, f"axle_{rule.axle}", lim, mass_general + extra, "kg", rule.name)
        elif rule.check is RuleCheck.FRONT_FRACTION:
            if rule.minimum is not None:
                add(key + ":min", rule.name + " (min)", "fraction_min", rule.minimum, t.fraction_margin + extra,
                    "fraction", rule.name)
            if rule.maximum is not None:
                add(key + ":max", rule.name + " (max)", "fraction_max", rule.maximum, t.fraction_margin + extra,
                    "fraction", rule.name)
        elif rule.check is RuleCheck.MAX_CG_HEIGHT:
            add(key, rule.name, "cg_height_max", lim, t.cg_height_margin + extra, "m", rule.name)
    targets_here = not t.cases or case in t.cases
    if targets_here and t.fraction_target is not None:
        tol = float(t.fraction_tolerance or 0.0)
        for kind, bound, side in (("fraction_min", t.fraction_target - tol, "min"),
                                  ("fraction_max", t.fraction_target + tol, "max")):
            add(f"target:{kind}", f"front fraction target {t.fraction_target:.4f} +/- {tol:.4f} ({side})", kind,
                bound, 0.0, "fraction", "")
    if targets_here and t.lateral_offset_max is not None:
        y = t.lateral_offset_max
        add("target:lateral_max", f"CG at most {y * 1e3:.1f} mm left of the centre plane", "lateral_max", y, 0.0,
            "m", "")
        add("target:lateral_min", f"CG at most {y * 1e3:.1f} mm right of the centre plane", "lateral_min", -y, 0.0,
            "m", "")
    if with_max_ballast and t.max_ballast is not None:
        add("target:max_ballast", "most ballast allowed", "max_ballast", t.max_ballast, 0.0, "kg", "")
    return reqs


def rule_names(reqs: Sequence[Requirement]) -> list[str]:
    """The distinct rule names among requirements, in order."""
    return list(dict.fromkeys(r.rule for r in reqs if r.rule))
