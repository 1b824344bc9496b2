"""Export a model's geometry: a STEP AP214 assembly, binary STL, GLB, and a JSON sidecar of mass properties.

What each file holds
--------------------
STEP (AP214, length unit mm stated in the file; :mod:`massmodel.cad.step_writer`)
    An assembly named after the model, nested by group (one sub-assembly per group path), with one solid per
    component named by its path, coloured with its colour (sRGB), cut-outs applied and placed by its own location
    (the component's pose; a mirrored part has its mirror built into its geometry, see :mod:`massmodel.cad.solids`).
STL (binary, mm, model axes; :mod:`massmodel.cad.mesh_writers`)
    The whole selection in one file and/or one file per component (``<stem>_parts/<path>.stl``); triangles within
    the chord tolerance of the exact surfaces (flat faces exact).
GLB (binary glTF 2.0, metres; :mod:`massmodel.cad.mesh_writers`)
    One node per component named by its path, under group nodes, with its colour as the material's base colour;
    a root node rotates model axes into glTF axes (+Y up, +Z forward, +X left).
Sidecar (JSON, SI)
    Mass, CG and inertia about the CG of exactly the exported components, with units, axes and the tensor
    convention; what was left out (point masses, open display meshes) and why; per component the density a CAD
    user should assign to reproduce the model's mass from the solid; and OpenCascade's mass properties recomputed
    from the exported solids, so the file can be checked against the model.

Streaming
---------
The parts are exported one after the other: each component's solid is made, its volume integrals taken (for the
sidecar), the solid handed to the STEP writer (written out a batch of 64 parts at a time), its mesh made and its
triangles appended to the open STL file(s) and to the GLB's binary data (a scratch file), and all of it released
before the next component. Components sharing a shape (mirrored and patterned copies) share a cache of the solid and
mesh, dropped after the last of them. What stays in memory is a few numbers a part (volume integrals, placements,
the GLB's JSON entries), so the peak memory is about flat in the number of parts.

The export imports OpenCascade (OCP) and trimesh, not cadquery: :mod:`massmodel.cad.solids` returns
``OCP.TopoDS.TopoDS_Shape`` objects and every step after it uses OCP.

All files are written (streamed) into temporary files in their own folders and renamed into place only when every
one of them has been written (``os.replace``): a failure leaves any earlier export untouched. The sidecar lists the SHA-256 of
every other file and is renamed in last, so a process killed during the renames leaves new files beside the old
sidecar, which :func:`verify_export` detects; the temporary files of a killed export are named
``.massmodel-partial-<pid>.*`` and removed by the next export into that folder (:func:`clean_partial_files`).
"""

from __future__ import annotations

import enum
import json
import os
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core.errors import NotFoundError, UsageError
from massmodel.core.massprops import MassProperties, combine_arrays
from massmodel.core.model import Component, MassSource, Model, in_group
from massmodel.core.shapes import PointMass

from .formats import ExportError, ExportPart, gltf_axes, slug, srgb_to_linear, stl_bytes
from .mesh_writers import GlbStream, StlStream
from .staging import PARTIAL_PREFIX, clean_partial_files, verify_export
from .staging import Stage as _Stage
from .step_writer import StepStream, pose_matrix_mm

__all__ = [
    "EXPORT_FORMAT",
    "PARTIAL_PREFIX",
    "clean_partial_files",
    "verify_export",
    "Format",
    "StlLayout",
    "ExportOptions",
    "ExportResult",
    "ExportError",
    "export_model",
    "select_components",
    "slug",
    "stl_bytes",
    "srgb_to_linear",
    "gltf_axes",
]

#: The sidecar's format; /2: the CG difference of ``geometry_check`` is ``cg_difference_m`` (metres), no longer
#: filed among the relative differences.
EXPORT_FORMAT = "massmodel-export/2"
ProgressFn = Callable[[str, int, int], None]  # (stage, done, total)


class Format(enum.Enum):
    """Geometry file formats."""

    STEP = "step"
    STL = "stl"
    GLB = "glb"


class StlLayout(enum.Enum):
    """Which STL files to write: the whole selection in one file, one file per component, or both."""

    MODEL = "model"
    PARTS = "parts"
    BOTH = "both"


@dataclass(frozen=True)
class ExportOptions:
    """What to export.

    Parameters
    ----------
    formats : frozenset of Format
        Geometry files to write (the sidecar is always written).
    stl_layout : StlLayout
        Whole-selection STL, per-component STL files, or both.
    chord_tolerance : float
        Largest distance between the STL/GLB triangles and the exact surfaces, m.
    selection : tuple of str
        Group or component paths to export ('' or empty: the whole model).
    """

    formats: frozenset[Format] = frozenset(Format)
    stl_layout: StlLayout = StlLayout.MODEL
    chord_tolerance: float = 1e-4
    selection: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not (self.chord_tolerance > 0.0 and np.isfinite(self.chord_tolerance)):
            raise UsageError(f"chord tolerance must be a positive length, got {self.chord_tolerance} m")


