"""Tests for massmodel.core.shapes: primitive solids against handbook closed forms and two independent oracles.

Sources (see docs/references.md §1):
- closed forms: Machinery's Handbook 31st ed. pp.253-254 (R), Wikipedia "List of moment of inertia tensors" (R),
  rows flagged V derived here (derivation named beside the check);
- OpenCascade through OCP (`BRepGProp.VolumeProperties_s`, `GProp_GProps.MatrixOfInertia`: about the centre
  of mass, off-diagonals −∫xy dm), on solids built independently in this file with cadquery operations;
- trimesh (`Trimesh.volume`, `Trimesh.moment_inertia`: about the centre of mass, same sign convention).
Sizes are all different (no 1.0, no equal axes) so that a swapped axis would show.
"""

from __future__ import annotations

import dataclasses
import math
import subprocess
import sys
from typing import Any

import cadquery as cq
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib.path import Path as MplPath
from OCP.BRepAlgoAPI import BRepAlgoAPI_Cut
from OCP.BRepClass3d import BRepClass3d_SolidClassifier
from OCP.BRepGProp import BRepGProp
from OCP.gp import gp_Pnt
from OCP.GProp import GProp_GProps
from OCP.TopAbs import TopAbs_IN, TopAbs_ON, TopAbs_SOLID
from OCP.TopoDS import TopoDS_Shape
from scipy.spatial import cKDTree
from scipy.spatial.transform import Rotation

from massmodel.cad.primitives import to_mesh, to_solid
from massmodel.core.shapes import (
    SHAPE_KINDS,
    Box,
    Cone,
    Cylinder,
    Ellipsoid,
    Extrusion,
    Frustum,
    Hemisphere,
    PointMass,
    Shape,
    ShapeError,
    Sphere,
    SphericalShell,
    Torus,
    Tube,
    Wedge,
    shape_from_params,
)

# An L-shaped outline, clockwise, away from the origin (concave corner at (0.05, 0.04)).
L_OUTLINE = ((0.02, 0.01), (0.02, 0.13), (0.05, 0.13), (0.05, 0.04), (0.11, 0.04), (0.11, 0.01))
# A slanted, non-convex pentagon (counter-clockwise) with a non-zero product of inertia.
SLANT_OUTLINE = ((-0.03, -0.02), (0.09, 0.01), (0.05, 0.035), (0.07, 0.08), (-0.01, 0.05))

SAMPLES: dict[str, Shape] = {
    "box": Box(0.31, 0.17, 0.093),
    "cylinder": Cylinder(0.045, 0.23),
    "tube": Tube(0.06, 0.041, 0.37),
    "sphere": Sphere(0.083),
    "spherical_shell": SphericalShell(0.12, 0.095),
    "hemisphere": Hemisphere(0.071),
    "cone": Cone(0.052, 0.19),
    "frustum": Frustum(0.08, 0.035, 0.14),
    "frustum_top_larger": Frustum(0.03, 0.07, 0.11),
    "wedge": Wedge(0.21, 0.064, 0.115),
    "extrusion_l": Extrusion(L_OUTLINE, 0.012),
    "extrusion_slant": Extrusion(SLANT_OUTLINE, 0.027),
    "torus": Torus(0.18, 0.027),
    "ellipsoid": Ellipsoid(0.15, 0.09, 0.04),
}
NAMES = list(SAMPLES)


def assert_tensor_close(actual: np.ndarray, expected: np.ndarray, rtol: float) -> None:
    """Scale-aware comparison: tolerance relative to the largest entry of `expected` (zero entries compare)."""
    actual, expected = np.asarray(actual, float), np.asarray(expected, float)
    scale = max(float(np.abs(expected).max()), 1e-300)
    assert np.abs(actual - expected).max() <= rtol * scale, (actual, expected)


def size_of(shape: Shape) -> float:
    return float(np.ptp(shape.bounds(), axis=0).max())


# ----------------------------------------------------------------------------------------------------------
# Independent oracles written in this file
# ----------------------------------------------------------------------------------------------------------


def ocp_props(solid: cq.Shape) -> tuple[float, np.ndarray, np.ndarray]:
    """OpenCascade volume (m³), centroid (m) and unit-density inertia (m⁵) of a solid modelled in mm.

    mm → m: volume × 1e-9, centroid × 1e-3, inertia per density × 1e-15 (length⁵). The adaptive
    integrator (eps = 1e-14) is used so that the NURBS ellipsoid is integrated to ~1e-10 too.
    """
    props = GProp_GProps()
    BRepGProp.VolumeProperties_s(getattr(solid, "wrapped", solid), props, 1e-14)  # a cadquery or an OCP shape
    c = props.CentreOfMass()
    m = props.MatrixOfInertia()
    inertia = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)])
    return props.Mass() * 1e-9, np.array([c.X(), c.Y(), c.Z()]) * 1e-3, inertia * 1e-15


def independent_cad_mm(shape: Shape) -> Any:
    """The same solid built here with cadquery workplane operations (not through `to_solid`), in mm."""
    s: object = shape
    k = 1000.0
    xz_axis = ((0, 0, 0), (0, 1, 0))  # on an "XZ" workplane local y is global +Z
    if isinstance(s, Box):
        return cq.Workplane("XY").box(k * s.size_x, k * s.size_y, k * s.size_z).val()
    if isinstance(s, Cylinder):
        return cq.Workplane("XY").cylinder(k * s.length, k * s.radius).val()
    if isinstance(s, Tube):
        outer = cq.Workplane("XY").cylinder(k * s.length, k * s.outer_radius)
        return outer.cut(cq.Workplane("XY").cylinder(k * s.length, k * s.inner_radius)).val()
    if isinstance(s, Sphere):
        return cq.Workplane("XY").sphere(k * s.radius).val()
    if isinstance(s, SphericalShell):
        outer = cq.Workplane("XY").sphere(k * s.outer_radius)
        return outer.cut(cq.Workplane("XY").sphere(k * s.inner_radius)).val()
    if isinstance(s, Hemisphere):
        r = k * s.radius
        mid = (r * math.cos(math.pi / 4), r * math.sin(math.pi / 4))
        quarter = cq.Workplane("XZ").moveTo(0, 0).lineTo(r, 0).threePointArc(mid, (0, r)).close()
        return quarter.revolve(360, *xz_axis).val()
    if isinstance(s, Cone):
        return (
            cq.Workplane("XZ")
            .polyline([(0, 0), (k * s.radius, 0), (0, k * s.height)])
            .close()
            .revolve(360, *xz_axis)
            .val()
        )
    if isinstance(s, Frustum):
        pts = [(0, 0), (k * s.base_radius, 0), (k * s.top_radius, k * s.height), (0, k * s.height)]
        return cq.Workplane("XZ").polyline(pts).close().revolve(360, *xz_axis).val()
    if isinstance(s, Wedge):
        tri = [(0, 0), (k * s.leg_x, 0), (0, k * s.leg_y)]
        return cq.Workplane("XY").polyline(tri).close().extrude(k * s.length).val()
    if isinstance(s, Extrusion):
        pts = [(k * x, k * y) for x, y in s.vertices]
        return cq.Workplane("XY").polyline(pts).close().extrude(k * s.thickness).val()
    if isinstance(s, Torus):
        return (
            cq.Workplane("XZ")
            .moveTo(k * s.ring_radius, 0)
            .circle(k * s.tube_radius)
            .revolve(360, *xz_axis)
            .val()
        )
    if isinstance(s, Ellipsoid):
        scale = cq.Matrix(
            [[k * s.semi_x, 0, 0, 0], [0, k * s.semi_y, 0, 0], [0, 0, k * s.semi_z, 0], [0, 0, 0, 1]]
        )
        unit: Any = cq.Workplane("XY").sphere(1.0).val()
        return unit.transformGeometry(scale)
    raise AssertionError(shape)


