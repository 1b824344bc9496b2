"""Tests for massmodel.cad.imported: STEP and mesh files as component and slot shapes.

Sources (see docs/references.md §1): closed forms of the cuboid and the solid cylinder from Machinery's
Handbook 31st ed. pp.253-254 (R): cuboid I_xx = m(b² + c²)/12 and cyclic; cylinder of radius r and length L,
I_axis = m r²/2, I_transverse = m(3r² + L²)/12; hexagonal prism area 3√3/2 R² (regular hexagon of circumradius R,
from memory). The STEP files are written in the tests by cadquery, independently of massmodel's reader.
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import cadquery as cq
import numpy as np
import pytest

from conftest import assert_close
from massmodel.cad.imported import GeometryFileError, MeshShape, StepShape, load_mesh, load_step
from massmodel.cad.primitives import to_mesh, to_solid
from massmodel.core.model import MassSource
from massmodel.core.shapes import Box
from massmodel.modelfile.loader import ModelFileError, loads_model

HEAD = """
[model]
name = "files"
[units]
length = "mm"
"""


def cylinder_inertia_per_density(r: float, length: float) -> np.ndarray:
    """Handbook closed form of a solid cylinder along z, at unit density (m⁵)."""
    v = math.pi * r * r * length
    return np.diag([v * (3 * r * r + length**2) / 12, v * (3 * r * r + length**2) / 12, v * r * r / 2])


def box_obj(path: Path, sx: float, sy: float, sz: float, centre=(0.0, 0.0, 0.0), inside_out: bool = False,
            drop: int = 0) -> Path:
    """A cuboid as an OBJ file (mm), outward winding; ``inside_out`` reverses it, ``drop`` leaves out triangles."""
    hx, hy, hz = sx / 2, sy / 2, sz / 2
    cx, cy, cz = centre
    v = [(cx + x, cy + y, cz + z) for x in (-hx, hx) for y in (-hy, hy) for z in (-hz, hz)]
    quads = [(0, 1, 3, 2), (4, 6, 7, 5), (0, 4, 5, 1), (2, 3, 7, 6), (0, 2, 6, 4), (1, 5, 7, 3)]
    tris = []
    for a, b, c, d in quads:
        tris += [(a, b, c), (a, c, d)]
    if inside_out:
        tris = [(a, c, b) for a, b, c in tris]
    tris = tris[drop:]
    lines = [f"v {x:.9g} {y:.9g} {z:.9g}" for x, y, z in v] + [f"f {a + 1} {b + 1} {c + 1}" for a, b, c in tris]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture(scope="module")
def step_files(tmp_path_factory) -> dict[str, Path]:
    d = tmp_path_factory.mktemp("step")
    files = {}
    # a cylinder r = 40 mm, L = 120 mm along z, base on z = 0, written by cadquery in mm
    cyl = cq.Workplane("XY").circle(40.0).extrude(120.0).val()
    files["cyl"] = d / "cylinder.step"
    cyl.exportStep(str(files["cyl"]))
    # the same geometry in a file whose stated length unit is the metre
    files["cyl_m"] = d / "cylinder_m.step"
    cyl.exportStep(str(files["cyl_m"]), unit="MM", outputUnit="M")
    # two disjoint boxes, 100x40x20 at the origin and 60x60x10 centred at (200, 0, 0)
    two = cq.Workplane("XY").box(100, 40, 20).union(cq.Workplane("XY").box(60, 60, 10).translate((200, 0, 0)))
    files["two"] = d / "two.step"
    cq.exporters.export(two, str(files["two"]))
    # two overlapping boxes kept as separate solids in one compound
    comp = cq.Compound.makeCompound([cq.Solid.makeBox(10, 10, 10), cq.Solid.makeBox(10, 10, 10, cq.Vector(5, 0, 0))])
    files["overlap"] = d / "overlap.step"
    comp.exportStep(str(files["overlap"]))
    # a file that is not STEP, and a truncated one
    files["corrupt"] = d / "corrupt.step"
    files["corrupt"].write_text("ISO-10303-21;\nHEADER;\nthis is not a STEP file\n")
    files["truncated"] = d / "truncated.step"
    files["truncated"].write_text(files["cyl"].read_text()[:2000])
    # only a face (no solid)
    files["face"] = d / "face.step"
    cq.Face.makePlane(50, 50).exportStep(str(files["face"]))
    return files


def test_step_component_matches_cylinder_closed_form(step_files):
    # Closed form: Machinery's Handbook (cylinder); centroid at mid-length L/2 above the base.
    model = loads_model(HEAD + f"""
