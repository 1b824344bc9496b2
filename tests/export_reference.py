"""Test helpers for the export: the writers as they were before the export streamed (the "before" side of the
before/after comparisons), and independent readers of what was written.

- ``reference_step``: the STEP assembly written through cadquery's ``Assembly`` and ``toCAF`` (the previous writer).
- ``reference_glb``: the GLB written through a ``trimesh.Scene`` of every part's mesh at once (the previous writer).
- ``reference_stl``: the whole-model binary STL of every part's mesh concatenated (the previous writer).
- ``step_tree``: every node of a STEP file's assembly tree, read with OpenCascade's STEPCAFControl_Reader.
- ``glb_nodes``: every node of a GLB file (name, parent, matrix, colour, triangles), read from the container by
  hand after the Khronos glTF 2.0 specification.

Oracles: OpenCascade's XCAF reader and BRepGProp; trimesh's glTF writer for the reference GLB; cadquery's assembly
writer for the reference STEP.
"""

from __future__ import annotations

import json
import struct
from pathlib import Path
from typing import Any

import numpy as np
from OCP.BRepGProp import BRepGProp
from OCP.GProp import GProp_GProps
from OCP.IFSelect import IFSelect_ReturnStatus
from OCP.Quantity import Quantity_Color, Quantity_TOC_sRGB
from OCP.STEPCAFControl import STEPCAFControl_Reader
from OCP.TCollection import TCollection_ExtendedString
from OCP.TDataStd import TDataStd_Name
from OCP.TDF import TDF_Label, TDF_LabelSequence
from OCP.TDocStd import TDocStd_Document
from OCP.TopLoc import TopLoc_Location
from OCP.XCAFDoc import XCAFDoc_ColorType, XCAFDoc_DocumentTool

from massmodel.cad.formats import gltf_axes, group_tree, rgb, slug, stl_bytes
from massmodel.core.model import Model


def _local_parts(model: Model, chord: float | None) -> list[tuple[Any, Any, Any, Any]]:
    """(component, part-frame solid, proper pose, part-frame mesh or None) of every component with a solid, made the
    way the export makes them (solids.component_local_solid / component_local_mesh)."""
    from massmodel.cad.solids import component_local_mesh, component_local_solid, has_solid

    cache: dict[Any, Any] = {}
    out = []
    for c in model.components:
        if has_solid(c):
            solid, location = component_local_solid(c, cache)
            mesh = component_local_mesh(c, chord, cache) if chord is not None else None
            out.append((c, solid, location, mesh))
    return out


def reference_step(model: Model, path: Path) -> None:
    """The STEP file as the previous writer made it: a cadquery Assembly nested by group, through ``toCAF``."""
    import cadquery as cq
    from cadquery.occ_impl.assembly import toCAF
    from OCP.BRepBuilderAPI import BRepBuilderAPI_Copy
    from OCP.Interface import Interface_Static
    from OCP.STEPCAFControl import STEPCAFControl_Writer
    from OCP.STEPControl import STEPControl_StepModelType
    from OCP.XSControl import XSControl_WorkSession

    from massmodel.cad.solids import pose_trsf

    parts = []
    used: set[int] = set()
    for c, solid, location, _ in _local_parts(model, None):
        if id(solid) in used:
            solid = BRepBuilderAPI_Copy(solid, True, False).Shape()
        used.add(id(solid))
        parts.append((c, cq.Shape.cast(solid), location))
    groups, members = group_tree([c.path for c, _, _ in parts])

    def build(group: str) -> Any:
        node = cq.Assembly(name=group or model.name)
        for i in members[group]:
            c, solid, location = parts[i]
            node.add(solid, name=c.path, color=cq.Color(*rgb(c.colour)), loc=cq.Location(pose_trsf(location)))
        for child in groups[group]:
            node.add(build(child))
        return node

    _, doc = toCAF(build(""), True)
    writer = STEPCAFControl_Writer(XSControl_WorkSession(), False)
    writer.SetColorMode(True)
    writer.SetNameMode(True)
    writer.SetLayerMode(False)
    Interface_Static.SetCVal_s("write.step.schema", "AP214IS")
    Interface_Static.SetCVal_s("write.step.unit", "MM")
    writer.Transfer(doc, STEPControl_StepModelType.STEPControl_AsIs)
    assert writer.Write(str(path)) == IFSelect_ReturnStatus.IFSelect_RetDone


