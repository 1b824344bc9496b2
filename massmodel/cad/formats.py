"""The file formats of the export: the STEP AP214 assembly writer, GLB and binary STL bytes, colours and axes.

:mod:`massmodel.cad.export` stages and writes the files; this module makes their contents (cadquery/OCP and
trimesh imported inside the functions that need them). Lengths: STEP and STL in mm, GLB in metres.
"""

from __future__ import annotations

import json
import re
import struct
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core.errors import UserError
from massmodel.core.model import Component, Model

__all__ = [
    "ExportError", "ExportPart", "glb_bytes", "gltf_axes", "placed_mesh_arrays", "slug", "srgb_to_linear", "stl_bytes",
    "write_step",
]


class ExportError(UserError, OSError):
    """An export that cannot be written (folder not writable, a writer failing); nothing was replaced."""


def slug(text: str) -> str:
    """File-name form of a name: lower case, runs of other characters as '-' ("Brindlecombe BL-3" → "brindlecombe-bl-3")."""
    out = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return out or "model"


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


@dataclass
class ExportPart:
    """One component on its way out: its solid (mm, part frame, mirror built in), placement and display mesh."""

    component: Component
    solid: Any  # mm, part frame, mirror baked in
    location: Any  # proper Pose
    mesh: Any = None  # trimesh, m, part frame


def placed_mesh_arrays(parts: Sequence[ExportPart]) -> tuple[np.ndarray, np.ndarray]:
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


def write_step(model: Model, parts: Sequence[ExportPart], path: Path, file_name: str) -> None:
    """Write the parts as a STEP AP214 assembly (mm), nested by group, named by path and coloured (sRGB)."""
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


def glb_bytes(model: Model, parts: Sequence[ExportPart]) -> bytes:
    """Binary glTF 2.0 of the parts (metres), one node per part under group nodes, root rotated to glTF axes."""
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
