"""Measurement session files: units converted once, and clear errors naming file, item and field."""

from __future__ import annotations

import numpy as np
import pytest

from massmodel.measure.session import (
    LiftDirection,
    MeasurementFileError,
    PendulumKind,
    load_session,
    loads_session,
)

G0 = 9.80665  # m/s², standard gravity (NIST SP 811, exact by definition)
LB = 0.45359237  # kg, exact (NIST SP 811 App. B)

HEAD = '[session]\nname = "t"\n'


def err(text: str) -> MeasurementFileError:
    with pytest.raises(MeasurementFileError) as info:
        loads_session(HEAD + text, label="s.toml")
    return info.value


def test_loads_in_kg_lb_and_newton_become_mass_equivalent_kg():
    s = loads_session(HEAD + """
[[weighing]]
readings = ["100 kg", "220 lb", "980.665 N", "224.809 lbf"]
""")
    w = s.weighings[0]
    # 1 lbf = 1 lb x g_n exactly (NIST SP 811), so a reading in lbf is the same number of lb as a mass-equivalent.
    assert w.loads.tolist() == pytest.approx([100.0, 220 * LB, 100.0, 224.809 * LB], rel=1e-12)
    assert w.label == "1"
    assert w.origin == "<text>: weighing '1'"


def test_named_corners_and_default_units():
    s = loads_session(HEAD + """
[units]
mass = "lb"
[[weighing]]
label = "after lunch"
front_left = 200
front_right = 201
rear_left = 260
rear_right = 262
pads = ["A", "B", "C", "D"]
""")
    w = s.weighings[0]
    assert w.loads.tolist() == pytest.approx([200 * LB, 201 * LB, 260 * LB, 262 * LB], rel=1e-12)
    assert w.pads == ("A", "B", "C", "D")
    assert w.label == "after lunch"


def test_three_readings_instead_of_four():
    e = err('[[weighing]]\nreadings = ["90 kg", "91 kg", "120 kg"]\n')
    assert (e.file, e.item, e.field) == ("s.toml", "weighing '1'", "readings")
    assert "expected four readings" in e.message and "got 3 readings" in e.message
    e = err('[[weighing]]\nfront_left = "90 kg"\nfront_right = "91 kg"\nrear_left = "120 kg"\n')
    assert (e.item, e.field) == ("weighing '1'", "rear_right")
    assert "four readings" in e.message and "found 3" in e.message


def test_negative_and_zero_loads():
    e = err('[[weighing]]\nreadings = ["90 kg", "-91 kg", "120 kg", "121 kg"]\n')
    assert (e.item, e.field) == ("weighing '1'", "readings[1]")
    assert "negative load" in e.message
    e = err('[[weighing]]\nlabel = "2"\nreadings = ["90 kg", "91 kg", "0 kg", "121 kg"]\n')
    assert (e.item, e.field) == ("weighing '2'", "readings[2]")
    assert "off its pad" in e.message


def test_load_with_wrong_dimension_and_no_default_unit():
    e = err('[[weighing]]\nreadings = ["90 mm", "91 kg", "120 kg", "121 kg"]\n')
    assert e.field == "readings[0]" and "expected a mass or force" in e.message
    e = err('[[weighing]]\nreadings = [90, 91, 120, 121]\n')
    assert e.field == "readings[0]" and "no unit" in e.message


def test_pads_twice_and_unknown_fields():
    e = err('[[weighing]]\nreadings = ["90 kg", "91 kg", "120 kg", "121 kg"]\npads = ["A", "A", "C", "D"]\n')
    assert e.field == "pads" and "same pad twice" in e.message
    e = err('[[weighing]]\nreadings = ["90 kg", "91 kg", "120 kg", "121 kg"]\nfrontleft = 3\n')
    assert e.field == "frontleft" and "unknown field" in e.message
    e = err('[weighings]\nx = 1\n')
    assert "unknown section 'weighings'" in e.message


def test_empty_session_is_an_error():
    e = err("")
    assert "holds no measurements" in e.message


LIFT = """
[[axle_lift]]
name = "rear up"
lifted = "rear"
level = { front = "180 kg", rear = "250 kg" }
reading = [
  { angle = "4 deg", load = "181 kg" },
  { rise = "300 mm", load = "182 kg" },
  { angle = "12 deg", load = "183 kg", direction = "lowering" },
]
"""


