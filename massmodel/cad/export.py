"""Export a model's geometry: a STEP AP214 assembly, binary STL, GLB, and a JSON sidecar of mass properties.

What each file holds
--------------------
STEP (AP214, length unit mm stated in the file)
    An assembly named after the model, nested by group (one sub-assembly per group path), with one solid per
    component named by its path, coloured with its colour (sRGB), cut-outs applied and placed by its own location
    (the component's pose; a mirrored part has its mirror built into its geometry, see :mod:`massmodel.cad.solids`).
STL (binary, mm, model axes)
    The whole selection in one file and/or one file per component (``<stem>_parts/<path>.stl``); triangles within
    the chord tolerance of the exact surfaces (flat faces exact).
GLB (binary glTF 2.0, metres)
    One node per component named by its path, under group nodes, with its colour as the material's base colour;
    a root node rotates model axes into glTF axes (+Y up, +Z forward, +X left).
Sidecar (JSON, SI)
    Mass, CG and inertia about the CG of exactly the exported components, with units, axes and the tensor
    convention; what was left out (point masses, open display meshes) and why; per component the density a CAD
    user should assign to reproduce the model's mass from the solid; and OpenCascade's mass properties recomputed
    from the exported solids, so the file can be checked against the model.

All files are staged as temporary files in their own folders and renamed into place only when every one of them
has been written (``os.replace``): a failure leaves any earlier export untouched.
"""

from __future__ import annotations

import enum
import json
import os
import re
import struct
import tempfile
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core.atomic import current_umask
from massmodel.core.massprops import MassProperties, combine_arrays
from massmodel.core.model import Component, MassSource, Model, in_group

__all__ = [
    "EXPORT_FORMAT",
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

EXPORT_FORMAT = "massmodel-export/1"
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


class ExportError(OSError):
    """An export that cannot be written (folder not writable, a writer failing); nothing was replaced."""


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
            raise ValueError(f"chord tolerance must be a positive length, got {self.chord_tolerance} m")


@dataclass(frozen=True)
class ExportResult:
    """Files written and what they cover."""

    files: tuple[Path, ...]
    sidecar: dict[str, Any]
    exported: tuple[str, ...]
    left_out: tuple[tuple[str, str], ...] = field(default=())


def slug(text: str) -> str:
    """File-name form of a name: lower case, runs of other characters as '-' ("Brindlecombe BL-3" → "brindlecombe-bl-3")."""
    out = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return out or "model"


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
            raise KeyError(f"selection: no part or group '{s}' in model '{model.name}'{hint}")
    return model.select(chosen)


def srgb_to_linear(c: np.ndarray) -> np.ndarray:
    """sRGB component values (0..1) to linear RGB (IEC 61966-2-1 transfer function)."""
    c = np.asarray(c, dtype=float)
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def _rgb(colour: str) -> tuple[float, float, float]:
    return tuple(int(colour[k : k + 2], 16) / 255.0 for k in (1, 3, 5))  # type: ignore[return-value]


def gltf_axes(model: Model) -> np.ndarray:
    """(3, 3) rotation taking model coordinates to glTF coordinates (+Y up, +Z forward, +X left), from the
    vehicle's directions (ISO 8855 default x forward, y left, z up when the model has no vehicle).

    References
    ----------
    Khronos glTF 2.0 specification, §3.4 "Coordinate System and Units": +Y up, +Z forward, −X right; metres.
    """
    if model.vehicle is not None:
        forward, left, up = model.vehicle.forward, model.vehicle.left, model.vehicle.up
    else:
        forward, left, up = np.eye(3)
    return np.array([left, up, forward], dtype=float)


def stl_bytes(vertices: np.ndarray, faces: np.ndarray, header: str) -> bytes:
    """A binary STL file: 80-byte header, triangle count, then normal, three vertices and a zero attribute word
    for each triangle (little-endian float32).

    References
    ----------
    The STL binary format as defined by 3D Systems' StereoLithography Interface Specification (1988); the header
    must not begin with "solid" (readers would take it for ASCII STL).
    """
    tri = np.asarray(vertices, dtype=float)[np.asarray(faces, dtype=np.int64)]
    normals = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    length = np.linalg.norm(normals, axis=1, keepdims=True)
    normals = np.divide(normals, length, out=np.zeros_like(normals), where=length > 0)
    record = np.zeros(len(tri), dtype=[("n", "<f4", (3,)), ("v", "<f4", (3, 3)), ("a", "<u2")])
    record["n"] = normals
    record["v"] = tri
    text = header.encode("ascii", "replace")[:80]
    if text.lower().startswith(b"solid"):
        text = b"x" + text[:79]
    return text.ljust(80, b" ") + struct.pack("<I", len(tri)) + record.tobytes()


# --------------------------------------------------------------------------------------------------
# staging: every file is written beside its target and renamed in at the end
# --------------------------------------------------------------------------------------------------


class _Stage:
    def __init__(self) -> None:
        self.pending: list[tuple[Path, Path]] = []
        self.made_dirs: list[Path] = []

    def temp_for(self, target: Path) -> Path:
        folder = target.parent
        missing = []
        probe = folder
        while not probe.exists():
            missing.append(probe)
            probe = probe.parent
        try:
            folder.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=f".{target.stem}.", suffix=f".tmp{target.suffix}", dir=folder)
        except OSError as exc:
            raise ExportError(f"cannot write to the folder '{folder}': {exc.strerror or exc}") from None
        os.close(fd)
        os.chmod(tmp, 0o666 & ~current_umask())  # mkstemp makes 0600 files; give the export the user's usual mode
        self.made_dirs.extend(reversed(missing))
        path = Path(tmp)
        self.pending.append((path, target))
        return path

    def write_bytes(self, target: Path, data: bytes) -> None:
        tmp = self.temp_for(target)
        try:
            tmp.write_bytes(data)
        except OSError as exc:
            raise ExportError(f"cannot write '{target}': {exc.strerror or exc}") from None

    def commit(self) -> list[Path]:
        for tmp, target in self.pending:
            os.replace(tmp, target)
        done = [t for _, t in self.pending]
        self.pending = []
        return done

    def abort(self) -> None:
        for tmp, _ in self.pending:
            tmp.unlink(missing_ok=True)
        self.pending = []
        for d in reversed(self.made_dirs):
            try:
                d.rmdir()
            except OSError:
                pass


