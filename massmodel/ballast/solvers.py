"""Solvers behind the ballast placement: rows of the form g(m) = g0 + a·m + b·m² ≥ 0 (kg), HiGHS linear and
mixed-integer programs, sequential LP for quadratic rows, SLSQP for nonlinear objectives, and the exact extreme of a
linear-fractional function over a box (the worst mix of density bands).

References
----------
.. [1] Huangfu, Q. and Hall, J. A. J. (2018). Parallelizing the dual revised simplex method. Math. Prog. Comp. 10
   (HiGHS, behind ``scipy.optimize.linprog`` and ``milp``).
.. [2] Kraft, D. (1988). A software package for sequential quadratic programming. DFVLR-FB 88-28 (SLSQP, behind
   ``scipy.optimize.minimize``).
.. [3] Dinkelbach, W. (1967). On nonlinear fractional programming. Management Science 13(7), 492–498.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

__all__ = ["TOL_KG", "SolverStats", "Rows", "solve_lp", "sequential_lp", "minimise_nonlinear", "minimise_on_off",
           "extreme_ratio"]

FloatArray = npt.NDArray[np.float64]
TOL_KG = 1e-7  # a row is met when g >= -TOL_KG (kg)


@dataclass(slots=True)
class SolverStats:
    """Work done by the solvers."""

    seconds: float = 0.0
    lp_solves: int = 0
    lp_iterations: int = 0
    nonlinear_evaluations: int = 0
    rounds: int = 0
    methods: list[str] = field(default_factory=list)

    @property
    def evaluations(self) -> int:
        """LP/MILP solves + simplex iterations + nonlinear function and gradient evaluations."""
        return self.lp_solves + self.lp_iterations + self.nonlinear_evaluations


@dataclass
class Rows:
    """Constraint rows ``g0 + a @ m + b @ m² ≥ 0`` (kg), one per requirement and density scenario."""

    g0: FloatArray
    a: FloatArray
    b: FloatArray
    reqs: list[Any]  # the Requirement of each row (massmodel.ballast.placement)
    labels: list[str]

    def values(self, m: FloatArray) -> FloatArray:
        return self.g0 + self.a @ m + self.b @ (m * m)

    def linear_at(self, m_bar: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Tangent rows at m̄: g ≈ g0' + A' m."""
        return self.g0 - self.b @ (m_bar * m_bar), self.a + 2.0 * self.b * m_bar

    @property
    def linear(self) -> bool:
        return not np.any(self.b)

    def can_fail(self, ub: FloatArray, total: float) -> npt.NDArray[np.bool_]:
        """Rows that some m with 0 <= m <= ub and Σm <= total could break (a safe screen: for the others a lower
        bound over that set is positive). With mᵢ ≤ ubᵢ, bᵢmᵢ² ≥ min(0, bᵢ) ubᵢ mᵢ, so g ≥ g0 + Σ ãᵢ mᵢ with
        ãᵢ = aᵢ + min(0, bᵢ) ubᵢ, whose least over the set is g0 + total·min(0, minᵢ ãᵢ)."""
        if not len(self.g0):
            return np.zeros(0, dtype=bool)
        slope = self.a + np.minimum(self.b, 0.0) * ub
        lower = self.g0 + max(total, 0.0) * np.minimum(slope.min(axis=1), 0.0)
        return lower <= TOL_KG

    def subset(self, keep: npt.NDArray[np.bool_]) -> Rows:
        """The rows where ``keep`` is true."""
        idx = np.flatnonzero(keep)
        return Rows(self.g0[idx], self.a[idx], self.b[idx], [self.reqs[j] for j in idx], [self.labels[j] for j in idx])


