"""The outputs a study collects from each evaluated model: mass, CG, CG height, front share, axle loads, inertia
about the vehicle axes and the margin of every rule.

Values are SI (kg, m, kg·m², fractions); each :class:`Output` carries its unit. Rule margins are positive inside
the limit and negative outside, in the rule's unit (:class:`massmodel.vehicle.balance.RuleResult`).
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import NotFoundError, UsageError
from massmodel.core.massprops import MassProperties
from massmodel.core.model import Model, Rule, RuleCheck
from massmodel.vehicle.balance import check_rule, static_balance

__all__ = ["Output", "OutputPlan", "RuleLimits", "column_of", "worst_points", "BASIC_OUTPUTS", "VEHICLE_OUTPUTS", "outputs_of", "rule_limits", "select_outputs",
           "evaluate_outputs", "OUTPUT_NAMES"]


@dataclass(frozen=True, slots=True)
class Output:
    """One collected quantity.

    Attributes
    ----------
    key : str
        Name used on the command line and as the JSON/CSV key stem (``cg_x``; rules: ``margin_<rule name>``
        with the name in lower case and other characters as ``_``).
    label : str
        Words for tables and plots.
    unit : str
        SI unit of the value (``kg``, ``m``, ``kg*m^2``, ``fraction``).
    rule : int or None
        For a rule margin: the rule's index in ``model.rules``.
    """

    key: str
    label: str
    unit: str
    rule: int | None = None


BASIC_OUTPUTS = (
    Output("mass", "mass", "kg"),
    Output("cg_x", "CG x (model frame)", "m"),
    Output("cg_y", "CG y (model frame)", "m"),
    Output("cg_z", "CG z (model frame)", "m"),
)
VEHICLE_OUTPUTS = (
    Output("cg_height", "CG height above ground", "m"),
    Output("front_share", "front share of the mass", "fraction"),
    Output("front_axle", "front axle load", "kg"),
    Output("rear_axle", "rear axle load", "kg"),
    Output("roll_inertia", "roll inertia (about forward through the CG)", "kg*m^2"),
    Output("pitch_inertia", "pitch inertia (about left through the CG)", "kg*m^2"),
    Output("yaw_inertia", "yaw inertia (about up through the CG)", "kg*m^2"),
)
OUTPUT_NAMES = tuple(o.key for o in BASIC_OUTPUTS + VEHICLE_OUTPUTS) + ("margins",)

_RULE_UNITS = {RuleCheck.MIN_MASS: "kg", RuleCheck.MIN_GROUP_MASS: "kg", RuleCheck.MIN_AXLE_LOAD: "kg",
               RuleCheck.FRONT_FRACTION: "fraction", RuleCheck.MAX_CG_HEIGHT: "m"}


@dataclass(frozen=True, slots=True)
class RuleLimits:
    """A rule's limits in its unit (None where the rule has no bound on that side), for plots and reports."""

    name: str
    check: str
    unit: str
    lower: float | None
    upper: float | None


def column_of(outputs: Sequence[Output], values: npt.NDArray[np.float64], key: str) -> npt.NDArray[np.float64]:
    """The column of output ``key`` in a (points, outputs) table."""
    for i, o in enumerate(outputs):
        if o.key == key:
            return values[:, i]
    raise NotFoundError(f"no output '{key}'; outputs: {', '.join(o.key for o in outputs)}")


def worst_points(outputs: Sequence[Output], values: npt.NDArray[np.float64]) -> list[tuple[int, int]]:
    """(output index, point index) of the smallest margin of each rule margin output (the first point on ties)."""
    return [(i, int(np.argmin(values[:, i]))) for i, o in enumerate(outputs) if o.rule is not None]


def rule_limits(rule: Rule) -> RuleLimits:
    """The bounds of ``rule`` (:class:`RuleLimits`)."""
    if rule.check is RuleCheck.FRONT_FRACTION:
        lower = rule.minimum if rule.minimum is not None else 0.0
        upper = rule.maximum if rule.maximum is not None else 1.0
        return RuleLimits(rule.name, rule.check.value, "fraction", lower, upper)
    if rule.check is RuleCheck.MAX_CG_HEIGHT:
        return RuleLimits(rule.name, rule.check.value, "m", None, rule.limit)
    return RuleLimits(rule.name, rule.check.value, _RULE_UNITS[rule.check], rule.limit, None)


def outputs_of(model: Model) -> tuple[Output, ...]:
    """Every output the model offers: the vehicle ones only with a [vehicle] section, one margin per rule."""
    rules = tuple(Output(f"margin_{_slug(r.name)}", f"margin of '{r.name}'", _RULE_UNITS[r.check], rule=i)
                  for i, r in enumerate(model.rules))
    return BASIC_OUTPUTS + (VEHICLE_OUTPUTS if model.vehicle is not None else ()) + rules


def _slug(name: str) -> str:
    """A rule name as a key: lower case, runs of other characters as one '_' (``front share`` → ``front_share``)."""
    return re.sub(r"[^a-z0-9]+", "_", name.lower()).strip("_") or "rule"


