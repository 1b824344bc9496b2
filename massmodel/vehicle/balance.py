"""Static axle and corner loads, weight distribution and rule checks.

Assumptions (stated in every report): the car stands level on a flat ground plane; the chassis is rigid; the
suspension carries no diagonal preload, so each axle's load splits between its two wheels by the lever rule on the
CG's lateral position (the statically determinate case). Corner weights measured on scales differ from this when the
car has a diagonal ("cross") preload from spring platform settings.

Loads are given as mass-equivalent loads in kg (load / g0), as is customary for corner weights.

References
----------
.. [1] Jazar, *Vehicle Dynamics: Theory and Application*, Springer (2008), ch. 2 (parked car on level ground; section and equation numbers from memory,
   eqs. 2.1–2.2: F_front = m g a2 / l, F_rear = m g a1 / l).
.. [2] Gillespie, *Fundamentals of Vehicle Dynamics*, SAE (1992), ch. 2 (static loads on level ground; from memory).
"""

from __future__ import annotations

import enum
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.massprops import MassProperties
from massmodel.core.model import Model, Rule, RuleCheck, Vehicle

__all__ = [
    "Balance", "Bound", "RuleResult", "static_balance", "check_rules", "check_rules_in_cases", "ASSUMPTIONS",
    "AT_LIMIT_RTOL",
]

ASSUMPTIONS = (
    "level flat ground; rigid chassis; no diagonal (cross) preload in the suspension, so each axle's load is split "
    "left/right by the lever rule on the CG's lateral position; loads shown as mass-equivalent kg (load / 9.80665 m/s^2)"
)

FloatArray = npt.NDArray[np.float64]

#: A value within this fraction of its limit counts as at the limit (passes): a car built exactly to a limit must
#: not fail on the round-off of the sums (0.1 kg + 0.7 kg is 0.7999999999999999 kg in binary floating point).
AT_LIMIT_RTOL = 1e-9


def _at_least(value: float, limit: float) -> bool:
    return value >= limit - AT_LIMIT_RTOL * abs(limit)


def _at_most(value: float, limit: float) -> bool:
    return value <= limit + AT_LIMIT_RTOL * abs(limit)


@dataclass(frozen=True, slots=True)
class Balance:
    """Static balance of a vehicle.

    Attributes
    ----------
    mass : float
        kg.
    cg_behind_front_axle : float
        Distance from the front axle line back to the CG along the forward direction, m (Jazar's a1).
    cg_ahead_of_rear_axle : float
        Distance from the CG forward to the rear axle line, m (a2).
    cg_left_of_centre : float
        Lateral CG offset, m, positive to the left.
    cg_height : float
        CG height above the ground plane, m.
    front, rear : float
        Axle loads, kg.
    corners : (4,) float
        FL, FR, RL, RR, kg.
    """

    mass: float
    cg_behind_front_axle: float
    cg_ahead_of_rear_axle: float
    cg_left_of_centre: float
    cg_height: float
    front: float
    rear: float
    corners: FloatArray

    @property
    def front_fraction(self) -> float:
        """Front axle load / total."""
        return self.front / self.mass if self.mass > 0 else float("nan")

    @property
    def left_fraction(self) -> float:
        """Left wheels' load / total."""
        return (self.corners[0] + self.corners[2]) / self.mass if self.mass > 0 else float("nan")

    @property
    def cross_fraction(self) -> float:
        """(FR + RL) / total: the diagonal share, 0.5 for a car with no lateral offset."""
        return (self.corners[1] + self.corners[2]) / self.mass if self.mass > 0 else float("nan")


def static_balance(mp: MassProperties, vehicle: Vehicle) -> Balance:
    """Axle and corner loads of a body standing on its four wheels.

    Parameters
    ----------
    mp : MassProperties
        Whole vehicle, model frame.
    vehicle : Vehicle
        Axes, wheelbase, tracks, axle station and ground level.

    Returns
    -------
    Balance

    Notes
    -----
    Moments about the axle lines give ``F_front = m a2 / L`` and ``F_rear = m a1 / L`` (Jazar 2008, ch. 2; equation numbers from memory);
    each axle load splits as ``F_left = F_axle (t/2 + y) / t`` with y the CG's lateral offset to the left and t the
    axle's track (rigid chassis, no diagonal preload; common practice, no source).
    """
    station = float(vehicle.forward @ mp.center)
    a1 = vehicle.front_axle_station - station
    a2 = station - vehicle.rear_axle_station
    y = float(vehicle.left @ mp.center)
    h = float(vehicle.up @ mp.center) - vehicle.ground_level
    m = mp.mass
    front = m * a2 / vehicle.wheelbase
    rear = m * a1 / vehicle.wheelbase
    corners = []
    for axle, track in ((front, vehicle.track_front), (rear, vehicle.track_rear)):
        left = axle * (0.5 * track + y) / track
        corners.extend([left, axle - left])
    return Balance(m, a1, a2, y, h, front, rear, np.array(corners))


