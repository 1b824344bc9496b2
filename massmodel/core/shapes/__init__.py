"""Primitive solids (numpy only): the shape classes and the registry of kinds.

Holds `Shape` and its families (`base`), the flat-faced solids (`flat`), the round solids (`round`) and
`SHAPE_KINDS` / `shape_from_params`, the table the model-file loader builds shapes from. May import numpy and
`massmodel.core` only (layer 0): CAD solids and trimesh meshes of these shapes are made in
`massmodel.cad.primitives`.
"""

from __future__ import annotations

from typing import Any

from massmodel.core.shapes.base import (
    MAX_LENGTH_M,
    MIN_LENGTH_M,
    PrismShape,
    RevolvedShape,
    Shape,
    ShapeError,
)
from massmodel.core.shapes.flat import Box, Extrusion, Wedge
from massmodel.core.shapes.round import (
    Cone,
    Cylinder,
    Ellipsoid,
    Frustum,
    Hemisphere,
    PointMass,
    Sphere,
    SphericalShell,
    Torus,
    Tube,
)

__all__ = [
    "MAX_LENGTH_M",
    "MIN_LENGTH_M",
    "SHAPE_KINDS",
    "Box",
    "Cone",
    "Cylinder",
    "Ellipsoid",
    "Extrusion",
    "Frustum",
    "Hemisphere",
    "PointMass",
    "PrismShape",
    "RevolvedShape",
    "Shape",
    "ShapeError",
    "Sphere",
    "SphericalShell",
    "Torus",
    "Tube",
    "Wedge",
    "shape_from_params",
]

_ALL_KINDS: tuple[type[Shape], ...] = (
    *(Box, Cylinder, Tube, Sphere, SphericalShell, Hemisphere, Cone),
    *(Frustum, Wedge, Extrusion, Torus, Ellipsoid, PointMass),
)
SHAPE_KINDS: dict[str, type[Shape]] = {cls.kind: cls for cls in _ALL_KINDS}


def shape_from_params(kind: str, **fields: Any) -> Shape:
    """Build a primitive from its kind and SI field values.

    Parameters
    ----------
    kind : str
        One of `SHAPE_KINDS`.
    **fields
        Constructor fields in SI units (m; a vertex list as (x, y) pairs in m).

    Returns
    -------
    Shape

    Raises
    ------
    ShapeError
        Unknown kind (field "kind"), a missing or unknown field (named), or an invalid value.
    """
    cls = SHAPE_KINDS.get(kind)
    if cls is None:
        raise ShapeError(
            f"kind {kind!r} is not a known shape (known: {', '.join(sorted(SHAPE_KINDS))})", "kind"
        )
    for name in fields:
        if name not in cls.FIELDS:
            known = ", ".join(cls.FIELDS) or "none"
            raise ShapeError(f"{name} is not a field of a {kind} (fields: {known})", name, kind)
    for name in cls.FIELDS:
        if name not in fields:
            raise ShapeError(f"{name} is missing (a {kind} needs {', '.join(cls.FIELDS)})", name, kind)
    return cls(**fields)
