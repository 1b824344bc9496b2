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

from .meshes import _row_ids, edge_pairs, face_normals, part_mesh, sharp_edges_and_faces, sharp_pairs

__all__ = ["MergedParts", "merge_parts", "bulk_meshes", "mesh_families", "gather_ranges"]

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
    # outline (-hx,-hy) (hx,-hy) (hx,hy) (-hx,hy), bottom ring at -hz then top ring at +hz (polygons.prism_mesh)
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
    if curved:
        loop = np.concatenate([[seg.start] if isinstance(seg, geo.ProfileLine)
                               else seg.points(seg.chords(profile_tol))[:-1] for seg in profile], axis=0)
    else:
        loop = np.array([seg.start for seg in profile], dtype=float)
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


Family = tuple[list[int], FloatArray, IntArray]  # member indices, vertices (G, V, 3), shared faces (F, 3)
FAMILY_EDGES_MIN = 8  # fewest members for which a family's sharp edges are found a family at a time


def mesh_families(shapes: Sequence[Shape], chord_tolerance: float) -> list[Family]:
    """The shapes that mesh in bulk, by family: (indices into ``shapes``, stacked vertices (G, V, 3) m, the
    family's faces (F, 3)). Boxes form one family; solids of revolution one for each loop layout and facet count."""
    groups: dict[tuple[Any, ...], list[tuple[int, FloatArray | None]]] = {}
    for i, s in enumerate(shapes):
        if type(s) is Box:
            groups.setdefault(("box",), []).append((i, None))
        elif isinstance(s, RevolvedShape):
            try:
                key, loop = _revolve_signature(s, chord_tolerance)
            except geo.ToleranceTooSmall:
                continue  # mesh_arrays reports it as a shape error
            groups.setdefault(("revolve", len(loop), *key), []).append((i, loop))
    out: list[Family] = []
    for key, members in groups.items():
        index = [i for i, _ in members]
        if key[0] == "box":
            v, f = _box_family([shapes[i] for i in index])  # type: ignore[misc]
        else:
            loops = np.stack([loop for _, loop in members if loop is not None])
            v, f = _revolve_family(loops, key[2], key[3], shapes[index[0]], chord_tolerance)  # type: ignore[arg-type]
        out.append((index, v.reshape(len(index), -1, 3), f))
    return out


def bulk_meshes(shapes: Sequence[Shape], chord_tolerance: float) -> list[Mesh | None]:
    """Part-frame meshes of many shapes at once, equal to each shape's ``mesh_arrays(chord_tolerance)``.

    Boxes and solids of revolution are meshed a family at a time (:func:`mesh_families`: same facet counts,
    shared faces, vertices in bulk); any other shape, or one whose tolerance the core refuses, gives None (mesh it
    alone).

    Returns
    -------
    list of (vertices (V, 3) float, faces (F, 3) int) or None
        In the order of ``shapes``, m.
    """
    out: list[Mesh | None] = [None] * len(shapes)
    for index, v, f in mesh_families(shapes, chord_tolerance):
        for k, i in enumerate(index):
            out[i] = (v[k], f)
    return out


def _family_edges(v: FloatArray, f: IntArray) -> tuple[IntArray, IntArray, IntArray] | None:
    """Sharp edges of the G meshes of one family at once: (member of each edge (E,), edge vertices (E, 2), the
    two faces (E, 2)), members in order, or None when some member has coincident vertices.

    With no two vertices of a member welded, the edges pair up by vertex number alone, the same for every member
    (:func:`massmodel.pictures.meshes.edge_pairs` of the first); only which edges are sharp depends on the member's
    shape (:func:`massmodel.pictures.meshes.sharp_pairs`). The result is each member's :func:`sharp_edges` (the
    same edges and faces; the order of a member's edges may differ, which changes nothing drawn).
    """
    g, nv = v.shape[:2]
    keys = np.round(v / 1e-7).astype(np.int64).reshape(-1, 3)
    member = np.repeat(np.arange(g), nv)
    if int(_row_ids(np.column_stack([member, keys])).max()) + 1 != g * nv:  # ranks: all distinct or not
        return None
    edges, pair_faces = edge_pairs(v[0], f)
    keep = sharp_pairs(face_normals(v, f), pair_faces)  # (G, K)
    who, which = np.nonzero(keep)
    return who.astype(np.int64), edges[which], pair_faces[which]


