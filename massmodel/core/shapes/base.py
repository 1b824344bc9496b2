"""The primitive-solid interface, its validation helpers and the two families of meshable solids.

Every primitive is an immutable dataclass with sizes in metres, validated when built. All quantities are in
the shape's own frame, described in each class docstring. A shape gives its exact mass properties,
membership, surface samples and a numpy triangle mesh; CAD solids and trimesh meshes are built from it by
`massmodel.cad.primitives` (`to_solid(shape)`, `to_mesh(shape, chord_tolerance)`), so this package needs numpy
alone.

Conventions
-----------
- SI units: m, m³; `inertia_per_density` is in kg·m² per kg/m³ (m⁵): multiplied by a density (kg/m³) it is
  the inertia tensor (kg·m²) of the solid, whose mass is density × `volume()`.
- The inertia tensor is about the solid's CENTROID, axes parallel to the shape axes, tensor sign convention:
  diagonal ∫(y² + z²) dV and cyclic, off-diagonal entries −∫xy dV ("negative" convention).
- `contains(points, tol)` is a closed-set test: every point within distance `tol` (m) of the solid is
  accepted; near edges and corners points slightly farther than `tol` may be accepted too (each bounding
  surface is offset on its own).
- `mesh_arrays(chord_tolerance)` gives (vertices (V, 3) m, faces (F, 3)) of a watertight mesh with outward
  counter-clockwise triangles; a solid of revolution derives it from its meridian profile
  (`RevolvedShape.meridian_profile`), a prism from its outline (`PrismShape.prism_outline`).

References
----------
.. [1] Machinery's Handbook, 31st ed., Industrial Press (2020), "Radius of Gyration" p.237 and "Formulas for
   Polar Moment of Inertia of Masses" pp.253-254.
.. [2] Wikipedia, "List of moment of inertia tensors" and "List of moments of inertia".
.. [3] Steger, C. (1996). On the calculation of arbitrary moments of polygons. Technical report FGBV-96-05,
   TU München (Green's-theorem area moments of a polygon).
"""

from __future__ import annotations

import math
import numbers
from abc import ABC, abstractmethod
from collections.abc import Sequence
from typing import Any, ClassVar

import numpy as np

from massmodel.core import geometry as _geo
from massmodel.core import polygons as _poly
from massmodel.core.errors import UserError

__all__ = ["MAX_LENGTH_M", "PrismShape", "RevolvedShape", "Shape", "ShapeError"]



class ShapeError(UserError, ValueError):
    """Invalid primitive definition or argument; the message names the offending field.

    Attributes
    ----------
    field : str
        Name of the offending constructor field or argument (e.g. "inner_radius", "chord_tolerance").
    kind : str or None
        Shape kind, when known.
    """

    def __init__(self, message: str, field: str, kind: str | None = None) -> None:
        super().__init__(message)
        self.field = field
        self.kind = kind


#: Largest size accepted, m: no part is 1000 km long, and the cube of a bigger number (a volume, an inertia) could
#: overflow a float (OverflowError) instead of giving a clear message.
MAX_LENGTH_M = 1.0e6

#: Smallest size accepted, m (a nanometre: far below anything made for a car, a coat of paint is tens of
#: micrometres — common practice, no source). Smaller sizes are typing slips (``1e-9 mm``) whose volumes and
#: inertias underflow to zero or below the smallest float.
MIN_LENGTH_M = 1.0e-9


