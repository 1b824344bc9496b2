"""Placing ballast across candidate slots to meet the rules of every load case with the least ballast and the
lowest CG.

The ballast is the same metal in every running condition (qualifying fuel, full tank, ...): one vector of slot
masses is carried through every load case considered, each case adding its own rows (its rules, with their margins,
and the plan's targets; see :mod:`massmodel.ballast.requirements`). The least-ballast problem and the objective are
solved over every case at once; the objective is the mean over the cases of the CG height (or yaw inertia, or the
squared distance of the front fraction from its target).

The problem
-----------
Each candidate slot ``i`` takes a nominal ballast mass ``mᵢ`` (kg): nothing, or between the thinnest block it can
hold and its capacity. A block grows along its fill axis, so its CG moves with its mass; over the slot it is
modelled as ``cᵢ(m) = pᵢ + qᵢ m`` (exact at the full block and at half of it, ``qᵢ = 0`` for a block that grows about
the slot centre). With ``μᵢ = κᵢ mᵢ`` the mass at a density ``κᵢ`` times the nominal one, every rule and target is
a row ``g(m) = g₀ + Σ aᵢ mᵢ + bᵢ mᵢ² ≥ 0`` in kg:

* ``min_mass`` / ``min_group_mass``: rule mass − (limit + margins), at the LOW end of every density band.
* ``min_axle_load``: axle load − (limit + margin), each block at the end of its band that loads that axle least.
* front fraction within [lo, hi]: ``F − lo·M ≥ 0`` and ``hi·M − F ≥ 0`` (the lever rule, moments about the rear
  axle, Jazar 2008 eq. 2.1), at the nominal, lowest and highest densities (and any worst mix found later).
* ``max_cg_height``: ``(ground + limit − margin)·M − up·Q ≥ 0``; lateral balance: ``y_max·M ∓ left·Q ≥ 0``.

The rows are linear when no block's CG moves along the direction a row measures (``bᵢ = 0``).

Solution, in two stages (common practice, no source: ballast is dead weight, so carry no more than needed)
------------------------------------------------------------------------------------------------------------
1. Least total ballast ``Σ mᵢ`` meeting every row: HiGHS linear programming (``scipy.optimize.linprog``), or a
   mixed-integer program (``scipy.optimize.milp``) when slots have a thinnest block (on/off choice per slot);
   rows with ``b ≠ 0`` are linearised and the linear program repeated until it settles (sequential LP).
2. With the total fixed at that least value (plus any ``extra_mass``), the objective: lowest CG height (linear
   when blocks keep their CG height, else a convex quadratic solved with SLSQP), lowest yaw inertia about the CG
   (non-convex: SLSQP from several starting points), or a weighted mix normalised between the two single optima.

Then every block is sized so that its mass at the LOW end of its density band is at least ``κ_lo,ᵢ mᵢ``
(:func:`massmodel.ballast.sizing.size_block`, rounding up) and the result is checked exactly, rule by rule, at the nominal
density and at the worst mix of the density bands (a linear-fractional worst case, found by Dinkelbach's method).
If rounding or a density mix breaks a row, that row is tightened by the amount it missed and the whole is solved
again. When the rows cannot all be met, an elastic linear program (one slack per row, least total slack) names the
rows that must give and by how much.

References
----------
.. [1] Jazar, Vehicle Dynamics: Theory and Application, Springer (2008), ch. 2 (static axle loads; section from memory).
.. [2] Dinkelbach, W. (1967). On nonlinear fractional programming. Management Science 13(7), 492–498.
.. [3] Huangfu, Q. and Hall, J. A. J. (2018). Parallelizing the dual revised simplex method. Math. Prog. Comp. 10
   (the HiGHS solver behind scipy's ``linprog``/``milp``).
"""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import NotFoundError, UsageError
from massmodel.core.massprops import MassProperties
from massmodel.core.model import Component, Model
from massmodel.vehicle.balance import Balance, RuleResult, check_rules, static_balance