def _segment_distance(q: np.ndarray, a: tuple[float, float], b: tuple[float, float]) -> np.ndarray:
    a_, b_ = np.asarray(a, float), np.asarray(b, float)
    ab = b_ - a_
    t = np.clip(((q - a_) @ ab) / (ab @ ab), 0.0, 1.0)
    return np.linalg.norm(q - (a_ + t[:, None] * ab), axis=1)


def _polyline_distance(q: np.ndarray, corners: list[tuple[float, float]]) -> np.ndarray:
    return np.min([_segment_distance(q, corners[i], corners[i + 1]) for i in range(len(corners) - 1)], axis=0)


def _prism_distance(p: np.ndarray, outline: list[tuple[float, float]], z0: float, z1: float) -> np.ndarray:
    """Exact distance to the boundary of a prism: min over side rectangles and the two cap polygons."""
    xy, z = p[:, :2], p[:, 2]
    inside_xy = MplPath(np.asarray(outline)).contains_points(xy)
    closed = [*outline, outline[0]]
    d_edge = _polyline_distance(xy, closed)
    dz_out = np.maximum(np.maximum(z0 - z, z - z1), 0.0)
    d_sides = np.hypot(d_edge, dz_out)
    d_in_plane = np.where(inside_xy, 0.0, d_edge)
    d_caps = np.minimum(np.hypot(d_in_plane, z - z0), np.hypot(d_in_plane, z - z1))
    return np.minimum(d_sides, d_caps)


def surface_distance(shape: Shape, p: np.ndarray) -> np.ndarray:
    """Distance (m) from points to the analytic boundary surface, written from the frame definitions.

    For the ellipsoid, the distance to the radial projection p/|p/s| (an upper bound of the true distance).
    """
    rho, z = np.hypot(p[:, 0], p[:, 1]), p[:, 2]
    q = np.column_stack((rho, z))
    r = np.linalg.norm(p, axis=1)
    s: object = shape
    if isinstance(s, Box):
        hx, hy, hz = s.size_x / 2, s.size_y / 2, s.size_z / 2
        return _prism_distance(p, [(-hx, -hy), (hx, -hy), (hx, hy), (-hx, hy)], -hz, hz)
    if isinstance(s, Wedge):
        return _prism_distance(p, [(0, 0), (s.leg_x, 0), (0, s.leg_y)], 0.0, s.length)
    if isinstance(s, Extrusion):
        return _prism_distance(p, list(s.vertices), 0.0, s.thickness)
    if isinstance(s, Cylinder):
        h = s.length / 2
        return _polyline_distance(q, [(0, -h), (s.radius, -h), (s.radius, h), (0, h)])
    if isinstance(s, Tube):
        h, ro, ri = s.length / 2, s.outer_radius, s.inner_radius
        return _polyline_distance(q, [(ri, -h), (ro, -h), (ro, h), (ri, h), (ri, -h)])
    if isinstance(s, Cone):
        return _polyline_distance(q, [(0, 0), (s.radius, 0), (0, s.height)])
    if isinstance(s, Frustum):
        return _polyline_distance(q, [(0, 0), (s.base_radius, 0), (s.top_radius, s.height), (0, s.height)])
    if isinstance(s, Sphere):
        return np.abs(r - s.radius)
    if isinstance(s, SphericalShell):
        return np.minimum(np.abs(r - s.outer_radius), np.abs(r - s.inner_radius))
    if isinstance(s, Hemisphere):
        on_arc_side = z >= 0.0
        ends = np.minimum(np.hypot(rho - s.radius, z), np.hypot(rho, z - s.radius))
        d_arc = np.where(on_arc_side, np.abs(r - s.radius), ends)
        return np.minimum(d_arc, _segment_distance(q, (0, 0), (s.radius, 0)))
    if isinstance(s, Torus):
        return np.abs(np.hypot(rho - s.ring_radius, z) - s.tube_radius)
    if isinstance(s, Ellipsoid):
        g = np.linalg.norm(p / np.array([s.semi_x, s.semi_y, s.semi_z]), axis=1)
        return np.linalg.norm(p - p / g[:, None], axis=1)
    raise AssertionError(shape)


# ----------------------------------------------------------------------------------------------------------
# 1. Handbook closed forms (docs/references.md §1), written out here
# ----------------------------------------------------------------------------------------------------------


def _gauss_01(n: int) -> tuple[np.ndarray, np.ndarray]:
    x, w = np.polynomial.legendre.leggauss(n)
    return (x + 1.0) / 2.0, w / 2.0