def _as_length(kind: str, field: str, value: object) -> float:
    """Validate a size: a real number, finite, > 0 and at most :data:`MAX_LENGTH_M` (m)."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ShapeError(f"{field} must be a length in metres (a number), got {value!r}", field, kind)
    number = float(value)
    if not math.isfinite(number):
        raise ShapeError(f"{field} ({number} m) must be a finite length", field, kind)
    if number <= 0.0:
        raise ShapeError(f"{field} ({number:g} m) must be greater than zero", field, kind)
    if number > MAX_LENGTH_M:
        raise ShapeError(f"{field} ({number:g} m) must be at most {MAX_LENGTH_M:g} m", field, kind)
    return number


def _require_less(kind: str, small: str, small_value: float, big: str, big_value: float) -> None:
    if not small_value < big_value:
        raise ShapeError(
            f"{small} ({small_value:g} m) must be less than {big} ({big_value:g} m)", small, kind
        )


def _diag(ixx: float, iyy: float, izz: float) -> np.ndarray:
    return np.diag([ixx, iyy, izz]).astype(float)


def _rho(p: np.ndarray) -> np.ndarray:
    """Distance from the local z axis, m, (N,)."""
    return np.asarray(np.hypot(p[:, 0], p[:, 1]))


def _symmetric_bounds(rx: float, ry: float, z0: float, z1: float) -> np.ndarray:
    return np.array([[-rx, -ry, z0], [rx, ry, z1]])


class Shape(ABC):
    """Common interface of the primitive solids (shape's own frame, SI units)."""

    __slots__ = ()
    kind: ClassVar[str]
    FIELDS: ClassVar[dict[str, str]]

    def _init_lengths(self) -> None:
        for name in self.FIELDS:
            value = _as_length(self.kind, name, getattr(self, name))
            if value < MIN_LENGTH_M:
                raise ShapeError(f"{name} ({value * 1e3:g} mm) is below the smallest size of a shape, "
                                 f"{MIN_LENGTH_M * 1e3:g} mm (a nanometre)", name, self.kind)
            object.__setattr__(self, name, value)

    @abstractmethod
    def volume(self) -> float:
        """Volume of the solid, m³."""

    def centroid(self) -> np.ndarray:
        """Centroid of the solid, (3,) float, m, shape frame (the origin unless a subclass says otherwise)."""
        return np.zeros(3)

    @abstractmethod
    def inertia_per_density(self) -> np.ndarray:
        """Inertia tensor at unit density about the centroid.

        Returns
        -------
        (3, 3) float
            kg·m² per kg/m³ (m⁵), axes parallel to the shape axes, off-diagonals −∫xy dV.
        """

    @abstractmethod
    def bounds(self) -> np.ndarray:
        """Axis-aligned bounding box, (2, 3) float: [min, max] corners, m, shape frame."""

    @abstractmethod
    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray: ...

    def contains(self, points: np.ndarray, tol: float = 1e-9) -> np.ndarray:
        """Closed-set membership test.

        Parameters
        ----------
        points : (N, 3) float
            m, shape frame.
        tol : float
            Distance tolerance, m, >= 0: points within `tol` of the solid count as inside.

        Returns
        -------
        (N,) bool
        """
        p = np.asarray(points, dtype=float)
        if p.ndim != 2 or p.shape[1] != 3:
            raise ValueError(f"points must have shape (N, 3), got {p.shape}")
        if not (math.isfinite(tol) and tol >= 0.0):
            raise ShapeError(f"tol ({tol} m) must be finite and >= 0", "tol", self.kind)
        return np.asarray(self._contains(p, float(tol)), dtype=bool)

    def surface_points(self, n: int) -> np.ndarray:
        """Deterministic points on the surface, about `n`, evenly spread, edges, rims and poles included.

        Parameters
        ----------
        n : int
            Wanted number of points, >= 1.

        Returns
        -------
        (M, 3) float
            m, shape frame; every point lies on the boundary (to rounding).
        """
        if isinstance(n, bool) or not isinstance(n, numbers.Integral) or n < 1:
            raise ShapeError(f"n must be a whole number >= 1, got {n!r}", "n", self.kind)
        return self._surface_samples(int(n))

    @abstractmethod
    def _surface_samples(self, n: int) -> np.ndarray: ...

    def mesh_arrays(self, chord_tolerance: float) -> tuple[np.ndarray, np.ndarray]:
        """Watertight triangle mesh with outward normals, as arrays.

        Parameters
        ----------
        chord_tolerance : float
            Largest distance between the mesh and the exact surface, m, > 0; facet counts follow from it
            (flat-faced solids are meshed exactly).

        Returns
        -------
        vertices : (V, 3) float
            m, shape frame.
        faces : (F, 3) int
            Outward counter-clockwise triangles.

        Raises
        ------
        ShapeError
            A tolerance that is not a length, or so small that the mesh would need too many facets.
        """
        tol = _as_length(self.kind, "chord_tolerance", chord_tolerance)
        try:
            return self._mesh_arrays(tol)
        except _geo.ToleranceTooSmall as exc:
            raise ShapeError(
                f"chord_tolerance ({tol:g} m) is too small: {exc}", "chord_tolerance", self.kind
            ) from exc

    @abstractmethod
    def _mesh_arrays(self, chord_tolerance: float) -> tuple[np.ndarray, np.ndarray]: ...

    def params(self) -> dict[str, Any]:
        """Constructor fields and their SI values (m; a vertex list as a tuple of (x, y) pairs in m)."""
        return {name: getattr(self, name) for name in self.FIELDS}


class RevolvedShape(Shape):
    """A solid of revolution about the local z axis, meshed and sampled from its meridian profile."""

    __slots__ = ()

    @abstractmethod
    def meridian_profile(self) -> Sequence[_geo.ProfileSegment]:
        """Closed counter-clockwise (r, z) profile (m) whose revolution about local z is the solid."""

    def _surface_samples(self, n: int) -> np.ndarray:
        return _geo.revolve_samples(self.meridian_profile(), n)

    def _mesh_arrays(self, chord_tolerance: float) -> tuple[np.ndarray, np.ndarray]:
        return _geo.revolve_mesh(self.meridian_profile(), chord_tolerance)


class PrismShape(Shape):
    """A prism: a planar outline in the local xy plane swept along local z, meshed exactly."""

    __slots__ = ()

    @abstractmethod
    def prism_outline(self) -> tuple[np.ndarray, float, float]:
        """(counter-clockwise outline (N, 2) m without collinear corners, z0 m, z1 m), z1 > z0."""

    def _surface_samples(self, n: int) -> np.ndarray:
        xy, z0, z1 = self.prism_outline()
        return _poly.prism_samples(xy, z0, z1, n)

    def _mesh_arrays(self, chord_tolerance: float) -> tuple[np.ndarray, np.ndarray]:
        xy, z0, z1 = self.prism_outline()
        return _poly.prism_mesh(xy, z0, z1)


def profile_lines(corners: list[tuple[float, float]]) -> list[_geo.ProfileSegment]:
    """Closed meridian profile of straight edges through `corners` (r, z), m, in order."""
    return [_geo.ProfileLine(corners[i], corners[(i + 1) % len(corners)]) for i in range(len(corners))]
