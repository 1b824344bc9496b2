"""Display geometry of a mass model: one merged triangle mesh with per-part colours, markers and references.

This is the renderer-free half of the picture (numpy, plus manifold3d for cut-outs): every part is meshed in its
part frame, its cut-outs removed by a mesh boolean (:mod:`massmodel.pictures.meshes`), placed by its pose and put in
one mesh whose faces remember their owner (one actor draws all parts; colours are per cell), all parts at once
(:mod:`massmodel.pictures.merge`). Group CGs come from the engine's group sums; what hides the CG is found by ray
tests against the candidate parts' boxes first, then their triangles. The scene also holds what the sheet
annotates: the total CG with its principal axes, group CGs, ballast, slots, ground, axles and wheel contact points,
the vehicle axis triad and the legend. :mod:`massmodel.pictures.viewer` turns it into pictures.

Directions follow the model's vehicle axes (``Vehicle.forward/left/up``); a model without a ``[vehicle]`` uses
the model axes x, y, z as forward, left, up and has no ground. All lengths are metres, model frame.

References
----------
.. [1] Möller & Trumbore, "Fast, minimum storage ray-triangle intersection", Journal of Graphics Tools 2(1),
   1997 (the ray test used to find the parts that hide a point from a camera).
"""

from __future__ import annotations

import enum
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core import batch
from massmodel.core.errors import UsageError
from massmodel.core.massprops import principal_axes, radii_of_gyration
from massmodel.core.model import Model

from .merge import merge_parts
from .meshes import cross_normals, part_mesh, sharp_edges

__all__ = [
    "ColourBy",
    "SceneOptions",
    "LegendEntry",
    "GroupMarker",
    "Scene",
    "build_scene",
    "part_mesh",
    "sharp_edges",
    "hidden_by",
    "cg_in_material",
    "axis_name",
    "hex_to_rgb",
    "PALETTE",
    "INK",
    "CG_COLOUR",
    "BALLAST_COLOUR",
    "SLOT_COLOUR",
]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

# --- the sheet's own colours ---------------------------------------------------------------------------------
INK = "#1f2a33"  # lines and text
CG_COLOUR = "#e8240f"  # the total CG marker (unlit, so it keeps this exact colour in the picture)
BALLAST_COLOUR = "#d4007a"  # outline of parts that sit in a slot
SLOT_COLOUR = "#00838f"  # slot wire envelopes
# Twelve inks for groups, in order of the sorted group names (invented for massmodel).
PALETTE = (
    "#9b6a4f", "#3f7f6e", "#c99a2e", "#4d648d", "#8c5e8f", "#6b8f3a",
    "#c2703d", "#5b8fa8", "#9c4b62", "#7d7a4f", "#55557a", "#a68a64",
)
MATURITY_COLOURS = {"estimated": "#b86f8c", "calculated": "#d9a13b", "measured": "#4f8a5b"}
NO_DENSITY_COLOUR = "#9a9a9a"
# Density ramp, light and cool for foam to dark and warm for tungsten (log scale).
DENSITY_RAMP = ("#dfe8d8", "#9cc3a0", "#5f9c8c", "#3b6f8a", "#49457a", "#7a2f5f", "#a3202f")
DENSITY_RANGE = (50.0, 20000.0)  # kg/m³ of the ramp's ends


class ColourBy(enum.Enum):
    """What the part colours show."""

    GROUP = "group"
    MATERIAL = "material"
    DENSITY = "density"
    MATURITY = "maturity"


@dataclass(frozen=True, slots=True)
class SceneOptions:
    """What the scene contains and how it is coloured.

    Parameters
    ----------
    colour_by : ColourBy
        Part colours by group, material, (implied) density or mass maturity.
    group_depth : int
        Group level of the legend and the group CG markers (1 = top-level groups).
    group_cgs, slots, labels, principal_axes, ground : bool
        Show per-group CG markers, slot envelopes, text labels, principal axes at the CG, ground plane.
    chord_tolerance : float
        Largest distance between the display mesh and the exact surface, m.
    point_radius : float
        Radius of the markers of point masses, m.
    """

    colour_by: ColourBy = ColourBy.GROUP
    group_depth: int = 1
    group_cgs: bool = True
    slots: bool = True
    labels: bool = True
    principal_axes: bool = True
    ground: bool = True
    chord_tolerance: float = 0.002
    point_radius: float = 0.012

    def __post_init__(self) -> None:
        if not isinstance(self.group_depth, int) or self.group_depth < 1:
            raise UsageError(f"option 'group_depth' must be a whole number >= 1, got {self.group_depth!r}")
        if not (0.0001 <= self.chord_tolerance <= 0.05):
            raise UsageError(
                f"option 'chord_tolerance' must lie between 0.1 mm and 50 mm, got {self.chord_tolerance * 1e3:g} mm"
            )


