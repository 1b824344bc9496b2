"""The merged display mesh built in bulk (massmodel.pictures.merge), the bulk visibility tests and what each view
draws.

Oracles: the core's own mesher of each shape (``Shape.mesh_arrays``, a separate code path meshing one shape at a
time), each part's pose applied on its own (``Pose.apply``), the engine's group sums (``Model.group_properties``)
and a mass-weighted mean written in the test, and trimesh's ray caster (an independent library) for what hides the
CG. Nothing here times anything.
"""

from __future__ import annotations

import numpy as np
import pytest

from massmodel import loads_model
from massmodel.core.shapes import (
    Box,
    Cone,
    Cylinder,
    Ellipsoid,
    Extrusion,
    Frustum,
    Hemisphere,
    PointMass,
    Sphere,
    SphericalShell,
    Torus,
    Tube,
    Wedge,
)
from massmodel.pictures.merge import FAMILY_EDGES_MIN, bulk_meshes, gather_ranges, merge_parts, mesh_families
from massmodel.pictures.meshes import part_mesh, sharp_edges, sharp_edges_and_faces
from massmodel.pictures.scene import SceneOptions, build_scene, group_key, hex_to_rgb, hidden_by

KINDS = ["box", "cylinder", "tube", "sphere", "cone", "torus", "point"]


def _generated(n: int, seed: int, groups: tuple[str, ...] = ("chassis", "body", "power")) -> str:
    """An invented model of ``n`` parts of every kind, rotated, some mirrored, one in five with a cut-out box."""
    rng = np.random.default_rng(seed)
    text = ['[model]\nname = "merge test"\n[units]\nlength = "mm"\nmass = "kg"\nangle = "deg"',
            '[vehicle]\naxes = { forward = "+x", left = "+y", up = "+z" }\nwheelbase = "2600 mm"\n'
            'track_front = "1500 mm"\ntrack_rear = "1500 mm"\nfront_axle_station = "0 mm"\nground_level = "-300 mm"']
    for k, g in enumerate(groups):
        text.append(f'[[group]]\npath = "{g}"\ncolour = "#{40 * k + 50:02x}6070"\nmaturity = "calculated"')
    for k in range(n):
        g = groups[k % len(groups)]
        kind = KINDS[k % len(KINDS)]
        mirror = k % 4 == 1
        sub = "left/" if mirror else ("front/" if k % 3 == 0 else "")
        x, y, z = rng.uniform(-2500, 500), rng.uniform(100, 600) if mirror else rng.uniform(-500, 500), rng.uniform(-200, 500)
        rot = [round(float(a), 1) for a in rng.uniform(-60, 60, 3)]
        a, b, c = (float(v) for v in rng.uniform(30, 150, 3))
        part = f'[[part]]\npath = "{g}/{sub}p{k:03d}"\nat = [{x:.1f}, {y:.1f}, {z:.1f}]\n'
        part += f'rotate = {{ extrinsic = "xyz", angles = {rot} }}\n' + ("mirror = true\n" if mirror else "")
        if kind == "box":
            part += f'shape = "box"\nsize = [{a:.1f}, {b:.1f}, {c:.1f}]\ndensity = "2700 kg/m^3"\n'
            if k % 5 == 0:
                part += f'cut = [ {{ shape = "box", size = [{a / 3:.1f}, {b / 3:.1f}, {c:.1f}] }} ]\n'
        elif kind == "cylinder":
            part += f'shape = "cylinder"\nradius = {a / 2:.1f}\nlength = {c:.1f}\ndensity = "7850 kg/m^3"\n'
        elif kind == "tube":
            part += f'shape = "tube"\nouter_radius = {a / 3:.1f}\ninner_radius = {a / 4:.1f}\nlength = {3 * c:.1f}\nmass = "1.2 kg"\n'
        elif kind == "sphere":
            part += f'shape = "sphere"\nradius = {a / 3:.1f}\nmass = "0.8 kg"\n'
        elif kind == "cone":
            part += f'shape = "cone"\nradius = {a / 2:.1f}\nheight = {c:.1f}\nmass = "0.4 kg"\n'
        elif kind == "torus":
            part += f'shape = "torus"\nring_radius = {a:.1f}\ntube_radius = {a / 6:.1f}\nmass = "0.5 kg"\n'
        else:
            part += 'shape = "point"\nmass = "0.3 kg"\n'
        text.append(part)
    # two parts above the level-2 groups: at group depth 2 their keys are shorter than the depth
    text.append('[[part]]\npath = "chassis/plate"\nshape = "box"\nsize = [300, 200, 10]\nmass = "2 kg"\nat = [-900, 0, -100]')
    text.append('[[part]]\npath = "loose_weight"\nshape = "point"\nmass = "4 kg"\nmaturity = "measured"\nat = [-1200, 0, 0]')
    return "\n".join(text) + "\n"


