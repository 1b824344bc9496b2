"""Model versus scales: the unaccounted item is found exactly from exact readings, and the updated model agrees."""

from __future__ import annotations

import numpy as np
import pytest

from massmodel.core.massprops import MassProperties, combine
from massmodel.core.uncertainty import Estimate
from massmodel.measure.reconcile import (
    ReconcileError,
    reconcile,
    reconciled_model_text,
    write_reconciled_model,
)
from massmodel.measure.scales import Geometry, reduce_weighings
from massmodel.measure.session import Weighing
from massmodel.modelfile.loader import load_model, loads_model
from massmodel.vehicle.balance import static_balance

MODEL = """
[model]
name = "test car"
[units]
length = "mm"
[vehicle]
wheelbase = "2500 mm"
track_front = "1500 mm"
track_rear = "1400 mm"
front_axle_station = "100 mm"
ground_level = "-300 mm"
[parameters]
ballast = "20 kg"
[[part]]
path = "body/tub"
shape = "box"
size = [2000, 600, 400]
mass = "300 kg"
maturity = "calculated"
at = [-1100, 30, 0]
[[part]]
path = "body/engine"
shape = "box"
size = [500, 400, 400]
mass = "ballast * 5"
maturity = "measured"
at = [-2000, -20, 50]
"""

ITEM_MASS = 3.2  # kg: an invented missing item for the test
ITEM_AT = np.array([-0.7, 0.21, 0.12])  # m, model frame


@pytest.fixture
def model_file(tmp_path):
    p = tmp_path / "car.toml"
    p.write_text(MODEL, encoding="utf-8")
    return p


def exact_corners(model):
    """Corner loads of the model plus the item: the car the scales see (lever rule, no preload)."""
    car = combine([model.mass_properties(), MassProperties.point(ITEM_MASS, ITEM_AT)])
    return car, static_balance(car, model.vehicle)


def geometry(v) -> Geometry:
    return Geometry(v.wheelbase, v.track_front, v.track_rear, {})


def test_unaccounted_item_found_exactly(model_file):
    # Combined CG (Goldstein, Classical Mechanics, 3rd ed., §5.3): W x_s = m x_m + dm x_u.
    model = load_model(model_file)
    car, bal = exact_corners(model)
    corners = reduce_weighings([Weighing("1", bal.corners, None, "", "t")])
    rec = reconcile(model, corners, geometry(model.vehicle), Estimate(bal.cg_height, 0.002))
    u = rec.unaccounted
    assert u.mass.value == pytest.approx(ITEM_MASS, rel=1e-9)
    assert u.station.value == pytest.approx(ITEM_AT[0], rel=1e-9)
    assert u.lateral.value == pytest.approx(ITEM_AT[1], rel=1e-8)
    assert u.height.value == pytest.approx(ITEM_AT[2] + 0.3, rel=1e-8)  # ground at z = -300 mm
    assert rec.scales_station.value == pytest.approx(car.center[0], rel=1e-12)
    assert rec.model_station == pytest.approx(model.mass_properties().center[0], rel=1e-14)
    assert rec.item_point(u.height.value).tolist() == pytest.approx(ITEM_AT.tolist(), rel=1e-8)
    assert u.mass.u is None and u.determined  # exact readings: no uncertainty, non-zero difference


def test_item_uncertainty_against_monte_carlo(model_file, rng):
    # GUM Supplement 1 style check (JCGM 101:2008): propagate by sampling and compare with the linear law.
    model = load_model(model_file)
    _, bal = exact_corners(model)
    u_corner = np.array([0.1, 0.12, 0.08, 0.15])
    corners = reduce_weighings([Weighing("1", bal.corners, None, "", "t")])
    corners = type(corners)(corners.loads, corners.readings, corners.labels, None, u_corner, None, None)
    rec = reconcile(model, corners, geometry(model.vehicle))
    m = model.mass_properties()
    x_m = m.center[0]
    samples = bal.corners + rng.normal(size=(20000, 4)) * u_corner
    w = samples.sum(axis=1)
    d = w - m.mass
    x_s = model.vehicle.front_axle_station - model.vehicle.wheelbase * (samples[:, 2] + samples[:, 3]) / w
    x_u = (w * x_s - m.mass * x_m) / d
    assert rec.unaccounted.mass.u == pytest.approx(float(np.std(d)), rel=0.03)
    assert rec.unaccounted.station.u == pytest.approx(float(np.std(x_u)), rel=0.05)