@dataclass(frozen=True, slots=True)
class LegendEntry:
    """One legend line: a colour and what it stands for (mass in kg, share of the total as a fraction)."""

    label: str
    colour: str
    mass: float | None = None
    share: float | None = None


@dataclass(frozen=True, slots=True)
class GroupMarker:
    """CG of one group: name, colour, centre (3,) m model frame, mass kg.

    ``in_material`` says whether the CG lies where the group has material: inside the bounding box of one of its
    parts (grown by 10 % of the group's size). A group spread around the car (four wheels, the suspension) has its
    CG in empty space; pictures draw such a marker small and unlabelled, so that it is not read as a place.
    """

    name: str
    colour: str
    center: FloatArray
    mass: float
    in_material: bool = True


@dataclass(eq=False)
class Scene:
    """Everything the pictures show, in model coordinates (m).

    Attributes
    ----------
    report : dict
        :func:`massmodel.report.summary.build_report` of the model, streamed (``components`` is a
        ``ComponentEntries``: its length, and each part's entry made only when iterated).
    vertices : (V, 3) float
        Vertices of all parts, m.
    faces : (F, 3) int
        Outward triangles (counter-clockwise seen from outside).
    owner : (F,) int
        Index into ``model.components`` of each face's part.
    part_colours : (N, 3) uint8
        Display colour of each component (by the chosen scheme).
    edges : (E, 2, 3) float
        Sharp edges of the parts (dihedral angle above 30°), m, drawn as ink outlines.
    edge_owner : (E,) int
        Component of each edge.
    part_boxes : (N, 2, 3) float or None
        Low and high corners of each part's mesh, m (see :meth:`boxes`).
    face_start : (N + 1,) int or None
        Faces of component i are ``faces[face_start[i]:face_start[i + 1]]`` (see :meth:`part_faces`).
    edge_faces : (E, 2) int or None
        The two faces meeting at each edge (-1 as the second of an open edge).
    edge_index : (E, 2) int or None
        The vertices at the ends of each edge (``edges == vertices[edge_index]``).
    ballast : list of int
        Components that name a slot.
    slot_edges : list of (str, (K, 2, 3) float)
        Slot name and the sharp edges of its envelope.
    cg : (3,) float
        Total CG.
    axes : (3, 3) float
        Principal axes of inertia at the CG (rows, ascending moments); ``radii`` (3,) the radii of gyration, m.
    basis : (3, 3) float
        Rows forward, left, up (unit vectors, model axes).
    ground : float or None
        ``up · p`` of the ground plane.
    """

    model: Model
    options: SceneOptions
    report: dict[str, Any]
    vertices: FloatArray
    faces: IntArray
    owner: IntArray
    part_colours: npt.NDArray[np.uint8]
    edges: FloatArray
    edge_owner: IntArray
    ballast: list[int]
    points: list[int]
    slot_edges: list[tuple[str, FloatArray]]
    cg: FloatArray
    mass: float
    axes: FloatArray
    radii: FloatArray
    moments: FloatArray
    basis: FloatArray
    ground: float | None
    contact_points: FloatArray | None
    axle_stations: tuple[float, float] | None
    legend: list[LegendEntry]
    legend_title: str
    group_markers: list[GroupMarker]
    axis_labels: tuple[str, str, str]
    fallback_parts: list[str] = field(default_factory=list)
    part_boxes: FloatArray | None = None
    face_start: IntArray | None = None
    edge_faces: IntArray | None = None
    edge_index: IntArray | None = None
    mesh_seconds: float = 0.0
    _extent: tuple[FloatArray, FloatArray] | None = field(default=None, init=False, repr=False)
    _normals: FloatArray | None = field(default=None, init=False, repr=False)
    _two_sided: IntArray | None = field(default=None, init=False, repr=False)

    @property
    def forward(self) -> FloatArray:
        return self.basis[0]

    @property
    def left(self) -> FloatArray:
        return self.basis[1]

    @property
    def up(self) -> FloatArray:
        return self.basis[2]

    def extent(self) -> tuple[FloatArray, FloatArray]:
        """(low, high) corners, (3,) each, of everything drawn, in (forward, left, up) coordinates, m.

        Worked out once (the scene's arrays are not changed after it is built) and returned as copies."""
        if self._extent is None:
            pts = [self.vertices, self.cg[None, :]]
            if self.contact_points is not None:
                pts.append(self.contact_points)
            local = np.einsum("ij,kj->ik", np.vstack(pts), self.basis)  # (numpy's matmul is slow for 3 columns)
            low, high = local.min(axis=0), local.max(axis=0)
            if self.ground is not None:
                low[2] = min(low[2], self.ground)
            self._extent = (low, high)
        return self._extent[0].copy(), self._extent[1].copy()

    def boxes(self) -> FloatArray:
        """(N, 2, 3) low and high corners of each part's placed mesh, m (from the faces when not given)."""
        if self.part_boxes is None:
            boxes = np.zeros((len(self.model.components), 2, 3))
            for i in np.unique(self.owner):
                v = self.vertices[np.unique(self.faces[self.owner == i])]
                boxes[i] = v.min(axis=0), v.max(axis=0)
            self.part_boxes = boxes
        return self.part_boxes

    def face_normals(self) -> FloatArray:
        """(F, 3) outward normal of each face (not normalised: length twice the face's area, m²), made once."""
        if self._normals is None:
            self._normals = cross_normals(self.vertices, self.faces)
        return self._normals

    def two_sided_parts(self) -> IntArray:
        """Components whose mesh may be seen from inside (sorted): a shape that says it is not closed (an open or
        inside-out imported mesh, shown with measured properties) or a mesh with open edges. Views draw every face
        of these (:func:`massmodel.pictures.viewer.facing_parts`)."""
        if self._two_sided is None:
            flagged = [i for i, c in enumerate(self.model.components) if getattr(c.shape, "closed", True) is False]
            opened: IntArray = np.zeros(0, np.int64)
            if self.edge_faces is not None and len(self.edge_faces):
                opened = self.edge_owner[self.edge_faces[:, 1] < 0]
            self._two_sided = np.union1d(np.asarray(flagged, np.int64), opened).astype(np.int64)
        return self._two_sided

    def part_faces(self, parts: Sequence[int] | npt.NDArray[np.int64]) -> IntArray:
        """Indices of the faces of the given components."""
        idx = np.asarray(parts, np.int64)
        if self.face_start is None:
            return np.flatnonzero(np.isin(self.owner, idx))
        from .merge import gather_ranges

        return gather_ranges(self.face_start[idx], self.face_start[idx + 1] - self.face_start[idx])

    def ground_rectangle(self, margin: float = 0.25) -> FloatArray | None:
        """(4, 3) corners of the drawn ground plane (the parts' footprint plus ``margin``, m) or None."""
        if self.ground is None:
            return None
        low, high = self.extent()
        f0, f1 = low[0] - margin, high[0] + margin
        l0, l1 = low[1] - margin, high[1] + margin
        corners = [(f0, l0), (f1, l0), (f1, l1), (f0, l1)]
        return np.array([f * self.forward + s * self.left + self.ground * self.up for f, s in corners])