class Bound(enum.Enum):
    """How a rule's value is compared with its limits."""

    AT_LEAST = "at_least"  # value >= limit_min
    AT_MOST = "at_most"  # value <= limit_max
    BETWEEN = "between"  # limit_min <= value <= limit_max


@dataclass(frozen=True, slots=True)
class RuleResult:
    """Outcome of one rule check (numbers only; `massmodel.report.rules` writes them as text).

    ``value``, ``limit_min``, ``limit_max`` and ``margin`` are in ``unit`` (SI: "kg", "m", or "fraction" for a
    dimensionless share). ``bound`` says which limits apply: ``limit_min`` for :attr:`Bound.AT_LEAST`,
    ``limit_max`` for :attr:`Bound.AT_MOST`, both for :attr:`Bound.BETWEEN`; the unused one is None. ``margin`` is
    how far inside the limits the value lies (negative when the rule fails). A value within :data:`AT_LIMIT_RTOL`
    of its limit passes.
    """

    name: str
    check: str
    passed: bool
    value: float
    bound: Bound
    limit_min: float | None
    limit_max: float | None
    margin: float
    unit: str
    detail: str


def _at_least_result(rule: Rule, value: float, unit: str, detail: str) -> RuleResult:
    limit = float(rule.limit or 0.0)
    return RuleResult(rule.name, rule.check.value, _at_least(value, limit), value, Bound.AT_LEAST, limit, None,
                      value - limit, unit, detail)


def _mass_of(model: Model, include: tuple[str, ...] = ("",), exclude: tuple[str, ...] = ()) -> float:
    """Mass of the parts in any of ``include`` and in none of ``exclude``, kg (each part counted once)."""
    return float(sum(c.props.mass for c in model.select(include, exclude)))


def check_rule(model: Model, rule: Rule, balance: Balance | None) -> RuleResult:
    """Evaluate one rule on a model (``balance`` of the whole model, needed by the vehicle rules)."""
    kind = rule.check
    if kind is RuleCheck.MIN_MASS:
        detail = "whole model" + (f" without {', '.join(rule.exclude)}" if rule.exclude else "")
        return _at_least_result(rule, _mass_of(model, exclude=rule.exclude), "kg", detail)
    if kind is RuleCheck.MIN_GROUP_MASS:
        return _at_least_result(rule, _mass_of(model, include=rule.groups), "kg", " + ".join(rule.groups))
    if balance is None:
        raise UsageError(f"rule '{rule.name}' ({rule.origin}) needs a [vehicle] section")
    if kind is RuleCheck.MIN_AXLE_LOAD:
        value = balance.front if rule.axle == "front" else balance.rear
        return _at_least_result(rule, value, "kg", f"{rule.axle} axle")
    if kind is RuleCheck.FRONT_FRACTION:
        value = balance.front_fraction
        lo = rule.minimum if rule.minimum is not None else 0.0
        hi = rule.maximum if rule.maximum is not None else 1.0
        margin = min(value - lo, hi - value)
        return RuleResult(
            rule.name, kind.value, _at_least(value, lo) and _at_most(value, hi), value, Bound.BETWEEN, lo, hi, margin,
            "fraction", "front/total",
        )
    if kind is RuleCheck.MAX_CG_HEIGHT:
        value = balance.cg_height
        limit = float(rule.limit or 0.0)
        return RuleResult(
            rule.name, kind.value, _at_most(value, limit), value, Bound.AT_MOST, None, limit, limit - value, "m",
            "above ground",
        )
    raise ValueError(f"unknown rule check {kind!r}")


def check_rules(model: Model) -> list[RuleResult]:
    """Evaluate every rule of the model."""
    balance = static_balance(model.mass_properties(), model.vehicle) if model.vehicle is not None else None
    return [check_rule(model, r, balance) for r in model.rules]


def check_rules_in_cases(models: Mapping[str, Model]) -> list[tuple[str, RuleResult]]:
    """Evaluate every rule in each case it applies in.

    Parameters
    ----------
    models : mapping of str to Model
        Case name → the model of that case (as given by :func:`massmodel.modelfile.loader.load_case_models`); each model
        holds only the rules that apply in its case (see :mod:`massmodel.core.loadcases`).

    Returns
    -------
    list of (str, RuleResult)
        Case name and result, cases in the order given, rules in file order.
    """
    return [(name, result) for name, model in models.items() for result in check_rules(model)]
