"""Shapes read from STEP files (`StepShape`): exact B-rep solids through OpenCascade.

A STEP file states its own length unit and OpenCascade converts it (to mm); the unit the model file declares
must agree with it. Mass properties are OpenCascade's exact volume integrals. `to_solid` / `to_mesh` of
`massmodel.cad.primitives` are registered here for `StepShape`. Importing this module needs numpy only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

import numpy as np

from massmodel.cad.fileshape import (
    OVERLAP_MM3,
    STEP_UNIT_NAMES,
    GeometryFileError,
    _check_count,
    _check_points,
    _native_output,
    _readonly,
    _spread,
    _StoredProperties,
)
from massmodel.cad.primitives import to_mesh, to_solid
from massmodel.core.shapes import ShapeError

__all__ = ["StepShape", "load_step"]


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
        explorer = TopExp_Explorer(self._solid_mm, TopAbs_SOLID)
        while explorer.More():
            classifier = BRepClass3d_SolidClassifier(explorer.Current())
            for i in np.flatnonzero(~out):
                classifier.Perform(gp_Pnt(*(float(c) for c in p[i])), 1e-7)
                out[i] = classifier.State() in (TopAbs_IN, TopAbs_ON)
            explorer.Next()
        if tol > 0.0:
            for i in np.flatnonzero(~out):
                vertex = BRepBuilderAPI_MakeVertex(gp_Pnt(*(float(c) for c in p[i]))).Vertex()
                dist = BRepExtrema_DistShapeShape(vertex, self._solid_mm)
                out[i] = bool(dist.IsDone() and dist.Value() <= tol * 1e3)
        return out

    def surface_points(self, n: int) -> np.ndarray:
        """About ``n`` deterministic points on the surface, (M, 3) float, m: nodes of a triangulation refined until
        there are at least ``n`` (nodes lie on the exact surface), thinned evenly; fewer only for solids with so few
        curved faces that the refinement cannot add nodes."""
        from OCP.BRepBuilderAPI import BRepBuilderAPI_Copy

        from .solids import tessellate

        n = _check_count(n, self.kind)
        size_mm = float(np.max(self._bounds[1] - self._bounds[0])) * 1e3
        chord = max(size_mm * 2e-3, 1e-3)
        for _ in range(5):  # refine until there are enough nodes (flat faces only have their outline's)
            copy = BRepBuilderAPI_Copy(self._solid_mm, True, False).Shape()
            v, _faces = tessellate(copy, chord)
            nodes = np.unique(np.round(v, 9), axis=0)
            if len(nodes) >= n:
                break
            chord /= 4.0
        return _spread(nodes, n) * 1e-3

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
    from OCP.BRepAlgoAPI import BRepAlgoAPI_Common
    from OCP.BRepCheck import BRepCheck_Analyzer
    from OCP.gp import gp_Trsf
    from OCP.GProp import GProp_GProps
    from OCP.IFSelect import IFSelect_ReturnStatus
    from OCP.STEPControl import STEPControl_Reader
    from OCP.TopAbs import TopAbs_SOLID
    from OCP.TopExp import TopExp_Explorer

    from .solids import _apply_trsf, make_compound, solid_bounds, volume_props

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
    solid_mm = solids[0] if len(solids) == 1 else make_compound(solids)
    boxes = [solid_bounds(s) for s in solids]
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
    return StepShape(
        file=name, unit=unit, solid_count=len(solids), _solid_mm=solid_mm, _volume=float(total.Mass()) * 1e-9,
        _centroid=_readonly([c.X() * 1e-3, c.Y() * 1e-3, c.Z() * 1e-3]),
        _inertia=_readonly(0.5 * (inertia + inertia.T)), _bounds=_readonly(solid_bounds(solid_mm)),
    )


def _origin() -> Any:
    from OCP.gp import gp_Pnt

    return gp_Pnt(0.0, 0.0, 0.0)



@to_solid.register
def _step_solid(shape: StepShape) -> Any:
    """The solid(s) as an OpenCascade shape in MILLIMETRES (a compound when the file holds several solids)."""
    return shape._solid_mm


@to_mesh.register
def _step_mesh(shape: StepShape, chord_tolerance: float) -> Any:
    """Watertight triangle mesh within ``chord_tolerance`` (m) of the B-rep surface, trimesh in METRES."""
    import trimesh

    if isinstance(chord_tolerance, bool) or not (float(chord_tolerance) > 0.0 and math.isfinite(chord_tolerance)):
        raise ShapeError(f"chord_tolerance ({chord_tolerance!r} m) must be a positive length",
                         "chord_tolerance", shape.kind)
    mesh = shape._mesh_mm(float(chord_tolerance) * 1e3)
    return trimesh.Trimesh(vertices=np.asarray(mesh.vertices) * 1e-3, faces=mesh.faces, process=True)
