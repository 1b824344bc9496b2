"""Numpy geometry behind the primitive solids: profiles, polygons, triangle meshes and surface samples.

This module holds the geometry that `massmodel.core.shapes` builds on: meridian profiles of solids of
revolution, prisms over planar polygons, polygon predicates and area moments, triangle meshes (with a
chord-error budget) and surface samples. It knows nothing of the shape classes and imports numpy only; the
CAD solids and trimesh wrappers of the shapes live in `massmodel.cad.primitives`.

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
from collections.abc import Iterator, Sequence
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
    return _unique_rows(np.column_stack((r * np.cos(theta), r * np.sin(theta), z)))


def _unique_rows(points: np.ndarray) -> np.ndarray:
    """Drop exact duplicate rows, keeping the first occurrence in order (deterministic; the rows that
    ``np.unique(points, axis=0, return_index=True)`` keeps, with one stable sort of the columns)."""
    if len(points) < 2:
        return points
    order = np.lexsort(points.T[::-1])  # stable: the first of equal rows comes first
    ranked = points[order]
    first = np.ones(len(points), bool)
    first[1:] = np.any(ranked[1:] != ranked[:-1], axis=1)
    return points[np.sort(order[first])]


# --------------------------------------------------------------------------------------------------
# Planar polygons and prisms
# --------------------------------------------------------------------------------------------------


def signed_area(xy: np.ndarray) -> float:
    """Shoelace signed area of a closed polygon (N, 2); positive when counter-clockwise."""
    x, y = xy[:, 0], xy[:, 1]
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


def drop_collinear(xy: np.ndarray, eps: float) -> np.ndarray:
    """Remove vertices whose two edges are collinear and continue straight on (|cross| <= eps)."""
    keep = []
    n = len(xy)
    for i in range(n):
        prev, cur, nxt = xy[i - 1], xy[i], xy[(i + 1) % n]
        d1, d2 = cur - prev, nxt - cur
        cross = d1[0] * d2[1] - d1[1] * d2[0]
        if abs(cross) > eps or float(np.dot(d1, d2)) < 0.0:
            keep.append(i)
    return xy[keep]


#: Most corners of one polygon outline (an extrusion profile): far more than a drawn profile needs, and a bound
#: on the work of the simplicity check.
MAX_POLYGON_CORNERS = 5000


def _overlapping_pairs(lo: np.ndarray, hi: np.ndarray, chunk: int = 1 << 18) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """Pairs (i, j), i < j, of intervals [lo, hi] that overlap, in chunks (sorted sweep: O(n log n + pairs)).

    Intervals are sorted by ``lo``; the partners of interval k are the later ones starting before ``hi[k]``.
    """
    order = np.argsort(lo, kind="stable")
    lo_s, hi_s = lo[order], hi[order]
    stop = np.searchsorted(lo_s, hi_s, side="right")  # partners of k are k+1 .. stop[k]-1 in sorted order
    counts = np.maximum(stop - np.arange(len(lo)) - 1, 0)
    start_k = 0
    while start_k < len(lo):
        total = np.cumsum(counts[start_k:])
        end_k = start_k + max(1, int(np.searchsorted(total, chunk, side="right")))
        ks = np.arange(start_k, end_k)
        rep = counts[ks]
        if rep.sum():
            first = np.repeat(ks, rep)
            offsets = np.arange(rep.sum()) - np.repeat(np.cumsum(rep) - rep, rep)
            second = first + 1 + offsets
            a, b = order[first], order[second]
            yield np.minimum(a, b), np.maximum(a, b)
        start_k = end_k


def polygon_problem(xy: np.ndarray) -> str | None:
    """Why a closed polygon (N >= 3, 2) is not simple, or None when it is.

    Rejected, in this order: more than :data:`MAX_POLYGON_CORNERS` corners, repeated corners (any two), all
    corners on one line, adjacent edges folding back over each other, any pair of non-adjacent edges that cross or
    touch, zero area. Coincidence and collinearity are judged with tolerances relative to the outline size (1e-12 of
    it, of its square for areas). Candidate pairs come from a sweep over sorted x extents (memory linear in N; time
    N log N plus the pairs whose x extents overlap).
    """
    n = len(xy)
    if n > MAX_POLYGON_CORNERS:
        return f"{n} corners: an outline has at most {MAX_POLYGON_CORNERS} (simplify the profile)"
    scale = float(np.ptp(xy, axis=0).max())
    tol = 1e-12 * max(scale, 1e-300)
    twins = [min(zip(i[same].tolist(), j[same].tolist(), strict=True))
             for i, j in _overlapping_pairs(xy[:, 0] - tol, xy[:, 0] + tol)
             if np.any(same := np.hypot(*(xy[i] - xy[j]).T) <= tol)]
    if twins:
        a, b = min(twins)
        return f"corners {a} and {b} coincide at ({xy[a, 0]:g}, {xy[a, 1]:g}) m"
    eps = 1e-12 * scale * scale
    centred = xy - xy.mean(axis=0)
    if np.linalg.svd(centred, compute_uv=False)[-1] <= 1e-12 * scale:
        return "the corners are collinear (the outline encloses no area)"
    for k in range(n):
        d1, d2 = xy[k] - xy[k - 1], xy[(k + 1) % n] - xy[k]
        if abs(d1[0] * d2[1] - d1[1] * d2[0]) <= eps and float(np.dot(d1, d2)) < 0.0:
            return f"the edges meeting at corner {k} fold back over each other"
    start, end = xy, np.roll(xy, -1, axis=0)
    x_lo, x_hi = np.minimum(start[:, 0], end[:, 0]), np.maximum(start[:, 0], end[:, 0])
    y_lo, y_hi = np.minimum(start[:, 1], end[:, 1]), np.maximum(start[:, 1], end[:, 1])
    first_hit: tuple[int, int] | None = None
    for ei, ej in _overlapping_pairs(x_lo - tol, x_hi + tol):
        keep = (ej - ei >= 2) & ~((ei == 0) & (ej == n - 1))  # not the same edge nor neighbours
        keep &= (y_lo[ei] <= y_hi[ej] + tol) & (y_lo[ej] <= y_hi[ei] + tol)
        ei, ej = ei[keep], ej[keep]
        if len(ei):
            hit = segments_intersect(start[ei], end[ei], start[ej], end[ej], eps)
            if np.any(hit):
                found = min(zip(ei[hit].tolist(), ej[hit].tolist(), strict=True))
                first_hit = found if first_hit is None else min(first_hit, found)
    if first_hit is not None:
        a, b = first_hit
        return f"edge {a}-{(a + 1) % n} meets edge {b}-{(b + 1) % n} (the outline must not cross itself)"
    if abs(signed_area(xy)) <= eps:
        return "the outline encloses no area"
    return None


def polygon_moments(xy: np.ndarray) -> tuple[float, np.ndarray, np.ndarray]:
    """Area, centroid and centroidal second moments of a counter-clockwise simple polygon.

    Parameters
    ----------
    xy : (N, 2) float
        Corners, counter-clockwise, m.

    Returns
    -------
    area : float
        m².
    centroid : (2,) float
        m.
    second : (2, 2) float
        [[S_xx, S_xy], [S_xy, S_yy]] with S_xx = ∫(x − x̄)² dA, S_xy = ∫(x − x̄)(y − ȳ) dA, m⁴.

    Notes
    -----
    Green's-theorem (shoelace) sums, evaluated about the corner mean to limit cancellation, then shifted
    to the centroid by the parallel-axis theorem.

    References
    ----------
    .. [4] Steger, C. (1996). On the calculation of arbitrary moments of polygons. Technical report
       FGBV-96-05, TU München.
    """
    ref = xy.mean(axis=0)
    x, y = (xy - ref).T
    x1, y1 = np.roll(x, -1), np.roll(y, -1)
    c = x * y1 - x1 * y
    area = 0.5 * float(np.sum(c))
    cx = float(np.sum((x + x1) * c)) / 6.0 / area
    cy = float(np.sum((y + y1) * c)) / 6.0 / area
    sxx = float(np.sum((x * x + x * x1 + x1 * x1) * c)) / 12.0 - area * cx * cx
    syy = float(np.sum((y * y + y * y1 + y1 * y1) * c)) / 12.0 - area * cy * cy
    sxy = float(np.sum((x * y1 + 2.0 * x * y + 2.0 * x1 * y1 + x1 * y) * c)) / 24.0 - area * cx * cy
    return area, np.array([cx, cy]) + ref, np.array([[sxx, sxy], [sxy, syy]])


def point_in_polygon(points_xy: np.ndarray, polygon: np.ndarray) -> np.ndarray:
    """Even-odd crossing test of points (N, 2) against a closed polygon (K, 2); boundary undefined."""
    x, y = points_xy[:, 0:1], points_xy[:, 1:2]
    x0, y0 = polygon[:, 0], polygon[:, 1]
    x1, y1 = np.roll(x0, -1), np.roll(y0, -1)
    straddle = (y0 > y) != (y1 > y)
    with np.errstate(divide="ignore", invalid="ignore"):
        x_cross = x0 + (y - y0) * (x1 - x0) / (y1 - y0)
    crossings = straddle & (x < x_cross)
    return np.asarray(np.count_nonzero(crossings, axis=1) % 2 == 1)


def distance_to_polygon_boundary(points_xy: np.ndarray, polygon: np.ndarray) -> np.ndarray:
    """Euclidean distance from points (N, 2) to the edges of a closed polygon (K, 2), (N,)."""
    a = polygon[None, :, :]
    b = np.roll(polygon, -1, axis=0)[None, :, :]
    p = points_xy[:, None, :]
    ab = b - a
    t = np.clip(np.sum((p - a) * ab, axis=2) / np.sum(ab * ab, axis=2), 0.0, 1.0)
    nearest = a + t[:, :, None] * ab
    return np.asarray(np.min(np.linalg.norm(p - nearest, axis=2), axis=1))


def segments_intersect(
    p1: np.ndarray, p2: np.ndarray, q1: np.ndarray, q2: np.ndarray, eps: float
) -> np.ndarray:
    """Whether closed segments p1p2 and q1q2 meet (touching counts), vectorised over rows (N, 2).

    Orientation values with magnitude <= eps count as zero (collinear).
    """

    def orient(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> np.ndarray:
        value = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
        return np.where(np.abs(value) <= eps, 0.0, np.sign(value))

    o1, o2 = orient(p1, p2, q1), orient(p1, p2, q2)
    o3, o4 = orient(q1, q2, p1), orient(q1, q2, p2)
    collinear = (o1 == 0.0) & (o2 == 0.0)
    general = (o1 * o2 <= 0.0) & (o3 * o4 <= 0.0) & ~collinear
    overlap = np.all(
        (np.maximum(p1, p2) >= np.minimum(q1, q2)) & (np.maximum(q1, q2) >= np.minimum(p1, p2)), axis=1
    )
    return np.asarray(general | (collinear & overlap))


def triangulate_polygon(xy: np.ndarray) -> np.ndarray:
    """Ear-clipping triangulation of a simple counter-clockwise polygon without collinear vertices.

    Parameters
    ----------
    xy : (N, 2) float
        Vertices, counter-clockwise, N >= 3.

    Returns
    -------
    (N - 2, 3) int
        Counter-clockwise triangles as vertex indices.

    References
    ----------
    .. [3] Meisters, G. H. (1975). Polygons have ears. American Mathematical Monthly 82(6), 648-651.
    """
    remaining = list(range(len(xy)))
    scale = float(np.ptp(xy, axis=0).max())
    eps = 1e-14 * scale * scale
    triangles: list[tuple[int, int, int]] = []
    while len(remaining) > 3:
        m = len(remaining)
        best, best_cross = -1, -math.inf
        for pos in range(m):
            i, j, k = remaining[pos - 1], remaining[pos], remaining[(pos + 1) % m]
            a, b, c = xy[i], xy[j], xy[k]
            cross = (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
            if cross <= eps:
                continue  # reflex or flat corner: not an ear
            idx = np.asarray(remaining)
            others = idx[(idx != i) & (idx != j) & (idx != k)]
            if len(others) and _any_in_triangle(xy[others], a, b, c, eps):
                continue
            best, best_cross = pos, cross
            break
        if best < 0:  # only reachable through rounding on nearly degenerate input: clip the widest corner
            for pos in range(m):
                i, j, k = remaining[pos - 1], remaining[pos], remaining[(pos + 1) % m]
                a, b, c = xy[i], xy[j], xy[k]
                cross = (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
                if cross > best_cross:
                    best, best_cross = pos, cross
        i, j, k = remaining[best - 1], remaining[best], remaining[(best + 1) % m]
        triangles.append((i, j, k))
        del remaining[best]
    triangles.append((remaining[0], remaining[1], remaining[2]))
    return np.asarray(triangles, dtype=np.int64)


def _any_in_triangle(pts: np.ndarray, a: np.ndarray, b: np.ndarray, c: np.ndarray, eps: float) -> bool:
    """Whether any point (N, 2) lies inside or on the counter-clockwise triangle abc."""

    def side(p: np.ndarray, q: np.ndarray) -> np.ndarray:
        return (q[0] - p[0]) * (pts[:, 1] - p[1]) - (q[1] - p[1]) * (pts[:, 0] - p[0])

    return bool(np.any((side(a, b) >= -eps) & (side(b, c) >= -eps) & (side(c, a) >= -eps)))


def prism_mesh(xy: np.ndarray, z0: float, z1: float) -> tuple[np.ndarray, np.ndarray]:
    """Exact triangle mesh of a prism: counter-clockwise polygon (N, 2) swept from z0 to z1 (z1 > z0).

    Returns
    -------
    vertices : (2N, 3) float
        Bottom ring then top ring, m.
    faces : (F, 3) int
        Outward counter-clockwise triangles.
    """
    n = len(xy)
    vertices = np.vstack((np.column_stack((xy, np.full(n, z0))), np.column_stack((xy, np.full(n, z1)))))
    cap = triangulate_polygon(xy)
    bottom = cap[:, ::-1]  # normal −z
    top = cap + n  # normal +z
    i = np.arange(n)
    j = np.roll(i, -1)
    sides = np.vstack((np.column_stack((i, j, j + n)), np.column_stack((i, j + n, i + n))))
    return vertices, np.vstack((bottom, top, sides)).astype(np.int64)


def prism_samples(xy: np.ndarray, z0: float, z1: float, n: int) -> np.ndarray:
    """About `n` points spread over a prism's surface, corners and edges included.

    The outline is sampled at a spacing h = sqrt(area / n) with every vertex kept; the side walls get
    these points at z levels spaced <= h (z0 and z1 included); each cap adds the points of a square grid
    of pitch h that fall strictly inside the polygon.

    Returns
    -------
    (M, 3) float
        m, prism frame, on the surface.
    """
    perimeter = float(np.sum(np.linalg.norm(np.roll(xy, -1, axis=0) - xy, axis=1)))
    cap_area = abs(signed_area(xy))
    height = z1 - z0
    spacing = math.sqrt((2.0 * cap_area + perimeter * height) / max(n, 1))
    outline = []
    for k in range(len(xy)):
        a, b = xy[k], xy[(k + 1) % len(xy)]
        count = max(1, math.ceil(float(np.linalg.norm(b - a)) / spacing))
        t = np.arange(count)[:, None] / count
        outline.append(a + t * (b - a))
    ring = np.concatenate(outline, axis=0)
    z_levels = np.linspace(z0, z1, max(2, math.ceil(height / spacing) + 1))
    walls = np.column_stack((np.tile(ring, (len(z_levels), 1)), np.repeat(z_levels, len(ring))))
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    gx = np.arange(lo[0] + 0.5 * spacing, hi[0], spacing)
    gy = np.arange(lo[1] + 0.5 * spacing, hi[1], spacing)
    grid = np.array(np.meshgrid(gx, gy, indexing="ij")).reshape(2, -1).T
    if len(grid):
        inside = point_in_polygon(grid, xy) & (distance_to_polygon_boundary(grid, xy) > 1e-6 * spacing)
        grid = grid[inside]
    caps = np.vstack(
        (np.column_stack((grid, np.full(len(grid), z0))), np.column_stack((grid, np.full(len(grid), z1))))
    )
    return _unique_rows(np.vstack((walls, caps)))