# --------------------------------------------------------------------------------------------------
# the export
# --------------------------------------------------------------------------------------------------


@dataclass
class _Part:
    component: Component
    solid: Any  # mm, part frame, mirror baked in
    location: Any  # proper Pose
    mesh: Any = None  # trimesh, m, part frame


def _no_solid_reason(c: Component) -> str:
    if c.shape.kind == "point":
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
        raise ValueError(f"file name stem (--name) {stem!r}: expected a plain file name, without folders "
                         "(use --out for the folder)")
    tick = progress or (lambda stage, done, total: None)
    from .solids import component_local_mesh, component_local_solid, has_solid

    with_solid = [c for c in selected if has_solid(c)]
    left_out = tuple((c.path, _no_solid_reason(c)) for c in selected if not has_solid(c))
    if not with_solid:
        raise ValueError(f"selection of model '{model.name}' holds no solid to export "
                         f"({len(left_out)} point masses or open meshes)")
    parts: list[_Part] = []
    cache: dict[Any, Any] = {}
    used: set[int] = set()
    for k, c in enumerate(with_solid):
        solid, location = component_local_solid(c, cache)
        if id(solid) in used:  # a patterned copy: its own solid, so that STEP names it by its own path
            solid = _copy_shape(solid)
        used.add(id(solid))
        parts.append(_Part(c, solid, location))
        tick("solids", k + 1, len(with_solid))
    if Format.STL in opts.formats or Format.GLB in opts.formats:
        for k, p in enumerate(parts):
            p.mesh = component_local_mesh(p.component, opts.chord_tolerance, cache)
            tick("meshes", k + 1, len(parts))

    stage = _Stage()
    files: dict[str, Any] = {}
    try:
        if Format.STEP in opts.formats:
            target = out / f"{stem}.step"
            _write_step(model, parts, stage.temp_for(target), target.name)
            files["step"] = target.name
            tick("STEP", 1, 1)
        if Format.STL in opts.formats:
            header = f"massmodel | {model.name} | mm | model axes"
            if opts.stl_layout in (StlLayout.MODEL, StlLayout.BOTH):
                v, f = _placed_mesh_arrays(parts)
                target = out / f"{stem}.stl"
                stage.write_bytes(target, stl_bytes(v * 1e3, f, header))
                files["stl"] = target.name
            if opts.stl_layout in (StlLayout.PARTS, StlLayout.BOTH):
                files["stl_parts"] = {}
                for p in parts:
                    v, f = _placed_mesh_arrays([p])
                    target = out / f"{stem}_parts" / f"{p.component.path}.stl"
                    stage.write_bytes(target, stl_bytes(v * 1e3, f, f"massmodel | {p.component.path} | mm"))
                    files["stl_parts"][p.component.path] = str(target.relative_to(out))
            tick("STL", 1, 1)
        if Format.GLB in opts.formats:
            target = out / f"{stem}.glb"
            stage.write_bytes(target, _glb_bytes(model, parts))
            files["glb"] = target.name
            tick("GLB", 1, 1)
        sidecar = _sidecar(model, selected, parts, left_out, opts, files)
        target = out / f"{stem}.massprops.json"
        stage.write_bytes(target, (json.dumps(sidecar, indent=2, allow_nan=False) + "\n").encode("utf-8"))
        written = stage.commit()
    except BaseException:
        stage.abort()
        raise
    return ExportResult(tuple(written), sidecar, tuple(p.component.path for p in parts), left_out)