@pytest.fixture(scope="module")
def model():
    return loads_model(_generated(84, seed=7), label="merge_test.toml")


@pytest.fixture(scope="module")
def scene(model):
    return build_scene(model)


# --- bulk meshing ------------------------------------------------------------------------------------------------

@pytest.mark.parametrize("tolerance", [0.002, 0.0004])
def test_bulk_meshes_equal_each_shapes_own_mesh(tolerance):
    # Oracle: Shape.mesh_arrays, the core's mesher of one shape at a time; the bulk path must give the very same
    # vertices (bit for bit) and faces, in the same order, for every family it handles.
    shapes = [
        Box(0.3, 0.2, 0.1), Box(0.05, 0.07, 0.011), Cylinder(0.1, 0.2), Cylinder(0.013, 0.4), Cylinder(0.1, 0.05),
        Tube(0.05, 0.04, 0.6), Tube(0.012, 0.01, 0.3), Sphere(0.04), Sphere(0.2), Cone(0.05, 0.12), Cone(0.2, 0.1),
        Frustum(0.1, 0.05, 0.2), Torus(0.15, 0.02), Torus(0.03, 0.005), Hemisphere(0.1), SphericalShell(0.1, 0.09),
    ]
    bulk = bulk_meshes(shapes, tolerance)
    for shape, mesh in zip(shapes, bulk, strict=True):
        assert mesh is not None, shape
        v, f = shape.mesh_arrays(tolerance)
        assert np.array_equal(mesh[0], np.asarray(v)), shape
        assert np.array_equal(mesh[1], np.asarray(f)), shape


def test_bulk_meshes_leave_other_shapes_to_their_own_mesher():
    others = [Ellipsoid(0.1, 0.2, 0.3), Wedge(0.1, 0.2, 0.3), Extrusion(((0, 0), (0.1, 0), (0, 0.1)), 0.02), PointMass()]
    assert bulk_meshes([Box(0.1, 0.1, 0.1), *others], 0.002)[1:] == [None] * 4


def test_gather_ranges_concatenates_aranges():
    starts, counts = np.array([5, 0, 9, 2]), np.array([2, 0, 3, 1])
    expected = np.concatenate([np.arange(s, s + c) for s, c in zip(starts, counts, strict=True)])
    assert np.array_equal(gather_ranges(starts, counts), expected)


# --- the merged mesh -------------------------------------------------------------------------------------------

def test_merged_mesh_is_each_part_meshed_and_placed_on_its_own(model, scene):
    # Oracle: the part-at-a-time path (part_mesh, then Pose.apply; a mirror reverses the winding; a point mass is
    # a 12 mm sphere moved to its centre).
    opts = SceneOptions()
    assert np.all(np.diff(scene.owner) >= 0) and scene.face_start[-1] == len(scene.faces)
    total = 0
    for i, comp in enumerate(model.components):
        if isinstance(comp.shape, PointMass):
            lv, lf = Sphere(opts.point_radius).mesh_arrays(min(opts.chord_tolerance, opts.point_radius / 4))
            v, f = np.asarray(lv) + comp.props.center, np.asarray(lf)
        else:
            lv, lf, _ = part_mesh(comp, opts.chord_tolerance)
            v, f = comp.pose.apply(lv), (lf[:, ::-1] if comp.pose.is_mirrored else lf)
        faces = scene.faces[scene.face_start[i] : scene.face_start[i + 1]]
        assert len(faces) == len(f), comp.path  # the part's triangle count
        assert np.all(scene.owner[scene.face_start[i] : scene.face_start[i + 1]] == i)
        base = faces.min()
        assert np.array_equal(faces - base, f), comp.path
        assert np.allclose(scene.vertices[base : base + len(v)], v, rtol=0.0, atol=1e-12), comp.path
        assert np.allclose(scene.boxes()[i], [v.min(axis=0), v.max(axis=0)], rtol=0.0, atol=1e-12)
        total += len(f)
    assert total == len(scene.faces)  # the merged mesh's triangles are the sum of the parts'