def reference_stl(model: Model, chord: float) -> tuple[bytes, dict[str, bytes]]:
    """The whole-model STL bytes and each part's STL bytes as the previous writer made them (all meshes at once)."""
    verts, faces, offset, per_part = [], [], 0, {}
    for c, _, location, mesh in _local_parts(model, chord):
        v = location.apply(np.asarray(mesh.vertices, dtype=float))
        f = np.asarray(mesh.faces, dtype=np.int64)
        per_part[c.path] = stl_bytes(v * 1e3, f, f"massmodel | {c.path} | mm")
        verts.append(v)
        faces.append(f + offset)
        offset += len(v)
    whole = stl_bytes(np.vstack(verts) * 1e3, np.vstack(faces), f"massmodel | {model.name} | mm | model axes")
    return whole, per_part


def reference_glb(model: Model, chord: float) -> bytes:
    """The GLB as the previous writer made it: one trimesh.Scene of every part's mesh, exported at once."""
    import trimesh
    from trimesh.visual.material import PBRMaterial

    parts = _local_parts(model, chord)
    scene = trimesh.Scene()
    root = slug(model.name)
    axes = np.eye(4)
    axes[:3, :3] = gltf_axes(model)
    scene.graph.update(frame_from=scene.graph.base_frame, frame_to=root, matrix=axes)
    groups, members = group_tree([c.path for c, _, _, _ in parts])

    def attach(group: str, parent: str) -> None:
        for i in members[group]:
            c, _, location, m = parts[i]
            mesh = trimesh.Trimesh(vertices=np.asarray(m.vertices), faces=np.asarray(m.faces), process=False)
            mesh.visual = trimesh.visual.TextureVisuals(material=PBRMaterial(
                name=c.colour, baseColorFactor=[*rgb(c.colour), 1.0], metallicFactor=0.0, roughnessFactor=0.8))
            scene.add_geometry(mesh, node_name=c.path, geom_name=c.path, parent_node_name=parent,
                               transform=location.matrix4())
        for child in groups[group]:
            scene.graph.update(frame_from=parent, frame_to=child, matrix=np.eye(4))
            attach(child, child)

    attach("", root)
    return bytes(scene.export(file_type="glb"))


def _name(label: TDF_Label) -> str | None:
    attr = TDataStd_Name()
    return attr.Get().ToExtString() if label.FindAttribute(TDataStd_Name.GetID_s(), attr) else None


def _matrix(loc: TopLoc_Location) -> np.ndarray:
    t = loc.Transformation()
    return np.array([[t.Value(i, j) for j in (1, 2, 3, 4)] for i in (1, 2, 3)])


