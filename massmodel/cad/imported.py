"""Shapes read from geometry files: STEP solids and triangle meshes (STL, OBJ, GLB).

Both kinds follow the protocol of the primitives in :mod:`massmodel.core.shapes` (``volume``, ``centroid``,
``inertia_per_density``, ``bounds``, ``contains``, ``surface_points``; ``massmodel.cad.primitives.to_solid`` in mm and
``to_mesh`` in m are registered for them), so a
component or a slot may use them like any primitive. The shape frame is the file's own coordinate frame, converted to
metres; the component's pose applies as for primitives.

STEP (:class:`StepShape`, in :mod:`massmodel.cad.step_shape`)
    Read with OpenCascade. A STEP file states its own length unit and OpenCascade converts it (to mm); the unit the
    model file declares must agree with it, which catches a file exported in the wrong unit. Mass properties are
    OpenCascade's exact volume integrals of the B-rep solids (adaptive integration on free-form faces). One or more
    solids; overlapping solids are refused (their common volume would be counted twice).
STL, OBJ, GLB (:class:`MeshShape`, in :mod:`massmodel.cad.mesh_shape`)
    Read with trimesh; these formats carry no unit, so the declared unit scales the coordinates (glTF is metres by
    its specification; the declared unit still applies, so declare "m" for a glTF file that follows it). A mesh is
    *closed* when it is watertight, consistently wound and encloses a positive volume (outward normals); its mass
    properties are then exact for the polyhedron (divergence theorem). An open or inverted mesh has no volume: it
    may only be shown, with measured mass properties (the model-file loader refuses it with a density, a material
    or a mass).

Importing this module needs numpy only; OCP and trimesh load when a file is read.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from massmodel.cad.fileshape import MESH_SUFFIXES, STEP_SUFFIXES, GeometryFileError
from massmodel.cad.mesh_shape import MeshShape, load_mesh
from massmodel.cad.step_shape import StepShape, load_step
from massmodel.core.atomic import note_input

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

_CACHE_SIZE = 64
_cache: dict[tuple[Any, ...], Any] = {}


def load_geometry(kind: str, path: Path, unit: str, metres_per_unit: float) -> StepShape | MeshShape:
    """Read a geometry file of ``kind`` ('step' or 'mesh'), reusing an earlier read of the same unchanged file.

    The file is noted as an input of the running command (:func:`massmodel.core.atomic.note_input`), also when the
    earlier read is reused, so that no output of the command (an export, a ballast block's STEP) replaces it.
    """
    if kind == "step" and path.suffix.lower() not in STEP_SUFFIXES:
        raise GeometryFileError(f"'{path}': a STEP file must end in {' or '.join(STEP_SUFFIXES)}", "file", kind)
    note_input(path)
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