def _template_edges(tv: list[FloatArray], tf: list[IntArray], families: list[list[int]],
                    skip: int) -> tuple[IntArray, IntArray, IntArray]:
    """Sharp edges of every template (none for template ``skip``): (edges (E, 2) as template-local vertex
    indices, their faces (E, 2) template-local (-1 open), the number of edges of each template), in template
    order. Families sharing faces go a family at a time, the other templates in one pass."""
    pools: list[tuple[IntArray, IntArray, IntArray]] = []  # (template of each edge, edges, faces)
    rest = [t for t in range(len(tv)) if t != skip]
    done: set[int] = set()
    for members in families:
        if len(members) < FAMILY_EDGES_MIN:
            continue  # a small family is cheaper in the one pass of the rest
        found = _family_edges(np.stack([tv[t] for t in members]), tf[members[0]])
        if found is not None:
            who, edges, faces = found
            pools.append((np.asarray(members, np.int64)[who], edges, faces))
            done.update(members)
    rest = [t for t in rest if t not in done]
    if rest:
        nv = np.array([len(tv[t]) for t in rest], np.int64)
        nf = np.array([len(tf[t]) for t in rest], np.int64)
        v0, f0 = np.cumsum(nv) - nv, np.cumsum(nf) - nf
        owner = np.repeat(np.arange(len(rest)), nv)
        edges, faces = sharp_edges_and_faces(np.vstack([tv[t] for t in rest]),
                                             np.vstack([tf[t] + o for t, o in zip(rest, v0, strict=True)]),
                                             vertex_owner=owner)
        local = owner[edges[:, 0]]
        face_base = np.where(faces >= 0, f0[local][:, None], 0)
        pools.append((np.asarray(rest, np.int64)[local], edges - v0[local][:, None], faces - face_base))
    tmpl = np.concatenate([p[0] for p in pools]) if pools else np.zeros(0, np.int64)
    order = np.argsort(tmpl, kind="stable")
    edges = np.vstack([p[1] for p in pools])[order] if pools else np.zeros((0, 2), np.int64)
    faces = np.vstack([p[2] for p in pools])[order] if pools else np.zeros((0, 2), np.int64)
    return edges, faces, np.bincount(tmpl, minlength=len(tv)).astype(np.int64)


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
    meshes: list[Mesh | None] = [None] * len(first_part)
    families: list[list[int]] = []
    for index, fv, ff in mesh_families([comps[first_part[k]].shape for k in plain], chord_tolerance):
        families.append([plain[i] for i in index])
        for k, i in enumerate(index):
            meshes[plain[i]] = (fv[k], ff)
    # the shapes of the parts with cut-outs and of their cut-outs, meshed in bulk where they can be
    cut_parts = [comps[i] for i in first_part if comps[i].cutouts]
    cut_shapes = [s for c in cut_parts for s in (c.shape, *(cut.shape for cut in c.cutouts))]
    premade = iter(bulk_meshes(cut_shapes, chord_tolerance))
    shape_meshes = {id(c): [next(premade) for _ in range(1 + len(c.cutouts))] for c in cut_parts}
    fallback_tmpl: set[int] = set()
    point_tmpl = -1
    for k, i in enumerate(first_part):
        if meshes[k] is not None:
            continue
        if isinstance(comps[i].shape, PointMass):
            mv, mf = Sphere(point_radius).mesh_arrays(min(chord_tolerance, point_radius / 4))
            meshes[k], point_tmpl = (np.asarray(mv, float), np.asarray(mf, np.int64)), k
        else:
            given = shape_meshes.get(id(comps[i]), [])
            whole = [m for m in given if m is not None]
            lv, lf, used_cad = part_mesh(comps[i], chord_tolerance, whole if len(whole) == len(given) else None)
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

    # sharp edges of every template (none for the point-mass spheres), template-local, then as indices into
    # the templates' stacked vertices and faces
    local_e, local_f, ne = _template_edges(tv, tf, families, point_tmpl)
    e_tmpl = np.repeat(np.arange(len(tv)), ne)
    all_e = local_e + v_start[e_tmpl][:, None]
    e_faces = np.where(local_f >= 0, local_f + (np.cumsum(nf) - nf)[e_tmpl][:, None], -1)
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
    local = all_v[src_v]
    vertices = np.empty_like(local)
    for k in range(3):  # a coordinate at a time: no (V, 3, 3) copy of the rotations
        row = linear[:, k, :]
        vertices[:, k] = (local[:, 0] * row[inst_v, 0] + local[:, 1] * row[inst_v, 1] + local[:, 2] * row[inst_v, 2]
                          + shift[inst_v, k])

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
