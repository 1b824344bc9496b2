"""Display scene, off-screen views and the drawing sheet.

The render tests draw real pictures off-screen (VTK through EGL) into tmp_path and check them pixel by pixel; they
are skipped, with the reason, only where no off-screen renderer can start.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from massmodel import load_model, loads_model
from massmodel.cli import main
from massmodel.pictures.scene import (
    CG_COLOUR,
    ColourBy,
    SceneOptions,
    build_scene,
    hex_to_rgb,
    hidden_by,
    sharp_edges,
)
from massmodel.vehicle.balance import check_rules

ROOT = Path(__file__).resolve().parents[1]
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"

SMALL = """
[model]
name = "test sled"
[units]
length = "mm"
mass = "kg"
angle = "deg"
[vehicle]
axes = { forward = "+x", left = "+y", up = "+z" }
wheelbase = "2000 mm"
track_front = "1200 mm"
track_rear = "1200 mm"
front_axle_station = "0 mm"
ground_level = "-300 mm"
[[group]]
path = "frame"
colour = "#777777"
maturity = "calculated"
[[group]]
path = "engine"
colour = "#884422"
maturity = "measured"
[[group]]
path = "ballast"
colour = "#555555"
maturity = "estimated"
[[part]]
path = "frame/floor"
shape = "box"
size = [2200, 800, 20]
density = "2700 kg/m^3"
at = [-1000, 0, -200]
cut = [ { shape = "box", size = [200, 200, 20], at = [500, 0, 0] } ]
[[part]]
path = "frame/left/pod"
shape = "cylinder"
radius = 80
length = 600
density = "1000 kg/m^3"
at = [-900, 350, -100]
rotate = { extrinsic = "y", angles = [90] }
mirror = true
[[part]]
path = "engine/block"
shape = "box"
size = [400, 300, 300]
mass = "60 kg"
at = [-1700, 0, 0]
[[part]]
path = "engine/oil"
shape = "point"
mass = "3 kg"
at = [-1700, 0, -120]
[[slot]]
name = "nose"
shape = "box"
size = [200, 200, 60]
at = [-300, 0, -160]
clearance = "1 mm"
[[part]]
path = "ballast/block"
shape = "box"
size = [150, 150, 40]
density = "17000 kg/m^3"
at = [-300, 0, -160]
slot = "nose"
[[rule]]
name = "front axle"
check = "min_axle_load"
axle = "front"
limit = "20 kg"
[[rule]]
name = "front share"
check = "front_fraction"
min = 0.40
max = 0.45
"""


@pytest.fixture(scope="module")
def renderer():
    """Skip (with the reason) where no off-screen OpenGL context can be made."""
    os.environ.setdefault("VTK_DEFAULT_OPENGL_WINDOW", "vtkEGLRenderWindow")
    from massmodel.pictures.viewer import renderer_problem

    problem = renderer_problem()
    if problem is not None:
        print(f"render tests skipped: {problem}")
        pytest.skip(problem)
    return True


@pytest.fixture(scope="module")
def small():
    return loads_model(SMALL, label="small.toml")


@pytest.fixture(scope="module")
def car():
    return load_model(CAR)


@pytest.fixture(scope="module")
def car_sheet(renderer, car, tmp_path_factory):
    from massmodel.pictures.sheet import render_sheet

    scene = build_scene(car)
    out = tmp_path_factory.mktemp("sheet") / "car.png"
    return scene, render_sheet(scene, out, size=(1100, 770))


def _png(path: Path) -> np.ndarray:
    from PIL import Image

    with Image.open(path) as im:
        return np.asarray(im.convert("RGB"))


def _vtk_pixel(matrix: np.ndarray, point: np.ndarray, width: int, height: int) -> tuple[float, float]:
    """Pixel (x right, y down) of a point through VTK's composite projection matrix (model → NDC)."""
    h = matrix @ np.append(point, 1.0)
    ndc = h[:3] / h[3]
    return (ndc[0] + 1.0) * 0.5 * width, height - (ndc[1] + 1.0) * 0.5 * height


def _has_colour_near(img: np.ndarray, x: float, y: float, colour: str, radius: int = 3, tol: int = 6) -> bool:
    target = np.array(hex_to_rgb(colour))
    xi, yi = int(x), int(y)
    patch = img[max(yi - radius, 0) : yi + radius + 1, max(xi - radius, 0) : xi + radius + 1].astype(int)
    return bool((np.abs(patch - target).max(axis=2) <= tol).any())


# --- scene (no renderer needed) ----------------------------------------------------------------------------------