def handbook(shape: Shape) -> tuple[float, np.ndarray, np.ndarray]:
    """Expected volume, centroid and unit-density centroidal tensor from the closed forms."""
    s: object = shape
    zero = np.zeros(3)
    if isinstance(s, Box):
        # Machinery's Handbook pp.253-254 / Wikipedia tensor list, cuboid: I_w = m(h² + d²)/12 and cyclic (R).
        a, b, c = s.size_x, s.size_y, s.size_z
        m = a * b * c
        return (
            m,
            zero,
            np.diag([m * (b * b + c * c) / 12, m * (a * a + c * c) / 12, m * (a * a + b * b) / 12]),
        )
    if isinstance(s, Cylinder):
        # Handbook: I_axis = m r²/2; I_transverse = M(l²/3 + r²/4) with l the HALF-length (R).
        r, half = s.radius, s.length / 2
        m = math.pi * r * r * s.length
        t = m * (half * half / 3 + r * r / 4)
        return m, zero, np.diag([t, t, m * r * r / 2])
    if isinstance(s, Tube):
        # Handbook thick tube: I_axis = m(r1² + r2²)/2; I_transverse = m[3(r1² + r2²) + L²]/12 (R).
        r1, r2, length = s.outer_radius, s.inner_radius, s.length
        m = math.pi * (r1 * r1 - r2 * r2) * length
        t = m * (3 * (r1 * r1 + r2 * r2) + length * length) / 12
        return m, zero, np.diag([t, t, m * (r1 * r1 + r2 * r2) / 2])
    if isinstance(s, Sphere):
        # Handbook solid sphere: 2/5 m R² (R).
        m = 4 / 3 * math.pi * s.radius**3
        return m, zero, np.eye(3) * 0.4 * m * s.radius**2
    if isinstance(s, SphericalShell):
        # docs/references.md §1 thick shell (V): (2/5) m (R⁵ − r⁵)/(R³ − r³).
        big, small = s.outer_radius, s.inner_radius
        m = 4 / 3 * math.pi * (big**3 - small**3)
        return m, zero, np.eye(3) * 0.4 * m * (big**5 - small**5) / (big**3 - small**3)
    if isinstance(s, Hemisphere):
        # docs/references.md §1 hemisphere (V): centroid 3R/8 from the flat face; I_axis 2/5 m R²; transverse 83/320 m R².
        r = s.radius
        m = 2 / 3 * math.pi * r**3
        return m, np.array([0, 0, 3 * r / 8]), np.diag([83 / 320 * m * r * r] * 2 + [0.4 * m * r * r])
    if isinstance(s, Cone):
        # docs/references.md §1 cone (R, V): centroid h/4 above the base; I_axis 3/10 m r²; transverse about the centroid
        # 3/20 m r² + 3/80 m h² (equivalently about the apex 3/20 m r² + 3/5 m h², shifted by (3h/4)²).
        r, h = s.radius, s.height
        m = math.pi * r * r * h / 3
        about_apex = m * (3 / 20 * r * r + 3 / 5 * h * h)
        t = m * (3 / 20 * r * r + 3 / 80 * h * h)
        assert math.isclose(about_apex - m * (3 * h / 4) ** 2, t, rel_tol=1e-13)
        return m, np.array([0, 0, h / 4]), np.diag([t, t, 0.3 * m * r * r])
    if isinstance(s, Frustum):
        # docs/references.md §1 frustum (R2, V): centroid from the LARGE end h(R² + 2Rr + 3r²)/[4(R² + Rr + r²)];
        # I_axis = (3/10) m (R⁵ − r⁵)/(R³ − r³). Transverse: derivation V by integrating discs,
        # dI = [r(z)²/4 + z²] dm about the base centre (Gauss-Legendre, exact for this polynomial), then shifted.
        r0, r1, h = s.base_radius, s.top_radius, s.height
        big, small = max(r0, r1), min(r0, r1)
        m = math.pi * h / 3 * (r0 * r0 + r0 * r1 + r1 * r1)
        from_large = h * (big**2 + 2 * big * small + 3 * small**2) / (4 * (big**2 + big * small + small**2))
        zc = from_large if r0 >= r1 else h - from_large
        axial = 0.3 * m * (big**5 - small**5) / (big**3 - small**3)
        tq, wq = _gauss_01(8)
        z = h * tq
        rz = r0 + (r1 - r0) * tq
        dm = math.pi * rz**2 * h * wq
        about_base = float(np.sum((rz**2 / 4 + z * z) * dm))
        tr = about_base - m * zc * zc
        return m, np.array([0, 0, zc]), np.diag([tr, tr, axial])
    if isinstance(s, Wedge):
        # docs/references.md §1 right triangular prism (V): centroid (a/3, b/3, L/2); I_zz = m(a² + b²)/18;
        # I_xx = m(b²/18 + L²/12); I_yy = m(a²/18 + L²/12); tensor I_xy = +m a b/36 (sign verified below).
        a, b, length = s.leg_x, s.leg_y, s.length
        m = a * b * length / 2
        tensor = np.diag(
            [m * (b * b / 18 + length**2 / 12), m * (a * a / 18 + length**2 / 12), m * (a * a + b * b) / 18]
        )
        tensor[0, 1] = tensor[1, 0] = +m * a * b / 36
        return m, np.array([a / 3, b / 3, length / 2]), tensor
    if isinstance(s, Torus):
        # Handbook / Wikipedia torus (R): V = 2π²Ra²; I_axis = m(4R² + 3a²)/4; I_diameter = m(4R² + 5a²)/8.
        big, a = s.ring_radius, s.tube_radius
        m = 2 * math.pi**2 * big * a * a
        d = m * (4 * big * big + 5 * a * a) / 8
        return m, zero, np.diag([d, d, m * (4 * big * big + 3 * a * a) / 4])
    if isinstance(s, Ellipsoid):
        # Handbook / Wikipedia ellipsoid (R): I_a = m(b² + c²)/5 and cyclic.
        a, b, c = s.semi_x, s.semi_y, s.semi_z
        m = 4 / 3 * math.pi * a * b * c
        return m, zero, np.diag([m * (b * b + c * c) / 5, m * (a * a + c * c) / 5, m * (a * a + b * b) / 5])
    if isinstance(s, Extrusion) and s.vertices == L_OUTLINE:
        # Composite of two cuboids (Handbook cuboid row) by the parallel-axis theorem:
        # upright 0.03 × 0.12 at x 0.02..0.05, y 0.01..0.13; foot 0.06 × 0.03 at x 0.05..0.11, y 0.01..0.04.
        th = s.thickness
        parts = [((0.035, 0.07), 0.03, 0.12), ((0.08, 0.025), 0.06, 0.03)]
        total = sum(wd * ht * th for _, wd, ht in parts)
        centre = sum(np.array([cx, cy, th / 2]) * wd * ht * th for (cx, cy), wd, ht in parts) / total
        tensor = np.zeros((3, 3))
        for (cx, cy), wd, ht in parts:
            mi = wd * ht * th
            own = np.diag(
                [mi * (ht * ht + th * th) / 12, mi * (wd * wd + th * th) / 12, mi * (wd * wd + ht * ht) / 12]
            )
            shift = np.array([cx, cy, th / 2]) - centre
            tensor += own + mi * (shift @ shift * np.eye(3) - np.outer(shift, shift))
        return total, np.asarray(centre), tensor
    raise LookupError(shape)


HANDBOOK_NAMES = [n for n in NAMES if n != "extrusion_slant"]


@pytest.mark.parametrize("name", HANDBOOK_NAMES)
def test_mass_properties_match_handbook(name: str) -> None:
    shape = SAMPLES[name]
    volume, centroid, tensor = handbook(shape)
    assert math.isclose(shape.volume(), volume, rel_tol=1e-12)
    np.testing.assert_allclose(shape.centroid(), centroid, rtol=0, atol=1e-13 * size_of(shape))
    assert_tensor_close(shape.inertia_per_density(), tensor, 1e-12)


