"""Shapes read from triangle-mesh files (`MeshShape`): STL, OBJ and GLB through trimesh.

These formats carry no unit, so the declared unit scales the coordinates. A *closed* mesh (watertight,
consistently wound, positive volume) has exact polyhedron mass properties; an open one may only be shown.
`to_solid` / `to_mesh` of `massmodel.cad.primitives` are registered here for `MeshShape`. Importing this module
needs numpy only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

import numpy as np

from massmodel.cad.fileshape import (
    MESH_SUFFIXES,
    GeometryFileError,
    _check_count,
    _check_points,
    _mesh_surface_points,
    _native_output,
    _readonly,
    _StoredProperties,
)
from massmodel.cad.primitives import to_mesh, to_solid
from massmodel.core.shapes import ShapeError

__all__ = ["MeshShape", "load_mesh"]


@dataclass(frozen=True, eq=False)
class MeshShape(_StoredProperties):
    """A triangle mesh read from STL, OBJ or GLB; shape frame = the file's frame scaled to metres.

    Attributes
    ----------
    file : str
        Resolved path.
    unit : str
        Declared length unit of the file's coordinates.
    closed : bool
        Watertight, consistently wound, positive enclosed volume. Only a closed mesh has a volume and a solid.
    problem : str
        Why the mesh is not closed ('' when it is).
    """

    file: str
    unit: str
    closed: bool
    problem: str
    _mesh: Any = field(repr=False)
    _volume: float = field(repr=False)
    _centroid: np.ndarray = field(repr=False)
    _inertia: np.ndarray = field(repr=False)
    _bounds: np.ndarray = field(repr=False)
    _cache: dict[str, Any] = field(default_factory=dict, repr=False)
    kind: ClassVar[str] = "mesh"
    FIELDS: ClassVar[dict[str, str]] = {"file": "file", "unit": "unit"}

    @property
    def triangle_count(self) -> int:
        return int(len(self._mesh.faces))

    def contains(self, points: np.ndarray, tol: float = 1e-9) -> np.ndarray:
        """Closed-set membership, (N,) bool: inside a closed mesh, or within ``tol`` (m) of its triangles."""
        import trimesh

        p = _check_points(points, tol, self.kind)
        if len(p) == 0:
            return np.zeros(0, dtype=bool)
        _, dist, _ = trimesh.proximity.closest_point(self._mesh, p)
        near = np.asarray(dist) <= tol
        if not self.closed:
            return near
        return near | np.asarray(self._mesh.contains(p), dtype=bool)

    def surface_points(self, n: int) -> np.ndarray:
        """About ``n`` deterministic points on the triangles, (M, 3) float, m: the vertices, topped up with seeded
        samples when there are fewer than ``n``."""

        return _mesh_surface_points(self._mesh, _check_count(n, self.kind))

    def params(self) -> dict[str, Any]:
        """The file fields: resolved path and declared unit."""
        return {"file": self.file, "unit": self.unit}


def _mesh_to_solid_mm(mesh: Any, name: str, volume_m3: float) -> Any:
    """A B-rep solid (mm) with one planar face per triangle, sharing vertices and edges as the mesh does.

    Built directly (no sewing search): one vertex per mesh vertex, one edge per mesh edge used by both of its
    triangles in opposite directions, one planar face per triangle wound as in the mesh (outward for a closed mesh).
    About 0.3 ms a triangle.
    """
    from OCP.BRep import BRep_Builder
    from OCP.BRepBuilderAPI import (
        BRepBuilderAPI_MakeEdge,
        BRepBuilderAPI_MakeFace,
        BRepBuilderAPI_MakeVertex,
        BRepBuilderAPI_MakeWire,
    )
    from OCP.BRepCheck import BRepCheck_Analyzer
    from OCP.gp import gp_Pnt
    from OCP.TopoDS import TopoDS, TopoDS_Shell, TopoDS_Solid

    from .solids import volume_props

    v = np.asarray(mesh.vertices, dtype=float) * 1e3
    vertices = [BRepBuilderAPI_MakeVertex(gp_Pnt(*(float(x) for x in p))).Vertex() for p in v]
    edges: dict[tuple[int, int], Any] = {}
    builder = BRep_Builder()
    shell = TopoDS_Shell()
    builder.MakeShell(shell)
    for tri in np.asarray(mesh.faces, dtype=np.int64).tolist():
        wire = BRepBuilderAPI_MakeWire()
        for i, j in ((tri[0], tri[1]), (tri[1], tri[2]), (tri[2], tri[0])):
            key = (i, j) if i < j else (j, i)
            edge = edges.get(key)
            if edge is None:
                edge = BRepBuilderAPI_MakeEdge(vertices[key[0]], vertices[key[1]]).Edge()
                edges[key] = edge
            wire.Add(edge if i < j else TopoDS.Edge_s(edge.Reversed()))
        face = BRepBuilderAPI_MakeFace(wire.Wire(), True)
        if not face.IsDone():
            raise ShapeError(f"mesh '{name}': triangle {tri} is degenerate", "file", "mesh")
        builder.Add(shell, face.Face())
    shell.Closed(True)
    solid = TopoDS_Solid()
    builder.MakeSolid(solid)
    builder.Add(solid, shell)
    got = volume_props(solid).Mass() * 1e-9
    if not BRepCheck_Analyzer(solid).IsValid() or not math.isclose(got, volume_m3, rel_tol=1e-6):
        raise ShapeError(f"mesh '{name}': could not rebuild a valid closed solid from its triangles "
                         f"(solid volume {got:.6g} m^3, mesh {volume_m3:.6g} m^3)", "file", "mesh")
    return solid


def _boundary_edges(mesh: Any) -> int:
    import trimesh

    return int(len(trimesh.grouping.group_rows(mesh.edges_sorted, require_count=1)))


def load_mesh(path: Path, unit: str, metres_per_unit: float) -> MeshShape:
    """Read an STL, OBJ or GLB file as a :class:`MeshShape` (coordinates × ``metres_per_unit``).

    Raises
    ------
    GeometryFileError
        Missing, unreadable or empty file, or an unsupported suffix.
    """
    import trimesh

    name = str(path)
    if path.suffix.lower() not in MESH_SUFFIXES:
        raise GeometryFileError(f"'{name}': a mesh file must end in {', '.join(MESH_SUFFIXES)}", "file", "mesh")
    if not path.is_file():
        raise GeometryFileError(f"mesh file '{name}' not found (paths are relative to the model file's folder)",
                                "file", "mesh")
    try:
        with _native_output():
            mesh = trimesh.load(name, force="mesh", process=True)
    except Exception as exc:  # trimesh raises many types for a bad file
        raise GeometryFileError(f"'{name}' is not a readable mesh ({type(exc).__name__}: {exc})", "file", "mesh") from None
    if not isinstance(mesh, trimesh.Trimesh) or len(mesh.faces) == 0:
        raise GeometryFileError(f"'{name}' holds no triangles", "file", "mesh")
    mesh.update_faces(mesh.nondegenerate_faces())
    mesh.remove_unreferenced_vertices()
    mesh.apply_scale(metres_per_unit)
    bounds = np.array(mesh.bounds, dtype=float)
    problem = ""
    if not mesh.is_watertight:
        problem = f"not watertight: {_boundary_edges(mesh)} open edges or edges shared by more than two triangles"
    elif not mesh.is_winding_consistent:
        problem = "triangles are not wound consistently"
    elif not mesh.volume > 0.0:
        problem = f"inside out: the triangles face inwards (enclosed volume {mesh.volume:.6g} m^3)"
    closed = problem == ""
    if closed:
        mesh.density = 1.0
        volume = float(mesh.volume)
        centroid = np.asarray(mesh.center_mass, dtype=float)
        inertia = np.asarray(mesh.moment_inertia, dtype=float)
    else:
        volume, centroid, inertia = 0.0, 0.5 * (bounds[0] + bounds[1]), np.zeros((3, 3))
    return MeshShape(
        file=name, unit=unit, closed=closed, problem=problem, _mesh=mesh, _volume=volume,
        _centroid=_readonly(centroid), _inertia=_readonly(0.5 * (inertia + inertia.T)), _bounds=_readonly(bounds),
    )



@to_mesh.register
def _mesh_mesh(shape: MeshShape, chord_tolerance: float | None = None) -> Any:
    """A copy of the file's triangles in METRES (the mesh is the shape: no chord error, whatever the tolerance)."""
    return shape._mesh.copy()


@to_solid.register
def _mesh_solid(shape: MeshShape) -> Any:
    """A B-rep solid in MILLIMETRES with one planar face per triangle (closed meshes only).

    Raises
    ------
    ShapeError
        The mesh is not closed.
    """
    if not shape.closed:
        raise ShapeError(f"mesh '{shape.file}' is not closed ({shape.problem}): it has no solid", "file", shape.kind)
    if "solid" not in shape._cache:
        shape._cache["solid"] = _mesh_to_solid_mm(shape._mesh, shape.file, shape._volume)
    return shape._cache["solid"]
