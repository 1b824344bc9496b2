"""Tests for massmodel.cad.export: STEP read back by OpenCascade's XCAF reader, STL and GLB read back by trimesh.

Oracles: OpenCascade's STEPCAFControl_Reader (names, colours, locations, shapes) and BRepGProp volume integrals
(about the centre of mass, off-diagonals −∫xy dm) on the solids read from the file, never massmodel's own import
code; trimesh's STL and glTF readers; the glTF 2.0 specification (Khronos) for units (metres), axes (+Y up, +Z
forward) and linear base colours; IEC 61966-2-1 for the sRGB transfer function, written out in this file.
"""

from __future__ import annotations

import json
import math
import os
import struct
from pathlib import Path

import numpy as np
import pytest
import trimesh
from OCP.BRepGProp import BRepGProp
from OCP.GProp import GProp_GProps
from OCP.IFSelect import IFSelect_ReturnStatus
from OCP.Quantity import Quantity_Color, Quantity_TOC_sRGB
from OCP.STEPCAFControl import STEPCAFControl_Reader
from OCP.TCollection import TCollection_ExtendedString
from OCP.TDataStd import TDataStd_Name
from OCP.TDF import TDF_Label, TDF_LabelSequence
from OCP.TDocStd import TDocStd_Document
from OCP.TopLoc import TopLoc_Location
from OCP.XCAFDoc import XCAFDoc_ColorType, XCAFDoc_DocumentTool

from conftest import assert_close
from massmodel import cli
from massmodel.cad.export import (
    ExportError,
    ExportOptions,
    Format,
    StlLayout,
    export_model,
    slug,
    verify_export,
)
from massmodel.modelfile.loader import load_model, loads_model
from massmodel.report.summary import build_report

ROOT = Path(__file__).parents[1]

# A small model with every kind of geometry export must handle: nested groups, a cut-out, rotations, a mirrored
# pair, a pattern, a NURBS ellipsoid, a tube, a mass-sourced part and a STEP part. No point mass (see below).
MODEL = """
[model]
name = "Round Trip 1"
[units]
length = "mm"
angle = "deg"
[[group]]
path = "frame/left"
at = [0, 300, 0]
mirror = true
colour = "#2f7fa6"
maturity = "calculated"
[[part]]
path = "frame/left/rail"
shape = "tube"
outer_radius = 19
inner_radius = 17
length = 600
material = "structural_steel"
at = [-100, 20, 50]
rotate = { extrinsic = "xyz", angles = [0, -90, 10] }
[[part]]
path = "frame/left/bracket"
shape = "box"
size = [60, 40, 10]
material = "aluminium_6061_t6"
at = [150, -30, 0]
rotate = { extrinsic = "z", angles = [25] }
cut = [ { shape = "cylinder", radius = 6, length = 10, at = [10, 5, 0] } ]
[[part]]
path = "ballast/plate"
shape = "box"
size = [80, 50, 5]
material = "lead"
maturity = "measured"
colour = "#5d6a75"
at = [0, 0, -100]
pattern = { count = 3, step = [0, 0, 5] }
[[part]]
path = "body/pod"
shape = "ellipsoid"
semi_x = 90
semi_y = 40
semi_z = 30
mass = "1.3 kg"
maturity = "estimated"
colour = "#c48a6a"
at = [400, 0, 80]
rotate = { extrinsic = "y", angles = [15] }
[[part]]
path = "body/spacer"
shape = "step"
file = "spacer.step"
unit = "mm"
density = "1400 kg/m^3"
maturity = "calculated"
colour = "#9a3d8c"
at = [-300, 0, 0]
rotate = { extrinsic = "x", angles = [30] }
"""


@pytest.fixture(scope="module")
def exported(tmp_path_factory):
    import cadquery as cq

    d = tmp_path_factory.mktemp("roundtrip")
    cq.Workplane("XY").rect(50, 30).extrude(20).faces(">Z").hole(8).val().exportStep(str(d / "spacer.step"))
    model = loads_model(MODEL, label="rt.toml", base_dir=d)
    out = d / "out"
    result = export_model(model, out, ExportOptions(stl_layout=StlLayout.BOTH, chord_tolerance=5e-5))
    return model, out, result


