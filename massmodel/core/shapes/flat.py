"""Flat-faced primitive solids: box, wedge (right triangular prism) and extrusion of a polygon.

Frames, units and sign conventions as in `massmodel.core.shapes.base`.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from massmodel.core import polygons as _poly
from massmodel.core.shapes.base import PrismShape, ShapeError, _as_length, _diag

__all__ = ["Box", "Extrusion", "Wedge"]


@dataclass(frozen=True, slots=True)
class Box(PrismShape):
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

    def prism_outline(self) -> tuple[np.ndarray, float, float]:
        hx, hy, hz = 0.5 * self.size_x, 0.5 * self.size_y, 0.5 * self.size_z
        return np.array([[-hx, -hy], [hx, -hy], [hx, hy], [-hx, hy]]), -hz, hz

    def bounds(self) -> np.ndarray:
        half = 0.5 * np.array([self.size_x, self.size_y, self.size_z])
        return np.array([-half, half])

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.all(np.abs(p) <= self.bounds()[1] + tol, axis=1)


@dataclass(frozen=True, slots=True)
class Wedge(PrismShape):
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

    def prism_outline(self) -> tuple[np.ndarray, float, float]:
        return np.array([[0.0, 0.0], [self.leg_x, 0.0], [0.0, self.leg_y]]), 0.0, self.length

    def bounds(self) -> np.ndarray:
        return np.array([[0.0, 0.0, 0.0], [self.leg_x, self.leg_y, self.length]])

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        a, b = self.leg_x, self.leg_y
        hypotenuse = (b * p[:, 0] + a * p[:, 1] - a * b) / math.hypot(a, b)  # signed distance
        x_ok = (p[:, 0] >= -tol) & (p[:, 1] >= -tol) & (hypotenuse <= tol)
        return np.asarray(x_ok & (p[:, 2] >= -tol) & (p[:, 2] <= self.length + tol))


@dataclass(frozen=True, slots=True)
class Extrusion(PrismShape):
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
        return xy if _poly.signed_area(xy) > 0.0 else xy[::-1].copy()

    def volume(self) -> float:
        return _poly.polygon_moments(self.outline_ccw())[0] * self.thickness

    def centroid(self) -> np.ndarray:
        _, c, _ = _poly.polygon_moments(self.outline_ccw())
        return np.array([c[0], c[1], 0.5 * self.thickness])

    def inertia_per_density(self) -> np.ndarray:
        area, _, s = _poly.polygon_moments(self.outline_ccw())
        t = self.thickness
        slab = area * t**3 / 12.0
        tensor = _diag(t * s[1, 1] + slab, t * s[0, 0] + slab, t * (s[0, 0] + s[1, 1]))
        tensor[0, 1] = tensor[1, 0] = -t * s[0, 1]
        return tensor

    def prism_outline(self) -> tuple[np.ndarray, float, float]:
        xy = self.outline_ccw()
        scale = float(np.ptp(xy, axis=0).max())
        return _poly.drop_collinear(xy, 1e-13 * scale * scale), 0.0, self.thickness

    def bounds(self) -> np.ndarray:
        xy = np.array(self.vertices)
        lo, hi = xy.min(axis=0), xy.max(axis=0)
        return np.array([[lo[0], lo[1], 0.0], [hi[0], hi[1], self.thickness]])

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        xy = self.outline_ccw()
        result = (p[:, 2] >= -tol) & (p[:, 2] <= self.thickness + tol)
        if np.any(result):
            q = p[result, :2]
            result[result] = _poly.point_in_polygon(q, xy) | (_poly.distance_to_polygon_boundary(q, xy) <= tol)
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
    problem = _poly.polygon_problem(np.array(pairs))
    if problem is not None:
        raise ShapeError(f"{field}: {problem}", field, kind)
    return tuple(pairs)