def test_wedge_product_sign_by_quadrature() -> None:
    # Derivation V, sympy-free: Gauss quadrature on the triangle through the Duffy map x = a u, y = b (1 − u) v
    # (Jacobian a b (1 − u)), exact for these polynomials. About the origin ∫xy dA = +a²b²/24 > 0, but about
    # the centroid it is −a²b²/72 < 0, so the centroidal tensor entry −ρ∫xy dV is POSITIVE: +m a b/36.
    a, b, length = 0.21, 0.064, 0.115
    u, wu = _gauss_01(6)
    uu, vv = np.meshgrid(u, u, indexing="ij")
    w = np.outer(wu, wu) * a * b * (1 - uu)
    x, y = a * uu, b * (1 - uu) * vv
    area = w.sum()
    xc, yc = (w * x).sum() / area, (w * y).sum() / area
    about_origin = (w * x * y).sum()
    about_centroid = (w * (x - xc) * (y - yc)).sum()
    assert math.isclose(about_origin, a * a * b * b / 24, rel_tol=1e-12) and about_origin > 0
    assert math.isclose(about_centroid, -a * a * b * b / 72, rel_tol=1e-12) and about_centroid < 0
    wedge = Wedge(a, b, length)
    assert math.isclose(wedge.inertia_per_density()[0, 1], -about_centroid * length, rel_tol=1e-12)
    assert wedge.inertia_per_density()[0, 1] > 0
    # OpenCascade agrees on the sign and value (tensor convention, about the centre of mass).
    _, _, ocp_tensor = ocp_props(independent_cad_mm(wedge))
    assert math.isclose(ocp_tensor[0, 1], wedge.volume() * a * b / 36, rel_tol=1e-9)


def test_spherical_shell_equals_sphere_difference() -> None:
    # Superposition of two Handbook solid spheres (2/5 m R²).
    shell = SAMPLES["spherical_shell"]
    assert isinstance(shell, SphericalShell)
    outer, inner = Sphere(shell.outer_radius), Sphere(shell.inner_radius)
    assert math.isclose(shell.volume(), outer.volume() - inner.volume(), rel_tol=1e-13)
    assert_tensor_close(
        shell.inertia_per_density(), outer.inertia_per_density() - inner.inertia_per_density(), 1e-12
    )


def test_two_hemispheres_make_a_sphere() -> None:
    # Parallel-axis theorem: two half spheres (centroids ±3R/8) recombine to the Handbook sphere.
    r = 0.071
    half = Hemisphere(r)
    d = half.centroid()
    shifted = half.inertia_per_density() + half.volume() * (d @ d * np.eye(3) - np.outer(d, d))
    assert_tensor_close(2 * shifted, Sphere(r).inertia_per_density(), 1e-13)


def test_extrusion_matches_box_and_wedge() -> None:
    # A rectangular outline is a Box moved by (x0 + w/2, y0 + h/2, t/2); a right triangle is the Wedge.
    box = Box(0.23, 0.041, 0.017)
    rect = Extrusion(((0.5, -0.2), (0.73, -0.2), (0.73, -0.159), (0.5, -0.159)), 0.017)
    assert math.isclose(rect.volume(), box.volume(), rel_tol=1e-12)
    np.testing.assert_allclose(rect.centroid(), [0.615, -0.1795, 0.0085], rtol=0, atol=1e-14)
    assert_tensor_close(rect.inertia_per_density(), box.inertia_per_density(), 1e-9)
    wedge = Wedge(0.21, 0.064, 0.115)
    tri = Extrusion(((0.0, 0.0), (0.0, 0.064), (0.21, 0.0)), 0.115)  # clockwise on purpose
    assert math.isclose(tri.volume(), wedge.volume(), rel_tol=1e-12)
    np.testing.assert_allclose(tri.centroid(), wedge.centroid(), rtol=0, atol=1e-15)
    assert_tensor_close(tri.inertia_per_density(), wedge.inertia_per_density(), 1e-12)


def test_frustum_tends_to_cylinder_and_cone() -> None:
    # Equal radii: a cylinder shifted up by h/2 (Handbook cylinder); a vanishing top: the Handbook cone.
    same = Frustum(0.045, 0.045, 0.23)
    cyl = Cylinder(0.045, 0.23)
    assert math.isclose(same.volume(), cyl.volume(), rel_tol=1e-13)
    np.testing.assert_allclose(same.centroid(), [0, 0, 0.115], atol=1e-15)
    assert_tensor_close(same.inertia_per_density(), cyl.inertia_per_density(), 1e-13)
    nearly = Frustum(0.052, 1e-9, 0.19)
    cone = Cone(0.052, 0.19)
    assert math.isclose(nearly.volume(), cone.volume(), rel_tol=1e-7)
    assert_tensor_close(nearly.inertia_per_density(), cone.inertia_per_density(), 1e-7)


# ----------------------------------------------------------------------------------------------------------
# 2. OpenCascade oracle
# ----------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", NAMES)
def test_mass_properties_match_opencascade(name: str) -> None:
    # OpenCascade (OCP) on a solid built independently here; to 1e-9 of the largest entry.
    shape = SAMPLES[name]
    volume, centroid, tensor = ocp_props(independent_cad_mm(shape))
    assert math.isclose(shape.volume(), volume, rel_tol=1e-9)
    np.testing.assert_allclose(shape.centroid(), centroid, rtol=0, atol=1e-9 * size_of(shape))
    assert_tensor_close(shape.inertia_per_density(), tensor, 1e-9)
    if name in ("wedge", "extrusion_slant"):  # these exercise a real product of inertia
        assert abs(tensor[0, 1]) > 0.01 * np.abs(tensor).max()


@pytest.mark.parametrize("name", NAMES)
def test_to_solid_mass_properties(name: str) -> None:
    # OpenCascade on our own to_solid (mm): the CAD edge carries the same solid.
    shape = SAMPLES[name]
    solid = to_solid(shape)
    assert isinstance(solid, TopoDS_Shape) and solid.ShapeType() == TopAbs_SOLID  # OCP, no cadquery wrapper
    volume, centroid, tensor = ocp_props(solid)
    assert math.isclose(shape.volume(), volume, rel_tol=1e-9)
    np.testing.assert_allclose(shape.centroid(), centroid, rtol=0, atol=1e-9 * size_of(shape))
    assert_tensor_close(shape.inertia_per_density(), tensor, 1e-9)
    lo, hi = shape.bounds() * 1000.0
    bb = cq.Shape.cast(solid).BoundingBox()  # cadquery as the measuring oracle
    np.testing.assert_allclose([bb.xmin, bb.ymin, bb.zmin], lo, atol=1e-3 * 1000 * size_of(shape))
    np.testing.assert_allclose([bb.xmax, bb.ymax, bb.zmax], hi, atol=1e-3 * 1000 * size_of(shape))


@pytest.mark.parametrize(
    "name", ["box", "cylinder", "tube", "sphere", "spherical_shell", "hemisphere", "cone", "frustum_top_larger", "wedge",
             "extrusion_l", "torus"]
)
def test_to_solid_is_the_independent_solid(name: str) -> None:
    # OpenCascade booleans: both differences between our solid and the independent one have ~zero volume.
    shape = SAMPLES[name]
    ours, theirs = to_solid(shape), independent_cad_mm(shape).wrapped
    for a, b in ((ours, theirs), (theirs, ours)):
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(BRepAlgoAPI_Cut(a, b).Shape(), props)
        assert abs(props.Mass()) <= 1e-9 * (shape.volume() * 1e9)  # mm³


