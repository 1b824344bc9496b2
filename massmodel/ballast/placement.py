"""Placing ballast across candidate slots to meet the rules with the least ballast and the lowest CG.

The problem
-----------
Each candidate slot ``i`` takes a nominal ballast mass ``mᵢ`` (kg): nothing, or between the thinnest block it can
hold and its capacity. A block grows along its fill axis, so its CG moves with its mass; over the slot it is
modelled as ``cᵢ(m) = pᵢ + qᵢ m`` (exact at the full block and at half of it, ``qᵢ = 0`` for a block that grows about
the slot centre). With ``μᵢ = κᵢ mᵢ`` the mass at a density ``κᵢ`` times the nominal one, every rule and target is
a row ``g(m) = g₀ + Σ aᵢ mᵢ + bᵢ mᵢ² ≥ 0`` in kg:

* ``min_mass`` / ``min_group_mass``: rule mass − (limit + margin), at the LOW end of every density band.
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
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.massprops import MassProperties, parallel_axis_shift
from massmodel.core.model import Component, Model, RuleCheck, in_group
from massmodel.vehicle.balance import Balance, RuleResult, check_rules, static_balance

from .parts import piece_component
from .plan import Candidate, Objective, Plan
from .sizing import BlockSizing, SizingError, cross_sizes, size_block, stack_for_units
from .solvers import TOL_KG, Rows, SolverStats, extreme_ratio, minimise_on_off, sequential_lp

__all__ = ["Requirement", "Assessment", "Allocation", "Shortfall", "SolverStats", "PlacementResult", "place_ballast"]

FloatArray = npt.NDArray[np.float64]
MAX_ROUNDS = 8


@dataclass(frozen=True, slots=True)
class Requirement:
    """One rule or target as a bound.

    ``kind`` is min_mass, min_group_mass, axle_front, axle_rear, fraction_min, fraction_max, cg_height_max,
    lateral_max, lateral_min or max_ballast; ``bound`` is in ``unit`` (kg, fraction, m) and already includes the
    plan's margin; ``limit`` is the rule's own value.
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

    @property
    def is_max(self) -> bool:
        return self.kind in ("fraction_max", "cg_height_max", "lateral_max", "max_ballast")


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
class PlacementResult:
    """Outcome of :func:`place_ballast`."""

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

    @property
    def ballast_mass(self) -> tuple[float, float, float]:
        """Total added ballast (nominal, lowest, highest density), kg."""
        out = np.zeros(3)
        for a in self.allocations:
            if a.sizing is not None:
                out += np.array(a.sizing.masses())
        return float(out[0]), float(out[1]), float(out[2])


@dataclass(frozen=True, eq=False)
class _Line:
    """Continuous model of one candidate: mass bounds, CG line, density factors, own-inertia dimensions."""

    cand: Candidate
    cap: float
    floor: float
    p: FloatArray
    q: FloatArray
    k_lo: float
    k_hi: float
    rot: FloatArray
    cross: FloatArray
    area: float
    rho: float
    full: BlockSizing


