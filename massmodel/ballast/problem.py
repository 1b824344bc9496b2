"""The continuous model behind a ballast placement over several load cases.

Each candidate slot ``i`` takes a nominal ballast mass ``mᵢ`` (kg); its block grows along its fill axis, so its CG
moves with its mass, modelled as ``cᵢ(m) = pᵢ + qᵢ m`` (exact at the full block and at half of it). The same
``m`` is carried in every load case; each case has its own baseline (mass ``M₀``, first moment ``Q₀``, inertia
about the origin ``J₀``) and vehicle axes, and its own rules. Every rule of every case is a row
``g(m) = g₀ + Σ aᵢ mᵢ + bᵢ mᵢ² ≥ 0`` in kg (see :mod:`massmodel.ballast.placement` for the rows), built here.

References
----------
.. [1] Jazar, Vehicle Dynamics: Theory and Application, Springer (2008), ch. 2 (static axle loads by moments about
   the axle lines; section from memory).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.massprops import MassProperties, parallel_axis_shift
from massmodel.core.model import Model, RuleCheck, in_group
from massmodel.vehicle.balance import ballast_height_window

from .plan import Candidate, Plan
from .requirements import Requirement
from .sizing import BlockSizing, SizingError, cross_sizes, size_block, stack_for_units
from .solvers import Rows

__all__ = ["CaseSetup", "Problem", "build_problem"]

FloatArray = npt.NDArray[np.float64]


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


@dataclass(eq=False)
class CaseSetup:
    """One load case of the placement: its model, the baseline without the replaced blocks, its vehicle axes.

    ``lines`` is the candidates' list, shared by every case (the ballast is the same metal in every case)."""

    name: str
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

    def front_fraction(self, m: FloatArray) -> float:
        """Front-axle share of the total mass, nominal densities (the lever rule)."""
        pa, pb = self.lever()
        f0 = float(self.fwd @ self.q0 - self.x_rear * self.m0) / self.wheelbase
        return (f0 + float(np.sum(m * (pa + pb * m)))) / (self.m0 + float(np.sum(m)))

    def yaw(self, m: FloatArray) -> float:
        """Yaw inertia about the vehicle's vertical axis through the CG, kg·m² (nominal densities)."""
        mass, first, inertia = self.aggregate(m)
        c = first / mass
        about_cg = inertia - parallel_axis_shift(mass, c)
        return float(self.up @ about_cg @ self.up)


@dataclass(eq=False)
class Problem:
    """Every load case of a placement over the same candidate lines."""

    plan: Plan
    lines: list[_Line]
    cases: dict[str, CaseSetup]
    notes: list[str]

    @property
    def n(self) -> int:
        return len(self.lines)

    @property
    def first(self) -> CaseSetup:
        return next(iter(self.cases.values()))

    def row(self, req: Requirement, kappa: FloatArray) -> tuple[float, FloatArray, FloatArray]:
        return self.cases[req.case].row(req, kappa)

    def rows(self, reqs: Sequence[Requirement], cuts: Mapping[str, Sequence[FloatArray]] | None = None) -> Rows:
        """One row per requirement and density scenario (see :meth:`CaseSetup.scenarios`), plus one per worst
        density mix in ``cuts`` (requirement key → density factors per candidate)."""
        g0, a, b, rr, labels = [], [], [], [], []
        for req in reqs:
            extra = [("worst density mix", k) for k in (cuts or {}).get(req.key, ())]
            for label, kappa in self.cases[req.case].scenarios(req) + extra:
                r0, ra, rb = self.row(req, kappa)
                g0.append(r0)
                a.append(ra)
                b.append(rb)
                rr.append(req)
                labels.append(label)
        n = self.n
        return Rows(np.array(g0), np.array(a).reshape(-1, n), np.array(b).reshape(-1, n), rr, labels)

    def cg_height(self, m: FloatArray) -> float:
        """Mean over the cases of the CG height above the ground, m (nominal densities)."""
        return float(np.mean([c.cg_height(m) for c in self.cases.values()]))

    def cg_height_gradient(self, m: FloatArray) -> FloatArray:
        return np.mean([c.cg_height_gradient(m) for c in self.cases.values()], axis=0)

    def yaw(self, m: FloatArray) -> float:
        """Mean over the cases of the yaw inertia about the CG, kg·m² (nominal densities)."""
        return float(np.mean([c.yaw(m) for c in self.cases.values()]))

    def fraction_error(self, m: FloatArray, target: float) -> float:
        """Mean over the cases of (front fraction − target)², nominal densities."""
        return float(np.mean([(c.front_fraction(m) - target) ** 2 for c in self.cases.values()]))

    @property
    def moving_height(self) -> bool:
        """Whether a block's CG height moves with its mass in some case (the CG-height objective is then not linear)."""
        return any(bool(np.any(np.abs(c._up_q) > 0.0)) for c in self.cases.values())


