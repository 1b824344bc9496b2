"""Shapes read from geometry files: STEP solids and triangle meshes (STL, OBJ, GLB).

Both kinds follow the protocol of the primitives in :mod:`massmodel.core.shapes` (``volume``, ``centroid``,
``inertia_per_density``, ``bounds``, ``contains``, ``surface_points``, ``to_solid`` in mm, ``to_mesh`` in m), so a
component or a slot may use them like any primitive. The shape frame is the file's own coordinate frame, converted to
metres; the component's pose applies as for primitives.

STEP (:class:`StepShape`)
    Read with OpenCascade. A STEP file states its own length unit and OpenCascade converts it (to mm); the unit the
    model file declares must agree with it, which catches a file exported in the wrong unit. Mass properties are
    OpenCascade's exact volume integrals of the B-rep solids (adaptive integration on free-form faces). One or more
    solids; overlapping solids are refused (their common volume would be counted twice).
STL, OBJ, GLB (:class:`MeshShape`)
    Read with trimesh; these formats carry no unit, so the declared unit scales the coordinates (glTF is metres by
    its specification; the declared unit still applies, so declare "m" for a glTF file that follows it). A mesh is
    *closed* when it is watertight, consistently wound and encloses a positive volume (outward normals); its mass
    properties are then exact for the polyhedron (divergence theorem). An open or inverted mesh has no volume: it
    may only be shown, with measured mass properties (the model-file loader refuses it with a density, a material
    or a mass).

Importing this module needs numpy only; cadquery/OCP and trimesh load when a file is read.
"""

from __future__ import annotations

import contextlib
import math
import os
import re
import tempfile
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

import numpy as np

from massmodel.core.shapes import ShapeError

__all__ = [
    "GeometryFileError",
    "StepShape",
    "MeshShape",
    "MESH_SUFFIXES",
    "STEP_SUFFIXES",
    "load_geometry",
    "shape_from_fields",
    "load_step",
    "load_mesh",
]

STEP_SUFFIXES = (".step", ".stp")
MESH_SUFFIXES = (".stl", ".obj", ".glb")
# Length-unit names OpenCascade reports for a STEP file (STEPControl_Reader.FileUnits), metres per unit.
STEP_UNIT_NAMES = {
    "millimetre": 1e-3, "millimeter": 1e-3, "centimetre": 1e-2, "centimeter": 1e-2, "metre": 1.0, "meter": 1.0,
    "micrometre": 1e-6, "micrometer": 1e-6, "micron": 1e-6, "kilometre": 1e3, "kilometer": 1e3,
    "inch": 0.0254, "foot": 0.3048, "mil": 2.54e-5,
}
OVERLAP_MM3 = 1e-3  # solids of one STEP file sharing more than this are refused
_CACHE_SIZE = 64
_cache: dict[tuple[Any, ...], Any] = {}


class GeometryFileError(ShapeError):
    """A geometry file that cannot be used; ``field`` names the model-file field to fix ('file' or 'unit')."""

    def __init__(self, message: str, field: str = "file", kind: str | None = None) -> None:
        super().__init__(message, field, kind)


@contextlib.contextmanager
def _native_output() -> Iterator[list[str]]:
    """Capture what native code writes to file descriptors 1 and 2 (OpenCascade prints parse errors there); the
    captured text (ANSI colours removed) is appended to the yielded list when the block ends."""
    lines: list[str] = []
    saved = [os.dup(1), os.dup(2)]
    with tempfile.TemporaryFile(mode="w+b") as sink:
        try:
            os.dup2(sink.fileno(), 1)
            os.dup2(sink.fileno(), 2)
            yield lines
        finally:
            os.dup2(saved[0], 1)
            os.dup2(saved[1], 2)
            for fd in saved:
                os.close(fd)
            sink.seek(0)
            text = sink.read().decode("utf-8", "replace")
            lines.extend(ln.strip(" *") for ln in re.sub(r"\x1b\[[0-9;]*m", "", text).splitlines() if ln.strip(" *"))