from .costs import (
    RuleCost,
    RuleTotal,
    SlotSensitivity,
    TradeoffPoint,
    rule_costs,
    rule_totals,
    slot_sensitivities,
    tradeoff_curve,
)
from .parts import piece_component
from .plan import Candidate, Objective, Plan
from .problem import CaseSetup, Problem, build_problem
from .requirements import Requirement, case_requirements, resolve_margins
from .sizing import BlockSizing, size_block
from .solvers import TOL_KG, Rows, SolverStats, extreme_ratio, minimise_on_off, sequential_lp

__all__ = ["Requirement", "Assessment", "Allocation", "Shortfall", "SolverStats", "CaseOutcome", "PlacementResult",
           "place_ballast", "stage_two", "mix_optimum"]

FloatArray = npt.NDArray[np.float64]
MAX_ROUNDS = 8


@dataclass(frozen=True, slots=True)
class Assessment:
    """A requirement checked on the sized result: value at nominal density and at the worst mix of the bands."""

    requirement: Requirement
    nominal: float
    worst: float
    margin_nominal: float
    margin_worst: float
    binding: bool

    @property
    def passed(self) -> bool:
        return self.margin_worst >= -1e-12 * max(1.0, abs(self.requirement.bound))


@dataclass(frozen=True, eq=False)
class Allocation:
    """What one candidate slot gets."""

    candidate: Candidate
    planned: float  # nominal kg from the optimiser
    sizing: BlockSizing | None
    capacity: float  # nominal kg the optimiser could use
    floor: float  # nominal kg of the thinnest block
    paths: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Shortfall:
    """A requirement that cannot be met: by how much (``amount`` in ``unit``) and the best it can reach alone."""

    requirement: Requirement
    amount: float
    best_alone: float | None
    conflicts: tuple[str, ...]
    explanation: str


@dataclass(frozen=True, eq=False)
class CaseOutcome:
    """One load case of a placement: its model before and after, its requirements checked, its rule checks."""

    name: str
    model: Model
    baseline: Model
    ballasted: Model | None
    props_before: MassProperties
    props_after: MassProperties | None
    balance_before: Balance | None
    balance_after: Balance | None
    assessments: tuple[Assessment, ...]
    rules: tuple[RuleResult, ...]

    @property
    def passed(self) -> bool:
        return all(r.passed for r in self.rules) and all(a.passed for a in self.assessments)


@dataclass(frozen=True, eq=False)
class PlacementResult:
    """Outcome of :func:`place_ballast`. The single-case fields (``model``, ``ballasted``, ``balance_*``,
    ``props_*``) are those of the first case; ``cases`` holds every case; ``assessments`` and ``rules`` every
    case's (each requirement names its case)."""

    plan: Plan
    model: Model
    baseline: Model
    feasible: bool
    allocations: tuple[Allocation, ...]
    ballasted: Model | None
    assessments: tuple[Assessment, ...]
    rules: tuple[RuleResult, ...]
    balance_before: Balance | None
    balance_after: Balance | None
    props_before: MassProperties
    props_after: MassProperties | None
    shortfalls: tuple[Shortfall, ...]
    stats: SolverStats
    notes: tuple[str, ...] = ()
    first_round: tuple[float, ...] = ()  # continuous optimum (nominal kg per candidate) before any row was tightened
    cases: tuple[CaseOutcome, ...] = ()
    costs: tuple[RuleCost, ...] = ()
    sensitivities: tuple[SlotSensitivity, ...] = ()
    tradeoff: tuple[TradeoffPoint, ...] = ()
    margins: Mapping[str, float] | None = None  # the per-rule margins used (SI)
    least: float = math.nan  # least ballast of the continuous problem before rounding (stage 1), kg nominal
    rule_totals: tuple[RuleTotal, ...] = ()  # each rule over every case it applies in

    @property
    def ballast_mass(self) -> tuple[float, float, float]:
        """Total added ballast (nominal, lowest, highest density), kg."""
        out = np.zeros(3)
        for a in self.allocations:
            if a.sizing is not None:
                out += np.array(a.sizing.masses())
        return float(out[0]), float(out[1]), float(out[2])


    @property
    def passed(self) -> bool:
        """Feasible, and every requirement and rule passes in every case."""
        return self.feasible and all(c.passed for c in self.cases)

    def case(self, name: str) -> CaseOutcome:
        for c in self.cases:
            if c.name == name:
                return c
        raise NotFoundError(f"no case {name!r} in this placement; cases: {', '.join(c.name for c in self.cases)}")


