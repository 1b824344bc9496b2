"""Measures between two solids with OpenCascade: overlap volume, distance, fit of a block in an envelope, and the
candidate pairs of a set of bounding boxes.

The building blocks of the packaging check (:mod:`massmodel.cad.packaging`) and of ballast placement. Solids are in
mm (:mod:`massmodel.cad.solids`); every result is SI. OCP is imported inside the functions.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["FIT_TOL", "SLIVER_MM3", "FitResult", "candidate_pairs", "distance_between", "fit_in_slot", "overlap_volume"]

SLIVER_MM3 = 1e-3  # volumes below 0.001 mm³ are round-off of the boolean, not material
FIT_TOL = 1e-9  # m: a clearance this much short of the requirement still passes (round-off of the distance)


@dataclass(frozen=True, slots=True)
class FitResult:
    """Outcome of a fit-in-slot check.

    Attributes
    ----------
    fits : bool
        Inside the envelope and at least ``required_clearance`` from its walls.
    outside_volume : float
        Volume of the block outside the envelope, m³.
    clearance : float
        Smallest distance from the block to the envelope's shell, m (0 when they touch or cross).
    required_clearance : float
        m.
    closest_block, closest_envelope : (3,) float
        The closest pair of points, m, model frame (one point where they meet, when the clearance is 0).
    method : str
        How it was found: "OpenCascade" (the exact check on the B-rep solids) or "closed form" (a box block square
        to a box slot, :mod:`massmodel.cad.boxfit`).
    """

    fits: bool
    outside_volume: float
    clearance: float
    required_clearance: float
    closest_block: np.ndarray
    closest_envelope: np.ndarray
    method: str = "OpenCascade"

    @property
    def reason(self) -> str:
        """A sentence saying why the block does not fit ('' when it fits)."""
        if self.outside_volume > 0.0:
            return f"{self.outside_volume * 1e9:.1f} mm^3 of the block lies outside the slot"
        if self.clearance < self.required_clearance - FIT_TOL:
            return (f"clearance {self.clearance * 1e3:.3f} mm to the slot walls is less than the required "
                    f"{self.required_clearance * 1e3:.3f} mm")
        return ""


def fit_in_slot(block: Any, envelope: Any, clearance: float) -> FitResult:
    """Check that a solid lies inside an envelope with a clearance.

    Parameters
    ----------
    block, envelope : OCP.TopoDS.TopoDS_Shape
        Solids in mm, same frame (see :mod:`massmodel.cad.solids`).
    clearance : float
        Required gap to the envelope walls, m.

    Returns
    -------
    FitResult

    Raises
    ------
    RuntimeError
        The boolean failed (rather than reporting a false fit).
    """
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Cut
    from OCP.BRepExtrema import BRepExtrema_DistShapeShape
    from OCP.TopAbs import TopAbs_SHELL
    from OCP.TopExp import TopExp_Explorer

    from .solids import volume_props

    cut = BRepAlgoAPI_Cut(block, envelope)
    if not cut.IsDone():  # a failed boolean has an empty result: it must not read as "nothing outside"
        raise RuntimeError("the OpenCascade boolean (block minus slot envelope) failed")
    outside_mm3 = max(float(volume_props(cut.Shape()).Mass()), 0.0)
    outside = 0.0 if outside_mm3 < SLIVER_MM3 else outside_mm3 * 1e-9

    best = (np.inf, np.zeros(3), np.zeros(3))
    explorer = TopExp_Explorer(envelope, TopAbs_SHELL)
    while explorer.More():
        dist = BRepExtrema_DistShapeShape(block, explorer.Current())
        if dist.IsDone() and dist.NbSolution() > 0 and dist.Value() < best[0]:
            p1, p2 = dist.PointOnShape1(1), dist.PointOnShape2(1)
            best = (dist.Value(), np.array([p1.X(), p1.Y(), p1.Z()]) * 1e-3, np.array([p2.X(), p2.Y(), p2.Z()]) * 1e-3)
        explorer.Next()
    gap = float(best[0]) * 1e-3
    fits = outside == 0.0 and gap >= clearance - FIT_TOL
    return FitResult(fits, outside, gap, clearance, best[1], best[2])


def candidate_pairs(boxes: np.ndarray, pad: float = 0.0) -> list[tuple[int, int]]:
    """Index pairs (i < j) whose axis-aligned boxes, each grown by ``pad``, overlap or touch.

    Parameters
    ----------
    boxes : (N, 2, 3) float
        [min, max] corners, m.
    pad : float
        Growth of every box on every side, m.

    Returns
    -------
    list of (int, int)
        Sorted.

    Notes
    -----
    An R-tree (``rtree``, libspatialindex) is bulk-loaded with the boxes and queried once per box: about
    O(N log N + K) for K candidate pairs instead of the N(N − 1)/2 of all pairs.
    """
    from rtree import index

    b = np.asarray(boxes, dtype=float)
    if len(b) < 2:
        return []
    lo = b[:, 0] - pad
    hi = b[:, 1] + pad
    prop = index.Property()
    prop.dimension = 3
    tree = index.Index(((i, (*lo[i], *hi[i]), None) for i in range(len(b))), properties=prop)
    pairs = set()
    for i in range(len(b)):
        for j in tree.intersection((*lo[i], *hi[i])):
            if j > i:
                pairs.add((i, int(j)))
    return sorted(pairs)


def overlap_volume(a: Any, b: Any) -> tuple[float, np.ndarray]:
    """Exact common volume of two solids (mm) by an OpenCascade boolean.

    Returns
    -------
    volume : float
        m³ (0 for solids that touch or are apart).
    center : (3,) float
        Centroid of the common volume, m (zeros when it is empty).

    Raises
    ------
    RuntimeError
        The boolean failed (rather than reporting a false zero).
    """
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Common

    from .solids import volume_props

    op = BRepAlgoAPI_Common(a, b)
    if not op.IsDone():
        raise RuntimeError("the OpenCascade boolean (common) failed")
    props = volume_props(op.Shape())
    vol = max(float(props.Mass()), 0.0)
    if vol <= 0.0:
        return 0.0, np.zeros(3)
    c = props.CentreOfMass()
    return vol * 1e-9, np.array([c.X(), c.Y(), c.Z()]) * 1e-3


def distance_between(a: Any, b: Any) -> tuple[float, np.ndarray, np.ndarray]:
    """Smallest distance between two solids (mm) and the closest points (OpenCascade BRepExtrema).

    Returns
    -------
    distance : float
        m; 0 when they touch or overlap.
    point_a, point_b : (3,) float
        m.
    """
    from OCP.BRepExtrema import BRepExtrema_DistShapeShape

    dist = BRepExtrema_DistShapeShape(a, b)
    if not dist.IsDone() or dist.NbSolution() == 0:
        raise RuntimeError("the OpenCascade distance computation failed")
    p1, p2 = dist.PointOnShape1(1), dist.PointOnShape2(1)
    return (float(dist.Value()) * 1e-3, np.array([p1.X(), p1.Y(), p1.Z()]) * 1e-3,
            np.array([p2.X(), p2.Y(), p2.Z()]) * 1e-3)