def _name(label: TDF_Label) -> str | None:
    attr = TDataStd_Name()
    return attr.Get().ToExtString() if label.FindAttribute(TDataStd_Name.GetID_s(), attr) else None


def read_step_leaves(path: Path) -> dict[str, dict]:
    """Every leaf part of the STEP assembly: its name, the names of the assemblies above it, colour, the
    accumulated location and the shape, read with OpenCascade's XCAF reader."""
    doc = TDocStd_Document(TCollection_ExtendedString("XmlXCAF"))
    reader = STEPCAFControl_Reader()
    reader.SetColorMode(True)
    reader.SetNameMode(True)
    assert reader.ReadFile(str(path)) == IFSelect_ReturnStatus.IFSelect_RetDone
    assert reader.Transfer(doc)
    shapes = XCAFDoc_DocumentTool.ShapeTool_s(doc.Main())
    colours = XCAFDoc_DocumentTool.ColorTool_s(doc.Main())
    leaves: dict[str, dict] = {}

    def walk(label: TDF_Label, loc: TopLoc_Location, parents: list[str]) -> None:
        target = label
        if shapes.IsReference_s(label):
            target = TDF_Label()
            shapes.GetReferredShape_s(label, target)
            loc = loc.Multiplied(shapes.GetLocation_s(label))
        if shapes.IsAssembly_s(target):
            seq = TDF_LabelSequence()
            shapes.GetComponents_s(target, seq)
            for i in range(1, seq.Length() + 1):
                walk(seq.Value(i), loc, parents + [_name(target)])
            return
        colour = Quantity_Color()
        has = colours.GetColor_s(target, XCAFDoc_ColorType.XCAFDoc_ColorSurf, colour)
        leaves[_name(target)] = {
            "parents": parents, "loc": loc, "shape": shapes.GetShape_s(target),
            "colour": colour.Values(Quantity_TOC_sRGB) if has else None,
        }

    roots = TDF_LabelSequence()
    shapes.GetFreeShapes(roots)
    assert roots.Length() == 1
    walk(roots.Value(1), TopLoc_Location(), [])
    return leaves


def _trsf_matrix(loc: TopLoc_Location) -> np.ndarray:
    t = loc.Transformation()
    return np.array([[t.Value(i, j) for j in (1, 2, 3, 4)] for i in (1, 2, 3)])


def test_step_round_trip_names_nesting_colours_placements_volumes(exported):
    model, out, result = exported
    text = (out / "round-trip-1.step").read_text()
    assert "FILE_SCHEMA(('AUTOMOTIVE_DESIGN" in text  # ISO 10303-214 (AP214) schema name, docs/references.md §13
    assert "SI_UNIT(.MILLI.,.METRE.)" in text  # the length unit is stated: mm
    leaves = read_step_leaves(out / "round-trip-1.step")
    assert sorted(leaves) == sorted(c.path for c in model.components)
    for c in model.components:
        leaf = leaves[c.path]
        # nesting: the root is the model, then one assembly per group path
        segs = c.path.split("/")
        assert leaf["parents"] == [model.name] + ["/".join(segs[:k]) for k in range(1, len(segs))]
        # colour: the STEP file stores sRGB; read back within round-off of the model's #rrggbb
        want = [int(c.colour[k:k + 2], 16) / 255 for k in (1, 3, 5)]
        assert_close(leaf["colour"], want, 1e-6, f"{c.path} colour")
        # placement: for a proper pose the location is the pose itself (translation in mm)
        m = _trsf_matrix(leaf["loc"])
        if np.linalg.det(c.pose.linear) > 0:
            assert_close(m[:, :3], c.pose.linear, 1e-12, f"{c.path} rotation")
            assert_close(m[:, 3], c.pose.translation * 1000, 1e-12, f"{c.path} translation")
        else:
            assert np.linalg.det(m[:, :3]) > 0  # a location is a rigid motion; the mirror is in the geometry
        # per-solid volume and the placed solid's centroid (all these parts have uniform density: CG = centroid)
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(leaf["shape"].Moved(leaf["loc"]), props, 1e-14)
        assert_close(props.Mass() * 1e-9, c.volume, 1e-9, f"{c.path} volume")
        centre = props.CentreOfMass()
        assert_close(np.array([centre.X(), centre.Y(), centre.Z()]) * 1e-3, c.props.center, 1e-9, f"{c.path} CG")
    assert {c.path for c in model.components if c.pose.is_mirrored} == {"frame/right/rail", "frame/right/bracket"}


