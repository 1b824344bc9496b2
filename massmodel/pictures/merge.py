"""The merged display mesh of a model, built in bulk: every part's triangles in one array, each face owned by its part.

A model of 10^4 parts is drawn as one mesh with per-cell colours (see :mod:`massmodel.pictures.scene`), and every
step of making that mesh works on whole arrays rather than a part at a time:

1. **Templates.** Parts of equal shape and cut-outs share one part-frame mesh. Boxes and solids of revolution
   without cut-outs are meshed together, many at once (:func:`bulk_meshes`): their triangles depend only on a few
   counts, so the faces are made once a family and the vertices of all members in a few numpy passes. The result
   equals :meth:`massmodel.core.shapes.Shape.mesh_arrays` of each part exactly (same vertices, same faces, same
   order: a test compares them), so a part looks as it did when meshed alone. Parts with cut-outs and the other
   shapes are meshed one by one (:func:`massmodel.pictures.meshes.part_mesh`).
2. **Sharp edges** of all templates in one pass (:func:`massmodel.pictures.meshes.sharp_edges` with the template
   of each vertex as its owner, so no edge is paired across parts).
3. **Placement.** Each part's template is copied to its place by its pose (rotation or mirror, then translation),
   all parts in one gather and one product; mirrored parts get their triangles turned back outward.

Lengths are metres, model frame.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core import geometry as geo
from massmodel.core.model import Model
from massmodel.core.shapes import Box, PointMass, RevolvedShape, Shape, Sphere

from .meshes import part_mesh, sharp_edges_and_faces

__all__ = ["MergedParts", "merge_parts", "bulk_meshes", "gather_ranges"]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
Mesh = tuple[FloatArray, IntArray]


@dataclass(frozen=True, eq=False)
class MergedParts:
    """All parts of a model as one mesh (arrays in part order; each part's vertices and faces contiguous).

    Attributes
    ----------
    vertices : (V, 3) float
        m, model frame.
    faces : (F, 3) int
        Outward triangles.
    owner : (F,) int
        Component index of each face (non-decreasing).
    face_start : (N + 1,) int
        Faces of component i are ``faces[face_start[i]:face_start[i + 1]]``.
    edges : (E, 2, 3) float
        Sharp edges, m; ``edge_owner`` (E,) their components; ``edge_index`` (E, 2) their vertices and
        ``edge_faces`` (E, 2) the two faces meeting there (-1 for the second face of an open edge).
    part_boxes : (N, 2, 3) float
        Low and high corners of each part's placed mesh, m.
    points : list of int
        Components that are point masses (drawn as small spheres).
    fallback : list of str
        Paths of the parts whose mesh OpenCascade made (the mesh boolean failed).
    templates : int
        Number of distinct part-frame meshes made.
    """

    vertices: FloatArray
    faces: IntArray
    owner: IntArray
    face_start: IntArray
    edges: FloatArray
    edge_owner: IntArray
    part_boxes: FloatArray
    edge_index: IntArray | None = None
    edge_faces: IntArray | None = None
    points: list[int] = field(default_factory=list)
    fallback: list[str] = field(default_factory=list)
    templates: int = 0


# --- bulk meshing of primitives --------------------------------------------------------------------------------------

def _box_family(shapes: Sequence[Box]) -> Mesh:
    """Stacked vertices (G·8, 3) and the shared faces of boxes, as ``Box.mesh_arrays`` makes them."""
    half = 0.5 * np.array([[s.size_x, s.size_y, s.size_z] for s in shapes])  # (G, 3)
    hx, hy, hz = half[:, 0], half[:, 1], half[:, 2]
    # outline (-hx,-hy) (hx,-hy) (hx,hy) (-hx,hy), bottom ring at -hz then top ring at +hz (geometry.prism_mesh)
    xs = np.stack([-hx, hx, hx, -hx], axis=1)
    ys = np.stack([-hy, -hy, hy, hy], axis=1)
    v = np.empty((len(shapes), 8, 3))
    v[:, :4, 0], v[:, 4:, 0] = xs, xs
    v[:, :4, 1], v[:, 4:, 1] = ys, ys
    v[:, :4, 2], v[:, 4:, 2] = -hz[:, None], hz[:, None]
    _, faces = shapes[0].mesh_arrays(1.0)  # flat faces: the tolerance does not matter
    return v.reshape(-1, 3), np.asarray(faces, np.int64)


def _revolve_signature(shape: RevolvedShape, tol: float) -> tuple[tuple[Any, ...], FloatArray]:
    """(family key, loop points (K, 2)) of a solid of revolution, following :func:`geometry.revolve_mesh`."""
    profile = shape.meridian_profile()
    curved = any(isinstance(seg, geo.ProfileArc) for seg in profile)
    profile_tol = 0.5 * tol if curved else tol
    around_tol = tol - profile_tol if curved else tol
    # a straight edge is one chord: its only loop point is its start (ProfileLine.points(1)[:-1])
    loop = np.concatenate([[seg.start] if isinstance(seg, geo.ProfileLine) else seg.points(seg.chords(profile_tol))[:-1]
                           for seg in profile], axis=0)
    n = geo.segments_for_arc(float(loop[:, 0].max()), 2.0 * math.pi, around_tol)
    return (n, tuple((loop[:, 0] == 0.0).tolist())), loop


def _revolve_family(loops: FloatArray, n: int, on_axis: Sequence[bool], first: RevolvedShape, tol: float) -> Mesh:
    """Stacked vertices of solids of revolution with equal loop layout and facet count, and their shared faces.

    Vertices in :func:`geometry.revolve_mesh`'s order: a loop point on the axis gives one vertex (0, 0, z), any
    other a ring (r cos θ_j, r sin θ_j, z), θ_j = 2π j / n.
    """
    theta = 2.0 * math.pi * np.arange(n) / n
    cos_t, sin_t = np.cos(theta), np.sin(theta)
    blocks = []
    for k, axis in enumerate(on_axis):
        r, z = loops[:, k, 0][:, None], loops[:, k, 1][:, None]
        if axis:
            blocks.append(np.stack([np.zeros_like(z), np.zeros_like(z), z], axis=2))
        else:
            blocks.append(np.stack([r * cos_t, r * sin_t, np.broadcast_to(z, r.shape[:1] + (n,))], axis=2))
    v = np.concatenate(blocks, axis=1)  # (G, V, 3)
    _, faces = geo.revolve_mesh(first.meridian_profile(), tol)  # the faces depend on the layout and n only
    return v.reshape(-1, 3), np.asarray(faces, np.int64)


def bulk_meshes(shapes: Sequence[Shape], chord_tolerance: float) -> list[Mesh | None]:
    """Part-frame meshes of many shapes at once, equal to each shape's ``mesh_arrays(chord_tolerance)``.

    Boxes and solids of revolution are meshed a family at a time (same facet counts: shared faces, vertices in
    bulk); any other shape, or one whose tolerance the core refuses, gives None (mesh it alone).

    Returns
    -------
    list of (vertices (V, 3) float, faces (F, 3) int) or None
        In the order of ``shapes``, m.
    """
    out: list[Mesh | None] = [None] * len(shapes)
    families: dict[tuple[Any, ...], list[tuple[int, FloatArray | None]]] = {}
    for i, s in enumerate(shapes):
        if type(s) is Box:
            families.setdefault(("box",), []).append((i, None))
        elif isinstance(s, RevolvedShape):
            try:
                key, loop = _revolve_signature(s, chord_tolerance)
            except geo.ToleranceTooSmall:
                continue  # mesh_arrays reports it as a shape error
            families.setdefault(("revolve", len(loop), *key), []).append((i, loop))
    for key, members in families.items():
        index = [i for i, _ in members]
        if key[0] == "box":
            v, f = _box_family([shapes[i] for i in index])  # type: ignore[misc]
        else:
            loops = np.stack([loop for _, loop in members if loop is not None])
            v, f = _revolve_family(loops, key[2], key[3], shapes[index[0]], chord_tolerance)  # type: ignore[arg-type]
        per = len(v) // len(index)
        for k, i in enumerate(index):
            out[i] = (v[k * per : (k + 1) * per], f)
    return out


# --- merging -----------------------------------------------------------------------------------------------------

def gather_ranges(starts: IntArray, counts: IntArray) -> IntArray:
    """Concatenation of ``arange(starts[k], starts[k] + counts[k])`` over k, without a Python loop."""
    total = int(counts.sum())
    out_start = np.cumsum(counts) - counts
    return np.repeat(starts - out_start, counts) + np.arange(total)


def merge_parts(model: Model, chord_tolerance: float, point_radius: float) -> MergedParts:
    """Mesh, edge and place every part of ``model`` in bulk (see the module notes).

    Parameters
    ----------
    chord_tolerance : float
        Largest distance between a display mesh and the exact surface, m.
    point_radius : float
        Radius of the spheres drawn for point masses, m.
    """
    comps = model.components
    n = len(comps)
    index_of: dict[Any, int] = {}
    tmpl_of = np.empty(n, np.int64)
    first_part: list[int] = []
    for i, comp in enumerate(comps):
        if isinstance(comp.shape, PointMass):
            key: Any = ("point",)
        elif comp.cutouts:
            key = (comp.shape, tuple((c.shape, c.pose.matrix4().tobytes()) for c in comp.cutouts))
        else:
            key = comp.shape
        t = index_of.setdefault(key, len(index_of))
        if t == len(first_part):
            first_part.append(i)
        tmpl_of[i] = t

    plain = [k for k, i in enumerate(first_part) if not comps[i].cutouts and not isinstance(comps[i].shape, PointMass)]
    bulk = bulk_meshes([comps[first_part[k]].shape for k in plain], chord_tolerance)
    meshes: list[Mesh | None] = [None] * len(first_part)
    for k, mesh in zip(plain, bulk, strict=True):
        meshes[k] = mesh
    fallback_tmpl: set[int] = set()
    point_tmpl = -1
    for k, i in enumerate(first_part):
        if meshes[k] is not None:
            continue
        if isinstance(comps[i].shape, PointMass):
            mv, mf = Sphere(point_radius).mesh_arrays(min(chord_tolerance, point_radius / 4))
            meshes[k], point_tmpl = (np.asarray(mv, float), np.asarray(mf, np.int64)), k
        else:
            lv, lf, used_cad = part_mesh(comps[i], chord_tolerance)
            meshes[k] = (lv, lf)
            if used_cad:
                fallback_tmpl.add(k)
    tv = [np.asarray(m[0], float) for m in meshes if m is not None]
    tf = [np.asarray(m[1], np.int64) for m in meshes if m is not None]
    nv = np.array([len(v) for v in tv], np.int64)
    nf = np.array([len(f) for f in tf], np.int64)
    v_start = np.cumsum(nv) - nv
    all_v = np.vstack(tv)
    all_f = np.vstack([f + s for f, s in zip(tf, v_start, strict=True)])
    vertex_tmpl = np.repeat(np.arange(len(tv)), nv)

    # sharp edges of every template at once (none for the point-mass spheres)
    face_tmpl = np.repeat(np.arange(len(tf)), nf)
    edged = np.flatnonzero(face_tmpl != point_tmpl)
    all_e, e_faces = sharp_edges_and_faces(all_v, all_f[edged], vertex_owner=vertex_tmpl)
    e_faces = np.where(e_faces >= 0, edged[e_faces], -1)  # template faces, as indices into all_f
    e_tmpl = vertex_tmpl[all_e[:, 0]]
    order = np.argsort(e_tmpl, kind="stable")
    all_e, e_tmpl, e_faces = all_e[order], e_tmpl[order], e_faces[order]
    ne = np.bincount(e_tmpl, minlength=len(tv)).astype(np.int64)
    e_start = np.cumsum(ne) - ne

    # placement: rotation (or mirror) and translation of every part
    linear = np.empty((n, 3, 3))
    shift = np.empty((n, 3))
    for i, comp in enumerate(comps):
        if tmpl_of[i] == point_tmpl:
            linear[i], shift[i] = np.eye(3), comp.props.center
        else:
            linear[i], shift[i] = comp.pose.linear, comp.pose.translation
    mirrored = np.linalg.det(linear) < 0.0

    vc, fc, ec = nv[tmpl_of], nf[tmpl_of], ne[tmpl_of]
    out_v_start = np.cumsum(vc) - vc
    src_v = gather_ranges(v_start[tmpl_of], vc)
    inst_v = np.repeat(np.arange(n), vc)
    vertices = np.einsum("vj,vij->vi", all_v[src_v], linear[inst_v]) + shift[inst_v]

    src_f = gather_ranges(np.cumsum(nf)[tmpl_of] - fc, fc)
    inst_f = np.repeat(np.arange(n), fc)
    faces = all_f[src_f] + (out_v_start - v_start[tmpl_of])[inst_f][:, None]
    flip = mirrored[inst_f]
    faces[flip] = faces[flip][:, ::-1]  # a mirror turns the winding inside out

    src_e = gather_ranges(e_start[tmpl_of], ec)
    inst_e = np.repeat(np.arange(n), ec)
    edge_idx = all_e[src_e] + (out_v_start - v_start[tmpl_of])[inst_e][:, None]
    face_shift = (np.cumsum(fc) - fc - (np.cumsum(nf) - nf)[tmpl_of])[inst_e][:, None]
    edge_faces = np.where(e_faces[src_e] >= 0, e_faces[src_e] + face_shift, -1)

    boxes = np.zeros((n, 2, 3))
    has = vc > 0
    if has.any():
        boxes[has, 0] = np.minimum.reduceat(vertices, out_v_start[has], axis=0)
        boxes[has, 1] = np.maximum.reduceat(vertices, out_v_start[has], axis=0)
    face_start = np.concatenate([[0], np.cumsum(fc)]).astype(np.int64)
    return MergedParts(
        vertices=vertices,
        faces=faces,
        owner=inst_f.astype(np.int64),
        face_start=face_start,
        edges=vertices[edge_idx] if len(edge_idx) else np.zeros((0, 2, 3)),
        edge_index=edge_idx,
        edge_faces=edge_faces,
        edge_owner=inst_e.astype(np.int64),
        part_boxes=boxes,
        points=[i for i in range(n) if tmpl_of[i] == point_tmpl],
        fallback=[comps[i].path for i in range(n) if int(tmpl_of[i]) in fallback_tmpl],
        templates=len(tv),
    )
