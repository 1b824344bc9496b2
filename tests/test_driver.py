"""The seated-driver model: published segment fractions, posture geometry, mass properties against independent sums
and OpenCascade, the [[driver]] table and its errors, and the demo car's driver."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from conftest import assert_close
from massmodel.core.model import Maturity
from massmodel.modelfile.loader import ModelFileError, load_model, loads_model
from massmodel.vehicle.balance import check_rules
from massmodel.vehicle.driver import (
    SEGMENT_DATA,
    STATURE_FRACTIONS,
    DriverError,
    SeatedPosture,
    seated_segments,
    segment_fractions,
    segment_lengths,
)

DEMO = Path(__file__).resolve().parent.parent / "parts_demo" / "brindlecombe_bl3.toml"
FWD, LEFT, UP = np.eye(3)
MALE = SEGMENT_DATA["plagenhoef_1983_male"]
FEMALE = SEGMENT_DATA["plagenhoef_1983_female"]


def posture(angle_deg=55.0, mass=76.0, stature=1.78, **kw):
    args = dict(mass=mass, stature=stature, seat_back_angle=math.radians(angle_deg),
                hip_point=np.array([-0.95, 0.0, -0.09]), ankle_point=np.array([-0.13, 0.10, -0.13]),
                wrist_point=np.array([-0.90, 0.15, 0.20]), forward=FWD, left=LEFT, up=UP)
    args.update(kw)
    return SeatedPosture(**args)


def totals(segments):
    m = sum(s.mass for s in segments)
    return m, sum(s.mass * s.cg for s in segments) / m


# --- published fractions --------------------------------------------------------------------------------------

def test_plagenhoef_sums_as_transcribed_and_normalised_fractions_sum_to_one():
    # docs/references.md §10 (R2): the male set sums to 100.70 % with both limbs counted; the female set to 100.00 %
    assert MALE.percent_sum == pytest.approx(100.70, abs=1e-12)
    assert FEMALE.percent_sum == pytest.approx(100.00, abs=1e-12)
    for data in (MALE, FEMALE):
        fractions = segment_fractions(data)
        assert len(fractions) == 14
        assert sum(fractions.values()) == pytest.approx(1.0, abs=1e-15)
    male = segment_fractions(MALE)
    assert male["trunk"] == pytest.approx(46.84 / 100.70, rel=1e-15)
    assert male["left/thigh"] == male["right/thigh"] == pytest.approx(10.50 / 100.70, rel=1e-15)
    assert segment_fractions(FEMALE)["head_neck"] == pytest.approx(0.0820, rel=1e-15)


def test_cg_locations_are_the_tabulated_ones():
    # docs/references.md §10 (R2), male, % of segment length from the proximal end
    assert {k: v[1] for k, v in MALE.segments.items()} == {
        "head_neck": 55.0, "trunk": 50.0, "upper_arm": 43.6, "forearm": 43.0, "hand": 46.8, "thigh": 43.3,
        "shank": 43.4, "foot": 50.0}
    for s in seated_segments(posture(), MALE):
        frac = MALE.segments[s.name.split("/")[-1]][1] / 100.0
        assert_close(s.cg, s.proximal + frac * (s.distal - s.proximal), 1e-15, s.name)


def test_segment_lengths_follow_stature():
    # Winter, 4th ed. (2009), Fig. 4.1 after Drillis & Contini (1966), from memory: thigh 0.530 - 0.285 H,
    # shank 0.285 - 0.039 H, trunk (hip to shoulder) 0.818 - 0.530 H, upper arm 0.186 H, forearm 0.146 H
    lengths = segment_lengths(1.80)
    assert lengths["thigh"] == pytest.approx(0.245 * 1.80, rel=1e-12)
    assert lengths["shank"] == pytest.approx(0.246 * 1.80, rel=1e-12)
    assert lengths["trunk"] == pytest.approx(0.288 * 1.80, rel=1e-12)
    assert lengths["upper_arm"] == pytest.approx(0.186 * 1.80, rel=1e-12)
    assert STATURE_FRACTIONS["forearm"] == 0.146
    for s in seated_segments(posture(stature=1.80), MALE):
        name = s.name.split("/")[-1]
        assert float(np.linalg.norm(s.distal - s.proximal)) == pytest.approx(lengths[name], rel=1e-12), s.name


# --- posture ----------------------------------------------------------------------------------------------------

def test_reclining_lowers_the_cg():
    # With the hip, ankles and wrists fixed, reclining the trunk lowers the trunk, the head and the shoulders.
    heights = [totals(seated_segments(posture(a), MALE))[1][2] for a in (0, 20, 40, 55, 70)]
    assert all(b < a for a, b in zip(heights, heights[1:], strict=False)), heights
    # the trunk CG lies half-way up the trunk line: hip_z + 0.5 L cos(angle) (Plagenhoef trunk CG 50 %)
    for angle in (0.0, 55.0):
        trunk = seated_segments(posture(angle), MALE)[0]
        want = -0.09 + 0.5 * 0.288 * 1.78 * math.cos(math.radians(angle))
        assert trunk.cg[2] == pytest.approx(want, abs=1e-12)


def test_limbs_close_on_their_targets_with_knees_up_and_elbows_down():
    segs = {s.name: s for s in seated_segments(posture(), MALE)}
    lengths = segment_lengths(1.78)
    for side, sign in (("left", 1.0), ("right", -1.0)):
        thigh, shank = segs[f"{side}/thigh"], segs[f"{side}/shank"]
        upper, fore = segs[f"{side}/upper_arm"], segs[f"{side}/forearm"]
        assert_close(shank.distal, [-0.13, sign * 0.10, -0.13], 1e-14, "ankle on target")
        assert_close(fore.distal, [-0.90, sign * 0.15, 0.20], 1e-14, "wrist on target")
        assert_close(thigh.distal, shank.proximal, 1e-15, "knee joint")
        assert float(np.linalg.norm(shank.distal - shank.proximal)) == pytest.approx(lengths["shank"], rel=1e-12)
        # the knee lies above the hip-ankle line, the elbow below the shoulder-wrist line
        t = (thigh.distal[0] - thigh.proximal[0]) / (shank.distal[0] - thigh.proximal[0])
        assert thigh.distal[2] > thigh.proximal[2] + t * (shank.distal[2] - thigh.proximal[2])
        t = (upper.distal[0] - upper.proximal[0]) / (fore.distal[0] - upper.proximal[0])
        assert upper.distal[2] < upper.proximal[2] + t * (fore.distal[2] - upper.proximal[2])
    # the right side mirrors the left across the driver's mid-plane y = 0
    for name in ("thigh", "shank", "foot", "upper_arm", "forearm", "hand"):
        assert_close(segs[f"right/{name}"].cg, segs[f"left/{name}"].cg * [1, -1, 1], 1e-14, name)


def test_measured_mass_scales_every_segment_and_keeps_the_distribution():
    light = seated_segments(posture(mass=76.0), MALE)
    heavy = seated_segments(posture(mass=82.5), MALE)
    assert totals(heavy)[0] == pytest.approx(82.5, rel=1e-15)
    for a, b in zip(light, heavy, strict=True):
        assert b.mass / a.mass == pytest.approx(82.5 / 76.0, rel=1e-14)
    # the segment shapes are sized to the Dempster densities (Winter 2009, Table 4.1, from memory): thigh 1.05 g/cm3
    thigh = next(s for s in heavy if s.name == "left/thigh")
    assert thigh.mass / thigh.shape.volume() == pytest.approx(1050.0, rel=1e-12)


@pytest.mark.parametrize(
    ("kw", "field", "words"),
    [
        ({"mass": -1.0}, "mass", "positive"),
        ({"stature": 0.8}, "stature", "1.0 m to 2.5 m"),
        ({"seat_back_angle": math.radians(85.0)}, "seat_back_angle", "0 deg (upright) to 80 deg"),
        ({"neck_angle": math.radians(100.0)}, "neck_angle", "-45 deg to 90 deg"),
        ({"wrist_point": np.array([-0.30, 0.15, 0.20])}, "wrist_point", "out of reach"),
        ({"ankle_point": np.array([0.30, 0.10, -0.13])}, "ankle_point", "out of reach"),
        ({"ankle_point": np.array([-0.13, -0.10, -0.13])}, "ankle_point", "LEFT-side point"),
        ({"mass": 400.0}, "mass", "wider than the hip width"),
    ],
)
def test_bad_posture_names_the_input(kw, field, words):
    with pytest.raises(DriverError) as info:
        seated_segments(posture(**kw), MALE)
    assert info.value.field == field
    assert words in info.value.message


# --- the [[driver]] table ---------------------------------------------------------------------------------------

HEAD = """
[model]
name = "driver test"
[units]
length = "mm"
mass = "kg"
angle = "deg"
[parameters]
driver_mass = "76 kg"
[vehicle]
wheelbase = "2620 mm"
track_front = "1460 mm"
track_rear = "1420 mm"
ground_level = "-265 mm"
"""
DRIVER = """
[[driver]]
path = "cockpit/driver"
segment_data = "plagenhoef_1983_male"
mass = "driver_mass"
measured = true
stature = "1780 mm"
seat_back_angle = 55
hip_point = [-950, 0, -90]
ankle_point = [-130, 100, -130]
wrist_point = [-900, 150, 200]
"""


def test_driver_table_expands_into_fourteen_parts():
    model = loads_model(HEAD + DRIVER, label="car.toml")
    paths = [c.path for c in model.components]
    assert paths[:2] == ["cockpit/driver/trunk", "cockpit/driver/head_neck"]
    assert len(paths) == 14 and "cockpit/driver/right/foot" in paths
    assert all(c.maturity is Maturity.MEASURED and c.source.value == "mass" for c in model.components)
    assert "of the weighed 76.00 kg" in model.component("cockpit/driver/left/thigh").note
    est = loads_model(HEAD + DRIVER.replace("measured = true", "measured = false"), label="car.toml")
    assert {c.maturity for c in est.components} == {Maturity.ESTIMATED}
    direct = seated_segments(posture(angle_deg=55.0, hip_point=np.array([-0.95, 0, -0.09]),
                                     ankle_point=np.array([-0.13, 0.10, -0.13])), MALE)
    for c, s in zip(model.components, direct, strict=True):
        assert_close(c.props.center, s.cg, 1e-13, c.path)


def test_driver_mass_properties_against_an_independent_sum():
    # Handbook closed forms (Machinery's Handbook 31st ed. pp.253-254; docs/references.md §1): cylinder
    # I_axis = m r^2/2, I_transverse = m(3r^2 + L^2)/12; ellipsoid I_a = m(b^2 + c^2)/5. Rotated into model axes
    # and moved to the common CG by the parallel-axis theorem, summed here without massmodel.core.massprops.
    model = loads_model(HEAD + DRIVER, label="car.toml")
    masses, centres, tensors = [], [], []
    for c in model.components:
        m, s = c.props.mass, c.shape
        if s.kind == "cylinder":
            t = m * (3 * s.radius**2 + s.length**2) / 12.0
            local = np.diag([t, t, m * s.radius**2 / 2.0])
        else:
            a, b, cc = s.semi_x, s.semi_y, s.semi_z
            local = np.diag([m * (b * b + cc * cc) / 5, m * (a * a + cc * cc) / 5, m * (a * a + b * b) / 5])
        r = c.pose.linear
        masses.append(m)
        centres.append(c.pose.translation)
        tensors.append(r @ local @ r.T)
    mass = sum(masses)
    cg = sum(m * p for m, p in zip(masses, centres, strict=True)) / mass
    inertia = sum(t + m * ((d @ d) * np.eye(3) - np.outer(d, d))
                  for m, t, d in zip(masses, tensors, (p - cg for p in centres), strict=True))
    total = model.mass_properties()
    assert total.mass == pytest.approx(76.0, rel=1e-15)
    assert_close(total.center, cg, 1e-13, "CG")
    assert_close(total.inertia, inertia, 1e-12, "inertia")


def test_driver_mass_properties_against_opencascade():
    # Independent oracle: OpenCascade volume properties of each placed segment solid, accumulated with its density
    # (GProp_GProps.Add(props, density); docs/references.md §1), eps 1e-14 for the NURBS ellipsoids.
    pytest.importorskip("cadquery")
    from OCP.BRepGProp import BRepGProp
    from OCP.GProp import GProp_GProps

    from massmodel.cad.solids import component_solid

    model = loads_model(HEAD + DRIVER, label="car.toml")
    total = GProp_GProps()
    for c in model.components:
        props = GProp_GProps()
        BRepGProp.VolumeProperties_s(component_solid(c), props, 1e-14)
        total.Add(props, c.props.mass / c.volume)
    m = total.Mass() * 1e-9
    centre = total.CentreOfMass()
    mat = total.MatrixOfInertia()
    inertia = np.array([[mat.Value(i, j) for j in (1, 2, 3)] for i in (1, 2, 3)]) * 1e-15
    mp = model.mass_properties()
    assert m == pytest.approx(76.0, rel=1e-9)
    assert_close(np.array([centre.X(), centre.Y(), centre.Z()]) * 1e-3, mp.center, 1e-9, "CG")
    assert_close(inertia, mp.inertia, 1e-8, "inertia")


def test_points_are_in_the_group_frame_and_the_posture_in_vehicle_directions():
    base = loads_model(HEAD + DRIVER, label="car.toml")
    shifted = loads_model(HEAD + '[[group]]\npath = "cockpit"\nat = [100, 20, 30]\n' + DRIVER, label="car.toml")
    for a, b in zip(base.components, shifted.components, strict=True):
        assert_close(b.props.center, a.props.center + [0.1, 0.02, 0.03], 1e-13, a.path)
    # A group turned 30 deg about z: the points turn with it, but "vertical" and "rearwards" stay the vehicle's,
    # so the trunk still rises at 55 deg from the vehicle's up, reclined along the vehicle's -forward.
    group = '[[group]]\npath = "cockpit"\nat = [100, 20, 30]\nrotate = { extrinsic = "z", angles = [30] }\n'
    turned = loads_model(HEAD + group + DRIVER, label="car.toml")
    c, s_ = math.cos(math.pi / 6), math.sin(math.pi / 6)
    rot = np.array([[c, -s_, 0.0], [s_, c, 0.0], [0.0, 0.0, 1.0]])
    hip = rot @ [-0.95, 0.0, -0.09] + [0.1, 0.02, 0.03]
    trunk = turned.component("cockpit/driver/trunk")
    axis = trunk.pose.linear[:, 2]  # the ellipsoid's long axis, hip to shoulders
    assert_close(axis, [-math.sin(math.radians(55)), 0.0, math.cos(math.radians(55))], 1e-14, "trunk axis")
    assert_close(trunk.props.center, hip + 0.5 * 0.288 * 1.78 * axis, 1e-13, "trunk CG")
    head = turned.component("cockpit/driver/head_neck")
    assert_close(head.pose.linear[:, 2], axis, 1e-14, "head in line with the trunk (no neck_angle)")


@pytest.mark.parametrize(
    ("change", "field", "words"),
    [
        (("stature = \"1780 mm\"\n", ""), "stature", "is missing"),
        (('"plagenhoef_1983_male"', '"dempster"'), "segment_data", "expected one of plagenhoef_1983_male"),
        (("wrist_point = [-900, 150, 200]", "wrist_point = [-300, 150, 200]"), "wrist_point", "out of reach"),
        (("ankle_point = [-130, 100, -130]", "ankle_point = [-130, -100, -130]"), "ankle_point", "LEFT-side"),
        (("seat_back_angle = 55", "seat_back_angle = 95"), "seat_back_angle", "to 80 deg"),
        (("seat_back_angle = 55", 'seat_back_angle = "55 mm"'), "seat_back_angle", "expected an angle"),
        (("mass = \"driver_mass\"", 'mass = "-5 kg"'), "mass", "positive"),
        (("measured = true", 'measured = "yes"'), "measured", "true or false"),
        (("hip_point = [-950, 0, -90]", "hip_point = [-950, 0]"), "hip_point", "list of 3 values"),
        (("measured = true", "measured = true\nseat_angle = 5"), "seat_angle", "unknown field"),
    ],
)
def test_bad_driver_fields_name_file_item_and_field(change, field, words):
    with pytest.raises(ModelFileError) as info:
        loads_model(HEAD + DRIVER.replace(*change), label="car.toml")
    e = info.value
    assert (e.file, e.item, e.field) == ("car.toml", "driver 'cockpit/driver'", field)
    assert words in e.message


def test_driver_needs_a_vehicle_and_no_mirrored_group_and_unique_paths():
    no_vehicle = HEAD.split("[vehicle]")[0] + DRIVER
    with pytest.raises(ModelFileError, match="needs a \\[vehicle\\] section"):
        loads_model(no_vehicle, label="car.toml")
    with pytest.raises(ModelFileError) as info:
        loads_model(HEAD + '[[group]]\npath = "cockpit"\nmirror = true\n' + DRIVER, label="car.toml")
    assert info.value.field == "path" and "mirrored group" in info.value.message
    clash = '[[part]]\npath = "cockpit/driver/trunk"\nshape = "point"\nmass = "1 kg"\nmaturity = "measured"\n'
    with pytest.raises(ModelFileError, match="duplicate path 'cockpit/driver/trunk'"):
        loads_model(HEAD + clash + DRIVER, label="car.toml")


def test_optional_driver_and_a_case_switching_it_on():
    text = HEAD + DRIVER + 'optional = true\n[[case]]\nname = "seated"\nswitch_on = ["cockpit/driver"]\n'
    text += '[[part]]\npath = "tub"\nshape = "point"\nmass = "300 kg"\nmaturity = "measured"\n'
    assert [c.path for c in loads_model(text, label="car.toml").components] == ["tub"]
    seated = loads_model(text, label="car.toml", case="seated")
    assert seated.mass_properties().mass == pytest.approx(376.0, rel=1e-15)
    # the same through an optional group around the driver's own path
    text = text.replace("optional = true\n", "").replace('switch_on = ["cockpit/driver"]', 'switch_on = ["cockpit"]')
    text += '[[group]]\npath = "cockpit/driver"\noptional = true\n'
    assert [c.path for c in loads_model(text, label="car.toml").components] == ["tub"]
    assert loads_model(text, label="car.toml", case="seated").mass_properties().mass == pytest.approx(376.0)


# --- the demo car -----------------------------------------------------------------------------------------------

def test_demo_driver_and_the_rule_results_the_demo_readme_describes():
    model = load_model(DEMO)
    driver = model.select(["driver"])
    assert len(driver) == 14
    assert model.mass_properties(["driver"]).mass == pytest.approx(76.0, rel=1e-14)
    results = {r.name: r for r in check_rules(model)}
    short = results["minimum mass, car with driver, without fuel"]
    assert not short.passed and -10.5 < short.margin < -9.5          # "some 10 kg short"
    share = results["front share of the total mass"]
    assert not share.passed and 0.420 < share.value < 0.428          # "slightly tail-heavy"
    for name in ("driver and seat", "minimum front axle load", "minimum rear axle load",
                 "maximum CG height above the ground"):
        assert results[name].passed, name
    # the same driver evaluated directly (the points of the file, in the driver group's frame at ride_offset 0)
    segs = seated_segments(posture(hip_point=np.array([-0.945, 0, -0.095]), ankle_point=np.array([-0.129, 0.1, -0.13]),
                                   wrist_point=np.array([-0.898, 0.15, 0.2])), MALE)
    assert_close(model.mass_properties(["driver"]).center, totals(segs)[1], 1e-12, "demo driver CG")