# --- colours ---------------------------------------------------------------------------------------------------

def hex_to_rgb(colour: str) -> tuple[int, int, int]:
    """``'#rrggbb'`` → (r, g, b) in 0..255."""
    text = colour.lstrip("#")
    if len(text) != 6:
        raise UsageError(f"colour {colour!r} is not of the form #rrggbb")
    return int(text[0:2], 16), int(text[2:4], 16), int(text[4:6], 16)


def _mix(a: str, b: str, t: float) -> str:
    ra, rb = np.array(hex_to_rgb(a), float), np.array(hex_to_rgb(b), float)
    r = np.rint(ra + (rb - ra) * t).astype(int)
    return "#" + "".join(f"{int(v):02x}" for v in r)


def density_colour(density: float | None) -> str:
    """Colour of a density on the sheet's logarithmic ramp (kg/m³; grey when unknown)."""
    if density is None or not density > 0.0:
        return NO_DENSITY_COLOUR
    lo, hi = (math.log(v) for v in DENSITY_RANGE)
    t = min(max((math.log(density) - lo) / (hi - lo), 0.0), 1.0) * (len(DENSITY_RAMP) - 1)
    k = min(int(t), len(DENSITY_RAMP) - 2)
    return _mix(DENSITY_RAMP[k], DENSITY_RAMP[k + 1], t - k)