@pytest.mark.parametrize("name", ["wedge", "extrusion_slant", "cone"])
def test_tensor_axes_follow_a_rigid_motion(name: str) -> None:
    # OpenCascade on the solid rotated (extrinsic X, Y, Z by 23°, −41°, 67°) and moved: I' = R I Rᵀ, c' = R c + t.
    shape = SAMPLES[name]
    angles = (23.0, -41.0, 67.0)
    offset_m = np.array([0.37, -0.12, 0.05])
    rot = Rotation.from_euler("xyz", angles, degrees=True).as_matrix()  # cadquery Location: R = Rz·Ry·Rx
    placed = cq.Shape.cast(to_solid(shape)).moved(cq.Location((0, 0, 0), angles))
    placed = placed.moved(cq.Location(tuple(offset_m * 1000)))
    volume, centroid, tensor = ocp_props(placed)
    assert math.isclose(volume, shape.volume(), rel_tol=1e-9)
    np.testing.assert_allclose(centroid, rot @ shape.centroid() + offset_m, rtol=0, atol=1e-9)
    assert_tensor_close(tensor, rot @ shape.inertia_per_density() @ rot.T, 1e-9)


def _star_polygon(draw: st.DrawFn) -> tuple[tuple[float, float], ...]:
    n = draw(st.integers(min_value=3, max_value=11))
    gaps = draw(st.lists(st.floats(1.0, 1.9), min_size=n, max_size=n))  # every gap < π: simple star polygon
    radii = draw(st.lists(st.floats(0.3, 1.0), min_size=n, max_size=n))
    scale = draw(st.floats(0.01, 0.5))
    cx, cy = draw(st.floats(-0.4, 0.4)), draw(st.floats(-0.4, 0.4))
    angles = np.cumsum(gaps) / np.sum(gaps) * 2 * np.pi
    pts = [
        (cx + scale * r * math.cos(a), cy + scale * r * math.sin(a))
        for r, a in zip(radii, angles, strict=True)
    ]
    return tuple(pts[::-1]) if draw(st.booleans()) else tuple(pts)


@settings(max_examples=25, deadline=None)
@given(outline=st.composite(_star_polygon)(), thickness=st.floats(0.002, 0.3))
def test_random_extrusion_matches_opencascade(
    outline: tuple[tuple[float, float], ...], thickness: float
) -> None:
    # OpenCascade on an independently extruded random star polygon (either winding).
    shape = Extrusion(outline, thickness)
    volume, centroid, tensor = ocp_props(independent_cad_mm(shape))
    assert math.isclose(shape.volume(), volume, rel_tol=1e-9)
    np.testing.assert_allclose(shape.centroid(), centroid, rtol=0, atol=1e-9 * size_of(shape))
    assert_tensor_close(shape.inertia_per_density(), tensor, 1e-9)


# ----------------------------------------------------------------------------------------------------------
# 3. trimesh oracle and chord error
# ----------------------------------------------------------------------------------------------------------

CURVED = {
    "cylinder",
    "tube",
    "sphere",
    "spherical_shell",
    "hemisphere",
    "cone",
    "frustum",
    "frustum_top_larger",
    "torus",
    "ellipsoid",
}


@pytest.mark.parametrize("name", NAMES)
def test_mesh_mass_properties_within_tessellation_error(name: str) -> None:
    # trimesh volume / moment_inertia (about the centre of mass, tensor convention) on our mesh. A mesh within
    # chord error e of the surface differs from the solid by at most area·e in volume; the inertia by at most
    # area·e·ρ_max² (ρ_max: farthest point from the centroid), the centroid by area·e·ρ_max/V (each doubled).
    shape = SAMPLES[name]
    tol = 2e-4 * size_of(shape)
    mesh = to_mesh(shape, tol)
    assert mesh.is_watertight and mesh.is_winding_consistent
    assert mesh.volume > 0
    lo, hi = shape.bounds()
    rho_max = float(np.linalg.norm(np.maximum(np.abs(lo - shape.centroid()), np.abs(hi - shape.centroid()))))
    slack = 2.0 * mesh.area * tol * (1.0 if name in CURVED else 1e-9)
    assert abs(mesh.volume - shape.volume()) <= slack + 1e-12 * shape.volume()
    np.testing.assert_allclose(
        mesh.center_mass, shape.centroid(), rtol=0, atol=slack * rho_max / shape.volume() + 1e-12
    )
    err = np.abs(mesh.moment_inertia - shape.inertia_per_density()).max()
    assert err <= slack * rho_max**2 + 1e-12 * np.abs(shape.inertia_per_density()).max()
    if name in CURVED:  # the tessellation is real (not exact by accident) and within ~1e-3 relative
        assert 1e-7 < abs(mesh.volume / shape.volume() - 1) < 5e-3


def _face_samples(mesh: Any, k: int = 6) -> np.ndarray:
    """Points at barycentric coordinates (i/k, j/k, l/k) on every triangle (vertices, edge points, interior)."""
    bary = np.array([(i, j, k - i - j) for i in range(k + 1) for j in range(k + 1 - i)], float) / k
    return np.einsum("bv,fvd->fbd", bary, np.asarray(mesh.triangles)).reshape(-1, 3)


@pytest.mark.parametrize("name", NAMES)
def test_mesh_chord_error(name: str) -> None:
    # Every vertex on the analytic surface; every point of every facet (barycentric grid) within the chord
    # tolerance of it; for curved solids the facets are not needlessly fine (the worst uses >= 1/4 of it).
    shape = SAMPLES[name]
    tol = 1e-3 * size_of(shape)
    mesh = to_mesh(shape, tol)
    assert surface_distance(shape, mesh.vertices).max() <= 1e-12 * size_of(shape)
    on_facets = _face_samples(mesh)
    worst = surface_distance(shape, on_facets).max()
    assert worst <= tol * (1 + 1e-9)
    assert shape.contains(on_facets, tol=tol * (1 + 1e-9)).all()
    if name in CURVED:
        assert worst >= 0.25 * tol
    else:
        assert worst <= 1e-12 * size_of(shape)


def test_cylinder_segment_count_and_volume_error() -> None:
    # docs/references.md §1: a tessellated cylinder with N segments has relative volume error about −6.6/N²
    # (exactly N sin(2π/N)/(2π) − 1 for the inscribed polygon); N is the fewest with r(1 − cos(π/N)) <= tol.
    cyl = Cylinder(0.045, 0.23)
    tol = 2e-6
    mesh = to_mesh(cyl, tol)
    rim = mesh.vertices[np.isclose(mesh.vertices[:, 2], 0.115) & (np.hypot(*mesh.vertices[:, :2].T) > 0.04)]
    n = len(rim)
    assert cyl.radius * (1 - math.cos(math.pi / n)) <= tol < cyl.radius * (1 - math.cos(math.pi / (n - 1)))
    ratio = mesh.volume / cyl.volume()
    assert math.isclose(ratio, n * math.sin(2 * math.pi / n) / (2 * math.pi), rel_tol=1e-12)
    assert math.isclose(ratio - 1, -6.6 / n**2, rel_tol=0.01)


