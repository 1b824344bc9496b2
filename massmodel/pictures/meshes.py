"""Display meshes of the parts: each part's mesh in its part frame minus its cut-outs, and its sharp edges.

Numpy, plus manifold3d for the cut-out booleans and OpenCascade (through :mod:`massmodel.cad`) as the fallback; used by
:mod:`massmodel.pictures.scene`. Lengths in metres.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.model import Component

__all__ = ["part_mesh", "place_mesh", "sharp_edges"]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]


def _to_manifold(vertices: FloatArray, faces: IntArray) -> Any:
    import manifold3d

    return manifold3d.Manifold(
        manifold3d.Mesh(
            vert_properties=np.ascontiguousarray(vertices, dtype=np.float32),
            tri_verts=np.ascontiguousarray(faces, dtype=np.uint32),
        )
    )


def _cad_part_mesh(component: Component, chord_tolerance: float) -> tuple[FloatArray, IntArray]:
    """Fallback: the B-rep solid minus its cut-outs (OpenCascade), tessellated, in the part frame."""
    import trimesh

    from massmodel.cad.primitives import cut_shape, to_solid
    from massmodel.cad.solids import place_solid, tessellate

    solid = to_solid(component.shape)
    for cut in component.cutouts:
        solid = cut_shape(solid, place_solid(to_solid(cut.shape), cut.pose))
    verts, tris = tessellate(solid, chord_tolerance * 1e3)
    mesh = trimesh.Trimesh(verts * 1e-3, tris)
    return np.asarray(mesh.vertices, float), np.asarray(mesh.faces, np.int64)


def part_mesh(component: Component, chord_tolerance: float) -> tuple[FloatArray, IntArray, bool]:
    """Display mesh of one part in its part frame: the shape minus its cut-outs.

    The cut-outs are removed by a manifold3d boolean difference; when that fails (an error status, or a volume
    more than 2 % + chord error away from the exact net volume) the OpenCascade solid is tessellated instead.

    Returns
    -------
    vertices : (V, 3) float
        m, part frame.
    faces : (F, 3) int
        Outward triangles.
    fallback : bool
        True when OpenCascade made the mesh.
    """
    v, f = component.shape.mesh_arrays(chord_tolerance)
    if not component.cutouts:
        return np.asarray(v, float), np.asarray(f, np.int64), False
    import manifold3d

    body = _to_manifold(v, f)
    for cut in component.cutouts:
        cv, cf = cut.shape.mesh_arrays(chord_tolerance)
        body = body - _to_manifold(cut.pose.apply(cv), cf)
    ok = body.status() == manifold3d.Error.NoError
    if ok:
        out = body.to_mesh()
        verts = np.asarray(out.vert_properties[:, :3], float)
        tris = np.asarray(out.tri_verts, np.int64)
        area_scale = float(np.ptp(verts, axis=0).max()) if len(verts) else 0.0
        slack = 0.02 * component.volume + 6.0 * chord_tolerance * area_scale**2
        ok = len(tris) > 0 and abs(_mesh_volume(verts, tris) - component.volume) <= slack
    if ok:
        return verts, tris, False
    verts, tris = _cad_part_mesh(component, chord_tolerance)
    return verts, tris, True


def _mesh_volume(vertices: FloatArray, faces: IntArray) -> float:
    """Signed volume of a closed triangle mesh (divergence theorem), m³."""
    a, b, c = (vertices[faces[:, k]] for k in range(3))
    return float(np.einsum("ij,ij->i", a, np.cross(b, c)).sum() / 6.0)


def sharp_edges(vertices: FloatArray, faces: IntArray, angle_deg: float = 30.0) -> IntArray:
    """Vertex index pairs (E, 2) of the edges whose two faces meet at more than ``angle_deg`` (or are open)."""
    if len(faces) == 0:
        return np.zeros((0, 2), np.int64)
    a, b, c = (vertices[faces[:, k]] for k in range(3))
    normals = np.cross(b - a, c - a)
    norms = np.linalg.norm(normals, axis=1)
    normals = normals / np.where(norms > 0, norms, 1.0)[:, None]
    e = np.concatenate([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]])
    face_of = np.tile(np.arange(len(faces)), 3)
    # weld coincident vertices (meshes may duplicate seams) before pairing edges
    keys = np.round(vertices / 1e-7).astype(np.int64)
    _, weld = np.unique(keys, axis=0, return_inverse=True)
    weld = weld.reshape(-1)
    we = np.sort(weld[e], axis=1)
    order = np.lexsort((we[:, 1], we[:, 0]))
    we, e, face_of = we[order], e[order], face_of[order]
    same = np.all(we[1:] == we[:-1], axis=1)
    keep = np.ones(len(we), bool)
    # a pair (i, i+1) with the same key is one interior edge: keep the first only when sharp
    pair = np.flatnonzero(same)
    cosang = np.einsum("ij,ij->i", normals[face_of[pair]], normals[face_of[pair + 1]])
    sharp = cosang < math.cos(math.radians(angle_deg))
    keep[pair + 1] = False
    keep[pair[~sharp]] = False
    degenerate = we[:, 0] == we[:, 1]
    return e[keep & ~degenerate]


def place_mesh(vertices: FloatArray, faces: IntArray, component: Component) -> tuple[FloatArray, IntArray]:
    """A part-frame mesh placed in the model frame by the part's pose (a mirror also flips the winding)."""
    v = component.pose.apply(vertices)
    f = faces[:, ::-1] if component.pose.is_mirrored else faces  # a mirror turns the winding inside out
    return v, f