def group_key(path: str, depth: int) -> str:
    """The group of ``path`` at ``depth`` levels ('' for a part above that level)."""
    parts = path.split("/")[:-1]
    return "/".join(parts[:depth]) if len(parts) >= depth else "/".join(parts)


def _legend_and_colours(
    model: Model, options: SceneOptions, total_mass: float
) -> tuple[list[str], list[LegendEntry], str, dict[str, str]]:
    comps = model.components
    masses = model.arrays()[0].tolist()  # the engine's part masses, kg (made once for the model)
    groups: dict[str, float] = {}
    for c, mass in zip(comps, masses, strict=True):
        key = group_key(c.path, options.group_depth)
        groups[key] = groups.get(key, 0.0) + mass
    group_names = sorted(groups)
    group_colour = {g: PALETTE[k % len(PALETTE)] for k, g in enumerate(group_names)}

    def share(m: float) -> float | None:
        return m / total_mass if total_mass > 0 else None

    def entry_label(g: str) -> str:
        return g if g else "(top-level parts)"

    if options.colour_by is ColourBy.GROUP:
        colours = [group_colour[group_key(c.path, options.group_depth)] for c in comps]
        legend = [LegendEntry(entry_label(g), group_colour[g], groups[g], share(groups[g])) for g in group_names]
        title = "groups" if options.group_depth == 1 else f"groups (level {options.group_depth})"
    elif options.colour_by is ColourBy.MATURITY:
        colours = [MATURITY_COLOURS[c.maturity.value] for c in comps]
        legend = []
        for name, col in MATURITY_COLOURS.items():
            m = float(sum(mass for c, mass in zip(comps, masses, strict=True) if c.maturity.value == name))
            legend.append(LegendEntry(name, col, m, share(m)))
        title = "mass maturity"
    elif options.colour_by is ColourBy.MATERIAL:
        keys = sorted({c.material or "" for c in comps})
        mat_colour = {k: (PALETTE[i % len(PALETTE)] if k else NO_DENSITY_COLOUR) for i, k in enumerate(keys)}
        colours = [mat_colour[c.material or ""] for c in comps]
        legend = []
        for k in keys:
            m = float(sum(mass for c, mass in zip(comps, masses, strict=True) if (c.material or "") == k))
            legend.append(LegendEntry(k or "(mass given, no material)", mat_colour[k], m, share(m)))
        title = "material"
    else:
        colours = [density_colour(c.implied_density) for c in comps]
        legend = [
            LegendEntry(f"{d:g} kg/m^3", density_colour(d))
            for d in (100.0, 500.0, 1600.0, 2700.0, 7850.0, 18000.0)
        ]
        legend.append(LegendEntry("no volume (point)", NO_DENSITY_COLOUR))
        title = "density (mass / net volume)"
    return colours, legend, title, group_colour


def cg_in_material(center: FloatArray, boxes: FloatArray, grow: float = 0.1) -> bool:
    """Whether ``center`` lies inside one of the boxes ((N, 2, 3) low/high corners, m), each grown by ``grow``
    times the diagonal of all of them together (see :class:`GroupMarker`)."""
    if len(boxes) == 0:
        return False
    pad = grow * float(np.linalg.norm(boxes[:, 1].max(axis=0) - boxes[:, 0].min(axis=0)))
    inside = np.all((boxes[:, 0] - pad <= center) & (center <= boxes[:, 1] + pad), axis=1)
    return bool(inside.any())


