"""What each rule costs in ballast, how each slot moves the balance, and the CG height / yaw inertia trade-off.

Rule costs
----------
The least-ballast problem is a linear program ``min Σ mᵢ`` over rows ``g₀ + A m ≥ 0`` (tangent rows at the
solution when a block's CG moves with its mass; the slots' on/off pattern of the solution held when slots have a
thinnest block). Its dual value ``yⱼ = ∂(least)/∂g₀ⱼ`` (HiGHS marginals, scipy's ``res.ineqlin.marginals``) gives the
change of the least ballast when a rule's limit is made harder by one unit:
``∂(least)/∂limit = Σⱼ yⱼ ∂gⱼ/∂limit`` over the rule's rows (one per density scenario), with ``∂gⱼ/∂limit`` exact
because every row is linear in its bound (−1 for a mass rule, −M for a front-share minimum, −M for a CG height
maximum, M the case's total mass at the solution). Shown per kg, per 0.001 of front share and per mm. Duality
theory: e.g. Vanderbei, Linear Programming: Foundations and Extensions (Springer), ch. 5 (from memory). The ballast
needed *without* a rule is found by solving again without its rows.

Sensitivities
-------------
For a slot whose block (mass ``mᵢ`` at ``cᵢ``) is added to a case of mass ``M`` and CG ``C``: first-moment and
parallel-axis derivatives, exact at the solution (point-mass model of the block):
``∂f/∂mᵢ = (φᵢ − f)/M`` with ``φᵢ = (xᵢ − x_rear)/L`` (lever rule), ``∂h/∂mᵢ = (zᵢ − Z)/M``,
``∂y/∂mᵢ = (yᵢ − Y)/M``, ``∂I_yaw/∂mᵢ = (xᵢ − X)² + (yᵢ − Y)²``; moving the block by ``dx`` forward:
``∂f/∂x = mᵢ/(M L)``, ``∂I_yaw/∂x = 2 mᵢ (xᵢ − X)``; up: ``∂h/∂z = mᵢ/M``; left: ``∂y/∂y = mᵢ/M``,
``∂I_yaw/∂y = 2 mᵢ (yᵢ − Y)`` (x, y, z along the vehicle's forward, left, up).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from .requirements import Requirement
from .solvers import Rows, SolverStats, minimise_on_off, sequential_lp

__all__ = ["RuleCost", "RuleTotal", "SlotSensitivity", "TradeoffPoint", "rule_costs", "rule_totals",
           "slot_sensitivities", "tradeoff_curve", "PER_UNIT"]

FloatArray = npt.NDArray[np.float64]

#: How a rule's limit is stepped in reports: unit of the requirement → (step in SI, label).
PER_UNIT = {"kg": (1.0, "per kg"), "fraction": (1e-3, "per 0.001"), "m": (1e-3, "per mm")}


@dataclass(frozen=True, slots=True)
class RuleCost:
    """What one requirement of one case costs in ballast (continuous problem, before rounding).

    Attributes
    ----------
    requirement : Requirement
    binding : bool
        Met with no slack at the least-ballast solution (or with a non-zero dual value).
    dual : float
        kg of ballast per unit of the limit made harder (kg per kg, per unit fraction, per m), ≥ 0.
    least : float
        Least ballast with every requirement, kg.
    without : float
        Least ballast with this requirement left out (solved again), kg.
    """

    requirement: Requirement
    binding: bool
    dual: float
    least: float
    without: float

    @property
    def per_step(self) -> tuple[float, str]:
        """The dual per reporting step: (kg, "per kg" / "per 0.001" / "per mm")."""
        step, label = PER_UNIT[self.requirement.unit]
        return self.dual * step, label

    @property
    def saving(self) -> float:
        """Ballast saved by leaving the requirement out, kg."""
        return self.least - self.without


@dataclass(frozen=True, slots=True)
class RuleTotal:
    """What one rule (or one side of a front-share window) costs over every case it applies in.

    ``dual`` is the sum of its cases' dual values (the change of the least ballast when the limit is made harder
    in every case at once, kg per unit); ``without`` the least ballast with the rule left out of every case, kg.
    """

    rule_key: str
    label: str
    unit: str
    cases: tuple[str, ...]
    dual: float
    least: float
    without: float

    @property
    def per_step(self) -> tuple[float, str]:
        step, label = PER_UNIT[self.unit]
        return self.dual * step, label

    @property
    def saving(self) -> float:
        return self.least - self.without


@dataclass(frozen=True, slots=True)
class SlotSensitivity:
    """How one slot moves the balance of one case at the solution (SI: per kg added, per m moved)."""

    case: str
    slot: str
    mass: float
    front_fraction_per_kg: float
    cg_height_per_kg: float
    lateral_per_kg: float
    yaw_per_kg: float
    front_fraction_per_m_forward: float
    cg_height_per_m_up: float
    lateral_per_m_left: float
    yaw_per_m_forward: float
    yaw_per_m_left: float


@dataclass(frozen=True, slots=True)
class TradeoffPoint:
    """One point of the CG height / yaw inertia trade-off at the least ballast (means over the cases)."""

    weight_height: float
    cg_height: float  # m
    yaw: float  # kg·m²
    masses: tuple[float, ...]  # nominal kg per candidate


def _pattern_bounds(m: FloatArray, bounds: tuple[FloatArray, FloatArray]) -> tuple[FloatArray, FloatArray]:
    ub, floor = bounds
    if not np.any(floor > 1e-12):
        return np.zeros_like(ub), ub
    on = m > 1e-9
    return np.where(on, floor, 0.0), np.where(on, ub, 0.0)


def rule_costs(prob: Any, reqs: Sequence[Requirement], rows: Rows, m1: FloatArray,
               bounds: tuple[FloatArray, FloatArray], stats: SolverStats) -> list[RuleCost]:
    """Dual value and leave-one-out ballast of every requirement (see the module notes).

    Parameters
    ----------
    prob : Problem
        :class:`massmodel.ballast.problem.Problem`.
    reqs : sequence of Requirement
    rows : Rows
        The rows of ``reqs`` (``prob.rows(reqs)``).
    m1 : (n,) float
        The least-ballast solution, kg.
    bounds : ((n,) float, (n,) float)
        Capacities and thinnest-block floors, kg.
    """
    from scipy.optimize import linprog

    lo, hi = _pattern_bounds(m1, bounds)
    g0, a = rows.linear_at(m1)
    res = linprog(np.ones(len(m1)), A_ub=-a, b_ub=g0, bounds=list(zip(lo, hi, strict=True)), method="highs")
    stats.lp_solves += 1
    if res.status != 0:
        return []
    y = np.asarray(res.ineqlin.marginals)  # d(least)/d(g0), <= 0
    least = float(res.fun)
    g_at = rows.values(m1)
    keys = [r.key for r in rows.reqs]
    integer = bool(np.any(bounds[1] > 1e-12))
    out = []
    for req in reqs:
        idx = [j for j, k in enumerate(keys) if k == req.key]
        moved = prob.rows([req.moved(1.0)])
        dg = moved.values(m1) - g_at[idx]  # per unit of the limit made harder (exact: rows are linear in it)
        dual = float(max(np.sum(y[idx] * dg), 0.0))
        tight = bool(np.any(g_at[idx] <= 1e-7 * max(1.0, prob.cases[req.case].m0)))
        binding = tight or dual > 1e-9
        without = least
        if binding or integer:
            sub = rows.subset(np.array([k != req.key for k in keys], dtype=bool))
            m = sequential_lp(np.ones(len(m1)), sub, bounds[0], bounds[1], None, stats)
            without = float(np.sum(m)) if m is not None else least
        out.append(RuleCost(req, binding, dual, least, min(without, least)))
    return out


def rule_totals(costs: Sequence[RuleCost], rows: Rows, bounds: tuple[FloatArray, FloatArray],
                stats: SolverStats) -> list[RuleTotal]:
    """Per rule over its cases: the summed dual value and the least ballast without it in any case (solved again,
    for the rules binding somewhere)."""
    by_rule: dict[str, list[RuleCost]] = {}
    for c in costs:
        by_rule.setdefault(c.requirement.rule_key, []).append(c)
    out = []
    for key, group in by_rule.items():
        least = group[0].least
        without = least
        if any(c.binding for c in group):
            keep = np.array([r.rule_key != key for r in rows.reqs], dtype=bool)
            m = sequential_lp(np.ones(rows.a.shape[1]), rows.subset(keep), bounds[0], bounds[1], None, stats)
            without = min(float(np.sum(m)), least) if m is not None else least
        r = group[0].requirement
        out.append(RuleTotal(key, r.label, r.unit, tuple(c.requirement.case for c in group),
                             float(sum(c.dual for c in group)), least, without))
    return out


def slot_sensitivities(prob: Any, allocations: Sequence[Any], outcomes: Sequence[Any]) -> list[SlotSensitivity]:
    """Per case and slot: change of front fraction, CG height, lateral CG and yaw inertia per kg added and per m
    the block moves (module notes). Unused slots are taken at their centre, with no mass to move."""
    out = []
    for o in outcomes:
        v = o.model.vehicle
        mp, bal = o.props_after, o.balance_after
        if v is None or mp is None or bal is None:
            continue
        big_m = mp.mass
        cx, cy, cz = float(v.forward @ mp.center), float(v.left @ mp.center), float(v.up @ mp.center)
        for al in allocations:
            if al.sizing is not None:
                mass, centre = al.sizing.masses()[0], al.sizing.props().center
            else:
                mass, centre = 0.0, al.candidate.envelope.pose.apply(np.zeros(3))
            x, y, z = float(v.forward @ centre), float(v.left @ centre), float(v.up @ centre)
            phi = (x - v.rear_axle_station) / v.wheelbase
            out.append(SlotSensitivity(
                o.name, al.candidate.name, float(mass),
                (phi - bal.front_fraction) / big_m, (z - cz) / big_m, (y - cy) / big_m, (x - cx) ** 2 + (y - cy) ** 2,
                mass / (big_m * v.wheelbase), mass / big_m, mass / big_m, 2.0 * mass * (x - cx), 2.0 * mass * (y - cy)))
    return out


def tradeoff_curve(prob: Any, rows: Rows, ub: FloatArray, floor: FloatArray, total: tuple[float, float],
                   stats: SolverStats, m1: FloatArray, points: int,
                   starts: Sequence[FloatArray] = ()) -> list[TradeoffPoint]:
    """Points of the CG height / yaw inertia trade-off with the total ballast held in ``total``: the weighted sum
    ``w h/h₁ + (1 − w) I/I₁`` minimised for ``points`` weights w from 1 to 0 (h₁, I₁ at the least-ballast
    solution), each from the previous optimum, ``m1`` and ``starts``."""
    h1, i1 = max(prob.cg_height(m1), 1e-9), max(prob.yaw(m1), 1e-9)
    out: list[TradeoffPoint] = []
    start = m1
    for w in np.linspace(1.0, 0.0, max(points, 2)):
        def fun(m: FloatArray, w: float = float(w)) -> float:
            return w * prob.cg_height(m) / h1 + (1.0 - w) * prob.yaw(m) / i1

        found = minimise_on_off(fun, rows, ub, floor, total, [start, m1, *starts], stats)
        if found is None:
            continue
        start = found
        out.append(TradeoffPoint(float(w), prob.cg_height(found), prob.yaw(found), tuple(float(v) for v in found)))
    return out
