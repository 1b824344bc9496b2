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

from massmodel.core import display
from massmodel.core.errors import UsageError
from massmodel.core.massprops import MassProperties
from massmodel.core.model import Model, Rule, RuleCheck, Vehicle

__all__ = [
    "Balance", "Bound", "RuleResult", "RULE_HEADERS", "static_balance", "check_rules", "check_rules_in_cases",
    "ballast_height_window", "limit_text", "DECIMALS", "ASSUMPTIONS", "AT_LIMIT_RTOL",
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

    def __repr__(self) -> str:
        """One line: mass, axle loads (kg), front fraction, CG height (mm)."""
        return (
            f"<Balance {self.mass:.1f} kg: front {self.front:.1f} kg, rear {self.rear:.1f} kg "
            f"(front {self.front_fraction:.4f}), CG {display.number(self.cg_height, 1, 1e3)} mm above ground, "
            f"{display.number(self.cg_behind_front_axle, 1, 1e3)} mm behind the front axle>"
        )

    def _repr_html_(self) -> str:
        """Corner and axle loads (kg) and the CG position in vehicle terms."""
        c = self.corners
        rows = [["front", f"{c[0]:.2f}", f"{c[1]:.2f}", f"{self.front:.2f}"],
                ["rear", f"{c[2]:.2f}", f"{c[3]:.2f}", f"{self.rear:.2f}"]]
        loads = display.html_table(rows, ["kg", "left", "right", "axle"], "Static loads (mass-equivalent kg)", (1, 2, 3))
        where = [
            ["front fraction", f"{self.front_fraction:.4f}"],
            ["CG height above ground", f"{display.number(self.cg_height, 1, 1e3)} mm"],
            ["CG behind front axle", f"{display.number(self.cg_behind_front_axle, 1, 1e3)} mm"],
            ["CG left of centre plane", f"{display.number(self.cg_left_of_centre, 1, 1e3)} mm"],
        ]
        return loads + display.html_table(where, caption=f"CG of {self.mass:.1f} kg; assumptions: {ASSUMPTIONS}")

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


#: Decimals shown for a rule's value, limits and margin, by unit (kg to 10 g; m to 0.1 mm; a share to 1e-4).
DECIMALS = {"kg": 2, "m": 4, "fraction": 4}


def limit_text(bound: Bound | str, limit_min: float | None, limit_max: float | None, unit: str) -> str:
    """The limits of a rule as text with their unit, e.g. ``">= 425.00 kg"`` or ``"0.4000 .. 0.5000 fraction"``.

    Parameters
    ----------
    bound : Bound or its value ("at_least", "at_most", "between")
    limit_min, limit_max : float or None
        In ``unit``; the one the bound does not use may be None.
    unit : str
        "kg", "m" or "fraction" (other units get 4 decimals).
    """
    kind = Bound(bound)
    d = DECIMALS.get(unit, 4)
    if kind is Bound.AT_LEAST:
        text = f">= {limit_min:.{d}f}"
    elif kind is Bound.AT_MOST:
        text = f"<= {limit_max:.{d}f}"
    else:
        text = f"{limit_min:.{d}f} .. {limit_max:.{d}f}"
    return f"{text} {unit}"


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

    def cells(self) -> list[str]:
        """Verdict, name, value, limit and margin as display texts with units (the rule-check table's row)."""
        digits = 4 if self.unit in ("fraction", "m") else 2
        if self.passed:  # a margin that rounds to zero shows no minus sign ...
            margin = display.number(self.margin, digits)
            margin = margin if margin.startswith("-") else "+" + margin
        else:  # ... but a failing rule keeps it
            margin = f"{self.margin:+.{digits}f}"
        return ["pass" if self.passed else "FAIL", self.name, f"{display.number(self.value, digits)} {self.unit}",
                limit_text(self.bound, self.limit_min, self.limit_max, self.unit), f"{margin} {self.unit}"]

    def __repr__(self) -> str:
        verdict, name, value, limit, margin = self.cells()
        return f"<RuleResult {verdict} {name!r}: {value}, limit {limit}, margin {margin}>"

    def _repr_html_(self) -> str:
        return display.html_table([self.cells()], RULE_HEADERS, numeric=(2, 3, 4))


#: Column headers of :meth:`RuleResult.cells`.
RULE_HEADERS = ("", "rule", "value", "limit", "margin")


def _at_least_result(rule: Rule, value: float, unit: str, detail: str) -> RuleResult:
    limit = float(rule.limit or 0.0)
    return RuleResult(rule.name, rule.check.value, _at_least(value, limit), value, Bound.AT_LEAST, limit, None,
                      value - limit, unit, detail)


def _mass_of(model: Model, include: tuple[str, ...] = ("",), exclude: tuple[str, ...] = ()) -> float:
    """Mass of the parts in any of ``include`` and in none of ``exclude``, kg (each part counted once)."""
    return float(model.mass_properties(include, exclude).mass)


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
    if kind is RuleCheck.BALLAST_HEIGHT:
        return _ballast_height(model, rule, balance)
    raise ValueError(f"unknown rule check {kind!r}")


def ballast_height_window(model: Model, rule: Rule) -> tuple[float, float]:
    """Lowest and highest CG height above the ground (m) that a ``ballast_height`` rule allows in ``model``:
    ``[limit, inf)``, or the CG height of the ``reference`` group ± ``band``."""
    if model.vehicle is None:
        raise UsageError(f"rule '{rule.name}' ({rule.origin}) needs a [vehicle] section")
    if rule.reference is None:
        return float(rule.limit or 0.0), float("inf")
    parts = model.select((rule.reference,))
    if not parts:
        raise UsageError(f"rule '{rule.name}' ({rule.origin}): no part of group '{rule.reference}' in load case "
                         f"'{model.case}', so the height it refers to is unknown")
    h = float(model.vehicle.up @ model.mass_properties([rule.reference]).center) - model.vehicle.ground_level
    band = float(rule.band or 0.0)
    return h - band, h + band


def _ballast_height(model: Model, rule: Rule, balance: Balance) -> RuleResult:
    lo, hi = ballast_height_window(model, rule)
    where = " + ".join(rule.groups)
    bound, top = (Bound.AT_LEAST, None) if hi == float("inf") else (Bound.BETWEEN, hi)
    if not model.select(rule.groups):
        return RuleResult(rule.name, rule.check.value, True, 0.0, bound, lo, top, 0.0, "m",
                          f"no part in {where}: nothing to check")
    assert model.vehicle is not None
    value = float(model.vehicle.up @ model.mass_properties(list(rule.groups)).center) - model.vehicle.ground_level
    margin = min(value - lo, hi - value)
    ok = _at_least(value, lo) and _at_most(value, hi)
    ref = f", driver reference {rule.reference} +/- {float(rule.band or 0.0) * 1e3:.1f} mm" if rule.reference else ""
    return RuleResult(rule.name, rule.check.value, ok, value, bound, lo, top, margin, "m",
                      f"CG of {where} above ground{ref}")


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
