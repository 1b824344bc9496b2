"""Comparing the model's mass properties with a CAD estimate, item by item, against tolerances.

Both sides are in the model frame, about each item's CG, tensor convention (``I_xy = −∫xy dm``); the estimate is
brought there by :func:`massmodel.compare.estimate.normalise`. Differences are *estimate − model*.

Checks, each a ratio of the difference to its tolerance (an item passes when every ratio is ≤ 1):

``mass``
    ``|Δm| / m_model`` against :attr:`Tolerances.mass`.
``cg``
    ``|Δc|`` (the total CG offset) against :attr:`Tolerances.cg`.
``term``
    The largest ``|ΔI_ij|`` of the six tensor terms divided by the largest principal moment of the model
    (of the estimate when the model has no inertia) against :attr:`Tolerances.term`.
``moment``
    The largest ``|Δλ_k| / λ_k`` of the principal moments, matched in ascending order (a moment smaller than
    1e-9 of the largest is compared relative to the largest), against :attr:`Tolerances.moment`.
``axis``
    The largest angle between matching principal axes (sign-free) against :attr:`Tolerances.axis`. An axis is
    compared only where its moment is separated from the other two by at least :attr:`Tolerances.degenerate`
    times the largest moment on both sides: within a near-degenerate pair the axes are not defined (any
    direction in their plane is principal), and the pair is compared through its plane, i.e. by the third axis.

Default tolerances are common practice for a mass model against a CAD estimate, no source: 1 % mass, 5 mm CG,
2 % of the largest moment for each tensor term, 2 % for each principal moment, 3° between principal axes, which are
not compared for moments within 5 % of the largest moment of each other.

The whole job (comparison plus diagnosis of a failure) is :func:`massmodel.compare.crosscheck.check_estimate`.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import NotFoundError, UsageError
from massmodel.core.massprops import MassProperties, principal_axes
from massmodel.core.model import Model, in_group

from .estimate import WHOLE, Estimate, EstimateError

__all__ = [
    "CHECKS",
    "Comparison",
    "ItemComparison",
    "Tolerances",
    "basic_ratios",
    "compare",
    "compare_item",
    "model_side",
]

FloatArray = npt.NDArray[np.float64]

#: The checks of every item, in report order.
CHECKS = ("mass", "cg", "term", "moment", "axis")
_TERM_NAMES = (("xx", "xy", "xz"), ("xy", "yy", "yz"), ("xz", "yz", "zz"))
_UPPER = ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2))


@dataclass(frozen=True, slots=True)
class Tolerances:
    """Pass/fail limits of a comparison (SI; fractions are plain numbers, 0.01 = 1 %).

    Parameters
    ----------
    mass : float
        Relative mass difference.
    cg : float
        Total CG offset, m.
    term : float
        Each tensor term's difference relative to the largest principal moment.
    moment : float
        Each principal moment's relative difference.
    axis : float
        Angle between matching principal axes, rad.
    degenerate : float
        Moments closer than this fraction of the largest moment count as a degenerate pair (axes not compared).
    """

    mass: float = 0.01
    cg: float = 0.005
    term: float = 0.02
    moment: float = 0.02
    axis: float = math.radians(3.0)
    degenerate: float = 0.05

    def __post_init__(self) -> None:
        for name in ("mass", "cg", "term", "moment", "axis", "degenerate"):
            value = getattr(self, name)
            if not (isinstance(value, (int, float)) and value > 0.0 and math.isfinite(value)):
                raise UsageError(f"tolerance '{name}' must be a positive number, got {value!r}")

    def to_dict(self) -> dict[str, float]:
        return {"mass_fraction": self.mass, "cg_offset_m": self.cg, "term_fraction_of_largest_moment": self.term,
                "principal_moment_fraction": self.moment, "principal_axis_angle_deg": math.degrees(self.axis),
                "degenerate_gap_fraction_of_largest_moment": self.degenerate}


def _largest(model_inertia: FloatArray, estimate_inertia: FloatArray) -> FloatArray:
    """Largest principal moment of the model side, else of the estimate side, per item (N,)."""
    lm = np.linalg.eigvalsh(model_inertia)[..., -1]
    le = np.linalg.eigvalsh(estimate_inertia)[..., -1]
    return np.where(lm > 0.0, lm, le)


def basic_ratios(
    model: tuple[FloatArray, FloatArray, FloatArray],
    estimate: tuple[FloatArray, FloatArray, FloatArray],
    tol: Tolerances,
    scale: FloatArray | None = None,
) -> FloatArray:
    """Ratios to tolerance of the mass, CG and tensor-term checks for N items at once, (N, 3).

    The cheap part of :func:`compare_item` (no principal axes), used to screen many readings of an estimate.
    ``scale`` (N,) is the largest principal moment per item when already known (see :func:`compare_item`).
    """
    mm, mc, mi = model
    em, ec, ei = estimate
    if scale is None:
        scale = _largest(mi, ei)
    mass = np.abs(em - mm) / mm / tol.mass
    cg = np.linalg.norm(ec - mc, axis=-1) / tol.cg
    diff = np.abs(ei - mi).reshape(-1, 9).max(axis=-1)
    term = np.divide(diff, scale, out=np.zeros_like(diff), where=scale > 0.0) / tol.term
    return np.stack([mass, cg, term], axis=-1)


@dataclass(frozen=True, slots=True, eq=False)
class ItemComparison:
    """One item compared: the model's part and the estimate's, both in the model frame about their CGs.

    Attributes (all SI, differences estimate − model)
    --------------------------------------------------
    group : str
        ``"*"`` (the whole) or a group/part path.
    model, estimate : MassProperties
    largest_moment : float
        kg·m², the scale of the tensor-term check.
    mass_diff : float
        kg. ``mass_rel`` the same relative to the model's mass.
    cg_diff : (3,) float
        m, model axes; ``cg_offset`` its length.
    term_diff : (3, 3) float
        kg·m²; ``term_rel`` relative to ``largest_moment``.
    moments_model, moments_estimate : (3,) float
        Principal moments, kg·m², ascending; ``moment_rel`` relative differences.
    axes_model, axes_estimate : (3, 3) float
        Principal axes (rows, model axes), matched in order and signed alike.
    axis_angle : (3,) float
        rad between matching axes; NaN where not defined (near-degenerate moments).
    axis_note : str
        Which axes were not compared, and why.
    ratios : dict
        Check name → difference / tolerance.
    """

    group: str
    model: MassProperties
    estimate: MassProperties
    largest_moment: float
    mass_diff: float
    mass_rel: float
    cg_diff: FloatArray
    cg_offset: float
    term_diff: FloatArray
    term_rel: FloatArray
    moments_model: FloatArray
    moments_estimate: FloatArray
    moment_rel: FloatArray
    axes_model: FloatArray
    axes_estimate: FloatArray
    axis_angle: FloatArray
    axis_note: str
    ratios: dict[str, float] = field(default_factory=dict)

    @property
    def passed(self) -> bool:
        return all(r <= 1.0 for r in self.ratios.values())

    @property
    def worst(self) -> tuple[str, float]:
        """The check with the largest ratio and that ratio."""
        name = max(CHECKS, key=lambda c: self.ratios[c])
        return name, self.ratios[name]

    @property
    def worst_term(self) -> str:
        """Name of the tensor term with the largest difference (``xx`` .. ``yz``)."""
        i, j = max(_UPPER, key=lambda ij: abs(self.term_diff[ij]))
        return _TERM_NAMES[i][j]

    def describe_worst(self) -> str:
        """Words for the worst check, e.g. ``"term xz 5.4 % of the largest moment"``."""
        name, _ = self.worst
        if name == "mass":
            return f"mass {100 * self.mass_rel:+.3g} %"
        if name == "cg":
            return f"CG offset {1e3 * self.cg_offset:.3g} mm"
        if name == "term":
            i, j = max(_UPPER, key=lambda ij: abs(self.term_diff[ij]))
            return f"term {_TERM_NAMES[i][j]} {100 * self.term_rel[i, j]:+.3g} % of the largest moment"
        if name == "moment":
            k = int(np.argmax(np.abs(self.moment_rel)))
            return f"principal moment {k + 1} {100 * self.moment_rel[k]:+.3g} %"
        k = int(np.nanargmax(self.axis_angle))
        return f"principal axis {k + 1} turned {math.degrees(self.axis_angle[k]):.3g} deg"


def _axis_angles(lm: FloatArray, le: FloatArray, am: FloatArray, ae: FloatArray, scale: float,
                 tol: Tolerances) -> tuple[FloatArray, str]:
    angles = np.full(3, np.nan)
    if scale <= 0.0:
        return angles, "no inertia: principal axes not compared"
    gap = tol.degenerate * scale
    defined = []
    for i in range(3):
        others = [j for j in range(3) if j != i]
        if all(abs(lm[i] - lm[j]) >= gap and abs(le[i] - le[j]) >= gap for j in others):
            defined.append(i)
            cross = float(np.linalg.norm(np.cross(am[i], ae[i])))
            angles[i] = math.atan2(cross, abs(float(np.dot(am[i], ae[i]))))
    pct = f"{100 * tol.degenerate:g} %"
    if len(defined) == 3:
        return angles, ""
    if not defined:
        return angles, f"all principal moments within {pct} of the largest of each other: no axes compared"
    if len(defined) == 1:
        k = defined[0]
        pair = " and ".join(str(j + 1) for j in range(3) if j != k)
        return angles, (f"axes {pair}: moments within {pct} of the largest (a near-degenerate pair: compared as "
                        f"their plane, through axis {k + 1})")
    return angles, ""  # two defined axes imply the third (cannot happen with a symmetric gap test)


def compare_item(group: str, model: MassProperties, estimate: MassProperties, tol: Tolerances) -> ItemComparison:
    """Compare one item (both sides in the model frame about their CGs, tensor convention).

    References
    ----------
    Principal moments and axes: eigen-decomposition of the symmetric tensor (Goldstein et al. 2002, §5.4);
    angle between unit vectors ``atan2(|a × b|, |a · b|)`` (sign-free, accurate near 0).
    """
    scale = float(_largest(model.inertia[None], estimate.inertia[None])[0])
    mass_diff = estimate.mass - model.mass
    cg_diff = estimate.center - model.center
    term_diff = estimate.inertia - model.inertia
    term_rel = term_diff / scale if scale > 0.0 else np.zeros((3, 3))
    lm, am = principal_axes(model.inertia)
    le, ae = principal_axes(estimate.inertia)
    ae = ae * np.where(np.einsum("ij,ij->i", am, ae) < 0.0, -1.0, 1.0)[:, None]
    denom = np.where(lm > 1e-9 * scale, lm, scale)
    moment_rel = np.divide(le - lm, denom, out=np.zeros(3), where=denom > 0.0)
    angles, note = _axis_angles(lm, le, am, ae, scale, tol)
    defined = angles[~np.isnan(angles)]
    ratios = {
        "mass": abs(mass_diff) / model.mass / tol.mass,
        "cg": float(np.linalg.norm(cg_diff)) / tol.cg,
        "term": float(np.max(np.abs(term_rel))) / tol.term,
        "moment": float(np.max(np.abs(moment_rel))) / tol.moment,
        "axis": float(defined.max()) / tol.axis if defined.size else 0.0,
    }
    return ItemComparison(group, model, estimate, scale, mass_diff, mass_diff / model.mass, cg_diff,
                          float(np.linalg.norm(cg_diff)), term_diff, term_rel, lm, le, moment_rel, am, ae, angles,
                          note, ratios)


@dataclass(frozen=True, slots=True, eq=False)
class Comparison:
    """All items compared: the whole first, then the others worst first."""

    items: tuple[ItemComparison, ...]
    tolerances: Tolerances

    @property
    def passed(self) -> bool:
        return all(it.passed for it in self.items)

    @property
    def score(self) -> float:
        """The largest ratio of any check of any item (≤ 1 passes)."""
        return max(it.worst[1] for it in self.items)

    @property
    def worst_item(self) -> ItemComparison:
        return max(self.items, key=lambda it: it.worst[1])

    def item(self, group: str) -> ItemComparison:
        for it in self.items:
            if it.group == group:
                return it
        raise NotFoundError(f"no item '{group}' in the comparison")

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready (SI, units in the keys)."""
        return {"passed": self.passed, "score": self.score,
                "worst": {"group": self.worst_item.group, "check": self.worst_item.worst[0],
                          "detail": self.worst_item.describe_worst()},
                "items": [_item_dict(it) for it in self.items]}