def _bounds(prob: Problem) -> tuple[FloatArray, FloatArray]:
    """Upper bounds and thinnest-block floors of the candidates (0 for a slot that cannot be used), kg."""
    unusable = np.array([ln.floor > ln.cap for ln in prob.lines])
    ub = np.where(unusable, 0.0, np.array([ln.cap for ln in prob.lines]))
    floor = np.where(unusable, 0.0, np.array([ln.floor for ln in prob.lines]))
    return ub, floor


def _solve(prob: Problem, rows: Rows, stats: SolverStats) -> tuple[FloatArray | None, float, FloatArray | None]:
    """Stage 1 (least ballast) and stage 2 (the objective). Returns (masses or None when infeasible, least,
    the stage-1 masses)."""
    n = prob.n
    ub, floor = _bounds(prob)
    m1 = sequential_lp(np.ones(n), rows, ub, floor, None, stats)
    if m1 is None:
        return None, math.nan, None
    least = float(np.sum(m1))
    t = prob.plan.targets
    total = (least, least + t.ballast_allowance)
    if t.objective is Objective.FRONT_FRACTION:
        target = float(t.fraction_target if t.fraction_target is not None else 0.0)
        m_lin = sequential_lp(prob.cg_height_gradient(m1), rows, ub, floor, total, stats, start=m1)
        starts = [m1] + ([m_lin] if m_lin is not None else [])
        found = minimise_on_off(lambda m: 1e6 * prob.fraction_error(m, target), rows, ub, floor, total, starts,
                                stats)
        best = min([s for s in [found, *starts] if s is not None], key=lambda m: prob.fraction_error(m, target))
        return best, least, m1
    best = stage_two(prob, rows, ub, floor, total, stats, m1, t.objective, t.weight_height, t.weight_yaw)
    return best, least, m1


def stage_two(prob: Problem, rows: Rows, ub: FloatArray, floor: FloatArray, total: tuple[float, float],
              stats: SolverStats, m1: FloatArray, objective: Objective, weight_height: float = 0.5,
              weight_yaw: float = 0.5) -> FloatArray:
    """The objective (CG height, yaw inertia or their weighted mix; means over the cases) with the total ballast
    held in ``total`` (kg), from the least-ballast solution ``m1``."""
    n = prob.n
    m_lin = sequential_lp(prob.cg_height_gradient(m1), rows, ub, floor, total, stats, start=m1)
    if m_lin is None:
        m_lin = m1

    def height_mm(m: FloatArray) -> float:
        return 1e3 * prob.cg_height(m)

    m_height = m_lin
    if prob.moving_height or len(prob.cases) > 1 or total[1] > total[0]:
        found = minimise_on_off(height_mm, rows, ub, floor, total, [m_lin, m1], stats,
                                jac=lambda m: 1e3 * prob.cg_height_gradient(m))
        if found is not None and height_mm(found) < height_mm(m_lin) - 1e-9:
            m_height = found
    if objective is Objective.CG_HEIGHT:
        return m_height
    rng = np.random.default_rng(20261201)
    starts = [m_height, m_lin, m1]
    for _ in range(3):
        cand = sequential_lp(rng.normal(size=n), rows, ub, floor, total, stats, start=m1)
        if cand is not None:
            starts.append(cand)
    yaw_scale = max(prob.yaw(m1), 1e-9)
    m_yaw = minimise_on_off(lambda m: prob.yaw(m) / yaw_scale, rows, ub, floor, total, starts, stats)
    if m_yaw is None:
        m_yaw = min(starts, key=prob.yaw)
    if objective is Objective.YAW_INERTIA:
        return m_yaw
    return mix_optimum(prob, rows, ub, floor, total, stats, m_height, m_yaw, weight_height, weight_yaw)


