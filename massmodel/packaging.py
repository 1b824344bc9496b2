"""Packaging checks with OpenCascade: does a block fit its slot with the required clearance?

A block fits when the volume of (block − envelope) is zero to a sliver tolerance AND its distance to the envelope's
shell is at least the clearance. Vertex-inside tests give wrong answers for this (a block can have all its vertices
inside a concave envelope and still cross it), so both tests work on the B-rep solids.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["FitResult", "fit_in_slot", "SLIVER_MM3"]

SLIVER_MM3 = 1e-3  # volumes below 0.001 mm³ are round-off of the boolean, not material


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
        The closest pair of points, m, model frame.
    """

    fits: bool
    outside_volume: float
    clearance: float
    required_clearance: float
    closest_block: np.ndarray
    closest_envelope: np.ndarray

    @property
    def reason(self) -> str:
        """A sentence saying why the block does not fit ('' when it fits)."""
        if self.outside_volume > 0.0:
            return f"{self.outside_volume * 1e9:.1f} mm^3 of the block lies outside the slot"
        if self.clearance < self.required_clearance:
            return (f"clearance {self.clearance * 1e3:.3f} mm to the slot walls is less than the required "
                    f"{self.required_clearance * 1e3:.3f} mm")
        return ""


def fit_in_slot(block: Any, envelope: Any, clearance: float) -> FitResult:
    """Check that a solid lies inside an envelope with a clearance.

    Parameters
    ----------
    block, envelope : cadquery Shape
        Solids in mm, same frame (see :mod:`massmodel.cad`).
    clearance : float
        Required gap to the envelope walls, m.

    Returns
    -------
    FitResult
    """
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Cut
    from OCP.BRepExtrema import BRepExtrema_DistShapeShape
    from OCP.BRepGProp import BRepGProp
    from OCP.GProp import GProp_GProps
    from OCP.TopAbs import TopAbs_SHELL
    from OCP.TopExp import TopExp_Explorer

    cut = BRepAlgoAPI_Cut(block.wrapped, envelope.wrapped)
    props = GProp_GProps()
    BRepGProp.VolumeProperties_s(cut.Shape(), props)
    outside_mm3 = max(float(props.Mass()), 0.0)
    outside = 0.0 if outside_mm3 < SLIVER_MM3 else outside_mm3 * 1e-9

    best = (np.inf, np.zeros(3), np.zeros(3))
    explorer = TopExp_Explorer(envelope.wrapped, TopAbs_SHELL)
    while explorer.More():
        dist = BRepExtrema_DistShapeShape(block.wrapped, explorer.Current())
        if dist.IsDone() and dist.NbSolution() > 0 and dist.Value() < best[0]:
            p1, p2 = dist.PointOnShape1(1), dist.PointOnShape2(1)
            best = (dist.Value(), np.array([p1.X(), p1.Y(), p1.Z()]) * 1e-3, np.array([p2.X(), p2.Y(), p2.Z()]) * 1e-3)
        explorer.Next()
    gap = float(best[0]) * 1e-3
    fits = outside == 0.0 and gap >= clearance - 1e-9
    return FitResult(fits, outside, gap, clearance, best[1], best[2])