def test_lift_series_read_in_si():
    s = loads_session(HEAD + LIFT)
    series = s.lifts[0]
    assert series.staying == "front"
    assert (series.level_front, series.level_rear) == (180.0, 250.0)
    r0, r1, r2 = series.readings
    assert r0.angle == pytest.approx(np.radians(4.0), rel=1e-15) and r0.rise is None
    assert r1.rise == pytest.approx(0.3) and r1.angle is None
    assert r2.direction is LiftDirection.LOWERING and r0.direction is LiftDirection.LIFTING


def test_lift_angle_of_zero():
    e = err(LIFT.replace('{ angle = "4 deg", load = "181 kg" }', '{ angle = "0 deg", load = "181 kg" }'))
    assert (e.item, e.field) == ("axle_lift 'rear up'", "reading[0].angle")
    assert "between 0 and 90 deg" in e.message and "level" in e.message


def test_lift_needs_three_readings_and_both_level_loads():
    e = err(LIFT.replace('  { angle = "12 deg", load = "183 kg", direction = "lowering" },\n', ""))
    assert e.field == "reading" and "at least three" in e.message
    e = err(LIFT.replace('level = { front = "180 kg", rear = "250 kg" }', 'level = { front = "180 kg" }'))
    assert e.field == "level"
    e = err(LIFT.replace('direction = "lowering"', 'direction = "down"'))
    assert e.field == "reading[2].direction"
    e = err(LIFT.replace('{ rise = "300 mm", load = "182 kg" }', '{ rise = "300 mm", angle = "3 deg", load = "182 kg" }'))
    assert e.field == "reading[1].angle" and "exactly one" in e.message


PEND = """
[[pendulum]]
name = "wheel"
kind = "bifilar"
body_mass = "10 kg"
wire_spacing = "500 mm"
wire_length = "2 m"
timing = [{ cycles = 10, time = "20.1 s" }, { cycles = 20, time = "39.9 s" }]
fixture = { mass = "1 kg", inertia = "0.01 kg*m^2" }
compare = { axis = [0, 0, 2], through = ["0 mm", "100 mm", 0], groups = ["wheels"] }
"""


def test_pendulum_timing_and_comparison():
    s = loads_session(HEAD + "[units]\nlength = \"m\"\n" + PEND)
    t = s.pendulums[0]
    assert t.kind is PendulumKind.BIFILAR
    assert t.periods.tolist() == pytest.approx([2.01, 1.995], rel=1e-14)
    assert t.gravity == G0 and not t.gravity_given
    assert t.fixture is not None and t.fixture.inertia == pytest.approx(0.01)
    assert t.compare is not None and t.compare.axis.tolist() == [0.0, 0.0, 1.0]
    assert t.compare.through.tolist() == pytest.approx([0.0, 0.1, 0.0])
    assert t.compare.groups == ("wheels",)


def test_pendulum_field_errors():
    e = err(PEND.replace('wire_spacing = "500 mm"\n', ""))
    assert (e.item, e.field) == ("pendulum 'wheel'", "wire_spacing") and "is missing" in e.message
    e = err(PEND.replace('kind = "bifilar"', 'kind = "trifilar"'))
    assert e.field == "wire_spacing" and "not used by a trifilar" in e.message
    e = err(PEND.replace('inertia = "0.01 kg*m^2"', 'inertia = "0.01 kg*m^2", periods = ["1 s"]'))
    assert e.field == "fixture.inertia" and "exactly one" in e.message
    e = err(PEND.replace("cycles = 10", "cycles = 0"))
    assert e.field == "timing[0].cycles"
    e = err(PEND.replace('kind = "bifilar"', 'kind = "bifilar"\namplitude = "5 deg"'))
    assert e.field == "amplitude" and "compound pendulums only" in e.message
    e = err(PEND.replace("axis = [0, 0, 2]", 'axis = "sideways"'))
    assert e.field == "compare.axis"


def test_unreadable_file(tmp_path):
    with pytest.raises(MeasurementFileError) as info:
        load_session(tmp_path / "missing.toml")
    assert "cannot read the file" in str(info.value)
    bad = tmp_path / "bad.toml"
    bad.write_text("[session\n", encoding="utf-8")
    with pytest.raises(MeasurementFileError) as info:
        load_session(bad)
    assert info.value.file == str(bad) and "not valid TOML" in info.value.message