def _check_points(points: np.ndarray, tol: float, kind: str) -> np.ndarray:
    p = np.asarray(points, dtype=float)
    if p.ndim != 2 or p.shape[1] != 3:
        raise ValueError(f"points must have shape (N, 3), got {p.shape}")
    if not (math.isfinite(tol) and tol >= 0.0):
        raise ShapeError(f"tol ({tol} m) must be finite and >= 0", "tol", kind)
    return p


def _check_count(n: int, kind: str) -> int:
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise ShapeError(f"n must be a whole number >= 1, got {n!r}", "n", kind)
    return int(n)


def _spread(points: np.ndarray, n: int) -> np.ndarray:
    """About ``n`` rows of ``points`` taken evenly by index (all of them when there are fewer)."""
    if len(points) <= n:
        return points
    return points[np.unique(np.linspace(0, len(points) - 1, n).round().astype(int))]


def _mesh_surface_points(mesh: Any, n: int) -> np.ndarray:
    """About ``n`` points on a mesh's triangles: its vertices (evenly thinned), topped up with seeded samples."""
    import trimesh

    v = np.asarray(mesh.vertices, dtype=float)
    if len(v) >= n:
        return _spread(v, n)
    extra, _ = trimesh.sample.sample_surface(mesh, n - len(v), seed=20261201)
    return np.vstack([v, np.asarray(extra, dtype=float)])


def _readonly(a: Any) -> np.ndarray:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


# --------------------------------------------------------------------------------------------------
# STEP
# --------------------------------------------------------------------------------------------------


class _StoredProperties:
    """The mass-properties accessors of a shape read from a file: the values are computed once when the file is read
    (by OpenCascade or trimesh) and stored in the fields ``_volume``, ``_centroid``, ``_inertia`` and ``_bounds``,
    all in the file frame, SI. An open mesh stores zero volume and inertia and its bounding-box centre."""

    __slots__ = ()
    _volume: float
    _centroid: np.ndarray
    _inertia: np.ndarray
    _bounds: np.ndarray

    def volume(self) -> float:
        """Volume, m³."""
        return self._volume

    def centroid(self) -> np.ndarray:
        """Centroid, (3,) float, m, file frame."""
        return self._centroid

    def inertia_per_density(self) -> np.ndarray:
        """Inertia at unit density about the centroid, (3, 3) float, m⁵, file axes, tensor convention."""
        return self._inertia

    def bounds(self) -> np.ndarray:
        """Axis-aligned bounding box, (2, 3) float, m, file frame."""
        return self._bounds