def mix_optimum(prob: Problem, rows: Rows, ub: FloatArray, floor: FloatArray, total: tuple[float, float],
                stats: SolverStats, m_height: FloatArray, m_yaw: FloatArray, weight_height: float,
                weight_yaw: float) -> FloatArray:
    """The weighted mix of CG height and yaw inertia, each normalised between the two single optima."""
    h_min, y_min = prob.cg_height(m_height), prob.yaw(m_yaw)
    h_span = max(prob.cg_height(m_yaw) - h_min, 1e-12)
    y_span = max(prob.yaw(m_height) - y_min, 1e-12)

    def mix(m: FloatArray) -> float:
        return (weight_height * (prob.cg_height(m) - h_min) / h_span
                + weight_yaw * (prob.yaw(m) - y_min) / y_span)

    found = minimise_on_off(mix, rows, ub, floor, total, [m_height, m_yaw, 0.5 * (m_height + m_yaw)], stats)
    return min([m_height, m_yaw] + ([found] if found is not None else []), key=mix)


# --- exact assessment of sized blocks --------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class _Block:
    index: int  # candidate index
    mass: float  # nominal kg
    k_lo: float
    k_hi: float
    center: FloatArray


def _assess(prob: CaseSetup, reqs: Sequence[Requirement], blocks: Sequence[_Block], binding: set[str],
            cuts: dict[str, list[FloatArray]] | None = None) -> list[Assessment]:
    """Each requirement on the sized blocks, at nominal density and at the worst mix of the density bands; the
    worst mixes of the ratio rows are added to ``cuts`` (requirement key → density factors per candidate)."""
    m0, q0 = prob.m0, prob.q0
    w = np.array([b.mass for b in blocks])
    c = np.array([b.center for b in blocks]).reshape(-1, 3)
    lo = np.array([b.k_lo for b in blocks])
    hi = np.array([b.k_hi for b in blocks])
    idx = [b.index for b in blocks]
    phi = (c @ prob.fwd - prob.x_rear) / prob.wheelbase if len(blocks) else np.zeros(0)
    f0 = float(prob.fwd @ q0 - prob.x_rear * m0) / prob.wheelbase
    out = []

    def worst_of(num0: float, v: FloatArray, maximize: bool, key: str) -> float:
        value, kappa = extreme_ratio(num0, m0, w, v, lo, hi, maximize=maximize)
        if cuts is not None and len(blocks):
            full = np.ones(prob.n)
            full[idx] = kappa
            cuts.setdefault(key, []).append(full)
        return value

    for req in reqs:
        k = req.kind
        if k in ("min_mass", "min_group_mass"):
            member = np.array([req.members[i] for i in idx], dtype=float)
            nominal = req.base + float(np.sum(w * member))
            worst = req.base + float(np.sum(lo * w * member))
        elif k in ("axle_front", "axle_rear"):
            share = phi if k == "axle_front" else 1.0 - phi
            base = f0 if k == "axle_front" else m0 - f0
            nominal = base + float(np.sum(w * share))
            worst = base + float(np.sum(np.where(share >= 0.0, lo, hi) * w * share))
        elif k in ("fraction_min", "fraction_max"):
            nominal = (f0 + float(np.sum(w * phi))) / (m0 + float(np.sum(w)))
            worst = worst_of(f0, phi, k == "fraction_max", req.key)
        elif k == "cg_height_max":
            z = c @ prob.up if len(blocks) else np.zeros(0)
            nominal = (float(prob.up @ q0) + float(np.sum(w * z))) / (m0 + float(np.sum(w))) - prob.ground
            worst = worst_of(float(prob.up @ q0), z, True, req.key) - prob.ground
        elif k in ("lateral_max", "lateral_min"):
            y = c @ prob.left if len(blocks) else np.zeros(0)
            nominal = (float(prob.left @ q0) + float(np.sum(w * y))) / (m0 + float(np.sum(w)))
            worst = worst_of(float(prob.left @ q0), y, k == "lateral_max", req.key)
        else:  # max_ballast
            nominal = worst = float(np.sum(w))
        sign = -1.0 if req.is_max else 1.0
        out.append(Assessment(req, float(nominal), float(worst), sign * (nominal - req.bound),
                              sign * (worst - req.bound), req.key in binding))
    return out