def _copy_shape(solid: Any) -> Any:
    import cadquery as cq
    from OCP.BRepBuilderAPI import BRepBuilderAPI_Copy

    return cq.Shape.cast(BRepBuilderAPI_Copy(solid.wrapped, True, False).Shape())


def _placed_mesh_arrays(parts: Sequence[_Part]) -> tuple[np.ndarray, np.ndarray]:
    """Vertices (m, model frame) and faces of the parts' meshes, concatenated (vertices kept per part)."""
    verts, faces, offset = [], [], 0
    for p in parts:
        v = p.location.apply(np.asarray(p.mesh.vertices, dtype=float))
        verts.append(v)
        faces.append(np.asarray(p.mesh.faces, dtype=np.int64) + offset)
        offset += len(v)
    return np.vstack(verts), np.vstack(faces)


def _group_chain(path: str) -> list[str]:
    segs = path.split("/")
    return ["/".join(segs[:k]) for k in range(1, len(segs))]


def _tree(paths: Sequence[str]) -> tuple[dict[str, list[str]], dict[str, list[int]]]:
    """Children groups and member part indices of every group ('' is the root)."""
    groups: dict[str, list[str]] = {"": []}
    members: dict[str, list[int]] = {"": []}
    for i, path in enumerate(paths):
        parent = ""
        for g in _group_chain(path):
            if g not in groups:
                groups[g] = []
                members[g] = []
                groups[parent].append(g)
            parent = g
        members[parent].append(i)
    return groups, members


def _write_step(model: Model, parts: Sequence[_Part], path: Path, file_name: str) -> None:
    import cadquery as cq
    from cadquery.occ_impl.assembly import toCAF
    from OCP.APIHeaderSection import APIHeaderSection_MakeHeader
    from OCP.IFSelect import IFSelect_ReturnStatus
    from OCP.Interface import Interface_Static
    from OCP.STEPCAFControl import STEPCAFControl_Writer
    from OCP.STEPControl import STEPControl_StepModelType
    from OCP.TCollection import TCollection_HAsciiString
    from OCP.XSControl import XSControl_WorkSession

    from .fileshape import _native_output
    from .solids import pose_trsf

    groups, members = _tree([p.component.path for p in parts])

    def build(group: str) -> Any:
        node = cq.Assembly(name=group or model.name)
        for i in members[group]:
            p = parts[i]
            node.add(p.solid, name=p.component.path, color=cq.Color(*_rgb(p.component.colour)),
                     loc=cq.Location(pose_trsf(p.location)))
        for child in groups[group]:
            node.add(build(child))
        return node

    _, doc = toCAF(build(""), True)
    session = XSControl_WorkSession()
    writer = STEPCAFControl_Writer(session, False)
    writer.SetColorMode(True)
    writer.SetNameMode(True)
    writer.SetLayerMode(False)
    Interface_Static.SetCVal_s("write.step.schema", "AP214IS")
    Interface_Static.SetCVal_s("xstep.cascade.unit", "MM")
    Interface_Static.SetCVal_s("write.step.unit", "MM")
    Interface_Static.SetIVal_s("write.surfacecurve.mode", 1)
    Interface_Static.SetIVal_s("write.precision.mode", 0)
    writer.Transfer(doc, STEPControl_StepModelType.STEPControl_AsIs)
    step_model = writer.ChangeWriter().Model()
    header = APIHeaderSection_MakeHeader(step_model)
    header.SetName(TCollection_HAsciiString(file_name))
    header.SetDescriptionValue(1, TCollection_HAsciiString(
        f"massmodel export of '{model.name}': one solid per component, lengths in mm, model axes"))
    header.SetOriginatingSystem(TCollection_HAsciiString("massmodel"))
    header.SetAuthorValue(1, TCollection_HAsciiString(""))
    header.SetOrganizationValue(1, TCollection_HAsciiString(""))
    header.SetAuthorisation(TCollection_HAsciiString(""))
    header.Apply(step_model)
    with _native_output() as said:
        status = writer.Write(str(path))
    if status != IFSelect_ReturnStatus.IFSelect_RetDone:
        raise ExportError(f"the STEP writer failed for '{path}' ({said[0] if said else status.name})")