def solve_lp(c: FloatArray, g0: FloatArray, a: FloatArray, ub: FloatArray, floor: FloatArray,
        total: tuple[float, float] | None, stats: SolverStats) -> FloatArray | None:
    """min c·m s.t. g0 + a m ≥ 0, m ∈ {0} ∪ [floor, ub], optionally lo ≤ Σm ≤ hi. None when infeasible."""
    from scipy.optimize import Bounds, LinearConstraint, linprog, milp

    n = len(c)
    semi = floor > 1e-12
    stats.lp_solves += 1
    if not np.any(semi):
        a_ub = [-a] if len(g0) else []
        b_ub = [g0] if len(g0) else []
        if total is not None:
            a_ub += [np.ones((1, n)), -np.ones((1, n))]
            b_ub += [np.array([total[1]]), np.array([-total[0]])]
        res = linprog(c, A_ub=np.vstack(a_ub) if a_ub else None, b_ub=np.concatenate(b_ub) if b_ub else None,
                      bounds=list(zip(np.zeros(n), ub, strict=True)), method="highs")
        stats.lp_iterations += int(getattr(res, "nit", 0) or 0)
        if "linprog (HiGHS)" not in stats.methods:
            stats.methods.append("linprog (HiGHS)")
        return np.clip(res.x, 0.0, ub) if res.status == 0 else None
    # m and an on/off y per slot: floor·y <= m <= ub·y
    cc = np.concatenate([c, np.zeros(n)])
    rows, lbs, ubs = [], [], []
    if len(g0):
        rows.append(np.hstack([a, np.zeros_like(a)]))
        lbs.append(-g0)
        ubs.append(np.full(len(g0), np.inf))
    rows += [np.hstack([np.eye(n), -np.diag(ub)]), np.hstack([np.eye(n), -np.diag(np.where(semi, floor, 0.0))])]
    lbs += [np.full(n, -np.inf), np.zeros(n)]
    ubs += [np.zeros(n), np.full(n, np.inf)]
    if total is not None:
        rows.append(np.hstack([np.ones((1, n)), np.zeros((1, n))]))
        lbs.append(np.array([total[0]]))
        ubs.append(np.array([total[1]]))
    cons = LinearConstraint(np.vstack(rows), np.concatenate(lbs), np.concatenate(ubs))
    integrality = np.concatenate([np.zeros(n), np.ones(n)])
    res = milp(cc, constraints=cons, integrality=integrality,
               bounds=Bounds(np.zeros(2 * n), np.concatenate([ub, np.ones(n)])))
    stats.lp_iterations += int(getattr(res, "mip_node_count", 0) or 0)
    if "milp (HiGHS)" not in stats.methods:
        stats.methods.append("milp (HiGHS)")
    if res.status != 0 or res.x is None:
        return None
    return np.where(res.x[n:] > 0.5, np.clip(res.x[:n], 0.0, ub), 0.0)


def sequential_lp(c: FloatArray, rows: Rows, ub: FloatArray, floor: FloatArray, total: tuple[float, float] | None,
         stats: SolverStats, start: FloatArray | None = None) -> FloatArray | None:
    """Sequential LP on the tangent rows until the solution settles (one LP when every row is linear)."""
    m_bar = np.zeros_like(ub) if start is None else start
    m = None
    for _ in range(30):
        g0, a = rows.linear_at(m_bar)
        m = solve_lp(c, g0, a, ub, floor, total, stats)
        if m is None:
            return None
        if rows.linear or np.max(np.abs(m - m_bar)) < 1e-10 * max(1.0, float(np.max(ub))):
            break
        m_bar = m
    if m is not None and np.any(rows.values(m) < -TOL_KG):
        # a row curving the other way (b < 0) is met only approximately by its tangent: nudge inwards once
        g0, a = rows.linear_at(m)
        g_true = rows.values(m)
        m2 = solve_lp(c, g0 + np.minimum(g_true - (g0 + a @ m), 0.0) - TOL_KG, a, ub, floor, total, stats)
        if m2 is not None:
            m = m2
    return m


