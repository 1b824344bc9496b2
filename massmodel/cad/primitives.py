"""CAD solids and trimesh meshes of the shapes: `to_solid(shape)` and `to_mesh(shape, chord_tolerance)`.

The shapes themselves (`massmodel.core.shapes`) are numpy only; this module realises them with the CAD kernel
(OpenCascade through OCP, without cadquery) and trimesh, both imported inside the functions that need them. Both
functions dispatch on the shape's type (`functools.singledispatch`): the builder of each primitive class is registered
here, and other shape types (the STEP and mesh shapes of `massmodel.cad.imported`) register theirs where they are
defined.

Conventions
-----------
- `to_solid` gives an OpenCascade shape (``OCP.TopoDS.TopoDS_Shape``) in MILLIMETRES (coordinates = metres × 1000),
  shape frame (the CAD kernel's unit here; STEP files are written in mm).
- `to_mesh` gives a `trimesh.Trimesh` in METRES, shape frame, watertight with outward normals.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
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

__all__ = ["MM_PER_M", "chamfer_edges", "cut_shape", "make_trimesh", "solids_of", "to_mesh", "to_solid"]

#: CAD solids are built in millimetres.
MM_PER_M = 1000.0


@functools.singledispatch
def to_solid(shape: Any) -> Any:
    """CAD solid (OpenCascade) of a shape in MILLIMETRES (coordinates = metres × 1000), shape frame.

    Exact B-rep primitives where the kernel has them (box, cylinder, cone, sphere, torus), an extruded
    outline for prisms, a boolean difference for the spherical shell, and an affinely mapped sphere (NURBS)
    for the ellipsoid.

    Parameters
    ----------
    shape : Shape, or a registered shape type (e.g. `massmodel.cad.imported.StepShape`)

    Returns
    -------
    OCP.TopoDS.TopoDS_Shape
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


def _ax2(z0_mm: float = 0.0, direction: tuple[float, float, float] = (0.0, 0.0, 1.0)) -> Any:
    """Placement at (0, 0, z0_mm) with the given main direction (OpenCascade picks the x direction, as cadquery did)."""
    from OCP.gp import gp_Ax2, gp_Dir, gp_Pnt

    return gp_Ax2(gp_Pnt(0.0, 0.0, z0_mm), gp_Dir(*direction))


def cut_shape(shape: Any, tool: Any) -> Any:
    """Boolean difference ``shape − tool`` of two OpenCascade shapes (mm).

    Raises
    ------
    RuntimeError
        The boolean failed (its empty result must not pass for a solid).
    """
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Cut

    op = BRepAlgoAPI_Cut(shape, tool)
    if not op.IsDone():
        raise RuntimeError("the OpenCascade boolean (cut) failed")
    return op.Shape()


def chamfer_edges(shape: Any, size_mm: float, axes: Sequence[int]) -> Any:
    """The shape (mm; a box, or any solid with straight edges) with a 45° chamfer of legs ``size_mm`` on every
    straight edge parallel to one of the coordinate ``axes`` (0, 1, 2), OpenCascade's ``BRepFilletAPI_MakeChamfer``.

    Raises
    ------
    RuntimeError
        The chamfer failed (its result must not pass for the solid).
    """
    from OCP.BRep import BRep_Tool
    from OCP.BRepFilletAPI import BRepFilletAPI_MakeChamfer
    from OCP.TopAbs import TopAbs_EDGE, TopAbs_FACE
    from OCP.TopExp import TopExp
    from OCP.TopoDS import TopoDS
    from OCP.TopTools import TopTools_IndexedDataMapOfShapeListOfShape

    faces_of = TopTools_IndexedDataMapOfShapeListOfShape()
    TopExp.MapShapesAndAncestors_s(shape, TopAbs_EDGE, TopAbs_FACE, faces_of)
    builder = BRepFilletAPI_MakeChamfer(shape)
    for n in range(1, faces_of.Extent() + 1):
        edge = TopoDS.Edge_s(faces_of.FindKey(n))
        ends = [BRep_Tool.Pnt_s(v) for v in (TopExp.FirstVertex_s(edge), TopExp.LastVertex_s(edge))]
        d = np.array([ends[1].X() - ends[0].X(), ends[1].Y() - ends[0].Y(), ends[1].Z() - ends[0].Z()])
        along = int(np.argmax(np.abs(d)))
        if along in axes and np.all(np.abs(np.delete(d, along)) <= 1e-9 * abs(d[along])):
            builder.Add(size_mm, size_mm, edge, TopoDS.Face_s(faces_of.FindFromIndex(n).First()))
    builder.Build()
    if not builder.IsDone():
        raise RuntimeError("the OpenCascade chamfer failed")
    return builder.Shape()