def _group_markers(
    model: Model, opts: SceneOptions, group_colour: dict[str, str], part_boxes: FloatArray
) -> list[GroupMarker]:
    """CG markers of the groups at ``opts.group_depth``, from the engine's group sums.

    A group path at exactly that depth holds the same parts as its key, so its properties come straight from
    :meth:`massmodel.core.model.Model.group_properties` (the vectorised engine, one pass). A key above that depth
    (parts that stop higher up, or the top-level parts, key '') holds only the parts that stop there, not the
    deeper ones the engine's group of that path sums; those few are rolled up from the engine's part arrays.
    """
    members: dict[str, list[int]] = {}
    for i, c in enumerate(model.components):  # one pass over the parts, not one a group
        members.setdefault(group_key(c.path, opts.group_depth), []).append(i)
    engine = {g: mp for g, _, mp in model.group_properties() if g.count("/") + 1 == opts.group_depth}
    arrays = None
    markers = []
    for g in sorted(members):
        index = np.asarray(members[g], np.intp)
        mp = engine.get(g)
        if mp is None:
            arrays = arrays or model.arrays()
            mp = batch.rollup(*(a[index] for a in arrays))
        colour = group_colour[g] if opts.colour_by is ColourBy.GROUP else "#6d7378"
        center = np.array(mp.center)
        markers.append(GroupMarker(g or "(top level)", colour, center, mp.mass, cg_in_material(center, part_boxes[index])))
    return markers


def axis_name(vector: FloatArray) -> str:
    """'+x', '−z', ... for a model-axis direction; the rounded vector otherwise."""
    v = np.asarray(vector, float)
    k = int(np.argmax(np.abs(v)))
    if abs(abs(v[k]) - 1.0) < 1e-9:
        return ("+" if v[k] > 0 else "−") + "xyz"[k]
    return "(" + ", ".join(f"{x:.2f}" for x in v) + ")"


# --- the scene -------------------------------------------------------------------------------------------------

def build_scene(model: Model, options: SceneOptions | None = None) -> Scene:
    """Mesh and annotate a model for display.

    Parameters
    ----------
    model : Model
    options : SceneOptions, optional

    Returns
    -------
    Scene
    """
    import time

    from massmodel.report.summary import build_report

    opts = options or SceneOptions()
    if not model.components:
        raise UsageError(f"model '{model.name}' has no components to draw")
    t0 = time.perf_counter()
    report = build_report(model, stream=True)  # the sheet reads totals, rules and the number of components
    total = model.mass_properties()
    colours, legend, legend_title, group_colour = _legend_and_colours(model, opts, total.mass)
    part_rgb = np.array([hex_to_rgb(c) for c in colours], dtype=np.uint8)

    merged = merge_parts(model, opts.chord_tolerance, opts.point_radius)

    slot_edges: list[tuple[str, FloatArray]] = []
    if opts.slots:
        for s in model.slots:
            sv, sf = s.shape.mesh_arrays(opts.chord_tolerance)
            sv = np.asarray(sv, float)
            sf = np.asarray(sf, np.int64)
            slot_edges.append((s.name, s.pose.apply(sv)[sharp_edges(sv, sf)]))

    vehicle = model.vehicle
    if vehicle is not None:
        basis = vehicle.basis
        ground: float | None = vehicle.ground_level if opts.ground else None
        contacts: FloatArray | None = vehicle.contact_points()
        stations: tuple[float, float] | None = (vehicle.front_axle_station, vehicle.rear_axle_station)
    else:
        basis, ground, contacts, stations = np.eye(3), None, None, None
    labels = (
        f"{axis_name(basis[0])} forward",
        f"{axis_name(basis[1])} left",
        f"{axis_name(basis[2])} up",
    )

    if total.mass > 0:
        moments, axes = principal_axes(total.inertia)
        radii = radii_of_gyration(total)
    else:
        moments, axes, radii = np.zeros(3), np.eye(3), np.zeros(3)

    markers = _group_markers(model, opts, group_colour, merged.part_boxes) if opts.group_cgs else []

    scene = Scene(
        model=model,
        options=opts,
        report=report,
        vertices=merged.vertices,
        faces=merged.faces,
        owner=merged.owner,
        part_colours=part_rgb,
        edges=merged.edges,
        edge_owner=merged.edge_owner,
        ballast=[i for i, c in enumerate(model.components) if c.slot],
        points=merged.points,
        slot_edges=slot_edges,
        cg=np.array(total.center),
        mass=total.mass,
        axes=np.array(axes),
        radii=np.array(radii),
        moments=np.array(moments),
        basis=np.array(basis, float),
        ground=ground,
        contact_points=contacts,
        axle_stations=stations,
        legend=legend,
        legend_title=legend_title,
        group_markers=markers,
        axis_labels=labels,
        fallback_parts=merged.fallback,
        part_boxes=merged.part_boxes,
        face_start=merged.face_start,
        edge_faces=merged.edge_faces,
        edge_index=merged.edge_index,
    )
    scene.mesh_seconds = time.perf_counter() - t0
    return scene


