"""B-rep solids of components and slots through cadquery/OpenCascade (millimetres: the CAD edge).

Model coordinates are metres; CAD solids are millimetres (OpenCascade and STEP readers assume mm unless told),
so every solid built here is in mm in the model frame. Import this module only where CAD is needed: it imports
cadquery.
"""

from __future__ import annotations

from typing import Any

import cadquery as cq
import numpy as np
from OCP.BRepBuilderAPI import BRepBuilderAPI_Transform
from OCP.BRepGProp import BRepGProp
from OCP.gp import gp_Ax2, gp_Dir, gp_Pnt, gp_Trsf
from OCP.GProp import GProp_GProps

from .frames import Pose
from .model import Component, Slot

__all__ = ["MM_PER_M", "place_solid", "component_solid", "slot_solid", "solid_volume_properties"]

MM_PER_M = 1000.0


def place_solid(solid: Any, pose: Pose) -> Any:
    """A copy of ``solid`` (mm) moved by ``pose`` (translation in m); handles mirrored poses (det = −1).

    OpenCascade's ``gp_Trsf`` holds a rotation or a mirror, not both in one matrix, so an improper pose is applied
    as a mirror across the plane with normal ``n`` followed by the proper rotation ``R (E − 2nnᵀ)``.
    """
    r = pose.linear
    shape = solid.wrapped
    if np.linalg.det(r) < 0.0:
        n = _reflection_normal(r)
        mirror = gp_Trsf()
        mirror.SetMirror(gp_Ax2(gp_Pnt(0.0, 0.0, 0.0), gp_Dir(*(float(v) for v in n))))
        shape = _apply_trsf(shape, mirror)
        r = r @ (np.eye(3) - 2.0 * np.outer(n, n))
    trsf = gp_Trsf()
    values = np.hstack([r, (pose.translation * MM_PER_M)[:, None]]).ravel()
    trsf.SetValues(*(float(v) for v in values))
    return cq.Shape.cast(_apply_trsf(shape, trsf))


def _reflection_normal(r: np.ndarray) -> np.ndarray:
    """Unit normal ``n`` such that ``r (E − 2nnᵀ)`` is a proper rotation: an eigenvector of ``r`` for eigenvalue −1
    (an improper orthogonal 3×3 matrix always has one)."""
    w, v = np.linalg.eig(r)
    k = int(np.argmin(np.abs(w + 1.0)))
    n = np.real(v[:, k])
    return n / np.linalg.norm(n)


def _apply_trsf(shape: Any, trsf: gp_Trsf) -> Any:
    return BRepBuilderAPI_Transform(shape, trsf, True).Shape()


def component_solid(component: Component) -> Any:
    """The component's solid (shape minus its cut-outs) in mm, placed in the model frame.

    A point mass has no solid: ``ValueError``.
    """
    if component.shape.volume() <= 0.0:
        raise ValueError(f"component '{component.path}' is a point mass and has no solid")
    solid = component.shape.to_solid()
    for cut in component.cutouts:
        solid = solid.cut(place_solid(cut.shape.to_solid(), cut.pose))
    return place_solid(solid, component.pose)


def slot_solid(slot: Slot) -> Any:
    """The slot's envelope solid in mm, model frame."""
    return place_solid(slot.shape.to_solid(), slot.pose)


def solid_volume_properties(solid: Any, density: float = 1.0) -> tuple[float, np.ndarray, np.ndarray]:
    """OpenCascade's volume properties of a solid in mm, returned in SI.

    Parameters
    ----------
    solid : cadquery Shape
        In mm.
    density : float
        kg/m³.

    Returns
    -------
    mass : float
        kg (volume × density).
    center : (3,) float
        m.
    inertia : (3, 3) float
        kg·m² about the centre of mass, axes parallel to the global axes (OpenCascade's MatrixOfInertia: the tensor
        convention, off-diagonals −∫xy dm).
    """
    props = GProp_GProps()
    BRepGProp.VolumeProperties_s(solid.wrapped, props)
    vol_m3 = props.Mass() * 1e-9
    c = props.CentreOfMass()
    m = props.MatrixOfInertia()
    tensor = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15 * density
    return vol_m3 * density, np.array([c.X(), c.Y(), c.Z()]) * 1e-3, tensor
