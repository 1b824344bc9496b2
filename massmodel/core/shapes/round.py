"""Round primitive solids: solids of revolution about local z, the ellipsoid and the point mass.

Frames, units and sign conventions as in `massmodel.core.shapes.base`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from massmodel.core import geometry as _geo
from massmodel.core.shapes.base import (
    RevolvedShape,
    Shape,
    _as_length,
    _diag,
    _require_less,
    _rho,
    _symmetric_bounds,
    profile_lines,
)

__all__ = [
    "Cone",
    "Cylinder",
    "Ellipsoid",
    "Frustum",
    "Hemisphere",
    "PointMass",
    "Sphere",
    "SphericalShell",
    "Torus",
    "Tube",
]

_HALF_TURN = 0.5 * math.pi


def _unit_sphere_profile() -> list[_geo.ProfileSegment]:
    return [_geo.arc((0.0, 0.0), 1.0, -_HALF_TURN, _HALF_TURN), _geo.ProfileLine((0.0, 1.0), (0.0, -1.0))]

# --------------------------------------------------------------------------------------------------
# Solids of revolution about the local z axis
# --------------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Cylinder(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        h = 0.5 * self.length
        return profile_lines([(0.0, -h), (self.radius, -h), (self.radius, h), (0.0, h)])

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.radius, self.radius, -0.5 * self.length, 0.5 * self.length)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.asarray((_rho(p) <= self.radius + tol) & (np.abs(p[:, 2]) <= 0.5 * self.length + tol))


@dataclass(frozen=True, slots=True)
class Tube(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        h, ri, ro = 0.5 * self.length, self.inner_radius, self.outer_radius
        return profile_lines([(ri, -h), (ro, -h), (ro, h), (ri, h)])

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.outer_radius, self.outer_radius, -0.5 * self.length, 0.5 * self.length)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        rho = _rho(p)
        radial = (rho <= self.outer_radius + tol) & (rho >= self.inner_radius - tol)
        return np.asarray(radial & (np.abs(p[:, 2]) <= 0.5 * self.length + tol))


@dataclass(frozen=True, slots=True)
class Sphere(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        return [
            _geo.arc((0.0, 0.0), self.radius, -_HALF_TURN, _HALF_TURN),
            _geo.ProfileLine((0.0, self.radius), (0.0, -self.radius)),
        ]

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.radius, self.radius, -self.radius, self.radius)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.asarray(np.linalg.norm(p, axis=1) <= self.radius + tol)


@dataclass(frozen=True, slots=True)
class SphericalShell(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        ro, ri = self.outer_radius, self.inner_radius
        return [
            _geo.arc((0.0, 0.0), ro, -_HALF_TURN, _HALF_TURN),
            _geo.ProfileLine((0.0, ro), (0.0, ri)),
            _geo.arc((0.0, 0.0), ri, _HALF_TURN, -_HALF_TURN),
            _geo.ProfileLine((0.0, -ri), (0.0, -ro)),
        ]

    def bounds(self) -> np.ndarray:
        r = self.outer_radius
        return _symmetric_bounds(r, r, -r, r)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        d = np.linalg.norm(p, axis=1)
        return np.asarray((d <= self.outer_radius + tol) & (d >= self.inner_radius - tol))


@dataclass(frozen=True, slots=True)
class Hemisphere(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        r = self.radius
        return [
            _geo.ProfileLine((0.0, 0.0), (r, 0.0)),
            _geo.arc((0.0, 0.0), r, 0.0, _HALF_TURN),
            _geo.ProfileLine((0.0, r), (0.0, 0.0)),
        ]

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
class Cone(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        return profile_lines([(0.0, 0.0), (self.radius, 0.0), (0.0, self.height)])

    def bounds(self) -> np.ndarray:
        return _symmetric_bounds(self.radius, self.radius, 0.0, self.height)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return _frustum_contains(p, tol, self.radius, 0.0, self.height)


@dataclass(frozen=True, slots=True)
class Frustum(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        return profile_lines([(0.0, 0.0), (self.base_radius, 0.0), (self.top_radius, self.height), (0.0, self.height)])

    def bounds(self) -> np.ndarray:
        r = max(self.base_radius, self.top_radius)
        return _symmetric_bounds(r, r, 0.0, self.height)

    def _contains(self, p: np.ndarray, tol: float) -> np.ndarray:
        return _frustum_contains(p, tol, self.base_radius, self.top_radius, self.height)


@dataclass(frozen=True, slots=True)
class Torus(RevolvedShape):
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

    def meridian_profile(self) -> list[_geo.ProfileSegment]:
        return [_geo.arc((self.ring_radius, 0.0), self.tube_radius, -math.pi, math.pi)]

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

    def _surface_samples(self, n: int) -> np.ndarray:
        return _geo.revolve_samples(_unit_sphere_profile(), n) * self.semi_axes()

    def _mesh_arrays(self, chord_tolerance: float) -> tuple[np.ndarray, np.ndarray]:
        # A point within e of the unit sphere maps within max(s)·e of the ellipsoid (linear map of norm max s).
        semi = self.semi_axes()
        vertices, faces = _geo.revolve_mesh(_unit_sphere_profile(), chord_tolerance / float(semi.max()))
        return vertices * semi, faces

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
    inertia is zero. `mesh_arrays` (and `massmodel.cad.primitives.to_solid` / `to_mesh`) give a small marker
    sphere for display only; `surface_points` gives the point itself.
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

    def _surface_samples(self, n: int) -> np.ndarray:
        return np.zeros((1, 3))

    def marker(self, marker_radius: float = 0.01) -> Sphere:
        """The display marker: a sphere of `marker_radius` (m, > 0) centred on the point."""
        return Sphere(_as_length(self.kind, "marker_radius", marker_radius))

    def mesh_arrays(self, chord_tolerance: float, marker_radius: float = 0.01) -> tuple[np.ndarray, np.ndarray]:
        """Display marker: a sphere of `marker_radius` (m) meshed within `chord_tolerance` (m), in metres."""
        return self.marker(marker_radius).mesh_arrays(chord_tolerance)

    def _mesh_arrays(self, chord_tolerance: float) -> tuple[np.ndarray, np.ndarray]:
        return self.mesh_arrays(chord_tolerance)