def solids_of(shape: Any) -> list[Any]:
    """The solids of an OpenCascade shape (a compound's members, or the shape itself), as ``TopoDS_Solid``."""
    from OCP.TopAbs import TopAbs_SOLID
    from OCP.TopExp import TopExp_Explorer
    from OCP.TopoDS import TopoDS

    out = []
    explorer = TopExp_Explorer(shape, TopAbs_SOLID)
    while explorer.More():
        out.append(TopoDS.Solid_s(explorer.Current()))
        explorer.Next()
    return out


def _prism_mm(outer: Any, inner: Any, z0_mm: float, height_mm: float) -> Any:
    """Straight prism (mm) of a planar face bounded by the wire ``outer`` (and a hole ``inner``), along +z."""
    from OCP.BRepBuilderAPI import BRepBuilderAPI_MakeFace
    from OCP.BRepPrimAPI import BRepPrimAPI_MakePrism
    from OCP.gp import gp_Vec
    from OCP.ShapeFix import ShapeFix_Face
    from OCP.TopoDS import TopoDS

    face = BRepBuilderAPI_MakeFace(outer, True)
    if inner is not None:
        face.Add(inner)
    if not face.IsDone():
        raise RuntimeError(f"could not build the planar face of a prism ({face.Error()})")
    fix = ShapeFix_Face(face.Face())
    fix.FixOrientation()  # the hole's wire runs the other way round (as cadquery's faces from wires)
    fix.Perform()
    base = TopoDS.Face_s(fix.Result())
    return BRepPrimAPI_MakePrism(base, gp_Vec(0.0, 0.0, height_mm), True).Shape()


@to_solid.register
def _box(s: Box) -> Any:
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeBox
    from OCP.gp import gp_Ax2, gp_Dir, gp_Pnt

    a, b, c = MM_PER_M * s.size_x, MM_PER_M * s.size_y, MM_PER_M * s.size_z
    return BRepPrimAPI_MakeBox(gp_Ax2(gp_Pnt(-a / 2.0, -b / 2.0, -c / 2.0), gp_Dir(0.0, 0.0, 1.0)), a, b, c).Shape()


@to_solid.register
def _prism(s: PrismShape) -> Any:
    from OCP.BRepBuilderAPI import BRepBuilderAPI_MakePolygon
    from OCP.gp import gp_Pnt

    xy, z0, z1 = s.prism_outline()
    z = MM_PER_M * z0
    polygon = BRepBuilderAPI_MakePolygon()
    for x, y in xy:
        polygon.Add(gp_Pnt(MM_PER_M * float(x), MM_PER_M * float(y), z))
    polygon.Close()
    return _prism_mm(polygon.Wire(), None, z, MM_PER_M * (z1 - z0))


@to_solid.register
def _cylinder(s: Cylinder) -> Any:
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeCylinder

    return BRepPrimAPI_MakeCylinder(_ax2(-MM_PER_M * s.length / 2.0), MM_PER_M * s.radius, MM_PER_M * s.length).Shape()


