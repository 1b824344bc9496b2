"""Display meshes of the parts: each part's mesh in its part frame minus its cut-outs, and its sharp edges.

Numpy, plus manifold3d for the cut-out booleans and OpenCascade (through :mod:`massmodel.cad`) as the fallback; used by
:mod:`massmodel.pictures.scene`. Lengths in metres.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.model import Component
from massmodel.core.shapes import Shape

__all__ = ["shape_mesh", "part_mesh", "place_mesh", "sharp_edges", "sharp_edges_and_faces", "edge_pairs", "face_normals", "cross_normals", "sharp_pairs"]

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


def shape_mesh(shape: Any, chord_tolerance: float) -> tuple[FloatArray, IntArray]:
    """Display mesh (vertices (V, 3) m, faces (F, 3)) of a shape in its own frame: the primitives mesh themselves
    (``mesh_arrays``, numpy); a shape read from a file (STEP, STL/OBJ/GLB) through the mesher
    :mod:`massmodel.cad.primitives` registers for it (``to_mesh``: trimesh, metres)."""
    if isinstance(shape, Shape):
        v, f = shape.mesh_arrays(chord_tolerance)
        return np.asarray(v, float), np.asarray(f, np.int64)
    from massmodel.cad.primitives import to_mesh

    mesh = to_mesh(shape, chord_tolerance)
    return np.asarray(mesh.vertices, float), np.asarray(mesh.faces, np.int64)


def part_mesh(component: Component, chord_tolerance: float,
              shape_meshes: Sequence[tuple[FloatArray, IntArray]] | None = None) -> tuple[FloatArray, IntArray, bool]:
    """Display mesh of one part in its part frame: the shape minus its cut-outs.

    The cut-outs are removed by a manifold3d boolean difference; when that fails (an error status, or a volume
    more than 2 % + chord error away from the exact net volume) the OpenCascade solid is tessellated instead.
    ``shape_meshes``, optional: the meshes of the shape and of each cut-out's shape (``mesh_arrays(chord_tolerance)``
    of each, made beforehand, e.g. many at once).

    Returns
    -------
    vertices : (V, 3) float
        m, part frame.
    faces : (F, 3) int
        Outward triangles.
    fallback : bool
        True when OpenCascade made the mesh.
    """
    given = list(shape_meshes) if shape_meshes is not None else []
    v, f = given[0] if given else shape_mesh(component.shape, chord_tolerance)
    if not component.cutouts:
        return np.asarray(v, float), np.asarray(f, np.int64), False
    import manifold3d

    body = _to_manifold(v, f)
    for k, cut in enumerate(component.cutouts, start=1):
        cv, cf = given[k] if given else shape_mesh(cut.shape, chord_tolerance)
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


def _row_ids(keys: IntArray) -> IntArray:
    """Rank of each row of ``keys`` (K, C) among the distinct rows sorted lexicographically (as
    ``np.unique(keys, axis=0, return_inverse=True)`` numbers them, with one sort of the columns)."""
    order = np.lexsort(keys.T[::-1])
    ranked = keys[order]
    new = np.ones(len(keys), np.int64)
    new[0] = 0
    new[1:] = np.any(ranked[1:] != ranked[:-1], axis=1)
    ids = np.empty(len(keys), np.int64)
    ids[order] = np.cumsum(new)
    return ids


def sharp_edges(vertices: FloatArray, faces: IntArray, angle_deg: float = 30.0,
                vertex_owner: IntArray | None = None) -> IntArray:
    """Vertex index pairs (E, 2) of the edges whose two faces meet at more than ``angle_deg`` (or are open).

    ``vertex_owner`` (V,) int, optional: the part of each vertex when ``vertices`` hold many parts' meshes; vertices
    of different parts are never welded, so the result is each part's own edges (in part order).
    """
    return sharp_edges_and_faces(vertices, faces, angle_deg, vertex_owner)[0]


def sharp_edges_and_faces(vertices: FloatArray, faces: IntArray, angle_deg: float = 30.0,
                          vertex_owner: IntArray | None = None) -> tuple[IntArray, IntArray]:
    """:func:`sharp_edges` and the two faces (E, 2) that meet at each edge (-1 as the second of an open edge)."""
    edges, pair_faces = edge_pairs(vertices, faces, vertex_owner)
    keep = sharp_pairs(face_normals(vertices, faces), pair_faces, angle_deg)
    return edges[keep], pair_faces[keep]


def cross_normals(vertices: FloatArray, faces: IntArray) -> FloatArray:
    """Normals (..., F, 3) of the faces, (b − a) × (c − a) for corners a, b, c (length twice the area; the same
    numbers as ``np.cross``, computed a coordinate at a time from contiguous copies and ``np.take`` of each corner,
    several times faster for large meshes); ``vertices`` may be (V, 3) or stacked meshes of equal faces (G, V, 3)."""
    xyz = np.ascontiguousarray(np.moveaxis(np.asarray(vertices, float), -1, 0))  # (3, ..., V)
    f0, f1, f2 = np.ascontiguousarray(np.asarray(faces, np.int64).T)  # each corner's vertex numbers, contiguous
    a = [np.take(xyz[k], f0, axis=-1) for k in range(3)]
    u = [np.take(xyz[k], f1, axis=-1) - a[k] for k in range(3)]
    w = [np.take(xyz[k], f2, axis=-1) - a[k] for k in range(3)]
    out = np.empty(xyz.shape[1:-1] + (len(f0), 3))
    out[..., 0] = u[1] * w[2] - u[2] * w[1]
    out[..., 1] = u[2] * w[0] - u[0] * w[2]
    out[..., 2] = u[0] * w[1] - u[1] * w[0]
    return out


def face_normals(vertices: FloatArray, faces: IntArray) -> FloatArray:
    """Unit normals (..., F, 3) of the faces (zero for a face of no area); ``vertices`` may be (V, 3) or stacked
    meshes of equal faces (G, V, 3)."""
    normals = cross_normals(vertices, faces)
    norms = np.linalg.norm(normals, axis=-1)
    return normals / np.where(norms > 0, norms, 1.0)[..., None]


def sharp_pairs(normals: FloatArray, pair_faces: IntArray, angle_deg: float = 30.0) -> npt.NDArray[np.bool_]:
    """Which edges of :func:`edge_pairs` are sharp: open, or their faces meet at more than ``angle_deg``.

    ``normals`` (F, 3) unit face normals, or (G, F, 3) for G meshes sharing the faces (then the result is (G, K)).
    """
    second = pair_faces[:, 1]
    inner = np.flatnonzero(second >= 0)
    n = normals.reshape(-1, normals.shape[-2], 3)
    a = n[:, pair_faces[inner, 0]].reshape(-1, 3)
    b = n[:, second[inner]].reshape(-1, 3)
    cosang = np.einsum("ij,ij->i", a, b).reshape(len(n), -1)
    keep = np.ones((len(n), len(pair_faces)), bool)
    keep[:, inner] = cosang < math.cos(math.radians(angle_deg))
    return keep.reshape(normals.shape[:-2] + (len(pair_faces),))


def edge_pairs(vertices: FloatArray, faces: IntArray,
               vertex_owner: IntArray | None = None) -> tuple[IntArray, IntArray]:
    """Every edge of a triangle mesh once, with the faces that meet there.

    Coincident vertices are welded first (to 1e-7 m; meshes may duplicate seams; never across owners when
    ``vertex_owner`` (V,) is given). An edge is the first of the half-edges that share its two welded ends, in the
    order of the welded vertex numbers (ranked by owner, then coordinates); an edge whose ends weld together is no
    edge.

    Returns
    -------
    edges : (K, 2) int
        Vertex indices of each edge.
    faces : (K, 2) int
        The face of that half-edge and the face of the next one sharing its ends (-1 for an open edge).
    """
    if len(faces) == 0:
        return np.zeros((0, 2), np.int64), np.zeros((0, 2), np.int64)
    e = np.concatenate([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]])
    face_of = np.tile(np.arange(len(faces)), 3)
    keys = np.round(vertices / 1e-7).astype(np.int64)
    if vertex_owner is not None:
        keys = np.column_stack([np.asarray(vertex_owner, np.int64), keys])
    weld = _row_ids(keys)
    ends_a, ends_b = weld[e[:, 0]], weld[e[:, 1]]
    lo, hi = np.minimum(ends_a, ends_b), np.maximum(ends_a, ends_b)
    key = lo * (int(weld.max()) + 1) + hi  # one integer a welded edge, ordered as (lo, hi)
    order = np.argsort(key, kind="stable")
    key, e, face_of = key[order], e[order], face_of[order]
    first = np.ones(len(key), bool)
    first[1:] = key[1:] != key[:-1]
    partner = np.full(len(key), -1, np.int64)
    follows = np.flatnonzero(~first[1:])  # half-edge i + 1 shares the ends of half-edge i
    partner[follows] = face_of[follows + 1]
    keep = first & (lo[order] != hi[order])
    return e[keep], np.column_stack([face_of, partner])[keep]


def place_mesh(vertices: FloatArray, faces: IntArray, component: Component) -> tuple[FloatArray, IntArray]:
    """A part-frame mesh placed in the model frame by the part's pose (a mirror also flips the winding)."""
    v = component.pose.apply(vertices)
    f = faces[:, ::-1] if component.pose.is_mirrored else faces  # a mirror turns the winding inside out
    return v, f
