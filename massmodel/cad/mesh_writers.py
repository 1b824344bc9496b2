"""Binary STL and GLB files written part by part: each part's triangles go to the file and are released.

:class:`StlStream` appends each part's triangle records to the open file and writes the triangle count into the
header when it closes. :class:`GlbStream` appends each part's index and vertex bytes to a scratch file (the GLB's
binary chunk, which follows its JSON chunk in the file) and keeps only the small JSON entries (node, mesh, accessors,
material); closing writes the GLB: header, JSON chunk, then the binary chunk copied from the scratch file. Memory
holds one part's mesh at a time (and a digest per distinct buffer, to share identical ones).

Numpy only.
"""

from __future__ import annotations

import hashlib
import json
import shutil
import struct
from pathlib import Path
from typing import IO, Any

import numpy as np

from .formats import ExportError, group_tree, rgb, srgb_to_linear, stl_header, stl_records

__all__ = ["GlbStream", "StlStream"]

_JSON_CHUNK = 0x4E4F534A  # "JSON"
_BIN_CHUNK = 0x004E4942  # "BIN\0"
_UINT32 = 5125  # glTF componentType codes (Khronos glTF 2.0 §5.1.2)
_FLOAT = 5126
_TRIANGLES = 4
#: Largest count a binary STL (triangles) or a GLB (bytes of the file) can state: both are uint32 fields (the STL
#: header's triangle count; the GLB header's length, Khronos glTF 2.0 §4.4).
UINT32_MAX = 2**32 - 1


def _open(path: Path) -> IO[bytes]:
    try:
        return open(path, "wb")
    except OSError as exc:
        raise ExportError(f"cannot write '{path}': {exc.strerror or exc}") from None


def _write(f: IO[bytes], data: bytes, name: Path) -> None:
    try:
        f.write(data)
    except OSError as exc:
        raise ExportError(f"cannot write '{name}': {exc.strerror or exc}") from None


class StlStream:
    """A binary STL file written part by part (lengths as given; the export writes mm).

    Parameters
    ----------
    path : Path
        File to write (the staged temporary file).
    header : str
        Text of the 80-byte header.
    """

    def __init__(self, path: Path, header: str) -> None:
        self.path = path
        self.header = header
        self.count = 0
        self._file = _open(path)
        _write(self._file, stl_header(header, 0), path)

    def add(self, vertices: np.ndarray, faces: np.ndarray) -> None:
        """Append the triangles ``vertices[faces]``."""
        if self.count + len(faces) > UINT32_MAX:
            raise ExportError(f"'{self.path}': more than {UINT32_MAX} triangles, which a binary STL cannot count; "
                              "export fewer parts or a coarser chord tolerance")
        _write(self._file, stl_records(vertices, faces), self.path)
        self.count += len(faces)

    def close(self) -> None:
        """Write the triangle count into the header and close the file."""
        try:
            self._file.seek(0)
            self._file.write(stl_header(self.header, self.count))
        except OSError as exc:
            raise ExportError(f"cannot write '{self.path}': {exc.strerror or exc}") from None
        finally:
            self._file.close()

    def discard(self) -> None:
        """Close without finishing (the staged file is removed by the caller)."""
        self._file.close()