def _height_window(cand: Candidate, cases: Mapping[str, Model]) -> tuple[float, float, list[str]]:
    """The CG heights above the ground (m) a block in ``cand`` may have under the ballast-height rules."""
    lo, hi, names = -np.inf, np.inf, []
    for case, model in cases.items():
        for r in model.rules:
            if r.check is not RuleCheck.BALLAST_HEIGHT or not any(in_group(cand.path, g) for g in r.groups):
                continue
            a, b = ballast_height_window(model, r)
            lo, hi = max(lo, a), min(hi, b)
            names.append(f"{r.name} ({case})")
    return lo, hi, names


def build_problem(cases: Mapping[str, Model], plan: Plan) -> Problem:
    """The candidates' lines and each case's baseline (the candidates' replaced blocks taken out)."""
    lines = [_line(c) for c in plan.candidates]
    notes: list[str] = []
    setups: dict[str, CaseSetup] = {}
    removed = [p for c in plan.candidates for p in c.replace]
    for name, model in cases.items():
        if model.vehicle is None:
            raise UsageError(f"{model.source or model.name}: ballast placement needs a [vehicle] section")
        baseline = model.with_components([c for c in model.components if c.path not in removed])
        mp = baseline.mass_properties()
        v = model.vehicle
        j0 = np.asarray(mp.inertia + parallel_axis_shift(mp.mass, mp.center))
        setups[name] = CaseSetup(name, model, baseline, plan, lines, mp.mass, mp.mass * mp.center, j0, v.forward,
                                 v.left, v.up, v.rear_axle_station, v.wheelbase, v.ground_level)
    first = next(iter(setups.values()))
    for i, ln in enumerate(lines):  # ballast-height rules: the masses whose block CG lies in the allowed window
        lo, hi, names = _height_window(ln.cand, cases)
        if not names:
            continue
        h_p = float(first.up @ ln.p) - first.ground
        h_q = float(first.up @ ln.q)
        if h_q == 0.0:
            ok = lo - 1e-12 <= h_p <= hi + 1e-12
            m_lo, m_hi = (0.0, ln.cap) if ok else (np.inf, 0.0)
        else:
            a, b = sorted(((lo - h_p) / h_q, (hi - h_p) / h_q))
            m_lo, m_hi = max(a, 0.0), min(b, ln.cap)
        new_floor, new_cap = max(ln.floor, m_lo), min(ln.cap, m_hi)
        if new_floor > new_cap:
            notes.append(f"slot {ln.cand.name}: no block here can sit where {', '.join(names)} require, so it is "
                         "not used")
            new_floor, new_cap = ln.floor, 0.0
        elif (new_floor, new_cap) != (ln.floor, ln.cap):
            notes.append(f"slot {ln.cand.name}: {', '.join(names)} allow {new_floor:.3f} .. {new_cap:.3f} kg here")
        lines[i] = replace(ln, floor=new_floor, cap=new_cap)
    return Problem(plan, lines, setups, notes)