def test_per_cell_colours_are_the_parts_group_colours(model, scene):
    # each part's colour is its top-level group's swatch in the legend; every face carries its part's colour
    swatch = {e.label: np.array(hex_to_rgb(e.colour), np.uint8) for e in scene.legend}
    expected = np.array([swatch[group_key(c.path, 1) or "(top-level parts)"] for c in model.components])
    assert np.array_equal(scene.part_colours, expected)
    cell = scene.part_colours[scene.owner]
    for i in range(len(model.components)):
        assert np.all(cell[scene.face_start[i] : scene.face_start[i + 1]] == expected[i])


def _same_segments(a: np.ndarray, b: np.ndarray, tol: float = 1e-12) -> bool:
    """Whether two sets of segments (E, 2, 3) are equal, ends in either order, one to one, to ``tol`` (m)."""
    if a.shape != b.shape:
        return False
    if len(a) == 0:
        return True
    straight = np.abs(a[:, None, 0] - b[None, :, 0]).max(-1) + np.abs(a[:, None, 1] - b[None, :, 1]).max(-1)
    turned = np.abs(a[:, None, 0] - b[None, :, 1]).max(-1) + np.abs(a[:, None, 1] - b[None, :, 0]).max(-1)
    match = np.minimum(straight, turned) <= tol
    return bool(np.all(match.sum(axis=1) == 1) and np.all(match.sum(axis=0) == 1))


def test_merged_edges_are_each_parts_sharp_edges(model, scene):
    # Oracle: sharp_edges of each part's own mesh, placed; the bulk pass welds no vertex across parts (the order of
    # a part's edges may differ: compared as sets)
    opts = SceneOptions()
    for i, comp in enumerate(model.components):
        mine = scene.edges[scene.edge_owner == i]
        if isinstance(comp.shape, PointMass):
            assert len(mine) == 0
            continue
        lv, lf, _ = part_mesh(comp, opts.chord_tolerance)
        expected = comp.pose.apply(lv)[sharp_edges(lv, lf)]
        assert _same_segments(mine, expected), comp.path
    # some families are large enough to have their edges found a family at a time
    plain = [c.shape for c in model.components if not c.cutouts and not isinstance(c.shape, PointMass)]
    assert max(len(index) for index, _, _ in mesh_families(plain, opts.chord_tolerance)) >= FAMILY_EDGES_MIN
    assert np.array_equal(scene.vertices[scene.edge_index], scene.edges)
    # the two faces named for an edge belong to its part and both hold the edge's ends
    ef = scene.edge_faces
    assert np.all(scene.owner[ef[:, 0]] == scene.edge_owner) and np.all(ef[:, 1] >= 0)  # closed meshes: no open edge
    assert np.all(scene.owner[ef[:, 1]] == scene.edge_owner)
    for k in (0, 1):
        corners = scene.faces[ef[:, k]]
        assert np.all(np.any(corners == scene.edge_index[:, :1], axis=1) & np.any(corners == scene.edge_index[:, 1:], axis=1))