def test_mesh_rejects_bad_tolerance() -> None:
    with pytest.raises(ShapeError) as info:
        to_mesh(Sphere(0.083), 0.0)
    assert info.value.field == "chord_tolerance"
    with pytest.raises(ShapeError) as info:
        to_mesh(Sphere(0.083), 1e-13)  # would need millions of facets per turn
    assert info.value.field == "chord_tolerance" and "too small" in str(info.value)


# ----------------------------------------------------------------------------------------------------------
# contains() and surface_points()
# ----------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", NAMES)
def test_contains_matches_opencascade_classifier(name: str) -> None:
    # OpenCascade BRepClass3d_SolidClassifier on the independent solid, on a 9×9×9 grid over the bounds
    # grown by 15 % (points within 1e-6 of the surface left out: their answer depends on the tolerance).
    shape = SAMPLES[name]
    lo, hi = shape.bounds()
    pad = 0.15 * (hi - lo)
    axes = [np.linspace(lo[i] - pad[i], hi[i] + pad[i], 9) for i in range(3)]
    grid = np.array(np.meshgrid(*axes, indexing="ij")).reshape(3, -1).T
    if isinstance(shape, Ellipsoid):
        g = np.linalg.norm(grid / shape.semi_axes(), axis=1)
        far = np.abs(g - 1) > 1e-3
    else:
        far = surface_distance(shape, grid) > 1e-6
    grid = grid[far]
    classifier = BRepClass3d_SolidClassifier(independent_cad_mm(shape).wrapped)
    expected = []
    for x, y, z in grid * 1000.0:
        classifier.Perform(gp_Pnt(float(x), float(y), float(z)), 1e-7)
        assert classifier.State() != TopAbs_ON
        expected.append(classifier.State() == TopAbs_IN)
    got = shape.contains(grid, tol=0.0)
    assert got.tolist() == expected
    assert 0 < got.sum() < len(got)


def test_contains_tolerance_semantics() -> None:
    # Closed set with a distance tolerance: boundary points in at tol = 0, points δ outside in only when tol >= δ.
    delta = 1e-5
    cases: list[tuple[Shape, list[list[float]], list[list[float]]]] = [
        # (shape, points exactly on the boundary, points delta outside the boundary)
        (
            Box(0.31, 0.17, 0.093),
            [[0.155, 0.0, 0.0], [0.155, 0.085, 0.0465]],
            [[0.155 + delta, 0, 0], [0, 0, -0.0465 - delta]],
        ),
        (
            Tube(0.06, 0.041, 0.37),
            [[0.041, 0.0, 0.1], [0.0, 0.06, -0.185]],
            [[0.041 - delta, 0, 0], [0, 0.05, 0.185 + delta]],
        ),
        (
            Torus(0.18, 0.027),
            [[0.207, 0.0, 0.0], [0.0, 0.18, 0.027]],
            [[0.153 - delta, 0, 0], [0.18, 0, 0.027 + delta]],
        ),
        (
            Cone(0.052, 0.19),
            [[0.0, 0.0, 0.19], [0.052, 0.0, 0.0]],
            [[0, 0, 0.19 + delta], [0.026, 0, -delta]],
        ),
        (
            Hemisphere(0.071),
            [[0.0, 0.0, 0.071], [0.071, 0.0, 0.0]],
            [[0, 0, 0.071 + delta], [0.01, 0, -delta]],
        ),
        (
            Wedge(0.21, 0.064, 0.115),
            [[0.105, 0.032, 0.05]],
            [
                [
                    0.105 + delta * 0.064 / math.hypot(0.21, 0.064),
                    0.032 + delta * 0.21 / math.hypot(0.21, 0.064),
                    0.05,
                ]
            ],
        ),
        (
            Extrusion(L_OUTLINE, 0.012),
            [[0.05, 0.04, 0.006], [0.08, 0.04, 0.012]],
            [[0.05 + delta, 0.04 + delta, 0.006], [0.08, 0.04, 0.012 + delta]],
        ),
        (
            Ellipsoid(0.15, 0.09, 0.04),
            [[0.15, 0.0, 0.0], [0.0, 0.0, -0.04]],
            [[0.15 + delta, 0, 0], [0, 0, -0.04 - delta]],
        ),
    ]
    for shape, on, out in cases:
        assert shape.contains(np.array(on), tol=0.0).all(), shape
        assert not shape.contains(np.array(out), tol=0.0).any(), shape
        assert shape.contains(np.array(out), tol=1.01 * delta).all(), shape
        assert not shape.contains(np.array(out), tol=0.5 * delta).any(), shape


@pytest.mark.parametrize("name", NAMES)
def test_surface_points_lie_on_the_surface_and_cover_it(name: str) -> None:
    shape = SAMPLES[name]
    pts = shape.surface_points(600)
    assert np.array_equal(pts, shape.surface_points(600))  # deterministic
    assert 300 <= len(pts) <= 1200
    assert len(np.unique(pts, axis=0)) == len(pts)
    assert surface_distance(shape, pts).max() <= 1e-12 * size_of(shape)
    assert shape.contains(pts).all()
    # Coverage: every vertex of a fine mesh (on the surface) is near a sample; h = sqrt(area / n).
    mesh = to_mesh(shape, 1e-3 * size_of(shape))
    h = math.sqrt(mesh.area / 600)
    gap, _ = cKDTree(pts).query(mesh.vertices)
    assert gap.max() <= 1.5 * h
    more = shape.surface_points(4000)
    assert 2000 <= len(more) <= 8000


def test_surface_points_include_corners_rims_and_poles() -> None:
    def has(points: np.ndarray, target: list[float]) -> bool:
        return bool(np.any(np.linalg.norm(points - np.array(target), axis=1) <= 1e-15))

    box = SAMPLES["box"]
    pts = box.surface_points(200)
    for corner in np.array(np.meshgrid([-0.155, 0.155], [-0.085, 0.085], [-0.0465, 0.0465])).reshape(3, -1).T:
        assert has(pts, list(corner))
    wedge_pts = SAMPLES["wedge"].surface_points(200)
    for x, y in [(0, 0), (0.21, 0), (0, 0.064)]:
        assert has(wedge_pts, [x, y, 0.0]) and has(wedge_pts, [x, y, 0.115])
    ext_pts = SAMPLES["extrusion_l"].surface_points(200)
    for x, y in L_OUTLINE:
        assert has(ext_pts, [x, y, 0.0]) and has(ext_pts, [x, y, 0.012])
    cone_pts = SAMPLES["cone"].surface_points(200)
    assert has(cone_pts, [0, 0, 0.19]) and has(cone_pts, [0, 0, 0])  # apex and base centre
    cyl_pts = SAMPLES["cylinder"].surface_points(400)
    for z in (-0.115, 0.115):
        on_rim = np.isclose(cyl_pts[:, 2], z, atol=1e-15) & np.isclose(
            np.hypot(*cyl_pts[:, :2].T), 0.045, atol=1e-15
        )
        assert on_rim.sum() >= 6
    hemi_pts = SAMPLES["hemisphere"].surface_points(300)
    assert has(hemi_pts, [0, 0, 0.071])
    assert (
        np.isclose(hemi_pts[:, 2], 0.0, atol=1e-15) & np.isclose(np.hypot(*hemi_pts[:, :2].T), 0.071)
    ).sum() >= 6
    shell_pts = SAMPLES["spherical_shell"].surface_points(400)
    r = np.linalg.norm(shell_pts, axis=1)
    assert np.isclose(r, 0.095).sum() > 0.2 * len(r) and np.isclose(r, 0.12).sum() > 0.2 * len(r)