def step_tree(path: Path) -> dict[tuple[str, ...], dict[str, Any]]:
    """Every node of the assembly tree of a STEP file, keyed by the names from the root down: the instance name, the
    placement in its parent (3x4, mm), the accumulated placement, the colour (sRGB) and, for a part, the volume of
    its placed solid (mm^3) and its centroid (mm)."""
    doc = TDocStd_Document(TCollection_ExtendedString("XmlXCAF"))
    reader = STEPCAFControl_Reader()
    reader.SetColorMode(True)
    reader.SetNameMode(True)
    assert reader.ReadFile(str(path)) == IFSelect_ReturnStatus.IFSelect_RetDone
    assert reader.Transfer(doc)
    shapes = XCAFDoc_DocumentTool.ShapeTool_s(doc.Main())
    colours = XCAFDoc_DocumentTool.ColorTool_s(doc.Main())
    tree: dict[tuple[str, ...], dict[str, Any]] = {}

    def walk(label: TDF_Label, loc: TopLoc_Location, names: tuple[str, ...]) -> None:
        target, local, instance = label, TopLoc_Location(), None
        if shapes.IsReference_s(label):
            target = TDF_Label()
            shapes.GetReferredShape_s(label, target)
            local = shapes.GetLocation_s(label)
            instance = _name(label)
        loc = loc.Multiplied(local)
        key = (*names, _name(target))
        colour = Quantity_Color()
        has = colours.GetColor_s(target, XCAFDoc_ColorType.XCAFDoc_ColorSurf, colour)
        node: dict[str, Any] = {"instance": instance, "local": _matrix(local), "placed": _matrix(loc),
                                "colour": colour.Values(Quantity_TOC_sRGB) if has else None}
        assert key not in tree, f"two nodes named {key}"
        tree[key] = node
        if shapes.IsAssembly_s(target):
            seq = TDF_LabelSequence()
            shapes.GetComponents_s(target, seq)
            for i in range(1, seq.Length() + 1):
                walk(seq.Value(i), loc, key)
        else:
            props = GProp_GProps()
            BRepGProp.VolumeProperties_s(shapes.GetShape_s(target).Moved(loc), props, 1e-12)
            c = props.CentreOfMass()
            node["volume"] = props.Mass()
            node["centroid"] = np.array([c.X(), c.Y(), c.Z()])

    roots = TDF_LabelSequence()
    shapes.GetFreeShapes(roots)
    assert roots.Length() == 1
    walk(roots.Value(1), TopLoc_Location(), ())
    return tree


_COMPONENTS = {5125: ("<u4", 1), 5126: ("<f4", 1)}
_WIDTH = {"SCALAR": 1, "VEC3": 3}


def glb_nodes(raw: bytes) -> dict[str, dict[str, Any]]:
    """Every node of a GLB file by name: parent name, 4x4 matrix, base colour factor and, for a mesh node, its
    positions (float32, (V, 3)) and triangle indices ((F, 3)). Read from the container after the Khronos glTF 2.0
    specification (§4.4 GLB layout, §5.1 accessors, §5.25 node.matrix column-major)."""
    magic, version, length = struct.unpack_from("<4sII", raw, 0)
    assert magic == b"glTF" and version == 2 and length == len(raw)
    json_len, json_type = struct.unpack_from("<II", raw, 12)
    assert json_type == 0x4E4F534A
    doc = json.loads(raw[20 : 20 + json_len])
    bin_len, bin_type = struct.unpack_from("<II", raw, 20 + json_len)
    assert bin_type == 0x004E4942 and 28 + json_len + bin_len == len(raw)
    blob = raw[28 + json_len :]

    def accessor(k: int) -> np.ndarray:
        acc = doc["accessors"][k]
        view = doc["bufferViews"][acc["bufferView"]]
        dtype, _ = _COMPONENTS[acc["componentType"]]
        start = view.get("byteOffset", 0) + acc.get("byteOffset", 0)
        n = acc["count"] * _WIDTH[acc["type"]]
        data = np.frombuffer(blob, dtype=dtype, count=n, offset=start)
        return data.reshape(acc["count"], -1) if acc["type"] != "SCALAR" else data

    parents = {child: k for k, node in enumerate(doc["nodes"]) for child in node.get("children", [])}
    out = {}
    for k, node in enumerate(doc["nodes"]):
        item: dict[str, Any] = {
            "parent": doc["nodes"][parents[k]]["name"] if k in parents else None,
            "matrix": np.array(node.get("matrix", np.eye(4).ravel()), dtype=float).reshape(4, 4).T,
        }
        if "mesh" in node:
            prim = doc["meshes"][node["mesh"]]["primitives"][0]
            item["positions"] = accessor(prim["attributes"]["POSITION"])
            item["triangles"] = accessor(prim["indices"]).reshape(-1, 3)
            item["colour"] = doc["materials"][prim["material"]]["pbrMetallicRoughness"]["baseColorFactor"]
            item["material"] = {key: value for key, value in doc["materials"][prim["material"]].items()
                                if key != "pbrMetallicRoughness"}
        out[node["name"]] = item
    assert len(out) == len(doc["nodes"]), "node names are not unique"
    return out