@dataclass(frozen=True)
class ExportResult:
    """Files written and what they cover."""

    files: tuple[Path, ...]
    sidecar: dict[str, Any]
    exported: tuple[str, ...]
    left_out: tuple[tuple[str, str], ...] = field(default=())


def select_components(model: Model, selection: Iterable[str]) -> list[Component]:
    """Components in any of the selected groups or paths (all when the selection is empty).

    Raises
    ------
    KeyError
        A selected path matches no component (with close matches).
    """
    chosen = [s.strip("/") for s in selection if s.strip("/")]
    if not chosen:
        return list(model.components)
    for s in chosen:
        if not any(in_group(c.path, s) for c in model.components):
            import difflib

            names = [c.path for c in model.components] + model.groups()
            close = difflib.get_close_matches(s, names, n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise NotFoundError(f"selection: no part or group '{s}' in model '{model.name}'{hint}")
    return model.select(chosen)


# --------------------------------------------------------------------------------------------------
# the export
# --------------------------------------------------------------------------------------------------


def _no_solid_reason(c: Component) -> str:
    if isinstance(c.shape, PointMass):
        return "point mass: no solid"
    return f"open mesh, display only ({getattr(c.shape, 'problem', '')})"


def export_model(
    model: Model,
    out_dir: str | Path,
    options: ExportOptions | None = None,
    *,
    stem: str | None = None,
    progress: ProgressFn | None = None,
) -> ExportResult:
    """Write the selected components to STEP, STL and GLB files and the mass-properties sidecar.

    Parameters
    ----------
    model : Model
    out_dir : str or Path
        Folder for the files (created when missing).
    options : ExportOptions, optional
    stem : str, optional
        File name stem (default: the model name's slug, plus the selection's when one is given).
    progress : callable, optional
        Called as ``progress(stage, done, total)`` while working.

    Returns
    -------
    ExportResult

    Raises
    ------
    KeyError
        A selected path matches nothing.
    ValueError
        The selection holds no solid, or ``stem`` is not a plain file name (empty, dots only, or with a folder).
    ExportError
        A file cannot be written; earlier files are left as they were.
    """
    opts = options or ExportOptions()
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise ExportError(f"the output path '{out}' exists and is not a folder")
    selected = select_components(model, opts.selection)
    if stem is None:
        stem = slug(model.name) + ("_" + "+".join(slug(s) for s in opts.selection) if opts.selection else "")
    elif not stem.strip() or stem.strip(".") == "" or any(sep in stem for sep in ("/", "\\", os.sep)):
        raise UsageError(f"file name stem (--name) {stem!r}: expected a plain file name, without folders "
                         "(use --out for the folder)")
    tick = progress or (lambda stage, done, total: None)
    from .solids import has_solid

    with_solid = [c for c in selected if has_solid(c)]
    left_out = tuple((c.path, _no_solid_reason(c)) for c in selected if not has_solid(c))
    if not with_solid:
        raise UsageError(f"selection of model '{model.name}' holds no solid to export "
                         f"({len(left_out)} point masses or open meshes)")

    clean_partial_files(out, [out / f"{stem}_parts"])  # what an export killed part-way left here
    stage = _Stage()
    files: dict[str, Any] = {}
    writers = _Writers()
    try:
        if Format.STEP in opts.formats:
            target = out / f"{stem}.step"
            writers.step = StepStream(stage.temp_for(target), stage.scratch_for(target, "part"), model.name,
                                      target.name)
            files["step"] = target.name
        if Format.STL in opts.formats and opts.stl_layout in (StlLayout.MODEL, StlLayout.BOTH):
            target = out / f"{stem}.stl"
            writers.stl = StlStream(stage.temp_for(target), f"massmodel | {model.name} | mm | model axes")
            files["stl"] = target.name
        if Format.GLB in opts.formats:
            target = out / f"{stem}.glb"
            axes = np.eye(4)
            axes[:3, :3] = gltf_axes(model)
            writers.glb = GlbStream(stage.temp_for(target), stage.scratch_for(target, "bin"), slug(model.name), axes)
            files["glb"] = target.name
        part_files = Format.STL in opts.formats and opts.stl_layout in (StlLayout.PARTS, StlLayout.BOTH)
        if part_files:
            files["stl_parts"] = {}
        meshes = Format.STL in opts.formats or Format.GLB in opts.formats
        parts = []
        for k, (c, cache) in enumerate(_with_caches(with_solid)):
            part = _export_part(c, cache, writers.step)
            parts.append(part)
            tick("solids", k + 1, len(with_solid))
            if meshes:
                vertices, faces = _part_mesh(c, opts.chord_tolerance, cache)
                if writers.stl is not None or part_files:
                    placed_mm = part.location.apply(vertices) * 1e3
                    if writers.stl is not None:
                        writers.stl.add(placed_mm, faces)
                    if part_files:
                        target = out / f"{stem}_parts" / f"{c.path}.stl"
                        stage.write_bytes(target, stl_bytes(placed_mm, faces, f"massmodel | {c.path} | mm"))
                        files["stl_parts"][c.path] = str(target.relative_to(out))
                if writers.glb is not None:
                    writers.glb.add(c.path, c.colour, part.location.matrix4(), vertices, faces)
                del vertices, faces
                tick("meshes", k + 1, len(with_solid))
        if writers.step is not None:
            writers.step.close()
            writers.step = None
            tick("STEP", 1, 1)
        if writers.stl is not None:
            writers.stl.close()
            writers.stl = None
        if Format.STL in opts.formats:
            tick("STL", 1, 1)
        if writers.glb is not None:
            writers.glb.close()
            writers.glb = None
            tick("GLB", 1, 1)
        files["sha256"] = stage.hashes(out)  # the manifest: the sidecar, renamed in last, vouches for these
        sidecar = _sidecar(model, selected, parts, left_out, opts, _ordered(files))
        target = out / f"{stem}.massprops.json"
        stage.write_bytes(target, (json.dumps(sidecar, indent=2, allow_nan=False) + "\n").encode("utf-8"))
        written = stage.commit()
    except BaseException:
        writers.discard()
        stage.abort()
        raise
    return ExportResult(tuple(written), sidecar, tuple(p.component.path for p in parts), left_out)


_FILE_KEYS = ("step", "stl", "stl_parts", "glb", "sha256")


def _ordered(files: dict[str, Any]) -> dict[str, Any]:
    """The sidecar's ``files`` in a fixed key order (step, stl, stl_parts, glb, sha256), whatever the writing order."""
    return {key: files[key] for key in _FILE_KEYS if key in files}


class _Writers:
    """The open streamed files of one export."""

    def __init__(self) -> None:
        self.step: StepStream | None = None
        self.stl: StlStream | None = None
        self.glb: GlbStream | None = None

    def discard(self) -> None:
        for writer in (self.step, self.stl, self.glb):
            if writer is not None:
                writer.discard()


def _with_caches(components: Sequence[Component]) -> Iterator[tuple[Component, dict[Any, Any]]]:
    """Each component with the solid/mesh cache of its shape: components sharing a shape and cut-outs (mirrored and
    patterned copies) share one cache, dropped after the last of them, so only the meshes of shapes still to come
    stay in memory."""
    def key(c: Component) -> tuple[int, int]:
        return id(c.shape), id(c.cutouts)

    last = {key(c): k for k, c in enumerate(components)}
    caches: dict[tuple[int, int], dict[Any, Any]] = {}
    for k, c in enumerate(components):
        cache = caches.setdefault(key(c), {})
        yield c, cache
        if last[key(c)] == k:
            del caches[key(c)]


def _export_part(c: Component, cache: dict[Any, Any], step: StepStream | None) -> ExportPart:
    """The component's placement and the volume integrals of its solid; the solid goes to the STEP file, if any,
    and is not kept."""
    from .solids import component_local_solid, volume_props

    shape, location = component_local_solid(c, cache)
    props = volume_props(shape)
    centre = props.CentreOfMass()
    matrix = props.MatrixOfInertia()
    if step is not None:
        step.add(c.path, c.colour, shape, pose_matrix_mm(location))
    return ExportPart(c, location, props.Mass(), np.array([centre.X(), centre.Y(), centre.Z()]),
                      np.array([[matrix.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]))


def _part_mesh(c: Component, chord_tolerance: float, cache: dict[Any, Any]) -> tuple[np.ndarray, np.ndarray]:
    """Vertices (m, part frame, float) and faces (int) of the component's display mesh; the mesh object is not kept."""
    from .solids import component_local_mesh

    mesh = component_local_mesh(c, chord_tolerance, cache)
    return np.asarray(mesh.vertices, dtype=float), np.asarray(mesh.faces, dtype=np.int64)


def _props_dict(mp: MassProperties) -> dict[str, Any]:
    return {"mass_kg": mp.mass, "cg_m": mp.center.tolist(), "inertia_cg_kg_m2": mp.inertia.tolist()}


def _combine(props: Sequence[MassProperties]) -> MassProperties:
    if not props:
        return MassProperties.zero()
    m = np.array([p.mass for p in props])
    c = np.array([p.center for p in props])
    t = np.array([p.inertia for p in props])
    return MassProperties(*combine_arrays(m, c, t))


def _sidecar(
    model: Model,
    selected: Sequence[Component],
    parts: Sequence[ExportPart],
    left_out: Sequence[tuple[str, str]],
    opts: ExportOptions,
    files: dict[str, Any],
) -> dict[str, Any]:
    from .solids import MM_PER_M

    rows = []
    geometry_props = []
    model_props_of_geometry = []
    for p in parts:
        c = p.component
        vol_m3 = p.volume_mm3 * 1e-9
        density = c.implied_density
        carries = c.source is not MassSource.MEASURED
        row: dict[str, Any] = {
            "path": c.path,
            "step_name": c.path,
            **_props_dict(c.props),
            "mass_source": c.source.value,
            "geometry_carries_mass": carries,
            "solid_volume_m3": vol_m3,
            "density_kg_m3": density,
            "colour": c.colour,
        }
        if "stl_parts" in files:
            row["stl_file"] = files["stl_parts"][c.path]
        rows.append(row)
        if carries and density:
            r = p.location.linear
            local_c = p.centre_mm / MM_PER_M
            local_i = p.inertia_mm5 * 1e-15 * density
            geometry_props.append(MassProperties(vol_m3 * density, p.location.apply(local_c), r @ local_i @ r.T))
            model_props_of_geometry.append(c.props)
    exported = _combine([p.component.props for p in parts])
    whole = _combine([c.props for c in selected])
    geo = _combine(geometry_props)
    ref = _combine(model_props_of_geometry)
    scale_i = max(float(np.max(np.abs(ref.inertia))), 1e-300)
    check = {
        "covers": f"{len(geometry_props)} of {len(parts)} exported components (those whose mass comes from a "
        "material, a density or a mass; measured ones are shown only)",
        "from_geometry": _props_dict(geo),
        "model": _props_dict(ref),
        "relative_difference": {
            "mass": abs(geo.mass - ref.mass) / ref.mass if ref.mass else 0.0,
            "inertia": float(np.max(np.abs(geo.inertia - ref.inertia))) / scale_i,
        },
        "cg_difference_m": float(np.max(np.abs(geo.center - ref.center))),  # largest coordinate, model frame
        "method": "OpenCascade volume integrals of each exported solid (STEP geometry) times its density_kg_m3",
    }
    axes = gltf_axes(model)
    vehicle = None
    if model.vehicle is not None:
        vehicle = {"forward": model.vehicle.forward.tolist(), "left": model.vehicle.left.tolist(),
                   "up": model.vehicle.up.tolist()}
    return {
        "format": EXPORT_FORMAT,
        "model": model.name,
        "source": model.source,
        "selection": list(opts.selection) or ["(whole model)"],
        "files": files,
        "conventions": {
            "units": "sidecar SI: kg, m, kg*m^2 (unit in every key); STEP mm (stated in the file); STL mm (STL has no "
            "unit field); GLB m (glTF 2.0)",
            "axes": "model axes of the model file; every position is in model coordinates",
            "vehicle_directions_in_model_axes": vehicle,
            "inertia": "tensor about the CG, axes parallel to the model axes; off-diagonal I_xy = -integral(x*y dm) "
            "(tensor / negative product convention)",
            "placement": "STEP and GLB place each component by its own location (rotation and translation of its part "
            "frame); a mirrored component has the mirror built into its geometry",
            "glb_root_rotation": {"node": slug(model.name), "matrix": axes.tolist(),
                                  "meaning": "rows: glTF +X (left), +Y (up), +Z (forward) in model axes"},
            "tessellation": f"STL and GLB triangles lie within {opts.chord_tolerance * 1e3:g} mm of the exact surfaces "
            "(flat faces exact): a closed part's mesh volume differs from the exact volume by at most its surface "
            "area times that tolerance",
        },
        "chord_tolerance_mm": opts.chord_tolerance * 1e3,
        "covers": {
            "components": len(parts),
            "note": "the mass properties below are the model's, for exactly the components in the geometry files",
        },
        **_props_dict(exported),
        "left_out": [{"path": p, "reason": r, "mass_kg": model.component(p).props.mass} for p, r in left_out],
        "selection_total_with_left_out": {"components": len(selected), **_props_dict(whole)},
        "geometry_check": check,
        "components": rows,
    }