def _rings_one_by_one(profile: Any, n: int) -> np.ndarray:
    """The surface samples of a solid of revolution made ring after ring (the per-ring loop the vectorised
    :func:`massmodel.core.geometry.revolve_samples` replaced), duplicates dropped by ``np.unique``."""
    from massmodel.core import geometry as geo

    spacing = math.sqrt(geo.profile_area(profile) / n)
    edges = [seg for seg in profile if not seg.on_axis()]
    perimeter = sum(seg.length() for seg in edges)
    surface = sum(2.0 * math.pi * float(np.mean(seg.points(8)[:, 0])) * seg.length() for seg in edges)
    spacing = max(spacing, perimeter / (64 * n), math.sqrt(surface / geo.MAX_REVOLVE_SAMPLES))
    rings = []
    for r, z in np.concatenate([seg.points(max(1, math.ceil(seg.length() / spacing))) for seg in edges]):
        m = max(3, round(2.0 * math.pi * r / spacing)) if r > 0.0 else 1
        theta = 2.0 * math.pi * np.arange(m) / m
        rings.append(np.column_stack((r * np.cos(theta), r * np.sin(theta), np.full(m, z))))
    pts = np.concatenate(rings)
    _, first = np.unique(pts, axis=0, return_index=True)
    return pts[np.sort(first)]


@pytest.mark.parametrize("name", [k for k in NAMES if hasattr(SAMPLES[k], "meridian_profile")])
def test_revolve_samples_equal_the_ring_by_ring_samples(name: str) -> None:
    # all rings at once give the very same floats, in the same order, as one ring at a time
    from massmodel.core import geometry as geo

    profile = SAMPLES[name].meridian_profile()
    for n in (1, 5, 60, 400, 3000):
        assert geo.revolve_samples(profile, n).tobytes() == _rings_one_by_one(profile, n).tobytes()


def test_unique_rows_keeps_what_np_unique_keeps() -> None:
    # the first of each set of equal rows, in input order, as np.unique(axis=0, return_index=True) finds them
    from massmodel.core.geometry import unique_rows

    rng = np.random.default_rng(7)
    for k in range(300):
        pts = rng.integers(-2, 3, size=(int(rng.integers(0, 50)), 3)) * 0.25
        if k % 3 == 0 and len(pts):
            pts[int(rng.integers(len(pts)))] = [-0.0, 0.0, -0.0]  # equal to a row of zeros
        _, first = np.unique(pts, axis=0, return_index=True)
        assert unique_rows(pts).tobytes() == pts[np.sort(first)].tobytes()


# ----------------------------------------------------------------------------------------------------------
# Validation, round trip, registry, point mass, light import
# ----------------------------------------------------------------------------------------------------------

BAD_INPUTS = [
    (Box, dict(size_x=0.0, size_y=0.1, size_z=0.1), "size_x"),
    (Box, dict(size_x=0.1, size_y=-0.1, size_z=0.1), "size_y"),
    (Box, dict(size_x=0.1, size_y=0.1, size_z=float("nan")), "size_z"),
    (Cylinder, dict(radius=float("inf"), length=0.1), "radius"),
    (Cylinder, dict(radius=0.1, length="0.1"), "length"),
    (Cylinder, dict(radius=True, length=0.1), "radius"),
    (Tube, dict(outer_radius=0.04, inner_radius=0.05, length=0.3), "inner_radius"),
    (Tube, dict(outer_radius=0.04, inner_radius=0.04, length=0.3), "inner_radius"),
    (Tube, dict(outer_radius=0.04, inner_radius=0.0, length=0.3), "inner_radius"),
    (SphericalShell, dict(outer_radius=0.1, inner_radius=0.1), "inner_radius"),
    (Sphere, dict(radius=-1e-3), "radius"),
    (Hemisphere, dict(radius=float("nan")), "radius"),
    (Cone, dict(radius=0.05, height=0.0), "height"),
    (Frustum, dict(base_radius=0.05, top_radius=0.0, height=0.1), "top_radius"),
    (Wedge, dict(leg_x=0.1, leg_y=-0.2, length=0.1), "leg_y"),
    (Torus, dict(ring_radius=0.05, tube_radius=0.05), "tube_radius"),
    (Torus, dict(ring_radius=0.05, tube_radius=0.07), "tube_radius"),
    (Ellipsoid, dict(semi_x=0.1, semi_y=0.0, semi_z=0.1), "semi_y"),
    (Extrusion, dict(vertices=((0, 0), (1, 0), (1, 1)), thickness=-0.01), "thickness"),
    (Extrusion, dict(vertices=((0, 0), (1, 1), (1, 0), (0, 1)), thickness=0.01), "vertices"),  # bow tie
    (Extrusion, dict(vertices=((0, 0), (1, 0), (1, 0), (0, 1)), thickness=0.01), "vertices"),  # repeated
    (Extrusion, dict(vertices=((0, 0), (1, 0), (1, 1), (0, 0), (-1, 1)), thickness=0.01), "vertices"),
    (Extrusion, dict(vertices=((0, 0), (1, 0), (2, 0)), thickness=0.01), "vertices"),  # collinear only
    (Extrusion, dict(vertices=((0, 0), (2, 0), (1, 0), (1, 1)), thickness=0.01), "vertices"),  # folds back
    (
        Extrusion,
        dict(vertices=((0, 0), (2, 0), (2, 2), (1, 0), (0, 2)), thickness=0.01),
        "vertices",
    ),  # touches
    (Extrusion, dict(vertices=((0, 0), (1, 0)), thickness=0.01), "vertices"),
    (Extrusion, dict(vertices=((0, 0), (1, 0), (1, float("nan"))), thickness=0.01), "vertices"),
    (Extrusion, dict(vertices=((0, 0), (1, 0, 0), (1, 1)), thickness=0.01), "vertices"),
    (Extrusion, dict(vertices=12, thickness=0.01), "vertices"),
]


@pytest.mark.parametrize(("cls", "kwargs", "field"), BAD_INPUTS)
def test_bad_input_names_the_field(cls: type[Shape], kwargs: dict[str, object], field: str) -> None:
    with pytest.raises(ShapeError) as info:
        cls(**kwargs)
    assert info.value.field == field
    assert field in str(info.value)
    assert info.value.kind == cls.kind