@dataclass(frozen=True, eq=False)
class StepShape(_StoredProperties):
    """Solid(s) read from a STEP file; shape frame = the file's frame, metres.

    Attributes
    ----------
    file : str
        Resolved path of the file.
    unit : str
        Length unit declared in the model file (agreeing with the one the file states).
    solid_count : int
        Number of solids in the file.
    """

    file: str
    unit: str
    solid_count: int
    _solid_mm: Any = field(repr=False)
    _volume: float = field(repr=False)
    _centroid: np.ndarray = field(repr=False)
    _inertia: np.ndarray = field(repr=False)
    _bounds: np.ndarray = field(repr=False)
    kind: ClassVar[str] = "step"
    FIELDS: ClassVar[dict[str, str]] = {"file": "file", "unit": "unit"}

    def contains(self, points: np.ndarray, tol: float = 1e-9) -> np.ndarray:
        """Closed-set membership: (N,) bool for points (N, 3) in m, file frame. A point is inside when OpenCascade's
        solid classifier says IN or ON, or when its distance to the solid (BRepExtrema) is at most ``tol`` (m)."""
        from OCP.BRepBuilderAPI import BRepBuilderAPI_MakeVertex
        from OCP.BRepClass3d import BRepClass3d_SolidClassifier
        from OCP.BRepExtrema import BRepExtrema_DistShapeShape
        from OCP.gp import gp_Pnt
        from OCP.TopAbs import TopAbs_IN, TopAbs_ON, TopAbs_SOLID
        from OCP.TopExp import TopExp_Explorer

        p = _check_points(points, tol, self.kind) * 1e3
        out = np.zeros(len(p), dtype=bool)
        explorer = TopExp_Explorer(self._solid_mm.wrapped, TopAbs_SOLID)
        while explorer.More():
            classifier = BRepClass3d_SolidClassifier(explorer.Current())
            for i in np.flatnonzero(~out):
                classifier.Perform(gp_Pnt(*(float(c) for c in p[i])), 1e-7)
                out[i] = classifier.State() in (TopAbs_IN, TopAbs_ON)
            explorer.Next()
        if tol > 0.0:
            for i in np.flatnonzero(~out):
                vertex = BRepBuilderAPI_MakeVertex(gp_Pnt(*(float(c) for c in p[i]))).Vertex()
                dist = BRepExtrema_DistShapeShape(vertex, self._solid_mm.wrapped)
                out[i] = bool(dist.IsDone() and dist.Value() <= tol * 1e3)
        return out

    def surface_points(self, n: int) -> np.ndarray:
        """About ``n`` deterministic points on the surface, (M, 3) float, m: nodes of a triangulation refined until
        there are at least ``n`` (nodes lie on the exact surface), thinned evenly; fewer only for solids with so few
        curved faces that the refinement cannot add nodes."""
        import cadquery as cq
        from OCP.BRepBuilderAPI import BRepBuilderAPI_Copy

        from .solids import tessellate

        n = _check_count(n, self.kind)
        size_mm = float(np.max(self._bounds[1] - self._bounds[0])) * 1e3
        chord = max(size_mm * 2e-3, 1e-3)
        for _ in range(5):  # refine until there are enough nodes (flat faces only have their outline's)
            copy = cq.Shape.cast(BRepBuilderAPI_Copy(self._solid_mm.wrapped, True, False).Shape())
            v, _faces = tessellate(copy, chord)
            nodes = np.unique(np.round(v, 9), axis=0)
            if len(nodes) >= n:
                break
            chord /= 4.0
        return _spread(nodes, n) * 1e-3

    def to_solid(self) -> Any:
        """The solid(s) as a cadquery shape in MILLIMETRES (a compound when the file holds several solids)."""
        return self._solid_mm

    def to_mesh(self, chord_tolerance: float) -> Any:
        """Watertight triangle mesh within ``chord_tolerance`` (m) of the B-rep surface, trimesh in METRES."""
        import trimesh

        if isinstance(chord_tolerance, bool) or not (float(chord_tolerance) > 0.0 and math.isfinite(chord_tolerance)):
            raise ShapeError(f"chord_tolerance ({chord_tolerance!r} m) must be a positive length",
                             "chord_tolerance", self.kind)
        mesh = self._mesh_mm(float(chord_tolerance) * 1e3)
        return trimesh.Trimesh(vertices=np.asarray(mesh.vertices) * 1e-3, faces=mesh.faces, process=True)

    def _mesh_mm(self, chord_mm: float) -> Any:
        import trimesh

        from .solids import tessellate

        v, f = tessellate(self._solid_mm, chord_mm)
        return trimesh.Trimesh(vertices=v, faces=f, process=True)

    def params(self) -> dict[str, Any]:
        """The file fields: resolved path and declared unit."""
        return {"file": self.file, "unit": self.unit}


def _step_units(reader: Any) -> list[str]:
    from OCP.TColStd import TColStd_SequenceOfAsciiString

    lengths, angles, solid_angles = (TColStd_SequenceOfAsciiString() for _ in range(3))
    reader.FileUnits(lengths, angles, solid_angles)
    return [lengths.Value(i).ToCString().strip().lower() for i in range(1, lengths.Length() + 1)]


