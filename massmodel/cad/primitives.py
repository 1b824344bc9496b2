"""CAD solids and trimesh meshes of the shapes: `to_solid(shape)` and `to_mesh(shape, chord_tolerance)`.

The shapes themselves (`massmodel.core.shapes`) are numpy only; this module realises them with the CAD kernel
(cadquery/OCP) and trimesh, both imported inside the functions that need them. Both functions dispatch on the
shape's type (`functools.singledispatch`): the builder of each primitive class is registered here, and other
shape types (the STEP and mesh shapes of `massmodel.cad.imported`) register theirs where they are defined.

Conventions
-----------
- `to_solid` gives a cadquery solid in MILLIMETRES (coordinates = metres × 1000), shape frame (the CAD
  kernel's unit here; STEP files are written in mm).
- `to_mesh` gives a `trimesh.Trimesh` in METRES, shape frame, watertight with outward normals.
"""

from __future__ import annotations

import functools
from typing import Any

import numpy as np

from massmodel.core.shapes import (
    Box,
    Cone,
    Cylinder,
    Ellipsoid,
    Frustum,
    Hemisphere,
    PointMass,
    PrismShape,
    Shape,
    Sphere,
    SphericalShell,
    Torus,
    Tube,
)

__all__ = ["MM_PER_M", "make_trimesh", "to_mesh", "to_solid"]

#: CAD solids are built in millimetres.
MM_PER_M = 1000.0


@functools.singledispatch
def to_solid(shape: Any) -> Any:
    """CAD solid (cadquery) of a shape in MILLIMETRES (coordinates = metres × 1000), shape frame.

    Exact B-rep primitives where the kernel has them (box, cylinder, cone, sphere, torus), an extruded
    outline for prisms, a boolean difference for the spherical shell, and an affinely mapped sphere (NURBS)
    for the ellipsoid.

    Parameters
    ----------
    shape : Shape, or a registered shape type (e.g. `massmodel.cad.imported.StepShape`)

    Returns
    -------
    cadquery.Solid
        mm, shape frame.

    Raises
    ------
    TypeError
        No CAD builder is registered for the shape's type.
    """
    raise TypeError(f"no CAD builder for {type(shape).__name__} (kind {getattr(shape, 'kind', '?')!r})")


@functools.singledispatch
def to_mesh(shape: Any, chord_tolerance: float, **options: Any) -> Any:
    """Watertight triangle mesh (trimesh) of a shape, in METRES, shape frame.

    The default for every `Shape` wraps `shape.mesh_arrays(chord_tolerance, **options)` (e.g. `marker_radius`
    for a point mass) without merging or reordering; other shape types register their own.

    Parameters
    ----------
    shape : Shape or a registered shape type
    chord_tolerance : float
        Largest distance between the mesh and the exact surface, m, > 0.

    Returns
    -------
    trimesh.Trimesh
    """
    if not isinstance(shape, Shape):
        raise TypeError(f"no mesher for {type(shape).__name__} (kind {getattr(shape, 'kind', '?')!r})")
    return make_trimesh(*shape.mesh_arrays(chord_tolerance, **options))


def make_trimesh(vertices: np.ndarray, faces: np.ndarray) -> Any:
    """Wrap arrays in a `trimesh.Trimesh` without merging or reordering (the topology is already exact)."""
    import trimesh

    return trimesh.Trimesh(vertices=vertices, faces=faces, process=False)


@to_solid.register
def _box(s: Box) -> Any:
    import cadquery as cq

    a, b, c = MM_PER_M * s.size_x, MM_PER_M * s.size_y, MM_PER_M * s.size_z
    return cq.Solid.makeBox(a, b, c, pnt=cq.Vector(-a / 2.0, -b / 2.0, -c / 2.0))


@to_solid.register
def _prism(s: PrismShape) -> Any:
    import cadquery as cq

    xy, z0, z1 = s.prism_outline()
    pts = [(MM_PER_M * float(x), MM_PER_M * float(y)) for x, y in xy]
    wp = cq.Workplane("XY", origin=(0.0, 0.0, MM_PER_M * z0))
    return wp.polyline(pts).close().extrude(MM_PER_M * (z1 - z0)).val()