def _line(c: Candidate) -> _Line:
    full = size_block(c.envelope, c.spec, None)
    rho = c.spec.material.density
    lo, hi = c.spec.material.band
    mp_full = full.props()
    k = c.spec.fill.axis
    n_full = round(full.fill_length / c.spec.increment)
    p, q = mp_full.center.copy(), np.zeros(3)
    if c.spec.fill.sign != 0 and n_full >= 2 and not c.spec.stock:
        try:
            half = stack_for_units(c.envelope, c.spec, cross_sizes(c.envelope, c.spec), n_full // 2)
            mp_half = MassProperties(*_combine_pieces(half, rho))
            q = (mp_full.center - mp_half.center) / (mp_full.mass - mp_half.mass)
            p = mp_full.center - q * mp_full.mass
        except SizingError:
            pass
    elif c.spec.fill.sign != 0:
        # a stack of stock plates: the CG line from the wall to the full stack's CG
        wall = c.envelope.pose.apply(np.eye(3)[k] * (-c.spec.fill.sign) * (0.5 * c.envelope.size[k]
                                                                        - c.envelope.clearance))
        q = (mp_full.center - wall) / mp_full.mass
        p = wall
    cap = mp_full.mass
    if c.capacity is not None:  # keep one increment of room for rounding up (at the high end of the band)
        one = hi * full.volume / max(full.fill_length / c.spec.increment, 1.0)
        cap = min(cap, max((c.capacity - one) / (hi / rho), 0.0))
    thin = size_block(c.envelope, c.spec, 1e-12)  # the thinnest block the spec allows
    floor = thin.masses()[0]
    vol_full = full.volume
    area = vol_full / full.fill_length
    return _Line(c, cap, floor, p, q, lo / rho, hi / rho, c.envelope.pose.linear, np.array(full.pieces[0].geometry.size),
                 area, rho, full)


def _combine_pieces(pieces: Sequence[Any], rho: float) -> tuple[float, FloatArray, FloatArray]:
    mps = [p.props(rho) for p in pieces]
    from massmodel.core.massprops import combine

    mp = combine(mps)
    return mp.mass, mp.center, mp.inertia


def _requirements(model: Model, baseline: Model, plan: Plan, tighten: dict[str, float]) -> list[Requirement]:
    t = plan.targets
    reqs: list[Requirement] = []
    cands = plan.candidates
    for rule in model.rules:
        key = f"rule:{rule.name}"
        if rule.check is RuleCheck.MIN_MASS:
            members = tuple(not any(in_group(c.path, g) for g in rule.exclude) for c in cands)
            base = float(sum(c.props.mass for c in baseline.select(exclude=rule.exclude)))
            lim = float(rule.limit or 0.0)
            reqs.append(Requirement(key, rule.name, "min_mass", lim + t.mass_margin + tighten.get(key, 0.0), lim, "kg",
                                    "rule", members, base))
        elif rule.check is RuleCheck.MIN_GROUP_MASS:
            members = tuple(any(in_group(c.path, g) for g in rule.groups) for c in cands)
            base = float(sum(c.props.mass for c in baseline.select(include=rule.groups)))
            lim = float(rule.limit or 0.0)
            reqs.append(Requirement(key, rule.name, "min_group_mass", lim + t.mass_margin + tighten.get(key, 0.0), lim,
                                    "kg", "rule", members, base))
        elif rule.check is RuleCheck.MIN_AXLE_LOAD:
            lim = float(rule.limit or 0.0)
            reqs.append(Requirement(key, rule.name, f"axle_{rule.axle}", lim + t.mass_margin + tighten.get(key, 0.0),
                                    lim, "kg", "rule"))
        elif rule.check is RuleCheck.FRONT_FRACTION:
            if rule.minimum is not None:
                k2 = key + ":min"
                reqs.append(Requirement(k2, rule.name + " (min)", "fraction_min",
                                        rule.minimum + t.fraction_margin + tighten.get(k2, 0.0), rule.minimum,
                                        "fraction", "rule"))
            if rule.maximum is not None:
                k2 = key + ":max"
                reqs.append(Requirement(k2, rule.name + " (max)", "fraction_max",
                                        rule.maximum - t.fraction_margin - tighten.get(k2, 0.0), rule.maximum,
                                        "fraction", "rule"))
        elif rule.check is RuleCheck.MAX_CG_HEIGHT:
            lim = float(rule.limit or 0.0)
            reqs.append(Requirement(key, rule.name, "cg_height_max", lim - t.cg_height_margin - tighten.get(key, 0.0),
                                    lim, "m", "rule"))
    if t.fraction_target is not None:
        tol = float(t.fraction_tolerance or 0.0)
        for kind, bound in (("fraction_min", t.fraction_target - tol), ("fraction_max", t.fraction_target + tol)):
            key = f"target:{kind}"
            sign = 1.0 if kind == "fraction_min" else -1.0
            side = "min" if kind == "fraction_min" else "max"
            reqs.append(Requirement(key, f"front fraction target {t.fraction_target:.4f} +/- {tol:.4f} ({side})", kind,
                                    bound + sign * tighten.get(key, 0.0), bound, "fraction", "target"))
    if t.lateral_offset_max is not None:
        y = t.lateral_offset_max
        reqs.append(Requirement("target:lateral_max", f"CG at most {y * 1e3:.1f} mm left of the centre plane",
                                "lateral_max", y - tighten.get("target:lateral_max", 0.0), y, "m", "target"))
        reqs.append(Requirement("target:lateral_min", f"CG at most {y * 1e3:.1f} mm right of the centre plane",
                                "lateral_min", -y + tighten.get("target:lateral_min", 0.0), -y, "m", "target"))
    if t.max_ballast is not None:
        reqs.append(Requirement("target:max_ballast", "most ballast allowed", "max_ballast", t.max_ballast,
                                t.max_ballast, "kg", "target"))
    return reqs


@dataclass(eq=False)
class _Problem:
    model: Model
    baseline: Model
    plan: Plan
    lines: list[_Line]
    m0: float
    q0: FloatArray  # first moment of the baseline, kg·m, model frame
    j0: FloatArray  # baseline inertia about the model origin, kg·m²
    fwd: FloatArray
    left: FloatArray
    up: FloatArray
    x_rear: float
    wheelbase: float
    ground: float

    @property
    def n(self) -> int:
        return len(self.lines)

    def lever(self) -> tuple[FloatArray, FloatArray]:
        """Front-axle share of each candidate's mass: φᵢ(m) = φa + φb m."""
        pa = np.array([(self.fwd @ ln.p - self.x_rear) / self.wheelbase for ln in self.lines])
        pb = np.array([(self.fwd @ ln.q) / self.wheelbase for ln in self.lines])
        return pa, pb

    def row(self, req: Requirement, kappa: FloatArray) -> tuple[float, FloatArray, FloatArray]:
        """(g0, a, b) of a requirement at density factors ``kappa`` (see the module notes)."""
        n = self.n
        zero = np.zeros(n)
        f0 = float(self.fwd @ self.q0 - self.x_rear * self.m0) / self.wheelbase
        pa, pb = self.lever()
        up_p = np.array([self.up @ ln.p for ln in self.lines])
        up_q = np.array([self.up @ ln.q for ln in self.lines])
        le_p = np.array([self.left @ ln.p for ln in self.lines])
        le_q = np.array([self.left @ ln.q for ln in self.lines])
        k = req.kind
        if k in ("min_mass", "min_group_mass"):
            return req.base - req.bound, kappa * np.array(req.members, dtype=float), zero
        if k == "axle_front":
            return f0 - req.bound, kappa * pa, kappa * pb
        if k == "axle_rear":
            return self.m0 - f0 - req.bound, kappa * (1.0 - pa), -kappa * pb
        if k == "fraction_min":
            return f0 - req.bound * self.m0, kappa * (pa - req.bound), kappa * pb
        if k == "fraction_max":
            return req.bound * self.m0 - f0, kappa * (req.bound - pa), -kappa * pb
        if k == "cg_height_max":
            zc = self.ground + req.bound
            return zc * self.m0 - float(self.up @ self.q0), kappa * (zc - up_p), -kappa * up_q
        if k == "lateral_max":
            return req.bound * self.m0 - float(self.left @ self.q0), kappa * (req.bound - le_p), -kappa * le_q
        if k == "lateral_min":
            return float(self.left @ self.q0) - req.bound * self.m0, kappa * (le_p - req.bound), kappa * le_q
        if k == "max_ballast":
            return req.bound, -np.ones(n), zero
        raise ValueError(f"unknown requirement kind {k!r}")

    def scenarios(self, req: Requirement) -> list[tuple[str, FloatArray]]:
        lo = np.array([ln.k_lo for ln in self.lines])
        hi = np.array([ln.k_hi for ln in self.lines])
        one = np.ones(self.n)
        if req.kind in ("min_mass", "min_group_mass"):
            return [("low density", lo)]
        if req.kind == "max_ballast":
            return [("nominal", one)]
        pa, _ = self.lever()
        if req.kind == "axle_front":
            return [("worst density", np.where(pa >= 0.0, lo, hi))]
        if req.kind == "axle_rear":
            return [("worst density", np.where(1.0 - pa >= 0.0, lo, hi))]
        return [("nominal", one), ("low density", lo), ("high density", hi)]

    def __post_init__(self) -> None:
        self._p = np.array([ln.p for ln in self.lines]).reshape(-1, 3)
        self._q = np.array([ln.q for ln in self.lines]).reshape(-1, 3)
        self._up_p = self._p @ self.up
        self._up_q = self._q @ self.up

    def aggregate(self, m: FloatArray, kappa: FloatArray | None = None) -> tuple[float, FloatArray, FloatArray]:
        """(total mass kg, first moment kg·m, inertia about the origin kg·m²) with the candidate blocks modelled."""
        kap = np.ones(self.n) if kappa is None else kappa
        mu = kap * m
        centres = self._p + self._q * m[:, None]
        mass = self.m0 + float(np.sum(mu))
        first = self.q0 + mu @ centres
        inertia = self.j0 + parallel_axis_shift(mu, centres).sum(axis=0)
        for i, ln in enumerate(self.lines):
            if m[i] <= 0.0:
                continue
            dims = ln.cross.copy()
            dims[ln.cand.spec.fill.axis] = m[i] / (ln.rho * ln.area)
            d2 = dims * dims
            own = mu[i] / 12.0 * np.diag([d2[1] + d2[2], d2[0] + d2[2], d2[0] + d2[1]])
            inertia = inertia + ln.rot @ own @ ln.rot.T
        return mass, first, inertia

    def cg_height(self, m: FloatArray) -> float:
        """CG height above the ground, m (nominal densities)."""
        mass = self.m0 + float(np.sum(m))
        up_first = float(self.up @ self.q0) + float(m @ (self._up_p + self._up_q * m))
        return up_first / mass - self.ground

    def cg_height_gradient(self, m: FloatArray) -> FloatArray:
        """d(CG height)/dmᵢ, m/kg."""
        mass = self.m0 + float(np.sum(m))
        z = (float(self.up @ self.q0) + float(m @ (self._up_p + self._up_q * m))) / mass
        return (self._up_p + 2.0 * self._up_q * m - z) / mass

    def yaw(self, m: FloatArray) -> float:
        """Yaw inertia about the vehicle's vertical axis through the CG, kg·m² (nominal densities)."""
        mass, first, inertia = self.aggregate(m)
        c = first / mass
        about_cg = inertia - parallel_axis_shift(mass, c)
        return float(self.up @ about_cg @ self.up)


def _problem(model: Model, plan: Plan) -> tuple[_Problem, Model]:
    if model.vehicle is None:
        raise UsageError(f"{model.source or model.name}: ballast placement needs a [vehicle] section")
    removed = [p for c in plan.candidates for p in c.replace]
    baseline = model.with_components([c for c in model.components if c.path not in removed])
    lines = [_line(c) for c in plan.candidates]
    mp = baseline.mass_properties()
    v = model.vehicle
    j0 = np.asarray(mp.inertia + parallel_axis_shift(mp.mass, mp.center))
    return _Problem(model, baseline, plan, lines, mp.mass, mp.mass * mp.center, j0, v.forward, v.left, v.up,
                    v.rear_axle_station, v.wheelbase, v.ground_level), baseline


# --- solvers ---------------------------------------------------------------------------------------------------

def _rows(prob: _Problem, reqs: Sequence[Requirement], cuts: Sequence[tuple[Requirement, FloatArray]]) -> Rows:
    g0, a, b, rr, labels = [], [], [], [], []
    for req in reqs:
        for label, kappa in prob.scenarios(req):
            r0, ra, rb = prob.row(req, kappa)
            g0.append(r0)
            a.append(ra)
            b.append(rb)
            rr.append(req)
            labels.append(label)
    for req, kappa in cuts:
        r0, ra, rb = prob.row(req, kappa)
        g0.append(r0)
        a.append(ra)
        b.append(rb)
        rr.append(req)
        labels.append("worst density mix")
    n = prob.n
    return Rows(np.array(g0), np.array(a).reshape(-1, n), np.array(b).reshape(-1, n), rr, labels)


def _solve(prob: _Problem, rows: Rows, stats: SolverStats) -> tuple[FloatArray | None, float]:
    """Stage 1 (least ballast) and stage 2 (the objective). Returns (masses or None when infeasible, least)."""
    n = prob.n
    unusable = np.array([ln.floor > ln.cap for ln in prob.lines])
    ub = np.where(unusable, 0.0, np.array([ln.cap for ln in prob.lines]))
    floor = np.where(unusable, 0.0, np.array([ln.floor for ln in prob.lines]))
    m1 = sequential_lp(np.ones(n), rows, ub, floor, None, stats)
    if m1 is None:
        return None, math.nan
    least = float(np.sum(m1))
    total = (least, least + prob.plan.targets.ballast_allowance)
    up_q = np.array([prob.up @ ln.q for ln in prob.lines])
    m_lin = sequential_lp(prob.cg_height_gradient(m1), rows, ub, floor, total, stats, start=m1)
    if m_lin is None:
        m_lin = m1

    def height_mm(m: FloatArray) -> float:
        return 1e3 * prob.cg_height(m)

    m_height = m_lin
    if np.any(up_q) or total[1] > total[0]:
        found = minimise_on_off(height_mm, rows, ub, floor, total, [m_lin, m1], stats,
                          jac=lambda m: 1e3 * prob.cg_height_gradient(m))
        if found is not None and height_mm(found) < height_mm(m_lin) - 1e-9:
            m_height = found
    objective = prob.plan.targets.objective
    if objective is Objective.CG_HEIGHT:
        return m_height, least
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
        return m_yaw, least
    t = prob.plan.targets
    h_min, y_min = prob.cg_height(m_height), prob.yaw(m_yaw)
    h_span = max(prob.cg_height(m_yaw) - h_min, 1e-12)
    y_span = max(prob.yaw(m_height) - y_min, 1e-12)

    def mix(m: FloatArray) -> float:
        return (t.weight_height * (prob.cg_height(m) - h_min) / h_span
                + t.weight_yaw * (prob.yaw(m) - y_min) / y_span)

    found = minimise_on_off(mix, rows, ub, floor, total, [m_height, m_yaw, 0.5 * (m_height + m_yaw)], stats)
    best = min([m_height, m_yaw] + ([found] if found is not None else []), key=mix)
    return best, least


# --- exact assessment of sized blocks --------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class _Block:
    index: int  # candidate index
    mass: float  # nominal kg
    k_lo: float
    k_hi: float
    center: FloatArray


def _assess(prob: _Problem, reqs: Sequence[Requirement], blocks: Sequence[_Block],
            binding: set[str]) -> list[Assessment]:
    m0, q0 = prob.m0, prob.q0
    w = np.array([b.mass for b in blocks])
    c = np.array([b.center for b in blocks]).reshape(-1, 3)
    lo = np.array([b.k_lo for b in blocks])
    hi = np.array([b.k_hi for b in blocks])
    idx = [b.index for b in blocks]
    phi = (c @ prob.fwd - prob.x_rear) / prob.wheelbase if len(blocks) else np.zeros(0)
    f0 = float(prob.fwd @ q0 - prob.x_rear * m0) / prob.wheelbase
    out = []
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
            worst = extreme_ratio(f0, m0, w, phi, lo, hi, maximize=(k == "fraction_max"))[0]
        elif k == "cg_height_max":
            z = c @ prob.up if len(blocks) else np.zeros(0)
            nominal = (float(prob.up @ q0) + float(np.sum(w * z))) / (m0 + float(np.sum(w))) - prob.ground
            worst = extreme_ratio(float(prob.up @ q0), m0, w, z, lo, hi, maximize=True)[0] - prob.ground
        elif k in ("lateral_max", "lateral_min"):
            y = c @ prob.left if len(blocks) else np.zeros(0)
            nominal = (float(prob.left @ q0) + float(np.sum(w * y))) / (m0 + float(np.sum(w)))
            worst = extreme_ratio(float(prob.left @ q0), m0, w, y, lo, hi, maximize=(k == "lateral_max"))[0]
        else:  # max_ballast
            nominal = worst = float(np.sum(w))
        sign = -1.0 if req.is_max else 1.0
        out.append(Assessment(req, float(nominal), float(worst), sign * (nominal - req.bound),
                              sign * (worst - req.bound), req.key in binding))
    return out


# --- infeasibility ---------------------------------------------------------------------------------------------

def _diagnose(prob: _Problem, reqs: Sequence[Requirement], rows: Rows, stats: SolverStats) -> list[Shortfall]:
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
    mass = prob.m0 + float(np.sum(m))
    worst: dict[str, float] = {}
    for j, req in enumerate(rows.reqs):
        if s[j] > TOL_KG:
            worst[req.key] = max(worst.get(req.key, 0.0), float(s[j]))
    tight = {req.key for j, req in enumerate(rows.reqs) if s[j] <= TOL_KG and g[j] <= 1e-6 * max(1.0, mass)}
    out = []
    by_key = {q.key: q for q in reqs}
    for key, slack in sorted(worst.items(), key=lambda kv: -kv[1]):
        req = by_key[key]
        amount = slack if req.unit == "kg" else slack / mass
        best = _best_alone(prob, req, ub)
        conflicts = tuple(by_key[k].label for k in sorted(tight) if k != key and k in by_key)
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
                             f"{req.label}: short by {amount:.4g} {req.unit}; {why}"))
    return out