def select_outputs(model: Model, names: Sequence[str] | None) -> tuple[Output, ...]:
    """The outputs named (``margins`` stands for every rule margin; None or empty: all of them).

    Raises
    ------
    ValueError
        An unknown name, or a vehicle output of a model without a [vehicle] section.
    """
    offered = outputs_of(model)
    if not names:
        return offered
    by_key = {o.key: o for o in offered}
    picked: list[Output] = []
    for name in names:
        if name == "margins":
            picked.extend(o for o in offered if o.rule is not None)
        elif name in by_key:
            picked.append(by_key[name])
        elif name in {o.key for o in VEHICLE_OUTPUTS}:
            raise UsageError(f"output '{name}' needs a [vehicle] section in the model")
        else:
            raise UsageError(f"unknown output '{name}'; outputs: {', '.join(OUTPUT_NAMES)}")
    return tuple(dict.fromkeys(picked))


class OutputPlan:
    """Evaluates outputs of many models that share one list of component paths (the models of one study).

    The selections of the mass rules (``min_mass`` without some groups, ``min_group_mass`` of some groups) depend on
    paths only, so they are found once; each model's rule value is then the sum of the selected masses in component
    order, the same sum :func:`massmodel.vehicle.balance.check_rule` makes. Models with other paths (e.g. parts left
    out) are evaluated through ``check_rule`` itself.

    Parameters
    ----------
    model : Model
        A model with the study's component paths and rules.
    outputs : sequence of Output
    """

    def __init__(self, model: Model, outputs: Sequence[Output]) -> None:
        self.outputs = tuple(outputs)
        self.paths = tuple(c.path for c in model.components)
        self.rules = model.rules
        self.selections: list[list[int] | None] = []
        for rule in model.rules:
            if rule.check is RuleCheck.MIN_MASS:
                chosen = {id(c) for c in model.select(exclude=rule.exclude)}
            elif rule.check is RuleCheck.MIN_GROUP_MASS:
                chosen = {id(c) for c in model.select(include=rule.groups)}
            else:
                self.selections.append(None)
                continue
            self.selections.append([i for i, c in enumerate(model.components) if id(c) in chosen])

    def evaluate(self, model: Model, total: MassProperties | None = None) -> tuple[list[float], list[float]]:
        """See :func:`evaluate_outputs`."""
        same = len(model.components) == len(self.paths) and model.rules == self.rules
        return evaluate_outputs(model, self.outputs, self if same else None, total)


def evaluate_outputs(model: Model, outputs: Sequence[Output], plan: OutputPlan | None = None,
                     total: MassProperties | None = None) -> tuple[list[float], list[float]]:
    """The values of ``outputs`` for one model, and the value of each of the model's rules.

    Parameters
    ----------
    model : Model
    outputs : sequence of Output
    plan : OutputPlan, optional
        Selections of the mass rules found for models with these component paths (see :class:`OutputPlan`).
    total : MassProperties, optional
        ``model.mass_properties()`` when the caller has it already.

    Returns
    -------
    values : list of float
        In the order of ``outputs``, SI.
    rule_values : list of float
        The checked value of each rule of the model (rule's unit), in the model's rule order.

    Notes
    -----
    Axle loads, front share and CG height from :func:`massmodel.vehicle.balance.static_balance` (Jazar 2008, ch. 2,
    from memory); the inertia about a vehicle axis through the CG is ``a·I·a`` for the unit axis ``a`` (Goldstein,
    Poole & Safko 2002, §5.3).
    """
    total = model.mass_properties() if total is None else total
    vehicle = model.vehicle
    balance = static_balance(total, vehicle) if vehicle is not None else None
    rule_values: list[float] = []
    margins: list[float] = []
    for k, rule in enumerate(model.rules):
        chosen = plan.selections[k] if plan is not None else None
        if chosen is None:
            result = check_rule(model, rule, balance)
            rule_values.append(float(result.value))
            margins.append(float(result.margin))
        else:  # check_rule's sum (the engine's masses of the same parts, one numpy sum), and its margin
            value = float(model.arrays()[0][chosen].sum())
            rule_values.append(value)
            margins.append(value - float(rule.limit or 0.0))
    values: list[float] = []
    for o in outputs:
        if o.rule is not None:
            values.append(margins[o.rule])
            continue
        if o.key == "mass":
            values.append(total.mass)
        elif o.key.startswith("cg_") and o.key[3:] in ("x", "y", "z"):
            values.append(float(total.center["xyz".index(o.key[3:])]))
        else:
            assert balance is not None and vehicle is not None
            axis = {"roll_inertia": vehicle.forward, "pitch_inertia": vehicle.left, "yaw_inertia": vehicle.up}.get(o.key)
            if axis is not None:
                values.append(float(axis @ total.inertia @ axis))
            else:
                values.append(float({"cg_height": balance.cg_height, "front_share": balance.front_fraction,
                                     "front_axle": balance.front, "rear_axle": balance.rear}[o.key]))
    return values, rule_values