def test_updated_model_extends_and_agrees_with_the_scales(model_file, tmp_path):
    model = load_model(model_file, overrides={"ballast": "21 kg"})
    car, bal = exact_corners(model)
    corners = reduce_weighings([Weighing("1", bal.corners, None, "", "t")])
    rec = reconcile(model, corners, geometry(model.vehicle), Estimate(bal.cg_height, None))
    out = tmp_path / "out" / "car_reconciled.toml"
    text = reconciled_model_text(rec, model, model_file, out, rec.unaccounted.height.value, "from the lift",
                                 "session 't'", {"ballast": "21 kg"})
    assert 'extends = "../car.toml"' in text
    before = model_file.read_text(encoding="utf-8")
    new = write_reconciled_model(text, out, protected=(model_file,))
    assert model_file.read_text(encoding="utf-8") == before
    again = load_model(out)  # the file on disk, read back
    for m in (new, again):
        total = m.mass_properties()
        assert total.mass == pytest.approx(car.mass, rel=1e-12)
        assert total.center.tolist() == pytest.approx(car.center.tolist(), rel=1e-7)
        item = m.component("unaccounted/from_scales")
        assert item.maturity.value == "measured" and item.source.value == "measured"
        assert item.note.startswith("UNACCOUNTED")
    assert list(out.parent.iterdir()) == [out]  # no temporary file left behind
    # a session name spanning lines (TOML multi-line string) stays inside the comment (TOML v1.0.0: a comment ends
    # at the end of its line) and in the escaped note
    two = reconciled_model_text(rec, model, model_file, out, rec.unaccounted.height.value, "from the lift",
                                "session 'first\nsecond'", {"ballast": "21 kg"})
    assert "# Session: session 'first second'" in two
    assert "session 'first\nsecond'" in loads_model(two, label=str(out), base_dir=out.parent).component(
        "unaccounted/from_scales").note


def test_refuses_to_overwrite_input_and_a_heavier_model(model_file, tmp_path):
    model = load_model(model_file)
    _, bal = exact_corners(model)
    corners = reduce_weighings([Weighing("1", bal.corners, None, "", "t")])
    rec = reconcile(model, corners, geometry(model.vehicle))
    text = reconciled_model_text(rec, model, model_file, model_file, 0.3, "x", "s")
    before = model_file.read_text(encoding="utf-8")
    with pytest.raises(ReconcileError, match="refusing to write over the input file"):
        write_reconciled_model(text, model_file, protected=(model_file,))
    assert model_file.read_text(encoding="utf-8") == before
    light = reduce_weighings([Weighing("1", bal.corners - 2.0, None, "", "t")])
    rec2 = reconcile(model, light, geometry(model.vehicle))
    assert rec2.unaccounted.mass.value == pytest.approx(ITEM_MASS - 8.0, rel=1e-9)
    with pytest.raises(ReconcileError, match="heavier than the car by 4.800 kg"):
        reconciled_model_text(rec2, model, model_file, tmp_path / "x.toml", 0.3, "x", "s")


def test_no_height_without_an_axle_lift(model_file):
    model = load_model(model_file)
    _, bal = exact_corners(model)
    rec = reconcile(model, reduce_weighings([Weighing("1", bal.corners, None, "", "t")]), geometry(model.vehicle))
    assert rec.unaccounted.height is None and rec.car_height is None