def _best_alone(prob: _Problem, req: Requirement, ub: FloatArray) -> float | None:
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

def _size_all(prob: _Problem, m: FloatArray) -> tuple[list[Allocation], list[_Block], list[Component]]:
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


def place_ballast(model: Model, plan: Plan) -> PlacementResult:
    """Place ballast across the plan's candidate slots (see the module notes for the method).

    Parameters
    ----------
    model : Model
        The car, with its rules and [vehicle].
    plan : Plan
        Candidates and targets (:func:`massmodel.ballast.plan.load_plan`).

    Returns
    -------
    PlacementResult
        Feasible: the sized blocks, the ballasted model (in memory), every requirement checked at nominal density
        and at the worst mix of the density bands, the rule checks. Infeasible: the shortfalls, naming the rows
        that cannot be met and by how much.
    """
    t_start = time.perf_counter()
    stats = SolverStats()
    prob, baseline = _problem(model, plan)
    props_before = model.mass_properties()
    bal_before = static_balance(props_before, model.vehicle) if model.vehicle else None
    tighten: dict[str, float] = {}
    notes: list[str] = []
    first: tuple[float, ...] = ()
    for ln in prob.lines:
        if ln.floor > ln.cap:
            notes.append(f"slot {ln.cand.name}: its capacity ({ln.cap:.3f} kg) is less than its thinnest block "
                         f"({ln.floor:.3f} kg), so it is not used")
    for round_no in range(1, MAX_ROUNDS + 1):
        stats.rounds = round_no
        reqs = _requirements(model, baseline, plan, tighten)
        rows = _rows(prob, reqs, [])
        m, _least = _solve(prob, rows, stats)
        if m is None:
            shortfalls = _diagnose(prob, reqs, rows, stats)
            stats.seconds = time.perf_counter() - t_start
            if round_no > 1:
                notes.append("the rows were tightened to absorb rounding to the increment and the density bands; "
                             "with the tightened rows there is no solution: try a finer increment")
            return PlacementResult(plan, model, baseline, False, (), None, (), (), bal_before, None, props_before,
                                   None, tuple(shortfalls), stats, tuple(notes))
        if round_no == 1:
            first = tuple(float(v) for v in m)
        g = rows.values(m)
        slack = plan.targets.ballast_allowance
        binding = {req.key for req, gj in zip(rows.reqs, g, strict=True)
                   if gj <= 1e-6 * max(1.0, prob.m0) + (slack if req.unit == "kg" else 0.0)}
        allocations, blocks, comps = _size_all(prob, m)
        assessments = _assess(prob, reqs, blocks, binding)
        missed = [a for a in assessments if not a.passed]
        over = [(al, al.sizing.masses()[2] - al.candidate.capacity) for al in allocations
                if al.sizing is not None and al.candidate.capacity is not None
                and al.sizing.masses()[2] > al.candidate.capacity * (1 + 1e-12)]
        if not missed and not over:
            break
        for a in missed:
            tighten[a.requirement.key] = tighten.get(a.requirement.key, 0.0) - a.margin_worst + \
                (1e-6 if a.requirement.unit == "kg" else 1e-7)
        for al, excess in over:
            i = plan.candidates.index(al.candidate)
            ln = prob.lines[i]
            prob.lines[i] = replace(ln, cap=max(ln.cap - excess / ln.k_hi - 1e-6, 0.0))
    else:
        notes.append(f"after {MAX_ROUNDS} rounds some rows still miss after rounding; see the margins")
    if tighten:
        notes.append("rows tightened to absorb rounding and the density bands: " +
                     ", ".join(f"{k.split(':', 1)[1]} by {v:.3g}" for k, v in tighten.items()))
    ballasted = baseline.with_components(list(baseline.components) + comps, name=f"{model.name} (ballasted)")
    props_after = ballasted.mass_properties()
    bal_after = static_balance(props_after, model.vehicle) if model.vehicle else None
    rules = tuple(check_rules(ballasted))
    stats.seconds = time.perf_counter() - t_start
    return PlacementResult(plan, model, baseline, True, tuple(allocations), ballasted, tuple(assessments), rules,
                           bal_before, bal_after, props_before, props_after, (), stats, tuple(notes), first)
