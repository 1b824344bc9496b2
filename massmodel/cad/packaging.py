"""Packaging checks with OpenCascade: interference between parts, fit in a slot, clearance to neighbours.

Fit in a slot
    A block fits when the volume of (block − envelope) is zero to a sliver tolerance AND its distance to the
    envelope's shell is at least the clearance. Vertex-inside tests give wrong answers for this (a block can have all
    its vertices inside a concave envelope and still cross it), so both tests work on the B-rep solids.
Interference
    Candidate pairs come from the parts' bounding boxes (an R-tree query, :func:`candidate_pairs`); each candidate's
    exact common volume is an OpenCascade boolean. Parts that only touch (a tyre on its rim) have a common volume of
    zero, or a few round-off mm³ at most: overlaps below the sliver threshold are not reported. Pairs the model file
    declares as meant to touch or overlap (``[[allowed_contact]]``) are listed apart and never fail.
Clearance
    For each selected part (by default every part that names a slot) the distance to every neighbour within reach
    (bounding boxes grown by the reach), with the closest pair of points (OpenCascade's ``BRepExtrema``). The distance
    is zero for parts that touch or overlap (it is not a penetration depth).

Solids are in mm (:mod:`massmodel.cad.solids`); every result is SI. The solid-on-solid measures (overlap, distance,
fit, candidate pairs) are in :mod:`massmodel.cad.contact`. Parts without a solid (point masses, open display
meshes) are left out and listed.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from massmodel.core.errors import NotFoundError, UsageError
from massmodel.core.model import Component, Model, in_group

from .contact import SLIVER_MM3, FitResult, candidate_pairs, distance_between, fit_in_slot, overlap_volume

__all__ = [
    "FitResult",
    "fit_in_slot",
    "SLIVER_MM3",
    "DEFAULT_SLIVER",
    "DEFAULT_REACH",
    "Interference",
    "NeighbourGap",
    "Clearance",
    "SlotFit",
    "PackagingReport",
    "candidate_pairs",
    "overlap_volume",
    "distance_between",
    "check_packaging",
    "placed_solids",
]

DEFAULT_SLIVER = 1e-9  # m³ (1 mm³): smaller overlaps of two parts count as touching, not interference
DEFAULT_REACH = 0.05  # m: neighbours farther than this from a selected part are not measured
ProgressFn = Callable[[str, int, int], None]


# --------------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Interference:
    """Two parts sharing volume.

    Attributes
    ----------
    first, second : str
        Part paths.
    volume : float
        Common volume, m³.
    center : (3,) float
        Centroid of the common volume, m, model frame.
    allowed_by : str
        Origin of the ``[[allowed_contact]]`` entry covering the pair ('' when none: then it fails).
    """

    first: str
    second: str
    volume: float
    center: np.ndarray
    allowed_by: str = ""


@dataclass(frozen=True, slots=True)
class NeighbourGap:
    """Distance from a part to one neighbour, with the closest points (m, model frame)."""

    neighbour: str
    distance: float
    point_part: np.ndarray
    point_neighbour: np.ndarray


@dataclass(frozen=True, slots=True)
class Clearance:
    """Clearance of one selected part to its neighbours.

    Attributes
    ----------
    path : str
    required : float
        Required gap, m.
    required_from : str
        Where the requirement comes from ("slot 'x'", "--gap", "none").
    nearest : tuple of NeighbourGap
        Neighbours within reach, nearest first (empty when none lies within reach).
    reach : float
        m.
    """

    path: str
    required: float
    required_from: str
    nearest: tuple[NeighbourGap, ...]
    reach: float

    @property
    def distance(self) -> float:
        """Gap to the nearest neighbour, m (inf when none lies within reach)."""
        return self.nearest[0].distance if self.nearest else float("inf")

    @property
    def passed(self) -> bool:
        return self.distance >= self.required - 1e-9


@dataclass(frozen=True, slots=True)
class SlotFit:
    """A part that names a slot and how it fits there.

    Attributes
    ----------
    path, slot : str
    fit : FitResult or None
        Against the slot's envelope (None when the part has no solid).
    obstacle : NeighbourGap or None
        The nearest other part reaching into the slot's region (its bounding box grown by the clearance), when
        one does: a pipe running through the slot leaves less room than the envelope alone.
    """

    path: str
    slot: str
    fit: FitResult | None
    obstacle: NeighbourGap | None = None

    @property
    def passed(self) -> bool:
        if self.fit is None or not self.fit.fits:
            return False
        return self.obstacle is None or self.obstacle.distance >= self.fit.required_clearance - 1e-9

    @property
    def reason(self) -> str:
        if self.fit is None:
            return "the part has no solid to fit"
        if self.fit.reason:
            return self.fit.reason
        if not self.passed and self.obstacle is not None:
            how = "touches" if self.obstacle.distance < 1e-9 else "comes within"
            return (f"{how} '{self.obstacle.neighbour}' inside the slot (gap {self.obstacle.distance * 1e3:.3f} mm, "
                    f"required {self.fit.required_clearance * 1e3:.3f} mm)")
        return ""


@dataclass(frozen=True)
class PackagingReport:
    """Everything a packaging check found.

    Attributes
    ----------
    interferences : tuple of Interference
        Overlaps above the sliver threshold that no allowed contact covers, largest first (each one fails).
    allowed : tuple of Interference
        Overlaps above the sliver threshold between pairs declared as meant to touch or overlap.
    fits : tuple of SlotFit
    clearances : tuple of Clearance
    left_out : tuple of (str, str)
        Parts without a solid and why.
    solids : int
        Parts checked.
    total_pairs, candidate_pairs : int
        All pairs of checked parts; pairs whose bounding boxes overlap (the booleans computed).
    sliver : float
        m³.
    seconds : dict
        Time of each stage, s.
    """

    model: str
    source: str
    interferences: tuple[Interference, ...]
    allowed: tuple[Interference, ...]
    fits: tuple[SlotFit, ...]
    clearances: tuple[Clearance, ...]
    left_out: tuple[tuple[str, str], ...]
    solids: int
    total_pairs: int
    candidate_pairs: int
    sliver: float
    seconds: dict[str, float] = field(default_factory=dict)

    @property
    def passed(self) -> bool:
        """No interference, every part in its slot, every clearance met."""
        return (not self.interferences and all(f.passed for f in self.fits)
                and all(c.passed for c in self.clearances))

    @property
    def failures(self) -> int:
        return (len(self.interferences) + sum(not f.passed for f in self.fits)
                + sum(not c.passed for c in self.clearances))


# --------------------------------------------------------------------------------------------------
# the check
# --------------------------------------------------------------------------------------------------


def _allowed_by(model: Model, a: str, b: str) -> str:
    for rule in model.allowed_contacts:
        if rule.covers(a, b):
            return rule.origin or f"allowed contact {rule.first} / {rule.second}"
    return ""


def check_packaging(
    model: Model,
    *,
    near: Iterable[str] | None = None,
    gap: float | None = None,
    reach: float = DEFAULT_REACH,
    sliver: float = DEFAULT_SLIVER,
    neighbours: int = 3,
    progress: ProgressFn | None = None,
) -> PackagingReport:
    """Interference, fit in slot and clearance checks of a model.

    Parameters
    ----------
    model : Model
    near : iterable of str, optional
        Parts or groups whose clearance to their neighbours is measured (default: every part that names a slot).
    gap : float, optional
        Required clearance of those parts to any neighbour, m (default: the part's slot clearance; none for a part
        without a slot).
    reach : float
        Neighbours farther than this are not measured, m.
    sliver : float
        Common volumes below this are touching, not interference, m³.
    neighbours : int
        How many of the nearest neighbours to keep per part.
    progress : callable, optional
        ``progress(stage, done, total)``.

    Returns
    -------
    PackagingReport

    Raises
    ------
    KeyError
        A ``near`` path matches no part.
    """
    from .solids import slot_solid, solid_bounds

    if not (sliver >= 0.0 and reach >= 0.0 and (gap is None or gap >= 0.0)):
        raise UsageError("sliver, reach and gap must not be negative")
    tick = progress or (lambda stage, done, total: None)
    chosen = _near_selection(model, near)
    seconds: dict[str, float] = {}
    t0 = time.perf_counter()
    comps, solids, left_out = placed_solids(model, tick)
    boxes = np.array([solid_bounds(s) for s in solids]) if solids else np.zeros((0, 2, 3))
    seconds["solids"] = time.perf_counter() - t0

    t1 = time.perf_counter()
    pairs = candidate_pairs(boxes)
    found: list[Interference] = []
    allowed: list[Interference] = []
    for k, (i, j) in enumerate(pairs):
        try:
            vol, center = overlap_volume(solids[i], solids[j])
        except RuntimeError as exc:
            raise RuntimeError(f"interference of '{comps[i].path}' and '{comps[j].path}': {exc}") from None
        if vol > sliver:
            by = _allowed_by(model, comps[i].path, comps[j].path)
            (allowed if by else found).append(Interference(comps[i].path, comps[j].path, vol, center, by))
        tick("interference", k + 1, len(pairs))
    found.sort(key=lambda x: -x.volume)
    allowed.sort(key=lambda x: -x.volume)
    seconds["interference"] = time.perf_counter() - t1

    t2 = time.perf_counter()
    index = {c.path: k for k, c in enumerate(comps)}
    fits = []
    slotted = [c for c in model.components if c.slot is not None]
    envelopes: dict[str, tuple[Any, np.ndarray]] = {}
    for k, c in enumerate(slotted):
        slot = model.slot(c.slot)  # type: ignore[arg-type]
        if slot.name not in envelopes:
            env = slot_solid(slot)
            envelopes[slot.name] = (env, solid_bounds(env))
        env, env_box = envelopes[slot.name]
        if c.path not in index:
            fits.append(SlotFit(c.path, slot.name, None))
            continue
        i = index[c.path]
        fit = fit_in_slot(solids[i], env, slot.clearance)
        fits.append(SlotFit(c.path, slot.name, fit, _obstacle(model, c, comps, solids, boxes, i, env_box,
                                                              slot.clearance)))
        tick("slots", k + 1, len(slotted))
    seconds["slots"] = time.perf_counter() - t2

    t3 = time.perf_counter()
    clearances = []
    for k, c in enumerate(chosen):
        if gap is not None:
            required, origin = gap, "--gap"
        elif c.slot is not None:
            required, origin = model.slot(c.slot).clearance, f"slot '{c.slot}'"
        else:
            required, origin = 0.0, "none"
        clearances.append(_clearance(model, c, comps, solids, boxes, index, required, origin, reach, neighbours))
        tick("clearance", k + 1, len(chosen))
    seconds["clearance"] = time.perf_counter() - t3
    seconds["total"] = time.perf_counter() - t0
    n = len(comps)
    return PackagingReport(
        model=model.name, source=model.source, interferences=tuple(found), allowed=tuple(allowed), fits=tuple(fits),
        clearances=tuple(clearances), left_out=left_out, solids=n, total_pairs=n * (n - 1) // 2,
        candidate_pairs=len(pairs), sliver=sliver, seconds=seconds,
    )


def placed_solids(
    model: Model, progress: ProgressFn | None = None
) -> tuple[list[Component], list[Any], tuple[tuple[str, str], ...]]:
    """The solids of every part that has one, placed in the model frame (mm).

    Returns
    -------
    components : list of Component
        Parts with a solid, in model order.
    solids : list of OCP.TopoDS.TopoDS_Shape
        Their solids, mm, placed by a location (the geometry is shared, not copied, between copies of a part).
    left_out : tuple of (str, str)
        Parts without a solid and why.
    """
    from OCP.TopLoc import TopLoc_Location

    from .solids import component_local_solid, has_solid, pose_trsf

    comps = [c for c in model.components if has_solid(c)]
    left_out = tuple((c.path, "point mass: no solid" if c.shape.kind == "point" else "open mesh: display only")
                     for c in model.components if not has_solid(c))
    solids: list[Any] = []
    cache: dict[Any, Any] = {}
    for k, c in enumerate(comps):
        local, location = component_local_solid(c, cache)
        solids.append(local.Moved(TopLoc_Location(pose_trsf(location))))
        if progress is not None:
            progress("solids", k + 1, len(comps))
    return comps, solids, left_out


def _obstacle(
    model: Model,
    c: Component,
    comps: Sequence[Component],
    solids: Sequence[Any],
    boxes: np.ndarray,
    i: int,
    env_box: np.ndarray,
    clearance: float,
) -> NeighbourGap | None:
    """The nearest other part whose bounding box reaches into the slot's box grown by the clearance."""
    lo = env_box[0] - clearance
    hi = env_box[1] + clearance
    inside = np.flatnonzero(np.all(boxes[:, 0] < hi, axis=1) & np.all(boxes[:, 1] > lo, axis=1))
    best: NeighbourGap | None = None
    for j in inside.tolist():
        if j == i or _allowed_by(model, c.path, comps[j].path):
            continue
        d, pa, pb = distance_between(solids[i], solids[j])
        if best is None or d < best.distance:
            best = NeighbourGap(comps[j].path, d, pa, pb)
    return best