def test_sharp_edges_of_two_coincident_boxes_are_not_welded_together():
    v, f = Box(0.3, 0.2, 0.1).mesh_arrays(0.001)
    v, f = np.asarray(v), np.asarray(f)
    both_v, both_f = np.vstack([v, v]), np.vstack([f, f + len(v)])
    assert len(sharp_edges(both_v, both_f)) < 24  # welded as one mesh, the copies' edges pair with each other
    edges, faces = sharp_edges_and_faces(both_v, both_f, vertex_owner=np.repeat([0, 1], len(v)))
    assert len(edges) == 24  # a box has 12 edges, each copy its own
    a, b, c = (both_v[both_f[:, k]] for k in range(3))
    n = np.cross(b - a, c - a)
    n /= np.linalg.norm(n, axis=1)[:, None]
    assert np.allclose(np.einsum("ij,ij->i", n[faces[:, 0]], n[faces[:, 1]]), 0.0, atol=1e-12)  # box faces meet at 90°


def test_merge_shares_one_mesh_among_equal_parts():
    text = _generated(0, seed=1)
    for k in range(6):
        text += f'[[part]]\npath = "body/fin{k}"\nshape = "cylinder"\nradius = 20\nlength = 80\nmass = "1 kg"\nat = [{100 * k}, 0, 0]\n'
    merged = merge_parts(loads_model(text, label="equal.toml"), 0.002, 0.012)
    assert merged.templates == 3  # the plate, the point-mass sphere and one cylinder for six fins
    per_part = np.diff(merged.face_start)
    assert len(set(per_part[2:].tolist())) == 1


# --- group CGs ----------------------------------------------------------------------------------------------------

def test_group_cgs_are_the_engines_group_sums(model, scene):
    engine = {g: mp for g, _, mp in model.group_properties()}
    masses = np.array([c.props.mass for c in model.components])
    centres = np.array([c.props.center for c in model.components])
    for marker in scene.group_markers:
        if marker.name == "(top level)":
            continue
        mp = engine[marker.name]
        assert abs(marker.mass - mp.mass) <= 1e-12 * mp.mass
        assert np.allclose(marker.center, mp.center, rtol=0.0, atol=1e-12)
        # and the closed form: the mass-weighted mean of the parts' centres
        inside = np.array([c.path.startswith(marker.name + "/") for c in model.components])
        cg = (masses[inside, None] * centres[inside]).sum(axis=0) / masses[inside].sum()
        assert np.allclose(marker.center, cg, rtol=0.0, atol=1e-12)
    assert sorted(m.name for m in scene.group_markers) == ["(top level)", "body", "chassis", "power"]


def test_group_cgs_at_depth_two_count_only_the_parts_that_stop_at_each_key(model):
    markers = {m.name: m for m in build_scene(model, SceneOptions(group_depth=2)).group_markers}
    masses = np.array([c.props.mass for c in model.components])
    centres = np.array([c.props.center for c in model.components])
    keys = np.array([group_key(c.path, 2) for c in model.components])
    assert "chassis" in markers and "chassis/front" in markers and "chassis/left" in markers
    for key in set(keys.tolist()):
        inside = keys == key
        cg = (masses[inside, None] * centres[inside]).sum(axis=0) / masses[inside].sum()
        marker = markers[key or "(top level)"]
        assert marker.mass == pytest.approx(masses[inside].sum(), rel=1e-12)
        assert np.allclose(marker.center, cg, rtol=0.0, atol=1e-12), key


# --- visibility ---------------------------------------------------------------------------------------------------

@pytest.mark.parametrize("toward", [(0.0, -1.0, 0.0), (0.0, 0.0, 1.0), (1.0, 0.0, 0.0), (0.577, -0.577, 0.577)])
def test_hidden_by_agrees_with_trimesh_rays(scene, toward):
    # Oracle: trimesh's ray caster over the whole merged mesh, every hit along the ray toward the camera
    import trimesh

    mesh = trimesh.Trimesh(scene.vertices, scene.faces, process=False)
    d = np.asarray(toward) / np.linalg.norm(toward)
    rng = np.random.default_rng(3)
    low, high = scene.vertices.min(axis=0), scene.vertices.max(axis=0)
    points = low + (high - low) * rng.random((40, 3))
    expected: set[int] = set()
    for p in points:
        tri = mesh.ray.intersects_id(p[None, :], d[None, :], multiple_hits=True)[0]
        expected |= {int(k) for k in scene.owner[tri]}
    found = hidden_by(scene, d, [p[None, :] for p in points])
    assert found == expected
    assert len(found) > 3  # the rays do cross parts (the check is not empty on both sides)