def _glb_bytes(model: Model, parts: Sequence[_Part]) -> bytes:
    import trimesh
    from trimesh.visual.material import PBRMaterial

    scene = trimesh.Scene()
    root = slug(model.name)
    axes = np.eye(4)
    axes[:3, :3] = gltf_axes(model)
    scene.graph.update(frame_from=scene.graph.base_frame, frame_to=root, matrix=axes)
    groups, members = _tree([p.component.path for p in parts])

    def attach(group: str, parent: str) -> None:
        for i in members[group]:
            p = parts[i]
            mesh = trimesh.Trimesh(vertices=np.asarray(p.mesh.vertices), faces=np.asarray(p.mesh.faces), process=False)
            mesh.visual = trimesh.visual.TextureVisuals(
                material=PBRMaterial(name=p.component.colour, baseColorFactor=[*_rgb(p.component.colour), 1.0],
                                     metallicFactor=0.0, roughnessFactor=0.8))
            scene.add_geometry(mesh, node_name=p.component.path, geom_name=p.component.path, parent_node_name=parent,
                               transform=p.location.matrix4())
        for child in groups[group]:
            scene.graph.update(frame_from=parent, frame_to=child, matrix=np.eye(4))
            attach(child, child)

    attach("", root)
    data = scene.export(file_type="glb")
    return _exact_base_colours(bytes(data))


def _exact_base_colours(glb: bytes) -> bytes:
    """Set each material's baseColorFactor to the exact linear value of the sRGB colour in its name (trimesh
    stores material colours as 8-bit values; glTF base colours are linear, so the sRGB colour is converted).

    References
    ----------
    Khronos glTF 2.0 specification, §5.19 material.pbrMetallicRoughness.baseColorFactor (linear) and §4.4 GLB
    container layout (12-byte header, 4-byte aligned JSON chunk padded with spaces, BIN chunk).
    """
    magic, version, _ = struct.unpack_from("<4sII", glb, 0)
    json_len, json_type = struct.unpack_from("<II", glb, 12)
    if magic != b"glTF" or json_type != 0x4E4F534A:
        raise ExportError("the GLB writer produced an unexpected container")
    doc = json.loads(glb[20 : 20 + json_len].decode("utf-8"))
    rest = glb[20 + json_len :]
    for mat in doc.get("materials", []):
        name = mat.get("name", "")
        if re.fullmatch(r"#[0-9a-f]{6}", name):
            lin = srgb_to_linear(np.array(_rgb(name)))
            mat.setdefault("pbrMetallicRoughness", {})["baseColorFactor"] = [*map(float, lin), 1.0]
    doc.setdefault("asset", {})["generator"] = "massmodel (through trimesh)"
    text = json.dumps(doc, separators=(",", ":")).encode("utf-8")
    text += b" " * (-len(text) % 4)
    body = struct.pack("<II", len(text), 0x4E4F534A) + text + rest
    return struct.pack("<4sII", b"glTF", version, 12 + len(body)) + body


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
    parts: Sequence[_Part],
    left_out: Sequence[tuple[str, str]],
    opts: ExportOptions,
    files: dict[str, Any],
) -> dict[str, Any]:
    from .solids import MM_PER_M, volume_props

    rows = []
    geometry_props = []
    model_props_of_geometry = []
    for p in parts:
        c = p.component
        props = volume_props(p.solid.wrapped)
        vol_m3 = props.Mass() * 1e-9
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
            cm = props.CentreOfMass()
            m = props.MatrixOfInertia()
            local_c = np.array([cm.X(), cm.Y(), cm.Z()]) / MM_PER_M
            local_i = np.array([[m.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15 * density
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
            "cg_m": float(np.max(np.abs(geo.center - ref.center))),
            "inertia": float(np.max(np.abs(geo.inertia - ref.inertia))) / scale_i,
        },
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