# --- infeasibility ---------------------------------------------------------------------------------------------

def _named(req: Requirement) -> str:
    """A requirement's label with its load case: "front share (min) in case 'race'"."""
    return f"{req.label} in case '{req.case}'"


def _diagnose(prob: Problem, reqs: Sequence[Requirement], rows: Rows, stats: SolverStats) -> list[Shortfall]:
    """Elastic LP: one slack (kg) per row, least total slack; rows with slack are the ones that cannot be met."""
    from scipy.optimize import linprog

    n, r = prob.n, len(rows.g0)
    ub = np.array([ln.cap if ln.floor <= ln.cap else 0.0 for ln in prob.lines])
    g0, a = rows.linear_at(0.5 * ub)
    c = np.concatenate([np.zeros(n), np.ones(r)])
    a_ub = -np.hstack([a, np.eye(r)])
    res = linprog(c, A_ub=a_ub, b_ub=g0, bounds=[(0.0, u) for u in ub] + [(0.0, None)] * r, method="highs")
    stats.lp_solves += 1
    stats.lp_iterations += int(getattr(res, "nit", 0) or 0)
    if res.status != 0:
        return []
    m, s = res.x[:n], res.x[n:]
    g = g0 + a @ m
    added = float(np.sum(m))
    worst: dict[str, float] = {}
    for j, req in enumerate(rows.reqs):
        if s[j] > TOL_KG:
            worst[req.key] = max(worst.get(req.key, 0.0), float(s[j]))
    tight = {req.key for j, req in enumerate(rows.reqs)
             if s[j] <= TOL_KG and g[j] <= 1e-6 * max(1.0, prob.cases[req.case].m0 + added)}
    out = []
    by_key = {q.key: q for q in reqs}

    for key, slack in sorted(worst.items(), key=lambda kv: -kv[1]):
        req = by_key[key]
        amount = slack if req.unit == "kg" else slack / (prob.cases[req.case].m0 + added)
        best = _best_alone(prob.cases[req.case], req, ub)
        conflicts = tuple(_named(by_key[k]) for k in sorted(tight) if k != key and k in by_key)
        if best is not None and ((best < req.bound) if not req.is_max else (best > req.bound)):
            why = (f"even with the candidate slots used for this alone it reaches only {best:.4f} {req.unit} "
                   f"against {req.bound:.4f} {req.unit}" if not req.is_max else
                   f"even with the candidate slots used for this alone it stays at {best:.4f} {req.unit} "
                   f"against {req.bound:.4f} {req.unit}")
            if all(m[i] >= ub[i] - 1e-9 for i in range(n)):
                why += "; every candidate slot is full"
        else:
            why = "it can be met on its own, but not together with " + (", ".join(conflicts) or "the other rows")
        out.append(Shortfall(req, float(amount), best, conflicts,
                             f"{_named(req)}: short by {amount:.4g} {req.unit}; {why}"))
    return out


