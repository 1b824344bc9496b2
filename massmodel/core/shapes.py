"""Primitive solids: definitions, validation, exact mass properties and membership.

Every primitive is an immutable dataclass with sizes in metres, validated when built. All quantities are in
the shape's own frame, described in each class docstring. Surface samples, meshes and CAD solids are made
by `massmodel.cad.primitives` (reached through `surface_points`, `to_mesh` and `to_solid`).

Conventions
-----------
- SI units: m, m³; `inertia_per_density` is in kg·m² per kg/m³ (m⁵): multiplied by a density (kg/m³) it is
  the inertia tensor (kg·m²) of the solid, whose mass is density × `volume()`.
- The inertia tensor is about the solid's CENTROID, axes parallel to the shape axes, tensor sign convention:
  diagonal ∫(y² + z²) dV and cyclic, off-diagonal entries −∫xy dV ("negative" convention).
- `to_solid()` gives a cadquery solid in MILLIMETRES (coordinates = metres × 1000); `to_mesh()` gives a
  trimesh mesh in METRES. Both libraries are imported lazily: this module needs numpy only.
- `contains(points, tol)` is a closed-set test: every point within distance `tol` (m) of the solid is
  accepted; near edges and corners points slightly farther than `tol` may be accepted too (each bounding
  surface is offset on its own).

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
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from massmodel.cad import primitives as _geo

__all__ = [
    "MAX_LENGTH_M",
    "SHAPE_KINDS",
    "Box",
    "Cone",
    "Cylinder",
    "Ellipsoid",
    "Extrusion",
    "Frustum",
    "Hemisphere",
    "PointMass",
    "Shape",
    "ShapeError",
    "Sphere",
    "SphericalShell",
    "Torus",
    "Tube",
    "Wedge",
    "shape_from_params",
]


class ShapeError(ValueError):
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
            object.__setattr__(self, name, _as_length(self.kind, name, getattr(self, name)))

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
        return _geo.surface_samples(self, int(n))

    def to_mesh(self, chord_tolerance: float) -> Any:
        """Watertight triangle mesh with outward normals.

        Parameters
        ----------
        chord_tolerance : float
            Largest distance between the mesh and the exact surface, m, > 0; facet counts follow from it
            (flat-faced solids are meshed exactly).

        Returns
        -------
        trimesh.Trimesh
            In METRES, shape frame.
        """
        tol = _as_length(self.kind, "chord_tolerance", chord_tolerance)
        try:
            vertices, faces = _geo.mesh_arrays(self, tol)
        except _geo.ToleranceTooSmall as exc:
            raise ShapeError(
                f"chord_tolerance ({tol:g} m) is too small: {exc}", "chord_tolerance", self.kind
            ) from exc
        return _geo.make_trimesh(vertices, faces)

    def to_solid(self) -> Any:
        """CAD solid (cadquery.Solid) in MILLIMETRES (coordinates = metres × 1000), shape frame."""
        return _geo.cad_solid_mm(self)

    def params(self) -> dict[str, Any]:
        """Constructor fields and their SI values (m; a vertex list as a tuple of (x, y) pairs in m)."""
        return {name: getattr(self, name) for name in self.FIELDS}


# --------------------------------------------------------------------------------------------------
# Flat-faced solids
# --------------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Box(Shape):
    """Rectangular block (cuboid).

    Frame: centred on the origin, edges along the axes, extending ±size_x/2, ±size_y/2, ±size_z/2.

    Parameters
    ----------
    size_x, size_y, size_z : float
        Edge lengths along x, y, z, m.

    References
    ----------
    Machinery's Handbook 31st ed. pp.253-254; Wikipedia list of moment of inertia tensors (cuboid):
    I_xx = m(b² + c²)/12 and cyclic.
    """

    size_x: float
    size_y: float
    size_z: float
    kind: ClassVar[str] = "box"
    FIELDS: ClassVar[dict[str, str]] = {"size_x": "length", "size_y": "length", "size_z": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def volume(self) -> float:
        return self.size_x * self.size_y * self.size_z

    def inertia_per_density(self) -> np.ndarray:
        a2, b2, c2 = self.size_x**2, self.size_y**2, self.size_z**2
        v = self.volume()
        return _diag(v * (b2 + c2) / 12.0, v * (a2 + c2) / 12.0, v * (a2 + b2) / 12.0)

    def bounds(self) -> np.ndarray:
        half = 0.5 * np.array([self.size_x, self.size_y, self.size_z])
        return np.array([-half, half])

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.all(np.abs(p) <= self.bounds()[1] + tol, axis=1)


@dataclass(frozen=True, slots=True)
class Wedge(Shape):
    """Right triangular prism.

    Frame: the right-angled triangle (0, 0), (leg_x, 0), (0, leg_y) in the xy plane (right angle at the
    origin), extruded from z = 0 to z = length. Centroid (leg_x/3, leg_y/3, length/2).

    Parameters
    ----------
    leg_x, leg_y : float
        Legs of the triangle along +x and +y, m.
    length : float
        Extrusion length along +z, m.

    Notes
    -----
    Product of inertia, checked three ways (this closed form, OpenCascade `MatrixOfInertia`, Gauss
    quadrature over the triangle; tests/test_shapes.py): about the ORIGIN ∫xy dV = +a²b²L/24 > 0, but about
    the CENTROID ∫xy dV = a²b²L/24 − V(a/3)(b/3) = −a²b²L/72 < 0 (the material lies along the hypotenuse,
    which runs from +x towards +y). The centroidal tensor entry is therefore I_xy = −∫xy dV = +V a b/36,
    POSITIVE, as the reference table's "+m a b/36" states; about the origin it would be −m a b/12.

    References
    ----------
    Right-triangle section moments (Machinery's Handbook 31st ed., "Moments of Inertia of Sections"):
    I_x = a b³/36, I_y = b a³/36 about the centroid; the prism moments follow (derivation V).
    """

    leg_x: float
    leg_y: float
    length: float
    kind: ClassVar[str] = "wedge"
    FIELDS: ClassVar[dict[str, str]] = {"leg_x": "length", "leg_y": "length", "length": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def volume(self) -> float:
        return 0.5 * self.leg_x * self.leg_y * self.length

    def centroid(self) -> np.ndarray:
        return np.array([self.leg_x / 3.0, self.leg_y / 3.0, self.length / 2.0])

    def inertia_per_density(self) -> np.ndarray:
        a, b, length, v = self.leg_x, self.leg_y, self.length, self.volume()
        tensor = _diag(
            v * (b * b / 18.0 + length * length / 12.0),
            v * (a * a / 18.0 + length * length / 12.0),
            v * (a * a + b * b) / 18.0,
        )
        tensor[0, 1] = tensor[1, 0] = v * a * b / 36.0  # −∫xy dV about the centroid, positive (see Notes)
        return tensor

    def bounds(self) -> np.ndarray:
        return np.array([[0.0, 0.0, 0.0], [self.leg_x, self.leg_y, self.length]])

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        a, b = self.leg_x, self.leg_y
        hypotenuse = (b * p[:, 0] + a * p[:, 1] - a * b) / math.hypot(a, b)  # signed distance
        x_ok = (p[:, 0] >= -tol) & (p[:, 1] >= -tol) & (hypotenuse <= tol)
        return np.asarray(x_ok & (p[:, 2] >= -tol) & (p[:, 2] <= self.length + tol))


@dataclass(frozen=True, slots=True)
class Extrusion(Shape):
    """Prism over a simple polygon.

    Frame: the polygon lies in the local xy plane (either winding, closed implicitly) and is extruded from
    z = 0 to z = thickness.

    Parameters
    ----------
    vertices : tuple of (float, float)
        Polygon corners (x, y), m: at least 3, no repeats, no crossing or touching edges, non-zero area.
    thickness : float
        Extrusion length along +z, m.

    References
    ----------
    Area moments of the polygon by Green's theorem (shoelace sums) [3]_, with cᵢ = xᵢyᵢ₊₁ − xᵢ₊₁yᵢ:
    A = ½Σcᵢ, A x̄ = (1/6)Σ(xᵢ + xᵢ₊₁)cᵢ, ∫x² dA = (1/12)Σ(xᵢ² + xᵢxᵢ₊₁ + xᵢ₊₁²)cᵢ,
    ∫xy dA = (1/24)Σ(xᵢyᵢ₊₁ + 2xᵢyᵢ + 2xᵢ₊₁yᵢ₊₁ + xᵢ₊₁yᵢ)cᵢ. With centroidal S_xx = ∫(x − x̄)² dA, S_yy,
    S_xy, the prism of thickness t has I_xx = t S_yy + A t³/12, I_yy = t S_xx + A t³/12, I_zz = t(S_xx + S_yy),
    I_xy = −t S_xy, I_xz = I_yz = 0 (derivation V).
    """

    vertices: tuple[tuple[float, float], ...]
    thickness: float
    kind: ClassVar[str] = "extrusion"
    FIELDS: ClassVar[dict[str, str]] = {"vertices": "length_list", "thickness": "length"}

    def __post_init__(self) -> None:
        object.__setattr__(self, "vertices", _validate_polygon(self.kind, self.vertices))
        object.__setattr__(self, "thickness", _as_length(self.kind, "thickness", self.thickness))

    def outline_ccw(self) -> np.ndarray:
        """The polygon corners counter-clockwise, (N, 2) float, m."""
        xy = np.array(self.vertices, dtype=float)
        return xy if _geo.signed_area(xy) > 0.0 else xy[::-1].copy()

    def volume(self) -> float:
        return _geo.polygon_moments(self.outline_ccw())[0] * self.thickness

    def centroid(self) -> np.ndarray:
        _, c, _ = _geo.polygon_moments(self.outline_ccw())
        return np.array([c[0], c[1], 0.5 * self.thickness])

    def inertia_per_density(self) -> np.ndarray:
        area, _, s = _geo.polygon_moments(self.outline_ccw())
        t = self.thickness
        slab = area * t**3 / 12.0
        tensor = _diag(t * s[1, 1] + slab, t * s[0, 0] + slab, t * (s[0, 0] + s[1, 1]))
        tensor[0, 1] = tensor[1, 0] = -t * s[0, 1]
        return tensor

    def bounds(self) -> np.ndarray:
        xy = np.array(self.vertices)
        lo, hi = xy.min(axis=0), xy.max(axis=0)
        return np.array([[lo[0], lo[1], 0.0], [hi[0], hi[1], self.thickness]])

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        xy = self.outline_ccw()
        result = (p[:, 2] >= -tol) & (p[:, 2] <= self.thickness + tol)
        if np.any(result):
            q = p[result, :2]
            result[result] = _geo.point_in_polygon(q, xy) | (_geo.distance_to_polygon_boundary(q, xy) <= tol)
        return np.asarray(result)


def _validate_polygon(kind: str, vertices: object) -> tuple[tuple[float, float], ...]:
    """Check a simple polygon and return it as a tuple of float pairs (m)."""
    field = "vertices"
    try:
        items = list(vertices)  # type: ignore[call-overload]
    except TypeError:
        raise ShapeError(
            f"{field} must be a list of (x, y) pairs in metres, got {vertices!r}", field, kind
        ) from None
    pairs: list[tuple[float, float]] = []
    for index, item in enumerate(items):
        try:
            coords = list(item)
        except TypeError:
            coords = []
        if len(coords) != 2 or any(isinstance(v, bool) or not isinstance(v, numbers.Real) for v in coords):
            raise ShapeError(
                f"{field}[{index}] must be an (x, y) pair of lengths in metres, got {item!r}", field, kind
            )
        x, y = float(coords[0]), float(coords[1])
        if not (math.isfinite(x) and math.isfinite(y)):
            raise ShapeError(f"{field}[{index}] ({x}, {y}) m must be finite", field, kind)
        pairs.append((x, y))
    if len(pairs) < 3:
        raise ShapeError(f"{field} needs at least 3 corners, got {len(pairs)}", field, kind)
    problem = _geo.polygon_problem(np.array(pairs))
    if problem is not None:
        raise ShapeError(f"{field}: {problem}", field, kind)
    return tuple(pairs)


# --------------------------------------------------------------------------------------------------
# Solids of revolution about the local z axis
# --------------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Cylinder(Shape):
    """Solid circular cylinder.

    Frame: axis along local z, centred on the origin, extending z = ±length/2.

    Parameters
    ----------
    radius, length : float
        m.

    References
    ----------
    Machinery's Handbook 31st ed. pp.253-254: I_axis = m r²/2; I_transverse = m(3r² + L²)/12.
    """

    radius: float
    length: float
    kind: ClassVar[str] = "cylinder"
    FIELDS: ClassVar[dict[str, str]] = {"radius": "length", "length": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def volume(self) -> float:
        return math.pi * self.radius**2 * self.length

    def inertia_per_density(self) -> np.ndarray:
        r2, l2, v = self.radius**2, self.length**2, self.volume()
        transverse = v * (3.0 * r2 + l2) / 12.0
        return _diag(transverse, transverse, v * r2 / 2.0)

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.radius, self.radius, -0.5 * self.length, 0.5 * self.length)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.asarray((_rho(p) <= self.radius + tol) & (np.abs(p[:, 2]) <= 0.5 * self.length + tol))


@dataclass(frozen=True, slots=True)
class Tube(Shape):
    """Hollow circular cylinder (thick-walled tube).

    Frame: axis along local z, centred on the origin, extending z = ±length/2.

    Parameters
    ----------
    outer_radius, inner_radius : float
        m, inner_radius < outer_radius.
    length : float
        m.

    References
    ----------
    Machinery's Handbook 31st ed. pp.253-254: I_axis = m(r₁² + r₂²)/2; I_transverse = m[3(r₁² + r₂²) + L²]/12.
    """

    outer_radius: float
    inner_radius: float
    length: float
    kind: ClassVar[str] = "tube"
    FIELDS: ClassVar[dict[str, str]] = {
        "outer_radius": "length",
        "inner_radius": "length",
        "length": "length",
    }

    def __post_init__(self) -> None:
        self._init_lengths()
        _require_less(self.kind, "inner_radius", self.inner_radius, "outer_radius", self.outer_radius)

    def volume(self) -> float:
        return math.pi * (self.outer_radius**2 - self.inner_radius**2) * self.length

    def inertia_per_density(self) -> np.ndarray:
        r2, l2, v = self.outer_radius**2 + self.inner_radius**2, self.length**2, self.volume()
        transverse = v * (3.0 * r2 + l2) / 12.0
        return _diag(transverse, transverse, v * r2 / 2.0)

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.outer_radius, self.outer_radius, -0.5 * self.length, 0.5 * self.length)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        rho = _rho(p)
        radial = (rho <= self.outer_radius + tol) & (rho >= self.inner_radius - tol)
        return np.asarray(radial & (np.abs(p[:, 2]) <= 0.5 * self.length + tol))


@dataclass(frozen=True, slots=True)
class Sphere(Shape):
    """Solid sphere.

    Frame: centred on the origin.

    Parameters
    ----------
    radius : float
        m.

    References
    ----------
    Machinery's Handbook 31st ed. pp.253-254: I = 2/5 m R².
    """

    radius: float
    kind: ClassVar[str] = "sphere"
    FIELDS: ClassVar[dict[str, str]] = {"radius": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def volume(self) -> float:
        return 4.0 / 3.0 * math.pi * self.radius**3

    def inertia_per_density(self) -> np.ndarray:
        moment = 0.4 * self.volume() * self.radius**2
        return _diag(moment, moment, moment)

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.radius, self.radius, -self.radius, self.radius)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.asarray(np.linalg.norm(p, axis=1) <= self.radius + tol)


@dataclass(frozen=True, slots=True)
class SphericalShell(Shape):
    """Thick hollow sphere.

    Frame: centred on the origin.

    Parameters
    ----------
    outer_radius, inner_radius : float
        m, inner_radius < outer_radius.

    References
    ----------
    Difference of two solid spheres (Machinery's Handbook, 2/5 m R²): I = (8π/15)(R⁵ − r⁵)
    = (2/5) m (R⁵ − r⁵)/(R³ − r³) (derivation V).
    """

    outer_radius: float
    inner_radius: float
    kind: ClassVar[str] = "spherical_shell"
    FIELDS: ClassVar[dict[str, str]] = {"outer_radius": "length", "inner_radius": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()
        _require_less(self.kind, "inner_radius", self.inner_radius, "outer_radius", self.outer_radius)

    def volume(self) -> float:
        return 4.0 / 3.0 * math.pi * (self.outer_radius**3 - self.inner_radius**3)

    def inertia_per_density(self) -> np.ndarray:
        moment = 8.0 * math.pi / 15.0 * (self.outer_radius**5 - self.inner_radius**5)
        return _diag(moment, moment, moment)

    def bounds(self) -> np.ndarray:
        r = self.outer_radius
        return _symmetric_bounds(r, r, -r, r)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        d = np.linalg.norm(p, axis=1)
        return np.asarray((d <= self.outer_radius + tol) & (d >= self.inner_radius - tol))


@dataclass(frozen=True, slots=True)
class Hemisphere(Shape):
    """Solid half sphere.

    Frame: flat face on the plane z = 0 centred on the origin, dome towards +z. Centroid (0, 0, 3R/8).

    Parameters
    ----------
    radius : float
        m.

    References
    ----------
    Derivation V: the half sphere keeps the sphere's 2/5 m R² about every axis through the centre of its flat
    face; its centroid is 3R/8 above that face (∫z dV = πR⁴/4 over V = 2πR³/3), so the centroidal transverse
    moment is m R²(2/5 − 9/64) = 83/320 m R².
    """

    radius: float
    kind: ClassVar[str] = "hemisphere"
    FIELDS: ClassVar[dict[str, str]] = {"radius": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def volume(self) -> float:
        return 2.0 / 3.0 * math.pi * self.radius**3

    def centroid(self) -> np.ndarray:
        return np.array([0.0, 0.0, 3.0 * self.radius / 8.0])

    def inertia_per_density(self) -> np.ndarray:
        v, r2 = self.volume(), self.radius**2
        transverse = 83.0 / 320.0 * v * r2
        return _diag(transverse, transverse, 0.4 * v * r2)

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.radius, self.radius, 0.0, self.radius)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.asarray((np.linalg.norm(p, axis=1) <= self.radius + tol) & (p[:, 2] >= -tol))


def _taper_integral(r0: float, r1: float, n: int, m: int) -> float:
    """∫₀¹ tᵐ r(t)ⁿ dt for r(t) = r0 (1 − t) + r1 t, exactly, through the Bernstein form.

    ∫₀¹ t^(m+i) (1 − t)^(n−i) dt = (m+i)! (n−i)! / (n+m+1)! (Beta function); every term is positive.
    """
    return sum(
        math.comb(n, i)
        * r0 ** (n - i)
        * r1**i
        * math.factorial(m + i)
        * math.factorial(n - i)
        / math.factorial(n + m + 1)
        for i in range(n + 1)
    )


def _frustum_contains(p: np.ndarray, tol: float, r0: float, r1: float, height: float) -> np.ndarray:
    """Closed test against the solid between discs r0 at z = 0 and r1 at z = height (signed distances)."""
    z = p[:, 2]
    slant = (_rho(p) - (r0 + (r1 - r0) * z / height)) * height / math.hypot(height, r1 - r0)
    return np.asarray((z >= -tol) & (z <= height + tol) & (slant <= tol))


@dataclass(frozen=True, slots=True)
class Cone(Shape):
    """Solid right circular cone.

    Frame: base disc of radius `radius` on the plane z = 0 centred on the origin, apex at (0, 0, height).
    Centroid (0, 0, height/4).

    Parameters
    ----------
    radius : float
        Base radius, m.
    height : float
        m.

    References
    ----------
    Machinery's Handbook 31st ed. pp.253-254: I_axis = 3/10 m r²; transverse about the apex
    3/20 m r² + 3/5 m h²; shifted to the centroid (3h/4 from the apex): 3/20 m r² + 3/80 m h² (derivation V).
    """

    radius: float
    height: float
    kind: ClassVar[str] = "cone"
    FIELDS: ClassVar[dict[str, str]] = {"radius": "length", "height": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def volume(self) -> float:
        return math.pi * self.radius**2 * self.height / 3.0

    def centroid(self) -> np.ndarray:
        return np.array([0.0, 0.0, self.height / 4.0])

    def inertia_per_density(self) -> np.ndarray:
        v, r2, h2 = self.volume(), self.radius**2, self.height**2
        transverse = v * (3.0 / 20.0 * r2 + 3.0 / 80.0 * h2)
        return _diag(transverse, transverse, 0.3 * v * r2)

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.radius, self.radius, 0.0, self.height)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return _frustum_contains(p, tol, self.radius, 0.0, self.height)


@dataclass(frozen=True, slots=True)
class Frustum(Shape):
    """Truncated right circular cone.

    Frame: disc of radius `base_radius` on the plane z = 0 centred on the origin, disc of radius `top_radius`
    on z = height; either may be the larger.

    Parameters
    ----------
    base_radius, top_radius : float
        m, both > 0.
    height : float
        m.

    References
    ----------
    Derivation V, integrating discs of radius r(z) = r₀ + (r₁ − r₀) z/h, t = z/h: V = πh ∫₀¹ r² dt,
    z̄ = h ∫₀¹ t r² dt / ∫₀¹ r² dt, I_axis = (πh/2) ∫₀¹ r⁴ dt; about the base centre dI = [r(z)²/4 + z²] dm,
    so I_transverse,base = πh ∫₀¹ r⁴/4 dt + πh³ ∫₀¹ t² r² dt, shifted to the centroid (parallel axes).
    Agrees with the tabulated centroid h(R² + 2Rr + 3r²)/[4(R² + Rr + r²)] from the large end and
    I_axis = (3/10) m (R⁵ − r⁵)/(R³ − r³).
    """

    base_radius: float
    top_radius: float
    height: float
    kind: ClassVar[str] = "frustum"
    FIELDS: ClassVar[dict[str, str]] = {"base_radius": "length", "top_radius": "length", "height": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def volume(self) -> float:
        return math.pi * self.height * _taper_integral(self.base_radius, self.top_radius, 2, 0)

    def centroid(self) -> np.ndarray:
        r0, r1 = self.base_radius, self.top_radius
        return np.array(
            [0.0, 0.0, self.height * _taper_integral(r0, r1, 2, 1) / _taper_integral(r0, r1, 2, 0)]
        )

    def inertia_per_density(self) -> np.ndarray:
        r0, r1, h = self.base_radius, self.top_radius, self.height
        axial = 0.5 * math.pi * h * _taper_integral(r0, r1, 4, 0)
        about_base = (
            math.pi * h * (0.25 * _taper_integral(r0, r1, 4, 0) + h * h * _taper_integral(r0, r1, 2, 2))
        )
        transverse = about_base - self.volume() * self.centroid()[2] ** 2
        return _diag(transverse, transverse, axial)

    def bounds(self) -> np.ndarray:
        r = max(self.base_radius, self.top_radius)
        return _symmetric_bounds(r, r, 0.0, self.height)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return _frustum_contains(p, tol, self.base_radius, self.top_radius, self.height)


@dataclass(frozen=True, slots=True)
class Torus(Shape):
    """Solid ring torus.

    Frame: axis along local z, centred on the origin, ring (circle of tube centres) in the xy plane.

    Parameters
    ----------
    ring_radius : float
        Distance from the axis to the tube centre, m.
    tube_radius : float
        Radius of the tube cross-section, m, < ring_radius.

    References
    ----------
    Machinery's Handbook 31st ed. pp.253-254 / Wikipedia list of moments of inertia: V = 2π²Ra²;
    I_axis = m(4R² + 3a²)/4; I_diameter = m(4R² + 5a²)/8.
    """

    ring_radius: float
    tube_radius: float
    kind: ClassVar[str] = "torus"
    FIELDS: ClassVar[dict[str, str]] = {"ring_radius": "length", "tube_radius": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()
        _require_less(self.kind, "tube_radius", self.tube_radius, "ring_radius", self.ring_radius)

    def volume(self) -> float:
        return 2.0 * math.pi**2 * self.ring_radius * self.tube_radius**2

    def inertia_per_density(self) -> np.ndarray:
        v, r2, a2 = self.volume(), self.ring_radius**2, self.tube_radius**2
        diameter = v * (4.0 * r2 + 5.0 * a2) / 8.0
        return _diag(diameter, diameter, v * (4.0 * r2 + 3.0 * a2) / 4.0)

    def bounds(self) -> np.ndarray:
        outer = self.ring_radius + self.tube_radius
        return _symmetric_bounds(outer, outer, -self.tube_radius, self.tube_radius)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.asarray(np.hypot(_rho(p) - self.ring_radius, p[:, 2]) <= self.tube_radius + tol)


# --------------------------------------------------------------------------------------------------
# Ellipsoid and point mass
# --------------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Ellipsoid(Shape):
    """Solid tri-axial ellipsoid.

    Frame: centred on the origin, semi-axes along x, y, z.

    Parameters
    ----------
    semi_x, semi_y, semi_z : float
        Semi-axes a, b, c, m.

    References
    ----------
    Machinery's Handbook 31st ed. pp.253-254 / Wikipedia list of moment of inertia tensors:
    V = 4/3 π a b c; I_a = m(b² + c²)/5 and cyclic.
    """

    semi_x: float
    semi_y: float
    semi_z: float
    kind: ClassVar[str] = "ellipsoid"
    FIELDS: ClassVar[dict[str, str]] = {"semi_x": "length", "semi_y": "length", "semi_z": "length"}

    def __post_init__(self) -> None:
        self._init_lengths()

    def semi_axes(self) -> np.ndarray:
        """(semi_x, semi_y, semi_z), (3,) float, m."""
        return np.array([self.semi_x, self.semi_y, self.semi_z])

    def volume(self) -> float:
        return 4.0 / 3.0 * math.pi * self.semi_x * self.semi_y * self.semi_z

    def inertia_per_density(self) -> np.ndarray:
        a2, b2, c2 = self.semi_axes() ** 2
        v = self.volume()
        return _diag(v * (b2 + c2) / 5.0, v * (a2 + c2) / 5.0, v * (a2 + b2) / 5.0)

    def bounds(self) -> np.ndarray:
        return np.array([-self.semi_axes(), self.semi_axes()])

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        # g = |p / s| is a norm (convex), so the first-order distance (g − 1)/|∇g| never exceeds the true
        # distance of an outside point: every point within tol passes.
        s = self.semi_axes()
        g = np.linalg.norm(p / s, axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            estimate = (g - 1.0) * g / np.linalg.norm(p / (s * s), axis=1)
        return np.asarray((g <= 1.0) | (estimate <= tol))


@dataclass(frozen=True, slots=True)
class PointMass(Shape):
    """Point mass: a location with no volume.

    Frame: the point is the origin. Its mass must be measured (density × volume is impossible) and its own
    inertia is zero. `to_solid` and `to_mesh` give a small marker sphere for display only;
    `surface_points` gives the point itself.
    """

    kind: ClassVar[str] = "point"
    FIELDS: ClassVar[dict[str, str]] = {}

    def volume(self) -> float:
        return 0.0

    def inertia_per_density(self) -> np.ndarray:
        return np.zeros((3, 3))

    def bounds(self) -> np.ndarray:
        return np.zeros((2, 3))

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.zeros(len(p), dtype=bool)

    def surface_points(self, n: int) -> np.ndarray:
        """The point itself, (1, 3) float, m (whatever `n`)."""
        return np.zeros((1, 3))

    def to_mesh(self, chord_tolerance: float, marker_radius: float = 0.01) -> Any:
        """Display marker: a sphere of `marker_radius` (m) meshed within `chord_tolerance` (m), in metres."""
        return Sphere(_as_length(self.kind, "marker_radius", marker_radius)).to_mesh(chord_tolerance)

    def to_solid(self, marker_radius: float = 0.01) -> Any:
        """Display marker: a CAD sphere of `marker_radius` (m), in millimetres."""
        return Sphere(_as_length(self.kind, "marker_radius", marker_radius)).to_solid()


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