def test_error_messages_read_well() -> None:
    with pytest.raises(
        ShapeError, match=r"^inner_radius \(0\.05 m\) must be less than outer_radius \(0\.04 m\)$"
    ):
        Tube(0.04, 0.05, 0.3)
    with pytest.raises(
        ShapeError, match=r"^tube_radius \(0\.06 m\) must be less than ring_radius \(0\.05 m\)$"
    ):
        Torus(0.05, 0.06)
    with pytest.raises(ShapeError, match=r"^size_x \(-0\.1 m\) must be greater than zero$"):
        Box(-0.1, 0.1, 0.1)
    with pytest.raises(ShapeError, match=r"^vertices: edge 0-1 meets edge 2-3 "):
        Extrusion(((0, 0), (2, 2), (2, 0), (0, 1)), 0.01)  # asymmetric bow tie
    with pytest.raises(ShapeError, match=r"^vertices: edge 0-1 meets edge 2-3 "):
        Extrusion(((0, 0), (1, 1), (1, 0), (0, 1)), 0.01)  # symmetric bow tie (zero net area)
    with pytest.raises(ShapeError, match=r"^vertices: the corners are collinear"):
        Extrusion(((0, 0), (1, 0), (2, 0)), 0.01)
    with pytest.raises(ShapeError, match=r"^vertices: corners 1 and 2 coincide at \(1, 0\) m$"):
        Extrusion(((0, 0), (1, 0), (1, 0), (0, 1)), 0.01)
    assert issubclass(ShapeError, ValueError)


def test_shape_from_params_round_trip_and_errors() -> None:
    for shape in [*SAMPLES.values(), PointMass()]:
        params = shape.params()
        assert list(params) == list(type(shape).FIELDS) == [f.name for f in dataclasses.fields(shape)]  # type: ignore[arg-type]
        assert set(type(shape).FIELDS.values()) <= {"length", "length_list"}
        rebuilt = shape_from_params(shape.kind, **params)
        assert rebuilt == shape and type(rebuilt) is type(shape)
    assert SAMPLES["tube"].params() == {"outer_radius": 0.06, "inner_radius": 0.041, "length": 0.37}
    assert SAMPLES["extrusion_l"].params()["vertices"] == L_OUTLINE
    assert Box.FIELDS == {"size_x": "length", "size_y": "length", "size_z": "length"}
    assert Extrusion.FIELDS == {"vertices": "length_list", "thickness": "length"}
    with pytest.raises(ShapeError) as info:
        shape_from_params("pyramid", height=1.0)
    assert info.value.field == "kind"
    with pytest.raises(ShapeError) as info:
        shape_from_params("cylinder", radius=0.1)
    assert info.value.field == "length" and "missing" in str(info.value)
    with pytest.raises(ShapeError) as info:
        shape_from_params("sphere", radius=0.1, diameter=0.2)
    assert info.value.field == "diameter"


def test_registry_and_immutability() -> None:
    assert sorted(SHAPE_KINDS) == sorted(
        [
            "box",
            "cylinder",
            "tube",
            "sphere",
            "spherical_shell",
            "hemisphere",
            "cone",
            "frustum",
            "wedge",
            "extrusion",
            "torus",
            "ellipsoid",
            "point",
        ]
    )
    for kind, cls in SHAPE_KINDS.items():
        assert cls.kind == kind
    box = Box(1, 2, 3)
    assert isinstance(box.size_x, float)
    with pytest.raises(dataclasses.FrozenInstanceError):
        box.size_x = 2.0  # type: ignore[misc]
    assert not hasattr(box, "__dict__")  # slots


def test_bounds() -> None:
    np.testing.assert_array_equal(
        SAMPLES["hemisphere"].bounds(), [[-0.071, -0.071, 0], [0.071, 0.071, 0.071]]
    )
    np.testing.assert_array_equal(
        SAMPLES["frustum_top_larger"].bounds(), [[-0.07, -0.07, 0], [0.07, 0.07, 0.11]]
    )
    np.testing.assert_array_equal(
        SAMPLES["torus"].bounds(), [[-0.207, -0.207, -0.027], [0.207, 0.207, 0.027]]
    )
    np.testing.assert_array_equal(SAMPLES["extrusion_l"].bounds(), [[0.02, 0.01, 0], [0.11, 0.13, 0.012]])
    for name, shape in SAMPLES.items():  # bounds equal the extent of a fine mesh (vertices on the surface)
        mesh = to_mesh(shape, 1e-4 * size_of(shape))
        np.testing.assert_allclose(mesh.bounds, shape.bounds(), atol=2e-4 * size_of(shape), err_msg=name)


def test_point_mass() -> None:
    point = PointMass()
    assert point.volume() == 0.0
    np.testing.assert_array_equal(point.centroid(), np.zeros(3))
    np.testing.assert_array_equal(point.inertia_per_density(), np.zeros((3, 3)))
    assert not point.contains(np.array([[0.0, 0.0, 0.0], [1e-12, 0, 0]]), tol=1.0).any()
    np.testing.assert_array_equal(point.surface_points(50), np.zeros((1, 3)))
    marker = to_mesh(point, 1e-4, marker_radius=0.02)
    assert marker.is_watertight
    assert math.isclose(marker.volume, 4 / 3 * math.pi * 0.02**3, rel_tol=2e-2)
    assert math.isclose(
        ocp_props(to_solid(point, marker_radius=0.02))[0], 4 / 3 * math.pi * 0.02**3, rel_tol=1e-12
    )
    with pytest.raises(ShapeError) as info:
        to_solid(point, marker_radius=0.0)
    assert info.value.field == "marker_radius"


def test_argument_checks() -> None:
    with pytest.raises(ValueError, match="shape"):
        Sphere(0.1).contains(np.zeros(3))
    with pytest.raises(ShapeError) as info:
        Sphere(0.1).contains(np.zeros((1, 3)), tol=-1.0)
    assert info.value.field == "tol"
    with pytest.raises(ShapeError) as info:
        Sphere(0.1).surface_points(0)
    assert info.value.field == "n"


def test_import_needs_numpy_only() -> None:
    # `import massmodel.core.shapes` must not pull in the CAD kernel, trimesh or pyvista.
    code = (
        "import sys, massmodel.core.shapes\n"
        "heavy = [m for m in ('cadquery', 'OCP', 'trimesh', 'pyvista') if m in sys.modules]\n"
        "print(','.join(heavy) or 'none')\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "none"


def test_every_primitive_has_a_cad_builder_and_others_are_refused() -> None:
    # to_solid dispatches on the shape's type: a primitive added without its builder in massmodel.cad.primitives
    # would fall through to the default, which refuses it
    fallback = to_solid.dispatch(object)
    missing = [kind for kind, cls in SHAPE_KINDS.items() if to_solid.dispatch(cls) is fallback]
    assert missing == []
    with pytest.raises(TypeError, match="no CAD builder for str"):
        to_solid("box")
    with pytest.raises(TypeError, match="no mesher for str"):
        to_mesh("box", 1e-3)
