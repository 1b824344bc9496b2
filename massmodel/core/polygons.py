"""Numpy geometry of planar polygons and the prisms over them (the ``extrusion`` shape's outline).

Predicates (simplicity, containment, distance to the boundary), area moments, ear-clipping triangulation, and the
closed triangle mesh and surface samples of a prism. Imports numpy only; split from
:mod:`massmodel.core.geometry` (profiles and solids of revolution), which keeps the same conventions.

Conventions
-----------
- Lengths are metres (any consistent unit works: nothing here converts).
- A polygon is an (N, 2) array of corners, not repeating the first; counter-clockwise means positive area.
- Meshes are returned as (vertices, faces) arrays with outward-facing counter-clockwise triangles.

The sources are cited where they are used: Meisters (1975) for the ear clipping of :func:`triangulate_polygon`,
Steger (1996) for the moments of :func:`polygon_moments`.
"""

from __future__ import annotations

import math
from collections.abc import Iterator

import numpy as np

from massmodel.core.geometry import unique_rows


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
    return unique_rows(np.vstack((walls, caps)))