def compare(groups: Sequence[str], model: Sequence[MassProperties], estimate: Sequence[MassProperties],
            tol: Tolerances) -> Comparison:
    """Compare item by item; the whole (``"*"``) first, then the others worst first."""
    items = [compare_item(g, m, e, tol) for g, m, e in zip(groups, model, estimate, strict=True)]
    items.sort(key=lambda it: (it.group != WHOLE, -it.worst[1]))
    return Comparison(tuple(items), tol)


def model_side(model: Model, estimate: Estimate, selection: str = "") -> list[MassProperties]:
    """The model's mass properties for every estimate item (the whole is ``selection``: '' = the whole model).

    Raises
    ------
    ValueError
        For a selection that names nothing in the model.
    EstimateError
        For an item naming no group or part of the model, or one outside the selection.
    """
    known = sorted(set(model.groups()) | {c.path for c in model.components})
    if selection and not model.select([selection]):
        close = difflib.get_close_matches(selection, known, n=3)
        hint = f"; did you mean {' or '.join(repr(c) for c in close)}?" if close else ""
        raise UsageError(f"--group: no group or part '{selection}' in model '{model.name}'{hint}")
    out = []
    for it in estimate.items:
        path = selection if it.group == WHOLE else it.group
        if it.group != WHOLE:
            if not model.select([path]):
                close = difflib.get_close_matches(path, known, n=3)
                hint = f"; did you mean {' or '.join(repr(c) for c in close)}?" if close else ""
                raise EstimateError(estimate.source, it.label, "group",
                                    f"no group or part '{path}' in model '{model.name}'{hint}")
            if selection and not in_group(path, selection):
                raise EstimateError(estimate.source, it.label, "group",
                                    f"'{path}' lies outside the compared group '{selection}'")
        out.append(model.mass_properties([path]))
    return out