@to_solid.register
def _tube(s: Tube) -> Any:
    from OCP.BRepBuilderAPI import BRepBuilderAPI_MakeEdge, BRepBuilderAPI_MakeWire
    from OCP.gp import gp_Circ

    z0 = -MM_PER_M * s.length / 2.0

    def circle(radius_m: float) -> Any:
        return BRepBuilderAPI_MakeWire(BRepBuilderAPI_MakeEdge(gp_Circ(_ax2(z0), MM_PER_M * radius_m)).Edge()).Wire()

    return _prism_mm(circle(s.outer_radius), circle(s.inner_radius), z0, MM_PER_M * s.length)


@to_solid.register
def _sphere(s: Sphere) -> Any:
    return _cad_sphere_mm(s.radius)


@to_solid.register
def _spherical_shell(s: SphericalShell) -> Any:
    solids = solids_of(cut_shape(_cad_sphere_mm(s.outer_radius), _cad_sphere_mm(s.inner_radius)))
    if len(solids) != 1:
        raise RuntimeError(f"boolean cut gave {len(solids)} solids instead of one")
    return solids[0]


@to_solid.register
def _hemisphere(s: Hemisphere) -> Any:
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeSphere

    # latitude 0..90 degrees: the upper half, z >= 0
    return BRepPrimAPI_MakeSphere(_ax2(), MM_PER_M * s.radius, 0.0, math.pi / 2.0, 2.0 * math.pi).Shape()


@to_solid.register
def _cone(s: Cone) -> Any:
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeCone

    return BRepPrimAPI_MakeCone(_ax2(), MM_PER_M * s.radius, 0.0, MM_PER_M * s.height).Shape()


@to_solid.register
def _frustum(s: Frustum) -> Any:
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeCone, BRepPrimAPI_MakeCylinder

    if s.base_radius == s.top_radius:  # the kernel refuses a cone with two equal radii: it is a cylinder
        return BRepPrimAPI_MakeCylinder(_ax2(), MM_PER_M * s.base_radius, MM_PER_M * s.height).Shape()
    return BRepPrimAPI_MakeCone(_ax2(), MM_PER_M * s.base_radius, MM_PER_M * s.top_radius, MM_PER_M * s.height).Shape()


@to_solid.register
def _torus(s: Torus) -> Any:
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeTorus

    return BRepPrimAPI_MakeTorus(_ax2(), MM_PER_M * s.ring_radius, MM_PER_M * s.tube_radius).Shape()


@to_solid.register
def _ellipsoid(s: Ellipsoid) -> Any:
    """CAD ellipsoid (mm): unit sphere under the affine map diag(semi-axes), through OCP GTransform.

    The kernel has no ellipsoid primitive, so the result is a NURBS solid; its mass properties need the
    adaptive integrator (`BRepGProp.VolumeProperties_s(shape, props, eps)`, eps ~1e-14) for ~1e-10 accuracy.
    """
    from OCP.BRepBuilderAPI import BRepBuilderAPI_GTransform
    from OCP.gp import gp_GTrsf, gp_Mat

    a, b, c = (MM_PER_M * float(v) for v in s.semi_axes())
    transform = gp_GTrsf()
    transform.SetVectorialPart(gp_Mat(a, 0.0, 0.0, 0.0, b, 0.0, 0.0, 0.0, c))
    return BRepBuilderAPI_GTransform(_cad_sphere_mm(1e-3), transform, True).Shape()


@to_solid.register
def _point(s: PointMass, marker_radius: float = 0.01) -> Any:
    """Display marker: a CAD sphere of `marker_radius` (m), in millimetres."""
    return to_solid(s.marker(marker_radius))


def _cad_sphere_mm(radius_m: float) -> Any:
    """Full CAD sphere (mm) centred on the origin, latitudes −90°..90°."""
    from OCP.BRepPrimAPI import BRepPrimAPI_MakeSphere

    return BRepPrimAPI_MakeSphere(_ax2(), MM_PER_M * radius_m, -math.pi / 2.0, math.pi / 2.0, 2.0 * math.pi).Shape()
