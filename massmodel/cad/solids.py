"""B-rep solids of components and slots through OpenCascade (OCP; millimetres: the CAD edge).

Model coordinates are metres; CAD solids are millimetres (OpenCascade and STEP readers assume mm unless told),
so every solid built here is in mm and is an ``OCP.TopoDS.TopoDS_Shape``. Import this module only where CAD is
needed: it imports OCP (not cadquery, which would bring VTK and more along).

Mirrored poses
--------------
A part placed by an improper pose (det = −1, a mirrored copy) cannot carry its pose as a CAD *location*
(OpenCascade locations are rigid motions). :func:`split_pose` writes such a pose as a proper pose times a mirror
across a plane through the part-frame origin, ``pose.linear = proper.linear @ (E − 2nnᵀ)``: the mirror is baked into
the part's geometry and the proper pose becomes the location (STEP instances, glTF nodes).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from OCP.Bnd import Bnd_Box
from OCP.BRep import BRep_Builder, BRep_Tool
from OCP.BRepAdaptor import BRepAdaptor_Surface
from OCP.BRepBndLib import BRepBndLib
from OCP.BRepBuilderAPI import BRepBuilderAPI_Transform
from OCP.BRepGProp import BRepGProp
from OCP.BRepMesh import BRepMesh_IncrementalMesh
from OCP.GeomAbs import GeomAbs_SurfaceType
from OCP.gp import gp_Ax2, gp_Dir, gp_Pnt, gp_Trsf
from OCP.GProp import GProp_GProps
from OCP.TopAbs import TopAbs_FACE, TopAbs_REVERSED
from OCP.TopExp import TopExp_Explorer
from OCP.TopLoc import TopLoc_Location
from OCP.TopoDS import TopoDS, TopoDS_Compound, TopoDS_Shape

from massmodel.cad.primitives import cut_shape, to_mesh, to_solid
from massmodel.core.frames import Pose
from massmodel.core.model import Component, Slot
from massmodel.core.shapes import PointMass

__all__ = [
    "MM_PER_M",
    "ANGULAR_DEFLECTION_RAD",
    "place_solid",
    "split_pose",
    "component_local_solid",
    "component_solid",
    "has_solid",
    "slot_solid",
    "solid_volume_properties",
    "solid_bounds",
    "tessellate",
    "component_local_mesh",
    "pose_trsf",
    "make_compound",
]

MM_PER_M = 1000.0
ANGULAR_DEFLECTION_RAD = 0.5  # loose on purpose: the absolute chord tolerance governs the tessellation
_ANALYTIC = {
    GeomAbs_SurfaceType.GeomAbs_Plane,
    GeomAbs_SurfaceType.GeomAbs_Cylinder,
    GeomAbs_SurfaceType.GeomAbs_Cone,
    GeomAbs_SurfaceType.GeomAbs_Sphere,
    GeomAbs_SurfaceType.GeomAbs_Torus,
}
_FREEFORM_EPS = 1e-14  # adaptive integration for NURBS faces (the default Gauss rule is off by ~4e-4 there)


def split_pose(pose: Pose) -> tuple[np.ndarray | None, Pose]:
    """Write a pose as a proper pose after an optional mirror.

    Returns
    -------
    mirror : (3, 3) float or None
        ``E − 2nnᵀ`` (a reflection across the plane through the origin with unit normal ``n``) for an improper
        pose, None for a proper one.
    proper : Pose
        A rotation and translation with ``proper.linear @ mirror = pose.linear``.
    """
    r = pose.linear
    if np.linalg.det(r) >= 0.0:
        return None, pose
    n = _reflection_normal(r)
    mirror = np.eye(3) - 2.0 * np.outer(n, n)
    return mirror, Pose(_orthonormalise(r @ mirror), pose.translation)


def _orthonormalise(r: np.ndarray) -> np.ndarray:
    u, _, vt = np.linalg.svd(r)
    return u @ vt


def _reflection_normal(r: np.ndarray) -> np.ndarray:
    """Unit normal ``n`` such that ``r (E − 2nnᵀ)`` is a proper rotation: an eigenvector of ``r`` for eigenvalue −1
    (an improper orthogonal 3×3 matrix always has one)."""
    w, v = np.linalg.eig(r)
    k = int(np.argmin(np.abs(w + 1.0)))
    n = np.real(v[:, k])
    return n / np.linalg.norm(n)


def _apply_trsf(shape: Any, trsf: gp_Trsf) -> Any:
    return BRepBuilderAPI_Transform(shape, trsf, True).Shape()


def _mirror_trsf(mirror: np.ndarray) -> gp_Trsf:
    w, v = np.linalg.eigh(mirror)
    n = v[:, int(np.argmin(w))]
    trsf = gp_Trsf()
    trsf.SetMirror(gp_Ax2(gp_Pnt(0.0, 0.0, 0.0), gp_Dir(*(float(c) for c in n))))
    return trsf


def pose_trsf(pose: Pose) -> gp_Trsf:
    """OpenCascade transformation (translation in mm) of a PROPER pose (translation in m)."""
    if np.linalg.det(pose.linear) < 0.0:
        raise ValueError("pose_trsf needs a proper pose; split a mirrored one with split_pose first")
    trsf = gp_Trsf()
    values = np.hstack([pose.linear, (pose.translation * MM_PER_M)[:, None]]).ravel()
    trsf.SetValues(*(float(v) for v in values))
    return trsf


def place_solid(solid: TopoDS_Shape, pose: Pose) -> TopoDS_Shape:
    """A copy of ``solid`` (mm) moved by ``pose`` (translation in m); handles mirrored poses (det = −1).

    OpenCascade's ``gp_Trsf`` holds a rotation or a mirror, not both in one matrix, so an improper pose is applied
    as a mirror across the plane with normal ``n`` followed by the proper rotation ``R (E − 2nnᵀ)``.
    """
    mirror, proper = split_pose(pose)
    shape = solid
    if mirror is not None:
        shape = _apply_trsf(shape, _mirror_trsf(mirror))
    return _apply_trsf(shape, pose_trsf(proper))


def make_compound(shapes: Any) -> TopoDS_Compound:
    """One OpenCascade compound holding the given shapes (mm), unchanged."""
    compound = TopoDS_Compound()
    builder = BRep_Builder()
    builder.MakeCompound(compound)
    for shape in shapes:
        builder.Add(compound, shape)
    return compound


def has_solid(component: Component) -> bool:
    """Whether the component has a closed solid (point masses and open display meshes have none)."""
    return component.shape.volume() > 0.0


def component_local_solid(component: Component, cache: dict[Any, Any] | None = None) -> tuple[TopoDS_Shape, Pose]:
    """The component's solid in its part frame, with the mirror of an improper pose baked in, and the proper pose.

    Parameters
    ----------
    component : Component
    cache : dict, optional
        Reuses the unmirrored part-frame solid of components sharing the same shape and cut-outs objects (mirrored
        and patterned copies do); pass the same dict for one pass over a model.

    Returns
    -------
    solid : OCP.TopoDS.TopoDS_Shape
        Shape minus cut-outs, mm, part frame (mirrored when the component's pose is).
    location : Pose
        Proper pose placing ``solid`` in the model frame.

    Raises
    ------
    ValueError
        The component has no solid (a point mass, an open mesh).
    """
    if not has_solid(component):
        raise ValueError(f"component '{component.path}' has no solid ({_no_solid_reason(component)})")
    solid = _part_frame_solid(component, cache)
    mirror, proper = split_pose(component.pose)
    if mirror is not None:
        solid = _apply_trsf(solid, _mirror_trsf(mirror))
    return solid, proper


def _part_frame_solid(component: Component, cache: dict[Any, Any] | None) -> Any:
    """Shape minus cut-outs, mm, part frame (not mirrored), reused through ``cache`` for shared shapes."""
    key = ("solid", id(component.shape), id(component.cutouts))
    solid = cache.get(key) if cache is not None else None
    if solid is None:
        solid = to_solid(component.shape)
        for cut in component.cutouts:
            solid = cut_shape(solid, place_solid(to_solid(cut.shape), cut.pose))
        if cache is not None:
            cache[key] = solid
            cache[("keep",) + key] = (component.shape, component.cutouts)  # keeps the ids valid while cached
    return solid


def _no_solid_reason(component: Component) -> str:
    if isinstance(component.shape, PointMass):
        return "a point mass"
    return "an open mesh, for display only"


def component_solid(component: Component) -> TopoDS_Shape:
    """The component's solid (shape minus its cut-outs) in mm, placed in the model frame.

    A point mass or an open display mesh has no solid: ``ValueError``.
    """
    solid, proper = component_local_solid(component)
    return _apply_trsf(solid, pose_trsf(proper))


def slot_solid(slot: Slot) -> TopoDS_Shape:
    """The slot's envelope solid in mm, model frame."""
    return place_solid(to_solid(slot.shape), slot.pose)


def _needs_adaptive(shape: Any) -> bool:
    explorer = TopExp_Explorer(shape, TopAbs_FACE)
    while explorer.More():
        if BRepAdaptor_Surface(TopoDS.Face_s(explorer.Current())).GetType() not in _ANALYTIC:
            return True
        explorer.Next()
    return False


def volume_props(shape: Any) -> GProp_GProps:
    """OpenCascade volume properties (mm) of a TopoDS shape: the Gauss rule on analytic faces (exact there), the
    adaptive integrator (eps 1e-14) when a face is a free-form surface (NURBS, Bézier, offset, swept)."""
    props = GProp_GProps()
    if _needs_adaptive(shape):
        BRepGProp.VolumeProperties_s(shape, props, _FREEFORM_EPS)
    else:
        BRepGProp.VolumeProperties_s(shape, props)
    return props


def solid_volume_properties(solid: Any, density: float = 1.0) -> tuple[float, np.ndarray, np.ndarray]:
    """OpenCascade's volume properties of a solid in mm, returned in SI.

    Parameters
    ----------
    solid : OCP.TopoDS.TopoDS_Shape
        In mm.
    density : float
        kg/m³.

    Returns
    -------
    mass : float
        kg (volume × density).
    center : (3,) float
        m.
    inertia : (3, 3) float
        kg·m² about the centre of mass, axes parallel to the global axes (OpenCascade's MatrixOfInertia: the tensor
        convention, off-diagonals −∫xy dm).
    """
    props = volume_props(solid)
    vol_m3 = props.Mass() * 1e-9
    c = props.CentreOfMass()
    m = props.MatrixOfInertia()
    tensor = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15 * density
    return vol_m3 * density, np.array([c.X(), c.Y(), c.Z()]) * 1e-3, tensor


def solid_bounds(solid: Any) -> np.ndarray:
    """Tight axis-aligned bounding box of a solid in mm, returned as (2, 3) float [min, max], m."""
    box = Bnd_Box()
    BRepBndLib.AddOptimal_s(solid, box, False, False)
    return np.array(box.Get()).reshape(2, 3) * 1e-3


def tessellate(solid: Any, chord_mm: float) -> tuple[np.ndarray, np.ndarray]:
    """Triangulate a solid with an absolute chord tolerance.

    Parameters
    ----------
    solid : OCP.TopoDS.TopoDS_Shape
        In mm.
    chord_mm : float
        Largest distance between the triangles and the exact surface, mm (OpenCascade's linear deflection, absolute).

    Returns
    -------
    vertices : (V, 3) float
        mm; vertices of neighbouring faces are merged only by the caller (``trimesh.Trimesh(process=True)``).
    faces : (F, 3) int
        Wound counter-clockwise seen from outside.
    """
    shape = solid
    BRepMesh_IncrementalMesh(shape, float(chord_mm), False, ANGULAR_DEFLECTION_RAD, False)
    verts: list[np.ndarray] = []
    faces: list[np.ndarray] = []
    offset = 0
    explorer = TopExp_Explorer(shape, TopAbs_FACE)
    while explorer.More():
        face = TopoDS.Face_s(explorer.Current())
        loc = TopLoc_Location()
        tri = BRep_Tool.Triangulation_s(face, loc)
        if tri is not None:
            trsf = loc.Transformation()
            n = tri.NbNodes()
            pts = (tri.Node(i).Transformed(trsf) for i in range(1, n + 1))
            v = np.array([[p.X(), p.Y(), p.Z()] for p in pts])
            t = np.array([tri.Triangle(i).Get() for i in range(1, tri.NbTriangles() + 1)], dtype=np.int64) - 1
            if face.Orientation() == TopAbs_REVERSED:
                t = t[:, ::-1]
            verts.append(v)
            faces.append(t + offset)
            offset += n
        explorer.Next()
    if not faces:
        return np.zeros((0, 3)), np.zeros((0, 3), dtype=np.int64)
    return np.vstack(verts), np.vstack(faces)


def component_local_mesh(component: Component, chord_m: float, cache: dict[Any, Any] | None = None) -> Any:
    """Watertight triangle mesh of the component in its part frame (mirror baked in, as
    :func:`component_local_solid`), in METRES.

    A shape without cut-outs uses its own mesher (``to_mesh(shape)``: closed form for primitives, OpenCascade for a
    STEP shape, the file's triangles for a mesh); otherwise the B-rep solid with its cut-outs is triangulated by
    OpenCascade at the same absolute chord tolerance.

    Parameters
    ----------
    component : Component
    chord_m : float
        Chord tolerance, m.
    cache : dict, optional
        As for :func:`component_local_solid` (shared meshes are triangulated once).

    Returns
    -------
    trimesh.Trimesh
        Metres, part frame (mirrored where the pose is improper), vertices merged.
    """
    import trimesh

    mirror, _ = split_pose(component.pose)
    key = ("mesh", id(component.shape), id(component.cutouts), float(chord_m))
    base = cache.get(key) if cache is not None else None
    if base is None:
        if not component.cutouts:
            mesh = to_mesh(component.shape, chord_m)
            base = trimesh.Trimesh(vertices=np.asarray(mesh.vertices, dtype=float),
                                   faces=np.asarray(mesh.faces, dtype=np.int64), process=True)
        else:
            v_mm, faces = tessellate(_part_frame_solid(component, cache), chord_m * MM_PER_M)
            base = trimesh.Trimesh(vertices=v_mm / MM_PER_M, faces=faces, process=True)
        if cache is not None:
            cache[key] = base
            cache[("keep",) + key] = (component.shape, component.cutouts)
    if mirror is None:
        return base.copy()
    return trimesh.Trimesh(vertices=np.asarray(base.vertices) @ mirror.T, faces=np.asarray(base.faces)[:, ::-1],
                           process=False)