[[part]]
path = "tank"
shape = "step"
file = "{step_files['cyl'].name}"
unit = "mm"
density = "2700 kg/m^3"
maturity = "calculated"
at = [10, 20, 30]
""", base_dir=step_files["cyl"].parent)
    c = model.component("tank")
    r, length = 0.040, 0.120
    assert isinstance(c.shape, StepShape) and c.shape.solid_count == 1
    assert_close(c.volume, math.pi * r * r * length, 1e-12, "volume")
    assert_close(c.props.mass, 2700 * math.pi * r * r * length, 1e-12, "mass")
    assert_close(c.props.center, [0.010, 0.020, 0.030 + length / 2], 1e-12, "CG")
    assert_close(c.props.inertia, 2700 * cylinder_inertia_per_density(r, length), 1e-12, "inertia")
    assert_close(c.shape.bounds(), [[-r, -r, 0.0], [r, r, length]], 1e-9, "bounds")


def test_step_in_metres_declared_as_metres_reads_the_same(step_files):
    shape = load_step(step_files["cyl_m"], "m", 1.0)
    assert_close(shape.volume(), math.pi * 0.04**2 * 0.12, 1e-12)
    assert_close(shape.inertia_per_density(), cylinder_inertia_per_density(0.04, 0.12), 1e-12)


def test_step_unit_that_disagrees_with_the_file_is_refused(step_files):
    with pytest.raises(GeometryFileError) as err:
        load_step(step_files["cyl_m"], "mm", 1e-3)
    assert err.value.field == "unit"
    assert "states its lengths in metre" in str(err.value)


def test_step_with_two_solids_adds_them(step_files):
    # Closed form: two cuboids (Machinery's Handbook) combined with the parallel-axis theorem (Steiner).
    shape = load_step(step_files["two"], "mm", 1e-3)
    assert shape.solid_count == 2
    a, b = Box(0.1, 0.04, 0.02), Box(0.06, 0.06, 0.01)
    va, vb = a.volume(), b.volume()
    xb = 0.2
    centroid = np.array([vb * xb / (va + vb), 0.0, 0.0])
    inertia = a.inertia_per_density() + b.inertia_per_density()
    for v, x in ((va, 0.0), (vb, xb)):
        d = np.array([x, 0.0, 0.0]) - centroid
        inertia = inertia + v * (np.dot(d, d) * np.eye(3) - np.outer(d, d))
    assert_close(shape.volume(), va + vb, 1e-12)
    assert_close(shape.centroid(), centroid, 1e-12)
    assert_close(shape.inertia_per_density(), inertia, 1e-12)


def test_step_contains_and_surface_points(step_files):
    shape = load_step(step_files["cyl"], "mm", 1e-3)
    pts = np.array([[0.0, 0.0, 0.06], [0.039, 0.0, 0.06], [0.041, 0.0, 0.06], [0.0, 0.0, 0.121], [0.0, 0.0, 0.1205]])
    assert shape.contains(pts, tol=0.0).tolist() == [True, True, False, False, False]
    assert shape.contains(pts, tol=0.0011).tolist() == [True, True, True, True, True]
    surf = shape.surface_points(300)
    rho = np.hypot(surf[:, 0], surf[:, 1])
    # every sample lies on the mantle (rho = r) or on an end face (z = 0 or L)
    on_mantle = np.abs(rho - 0.04) < 1e-7
    on_end = (np.abs(surf[:, 2]) < 1e-9) | (np.abs(surf[:, 2] - 0.12) < 1e-9)
    assert np.all(on_mantle | on_end) and 150 <= len(surf) <= 300
    mesh = to_mesh(shape, 1e-4)
    assert mesh.is_watertight and abs(mesh.volume - shape.volume()) <= mesh.area * 1e-4


@pytest.mark.parametrize(
    ("key", "field", "words"),
    [("missing", "file", "not found"), ("corrupt", "file", "not a readable STEP file"),
     ("truncated", "file", "not a readable STEP file"), ("face", "file", "holds no closed solid"),
     ("overlap", "file", "overlap by 500 mm^3")],
)
def test_bad_step_files_give_clear_errors(step_files, tmp_path, key, field, words):
    name = "nowhere.step" if key == "missing" else str(step_files[key])
    text = HEAD + f"""