def _best_alone(prob: CaseSetup, req: Requirement, ub: FloatArray) -> float | None:
    """The best value of one requirement over the slot capacities alone (nominal density; mass rows at low)."""
    pa, _ = prob.lever()
    f0 = float(prob.fwd @ prob.q0 - prob.x_rear * prob.m0) / prob.wheelbase
    lo = np.array([ln.k_lo for ln in prob.lines])
    centres = np.array([ln.p + ln.q * ub[i] for i, ln in enumerate(prob.lines)]).reshape(-1, 3)
    zeros, caps = np.zeros(prob.n), ub
    k = req.kind
    if k in ("min_mass", "min_group_mass"):
        return req.base + float(np.sum(lo * ub * np.array(req.members, dtype=float)))
    if k == "axle_front":
        return f0 + float(np.sum(np.clip(lo * pa, 0.0, None) * ub))
    if k == "axle_rear":
        return prob.m0 - f0 + float(np.sum(np.clip(lo * (1.0 - pa), 0.0, None) * ub))
    if k in ("fraction_min", "fraction_max"):
        return extreme_ratio(f0, prob.m0, np.ones(prob.n), pa, zeros, caps, maximize=(k == "fraction_min"))[0]
    if k == "cg_height_max":
        z = centres @ prob.up
        return extreme_ratio(float(prob.up @ prob.q0), prob.m0, np.ones(prob.n), z, zeros, caps,
                              maximize=False)[0] - prob.ground
    if k in ("lateral_max", "lateral_min"):
        y = centres @ prob.left
        return extreme_ratio(float(prob.left @ prob.q0), prob.m0, np.ones(prob.n), y, zeros, caps,
                              maximize=(k == "lateral_min"))[0]
    return None


# --- the whole job ---------------------------------------------------------------------------------------------

def _size_all(prob: Problem, m: FloatArray) -> tuple[list[Allocation], list[_Block], list[Component]]:
    allocations, blocks, comps = [], [], []
    for i, ln in enumerate(prob.lines):
        cand = ln.cand
        sizing = None
        paths: tuple[str, ...] = ()
        if m[i] > 1e-9:
            sizing = size_block(cand.envelope, cand.spec, ln.k_lo * m[i] * (1.0 - 1e-12))
            if not sizing.reached:
                sizing = ln.full  # the optimiser asked for the whole slot: round-off at the top of the band
            pieces = sizing.pieces
            names = [cand.path] if len(pieces) == 1 else [f"{cand.path}/plate_{j + 1}" for j in range(len(pieces))]
            mat = cand.spec.material
            lo, hi = mat.band
            note = (f"{mat.key}: {mat.density:.0f} kg/m^3 nominal ({lo:.0f}..{hi:.0f}); sized by massmodel for "
                    f"slot {cand.name}")
            for piece, name in zip(pieces, names, strict=True):
                comps.append(piece_component(piece, mat, name, cand.name, note))
            paths = tuple(names)
            mp = sizing.props()
            blocks.append(_Block(i, mp.mass, ln.k_lo, ln.k_hi, mp.center))
        allocations.append(Allocation(cand, float(m[i]), sizing, ln.cap, ln.floor, paths))
    return allocations, blocks, comps


def _as_cases(models: Model | Mapping[str, Model]) -> dict[str, Model]:
    if isinstance(models, Model):
        return {models.case: models}
    cases = dict(models)
    if not cases:
        raise UsageError("ballast placement needs at least one load case")
    return cases


def _all_requirements(prob: Problem, plan: Plan, margins: Mapping[str, float],
                      tighten: Mapping[str, float]) -> list[Requirement]:
    out: list[Requirement] = []
    for k, (name, setup) in enumerate(prob.cases.items()):
        out += case_requirements(name, setup.model, setup.baseline, plan, margins, tighten, with_max_ballast=(k == 0))
    return out