def _props(mp: MassProperties) -> dict[str, Any]:
    return {"mass_kg": mp.mass, "cg_m": mp.center.tolist(), "inertia_cg_kg_m2": mp.inertia.tolist()}


def _item_dict(it: ItemComparison) -> dict[str, Any]:
    tol = it.ratios
    return {
        "group": it.group,
        "passed": it.passed,
        "worst": {"check": it.worst[0], "ratio_to_tolerance": it.worst[1], "detail": it.describe_worst()},
        "model": _props(it.model),
        "estimate": _props(it.estimate),
        "mass_diff_kg": it.mass_diff,
        "mass_diff_fraction": it.mass_rel,
        "cg_offset_m": it.cg_diff.tolist(),
        "cg_offset_total_m": it.cg_offset,
        "inertia_diff_kg_m2": it.term_diff.tolist(),
        "largest_moment_kg_m2": it.largest_moment,
        "inertia_diff_fraction_of_largest_moment": it.term_rel.tolist(),
        "principal_moments_model_kg_m2": it.moments_model.tolist(),
        "principal_moments_estimate_kg_m2": it.moments_estimate.tolist(),
        "principal_moment_diff_fraction": it.moment_rel.tolist(),
        "principal_axes_model": it.axes_model.tolist(),
        "principal_axes_estimate": it.axes_estimate.tolist(),
        "principal_axis_angle_deg": [None if math.isnan(a) else math.degrees(a) for a in it.axis_angle],
        "principal_axis_note": it.axis_note,
        "ratio_to_tolerance": {name: tol[name] for name in CHECKS},
    }