[[part]]
path = "bracket"
shape = "step"
file = "{name}"
unit = "mm"
material = "aluminium_6061_t6"
maturity = "calculated"
"""
    with pytest.raises(ModelFileError) as err:
        loads_model(text, label="car.toml", base_dir=tmp_path)
    e = err.value
    assert (e.file, e.item, e.field) == ("car.toml", "part 'bracket'", field)
    assert words in e.message



def test_failed_overlap_boolean_is_refused_not_passed(step_files, monkeypatch):
    import OCP.BRepAlgoAPI

    class FailedCommon:  # what OpenCascade returns when the boolean fails: not done, an empty result
        def __init__(self, *args):
            pass

        def IsDone(self):
            return False

    monkeypatch.setattr(OCP.BRepAlgoAPI, "BRepAlgoAPI_Common", FailedCommon)
    with pytest.raises(GeometryFileError, match="could not check whether solids #1 and #2 of .* overlap"):
        load_step(step_files["overlap"], "mm", 1e-3)

def test_step_file_shape_needs_a_declared_unit(step_files):
    text = HEAD + f"""
[[part]]
path = "bracket"
shape = "step"
file = "{step_files['cyl']}"
density = "2700 kg/m^3"
maturity = "calculated"
"""
    with pytest.raises(ModelFileError) as err:
        loads_model(text, label="car.toml")
    assert err.value.field == "unit" and "declare the length unit" in err.value.message
    with pytest.raises(ModelFileError) as err:
        loads_model(text.replace('density = "2700', 'unit = "kg"\ndensity = "2700'), label="car.toml")
    assert err.value.field == "unit" and "not a length unit" in err.value.message


def test_closed_mesh_matches_box_closed_form(tmp_path):
    # Closed form: cuboid (Machinery's Handbook); OBJ coordinates in mm, exact in decimal.
    box_obj(tmp_path / "block.obj", 100, 40, 20, centre=(5, 6, 7))
    model = loads_model(HEAD + """
[[part]]
path = "block"
shape = "mesh"
file = "block.obj"
unit = "mm"
density = "17000 kg/m^3"
maturity = "calculated"
""", base_dir=tmp_path)
    c = model.component("block")
    ref = Box(0.1, 0.04, 0.02)
    assert isinstance(c.shape, MeshShape) and c.shape.closed and c.shape.triangle_count == 12
    assert_close(c.props.mass, 17000 * ref.volume(), 1e-12)
    assert_close(c.props.center, [0.005, 0.006, 0.007], 1e-12)
    assert_close(c.props.inertia, 17000 * ref.inertia_per_density(), 1e-12)
    # the mesh's B-rep rebuild (one face per triangle) has the same volume properties in OpenCascade
    from massmodel.cad.solids import solid_volume_properties

    mass, center, inertia = solid_volume_properties(to_solid(c.shape), 17000.0)
    assert_close(mass, 17000 * ref.volume(), 1e-12)
    assert_close(center, [0.005, 0.006, 0.007], 1e-12)
    assert_close(inertia, 17000 * ref.inertia_per_density(), 1e-12)


def test_demo_catch_tank_mesh_is_a_closed_hexagonal_prism():
    # Closed form: regular hexagon of circumradius R has area 3*sqrt(3)/2 R^2 (from memory); the OBJ rounds its
    # coordinates to 1e-6 mm, hence the 1e-8 tolerance.
    shape = load_mesh(Path(__file__).parents[1] / "parts_demo/geometry/catch_tank.obj", "mm", 1e-3)
    assert shape.closed and shape.problem == ""
    assert_close(shape.volume(), 1.5 * math.sqrt(3) * 0.04**2 * 0.1, 1e-8)
    assert_close(shape.centroid(), [0.0, 0.0, 0.05], 1e-8)


def test_open_mesh_is_refused_with_a_density_and_allowed_with_measured_properties(tmp_path):
    box_obj(tmp_path / "open.obj", 100, 40, 20, drop=2)
    text = HEAD + """
[[part]]
path = "cover"
shape = "mesh"
file = "open.obj"
unit = "mm"
{source}
maturity = "measured"
"""
    with pytest.raises(ModelFileError) as err:
        loads_model(text.format(source='density = "1500 kg/m^3"'), label="car.toml", base_dir=tmp_path)
    assert (err.value.item, err.value.field) == ("part 'cover'", "density")
    # the two triangles of one face are gone: a square hole with 4 open edges
    assert "is not closed (not watertight: 4 open edges" in err.value.message and "measured" in err.value.message
    with pytest.raises(ModelFileError) as err:
        loads_model(text.format(source='mass = "1.2 kg"'), label="car.toml", base_dir=tmp_path)
    assert err.value.field == "mass"
    model = loads_model(text.format(source='measured = { mass = "1.2 kg", cg = [0, 0, 10] }'), base_dir=tmp_path)
    c = model.component("cover")
    assert c.source is MassSource.MEASURED and c.volume == 0.0 and c.inertia_source == "point"
    assert_close(c.props.center, [0.0, 0.0, 0.010], 1e-12)
    with pytest.raises(Exception, match="not closed"):
        to_solid(c.shape)


def test_inside_out_mesh_is_refused_with_a_density(tmp_path):
    box_obj(tmp_path / "inv.obj", 100, 40, 20, inside_out=True)
    shape = load_mesh(tmp_path / "inv.obj", "mm", 1e-3)
    assert not shape.closed and shape.problem.startswith("inside out")
    with pytest.raises(ModelFileError, match="inside out"):
        loads_model(HEAD + """