class GlbStream:
    """A binary glTF 2.0 file of placed parts under group nodes, written part by part.

    One node per part, named by its path, holding its own mesh (metres, part frame, float32 positions and uint32
    indices) and placed by its pose (the node's ``matrix``, omitted when the identity); group nodes named by their
    paths; a root node named ``root_name`` that turns model axes into glTF axes. One material per colour, its base
    colour the linear value of the sRGB colour. Buffers with identical bytes (a patterned copy's mesh) are stored once.

    Parameters
    ----------
    path : Path
        File to write (the staged temporary file).
    spool : Path
        Scratch file for the binary chunk while parts are added (removed by :meth:`close`).
    root_name : str
    root_matrix : (4, 4) float
        Transform of the root node (model axes to glTF axes).

    References
    ----------
    Khronos glTF 2.0 specification: §3.4 coordinate system and units (metres, +Y up, +Z forward), §5.19
    baseColorFactor (linear), §5.25 node.matrix (column-major), §4.4 GLB container (12-byte header, JSON chunk padded
    with spaces to 4 bytes, BIN chunk padded with zeros).
    """

    def __init__(self, path: Path, spool: Path, root_name: str, root_matrix: np.ndarray) -> None:
        self.path = path
        self.spool_path = spool
        self.root_name = root_name
        self.root_matrix = np.asarray(root_matrix, dtype=float)
        self._spool = _open(spool)
        self._size = 0
        self._views: list[dict[str, int]] = []
        self._view_of: dict[bytes, int] = {}
        self._accessors: list[dict[str, Any]] = []
        self._accessor_of: dict[tuple[int, str], int] = {}
        self._materials: list[dict[str, Any]] = []
        self._material_of: dict[str, int] = {}
        self._meshes: list[dict[str, Any]] = []
        self._parts: list[tuple[str, int | None, np.ndarray]] = []  # (path, mesh, matrix)

    def _view(self, data: bytes) -> int:
        digest = hashlib.blake2b(data, digest_size=20).digest()
        index = self._view_of.get(digest)
        if index is None:
            if self._size + len(data) > UINT32_MAX - (1 << 26):  # the JSON chunk (tens of MB at most) comes on top
                raise ExportError(f"'{self.path}': the mesh data passes 4 GiB, more than a GLB file can hold (glTF 2.0 "
                                  "§4.4); export fewer parts or a coarser chord tolerance")
            index = len(self._views)
            self._views.append({"buffer": 0, "byteOffset": self._size, "byteLength": len(data)})
            _write(self._spool, data, self.path)
            self._size += len(data)  # uint32 and float32 data: always a multiple of 4 bytes
            self._view_of[digest] = index
        return index

    def _accessor(self, data: np.ndarray, kind: str) -> int:
        view = self._view(data.tobytes())
        key = (view, kind)
        index = self._accessor_of.get(key)
        if index is None:
            index = len(self._accessors)
            if kind == "SCALAR":
                entry = {"bufferView": view, "componentType": _UINT32, "count": int(data.size), "type": kind,
                         "max": [int(data.max())], "min": [int(data.min())]}
            else:
                entry = {"bufferView": view, "componentType": _FLOAT, "count": len(data), "type": kind,
                         "max": [float(x) for x in data.max(axis=0)], "min": [float(x) for x in data.min(axis=0)]}
            self._accessors.append(entry)
            self._accessor_of[key] = index
        return index

    def _material(self, colour: str) -> int:
        index = self._material_of.get(colour)
        if index is None:
            index = len(self._materials)
            linear = srgb_to_linear(np.array(rgb(colour)))
            self._materials.append({
                "name": colour,
                "pbrMetallicRoughness": {"baseColorFactor": [*map(float, linear), 1.0], "metallicFactor": 0.0,
                                         "roughnessFactor": 0.8},
                "doubleSided": False,
            })
            self._material_of[colour] = index
        return index

    def add(self, path: str, colour: str, matrix: np.ndarray, vertices: np.ndarray, faces: np.ndarray) -> None:
        """Append one part: its mesh (m, part frame), its node's transform (4, 4) and its colour (``#rrggbb``)."""
        if len(faces) == 0:  # nothing to draw: the node alone, as glTF allows (§5.25: a node's mesh is optional)
            self._parts.append((path, None, np.asarray(matrix, dtype=float)))
            return
        indices = self._accessor(np.ascontiguousarray(faces, dtype=np.uint32).ravel(), "SCALAR")
        positions = self._accessor(np.ascontiguousarray(vertices, dtype=np.float32), "VEC3")
        self._meshes.append({"name": path, "primitives": [{"attributes": {"POSITION": positions}, "indices": indices,
                                                           "mode": _TRIANGLES, "material": self._material(colour)}]})
        self._parts.append((path, len(self._meshes) - 1, np.asarray(matrix, dtype=float)))

    def _nodes(self) -> list[dict[str, Any]]:
        groups, members = group_tree([p for p, _, _ in self._parts])
        nodes: list[dict[str, Any]] = [_node(self.root_name, self.root_matrix)]

        def walk(group: str, parent: dict[str, Any]) -> None:
            for i in members[group]:
                path, mesh, matrix = self._parts[i]
                parent.setdefault("children", []).append(len(nodes))
                nodes.append(_node(path, matrix) if mesh is None else {**_node(path, matrix), "mesh": mesh})
            for child in groups[group]:
                parent.setdefault("children", []).append(len(nodes))
                node = _node(child, None)
                nodes.append(node)
                walk(child, node)

        walk("", nodes[0])
        return nodes

    def close(self) -> None:
        """Write the GLB file (header, JSON chunk, binary chunk) and remove the scratch file."""
        self._spool.close()
        doc = {
            "asset": {"version": "2.0", "generator": "massmodel"},
            "scene": 0,
            "scenes": [{"nodes": [0]}],
            "nodes": self._nodes(),
            "meshes": self._meshes,
            "materials": self._materials,
            "accessors": self._accessors,
            "bufferViews": self._views,
            "buffers": [{"byteLength": self._size}],
        }
        text = json.dumps(doc, separators=(",", ":")).encode("utf-8")
        text += b" " * (-len(text) % 4)
        total = 12 + 8 + len(text) + 8 + self._size
        if total > UINT32_MAX:
            raise ExportError(f"'{self.path}': {total} bytes, more than a GLB file can hold (glTF 2.0 §4.4); export "
                              "fewer parts or a coarser chord tolerance")
        with _open(self.path) as out:
            _write(out, struct.pack("<4sII", b"glTF", 2, total) + struct.pack("<II", len(text), _JSON_CHUNK) + text
                   + struct.pack("<II", self._size, _BIN_CHUNK), self.path)
            try:
                with open(self.spool_path, "rb") as spool:
                    shutil.copyfileobj(spool, out, 1 << 20)
            except OSError as exc:
                raise ExportError(f"cannot write '{self.path}': {exc.strerror or exc}") from None
        self.spool_path.unlink(missing_ok=True)

    def discard(self) -> None:
        """Close without writing (the caller removes the staged files)."""
        self._spool.close()
        self.spool_path.unlink(missing_ok=True)


def _node(name: str, matrix: np.ndarray | None) -> dict[str, Any]:
    node: dict[str, Any] = {"name": name}
    if matrix is not None and not np.array_equal(matrix, np.eye(4)):
        node["matrix"] = [float(x) for x in np.asarray(matrix, dtype=float).T.ravel()]  # column-major
    return node