def test_core_imports_without_renderer_libraries():
    code = ("import sys, massmodel, massmodel.pictures.scene, massmodel.pictures.viewer, massmodel.pictures.sheet, massmodel.pictures.cgchart, "
            "massmodel.cli.view; print(sorted(m for m in ('pyvista', 'vtk', 'matplotlib', 'trimesh', 'cadquery') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.strip() == "[]"


def test_placed_meshes_are_closed_outward_and_cut(small):
    # Oracle: trimesh's volume of each placed mesh against the closed-form net volume (shapes module); a mirrored
    # pose turned inside out would give a negative volume.
    import trimesh

    scene = build_scene(small, SceneOptions(chord_tolerance=0.0005))
    for i, comp in enumerate(small.components):
        faces = scene.faces[scene.owner == i]
        mesh = trimesh.Trimesh(scene.vertices, faces, process=True)
        if comp.shape.kind == "point":
            # a marker sphere of 12 mm: an inscribed polyhedron, so a little less than the sphere (closed form)
            assert 0.9 * (4 / 3 * np.pi * 0.012**3) < mesh.volume < 4 / 3 * np.pi * 0.012**3
            assert np.allclose(mesh.centroid, comp.props.center, atol=1e-4)
            continue
        assert mesh.is_watertight, comp.path
        assert mesh.volume == pytest.approx(comp.volume, rel=0.01), comp.path
        assert np.allclose(mesh.center_mass, comp.pose.apply(comp.props_local.center), atol=2e-3), comp.path
    mirrored = [c for c in small.components if c.pose.is_mirrored]
    assert [c.path for c in mirrored] == ["frame/right/pod"]
    floor = small.component("frame/floor")
    # the cut-out takes 0.2*0.2*0.02 m³ from 2.2*0.8*0.02 m³ (closed form)
    assert floor.volume == pytest.approx(2.2 * 0.8 * 0.02 - 0.2 * 0.2 * 0.02, rel=1e-12)
    assert scene.fallback_parts == []


def test_box_has_twelve_sharp_edges_and_cylinder_two_rims():
    from massmodel.core.shapes import Box, Cylinder

    v, f = Box(0.3, 0.2, 0.1).mesh_arrays(0.001)
    assert len(sharp_edges(np.asarray(v), np.asarray(f))) == 12  # a box has 12 edges; face diagonals are flat
    v, f = Cylinder(0.1, 0.2).mesh_arrays(0.001)
    v, f = np.asarray(v), np.asarray(f)
    edges = sharp_edges(v, f)
    z = v[edges][:, :, 2]
    # every sharp edge lies on one of the two rims (side facets meet at 360°/n < 30°)
    assert np.all(np.isclose(np.abs(z), 0.1)) and np.all(z[:, 0] == z[:, 1])


def test_legend_entries_are_the_top_level_groups(car, small):
    scene = build_scene(car)
    top = sorted({c.path.split("/")[0] for c in car.components if "/" in c.path})
    assert [e.label for e in scene.legend] == top
    masses = {g: sum(c.props.mass for c in car.components if c.path.startswith(g + "/")) for g in top}
    for e in scene.legend:
        assert e.mass == pytest.approx(masses[e.label], rel=1e-12)
        assert e.share == pytest.approx(masses[e.label] / scene.mass, rel=1e-12)
    assert len({e.colour for e in scene.legend}) == len(top)
    by_maturity = build_scene(small, SceneOptions(colour_by=ColourBy.MATURITY))
    assert [e.label for e in by_maturity.legend] == ["estimated", "calculated", "measured"]
    assert [m.name for m in build_scene(car, SceneOptions(group_depth=2)).group_markers][:3] == [
        "ballast", "bodywork", "bodywork/front_wing"]


def test_hidden_by_finds_the_part_in_front(small):
    scene = build_scene(small)
    i_block = [c.path for c in small.components].index("engine/block")
    centre = small.component("engine/block").props.center
    # looking down from above at a point under the engine block: the block hides it
    below = centre - np.array([0, 0, 0.2])
    assert i_block in hidden_by(scene, np.array([0, 0, 1.0]), [below[None, :]])
    # seen from below, the block is behind the point
    assert i_block not in hidden_by(scene, np.array([0, 0, -1.0]), [below[None, :]])


def test_title_block_numbers_match_the_model(car):
    from massmodel.pictures.sheet import title_block_rows
    from massmodel.report.summary import build_report

    rows = dict(title_block_rows(build_scene(car)))
    rep = build_report(car)
    assert rows["CG height"] == f"{rep['cg_height_m']:.4f} m above ground"
    assert rows["CG to front axle"] == f"{rep['cg_behind_front_axle_m']:.4f} m behind"
    masses = np.array([c.props.mass for c in car.components])
    centres = np.array([c.props.center for c in car.components])
    m = masses.sum()
    cg = (masses[:, None] * centres).sum(axis=0) / m
    v = car.vehicle
    # front share = a2 / L with a2 the CG's distance ahead of the rear axle (Jazar 2008, ch. 2; equation number from memory)
    front_fraction = (cg @ v.forward - v.rear_axle_station) / v.wheelbase
    assert rows["total mass"] == f"{m:.2f} kg · {len(car.components)} parts"
    assert rows["CG x / y / z"] == f"{cg[0]:.4f} / {cg[1]:.4f} / {cg[2]:.4f} m, model axes"
    assert rows["CG height"] == f"{cg @ v.up - v.ground_level:.4f} m above ground"
    assert rows["front mass fraction"] == f"{front_fraction:.4f} ({100 * front_fraction:.2f} %)"
    results = check_rules(car)
    failed = sum(1 for r in results if not r.passed)
    assert rows["rule checks"] == f"{len(results) - failed} of {len(results)} pass · {failed} FAIL"
    assert rows["model"] == "Brindlecombe BL-3"


# --- off-screen renders --------------------------------------------------------------------------------------------

def test_sheet_png_size_content_and_cg_pixel(car_sheet):
    scene, result = car_sheet
    img = _png(result.path)
    assert img.shape == (770, 1100, 3)
    assert len(np.unique(img.reshape(-1, 3), axis=0)) > 500  # not blank: shaded parts, text, lines
    assert [p.name for p in result.panels] == ["side", "top", "front", "iso"]
    for panel, view in zip(result.panels, result.views, strict=True):
        cam = panel.camera
        px, py = _vtk_pixel(view.vtk_matrix, scene.cg, cam.width, cam.height)
        # the camera's own projection agrees with VTK's matrices
        assert np.allclose(cam.project(scene.cg)[0], (px, py), atol=0.5)
        assert _has_colour_near(view.image, px, py, CG_COLOUR, radius=2), panel.name
        sx, sy = panel.image[0] + px, panel.image[1] + py
        assert _has_colour_near(img, sx, sy, CG_COLOUR, radius=3), panel.name
        # and it is a marker, not a colour spread over the view: 30 px away there is none of it
        assert not _has_colour_near(img, sx + 30, sy + 30, CG_COLOUR, radius=2), panel.name


def test_sheet_aligns_side_top_and_front_views(car_sheet):
    scene, result = car_sheet
    p = {panel.name: panel for panel in result.panels}
    cg_side = p["side"].camera.project(scene.cg)[0] + p["side"].image[:2]
    cg_top = p["top"].camera.project(scene.cg)[0] + p["top"].image[:2]
    cg_front = p["front"].camera.project(scene.cg)[0] + p["front"].image[:2]
    assert cg_side[0] == pytest.approx(cg_top[0], abs=0.51)  # same station, same column
    assert cg_side[1] == pytest.approx(cg_front[1], abs=0.51)  # same height, same row
    assert p["side"].camera.scale == p["top"].camera.scale == p["front"].camera.scale


def test_legend_swatches_are_drawn_in_the_group_colours(car_sheet):
    scene, result = car_sheet
    img = _png(result.path)
    assert [label for label, _ in result.legend] == [e.label for e in scene.legend]
    for label, colour, (x, y, w, h) in result.legend_rects:
        centre = img[int(y + h / 2), int(x + w / 2)].astype(int)
        assert np.abs(centre - np.array(hex_to_rgb(colour))).max() <= 2, label


def test_single_view_and_interactive_scene(renderer, small, tmp_path):
    from massmodel.pictures.sheet import render_sheet
    from massmodel.pictures.viewer import show_interactive

    scene = build_scene(small)
    out = tmp_path / "side.png"
    result = render_sheet(scene, out, size=(720, 480), view="side")
    img = _png(out)
    assert img.shape == (480, 720, 3)
    (panel,), (view,) = result.panels, result.views
    px, py = _vtk_pixel(view.vtk_matrix, scene.cg, panel.camera.width, panel.camera.height)
    assert _has_colour_near(img, panel.image[0] + px, panel.image[1] + py, CG_COLOUR, radius=3)
    pl = show_interactive(scene, ["test sled"], off_screen=True, window_size=(640, 420))
    try:
        shot = np.asarray(pl.screenshot(return_img=True))
    finally:
        pl.close()
    assert shot.shape[:2] == (420, 640) and len(np.unique(shot.reshape(-1, 3), axis=0)) > 50
    assert list(tmp_path.iterdir()) == [out]  # no temporary file left behind


def test_render_command_writes_the_sheet(renderer, tmp_path, capsys):
    out = tmp_path / "v.png"
    assert main(["render", str(CAR), "-o", str(out), "--size", "900x600", "--view", "top",
                 "--colour-by", "density", "--hide", "labels,slots"]) == 0
    assert _png(out).shape == (600, 900, 3)
    text = capsys.readouterr().out
    assert f"{out}: 900x600 px, 1 view(s) of 'Brindlecombe BL-3'" in text
    assert "rule checks: 4 of 6 pass · 2 FAIL" in text


# --- user mistakes -----------------------------------------------------------------------------------------------

def test_view_without_display_points_to_render(monkeypatch, capsys):
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    monkeypatch.setattr(sys, "platform", "linux")
    assert main(["view", str(CAR)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("massmodel view: error: no display found")
    assert f"massmodel render {CAR} -o view.png" in err
    assert "Traceback" not in err


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--size", "big"], "option --size: 'big' is not WIDTHxHEIGHT in pixels"),
        (["--size", "100x100"], "size 100x100 px: width must lie in 640..8000"),
        (["--hide", "wheels"], "option --hide: unknown item 'wheels'"),
        (["--group-depth", "0"], "option 'group_depth' must be a whole number >= 1"),
    ],
)
def test_render_refuses_bad_options(tmp_path, capsys, argv, message):
    out = tmp_path / "x.png"
    assert main(["render", str(CAR), "-o", str(out), *argv]) == 2
    assert message in capsys.readouterr().err
    assert not out.exists()


def test_render_refuses_a_non_png_name(tmp_path, capsys):
    assert main(["render", str(CAR), "-o", str(tmp_path / "x.jpg")]) == 2
    assert "the file name must end in .png" in capsys.readouterr().err


def _overlapping(boxes):
    """Pairs of (text, rect) whose rectangles (x, y, w, h) overlap."""
    out = []
    for i, (a, ra) in enumerate(boxes):
        for b, rb in boxes[i + 1:]:
            if ra[0] < rb[0] + rb[2] and rb[0] < ra[0] + ra[2] and ra[1] < rb[1] + rb[3] and rb[1] < ra[1] + ra[3]:
                out.append((a, b))
    return out


def test_sheet_labels_never_overlap_and_stay_on_the_sheet(renderer, car, tmp_path):
    # The drawn text boxes as the renderer measured them (not the placer's estimates), at two sheet sizes.
    from massmodel.pictures.sheet import render_sheet

    scene = build_scene(car)
    for size in ((2000, 1400), (1100, 770)):
        result = render_sheet(scene, tmp_path / f"s{size[0]}.png", size=size)
        assert len(result.labels) > 10
        assert _overlapping(result.labels) == []
        w, h = size
        assert [t for t, (x, y, bw, bh) in result.labels if x < 0 or y < 0 or x + bw > w or y + bh > h] == []


def test_group_cg_in_empty_space_is_not_labelled_and_ballast_is_labelled_once_per_slot(renderer, car, tmp_path):
    from massmodel.pictures.scene import cg_in_material
    from massmodel.pictures.sheet import render_sheet

    scene = build_scene(car)
    marks = {g.name: g for g in scene.group_markers}
    # Four wheels: their common CG lies on the centre line between the axles, where no wheel is.
    assert not marks["wheels"].in_material and marks["driver"].in_material
    # a closed form: a point between two unit boxes 3 m apart is not in material; a point in one is
    boxes = np.array([[[0, 0, 0], [1, 1, 1]], [[3, 0, 0], [4, 1, 1]]], float)
    assert not cg_in_material(np.array([2.0, 0.5, 0.5]), boxes)
    assert cg_in_material(np.array([0.5, 0.5, 0.5]), boxes)
    texts = [t for t, _ in render_sheet(scene, tmp_path / "s.png", size=(2000, 1400)).labels]
    assert "wheels" not in texts and "driver" in texts
    slots = {c.slot for c in car.components if c.slot}
    for slot in slots:
        mass = sum(c.props.mass for c in car.components if c.slot == slot)
        mine = [t for t in texts if t.startswith(f"{slot}: ")]
        assert mine and all(t.endswith(f" {mass:.2f} kg") for t in mine)
    assert not any(t.startswith("ballast ") for t in texts)


def test_title_block_shows_the_standard_uncertainty_of_the_totals(car):
    # ± u from the RSS propagation (massmodel.uncertainty; Zimmerman & Nakai, docs/references.md §5) where the
    # model declares uncertainties, as the report does
    from massmodel.pictures.sheet import title_block_rows
    from massmodel.uncertainty import rss_uncertainties

    rows = dict(title_block_rows(build_scene(car)))
    est = rss_uncertainties(car)
    assert rows["uncertainty, k = 1"] == (f"mass ± {est['mass'].u:.2f} kg · CG height ± {1e3 * est['cg_height'].u:.1f} mm"
                                          f" · front ± {est['front_fraction'].u:.4f}")
    plain = dict(title_block_rows(build_scene(loads_model(SMALL, label="small.toml"))))
    assert "uncertainty, k = 1" not in plain