[[part]]
path = "block"
shape = "mesh"
file = "inv.obj"
unit = "mm"
material = "lead"
maturity = "measured"
""", base_dir=tmp_path)


def test_bad_mesh_files(tmp_path):
    (tmp_path / "junk.stl").write_bytes(b"\x00\x01 not a mesh")
    with pytest.raises(GeometryFileError, match="junk.stl"):
        load_mesh(tmp_path / "junk.stl", "mm", 1e-3)
    with pytest.raises(GeometryFileError, match="must end in"):
        load_mesh(tmp_path / "block.ply", "mm", 1e-3)
    with pytest.raises(GeometryFileError, match="not found"):
        load_mesh(tmp_path / "absent.obj", "mm", 1e-3)


def test_step_slot_and_relative_paths_from_a_base_file(tmp_path, step_files):
    # the base file lives in a sub-folder with its geometry; the variant extends it from the parent folder
    sub = tmp_path / "car"
    sub.mkdir()
    (sub / "envelope.step").write_bytes(step_files["cyl"].read_bytes())
    (sub / "base.toml").write_text(HEAD + """
[[slot]]
name = "can"
shape = "step"
file = "envelope.step"
unit = "mm"
clearance = "1 mm"
[[part]]
path = "ballast/block"
shape = "box"
size = [20, 20, 20]
material = "lead"
maturity = "measured"
at = [0, 0, 60]
slot = "can"
""")
    (tmp_path / "variant.toml").write_text('[model]\nname = "v"\nextends = "car/base.toml"\n')
    from massmodel.modelfile.loader import load_model

    model = load_model(tmp_path / "variant.toml")
    assert isinstance(model.slot("can").shape, StepShape)
    assert_close(model.slot("can").shape.volume(), math.pi * 0.04**2 * 0.12, 1e-12)


def test_cut_outs_stay_primitives(tmp_path, step_files):
    with pytest.raises(ModelFileError) as err:
        loads_model(HEAD + f"""
[[part]]
path = "plate"
shape = "box"
size = [100, 100, 10]
material = "lead"
maturity = "measured"
cut = [ {{ shape = "step", file = "{step_files['cyl']}", unit = "mm" }} ]
""")
    assert err.value.field == "cut[0].shape"


def test_cut_out_inside_a_step_parent(step_files):
    # a through hole r = 5 mm along the cylinder's axis: net volume pi (R^2 - r^2) L (closed form)
    model = loads_model(HEAD + f"""
[[part]]
path = "spacer"
shape = "step"
file = "{step_files['cyl']}"
unit = "mm"
density = "1000 kg/m^3"
maturity = "calculated"
cut = [ {{ shape = "cylinder", radius = 5, length = 120, at = [0, 0, 60] }} ]
""")
    assert_close(model.component("spacer").volume, math.pi * (0.04**2 - 0.005**2) * 0.12, 1e-12)
    with pytest.raises(ModelFileError, match="leaves its parent step"):
        loads_model(HEAD + f"""
[[part]]
path = "spacer"
shape = "step"
file = "{step_files['cyl']}"
unit = "mm"
density = "1000 kg/m^3"
maturity = "calculated"
cut = [ {{ shape = "cylinder", radius = 5, length = 130, at = [0, 0, 60] }} ]
""")


def test_core_imports_without_cad_libraries(tmp_path):
    # massmodel, its loader and this module import with numpy alone: block cadquery, OCP and trimesh
    code = (
        "import sys\n"
        "for name in ('cadquery', 'OCP', 'trimesh', 'pyvista'):\n"
        "    sys.modules[name] = None\n"
        "import massmodel, massmodel.cad.imported, massmodel.modelfile.loader, massmodel.cad.packaging, massmodel.cad.export\n"
        "m = massmodel.loads_model('[model]\\nname = \"x\"\\n[[part]]\\npath = \"a\"\\nshape = \"box\"\\n"
        "size = [\"1 m\", \"1 m\", \"1 m\"]\\nmass = \"2 kg\"\\nmaturity = \"measured\"\\n')\n"
        "print(m.mass_properties().mass)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=Path(__file__).parents[1])
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "2.0"
