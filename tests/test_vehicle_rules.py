"""Rule checks on a car built at, and just under, the limits of a top single-seater category.

The limits are a fact of the trade (common practice, no source): the car with its driver must weigh at least
733 kg without fuel, the driver and seat at least 80 kg of that and the rest at least 653 kg; during qualifying the
front and rear axles must carry at least 333 kg and 393 kg. They are used here only, never in the demo.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from massmodel.modelfile.loader import load_model
from massmodel.vehicle.balance import check_rules, static_balance

WHEELBASE = 3.6  # m

CAR = """
[model]
name = "limit car"
[units]
length = "mm"
mass = "kg"
[parameters]
driver_mass = "72 kg"
ballast_mass = "55 kg"
ballast_x = "-1800 mm"
[vehicle]
wheelbase = 3600
track_front = 1600
track_rear = 1550
ground_level = -330
[[part]]
path = "chassis/tub"
shape = "box"
size = [3000, 800, 400]
mass = 400
maturity = "measured"
at = [-1600, 0, 0]
[[part]]
path = "chassis/seat"
shape = "box"
size = [400, 400, 30]
mass = 8
maturity = "measured"
at = [-1700, 0, -150]
[[part]]
path = "power/engine"
shape = "point"
mass = 150
maturity = "measured"
at = [-2600, 0, 0]
[[part]]
path = "wheels/front/left"
shape = "point"
mass = 12
maturity = "measured"
at = [0, 800, 0]
mirror = true
[[part]]
path = "wheels/rear/left"
shape = "point"
mass = 12
maturity = "measured"
at = [-3600, 775, 0]
mirror = true
[[part]]
path = "driver"
shape = "point"
mass = "driver_mass"
maturity = "measured"
at = [-1700, 0, 0]
[[part]]
path = "fuel/load"
shape = "point"
mass = 10
maturity = "calculated"
at = [-2000, 0, 0]
[[part]]
path = "ballast/block"
shape = "point"
mass = "ballast_mass"
maturity = "calculated"
at = ["ballast_x", 0, -300]
# Limits of a top single-seater category (common practice, no source).
[[rule]]
name = "car and driver without fuel"
check = "min_mass"
exclude = ["fuel"]
limit = "733 kg"
[[rule]]
name = "driver and seat"
check = "min_group_mass"
groups = ["driver", "chassis/seat"]
limit = "80 kg"
[[rule]]
name = "car without driver, seat and fuel"
check = "min_mass"
exclude = ["fuel", "driver", "chassis/seat"]
limit = "653 kg"
[[rule]]
name = "front axle, qualifying"
check = "min_axle_load"
axle = "front"
limit = "333 kg"
[[rule]]
name = "rear axle, qualifying"
check = "min_axle_load"
axle = "rear"
limit = "393 kg"
"""

# x (m) and mass (kg) of everything but the ballast block
FIXED = [(-1.6, 400.0), (-1.7, 8.0), (-2.6, 150.0), (0.0, 24.0), (-3.6, 24.0), (-1.7, 72.0), (-2.0, 10.0)]


def ballast_x_for_front_load(front_kg: float, ballast_kg: float) -> float:
    """Ballast position (m) that puts ``front_kg`` on the front axle: moments about the rear axle line,
    F_front L = Σ m (x + L) (Jazar 2008, ch. 2; equation numbers from memory)."""
    moment = sum(m * (x + WHEELBASE) for x, m in FIXED)
    return (front_kg * WHEELBASE - moment) / ballast_kg - WHEELBASE


@pytest.fixture
def car(tmp_path: Path) -> Path:
    path = tmp_path / "limit_car.toml"
    path.write_text(CAR, encoding="utf-8")
    return path


def results(path: Path, **overrides: str):
    model = load_model(path, overrides=overrides)
    return {r.name: r for r in check_rules(model)}, model


def test_car_exactly_at_the_limits_passes(car: Path) -> None:
    x = ballast_x_for_front_load(333.0, 55.0)
    r, model = results(car, ballast_x=f"{x!r} m")
    assert r["car and driver without fuel"].value == 733.0
    assert r["driver and seat"].value == 80.0
    assert r["car without driver, seat and fuel"].value == 653.0
    assert r["front axle, qualifying"].value == pytest.approx(333.0, rel=1e-12)
    assert r["rear axle, qualifying"].value == pytest.approx(743.0 - 333.0, rel=1e-12)
    for name, res in r.items():
        assert res.passed, name
        assert res.unit == "kg"
    for name in ("car and driver without fuel", "driver and seat", "car without driver, seat and fuel"):
        assert r[name].margin == 0.0
    assert r["front axle, qualifying"].margin == pytest.approx(0.0, abs=1e-9)
    assert r["rear axle, qualifying"].margin == pytest.approx(410.0 - 393.0, rel=1e-12)


def test_rear_axle_exactly_at_its_limit_passes(car: Path) -> None:
    x = ballast_x_for_front_load(743.0 - 393.0, 55.0)
    r, model = results(car, ballast_x=f"{x!r} m")
    bal = static_balance(model.mass_properties(), model.vehicle)
    assert bal.rear == pytest.approx(393.0, rel=1e-12)
    assert r["rear axle, qualifying"].passed
    assert r["front axle, qualifying"].margin == pytest.approx(350.0 - 333.0, rel=1e-12)


def test_a_lighter_driver_fails_two_rules(car: Path) -> None:
    x = ballast_x_for_front_load(333.0, 55.0)
    r, _ = results(car, ballast_x=f"{x!r} m", driver_mass="71.99 kg")
    assert not r["driver and seat"].passed
    assert r["driver and seat"].margin == pytest.approx(-0.01, abs=1e-9)
    assert not r["car and driver without fuel"].passed
    assert r["car and driver without fuel"].margin == pytest.approx(-0.01, abs=1e-9)
    assert r["car without driver, seat and fuel"].passed


def test_less_ballast_fails_the_rest_of_the_car(car: Path) -> None:
    r, _ = results(car, ballast_mass="54.99 kg")
    assert not r["car without driver, seat and fuel"].passed
    assert r["car without driver, seat and fuel"].margin == pytest.approx(-0.01, abs=1e-9)
    assert not r["car and driver without fuel"].passed
    assert r["driver and seat"].passed


@pytest.mark.parametrize(("axle", "front"), [("front", 333.0 - 0.01), ("rear", 743.0 - 393.0 + 0.01)])
def test_ballast_moved_a_little_fails_an_axle(car: Path, axle: str, front: float) -> None:
    x = ballast_x_for_front_load(front, 55.0)
    r, _ = results(car, ballast_x=f"{x!r} m")
    name = f"{axle} axle, qualifying"
    assert not r[name].passed
    assert r[name].margin == pytest.approx(-0.01, abs=1e-9)
    others = [n for n in r if n != name]
    assert all(r[n].passed for n in others)


def test_round_off_at_the_limit_is_not_a_failure(tmp_path: Path) -> None:
    # 0.1 kg + 0.7 kg sums to 0.7999999999999999 kg in binary floating point (IEEE 754 double)
    path = tmp_path / "two.toml"
    path.write_text("""
[model]
name = "two"
[[part]]
path = "a"
shape = "point"
mass = "0.1 kg"
maturity = "measured"
[[part]]
path = "b"
shape = "point"
mass = "0.7 kg"
maturity = "measured"
[[rule]]
name = "at the limit"
check = "min_mass"
limit = "0.8 kg"
[[rule]]
name = "a gram under"
check = "min_mass"
limit = "0.801 kg"
""", encoding="utf-8")
    r, _ = results(path)
    assert r["at the limit"].value < 0.8
    assert r["at the limit"].passed
    assert not r["a gram under"].passed
    assert r["a gram under"].margin == pytest.approx(-0.001, abs=1e-12)