def _near_selection(model: Model, near: Iterable[str] | None) -> list[Component]:
    if near is None:
        return [c for c in model.components if c.slot is not None]
    chosen = [s.strip("/") for s in near]
    for s in chosen:
        if not any(in_group(c.path, s) for c in model.components):
            import difflib

            close = difflib.get_close_matches(s, [c.path for c in model.components] + model.groups(), n=3)
            raise NotFoundError(f"--near: no part or group '{s}' in model '{model.name}'"
                           + (f"; did you mean {', '.join(close)}?" if close else ""))
    return model.select(chosen)


def _clearance(
    model: Model,
    c: Component,
    comps: Sequence[Component],
    solids: Sequence[Any],
    boxes: np.ndarray,
    index: dict[str, int],
    required: float,
    origin: str,
    reach: float,
    keep: int,
) -> Clearance:
    if c.path not in index:
        return Clearance(c.path, required, origin, (), reach)
    i = index[c.path]
    lo = boxes[i, 0] - reach
    hi = boxes[i, 1] + reach
    near = np.flatnonzero(np.all(boxes[:, 0] <= hi, axis=1) & np.all(boxes[:, 1] >= lo, axis=1))
    gaps = []
    for j in near.tolist():
        if j == i or _allowed_by(model, c.path, comps[j].path):
            continue
        d, pa, pb = distance_between(solids[i], solids[j])
        if d <= reach:
            gaps.append(NeighbourGap(comps[j].path, d, pa, pb))
    gaps.sort(key=lambda g: g.distance)
    return Clearance(c.path, required, origin, tuple(gaps[:keep]), reach)