@to_solid.register
def _cylinder(s: Cylinder) -> Any:
    import cadquery as cq

    return cq.Solid.makeCylinder(
        MM_PER_M * s.radius, MM_PER_M * s.length, pnt=cq.Vector(0.0, 0.0, -MM_PER_M * s.length / 2.0)
    )


@to_solid.register
def _tube(s: Tube) -> Any:
    import cadquery as cq

    wp = cq.Workplane("XY", origin=(0.0, 0.0, -MM_PER_M * s.length / 2.0))
    return wp.circle(MM_PER_M * s.outer_radius).circle(MM_PER_M * s.inner_radius).extrude(MM_PER_M * s.length).val()


@to_solid.register
def _sphere(s: Sphere) -> Any:
    return _cad_sphere_mm(s.radius)


@to_solid.register
def _spherical_shell(s: SphericalShell) -> Any:
    solids = _cad_sphere_mm(s.outer_radius).cut(_cad_sphere_mm(s.inner_radius)).Solids()
    if len(solids) != 1:
        raise RuntimeError(f"boolean cut gave {len(solids)} solids instead of one")
    return solids[0]


@to_solid.register
def _hemisphere(s: Hemisphere) -> Any:
    import cadquery as cq

    # latitude 0..90 degrees: the upper half, z >= 0
    return cq.Solid.makeSphere(MM_PER_M * s.radius, angleDegrees1=0.0, angleDegrees2=90.0, angleDegrees3=360.0)


@to_solid.register
def _cone(s: Cone) -> Any:
    import cadquery as cq

    return cq.Solid.makeCone(MM_PER_M * s.radius, 0.0, MM_PER_M * s.height)


@to_solid.register
def _frustum(s: Frustum) -> Any:
    import cadquery as cq

    if s.base_radius == s.top_radius:  # the kernel refuses a cone with two equal radii: it is a cylinder
        return cq.Solid.makeCylinder(MM_PER_M * s.base_radius, MM_PER_M * s.height)
    return cq.Solid.makeCone(MM_PER_M * s.base_radius, MM_PER_M * s.top_radius, MM_PER_M * s.height)


@to_solid.register
def _torus(s: Torus) -> Any:
    import cadquery as cq

    return cq.Solid.makeTorus(MM_PER_M * s.ring_radius, MM_PER_M * s.tube_radius)


@to_solid.register
def _ellipsoid(s: Ellipsoid) -> Any:
    """CAD ellipsoid (mm): unit sphere under the affine map diag(semi-axes), through OCP GTransform.

    The kernel has no ellipsoid primitive, so the result is a NURBS solid; its mass properties need the
    adaptive integrator (`BRepGProp.VolumeProperties_s(shape, props, eps)`, eps ~1e-14) for ~1e-10 accuracy.
    """
    import cadquery as cq
    from OCP.BRepBuilderAPI import BRepBuilderAPI_GTransform
    from OCP.gp import gp_GTrsf, gp_Mat

    a, b, c = (MM_PER_M * float(v) for v in s.semi_axes())
    transform = gp_GTrsf()
    transform.SetVectorialPart(gp_Mat(a, 0.0, 0.0, 0.0, b, 0.0, 0.0, 0.0, c))
    shape = BRepBuilderAPI_GTransform(_cad_sphere_mm(1e-3).wrapped, transform, True).Shape()
    return cq.Shape.cast(shape)


@to_solid.register
def _point(s: PointMass, marker_radius: float = 0.01) -> Any:
    """Display marker: a CAD sphere of `marker_radius` (m), in millimetres."""
    return to_solid(s.marker(marker_radius))


def _cad_sphere_mm(radius_m: float) -> Any:
    """Full CAD sphere (mm) centred on the origin (cadquery's default latitude range is a half sphere)."""
    import cadquery as cq

    return cq.Solid.makeSphere(
        MM_PER_M * radius_m, angleDegrees1=-90.0, angleDegrees2=90.0, angleDegrees3=360.0
    )
