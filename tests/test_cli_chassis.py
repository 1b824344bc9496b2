"""The roll-yaw command end to end (in-process), the [chassis] section through extends and load cases, pictures."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from test_chassis import CAR

from massmodel.cli import EXIT_USAGE, main
from massmodel.modelfile.loader import load_model
from massmodel.report.chassis import build_chassis_report

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "parts_demo" / "brindlecombe_bl3.toml"
G0 = 9.80665


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def write_car(tmp_path: Path, front='roll_stiffness = "500 N*m/deg"', rear='roll_stiffness = "700 N*m/deg"',
              extra="") -> Path:
    path = tmp_path / "car.toml"
    text = CAR.format(tf=1500, tr=1400, zf=40, zr=60, unsprung='["wheels"]', front=front, rear=rear)
    path.write_text(text + extra, encoding="utf-8")
    return path


def test_demo_car_prints_every_section_and_writes_json_and_pictures(capsys, tmp_path):
    out_json = tmp_path / "chassis.json"
    loads_png, yaw_png = tmp_path / "loads.png", tmp_path / "yaw.png"
    code, out, err = run(capsys, "roll-yaw", DEMO, "--corner", "1.2", "--speed", "150", "--cross-target", "0.5",
                         "--scales", "90", "95", "128", "122", "--thread-pitch", "1.5", "--json", out_json,
                         "--picture-loads", loads_png, "--picture-yaw", yaw_png)
    assert (code, err) == (0, "")
    for heading in ("SPRUNG AND UNSPRUNG MASS", "ROLL", "LATERAL LOAD TRANSFER DISTRIBUTION", "AERO at 41.7 m/s",
                    "CORNER LOADS", "LONGITUDINAL TRANSFER", "CROSS WEIGHT", "SINGLE-TRACK MODEL", "ASSUMPTIONS",
                    "CAUTIONS", "Track testing and the team's own vehicle simulation decide"):
        assert heading in out
    data = json.loads(out_json.read_text(encoding="utf-8"))
    assert data["format"] == "massmodel-chassis/1"
    ms = data["mass_split"]
    assert ms["sprung_mass_kg"] + ms["unsprung_kg"] == pytest.approx(data["mass_kg"], rel=1e-12)
    lat = data["lateral"][0]
    # vertical balance: the four corner loads still sum to weight + downforce at any lateral acceleration
    assert sum(lat["corner_loads_kg"].values()) == pytest.approx(data["mass_kg"] + data["aero"]["downforce_N"] / G0)
    cw = data["cross_weight"]
    after = cw["corner_loads_after_kg"]
    assert (after["front_right"] + after["rear_left"]) / sum(after.values()) == pytest.approx(0.5, abs=1e-12)
    assert cw["turns"] == pytest.approx(cw["platform_change_m"] / 1.5e-3)
    assert data["single_track"]["speed_m_per_s"] == pytest.approx(150 / 3.6)
    from PIL import Image

    for png in (loads_png, yaw_png):
        img = np.asarray(Image.open(png).convert("L"))
        assert img.shape[0] > 400 and img.std() > 10  # a drawing, not a blank page


def test_missing_cornering_stiffness_is_one_line_exit_2_when_the_yaw_response_is_asked(capsys, tmp_path):
    car = write_car(tmp_path, extra='[chassis.aero]\nreference_speed = "40 m/s"\ndownforce_at_reference = "900 N"\n'
                                    'drag_at_reference = "400 N"\nfront_share = 0.4\ndrag_height = "400 mm"\n')
    code, out, _ = run(capsys, "roll-yaw", car)
    assert code == 0 and "SINGLE-TRACK" not in out
    code, out, err = run(capsys, "roll-yaw", car, "--speed", "100", "--picture-yaw", tmp_path / "y.png")
    assert code == EXIT_USAGE
    assert err.count("\n") == 1
    assert f"{car}: [chassis.front], field 'cornering_stiffness': is missing" in err
    assert not (tmp_path / "y.png").exists()


@pytest.mark.parametrize("front, message", [
    ('spring_rate = "-20 N/mm"', "[chassis.front], field 'spring_rate': must be positive"),
    ('roll_stiffness = "500 N*m/deg"\nbar_rate = "-3 N/mm"', "[chassis.front], field 'bar_rate': must be zero or "
                                                            "positive"),
])
def test_negative_rates_are_one_line_exit_2(capsys, tmp_path, front, message):
    car = write_car(tmp_path, front=front)
    code, out, err = run(capsys, "roll-yaw", car)
    assert code == EXIT_USAGE and out == ""
    assert err.count("\n") == 1 and f"{car}: {message}" in err


def test_roll_centre_above_the_cg_is_one_line_exit_2(capsys, tmp_path):
    car = write_car(tmp_path)
    car.write_text(car.read_text(encoding="utf-8").replace('roll_centre_height = "40 mm"',
                                                           'roll_centre_height = "700 mm"'), encoding="utf-8")
    code, _, err = run(capsys, "roll-yaw", car)
    assert code == EXIT_USAGE and err.count("\n") == 1
    assert "[chassis.front], field 'roll_centre_height': the roll axis lies" in err


def test_extends_inherits_the_chassis_section_and_a_child_section_replaces_it(tmp_path):
    base = write_car(tmp_path)
    child = tmp_path / "child.toml"
    child.write_text('[model]\nname = "child"\nextends = "car.toml"\n[units]\nlength = "mm"\nmass = "kg"\n'
                     '[[part]]\npath = "ballast/block"\nshape = "point"\nmass = "20 kg"\nmaturity = "measured"\n'
                     'at = [-300, 0, -250]\n', encoding="utf-8")
    m_base, m_child = load_model(base), load_model(child)
    assert m_child.chassis.front == m_base.chassis.front
    # the child's added block is sprung mass (no [chassis] entry covers it)
    d_base, d_child = build_chassis_report(m_base), build_chassis_report(m_child)
    assert d_child["mass_split"]["sprung_mass_kg"] == pytest.approx(d_base["mass_split"]["sprung_mass_kg"] + 20)
    child.write_text(child.read_text(encoding="utf-8") + '[chassis]\n[chassis.front]\nroll_centre_height = "10 mm"\n'
                     'roll_stiffness = "800 N*m/deg"\n[chassis.rear]\nroll_centre_height = "10 mm"\n'
                     'roll_stiffness = "800 N*m/deg"\n', encoding="utf-8")
    replaced = load_model(child).chassis
    assert replaced.unsprung == () and replaced.front.roll_stiffness == pytest.approx(800 * 180 / math.pi)


def test_demo_load_case_changes_the_results():
    base = build_chassis_report(load_model(DEMO))
    full = build_chassis_report(load_model(DEMO, case="race_start"))
    assert full["mass_kg"] == pytest.approx(base["mass_kg"] + 10.0, rel=1e-9)
    assert full["single_track"]["understeer_gradient_deg_per_g"] != base["single_track"]["understeer_gradient_deg_per_g"]
