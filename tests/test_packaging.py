"""Tests for massmodel.cad.packaging: interference, fit in slot and clearance against closed forms and hand geometry.

Closed forms: the common volume of two axis-aligned boxes is the product of the overlaps of their intervals
(elementary); a plane at distance d from the axis of a cylinder of radius R cuts off a circular segment of area
R² acos(d/R) − d √(R² − d²), whose centroid lies 4 R sin³(θ/2) / (3 (θ − sin θ)) from the axis, θ = 2 acos(d/R)
(Wikipedia "Circular segment", R); distances between spheres, boxes and planes by hand (elementary geometry).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import cadquery as cq
import numpy as np
import pytest
from OCP.BRepClass3d import BRepClass3d_SolidClassifier
from OCP.gp import gp_Pnt
from OCP.TopAbs import TopAbs_IN

from conftest import assert_close
from massmodel import cli
from massmodel.cad.packaging import (
    candidate_pairs,
    check_packaging,
    distance_between,
    fit_in_slot,
    overlap_volume,
)
from massmodel.modelfile.loader import ModelFileError, loads_model
from massmodel.report.packaging import format_packaging, packaging_dict

ROOT = Path(__file__).parents[1]
HEAD = """
[model]
name = "packaging test"
[units]
length = "mm"
angle = "deg"
"""


def box(sx: float, sy: float, sz: float, at=(0.0, 0.0, 0.0)):
    """A box built by cadquery (independent of massmodel's builders), as the OCP shape the checks take."""
    return cq.Solid.makeBox(sx, sy, sz, cq.Vector(at[0] - sx / 2, at[1] - sy / 2, at[2] - sz / 2)).wrapped


def test_overlap_of_two_boxes_is_the_product_of_interval_overlaps():
    a = box(100, 60, 40)
    b = box(80, 50, 30, at=(70, 20, 10))
    vol, centre = overlap_volume(a, b)
    # x: [-50, 50] & [30, 110] = 20; y: [-30, 30] & [-5, 45] = 35; z: [-20, 20] & [-5, 25] = 25
    assert_close(vol, 20 * 35 * 25 * 1e-9, 1e-12, "volume")
    assert_close(centre, np.array([40.0, 12.5, 7.5]) * 1e-3, 1e-12, "centre of the overlap")


def test_box_cutting_a_cylinder_along_its_axis_gives_a_circular_segment_prism():
    r, length, d = 50.0, 200.0, 20.0
    cylinder = cq.Solid.makeCylinder(r, length, cq.Vector(0, 0, -length / 2)).wrapped
    cutter = box(100, 200, 300, at=(d + 50, 0, 0))  # the half-space x >= d over the cylinder
    vol, centre = overlap_volume(cylinder, cutter)
    area = r * r * math.acos(d / r) - d * math.sqrt(r * r - d * d)  # circular segment (Wikipedia, R)
    theta = 2 * math.acos(d / r)
    x_bar = 4 * r * math.sin(theta / 2) ** 3 / (3 * (theta - math.sin(theta)))
    assert_close(vol, area * length * 1e-9, 1e-9, "segment prism volume")
    assert_close(centre, np.array([x_bar, 0.0, 0.0]) * 1e-3, 1e-9, "segment centroid")


def test_solids_that_touch_share_no_volume_and_have_zero_distance():
    rim = cq.Workplane("XY").circle(170).circle(163).extrude(200).val().wrapped
    tyre = cq.Workplane("XY").circle(265).circle(170).extrude(200).val().wrapped
    # round-off of the boolean at most (about 1e-6 mm^3 here), far below the 1 mm^3 sliver threshold
    assert overlap_volume(rim, tyre)[0] < 1e-3 * 1e-9
    assert distance_between(rim, tyre)[0] < 1e-12


def test_distances_against_hand_geometry():
    sphere = cq.Workplane("XY").sphere(30).val().wrapped
    wall = box(100, 400, 400, at=(150, 0, 0))  # face at x = 100
    d, p_sphere, p_wall = distance_between(sphere, wall)
    assert_close(d, 0.070, 1e-9, "sphere to wall: 100 - 30 mm")
    assert_close(p_sphere, [0.030, 0.0, 0.0], 1e-6, "closest point on the sphere")
    assert_close(p_wall, [0.100, 0.0, 0.0], 1e-6, "closest point on the wall")
    # two blocks offset diagonally: the gap is the distance between their nearest edges
    a = box(40, 40, 40)
    b = box(40, 40, 40, at=(40 + 3, 40 + 4, 0))  # edges 3 mm and 4 mm apart in x and y
    assert_close(distance_between(a, b)[0], 0.005, 1e-9, "3-4-5 triangle")


def test_candidate_pairs_equal_the_brute_force_pairs(rng):
    lo = rng.uniform(0, 1, size=(300, 3))
    boxes = np.stack([lo, lo + rng.uniform(0.01, 0.12, size=(300, 3))], axis=1)
    brute = sorted((i, j) for i in range(300) for j in range(i + 1, 300)
                   if np.all(boxes[i, 0] <= boxes[j, 1]) and np.all(boxes[j, 0] <= boxes[i, 1]))
    assert candidate_pairs(boxes) == brute
    assert len(brute) > 50  # the sample has real overlaps
    grown = candidate_pairs(boxes, pad=0.02)
    assert set(brute) < set(grown)


def pipe_envelope():
    """A slot envelope 300 x 200 x 100 mm with a pipe passage: a hole of radius 20 mm along y at x = 80 mm."""
    passage = cq.Solid.makeCylinder(20, 400, cq.Vector(80, -200, 0), cq.Vector(0, 1, 0))
    return cq.Shape.cast(box(300, 200, 100)).cut(passage).wrapped


@pytest.fixture(scope="module")
def envelope_with_pipe():
    return pipe_envelope()


def test_block_that_fits_with_its_clearance(envelope_with_pipe):
    block = box(100, 80, 40, at=(-60, 0, 0))
    fit = fit_in_slot(block, envelope_with_pipe, 0.002)
    # nearest walls: the pipe passage at x = 60 is 60 - (-10) = 70 mm away; the top/bottom walls 50 - 20 = 30 mm;
    # the end wall x = -150: -110 - (-150) = 40 mm; the side walls y = +-100: 60 mm. Nearest: 30 mm.
    assert fit.fits and fit.reason == ""
    assert fit.outside_volume == 0.0
    assert_close(fit.clearance, 0.030, 1e-9)
    assert abs(abs(fit.closest_block[2]) - 0.020) < 1e-9 and abs(abs(fit.closest_envelope[2]) - 0.050) < 1e-9


def test_block_touching_the_pipe_does_not_fit(envelope_with_pipe):
    block = box(100, 80, 40, at=(10, 0, 0))  # its face x = 60 touches the pipe passage (80 - 20)
    fit = fit_in_slot(block, envelope_with_pipe, 0.001)
    assert not fit.fits and fit.outside_volume == 0.0 and fit.clearance < 1e-12
    assert "clearance 0.000 mm to the slot walls is less than the required 1.000 mm" in fit.reason


def test_block_straddling_the_pipe_with_every_vertex_inside_does_not_fit(envelope_with_pipe):
    # x 40..120, y -40..40, z -30..30: every corner lies in the envelope's material, yet the pipe passes through
    block = box(80, 80, 60, at=(80, 0, 0))
    classifier = BRepClass3d_SolidClassifier(envelope_with_pipe)
    states = []
    for v in cq.Shape.cast(block).Vertices():
        classifier.Perform(gp_Pnt(v.X, v.Y, v.Z), 1e-7)
        states.append(classifier.State() == TopAbs_IN)
    assert states == [True] * 8  # a vertex-inside test would call this a fit
    fit = fit_in_slot(block, envelope_with_pipe, 0.0)
    assert not fit.fits
    assert_close(fit.outside_volume, math.pi * 20**2 * 80 * 1e-9, 1e-9, "pipe passage inside the block")



def test_a_failed_boolean_is_an_error_not_a_fit(envelope_with_pipe, monkeypatch):
    import OCP.BRepAlgoAPI

    class FailedCut:  # what OpenCascade returns when the boolean fails: not done, an empty result
        def __init__(self, *args):
            pass

        def IsDone(self):
            return False

    monkeypatch.setattr(OCP.BRepAlgoAPI, "BRepAlgoAPI_Cut", FailedCut)
    with pytest.raises(RuntimeError, match="boolean \\(block minus slot envelope\\) failed"):
        fit_in_slot(box(100, 80, 40, at=(-60, 0, 0)), envelope_with_pipe, 0.002)

PIPE_MODEL = HEAD + """
[[slot]]
name = "tray"
shape = "box"
size = [300, 200, 100]
clearance = "1.5 mm"
[[part]]
path = "cooling/pipe"
shape = "cylinder"
radius = 20
length = 200
material = "aluminium_6061_t6"
maturity = "calculated"
at = [80, 0, 0]
rotate = { extrinsic = "x", angles = [90] }
[[part]]
path = "ballast/block"
shape = "box"
size = [100, 80, 40]
material = "tungsten_b777_class1"
maturity = "calculated"
at = ["{x} mm", 0, 0]
slot = "tray"
"""


def test_block_touching_a_pipe_part_inside_a_box_slot_is_not_a_fit():
    model = loads_model(PIPE_MODEL.replace("{x}", "10"))
    report = check_packaging(model)
    (fit,) = report.fits
    assert fit.fit is not None and fit.fit.fits  # inside the box envelope with 30 mm to its walls ...
    assert not fit.passed  # ... but the pipe runs through the slot and the block touches it
    assert fit.obstacle is not None and fit.obstacle.neighbour == "cooling/pipe" and fit.obstacle.distance < 1e-12
    assert fit.reason == "touches 'cooling/pipe' inside the slot (gap 0.000 mm, required 1.500 mm)"
    (gap,) = report.clearances
    assert not gap.passed and gap.nearest[0].neighbour == "cooling/pipe" and gap.distance < 1e-12
    assert report.interferences == () and not report.passed and report.failures == 2


def test_block_clear_of_the_pipe_passes_with_hand_distances():
    model = loads_model(PIPE_MODEL.replace("{x}", "-40"))  # face x = 10, pipe surface at x = 60: 50 mm
    report = check_packaging(model)
    assert report.passed and report.failures == 0
    (fit,) = report.fits
    assert_close(fit.fit.clearance, 0.030, 1e-9, "to the top and bottom walls")
    assert_close(fit.obstacle.distance, 0.050, 1e-9, "to the pipe")
    (gap,) = report.clearances
    assert gap.required == 0.0015 and gap.required_from == "slot 'tray'"
    assert_close(gap.distance, 0.050, 1e-9)
    assert_close(gap.nearest[0].point_part, [0.010, gap.nearest[0].point_part[1], gap.nearest[0].point_part[2]], 1e-9)
    # --gap raises the requirement above the 50 mm: now it fails
    assert not check_packaging(model, gap=0.051).passed


SLIVER_MODEL = HEAD + """
[[part]]
path = "a"
shape = "box"
size = [100, 100, 10]
material = "lead"
maturity = "measured"
[[part]]
path = "b"
shape = "box"
size = [100, 100, 10]
material = "lead"
maturity = "measured"
at = [99, 99, "10 mm - {depth}"]
[[part]]
path = "c"
shape = "box"
size = [10, 10, 10]
material = "lead"
maturity = "measured"
at = [0, 0, 10]
"""


def test_sliver_threshold_and_worst_first():
    # a and b overlap 1 x 1 x depth mm at a corner; c sits on a (face contact) and overlaps b by nothing
    model = loads_model(SLIVER_MODEL.replace("{depth}", "0.5 mm"))
    assert check_packaging(model).interferences == ()  # 0.5 mm^3 < 1 mm^3 default
    found = check_packaging(model, sliver=1e-10).interferences
    assert [(x.first, x.second) for x in found] == [("a", "b")]
    assert_close(found[0].volume, 0.5e-9, 1e-9)
    model = loads_model(SLIVER_MODEL.replace("{depth}", "3 mm").replace("at = [0, 0, 10]", "at = [0, 0, 8]"))
    report = check_packaging(model)
    # a-c overlap 10 x 10 x 2 = 200 mm^3; a-b 1 x 1 x 3 = 3 mm^3: largest first
    assert [(x.first, x.second, round(x.volume * 1e9, 6)) for x in report.interferences] == [
        ("a", "c", 200.0), ("a", "b", 3.0)]
    assert report.total_pairs == 3 and report.candidate_pairs == 2  # the boxes of b and c do not meet


def test_allowed_contacts_are_listed_not_failed():
    text = SLIVER_MODEL.replace("{depth}", "3 mm").replace("at = [0, 0, 10]", "at = [0, 0, 8]") + """
[[allowed_contact]]
between = ["a", "c"]
note = "c is pressed into a"
"""
    report = check_packaging(loads_model(text, label="m.toml"))
    assert [(x.first, x.second) for x in report.interferences] == [("a", "b")]
    assert [(x.first, x.second, x.allowed_by) for x in report.allowed] == [("a", "c", "m.toml: allowed_contact #1")]
    data = packaging_dict(report)
    assert data["allowed_contacts"][0]["parts"] == ["a", "c"] and data["passed"] is False
    with pytest.raises(ModelFileError) as err:
        loads_model(text.replace('between = ["a", "c"]', 'between = ["a", "z"]'), label="m.toml")
    assert (err.value.item, err.value.field) == ("allowed_contact #1", "between[1]")


def test_report_dict_and_text():
    model = loads_model(PIPE_MODEL.replace("{x}", "10"), label="pipe.toml")
    report = check_packaging(model)
    data = json.loads(json.dumps(packaging_dict(report)))
    assert data["format"] == "massmodel-packaging/1" and data["passed"] is False and data["failures"] == 2
    assert data["slots"][0]["nearest_part_in_slot"]["path"] == "cooling/pipe"
    assert data["clearance"][0]["neighbours"][0]["distance_m"] < 1e-12
    text = format_packaging(report)
    assert "PACKAGING CHECKS FAIL: 2 finding(s)" in text and "Ballast must be fixed" in text


def test_slot_that_does_not_exist_is_a_model_file_error():
    with pytest.raises(ModelFileError) as err:
        loads_model(PIPE_MODEL.replace("{x}", "0").replace('slot = "tray"', 'slot = "tary"'), label="car.toml")
    assert (err.value.item, err.value.field) == ("part 'ballast/block'", "slot")
    assert "no slot named 'tary'; slots: tray" in err.value.message


def test_cli_on_the_demo_car_and_its_clashing_variant(tmp_path, capsys):
    car = ROOT / "parts_demo/brindlecombe_bl3.toml"
    assert cli.main(["elbowroom", str(car), "--json", str(tmp_path / "ok.json")]) == 0
    ok = json.loads((tmp_path / "ok.json").read_text())
    assert ok["passed"] and ok["parts_checked"] >= 60 and ok["interference"] == []
    assert [s["path"] for s in ok["slots"]] == ["ballast/seat_block", "ballast/gearbox_block"]
    assert_close(ok["slots"][0]["clearance_m"], 0.0015, 1e-9)  # the block sits 1.5 mm above the floor
    capsys.readouterr()
    clash = ROOT / "parts_demo/brindlecombe_bl3_clash.toml"
    assert cli.main(["elbowroom", str(clash), "--json", str(tmp_path / "bad.json")]) == 1
    bad = json.loads((tmp_path / "bad.json").read_text())
    assert [x["parts"] for x in bad["interference"]] == [["ballast/gearbox_block", "power/oil_catch_tank"]]
    failing = {s["path"]: s["reason"] for s in bad["slots"] if not s["passed"]}
    assert failing["ballast/floor_block"] == "24000.0 mm^3 of the block lies outside the slot"  # 2 x 5 x 120 x 20
    assert failing["ballast/gearbox_block"].startswith("touches 'power/oil_catch_tank' inside the slot")
    assert "PACKAGING CHECKS FAIL" in capsys.readouterr().out


def test_cli_bad_options(capsys):
    car = ROOT / "parts_demo/brindlecombe_bl3.toml"
    assert cli.main(["elbowroom", str(car), "--near", "ballast/nothing"]) == 2
    assert "--near: no part or group 'ballast/nothing'" in capsys.readouterr().err
    assert cli.main(["elbowroom", str(car), "--sliver", "-1"]) == 2
    assert "--sliver: must not be negative" in capsys.readouterr().err


def test_model_with_a_mesh_part_and_a_step_slot(tmp_path):
    envelope = pipe_envelope()
    cq.Shape.cast(envelope).exportStep(str(tmp_path / "tray.step"))
    (tmp_path / "tank.obj").write_text((ROOT / "parts_demo/geometry/catch_tank.obj").read_text())
    model = loads_model(HEAD + """
[[slot]]
name = "tray"
shape = "step"
file = "tray.step"
unit = "mm"
clearance = "1 mm"
[[part]]
path = "tank"
shape = "mesh"
file = "tank.obj"
unit = "mm"
material = "aluminium_6061_t6"
maturity = "estimated"
at = [-60, 0, -40]
slot = "tray"
""", base_dir=tmp_path)
    report = check_packaging(model)
    (fit,) = report.fits
    # the tank (circumradius 40, 100 tall from z = -40) reaches z = 60 > 50: it pokes out of the tray's top
    assert not fit.passed and fit.fit.outside_volume > 0
    hexagon = 1.5 * math.sqrt(3) * 40**2
    assert_close(fit.fit.outside_volume, hexagon * 10 * 1e-9, 1e-6, "10 mm of hexagonal prism above the top")
