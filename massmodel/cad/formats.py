"""What the export's file writers share: the part record, binary STL records, colours, axes and the group tree.

:mod:`massmodel.cad.export` stages the files and walks the parts; :mod:`massmodel.cad.step_writer` writes the STEP
assembly, :mod:`massmodel.cad.mesh_writers` streams the STL and GLB files. Numpy only. Lengths: STEP and STL in mm,
GLB in metres.
"""

from __future__ import annotations

import re
import struct
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from massmodel.core.errors import UserError
from massmodel.core.model import Component, Model

__all__ = [
    "ExportError", "ExportPart", "group_tree", "gltf_axes", "rgb", "slug", "srgb_to_linear", "stl_bytes",
    "stl_header", "stl_records",
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


def rgb(colour: str) -> tuple[float, float, float]:
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


def stl_header(text: str, count: int) -> bytes:
    """The 84 bytes before a binary STL file's triangles: an 80-byte header (not beginning with "solid", which
    readers would take for ASCII STL) and the triangle count (little-endian uint32)."""
    head = text.encode("ascii", "replace")[:80]
    if head.lower().startswith(b"solid"):
        head = b"x" + head[:79]
    return head.ljust(80, b" ") + struct.pack("<I", count)


def stl_records(vertices: np.ndarray, faces: np.ndarray) -> bytes:
    """The triangle records of a binary STL file: normal, three vertices (little-endian float32) and a zero
    attribute word for each triangle; the normal is the unit normal of the triangle's winding (zero when
    degenerate), computed in double precision from ``vertices``.

    References
    ----------
    The STL binary format as defined by 3D Systems' StereoLithography Interface Specification (1988).
    """
    tri = np.asarray(vertices, dtype=float)[np.asarray(faces, dtype=np.int64)]
    normals = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    length = np.linalg.norm(normals, axis=1, keepdims=True)
    normals = np.divide(normals, length, out=np.zeros_like(normals), where=length > 0)
    record = np.zeros(len(tri), dtype=[("n", "<f4", (3,)), ("v", "<f4", (3, 3)), ("a", "<u2")])
    record["n"] = normals
    record["v"] = tri
    return record.tobytes()


def stl_bytes(vertices: np.ndarray, faces: np.ndarray, header: str) -> bytes:
    """A whole binary STL file: :func:`stl_header` then :func:`stl_records` (vertices in the file's unit)."""
    return stl_header(header, len(faces)) + stl_records(vertices, faces)


@dataclass(frozen=True)
class ExportPart:
    """One exported component: its placement and the volume integrals of its solid (the solid itself is not kept).

    Parameters
    ----------
    component : Component
    location : Pose
        Proper pose placing the solid in the model frame (translation in m).
    volume_mm3 : float
        Volume of the solid, mm³ (OpenCascade volume integral).
    centre_mm : (3,) float
        Centroid of the solid, mm, part frame.
    inertia_mm5 : (3, 3) float
        Inertia tensor of the solid at unit density about its centroid, mm⁵, part-frame axes (OpenCascade's
        MatrixOfInertia: off-diagonals −∫xy dV).
    """

    component: Component
    location: Any
    volume_mm3: float
    centre_mm: np.ndarray
    inertia_mm5: np.ndarray


def _group_chain(path: str) -> list[str]:
    segs = path.split("/")
    return ["/".join(segs[:k]) for k in range(1, len(segs))]


def group_tree(paths: Sequence[str]) -> tuple[dict[str, list[str]], dict[str, list[int]]]:
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
