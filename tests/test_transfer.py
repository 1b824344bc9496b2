"""Steady-state load transfer against the closed forms of docs/references.md §8 and the rigid-body equilibrium."""

from __future__ import annotations

import json

import numpy as np
import pytest

from massmodel.cli import main
from massmodel.core.massprops import MassProperties
from massmodel.core.model import Vehicle
from massmodel.modelfile.loader import load_model
from massmodel.vehicle.balance import static_balance
from massmodel.vehicle.transfer import Condition, build_transfer_report, load_transfer

G0 = 9.80665  # m/s², standard gravity (NIST SP 811)


def iso_vehicle(wheelbase=2.5, tf=1.5, tr=1.4, station=0.0, ground=0.0):
    return Vehicle(np.array([1.0, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0]), wheelbase, tf, tr, station, ground)


def test_braking_front_axle_load_gillespie():
    # Gillespie, Fundamentals of Vehicle Dynamics (SAE 1992), ch. 2 (from memory): W_f = W b/L - m a_x h/L.
    # m = 600 kg, L = 2.5 m, CG 1.1 m behind the front axle (b = 1.4 m), h = 0.30 m, braking 1.2 g:
    # transfer 600 * 1.2 * 0.30 / 2.5 = 86.4 kg; front 600 * 1.4 / 2.5 + 86.4 = 336 + 86.4 = 422.4 kg.
    v = iso_vehicle(ground=-0.30)
    bal = static_balance(MassProperties.point(600.0, [-1.1, 0.0, 0.0]), v)
    r = load_transfer(bal, v, -1.2, 0.0)
    assert r.longitudinal_transfer == pytest.approx(-86.4, rel=1e-13)
    assert r.front == pytest.approx(422.4, rel=1e-13)
    assert r.rear == pytest.approx(600.0 - 422.4, rel=1e-13)
    assert r.corners.tolist() == pytest.approx([211.2, 211.2, 88.8, 88.8], rel=1e-13)
    drive = load_transfer(bal, v, 0.5, 0.0)  # driving 0.5 g moves 600 * 0.5 * 0.3 / 2.5 = 36 kg rearwards
    assert drive.rear == pytest.approx(600.0 * 1.1 / 2.5 + 36.0, rel=1e-13)
    assert r.lifted == () and drive.lifted == ()


def test_total_lateral_transfer_milliken():
    # Milliken & Milliken, Race Car Vehicle Dynamics (SAE 1995; R2): total lateral load transfer m a_y h / t.
    # Equal tracks t = 1.5 m, m = 500 kg, h = 0.28 m, a_y = 1.5 g: 500 * 1.5 * 0.28 / 1.5 = 140 kg to the right.
    v = iso_vehicle(tf=1.5, tr=1.5, ground=-0.28)
    bal = static_balance(MassProperties.point(500.0, [-1.2, 0.0, 0.0]), v)
    r = load_transfer(bal, v, 0.0, 1.5)
    moved = (r.corners[1] + r.corners[3]) - (bal.corners[1] + bal.corners[3])
    assert moved == pytest.approx(140.0, rel=1e-13)
    assert r.lateral_transfer_front + r.lateral_transfer_rear == pytest.approx(140.0, rel=1e-13)
    # no share given: the front takes the static front fraction b/L = 1.3/2.5 of it (assumed)
    assert r.front_roll_share == pytest.approx(1.3 / 2.5, rel=1e-15) and r.share_given is False
    assert r.lateral_transfer_front == pytest.approx(140.0 * 1.3 / 2.5, rel=1e-13)
    assert (r.front, r.rear) == pytest.approx((bal.front, bal.rear), rel=1e-15)  # axle loads unchanged
    right = load_transfer(bal, v, 0.0, -1.5)  # a right-hand turn mirrors it
    assert right.corners.tolist() == pytest.approx(r.corners[[1, 0, 3, 2]].tolist(), rel=1e-13)