def test_step_mass_properties_from_the_file_match_the_report(exported):
    # Recompute mass, CG and inertia about the CG from the solids in the file with the model's densities
    # (OpenCascade's GProp_GProps.Add(props, density)), and compare with the report to 1e-6 relative.
    model, out, _ = exported
    leaves = read_step_leaves(out / "round-trip-1.step")
    total = GProp_GProps()
    for c in model.components:
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(leaves[c.path]["shape"].Moved(leaves[c.path]["loc"]), props, 1e-14)
        total.Add(props, c.implied_density * 1e-9)  # kg/m^3 -> kg/mm^3
    report = build_report(model)
    mat = total.MatrixOfInertia()
    inertia = np.array([[mat.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-6  # kg*mm^2 -> kg*m^2
    c = total.CentreOfMass()
    assert_close(total.Mass(), report["mass_kg"], 1e-6, "mass")
    assert_close(np.array([c.X(), c.Y(), c.Z()]) * 1e-3, report["cg_m"], 1e-6, "CG")
    assert_close(inertia, report["inertia_cg_kg_m2"], 1e-6, "inertia about the CG")


def test_sidecar_states_what_it_covers(exported):
    model, out, result = exported
    sc = json.loads((out / "round-trip-1.massprops.json").read_text())
    assert sc == result.sidecar
    report = build_report(model)
    assert sc["format"] == "massmodel-export/2" and sc["left_out"] == []
    assert sc["covers"]["components"] == len(model.components) == len(sc["components"])
    assert_close(sc["mass_kg"], report["mass_kg"], 1e-12)
    assert_close(sc["cg_m"], report["cg_m"], 1e-12)
    assert_close(sc["inertia_cg_kg_m2"], report["inertia_cg_kg_m2"], 1e-12)
    diff = sc["geometry_check"]["relative_difference"]
    assert diff["mass"] < 1e-9 and sc["geometry_check"]["cg_difference_m"] < 1e-9 and diff["inertia"] < 1e-9
    assert "negative" in sc["conventions"]["inertia"] and "mm" in sc["conventions"]["units"]
    row = {r["path"]: r for r in sc["components"]}["body/pod"]
    assert_close(row["density_kg_m3"], 1.3 / model.component("body/pod").volume, 1e-12)
    assert sorted(sc["files"]) == ["glb", "sha256", "step", "stl", "stl_parts"]
    assert verify_export(out / "round-trip-1.massprops.json") == []


def test_stl_files_read_back_watertight_within_the_chord_tolerance(exported):
    model, out, _ = exported
    chord_mm = 0.05
    total_faces = 0
    for c in model.components:
        path = out / "round-trip-1_parts" / f"{c.path}.stl"
        raw = path.read_bytes()
        assert not raw[:80].lower().startswith(b"solid")  # binary STL header
        assert len(raw) == 84 + 50 * struct.unpack("<I", raw[80:84])[0]
        mesh = trimesh.load(path)
        assert mesh.is_watertight and mesh.is_winding_consistent, c.path
        # every triangle lies within the chord tolerance of the exact surface: |dV| <= area x tolerance
        assert abs(mesh.volume - c.volume * 1e9) <= mesh.area * chord_mm, c.path
        # placed: the mesh centroid lies within the same bound of the exact CG (uniform parts)
        assert_close(mesh.center_mass * 1e-3, c.props.center, 1e-3, c.path)
        total_faces += len(mesh.faces)
    whole = trimesh.load(out / "round-trip-1.stl", process=False)
    assert len(whole.faces) == total_faces
    assert abs(whole.volume - sum(c.volume for c in model.components) * 1e9) <= whole.area * chord_mm


def _srgb_from_linear(x: float) -> float:
    # IEC 61966-2-1 sRGB encoding, written out here as the independent inverse
    return 12.92 * x if x <= 0.0031308 else 1.055 * x ** (1 / 2.4) - 0.055


def test_glb_keeps_names_colours_placements_and_metres(exported):
    model, out, _ = exported
    raw = (out / "round-trip-1.glb").read_bytes()
    assert raw[:4] == b"glTF" and struct.unpack("<I", raw[4:8])[0] == 2 and struct.unpack("<I", raw[8:12])[0] == len(raw)
    n = struct.unpack("<I", raw[12:16])[0]
    doc = json.loads(raw[20:20 + n])
    nodes = {nd.get("name"): nd for nd in doc["nodes"]}
    # nesting: the root rotates model axes into glTF axes; group nodes hold their parts
    root = nodes[slug(model.name)]
    children = {doc["nodes"][k]["name"] for k in root["children"]}
    assert children == {"frame", "ballast", "body"}
    left = nodes["frame/left"]
    assert {doc["nodes"][k]["name"] for k in left["children"]} == {"frame/left/rail", "frame/left/bracket"}
    scene = trimesh.load(out / "round-trip-1.glb")
    axes = np.array([[0, 1, 0], [0, 0, 1], [1, 0, 0]], dtype=float)  # glTF X = left (+y), Y = up (+z), Z = forward
    for c in model.components:
        node = nodes[c.path]
        mat = doc["materials"][doc["meshes"][node["mesh"]]["primitives"][0]["material"]]
        factor = mat["pbrMetallicRoughness"]["baseColorFactor"]
        want = [int(c.colour[k:k + 2], 16) / 255 for k in (1, 3, 5)]
        assert_close([_srgb_from_linear(x) for x in factor[:3]], want, 1e-12, f"{c.path} colour")
        world, geom = scene.graph[c.path]
        mesh = scene.geometry[geom].copy()
        assert mesh.is_watertight, c.path
        mesh.apply_transform(world)
        assert abs(mesh.volume - c.volume) <= mesh.area * 5e-5, c.path  # metres: glTF's unit
        assert_close(axes.T @ mesh.center_mass, c.props.center, 1e-3, f"{c.path} placement")


def test_point_masses_are_left_out_and_the_sidecar_says_so(tmp_path):
    model = loads_model("""
[model]
name = "with a point"
[[part]]
path = "block"
shape = "box"
size = ["0.1 m", "0.2 m", "0.3 m"]
mass = "6 kg"
maturity = "measured"
[[part]]
path = "loom"
shape = "point"
mass = "2 kg"
maturity = "estimated"
at = ["1 m", "0 m", "0 m"]
""")
    calls = []
    result = export_model(model, tmp_path, ExportOptions(formats=frozenset({Format.STEP})),
                          progress=lambda stage, done, total: calls.append((stage, done, total)))
    assert calls == [("solids", 1, 1), ("STEP", 1, 1)]  # what drives the command's progress bar
    sc = result.sidecar
    assert result.exported == ("block",) and result.left_out == (("loom", "point mass: no solid"),)
    assert sc["left_out"] == [{"path": "loom", "reason": "point mass: no solid", "mass_kg": 2.0}]
    assert sc["mass_kg"] == 6.0 and sc["cg_m"] == [0.0, 0.0, 0.0]
    assert sc["selection_total_with_left_out"]["mass_kg"] == 8.0
    assert_close(sc["selection_total_with_left_out"]["cg_m"], [0.25, 0.0, 0.0], 1e-15)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["with-a-point.massprops.json", "with-a-point.step"]
    mask = os.umask(0o022)
    os.umask(mask)
    assert (tmp_path / "with-a-point.step").stat().st_mode & 0o777 == 0o666 & ~mask  # not mkstemp's 0600


def test_selection_of_a_group_or_a_part(exported, tmp_path):
    model, _, _ = exported
    result = export_model(model, tmp_path, ExportOptions(formats=frozenset({Format.STEP}), selection=("frame/left",)))
    assert result.exported == ("frame/left/rail", "frame/left/bracket")
    assert (tmp_path / "round-trip-1_frame-left.step").is_file()
    assert sorted(read_step_leaves(tmp_path / "round-trip-1_frame-left.step")) == ["frame/left/bracket",
                                                                                 "frame/left/rail"]
    assert_close(result.sidecar["mass_kg"], model.mass_properties(["frame/left"]).mass, 1e-12)
    with pytest.raises(KeyError, match="no part or group 'frame/middle'"):
        export_model(model, tmp_path, ExportOptions(selection=("frame/middle",)))


def test_unwritable_output_leaves_nothing_behind(exported, tmp_path):
    model, _, _ = exported
    blocker = tmp_path / "a_file"
    blocker.write_text("keep me")
    with pytest.raises(ExportError, match="is not a folder"):
        export_model(model, blocker, ExportOptions())
    with pytest.raises(ExportError, match="cannot write to the folder"):
        export_model(model, blocker / "sub", ExportOptions())
    assert blocker.read_text() == "keep me" and sorted(tmp_path.iterdir()) == [blocker]


def test_a_folder_in_the_way_of_an_output_is_named_before_anything_is_replaced(exported, tmp_path):
    # the STL's name is taken by a folder: the export stops before writing (naming that file, not a temporary one),
    # so the STEP of the same set is not replaced alone and no temporary file is left
    model, _, _ = exported
    (tmp_path / "car.stl").mkdir()
    (tmp_path / "car.step").write_text("the previous export")
    with pytest.raises(ExportError, match=r"car\.stl': a folder of that name is in the way"):
        export_model(model, tmp_path, ExportOptions(), stem="car")
    assert (tmp_path / "car.step").read_text() == "the previous export"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["car.step", "car.stl"]


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_read_only_folder(exported, tmp_path):
    model, _, _ = exported
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        with pytest.raises(ExportError, match="cannot write"):
            export_model(model, ro, ExportOptions())
        assert list(ro.iterdir()) == []
    finally:
        ro.chmod(0o755)


def test_a_failure_midway_keeps_the_earlier_export(exported, tmp_path, monkeypatch):
    model, _, _ = exported
    export_model(model, tmp_path, ExportOptions(chord_tolerance=1e-3))
    before = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()}
    import massmodel.cad.export as ex

    def broken(*args, **kwargs):
        raise ExportError("simulated failure of the GLB writer")

    # at the end (writing the GLB from its streamed parts) and part-way (the fourth part's mesh going out)
    monkeypatch.setattr(ex.GlbStream, "close", broken)
    with pytest.raises(ExportError, match="simulated"):
        export_model(model, tmp_path, ExportOptions(chord_tolerance=2e-4, stl_layout=StlLayout.BOTH))
    after = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()}
    assert after == before  # same files, same bytes: no temp file, no half-written export, no parts folder
    assert not (tmp_path / "round-trip-1_parts").exists()
    monkeypatch.undo()
    real_add = ex.GlbStream.add
    calls = []

    def fails_on_the_fourth(self, *args):
        calls.append(args[0])
        if len(calls) == 4:
            raise ExportError("simulated failure of the GLB writer")
        real_add(self, *args)

    monkeypatch.setattr(ex.GlbStream, "add", fails_on_the_fourth)
    with pytest.raises(ExportError, match="simulated"):
        export_model(model, tmp_path, ExportOptions(chord_tolerance=2e-4, stl_layout=StlLayout.BOTH))
    assert len(calls) == 4
    assert {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()} == before
    assert not (tmp_path / "round-trip-1_parts").exists()


def test_cli_export_and_its_errors(tmp_path, capsys):
    car = tmp_path / "car.toml"
    car.write_text('[model]\nname = "Tiny"\n[[part]]\npath = "a/b"\nshape = "cylinder"\nradius = "10 mm"\n'
                   'length = "40 mm"\nmaterial = "lead"\nmaturity = "measured"\n')
    assert cli.main(["export", str(car), "--out", str(tmp_path / "x"), "--formats", "stl", "--chord", "0.2"]) == 0
    assert sorted(p.name for p in (tmp_path / "x").iterdir()) == ["tiny.massprops.json", "tiny.stl"]
    assert "1 solids exported" in capsys.readouterr().out
    for chord in ("0", "inf", "nan"):  # in mm, as the option is given
        assert cli.main(["export", str(car), "--out", str(tmp_path / "y"), "--chord", chord]) == 2
        assert f"--chord: the chord tolerance must be a positive length in mm, got {float(chord)}" in \
            capsys.readouterr().err
    assert cli.main(["export", str(car), "--formats", "iges"]) == 2
    assert "--formats: expected a comma-separated list of step, stl, glb" in capsys.readouterr().err
    assert cli.main(["export", str(car), "--only", "c"]) == 2
    assert "no part or group 'c'" in capsys.readouterr().err
    (tmp_path / "f").write_text("")
    assert cli.main(["export", str(car), "--out", str(tmp_path / "f")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "is not a folder" in err
    for stem in ("sub/tiny", "", ".."):  # a stem with a folder (or none at all) would write outside --out
        assert cli.main(["export", str(car), "--out", str(tmp_path / "y"), "--name", stem]) == 2
        assert f"file name stem (--name) {stem!r}: expected a plain file name" in capsys.readouterr().err
    assert not (tmp_path / "y").exists()


def test_demo_car_export(tmp_path):
    # the demo car once: every part with a solid in STEP, STL and GLB; the point masses listed as left out
    model = load_model(ROOT / "parts_demo/brindlecombe_bl3.toml")
    result = export_model(model, tmp_path, ExportOptions())
    points = [c.path for c in model.components if c.shape.kind == "point"]
    assert len(result.exported) == len(model.components) - len(points) and len(result.exported) >= 60
    assert [p for p, _ in result.left_out] == points
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        f"brindlecombe-bl-3{s}" for s in (".step", ".stl", ".glb", ".massprops.json"))
    sc = result.sidecar
    assert math.isclose(sc["mass_kg"] + sum(x["mass_kg"] for x in sc["left_out"]), model.mass_properties().mass,
                        rel_tol=1e-12)
    assert sc["geometry_check"]["relative_difference"]["inertia"] < 1e-9


def test_a_kill_during_the_renames_is_detected_and_its_leftovers_cleaned(exported, tmp_path, monkeypatch):
    # The sidecar lists the SHA-256 of every file and is renamed in last: a process killed after the STEP rename but
    # before the sidecar's leaves a new STEP beside the old sidecar, which verify_export reports; the temporary files
    # it leaves carry a recognisable name and the next export into the folder removes them.
    import massmodel.cad.export as ex

    model, _, _ = exported
    meshes = frozenset({Format.STL, Format.GLB})  # the STL, staged first, differs with the chord tolerance
    first = export_model(model, tmp_path, ExportOptions(formats=meshes, chord_tolerance=1e-3))
    sidecar = next(p for p in first.files if p.name.endswith(".massprops.json"))
    assert verify_export(sidecar) == []
    assert set(first.sidecar["files"]["sha256"]) == {p.relative_to(tmp_path).as_posix() for p in first.files
                                                     if p != sidecar}

    real_replace = os.replace
    calls = []

    def killed_after_one_rename(src, dst):
        calls.append(dst)
        if len(calls) == 2:
            raise KeyboardInterrupt  # stands for SIGKILL: nothing after this point runs (abort aside)
        real_replace(src, dst)

    monkeypatch.setattr(ex.os, "replace", killed_after_one_rename)
    monkeypatch.setattr(ex._Stage, "abort", lambda self: None)  # a killed process cleans nothing up
    with pytest.raises(KeyboardInterrupt):
        export_model(model, tmp_path, ExportOptions(formats=meshes, chord_tolerance=2e-4))
    monkeypatch.setattr(ex.os, "replace", real_replace)
    problems = verify_export(sidecar)
    assert len(problems) == 1 and "not the file the sidecar describes" in problems[0]
    leftovers = sorted(p.name for p in tmp_path.rglob(ex.PARTIAL_PREFIX + "*"))
    assert leftovers and all(n.startswith(f"{ex.PARTIAL_PREFIX}{os.getpid()}.") for n in leftovers)

    again = export_model(model, tmp_path, ExportOptions(formats=meshes, chord_tolerance=1e-3))
    assert list(tmp_path.rglob(ex.PARTIAL_PREFIX + "*")) == []
    assert verify_export(next(p for p in again.files if p.name.endswith(".massprops.json"))) == []


def test_leftovers_of_a_running_export_are_kept(tmp_path):
    from massmodel.cad.export import PARTIAL_PREFIX, clean_partial_files

    mine = tmp_path / f"{PARTIAL_PREFIX}{os.getppid()}.car.abc.tmp.step"  # the parent process is alive
    dead = tmp_path / f"{PARTIAL_PREFIX}999999999.car.abc.tmp.step"  # above any pid the kernel hands out
    other = tmp_path / "car.step"
    for p in (mine, dead, other):
        p.write_text("x")
    assert clean_partial_files(tmp_path) == [dead]
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([mine.name, other.name])


@pytest.mark.parametrize("fmt, words", [(Format.STL, "triangles, which a binary STL cannot count"),
                                         (Format.GLB, "more than a GLB file can hold")])
def test_an_export_too_large_for_its_format_stops_with_one_line(exported, tmp_path, monkeypatch, fmt, words):
    # A binary STL states its triangle count and a GLB its length in uint32 fields (3D Systems' STL specification;
    # Khronos glTF 2.0 §4.4, docs/references.md §13): past 2^32 - 1 the export stops with an ExportError (one line,
    # exit 2) instead of a struct.error traceback at the end. The limit is lowered here so that a small model reaches
    # it.
    import massmodel.cad.mesh_writers as mw

    model, _, _ = exported
    monkeypatch.setattr(mw, "UINT32_MAX", 100)
    with pytest.raises(ExportError, match=words):
        export_model(model, tmp_path, ExportOptions(formats=frozenset({fmt})))
    assert list(tmp_path.iterdir()) == []  # nothing written, no temporary file left


def test_only_the_exports_own_folders_are_cleaned(tmp_path):
    # An output folder may hold a whole tree of other files (--out ~): the clean-up looks in the folder itself and in
    # the export's own <stem>_parts tree, and does not walk (nor touch) anything else below the folder.
    from massmodel.cad.export import PARTIAL_PREFIX, clean_partial_files

    name = f"{PARTIAL_PREFIX}999999999.car.abc.tmp.stl"  # a dead process's (pid above any the kernel hands out)
    top, part = tmp_path / name, tmp_path / "car_parts" / "body" / name
    unrelated = tmp_path / "photos" / "2026" / name
    for p in (top, part, unrelated):
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text("x")
    assert sorted(clean_partial_files(tmp_path, [tmp_path / "car_parts"])) == sorted([top, part])
    assert unrelated.exists()
    assert clean_partial_files(tmp_path / "missing", [tmp_path / "missing_parts"]) == []


def test_an_exported_ellipsoid_keeps_its_volume(tmp_path):
    # closed form: V = 4/3 π a b c. The kernel has no ellipsoid surface: the solid is the rational B-spline of a unit
    # sphere under diag(a, b, c), which an affine map keeps exact; a non-rational approximation was 4.4e-4 short.
    from OCP.BRepGProp import BRepGProp
    from OCP.GProp import GProp_GProps
    from OCP.STEPControl import STEPControl_Reader

    text = ('[model]\nname = "egg"\n[units]\nlength = "mm"\nmass = "kg"\n[[part]]\npath = "tank"\n'
            'shape = "ellipsoid"\nsemi_x = 200\nsemi_y = 150\nsemi_z = 100\nmass = "3 kg"\nmaturity = "estimated"\n')
    result = export_model(loads_model(text, label="egg.toml"), tmp_path, ExportOptions(formats=frozenset({Format.STEP})))
    reader = STEPControl_Reader()
    reader.ReadFile(str(next(p for p in result.files if p.suffix == ".step")))
    reader.TransferRoots()
    props = GProp_GProps()
    BRepGProp.VolumeProperties_s(reader.OneShape(), props, 1e-12)
    exact = 4.0 / 3.0 * math.pi * 200.0 * 150.0 * 100.0  # mm³
    assert abs(props.Mass() / exact - 1.0) < 1e-8
    row = result.sidecar["components"][0]
    assert abs(row["solid_volume_m3"] / (exact * 1e-9) - 1.0) < 1e-8