def load_step(path: Path, unit: str, metres_per_unit: float) -> StepShape:
    """Read a STEP file as a :class:`StepShape`.

    Parameters
    ----------
    path : Path
        The file (.step or .stp).
    unit : str
        Length unit declared in the model file (for messages).
    metres_per_unit : float
        Its size, m.

    Raises
    ------
    GeometryFileError
        Missing or unreadable file, no solid, an invalid, inside-out or overlapping solid, or a declared unit that
        disagrees with the file's.
    """
    import cadquery as cq
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Common
    from OCP.BRepCheck import BRepCheck_Analyzer
    from OCP.gp import gp_Trsf
    from OCP.GProp import GProp_GProps
    from OCP.IFSelect import IFSelect_ReturnStatus
    from OCP.STEPControl import STEPControl_Reader
    from OCP.TopAbs import TopAbs_SOLID
    from OCP.TopExp import TopExp_Explorer

    from .solids import _apply_trsf, solid_bounds, volume_props

    name = str(path)
    if not path.is_file():
        raise GeometryFileError(f"STEP file '{name}' not found (paths are relative to the model file's folder)",
                                "file", "step")
    with _native_output() as said:
        reader = STEPControl_Reader()
        status = reader.ReadFile(name)
    if status != IFSelect_ReturnStatus.IFSelect_RetDone:
        detail = said[0] if said else status.name
        raise GeometryFileError(f"'{name}' is not a readable STEP file ({detail})", "file", "step")
    stated = _step_units(reader)
    with _native_output():
        reader.TransferRoots()
    shape = reader.OneShape()

    known = [STEP_UNIT_NAMES.get(u) for u in stated]
    if stated and any(k is None for k in known):
        raise GeometryFileError(f"'{name}' states a length unit massmodel does not know ({', '.join(stated)})",
                                "unit", "step")
    if stated and any(not math.isclose(k, metres_per_unit, rel_tol=1e-9) for k in known if k is not None):
        raise GeometryFileError(
            f"the model file declares unit '{unit}' but '{name}' states its lengths in {', '.join(sorted(set(stated)))}; "
            "declare the file's own unit", "unit", "step",
        )
    if not stated and not math.isclose(metres_per_unit, 1e-3, rel_tol=1e-12):
        scale = gp_Trsf()  # a file that states no unit is read as mm: apply the declared unit
        scale.SetScale(_origin(), metres_per_unit / 1e-3)
        shape = _apply_trsf(shape, scale)

    solids = []
    explorer = TopExp_Explorer(shape, TopAbs_SOLID)
    while explorer.More():
        solids.append(explorer.Current())
        explorer.Next()
    if not solids:
        raise GeometryFileError(f"'{name}' holds no closed solid (surfaces or wires only)", "file", "step")
    total = GProp_GProps()
    volumes = []
    for k, solid in enumerate(solids):
        if not BRepCheck_Analyzer(solid).IsValid():
            raise GeometryFileError(f"solid #{k + 1} of '{name}' is not a valid B-rep (OpenCascade check failed)",
                                    "file", "step")
        props = volume_props(solid)
        if not props.Mass() > 0.0:
            raise GeometryFileError(
                f"solid #{k + 1} of '{name}' encloses a volume of {props.Mass():.6g} mm^3: it is empty or inside out",
                "file", "step")
        volumes.append(props.Mass())
        total.Add(props, 1.0)
    compound = solids[0] if len(solids) == 1 else cq.Compound.makeCompound([cq.Shape.cast(s) for s in solids]).wrapped
    boxes = [solid_bounds(cq.Shape.cast(s)) for s in solids]
    for i in range(len(solids)):
        for j in range(i + 1, len(solids)):
            if np.any(boxes[i][0] > boxes[j][1]) or np.any(boxes[j][0] > boxes[i][1]):
                continue
            op = BRepAlgoAPI_Common(solids[i], solids[j])
            if not op.IsDone():  # a failed boolean has an empty result: it must not pass as "no overlap"
                raise GeometryFileError(
                    f"could not check whether solids #{i + 1} and #{j + 1} of '{name}' overlap (the OpenCascade "
                    "boolean failed); fuse them in the CAD tool or repair the file", "file", "step")
            common = volume_props(op.Shape()).Mass()
            if common > OVERLAP_MM3:
                raise GeometryFileError(
                    f"solids #{i + 1} and #{j + 1} of '{name}' overlap by {common:.4g} mm^3 (the volume would be "
                    "counted twice); fuse them in the CAD tool", "file", "step")
    c = total.CentreOfMass()
    m = total.MatrixOfInertia()
    inertia = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15
    solid_mm = cq.Shape.cast(compound)
    return StepShape(
        file=name, unit=unit, solid_count=len(solids), _solid_mm=solid_mm, _volume=float(total.Mass()) * 1e-9,
        _centroid=_readonly([c.X() * 1e-3, c.Y() * 1e-3, c.Z() * 1e-3]),
        _inertia=_readonly(0.5 * (inertia + inertia.T)), _bounds=_readonly(solid_bounds(solid_mm)),
    )