def minimise_nonlinear(fun: Any, rows: Rows, lo: FloatArray, hi: FloatArray, total: tuple[float, float],
               starts: Sequence[FloatArray], stats: SolverStats, jac: Any = None) -> FloatArray | None:
    """SLSQP from several starts; the best point meeting every row (within TOL_KG) and the total range."""
    from scipy.optimize import minimize

    if "SLSQP" not in stats.methods:
        stats.methods.append("SLSQP")
    n = len(lo)
    active = rows.subset(rows.can_fail(hi, total[1]))
    cons = [{"type": "ineq", "fun": active.values, "jac": lambda m: active.a + 2.0 * active.b * m},
            {"type": "ineq", "fun": lambda m: np.array([np.sum(m) - total[0], total[1] - np.sum(m)]),
             "jac": lambda m: np.vstack([np.ones(n), -np.ones(n)])}]
    best, best_f = None, math.inf
    for x0 in starts:
        res = minimize(fun, np.clip(x0, lo, hi), method="SLSQP", jac=jac, bounds=list(zip(lo, hi, strict=True)),
                       constraints=cons, options={"maxiter": 300, "ftol": 1e-14})
        stats.nonlinear_evaluations += int(res.nfev) + int(getattr(res, "njev", 0) or 0)
        m = np.clip(res.x, lo, hi)
        tot = float(np.sum(m))
        ok = (np.all(rows.values(m) >= -TOL_KG) and total[0] - 1e-9 <= tot <= total[1] + 1e-9)
        if ok and fun(m) < best_f:
            best, best_f = m, float(fun(m))
    return best


def minimise_on_off(fun: Any, rows: Rows, ub: FloatArray, floor: FloatArray, total: tuple[float, float],
              starts: Sequence[FloatArray], stats: SolverStats, jac: Any = None) -> FloatArray | None:
    """Minimise ``fun`` over the rows with each slot either empty or between its thinnest block and its capacity.

    The continuous relaxation (every slot from 0 to its capacity) is solved first; its support and the supports of
    the starting points give the on/off patterns, each then solved with its slots held between floor and
    capacity. The best point found is returned.
    """
    relaxed = minimise_nonlinear(fun, rows, np.zeros_like(ub), ub, total, starts, stats, jac)
    patterns = {tuple(bool(v) for v in (s > 0.0)) for s in starts}
    if relaxed is not None:
        patterns.add(tuple(bool(v) for v in (relaxed > np.maximum(0.5 * floor, 1e-9))))
    best, best_f = None, math.inf
    for pat in sorted(patterns):
        on = np.array(pat, dtype=bool)
        lo, hi = np.where(on, floor, 0.0), np.where(on, ub, 0.0)
        init = [np.clip(x, lo, hi) for x in ([relaxed] if relaxed is not None else []) + list(starts)]
        found = minimise_nonlinear(fun, rows, lo, hi, total, init, stats, jac)
        if found is not None and fun(found) < best_f:
            best, best_f = found, float(fun(found))
    return best


def extreme_ratio(num0: float, den0: float, w: FloatArray, v: FloatArray, lo: FloatArray, hi: FloatArray,
                   maximize: bool) -> tuple[float, FloatArray]:
    """Extreme of (num0 + Σ κ w v) / (den0 + Σ κ w) over κᵢ ∈ [loᵢ, hiᵢ] (w ≥ 0): Dinkelbach's iteration.

    The ratio is linear-fractional in κ, so the extreme lies at a vertex: at the optimum λ each κᵢ sits at the end
    that moves the ratio the wanted way (vᵢ > λ pulls it up).
    """
    kappa = np.ones_like(w)
    lam = (num0 + np.sum(kappa * w * v)) / (den0 + np.sum(kappa * w))
    for _ in range(2 * len(w) + 4):
        up = v > lam
        new = np.where(up, hi, lo) if maximize else np.where(up, lo, hi)
        lam_new = (num0 + np.sum(new * w * v)) / (den0 + np.sum(new * w))
        if np.array_equal(new, kappa) and abs(lam_new - lam) <= 1e-15 * max(1.0, abs(lam)):
            break
        kappa, lam = new, lam_new
    return float(lam), kappa
