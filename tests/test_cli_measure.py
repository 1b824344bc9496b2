"""The weigh, tilt and swing commands: JSON output, cautions, one-line errors, nothing overwritten."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import main
from massmodel.core import cautions
from massmodel.core.massprops import MassProperties, combine
from massmodel.measure.analysis import lift_report, load_session_and_model, pendulum_report
from massmodel.modelfile.loader import load_model
from massmodel.report.measure import format_lift, format_pendulum
from massmodel.vehicle.balance import static_balance

DEMO = Path(__file__).resolve().parents[1] / "parts_demo"

MODEL = """
[model]
name = "cli car"
[vehicle]
wheelbase = "2.5 m"
track_front = "1.5 m"
track_rear = "1.4 m"
ground_level = "-0.3 m"
[[part]]
path = "body/tub"
shape = "box"
size = ["2 m", "0.6 m", "0.4 m"]
mass = "400 kg"
maturity = "calculated"
at = ["-1.2 m", "0.01 m", "0 m"]
"""


@pytest.fixture
def files(tmp_path):
    model_file = tmp_path / "car.toml"
    model_file.write_text(MODEL, encoding="utf-8")
    model = load_model(model_file)
    car = combine([model.mass_properties(), MassProperties.point(4.0, [-0.5, 0.2, 0.1])])
    corners = static_balance(car, model.vehicle).corners
    session = tmp_path / "session.toml"
    rows = "\n".join(f'[[weighing]]\nreadings = [{", ".join(f"{x + d:.12f}" for x in corners)}]'
                     for d in (-0.05, 0.0, 0.05))
    session.write_text(f'[session]\nname = "cli"\nmodel = "car.toml"\n[units]\nmass = "kg"\n{rows}\n', encoding="utf-8")
    return model_file, session, car


def test_weigh_json_and_updated_model(files, tmp_path, capsys):
    model_file, session, car = files
    out = tmp_path / "w.json"
    new = tmp_path / "models" / "car_reconciled.toml"
    assert main(["weigh", str(session), "--json", str(out), "--write-model", str(new), "--item-height", "400 mm"]) == 0
    text = capsys.readouterr().out
    assert "MODEL VERSUS SCALES" in text and "UNACCOUNTED ITEM" in text and cautions.SCALES in text
    assert cautions.LIFTING in text  # the lifting caution names corner-weight work itself
    data = json.loads(out.read_text(encoding="utf-8"))
    assert data["format"] == "massmodel-weighing/1"
    assert data["total_mass"]["value"] == pytest.approx(car.mass, rel=1e-12)
    u = data["reconciliation"]["unaccounted"]
    assert u["mass"]["value"] == pytest.approx(4.0, rel=1e-9)
    assert u["station"]["value"] == pytest.approx(-0.5, rel=1e-9)
    assert u["lateral"]["value"] == pytest.approx(0.2, rel=1e-8)
    assert u["height_above_ground"] is None  # no axle lift in this session
    assert data["updated_model"]["height_above_ground_m"] == pytest.approx(0.4)
    check = data["updated_model"]["check"]
    assert check["mass_kg"] == pytest.approx(car.mass, rel=1e-12)
    assert check["station_m"] == pytest.approx(car.center[0], rel=1e-9)
    assert load_model(new).component("unaccounted/from_scales").props.center.tolist() == pytest.approx(
        [-0.5, 0.2, 0.1], rel=1e-6)


def test_errors_are_one_line_and_nothing_is_written(files, tmp_path, capsys):
    model_file, session, _ = files
    before = model_file.read_text(encoding="utf-8")
    assert main(["weigh", str(session), "--write-model", str(model_file)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "refusing to write over the input file" in err
    assert model_file.read_text(encoding="utf-8") == before
    bad = tmp_path / "bad.toml"
    bad.write_text('[session]\nname = "b"\n[[weighing]]\nreadings = ["90 kg", "91 kg", "120 kg"]\n', encoding="utf-8")
    out = tmp_path / "never.json"
    assert main(["weigh", str(bad), "--json", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert err == (f"massmodel weigh: error: {bad}: weighing '1', field 'readings': expected four readings "
                   "[front_left, front_right, rear_left, rear_right], got 3 readings")
    assert not out.exists()
    assert main(["tilt", str(session)]) == 2
    assert "no [[axle_lift]] tables" in capsys.readouterr().err
    assert main(["weigh", str(session), "--item-height", "3 kg", "--write-model", str(tmp_path / "x.toml")]) == 2
    assert "--item-height" in capsys.readouterr().err
    assert not (tmp_path / "x.toml").exists()


@pytest.fixture(scope="module")
def demo():
    return load_session_and_model(DEMO / "bl3_measurements.toml")


def test_demo_axle_lift_shows_uncertainty_and_cautions(demo):
    session, model = demo
    rep = lift_report(session, model)
    assert rep["format"] == "massmodel-axle-lift/1"
    h = rep["cg_height"]
    assert h["unit"] == "m" and 0.0 < h["standard_uncertainty"] < 0.01
    assert rep["series_consistent"] is True
    text = format_lift(rep)
    assert cautions.LIFTING in text and cautions.SCALES in text
    assert "sensitivity of h to an error in" in text
    json.dumps(rep, allow_nan=False)


def test_demo_pendulum_reductions(demo):
    session, model = demo
    rep = pendulum_report(session, model)
    assert [t["kind"] for t in rep["tests"]] == ["trifilar", "compound", "bifilar"]
    for t in rep["tests"]:
        c = t["comparison"]
        assert c is not None and np.isfinite(c["relative_difference"])
        assert abs(c["relative_difference"]) < 0.1
    assert cautions.LIFTING in format_pendulum(rep)
    json.dumps(rep, allow_nan=False)