def _origin() -> Any:
    from OCP.gp import gp_Pnt

    return gp_Pnt(0.0, 0.0, 0.0)


# --------------------------------------------------------------------------------------------------
# Meshes
# --------------------------------------------------------------------------------------------------


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

    def to_mesh(self, chord_tolerance: float | None = None) -> Any:
        """A copy of the file's triangles in METRES (the mesh is the shape: no chord error, whatever the tolerance)."""
        return self._mesh.copy()

    def to_solid(self) -> Any:
        """A B-rep solid in MILLIMETRES with one planar face per triangle (closed meshes only).

        Raises
        ------
        ShapeError
            The mesh is not closed.
        """
        if not self.closed:
            raise ShapeError(f"mesh '{self.file}' is not closed ({self.problem}): it has no solid", "file", self.kind)
        if "solid" not in self._cache:
            self._cache["solid"] = _mesh_to_solid_mm(self._mesh, self.file, self._volume)
        return self._cache["solid"]

    def params(self) -> dict[str, Any]:
        """The file fields: resolved path and declared unit."""
        return {"file": self.file, "unit": self.unit}


def _mesh_to_solid_mm(mesh: Any, name: str, volume_m3: float) -> Any:
    """A B-rep solid (mm) with one planar face per triangle, sharing vertices and edges as the mesh does.

    Built directly (no sewing search): one vertex per mesh vertex, one edge per mesh edge used by both of its
    triangles in opposite directions, one planar face per triangle wound as in the mesh (outward for a closed mesh).
    About 0.3 ms a triangle.
    """
    import cadquery as cq
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
    return cq.Shape.cast(solid)


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


def load_geometry(kind: str, path: Path, unit: str, metres_per_unit: float) -> StepShape | MeshShape:
    """Read a geometry file of ``kind`` ('step' or 'mesh'), reusing an earlier read of the same unchanged file."""
    if kind == "step" and path.suffix.lower() not in STEP_SUFFIXES:
        raise GeometryFileError(f"'{path}': a STEP file must end in {' or '.join(STEP_SUFFIXES)}", "file", kind)
    try:
        st = path.stat()
        key: tuple[Any, ...] = (kind, str(path.resolve()), st.st_mtime_ns, st.st_size, unit, metres_per_unit)
    except OSError:
        key = ()
    if key and key in _cache:
        return _cache[key]
    shape = load_step(path, unit, metres_per_unit) if kind == "step" else load_mesh(path, unit, metres_per_unit)
    if key:
        if len(_cache) >= _CACHE_SIZE:
            _cache.pop(next(iter(_cache)))
        _cache[key] = shape
    return shape


def shape_from_fields(kind: str, fields: Mapping[str, Any], base_dir: Path) -> StepShape | MeshShape:
    """The shape of a model-file table with ``shape = "step"`` or ``"mesh"``: its ``file`` (relative to
    ``base_dir``, the model file's folder) and the declared length ``unit`` of the file.

    Raises
    ------
    GeometryFileError
        ``file`` or ``unit`` missing or malformed, or the file unusable (``field`` names which).
    """
    from massmodel.core import units

    what = "STEP file" if kind == "step" else "mesh file (STL, OBJ or GLB)"
    file = fields.get("file")
    if file is None:
        raise GeometryFileError(f"is missing (the path of the {what}, relative to this model file)", "file", kind)
    if not isinstance(file, str) or not file.strip():
        raise GeometryFileError(f"expected the path of the {what}, got {file!r}", "file", kind)
    text = fields.get("unit")
    if text is None:
        raise GeometryFileError("is missing: declare the length unit of the file's coordinates, e.g. unit = \"mm\"",
                                "unit", kind)
    try:
        if not isinstance(text, str):
            raise units.UnitError(f"expected a length unit such as \"mm\", got {text!r}")
        size = units.parse_unit(text)
        if size.dim != units.LENGTH:
            raise units.UnitError(f"'{text}' is not a length unit")
    except units.UnitError as exc:
        raise GeometryFileError(str(exc), "unit", kind) from None
    return load_geometry(kind, Path(base_dir) / file, text, float(size.value))