# --- what hides what -------------------------------------------------------------------------------------------

def _ray_hits(origins: FloatArray, direction: FloatArray, tri: FloatArray, eps: float = 1e-9) -> npt.NDArray[np.bool_]:
    """(R, T) whether ray r (origin + t·direction, t > eps) crosses triangle t [1]_."""
    a, b, c = tri[:, 0], tri[:, 1], tri[:, 2]
    e1, e2 = b - a, c - a
    p = np.cross(direction, e2)  # (T, 3)
    det = np.einsum("ij,ij->i", e1, p)
    ok = np.abs(det) > 1e-18
    inv = np.where(ok, 1.0 / np.where(ok, det, 1.0), 0.0)
    s = origins[:, None, :] - a[None, :, :]  # (R, T, 3)
    u = np.einsum("rtj,tj->rt", s, p) * inv
    q = np.cross(s, e1[None, :, :])
    v = np.einsum("j,rtj->rt", direction, q) * inv
    t = np.einsum("rtj,tj->rt", q, e2) * inv
    return ok & (u >= 0) & (v >= 0) & (u + v <= 1) & (t > eps)


def _in_front(lo: FloatArray, hi: FloatArray, box_lo: FloatArray, box_hi: FloatArray) -> npt.NDArray[np.bool_]:
    """Which boxes (lo, hi: (K, 3) in view coordinates right, up, toward the camera) overlap the targets' box
    (box_lo, box_hi: (3,)) on screen and reach nearer the camera than its farthest point."""
    return ((lo[:, 0] <= box_hi[0]) & (hi[:, 0] >= box_lo[0]) & (lo[:, 1] <= box_hi[1])
            & (hi[:, 1] >= box_lo[1]) & (hi[:, 2] > box_lo[2]))


def hidden_by(scene: Scene, toward_camera: FloatArray, targets: Sequence[FloatArray], skip: Sequence[int] = ()) -> set[int]:
    """Parts that lie between any of ``targets`` and a camera looking along ``-toward_camera`` (parallel view).

    Parameters
    ----------
    toward_camera : (3,) float
        Unit vector from the scene toward the camera.
    targets : sequence of (K, 3) float
        Sample points of what must stay visible (m).
    skip : sequence of int
        Components never counted (e.g. the target's own part).

    Returns
    -------
    set of int
        Component indices.
    """
    d = np.asarray(toward_camera, float)
    d = d / np.linalg.norm(d)
    helper = np.array([1.0, 0, 0]) if abs(d[0]) < 0.9 else np.array([0, 1.0, 0])
    r = np.cross(d, helper)
    r /= np.linalg.norm(r)
    u = np.cross(d, r)
    frame = np.stack([r, u, d], axis=1)  # model → (right, up, toward the camera)
    # first the parts, by their boxes (8 corners each, in view coordinates), then only the candidates' faces
    boxes = scene.boxes()
    corners = np.stack([boxes[:, [i, j, k], [0, 1, 2]] for i in (0, 1) for j in (0, 1) for k in (0, 1)], axis=1)
    part_view = np.einsum("nkj,ji->nki", corners, frame)  # (N, 8, 3)
    part_lo, part_hi = part_view.min(axis=1), part_view.max(axis=1)
    hidden: set[int] = set()
    skip_set = set(skip)
    for pts in targets:
        pts = np.atleast_2d(np.asarray(pts, float))
        pp = pts @ frame
        box_lo, box_hi = pp.min(axis=0), pp.max(axis=0)
        parts = np.flatnonzero(_in_front(part_lo, part_hi, box_lo, box_hi))
        parts = parts[~np.isin(parts, list(skip_set | hidden))]
        if not len(parts):
            continue
        faces = scene.part_faces(parts)
        tri_view = np.einsum("fkj,ji->fki", scene.vertices[scene.faces[faces]], frame)  # (F, 3, 3)
        cand = faces[_in_front(tri_view.min(axis=1), tri_view.max(axis=1), box_lo, box_hi)]
        for start in range(0, len(cand), 4000):
            chunk = cand[start : start + 4000]
            hits = _ray_hits(pts, d, scene.vertices[scene.faces[chunk]]).any(axis=0)
            hidden.update(int(k) for k in np.unique(scene.owner[chunk[hits]]))
    return hidden