def place_ballast(models: Model | Mapping[str, Model], plan: Plan, *, margins: Mapping[str, float] | None = None,
                  tradeoff_points: int = 0, other_rules: Sequence[str] = ()) -> PlacementResult:
    """Place ballast across the plan's candidate slots, meeting the rules of every load case at once (see the
    module notes for the method).

    Parameters
    ----------
    models : Model or mapping of str to Model
        The car in one load case, or case name → the car in that case
        (:func:`massmodel.modelfile.loader.load_case_models`); each model holds the rules that apply in its case.
        The first case is the one the single-case fields of the result describe.
    plan : Plan
        Candidates and targets (:func:`massmodel.ballast.plan.load_plan`).
    margins : mapping of str to float, optional
        Per-rule margins in SI (kg for mass and axle rules, a fraction for front-share rules, m for CG height),
        on top of the plan's general margins; they replace the plan's ``[margins]`` entry of the same rule.
    tradeoff_points : int
        Number of points of the CG height / yaw inertia trade-off curve at the least ballast (0: none).
    other_rules : sequence of str
        Names of rules of load cases left out (``--case``): their margins are passed over rather than refused.

    Returns
    -------
    PlacementResult
        Feasible: the sized blocks, every case's ballasted model (in memory), every requirement checked at nominal
        density and at the worst mix of the density bands, the rule checks, what each rule costs and the slots'
        sensitivities. Infeasible: the shortfalls, naming the case and the rows that cannot be met, and by how much.

    Raises
    ------
    PlanError, ValueError
        A margin naming no rule of the cases, of the wrong dimension, or negative.
    """
    t_start = time.perf_counter()
    stats = SolverStats()
    cases = _as_cases(models)
    used_margins = resolve_margins(plan, cases, margins, other_rules)
    prob = build_problem(cases, plan)
    first_case = prob.first
    befores = {name: s.model.mass_properties() for name, s in prob.cases.items()}
    bal_before = {name: static_balance(befores[name], s.model.vehicle) if s.model.vehicle else None
                  for name, s in prob.cases.items()}
    tighten: dict[str, float] = {}
    notes: list[str] = list(prob.notes)
    first: tuple[float, ...] = ()
    least_first = math.nan
    for ln in prob.lines:
        if ln.floor > ln.cap and ln.cap > 0.0:
            notes.append(f"slot {ln.cand.name}: its capacity ({ln.cap:.3f} kg) is less than its thinnest block "
                         f"({ln.floor:.3f} kg), so it is not used")
    costs: list[RuleCost] = []
    totals: list[RuleTotal] = []
    true_reqs = _all_requirements(prob, plan, used_margins, {})  # what the result is checked against
    cuts: dict[str, list[FloatArray]] = {}  # worst density mixes met so far, added as rows
    for round_no in range(1, MAX_ROUNDS + 1):
        stats.rounds = round_no
        reqs = _all_requirements(prob, plan, used_margins, tighten)
        rows = prob.rows(reqs, cuts)
        m, _least, m1 = _solve(prob, rows, stats)
        if m is None or m1 is None:
            shortfalls = _diagnose(prob, reqs, rows, stats)
            stats.seconds = time.perf_counter() - t_start
            if round_no > 1:
                notes.append("the rows were tightened to absorb rounding to the increment and the density bands; "
                             "with the tightened rows there is no solution: try a finer increment")
            empty = tuple(CaseOutcome(name, s.model, s.baseline, None, befores[name], None, bal_before[name], None,
                                      (), ()) for name, s in prob.cases.items())
            return PlacementResult(plan, first_case.model, first_case.baseline, False, (), None, (), (),
                                   bal_before[first_case.name], None, befores[first_case.name], None,
                                   tuple(shortfalls), stats, tuple(notes), cases=empty, margins=used_margins)
        if round_no == 1:
            first = tuple(float(v) for v in m)
            least_first = float(np.sum(m1))
            costs = rule_costs(prob, reqs, rows, m1, _bounds(prob), stats)
            totals = rule_totals(costs, rows, _bounds(prob), stats)
        g = rows.values(m)
        slack = plan.targets.ballast_allowance
        binding = {req.key for req, gj in zip(rows.reqs, g, strict=True)
                   if gj <= 1e-6 * max(1.0, prob.cases[req.case].m0) + (slack if req.unit == "kg" else 0.0)}
        allocations, blocks, comps = _size_all(prob, m)
        new_cuts: dict[str, list[FloatArray]] = {}
        assessments = [a for name, s in prob.cases.items()
                       for a in _assess(s, [r for r in true_reqs if r.case == name], blocks, binding, new_cuts)]
        missed = [a for a in assessments if not a.passed]
        over = [(al, al.sizing.masses()[2] - al.candidate.capacity) for al in allocations
                if al.sizing is not None and al.candidate.capacity is not None
                and al.sizing.masses()[2] > al.candidate.capacity * (1 + 1e-12)]
        if not missed and not over:
            break
        for a in missed:  # the row is made to bind where it is now, less the true miss (the worst mix becomes a row)
            key = a.requirement.key
            j = [i for i, rq in enumerate(rows.reqs) if rq.key == key]
            slack = float(np.min(g[j])) if j else 0.0
            if a.requirement.unit != "kg":
                slack /= prob.cases[a.requirement.case].m0 + float(np.sum(m))
            tighten[key] = tighten.get(key, 0.0) + max(slack, 0.0) - a.margin_worst + \
                (1e-6 if a.requirement.unit == "kg" else 1e-7)
            cuts.setdefault(a.requirement.key, []).extend(new_cuts.get(a.requirement.key, []))
        for al, excess in over:
            i = plan.candidates.index(al.candidate)
            ln = prob.lines[i]
            prob.lines[i] = replace(ln, cap=max(ln.cap - excess / ln.k_hi - 1e-6, 0.0))
    else:
        notes.append(f"after {MAX_ROUNDS} rounds some rows still miss after rounding; see the margins")
    if tighten:
        notes.append("rows tightened to absorb rounding and the density bands: " +
                     ", ".join(f"{k.split(':', 1)[1]} by {v:.3g}" for k, v in tighten.items()))
    assert m is not None and m1 is not None  # the loop returned when infeasible
    outcomes: list[CaseOutcome] = []
    for name, s in prob.cases.items():
        ballasted = s.baseline.with_components(list(s.baseline.components) + comps, name=f"{s.model.name} (ballasted)")
        after = ballasted.mass_properties()
        bal_after = static_balance(after, s.model.vehicle) if s.model.vehicle else None
        outcomes.append(CaseOutcome(name, s.model, s.baseline, ballasted, befores[name], after, bal_before[name],
                                    bal_after, tuple(a for a in assessments if a.requirement.case == name),
                                    tuple(check_rules(ballasted))))
    sens = slot_sensitivities(prob, allocations, outcomes)
    curve: list[TradeoffPoint] = []
    if tradeoff_points > 0:
        ub, floor = _bounds(prob)
        least = float(np.sum(m1))
        curve = tradeoff_curve(prob, rows, ub, floor, (least, least + plan.targets.ballast_allowance), stats, m1,
                               tradeoff_points, starts=[m])
    stats.seconds = time.perf_counter() - t_start
    o0 = outcomes[0]
    return PlacementResult(plan, o0.model, o0.baseline, True, tuple(allocations), o0.ballasted, tuple(assessments),
                           tuple(r for o in outcomes for r in o.rules), o0.balance_before, o0.balance_after,
                           o0.props_before, o0.props_after, (), stats, tuple(notes), first, tuple(outcomes),
                           tuple(costs), tuple(sens), tuple(curve), used_margins, least_first,
                           tuple(totals))
