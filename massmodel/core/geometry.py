"""Numpy geometry behind the round primitive solids: meridian profiles, triangle meshes and surface samples.

This module holds the geometry of solids of revolution that `massmodel.core.shapes` builds on: meridian profiles,
triangle meshes (with a chord-error budget) and surface samples. Planar polygons and the prisms over them are in
`massmodel.core.polygons`. It knows nothing of the shape classes and imports numpy only; the CAD solids and trimesh
wrappers of the shapes live in `massmodel.cad.primitives`.

Conventions
-----------
- Lengths are metres (any consistent unit works: nothing here converts).
- A meridian profile is a closed loop in the half plane (r >= 0, z) traversed counter-clockwise (the
  material on the left when r points right and z points up). Loop edges lying on the axis r = 0 are
  interior to the solid: they sweep no surface.
- Meshes are returned as (vertices, faces) arrays with outward-facing counter-clockwise triangles.

References
----------
.. [1] Sagitta of a circular chord: a chord spanning the angle 2·α on a circle of radius r lies at most
   r·(1 − cos α) from the arc (elementary geometry).
.. [2] Pappus's centroid theorem: the area swept by a plane curve revolved about an axis in its plane is the
   curve length times the distance travelled by its centroid.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from massmodel.core.errors import UserError

# Fewest facets used around a full circle, whatever the tolerance (keeps coarse meshes recognisable).
MIN_SEGMENTS_PER_TURN = 12
# Refuse tolerances that would need more facets than this around one circle (memory guard).
MAX_SEGMENTS_PER_TURN = 100_000


class ToleranceTooSmall(UserError, ValueError):
    """The requested chord tolerance needs more facets than `MAX_SEGMENTS_PER_TURN` around one circle."""


def segments_for_arc(radius: float, sweep: float, chord_tolerance: float) -> int:
    """Number of equal chords approximating an arc within a chord error.

    Parameters
    ----------
    radius : float
        Arc radius, any length unit.
    sweep : float
        Swept angle, rad, > 0.
    chord_tolerance : float
        Largest allowed distance between a chord and its arc, same unit as `radius`.

    Returns
    -------
    int
        Smallest count m with radius·(1 − cos(sweep / (2 m))) <= chord_tolerance [1]_, but at least the
        share of `MIN_SEGMENTS_PER_TURN` for this sweep.

    Raises
    ------
    ToleranceTooSmall
        If more than `MAX_SEGMENTS_PER_TURN` chords per full turn would be needed.
    """
    floor = max(1, math.ceil(MIN_SEGMENTS_PER_TURN * sweep / (2.0 * math.pi) - 1e-9))
    if radius <= 0.0 or chord_tolerance >= radius:
        return floor
    half_angle = math.acos(1.0 - chord_tolerance / radius)
    count = max(floor, math.ceil(sweep / (2.0 * half_angle) - 1e-12))
    while radius * (1.0 - math.cos(sweep / (2.0 * count))) > chord_tolerance:
        count += 1  # guard against rounding in acos
    if count * 2.0 * math.pi / sweep > MAX_SEGMENTS_PER_TURN:
        raise ToleranceTooSmall(
            f"a chord tolerance of {chord_tolerance:g} on a radius of {radius:g} needs about "
            f"{count} facets over {math.degrees(sweep):g} degrees (limit {MAX_SEGMENTS_PER_TURN} per turn)"
        )
    return count


# --------------------------------------------------------------------------------------------------
# Meridian profiles
# --------------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class ProfileLine:
    """Straight meridian edge from `start` to `end`, each (r, z)."""

    start: tuple[float, float]
    end: tuple[float, float]

    def on_axis(self) -> bool:
        """True when both ends lie on the axis (the edge sweeps no surface)."""
        return self.start[0] == 0.0 and self.end[0] == 0.0

    def length(self) -> float:
        """Edge length."""
        return math.hypot(self.end[0] - self.start[0], self.end[1] - self.start[1])

    def swept_area(self) -> float:
        """Area of the surface swept by one full turn about the axis (Pappus [2]_)."""
        return math.pi * (self.start[0] + self.end[0]) * self.length()

    def points(self, count: int) -> np.ndarray:
        """`count` + 1 points from start to end inclusive, (count + 1, 2)."""
        t = np.linspace(0.0, 1.0, count + 1)[:, None]
        pts = (1.0 - t) * np.asarray(self.start) + t * np.asarray(self.end)
        pts[0], pts[-1] = self.start, self.end
        return pts

    def chords(self, chord_tolerance: float) -> int:
        """Chords needed for the tolerance: a line needs one."""
        return 1


@dataclass(frozen=True, slots=True)
class ProfileArc:
    """Circular meridian arc: centre (r, z), radius, from angle `angle_start` to `angle_end` (rad).

    The point at angle φ is centre + radius·(cos φ, sin φ); the arc runs counter-clockwise when
    `angle_end` > `angle_start`. `start` and `end` are the exact end points (given, not recomputed, so
    that end points on the axis have r exactly 0).
    """

    centre: tuple[float, float]
    radius: float
    angle_start: float
    angle_end: float
    start: tuple[float, float]
    end: tuple[float, float]

    def on_axis(self) -> bool:
        """Arcs always sweep a surface."""
        return False

    def length(self) -> float:
        """Arc length."""
        return self.radius * abs(self.angle_end - self.angle_start)

    def swept_area(self) -> float:
        """Area swept by one full turn about the axis: 2π ∫ r ds (Pappus [2]_)."""
        a0, a1 = sorted((self.angle_start, self.angle_end))
        return (
            2.0
            * math.pi
            * self.radius
            * (self.centre[0] * (a1 - a0) + self.radius * (math.sin(a1) - math.sin(a0)))
        )

    def points(self, count: int) -> np.ndarray:
        """`count` + 1 points along the arc, end points exact, (count + 1, 2)."""
        phi = np.linspace(self.angle_start, self.angle_end, count + 1)
        pts = np.column_stack(
            (self.centre[0] + self.radius * np.cos(phi), self.centre[1] + self.radius * np.sin(phi))
        )
        pts[0], pts[-1] = self.start, self.end
        pts[:, 0] = np.maximum(pts[:, 0], 0.0)
        return pts

    def chords(self, chord_tolerance: float) -> int:
        """Chords needed to stay within `chord_tolerance` of the arc [1]_."""
        return segments_for_arc(self.radius, abs(self.angle_end - self.angle_start), chord_tolerance)


ProfileSegment = ProfileLine | ProfileArc


def arc(centre: tuple[float, float], radius: float, angle_start: float, angle_end: float) -> ProfileArc:
    """Build a `ProfileArc`, snapping end points within 1e-15·radius of the axis onto it."""

    def point(phi: float) -> tuple[float, float]:
        r = centre[0] + radius * math.cos(phi)
        z = centre[1] + radius * math.sin(phi)
        return (0.0 if abs(r) <= 1e-15 * radius else r, z)

    return ProfileArc(centre, radius, angle_start, angle_end, point(angle_start), point(angle_end))


def profile_area(profile: Sequence[ProfileSegment]) -> float:
    """Area of the surface of revolution swept by a profile (axis edges excluded)."""
    return sum(seg.swept_area() for seg in profile if not seg.on_axis())


def _loop_points(profile: Sequence[ProfileSegment], chord_tolerance: float) -> np.ndarray:
    """Closed profile loop as (K, 2) points (last point not repeated), chords within the tolerance."""
    parts = [seg.points(seg.chords(chord_tolerance))[:-1] for seg in profile]
    return np.concatenate(parts, axis=0)


def revolve_mesh(profile: Sequence[ProfileSegment], chord_tolerance: float) -> tuple[np.ndarray, np.ndarray]:
    """Triangle mesh of the solid swept by a closed meridian profile about the z axis.

    Parameters
    ----------
    profile : sequence of ProfileLine | ProfileArc
        Closed counter-clockwise loop in the (r, z) half plane, m.
    chord_tolerance : float
        Largest distance between the mesh and the exact surface, m.

    Returns
    -------
    vertices : (V, 3) float
        m, solid frame.
    faces : (F, 3) int
        Outward counter-clockwise triangles.

    Notes
    -----
    The budget is split: curved profile edges get half of the tolerance and the facets around the axis
    the other half (all of it when the profile is straight). Each planar trapezoid between two rings lies
    within (ring sagitta) of the exact polygonal surface of revolution, which lies within the profile's chord
    error of the true surface, so the two errors add at most to the tolerance [1]_.
    """
    curved = any(isinstance(seg, ProfileArc) for seg in profile)
    profile_tol = 0.5 * chord_tolerance if curved else chord_tolerance
    around_tol = chord_tolerance - profile_tol if curved else chord_tolerance
    loop = _loop_points(profile, profile_tol)
    r_max = float(loop[:, 0].max())
    n = segments_for_arc(r_max, 2.0 * math.pi, around_tol)
    theta = 2.0 * math.pi * np.arange(n) / n
    cos_t, sin_t = np.cos(theta), np.sin(theta)

    vertices: list[np.ndarray] = []
    rings: list[np.ndarray] = []  # per loop point: vertex indices (n,) or a single axis index (1,)
    count = 0
    for r, z in loop:
        if r == 0.0:
            vertices.append(np.array([[0.0, 0.0, z]]))
            rings.append(np.array([count]))
            count += 1
        else:
            vertices.append(np.column_stack((r * cos_t, r * sin_t, np.full(n, z))))
            rings.append(count + np.arange(n))
            count += n

    faces: list[np.ndarray] = []
    k_count = len(loop)
    for k in range(k_count):
        ring_a, ring_b = rings[k], rings[(k + 1) % k_count]
        if ring_a.size == 1 and ring_b.size == 1:
            continue  # edge on the axis: interior, sweeps nothing
        if ring_a.size == 1:
            p = np.full(n, ring_a[0])
            faces.append(np.column_stack((p, np.roll(ring_b, -1), ring_b)))
        elif ring_b.size == 1:
            q = np.full(n, ring_b[0])
            faces.append(np.column_stack((ring_a, np.roll(ring_a, -1), q)))
        else:
            a, b = ring_a, np.roll(ring_a, -1)
            c, d = np.roll(ring_b, -1), ring_b
            faces.append(np.column_stack((a, b, c)))
            faces.append(np.column_stack((a, c, d)))
    return np.concatenate(vertices, axis=0), np.concatenate(faces, axis=0).astype(np.int64)


#: Most surface samples of one solid of revolution (see :func:`revolve_samples`).
MAX_REVOLVE_SAMPLES = 2_000_000


def revolve_samples(profile: Sequence[ProfileSegment], n: int) -> np.ndarray:
    """About `n` points evenly spread over the surface swept by a profile, rims and poles included.

    Points are laid along each profile edge at a spacing h = sqrt(area / n) (edge end points included)
    and each such point is swept into a ring of round(2π r / h) points (one point on the axis). For slender
    profiles h grows so that the profile holds at most 64 n points and the surface about
    :data:`MAX_REVOLVE_SAMPLES`, whatever the proportions.

    Returns
    -------
    (M, 3) float
        m, solid frame, each point exactly on the surface (to rounding).
    """
    n = max(n, 1)
    spacing = math.sqrt(profile_area(profile) / n)
    # Bounds for slivers (a 1e-6 mm hole 10 mm deep): at most 64 n points along the profile and about
    # MAX_REVOLVE_SAMPLES on the surface (surface area / spacing²); ordinary shapes never reach them.
    edges = [seg for seg in profile if not seg.on_axis()]
    perimeter = sum(seg.length() for seg in edges)
    surface = sum(2.0 * math.pi * float(np.mean(seg.points(8)[:, 0])) * seg.length() for seg in edges)
    spacing = max(spacing, perimeter / (64 * n), math.sqrt(surface / MAX_REVOLVE_SAMPLES))
    meridian = []
    for seg in profile:
        if seg.on_axis():
            continue
        meridian.append(seg.points(max(1, math.ceil(seg.length() / spacing))))
    pts_2d = np.concatenate(meridian, axis=0)
    # each meridian point (r, z) sweeps a ring of m points at θ_j = 2π j / m (one point on the axis), all rings at
    # once: the same numbers, in the same order, as ring after ring
    counts = np.array([max(3, round(2.0 * math.pi * r / spacing)) if r > 0.0 else 1
                       for r in pts_2d[:, 0].tolist()], dtype=np.int64)
    ring = np.repeat(np.arange(len(counts)), counts)
    step = np.arange(len(ring)) - np.repeat(np.cumsum(counts) - counts, counts)  # j within each ring
    theta = 2.0 * math.pi * step / counts[ring]
    r, z = pts_2d[ring, 0], pts_2d[ring, 1]
    return unique_rows(np.column_stack((r * np.cos(theta), r * np.sin(theta), z)))


def unique_rows(points: np.ndarray) -> np.ndarray:
    """Drop exact duplicate rows, keeping the first occurrence in order (deterministic; the rows that
    ``np.unique(points, axis=0, return_index=True)`` keeps, with one stable sort of the columns)."""
    if len(points) < 2:
        return points
    order = np.lexsort(points.T[::-1])  # stable: the first of equal rows comes first
    ranked = points[order]
    first = np.ones(len(points), bool)
    first[1:] = np.any(ranked[1:] != ranked[:-1], axis=1)
    return points[np.sort(order[first])]