def test_given_front_share_and_unequal_tracks():
    # Milliken & Milliken (R2): the front axle reacts s of the overturning moment m a_y h, over its own track.
    v = iso_vehicle(tf=1.6, tr=1.4, ground=-0.3)
    bal = static_balance(MassProperties.point(450.0, [-1.0, 0.0, 0.0]), v)
    r = load_transfer(bal, v, 0.0, 1.2, front_roll_share=0.6)
    assert r.lateral_transfer_front == pytest.approx(0.6 * 450 * 1.2 * 0.3 / 1.6, rel=1e-13)
    assert r.lateral_transfer_rear == pytest.approx(0.4 * 450 * 1.2 * 0.3 / 1.4, rel=1e-13)
    assert r.share_given is True


@pytest.mark.parametrize(("ax", "ay", "share"), [(-1.2, 0.0, None), (0.0, 1.5, None), (-0.8, -1.1, 0.55),
                                                 (0.4, 0.9, 0.3)])
def test_loads_satisfy_rigid_body_equilibrium(ax, ay, share):
    # Independent check (d'Alembert, steady state): about a point on the ground, the moments of the four vertical
    # tyre loads, the weight and the inertia force -m a at the CG cancel in roll and pitch, and the loads carry the
    # weight. Horizontal tyre forces act in the ground plane, so they have no roll or pitch moment about it.
    # SAE-style model axes (x forward, y right, z down) to exercise the vehicle basis.
    v = Vehicle(np.array([1.0, 0, 0]), np.array([0, -1.0, 0]), np.array([0, 0, -1.0]), 2.6, 1.46, 1.42, 0.4, -0.27)
    cg_model = np.array([-1.05, -0.02, 0.0])  # 1.45 m behind the front axle, 0.02 m left, 0.27 m above ground
    bal = static_balance(MassProperties.point(430.0, cg_model), v)
    r = load_transfer(bal, v, ax, ay, share)
    # vehicle coordinates (forward, left, up) with the origin on the ground below the front axle centre
    contacts = np.array([[0.0, 0.73, 0.0], [0.0, -0.73, 0.0], [-2.6, 0.71, 0.0], [-2.6, -0.71, 0.0]])
    cg = np.array([-1.45, 0.02, 0.27])
    m = 430.0
    moment = np.zeros(3)
    for p, load in zip(contacts, r.corners, strict=True):
        moment += np.cross(p, [0.0, 0.0, load * G0])
    moment += np.cross(cg, [0.0, 0.0, -m * G0])
    moment += np.cross(cg, [-m * ax * G0, -m * ay * G0, 0.0])
    assert moment[:2] == pytest.approx([0.0, 0.0], abs=1e-9 * m * G0)
    assert r.corners.sum() == pytest.approx(m, rel=1e-14)


def test_wheel_lift_is_flagged():
    # Lateral transfer beyond the inner wheels' static load lifts them: with the static front fraction as the
    # share and equal tracks, the left wheels reach zero at a_y = t / (2 h) (static stability factor, §7).
    v = iso_vehicle(tf=1.5, tr=1.5, ground=-0.5)
    bal = static_balance(MassProperties.point(1000.0, [-1.25, 0.0, 0.0]), v)
    at_limit = load_transfer(bal, v, 0.0, 1.5)  # t / (2 h) = 1.5
    assert at_limit.corners[[0, 2]].tolist() == pytest.approx([0.0, 0.0], abs=1e-9)
    over = load_transfer(bal, v, 0.0, 1.6)
    assert over.lifted == ("front_left", "rear_left")


@pytest.mark.parametrize(
    ("kw", "words"),
    [
        ({"longitudinal_g": float("nan")}, "finite"),
        ({"lateral_g": 7.0}, "within ±6 g"),
        ({"front_roll_share": 1.2}, "fraction from 0 to 1"),
        ({"front_roll_share": -0.1}, "fraction from 0 to 1"),
    ],
)
def test_bad_input(kw, words):
    v = iso_vehicle()
    bal = static_balance(MassProperties.point(300.0, [-1.0, 0, 0.3]), v)
    args = {"longitudinal_g": 0.0, "lateral_g": 1.0, **kw}
    with pytest.raises(ValueError, match=words):
        load_transfer(bal, v, **args)


