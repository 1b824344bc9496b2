"""Diagnosis of a failed comparison: which convention mix-up of the estimate explains the difference.

The usual causes of a CAD estimate that disagrees with the mass model are not physics but conventions. When the
comparison *as declared* fails, :func:`diagnose` re-reads the numbers of the estimate, as written, under other
readings of one declared convention (a *reinterpretation*), then of two:

* ``products`` — the products of inertia in the other sign convention (``P_xy = +∫xy dm`` ↔ ``I_xy = −∫xy dm``);
* ``units`` — another inertia unit (factors 10³, 10⁶, 10⁹ between kg·m², kg·mm², g·mm², ... and the imperial
  lb·in², lb·ft², lb·in·s², slug·ft²), another mass unit, another length unit of the items' CG coordinates (the
  origin and reference point declared in the header keep their size), or a whole other unit system for the items
  (lb, in, lb·in²); every factor comes from :mod:`massmodel.core.units` (exact definitions: 1 in = 0.0254 m, 1 lb = 0.45359237 kg,
  g_n = 9.80665 m/s²);
* ``reference`` — the tensors about the estimate origin rather than about each CG, and the reverse;
* ``axes`` — any other signed permutation of the axes: the 23 other rotations, then the 24 mirror images (a mirror
  image counts as less simple: both frames are meant to be right-handed).

A reading *explains* the difference only when the comparison read that way passes every tolerance **and** its
worst ratio is at most 1/:data:`IMPROVEMENT` of the raw one. Explanations are ranked: agreement to round-off
(relative residual ≤ :data:`ROUNDOFF`) before agreement within tolerance, then the simplest (fewest, then least
unusual reinterpretations), then the smallest residual. Pairs are tried only when no single reinterpretation
explains. A real disagreement (a part heavier than modelled) changes nothing a convention can undo, so no reading
passes and none is reported as an explanation; the closest reading is then shown for information only.

Nothing here changes the estimate: the diagnosis returns the suspected cause and the corrected comparison, to be
shown beside the comparison as declared.

References
----------
.. [1] The two product-of-inertia conventions in use (I_xy = −∫xy dm and P_xy = +∫xy dm): common practice, no
   source.
.. [2] A. Thompson and B. N. Taylor, NIST Special Publication 811 (2008), Appendix B (exact unit factors).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.massprops import InertiaError, MassProperties
from massmodel.core.units import parse_unit

from .check import Comparison, Tolerances, basic_ratios, compare
from .estimate import (
    AxisMap,
    Conventions,
    Estimate,
    Products,
    ReferenceKind,
    normalise_arrays,
    signed_permutations,
)

__all__ = ["IMPROVEMENT", "ROUNDOFF", "Diagnosis", "Explanation", "Reinterpretation", "candidates", "diagnose"]

FloatArray = npt.NDArray[np.float64]

#: A reading explains a difference only if its worst ratio to tolerance is at most the raw one divided by this.
IMPROVEMENT = 3.0
#: Relative residual (mass, CG, tensor terms each to its own scale) counted as agreement to round-off.
ROUNDOFF = 1e-6

_INERTIA_UNITS = ("kg*m^2", "kg*mm^2", "g*mm^2", "kg*cm^2", "g*cm^2", "t*mm^2", "lb*in^2", "lb*ft^2",
                  "lb*in*s^2", "slug*ft^2")
_MASS_UNITS = ("kg", "g", "t", "lb", "slug", "lb*s^2/in")
_LENGTH_UNITS = ("mm", "m", "cm", "in", "ft")
_SYSTEMS = (("kg", "m", "kg*m^2"), ("kg", "mm", "kg*mm^2"), ("g", "mm", "g*mm^2"), ("g", "cm", "g*cm^2"),
            ("lb", "in", "lb*in^2"), ("lb", "ft", "lb*ft^2"), ("lb*s^2/in", "in", "lb*in*s^2"),
            ("slug", "ft", "slug*ft^2"))
#: Fields of Conventions each kind of reinterpretation changes (two that share a field are never paired).
_FIELDS = {"products": {"products"}, "mass_unit": {"mass_unit"}, "length_unit": {"length_unit"},
           "inertia_unit": {"inertia_unit"}, "unit_system": {"mass_unit", "length_unit", "inertia_unit"},
           "reference": {"reference"}, "axes": {"axes"}}


@dataclass(frozen=True, slots=True, eq=False)
class Reinterpretation:
    """One other reading of one declared convention.

    Parameters
    ----------
    kind : str
        ``products``, ``mass_unit``, ``length_unit``, ``inertia_unit``, ``unit_system``, ``reference`` or ``axes``.
    changes : dict
        Fields of :class:`massmodel.compare.estimate.Conventions` and their other values.
    label : str
        What it says about the file, in words.
    cost : int
        Simplicity rank: 1 for the usual mix-ups, 2 for a mirror image of the axes.
    """

    kind: str
    changes: dict[str, Any]
    label: str
    cost: int = 1

    def apply(self, conv: Conventions) -> Conventions:
        return conv.with_(**self.changes)

    def to_dict(self) -> dict[str, Any]:
        def plain(v: Any) -> Any:
            if isinstance(v, AxisMap):
                return v.text
            if isinstance(v, np.ndarray):
                return v.tolist()
            return getattr(v, "value", v)

        values = {k: plain(v) for k, v in self.changes.items()}
        return {"kind": self.kind, "reading": values, "says": self.label, "cost": self.cost}


def _factor(text: str) -> float:
    return parse_unit(text).value


def _same(a: float, b: float) -> bool:
    return abs(a - b) <= 1e-12 * max(abs(a), abs(b))


def _describe_turn(q: FloatArray) -> str:
    """Words for a signed-permutation matrix ``q`` acting in model axes (a rotation or a mirror image)."""

    def axis_words(v: FloatArray) -> str:
        v = v / np.linalg.norm(v)
        k = int(np.argmax(np.abs(v)))
        if np.isclose(abs(v[k]), 1.0):
            return f"the model {'+-'[int(v[k] < 0)]}{'xyz'[k]} axis"
        return "(" + ", ".join(f"{x:+.3f}" for x in v) + ")"

    if np.linalg.det(q) > 0.0:
        angle = math.degrees(math.acos(max(-1.0, min(1.0, (np.trace(q) - 1.0) / 2.0))))
        if angle > 179.0:
            sym = (q + np.eye(3)) / 2.0
            axis = sym[:, int(np.argmax(np.linalg.norm(sym, axis=0)))]
        else:
            axis = np.array([q[2, 1] - q[1, 2], q[0, 2] - q[2, 0], q[1, 0] - q[0, 1]])
        return f"the estimate turned {angle:.0f} deg about {axis_words(axis)}"
    if np.allclose(q, q.T) and np.isclose(np.trace(q), 1.0):
        w, v = np.linalg.eigh(q)
        normal = v[:, int(np.argmin(w))]
        k = int(np.argmax(np.abs(normal)))
        if np.isclose(abs(normal[k]), 1.0):
            return f"a mirror image across the model {'xyz'[k]} = 0 plane"
        return f"a mirror image across the plane normal to {axis_words(normal)}"
    if np.allclose(q, -np.eye(3)):
        return "a mirror image through the origin (all three axes reversed)"
    return "a mirror image combined with a turn"


def candidates(estimate: Estimate) -> list[Reinterpretation]:
    """Every single reinterpretation of the conventions the estimate leaves open to doubt (no duplicates)."""
    conv = estimate.conventions
    doubt = estimate.doubtful
    out: list[Reinterpretation] = []
    if "products" in doubt:
        other = Products.POSITIVE if conv.products is Products.NEGATIVE else Products.NEGATIVE
        out.append(Reinterpretation(
            "products", {"products": other},
            f"the products of inertia are in the {other.value} convention ({other.formula}), "
            f"not the declared {conv.products.value} one ({conv.products.formula})"))
    if "units" in doubt:
        declared = {"mass_unit": conv.mass_unit, "length_unit": conv.length_unit, "inertia_unit": conv.inertia_unit}
        words = {"mass_unit": "masses", "length_unit": "CG coordinates", "inertia_unit": "inertia numbers"}

        def header_kept(length_unit: str) -> dict[str, Any]:
            # The declarations (origin, reference point) were written with the declared unit: keep their size.
            k = conv.length_factor / _factor(length_unit)
            kept: dict[str, Any] = {"origin": conv.origin * k}
            if conv.reference_point is not None:
                kept["reference_point"] = conv.reference_point * k
            return kept

        for kind, options in (("inertia_unit", _INERTIA_UNITS), ("mass_unit", _MASS_UNITS),
                              ("length_unit", _LENGTH_UNITS)):
            seen = [_factor(declared[kind])]
            for unit in options:
                f = _factor(unit)
                if any(_same(f, s) for s in seen):
                    continue
                seen.append(f)
                ratio = f / seen[0]
                changes: dict[str, Any] = {kind: unit}
                if kind == "length_unit":
                    changes.update(header_kept(unit))
                out.append(Reinterpretation(
                    kind, changes,
                    f"the {words[kind]} are in {unit}, not the declared {declared[kind]} (factor {ratio:.7g})"))
        base = tuple(_factor(declared[k]) for k in ("mass_unit", "length_unit", "inertia_unit"))
        seen_sys: list[tuple[float, ...]] = []
        for system in _SYSTEMS:
            fs = tuple(_factor(u) for u in system)
            if sum(not _same(a, b) for a, b in zip(fs, base, strict=True)) < 2:
                continue  # the same as the declared units or as one single-unit reading
            if any(all(_same(a, b) for a, b in zip(fs, s, strict=True)) for s in seen_sys):
                continue
            seen_sys.append(fs)
            changes = dict(zip(("mass_unit", "length_unit", "inertia_unit"), system, strict=True))
            changes.update(header_kept(system[1]))
            out.append(Reinterpretation(
                "unit_system", changes,
                f"the items' numbers are in {', '.join(system)}, not the declared "
                f"{conv.mass_unit}, {conv.length_unit}, {conv.inertia_unit}"))
    if "reference" in doubt:
        for ref in (ReferenceKind.CG, ReferenceKind.ORIGIN):
            if ref is conv.reference:
                continue
            where = "each item's CG" if ref is ReferenceKind.CG else "the estimate origin"
            out.append(Reinterpretation(
                "reference", {"reference": ref, "reference_point": None},
                f"the tensors are about {where}, not {conv.reference_text.removeprefix('about ')} as declared"))
    if "axes" in doubt:
        a = conv.axes
        for b in signed_permutations():
            if b == a:
                continue
            q = b.matrix.T @ a.matrix
            cost = 1 if b.is_proper == a.is_proper else 2
            out.append(Reinterpretation(
                "axes", {"axes": b},
                f"the estimate axes are {b.text}, not the declared {a.text} ({_describe_turn(q)})", cost))
    return out


@dataclass(frozen=True, slots=True, eq=False)
class Explanation:
    """A reading of the estimate (one or two reinterpretations) and the comparison it gives."""

    steps: tuple[Reinterpretation, ...]
    conventions: Conventions
    comparison: Comparison
    relative_residual: float

    @property
    def roundoff(self) -> bool:
        """Agreement to round-off (relative residual ≤ ROUNDOFF)."""
        return self.relative_residual <= ROUNDOFF

    @property
    def cost(self) -> int:
        return sum(s.cost for s in self.steps)

    @property
    def label(self) -> str:
        return "; and ".join(s.label for s in self.steps)

    def to_dict(self) -> dict[str, Any]:
        return {"reinterpretations": [s.to_dict() for s in self.steps], "says": self.label,
                "conventions": self.conventions.to_dict(), "relative_residual": self.relative_residual,
                "roundoff": self.roundoff, "score": self.comparison.score, "passed": self.comparison.passed,
                "comparison": self.comparison.to_dict()}


@dataclass(frozen=True, slots=True, eq=False)
class Diagnosis:
    """What the diagnosis found.

    Attributes
    ----------
    raw_score : float
        Worst ratio to tolerance of the comparison as declared.
    explanation : Explanation or None
        The simplest reading that explains the difference; None when none does.
    alternatives : tuple of Explanation
        Other readings with as many reinterpretations that also explain it (best first).
    ambiguous : bool
        An alternative is as simple and of the same tier (round-off or tolerance) as the explanation.
    closest : Explanation or None
        When nothing explains: the reading with the smallest residual, if better than the raw one (information).
    tested : dict
        How many single and paired readings were tried and how many gave impossible tensors.
    """

    raw_score: float
    explanation: Explanation | None
    alternatives: tuple[Explanation, ...]
    ambiguous: bool
    closest: Explanation | None
    tested: dict[str, int]

    def to_dict(self) -> dict[str, Any]:
        return {
            "explained": self.explanation is not None,
            "raw_score": self.raw_score,
            "explanation": None if self.explanation is None else self.explanation.to_dict(),
            "ambiguous": self.ambiguous,
            "alternatives": [{"says": a.label, "score": a.comparison.score, "roundoff": a.roundoff,
                              "relative_residual": a.relative_residual} for a in self.alternatives],
            "closest": None if self.closest is None else {
                "says": self.closest.label, "score": self.closest.comparison.score,
                "still_failing": [f"{it.group}: {it.describe_worst()}" for it in self.closest.comparison.items
                                  if not it.passed]},
            "tested": dict(self.tested),
            "rule": (f"a reading explains the difference only if it passes every tolerance and its worst ratio is at "
                     f"most 1/{IMPROVEMENT:g} of the raw one; round-off = relative residual <= {ROUNDOFF:g}"),
        }


def _screen(eig: npt.NDArray[Any]) -> bool:
    """All tensors possible, from their ascending eigenvalues (N, 3): positive semi-definite and the triangle
    inequality, with the tolerances of :func:`massmodel.core.massprops.validate_inertia`."""
    scale = np.maximum(np.abs(eig).max(axis=-1), 1e-300)
    tol = 1e-9 * scale
    if np.any(eig[:, 0] < -tol):
        return False
    worst = (eig - (eig.sum(axis=-1, keepdims=True) - eig)).max(axis=-1)
    return bool(np.all(worst <= tol))


def _relative_residual(model: tuple[FloatArray, FloatArray, FloatArray],
                       estimate: tuple[FloatArray, FloatArray, FloatArray], origin: FloatArray) -> float:
    """max over items of |Δm|/m, |Δc|/ℓ and max|ΔI_ij|/λ_max, with ℓ = max(|c − o|, √(λ_max/m), 1 mm)."""
    mm, mc, mi = model
    em, ec, ei = estimate
    lam = np.maximum(np.linalg.eigvalsh(mi)[:, -1], np.linalg.eigvalsh(ei)[:, -1])
    length = np.maximum.reduce([np.linalg.norm(mc - origin, axis=-1), np.sqrt(lam / mm), np.full(len(mm), 1e-3)])
    rel_m = np.abs(em - mm) / mm
    rel_c = np.linalg.norm(ec - mc, axis=-1) / length
    diff = np.abs(ei - mi).reshape(-1, 9).max(axis=-1)
    rel_i = np.divide(diff, lam, out=np.where(diff > 0.0, np.inf, 0.0), where=lam > 0.0)
    return float(np.max(np.stack([rel_m, rel_c, rel_i])))


def diagnose(estimate: Estimate, model: Sequence[MassProperties], raw: Comparison,
             tol: Tolerances, pairs: bool = True) -> Diagnosis:
    """Look for the reading of the estimate that explains a failed comparison.

    Parameters
    ----------
    estimate : Estimate
        As read (numbers as written, declared conventions).
    model : sequence of MassProperties
        The model's side of every item, in the order of ``estimate.items``.
    raw : Comparison
        The comparison as declared.
    tol : Tolerances
        The same tolerances.
    pairs : bool
        Also try two reinterpretations together when no single one explains.

    Returns
    -------
    Diagnosis
        Never a changed estimate: the readings and their comparisons.
    """
    groups = estimate.groups
    raw_arrays = estimate.arrays()
    model_arrays = (np.array([m.mass for m in model]), np.array([m.center for m in model]),
                    np.array([m.inertia for m in model]))
    model_lam = np.linalg.eigvalsh(model_arrays[2])[:, -1]
    raw_score = raw.score
    limit = min(1.0, raw_score / IMPROVEMENT)
    singles = candidates(estimate)
    tested = {"single": 0, "pair": 0, "impossible": 0}
    screened: list[tuple[float, tuple[Reinterpretation, ...], Conventions]] = []

    def full(steps: tuple[Reinterpretation, ...], conv: Conventions) -> Explanation:
        m, c, t = normalise_arrays(*raw_arrays, conv)
        est = [MassProperties(float(m[k]), c[k], t[k]) for k in range(len(m))]
        comparison = compare(groups, model, est, tol)
        rel = _relative_residual(model_arrays, (m, c, t), conv.origin * conv.length_factor)
        return Explanation(steps, conv, comparison, rel)

    def run(batch: Sequence[tuple[Reinterpretation, ...]], kind: str) -> list[Explanation]:
        found = []
        for steps in batch:
            conv = estimate.conventions
            for s in steps:
                conv = s.apply(conv)
            tested[kind] += 1
            # Mass and CG first (cheap, and what no product sign or reference point can change).
            m = raw_arrays[0] * conv.mass_factor
            c = conv.origin * conv.length_factor + (raw_arrays[1] * conv.length_factor) @ conv.axes.matrix
            if np.all(m > 0.0):
                quick = max(float(np.max(np.abs(m - model_arrays[0]) / model_arrays[0])) / tol.mass,
                            float(np.max(np.linalg.norm(c - model_arrays[1], axis=-1))) / tol.cg)
                if quick > limit:
                    screened.append((quick, steps, conv))
                    continue
            m, c, t = normalise_arrays(*raw_arrays, conv)
            eig = np.linalg.eigvalsh(t)
            if not (np.all(m > 0.0) and _screen(eig)):
                tested["impossible"] += 1
                continue
            cheap = float(basic_ratios(model_arrays, (m, c, t), tol, scale=np.where(model_lam > 0.0, model_lam,
                                                                                     eig[:, -1])).max())
            screened.append((cheap, steps, conv))
            if cheap <= limit:
                exp = full(steps, conv)
                if exp.comparison.score <= limit:
                    found.append(exp)
        return found

    found = run([(s,) for s in singles], "single")
    if not found and pairs:
        batch = [(a, b) for a, b in itertools.combinations(singles, 2) if not (_FIELDS[a.kind] & _FIELDS[b.kind])]
        found = run(batch, "pair")
    found.sort(key=lambda e: (not e.roundoff, e.cost, e.comparison.score))
    best = found[0] if found else None
    closest = None
    if best is None and screened:
        screened.sort(key=lambda x: x[0])
        near = []
        for _, steps, conv in screened:
            try:
                near.append(full(steps, conv))
            except InertiaError:  # screened on mass and CG only, and its tensors are impossible
                tested["impossible"] += 1
            if len(near) == 5:
                break
        near.sort(key=lambda e: e.comparison.score)
        if near and near[0].comparison.score < raw_score:
            closest = near[0]
    alternatives = tuple(found[1:6])
    ambiguous = best is not None and any(a.roundoff == best.roundoff and a.cost == best.cost for a in alternatives)
    return Diagnosis(raw_score, best, alternatives, ambiguous, closest, tested)