def test_each_view_draws_the_faces_and_edges_that_can_be_seen(scene):
    from massmodel.pictures.viewer import facing_parts, view_camera

    cam = view_camera(scene, "iso", 800, 600)
    clear = np.array([3, 10], np.int64)
    faces, edges = facing_parts(scene, cam, clear)
    normals = scene.face_normals()
    facing = normals @ cam.toward >= 0.0
    assert np.all(facing[faces]) and not np.isin(scene.owner[faces], clear).any()
    left_out = np.setdiff1d(np.arange(len(scene.faces)), faces)
    assert np.all(~facing[left_out] | np.isin(scene.owner[left_out], clear))
    # about half the faces of closed parts face a parallel camera
    assert 0.35 < len(faces) / len(scene.faces) < 0.65
    ef = scene.edge_faces[edges]
    assert np.all(facing[ef[:, 0]] | facing[ef[:, 1]])
    everything, all_edges = facing_parts(scene, None, np.zeros(0, np.int64))
    assert len(everything) == len(scene.faces) and len(all_edges) == len(scene.edges)  # the interactive view


def _renders_with_and_without(scene, monkeypatch, views, name, replacement):
    """The images of ``views`` as drawn, and again with ``massmodel.pictures.viewer.<name>`` replaced by
    ``replacement(original)`` (skipped where no off-screen OpenGL context can be made)."""
    monkeypatch.setenv("VTK_DEFAULT_OPENGL_WINDOW", "vtkEGLRenderWindow")
    from massmodel.pictures import viewer
    from massmodel.pictures.viewer import render_views, renderer_problem, view_camera

    problem = renderer_problem()
    if problem is not None:
        pytest.skip(problem)
    cams = [view_camera(scene, view, 700, 450) for view in views]
    drawn = [v.image for v in render_views(scene, cams)]
    monkeypatch.setattr(viewer, name, replacement(getattr(viewer, name)))
    return drawn, [v.image for v in render_views(scene, cams)]


def test_leaving_out_back_faces_keeps_the_picture(scene, monkeypatch):
    # a render with every face and one with the facing faces only differ in no more than a few edge pixels
    culled, full = _renders_with_and_without(scene, monkeypatch, ("side", "front", "iso"), "facing_parts",
                                             lambda original: lambda s, cam, clear: original(s, None, clear))
    for a, b in zip(culled, full, strict=True):
        changed = np.abs(a.astype(int) - b.astype(int)).max(axis=2) > 0
        assert changed.mean() < 0.005
        assert len(np.unique(a.reshape(-1, 3), axis=0)) > 50


def test_nearest_parts_are_drawn_first(scene):
    # the drawing order is a reordering of the facing faces, part by part, parts by the nearest corner of their box
    # (the 8 corners projected on the direction toward the camera, written out here), each part's faces in order
    from itertools import product

    from massmodel.pictures.viewer import facing_parts, nearest_first, view_camera

    for name in ("side", "top", "iso"):
        cam = view_camera(scene, name, 800, 600)
        faces, _ = facing_parts(scene, cam, np.array([3], np.int64))
        drawn = nearest_first(scene, cam, faces)
        assert np.array_equal(np.sort(drawn), faces)
        boxes = scene.boxes()
        corners = np.array([[boxes[:, i, 0], boxes[:, j, 1], boxes[:, k, 2]] for i, j, k in product((0, 1), repeat=3)])
        near = np.einsum("cdn,d->nc", corners, cam.toward).max(axis=1)  # (N,)
        owners = scene.owner[drawn]
        runs = owners[np.r_[True, owners[1:] != owners[:-1]]]
        assert len(runs) == len(np.unique(owners))  # each part's faces together
        assert np.all(np.diff(near[runs]) <= 1e-12)  # nearest first (to rounding)
        for part in runs[:20]:
            own = drawn[owners == part]
            assert np.all(np.diff(own) > 0)
    assert nearest_first(scene, None, faces) is faces  # the interactive view keeps the order