def test_massless_selection_is_an_error():
    v = iso_vehicle()
    bal = static_balance(MassProperties.zero(), v)
    with pytest.raises(ValueError, match="needs a body with mass"):
        load_transfer(bal, v, 0.0, 1.0)


CAR = """
[model]
name = "transfer car"
[vehicle]
wheelbase = "2.5 m"
track_front = "1.5 m"
track_rear = "1.4 m"
ground_level = "-0.3 m"
[[part]]
path = "body"
shape = "point"
mass = "600 kg"
maturity = "measured"
at = ["-1.1 m", "0 m", "0 m"]
"""


def test_command_writes_json_with_every_condition(tmp_path, capsys):
    car = tmp_path / "car.toml"
    car.write_text(CAR)
    out = tmp_path / "lt.json"
    argv = ["load-transfer", str(car), "--brake", "1.2", "--corner", "-1.5", "--accel", "-0.5", "1.0",
            "--front-roll-share", "0.5", "--json", str(out)]
    assert main(argv) == 0
    text = capsys.readouterr().out
    assert "braking 1.20 g" in text and "cornering 1.50 g right" in text and "ASSUMPTIONS" in text
    data = json.loads(out.read_text())
    assert data["format"] == "massmodel-load-transfer/1"
    assert [c["label"] for c in data["conditions"]] == ["static", "braking 1.20 g", "cornering 1.50 g right",
                                                        "a_x -0.50 g, a_y +1.00 g"]
    assert data["front_roll_share"] == {"value": 0.5, "source": "given"}
    braking = data["conditions"][1]
    assert braking["axle_loads_kg"]["front"] == pytest.approx(422.4, rel=1e-13)  # the Gillespie example above
    right = data["conditions"][2]
    # 600 kg * 1.5 g * 0.3 m, half over each track, towards the left wheels in a right-hand turn
    assert right["lateral_transfer_kg"]["front"] == pytest.approx(-0.5 * 600 * 1.5 * 0.3 / 1.5, rel=1e-13)
    assert right["corner_loads_kg"]["front_left"] == pytest.approx(168.0 + 90.0, rel=1e-13)
    model = load_model(car)
    assert data == json.loads(json.dumps(build_transfer_report(
        model, [Condition("braking 1.20 g", -1.2, 0.0), Condition("cornering 1.50 g right", 0.0, -1.5),
                Condition("a_x -0.50 g, a_y +1.00 g", -0.5, 1.0)], 0.5)))


@pytest.mark.parametrize(
    ("extra", "words"),
    [
        ([], "give at least one of --brake"),
        (["--corner", "1", "--front-roll-share", "2"], "fraction from 0 to 1"),
        (["--corner", "8"], "within ±6 g"),
    ],
)
def test_command_bad_input_exits_2(tmp_path, capsys, extra, words):
    car = tmp_path / "car.toml"
    car.write_text(CAR)
    out = tmp_path / "never.json"
    assert main(["load-transfer", str(car), *extra, "--json", str(out)]) == 2
    err = capsys.readouterr().err
    assert words in err and "Traceback" not in err
    assert not out.exists()


def test_command_needs_a_vehicle(tmp_path, capsys):
    car = tmp_path / "part.toml"
    car.write_text(CAR.replace('[vehicle]\nwheelbase = "2.5 m"\ntrack_front = "1.5 m"\ntrack_rear = "1.4 m"\n'
                               'ground_level = "-0.3 m"\n', ""))
    assert main(["load-transfer", str(car), "--brake", "1"]) == 2
    assert "needs a [vehicle] section" in capsys.readouterr().err


def test_negative_braking_is_refused_by_the_parser(tmp_path, capsys):
    car = tmp_path / "car.toml"
    car.write_text(CAR)
    assert main(["load-transfer", str(car), "--brake", "-1"]) == 2  # main returns argparse's exit code
    assert "positive number of g" in capsys.readouterr().err