def test_drawing_the_nearest_parts_first_keeps_the_picture(scene, monkeypatch):
    # the depth test decides what is seen whatever the order: the same pixels (no two parts here share a plane)
    ordered, plain = _renders_with_and_without(scene, monkeypatch, ("side", "top", "iso"), "nearest_first",
                                               lambda original: lambda s, cam, faces: faces)
    for a, b in zip(ordered, plain, strict=True):
        assert np.array_equal(a, b)
        assert len(np.unique(a.reshape(-1, 3), axis=0)) > 50


def test_cross_normals_are_numpys_cross_products():
    # Oracle: np.cross on the gathered corners; the column-wise form must give the very same numbers
    from massmodel.pictures.meshes import cross_normals

    v, f = Torus(0.1, 0.02).mesh_arrays(0.001)
    v, f = np.asarray(v), np.asarray(f)
    a, b, c = (v[f[:, k]] for k in range(3))
    assert np.array_equal(cross_normals(v, f), np.cross(b - a, c - a))
    stacked = np.stack([v, 1.5 * v, v[:, ::-1]])
    for g in range(3):
        a, b, c = (stacked[g][f[:, k]] for k in range(3))
        assert np.array_equal(cross_normals(stacked, f)[g], np.cross(b - a, c - a))


def _box_obj(path, inside_out: bool = False, drop: int = 0):
    """A 100 x 40 x 20 mm cuboid as an OBJ file, outward winding (``inside_out`` reversed, ``drop`` triangles
    left out)."""
    v = [(x, y, z) for x in (-50, 50) for y in (-20, 20) for z in (-10, 10)]
    quads = [(0, 1, 3, 2), (4, 6, 7, 5), (0, 4, 5, 1), (2, 3, 7, 6), (0, 2, 6, 4), (1, 5, 7, 3)]
    tris = [t for a, b, c, d in quads for t in ((a, b, c), (a, c, d))]
    tris = [(a, c, b) for a, b, c in tris] if inside_out else tris
    lines = [f"v {x} {y} {z}" for x, y, z in v] + [f"f {a + 1} {b + 1} {c + 1}" for a, b, c in tris[drop:]]
    path.write_text("\n".join(lines) + "\n")


def test_a_mesh_that_may_be_seen_from_inside_keeps_every_face(tmp_path):
    # an open mesh (a face missing) and an inside-out mesh, both shown with measured properties, beside a closed box
    from massmodel.pictures.viewer import facing_parts, view_camera

    _box_obj(tmp_path / "open.obj", drop=2)
    _box_obj(tmp_path / "inv.obj", inside_out=True)
    text = ('[model]\nname = "covers"\n[units]\nlength = "mm"\nmass = "kg"\nangle = "deg"\n'
            '[[group]]\npath = "g"\nmaturity = "measured"\n'
            '[[part]]\npath = "g/open"\nshape = "mesh"\nfile = "open.obj"\nunit = "mm"\n'
            'measured = { mass = "1.2 kg", cg = [0, 0, 0] }\n'
            '[[part]]\npath = "g/inv"\nshape = "mesh"\nfile = "inv.obj"\nunit = "mm"\nat = [0, 200, 0]\n'
            'measured = { mass = "1.2 kg", cg = [0, 0, 0] }\n'
            '[[part]]\npath = "g/box"\nshape = "box"\nsize = [100, 40, 20]\nmass = "1 kg"\nat = [0, 400, 0]\n')
    scene = build_scene(loads_model(text, label="covers.toml", base_dir=tmp_path))
    assert scene.two_sided_parts().tolist() == [0, 1]
    faces, _ = facing_parts(scene, view_camera(scene, "iso", 600, 400), np.zeros(0, np.int64))
    kept = np.bincount(scene.owner[faces], minlength=3)
    assert kept[0] == 10 and kept[1] == 12  # every face of the open and the inside-out mesh
    assert kept[2] == 6  # the closed box: the three sides facing the iso camera, two triangles each
