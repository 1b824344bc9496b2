"""The report: JSON keys, units and values (checked against closed forms written here), terminal text, atomic writes.

Closed forms: cuboid I_xx = m(b² + c²)/12 (Machinery's Handbook 31st ed. pp.253-254); parallel-axis theorem
I = Σ[I_i + m_i(|d_i|² E − d_i d_iᵀ)] (Goldstein, Poole & Safko, Classical Mechanics, §5.3); static axle loads
F_front = m a2 / L (Jazar, Vehicle Dynamics, 2008, ch. 2; equation numbers from memory); corner split by the lever rule (rigid chassis, no
diagonal preload: common practice, no source).
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np
import pytest

from conftest import assert_close
from massmodel.modelfile.loader import load_model
from massmodel.report.summary import (
    DisplayUnits,
    InertiaRequest,
    build_report,
    format_report,
    write_json_atomic,
)

CAR = """
[model]
name = "report test"
[units]
length = "mm"
[vehicle]
wheelbase = 2000
track_front = 1500
track_rear = 1400
ground_level = -300
[[part]]
path = "body/block"
shape = "box"
size = [1000, 400, 200]
density = "1000 kg/m^3"
maturity = "calculated"
at = [-800, 0, 0]
[[part]]
path = "body/weight"
shape = "point"
mass = "20 kg"
maturity = "measured"
at = [-1800, 100, 100]
[[part]]
path = "fuel/tank"
shape = "box"
size = [200, 200, 100]
mass = "4 kg"
maturity = "estimated"
at = [-1200, 0, -100]
[[rule]]
name = "minimum mass without fuel"
check = "min_mass"
exclude = ["fuel"]
limit = "110 kg"
[[rule]]
name = "front axle"
check = "min_axle_load"
axle = "front"
limit = "30 kg"
"""

# (mass kg, centre m, tensor about own CG kg*m^2)
PARTS = {
    "body/block": (80.0, np.array([-0.8, 0.0, 0.0]), 80.0 / 12 * np.diag([0.4**2 + 0.2**2, 1.0 + 0.2**2, 1.0 + 0.4**2])),
    "body/weight": (20.0, np.array([-1.8, 0.1, 0.1]), np.zeros((3, 3))),
    "fuel/tank": (4.0, np.array([-1.2, 0.0, -0.1]), 4.0 / 12 * np.diag([0.2**2 + 0.1**2, 0.2**2 + 0.1**2, 0.08])),
}


def steiner(m: float, d: np.ndarray) -> np.ndarray:
    return m * (d @ d * np.eye(3) - np.outer(d, d))


def expected_total() -> tuple[float, np.ndarray, np.ndarray]:
    mass = sum(m for m, _, _ in PARTS.values())
    cg = sum(m * c for m, c, _ in PARTS.values()) / mass
    tensor = sum(t + steiner(m, c - cg) for m, c, t in PARTS.values())
    return mass, cg, tensor


@pytest.fixture
def car(tmp_path: Path) -> Path:
    path = tmp_path / "car.toml"
    path.write_text(CAR, encoding="utf-8")
    return path


@pytest.fixture
def report(car: Path) -> dict:
    return build_report(load_model(car))


def test_totals(report: dict) -> None:
    mass, cg, tensor = expected_total()
    assert report["mass_kg"] == pytest.approx(104.0, rel=1e-15)
    assert_close(report["cg_m"], [-104.8 / 104, 2.0 / 104, 1.6 / 104], 1e-14)
    assert_close(report["inertia_cg_kg_m2"], tensor, 1e-12)
    moments, vectors = np.linalg.eigh(tensor)
    assert_close(report["principal_moments_kg_m2"], moments, 1e-12)
    axes = np.array(report["principal_axes"])
    assert_close(axes @ axes.T, np.eye(3), 1e-12)
    assert np.dot(np.cross(axes[0], axes[1]), axes[2]) == pytest.approx(1.0)
    for k in range(3):  # rows are the eigenvectors, in the order of the moments (ascending)
        assert abs(axes[k] @ vectors[:, k]) == pytest.approx(1.0, rel=1e-12)
    assert_close(report["radii_of_gyration_m"], np.sqrt(np.diag(tensor) / mass), 1e-12)
    assert "-integral(x*y dm)" in report["conventions"]["inertia"]
    assert report["format"] == "massmodel-report/1"


def test_vehicle_balance(report: dict) -> None:
    mass, cg, _ = expected_total()
    a1 = -cg[0]  # the front axle line is at x = 0
    front = mass * (2.0 - a1) / 2.0
    rear = mass - front
    assert report["axle_loads_kg"] == pytest.approx({"front": front, "rear": rear}, rel=1e-12)
    y = cg[1]
    assert report["corner_loads_kg"] == pytest.approx({
        "front_left": front * (0.75 + y) / 1.5, "front_right": front * (0.75 - y) / 1.5,
        "rear_left": rear * (0.7 + y) / 1.4, "rear_right": rear * (0.7 - y) / 1.4}, rel=1e-12)
    assert report["front_fraction"] == pytest.approx(front / mass, rel=1e-12)
    assert report["cg_height_m"] == pytest.approx(cg[2] + 0.3, rel=1e-12)
    assert "no diagonal (cross) preload" in report["load_assumptions"]
    assert report["inertia_vehicle_axes_kg_m2"]["yaw"] == pytest.approx(report["inertia_cg_kg_m2"][2][2])
    assert "axes through the CG along forward (roll)" in report["conventions"]["vehicle"]  # the frame is stated


def test_rules(report: dict) -> None:
    mass_rule, front_rule = report["rules"]
    assert mass_rule == {
        "name": "minimum mass without fuel", "check": "min_mass", "passed": False,
        "value": {"value": pytest.approx(100.0, rel=1e-15), "unit": "kg"},
        "bound": "at_least", "limit_min": {"value": 110.0, "unit": "kg"}, "limit_max": None,
        "margin": {"value": pytest.approx(-10.0, rel=1e-12), "unit": "kg"}, "detail": "whole model without fuel"}
    assert front_rule["passed"] is True
    assert front_rule["margin"] == {"value": pytest.approx(report["axle_loads_kg"]["front"] - 30.0), "unit": "kg"}
    assert report["rules_passed"] is False


def test_components_and_groups(report: dict) -> None:
    comps = {c["path"]: c for c in report["components"]}
    assert list(comps) == list(PARTS)
    for path, (m, c, t) in PARTS.items():
        entry = comps[path]
        assert entry["mass_kg"] == pytest.approx(m, rel=1e-15)
        assert_close(entry["cg_m"], c, 1e-15)
        assert_close(entry["inertia_cg_kg_m2"], t, 1e-12)
    assert comps["body/block"]["volume_m3"] == pytest.approx(0.08, rel=1e-12)
    assert comps["body/weight"]["volume_m3"] is None  # a point mass has no shape volume
    assert [(e["mass_source"], e["maturity"]) for e in comps.values()] == [
        ("density", "calculated"), ("mass", "measured"), ("mass", "estimated")]
    assert comps["fuel/tank"]["density_kg_m3"] == pytest.approx(4.0 / 0.004, rel=1e-12)  # implied by the mass
    assert comps["body/weight"]["inertia_source"] == "point"
    groups = {g["path"]: g for g in report["groups"]}
    assert groups["body"]["parts"] == 2 and groups["body"]["mass_kg"] == pytest.approx(100.0)
    assert_close(groups["fuel"]["cg_m"], [-1.2, 0.0, -0.1], 1e-15)
    assert report["maturity_kg"] == pytest.approx({"estimated": 4.0, "calculated": 80.0, "measured": 20.0})
    assert report["cautions"] and "scrutineers" in report["cautions"][0]


def test_report_is_plain_json(report: dict) -> None:
    again = json.loads(json.dumps(report, allow_nan=False))
    assert again["mass_kg"] == report["mass_kg"]


def test_inertia_about_a_point_and_in_axes(car: Path) -> None:
    mass, cg, tensor = expected_total()
    point = np.array([0.0, 0.0, -0.3])
    turn = math.radians(30.0)
    axes = np.array([[math.cos(turn), math.sin(turn), 0.0], [-math.sin(turn), math.cos(turn), 0.0], [0, 0, 1.0]])
    report = build_report(load_model(car), [InertiaRequest(point, label="ground"),
                                            InertiaRequest(None, axes, label="cg", axes_label="turned")])
    ground, turned = report["inertia_about_points"]
    about_point = tensor + steiner(mass, cg - point)  # parallel-axis theorem
    assert ground["point_m"] == [0.0, 0.0, -0.3] and ground["axes"] == np.eye(3).tolist()
    assert_close(ground["inertia_kg_m2"], about_point, 1e-12)
    assert_close(turned["point_m"], cg, 1e-15)
    assert_close(turned["inertia_kg_m2"], axes @ tensor @ axes.T, 1e-12)  # passive change of axes
    # the trace (sum of moments) does not depend on the axes
    assert np.trace(turned["inertia_kg_m2"]) == pytest.approx(np.trace(tensor), rel=1e-12)


def test_terminal_text_in_si_and_mm(report: dict) -> None:
    si = format_report(report)
    mass, cg, tensor = expected_total()
    assert f"  mass            {mass:.3f} kg" in si
    assert f"  CG              ({cg[0]:.4f}, {cg[1]:.4f}, {cg[2]:.4f}) m" in si
    assert "inertia about CG (kg*m^2, model axes, tensor convention):" in si
    assert "FAIL  minimum mass without fuel" in si and "-10.00 kg" in si
    mm = format_report(report, DisplayUnits.MM)
    assert f"  CG              ({cg[0] * 1e3:.1f}, {cg[1] * 1e3:.1f}, {cg[2] * 1e3:.1f}) mm" in mm
    assert "inertia about CG (kg*mm^2, model axes, tensor convention):" in mm
    assert f"{tensor[0, 0] * 1e6:>14.0f}" in mm
    assert f"CG height above ground     {(cg[2] + 0.3) * 1e3:.1f} mm" in mm
    assert "body/block" in si and "body/block" not in format_report(report, components=False)


def test_no_negative_zero_in_tables(tmp_path: Path) -> None:
    # a part a hair to the right of the centre plane: its y rounds to zero and must not print as "-0.0000"
    text = CAR.replace("at = [-800, 0, 0]", 'at = [-800, "-1e-9 mm", "-1e-9 mm"]')
    path = tmp_path / "hair.toml"
    path.write_text(text, encoding="utf-8")
    report = build_report(load_model(path), [InertiaRequest(np.array([0.0, -1e-12, 0.0]))])
    assert report["components"][0]["cg_m"][1] < 0.0
    for units in DisplayUnits:
        text = format_report(report, units)
        assert re.search(r"-0\.0*(?![0-9])", text) is None, re.findall(r".*-0\.0*(?![0-9]).*", text)
    assert "(-0.8000, 0.0000, 0.0000)" in format_report(report)


def test_json_written_atomically(tmp_path: Path, report: dict) -> None:
    target = tmp_path / "out" / "report.json"
    write_json_atomic(report, target)
    assert json.loads(target.read_text(encoding="utf-8"))["mass_kg"] == report["mass_kg"]
    assert sorted(p.name for p in target.parent.iterdir()) == ["report.json"]  # no temporary file left
    before = target.read_bytes()
    with pytest.raises(ValueError):
        write_json_atomic({"mass_kg": float("nan")}, target)  # not valid JSON: refused, old file kept
    assert target.read_bytes() == before
    assert sorted(p.name for p in target.parent.iterdir()) == ["report.json"]


def test_rule_limits_are_numbers_and_the_text_is_built_from_them(report: dict) -> None:
    from massmodel.report.rules import dict_limit_text, limit_text
    from massmodel.vehicle.balance import Bound

    mass_rule, _ = report["rules"]
    # the text the report prints comes from the numbers of the JSON (110 kg minimum, written above)
    assert dict_limit_text(mass_rule) == ">= 110.00 kg"
    assert ">= 110.00 kg" in format_report(report)
    assert limit_text(Bound.AT_MOST, None, 0.31, "m") == "<= 0.3100 m"
    assert limit_text("between", 0.428, 0.46, "fraction") == "0.4280 .. 0.4600 fraction"
    with pytest.raises(ValueError):
        limit_text("above", 1.0, None, "kg")  # not a bound kind


# --- streamed components (build_report(stream=True)): the same report, never held whole --------------------------

def _streamed_and_whole(path: Path) -> tuple[dict, dict]:
    model = load_model(path)
    return build_report(model, stream=True), build_report(model)


@pytest.mark.parametrize("which", ["demo", "patterned"])
def test_streamed_report_equals_the_whole_one(tmp_path: Path, which: str) -> None:
    import io

    from massmodel.report.summary import _BLOCK, ComponentEntries, json_text, write_report_text

    if which == "demo":
        path = Path(__file__).resolve().parents[1] / "parts_demo" / "brindlecombe_bl3.toml"
    else:  # more parts than a block of the conversion, so that block edges are crossed
        path = tmp_path / "many.toml"
        path.write_text(CAR.replace('at = [-1200, 0, -100]', 'at = [-1200, 0, -100]\npattern = { count = '
                                    f'{2 * _BLOCK + 3}, step = [0.5, 0, 0] }}'), encoding="utf-8")
    streamed, whole = _streamed_and_whole(path)
    entries = streamed["components"]
    assert isinstance(entries, ComponentEntries) and len(entries) == len(whole["components"])
    assert list(entries) == whole["components"]  # the same dictionaries, number for number
    assert {k: v for k, v in streamed.items() if k != "components"} == {k: v for k, v in whole.items()
                                                                        if k != "components"}
    assert json_text(streamed) == json_text(whole)
    write_json_atomic(streamed, tmp_path / "streamed.json")
    write_json_atomic(whole, tmp_path / "whole.json")
    assert (tmp_path / "streamed.json").read_bytes() == (tmp_path / "whole.json").read_bytes()
    assert json.loads((tmp_path / "streamed.json").read_text(encoding="utf-8"))["components"] == whole["components"]
    for units in DisplayUnits:
        for components in (True, False):
            out = io.StringIO()
            write_report_text(streamed, out, units, components=components)
            assert out.getvalue() == format_report(whole, units, components=components) + "\n"
            assert format_report(streamed, units, components=components) == format_report(whole, units, components)


def test_streamed_json_goes_into_the_temporary_file(tmp_path: Path, car: Path) -> None:
    # a value refused after the components were written: the earlier file stays, no temporary file is left
    streamed = build_report(load_model(car), stream=True)
    target = tmp_path / "out" / "report.json"
    write_json_atomic(streamed, target)
    before = target.read_bytes()
    with pytest.raises(ValueError):
        write_json_atomic({**streamed, "zz_after_components": float("nan")}, target)
    assert target.read_bytes() == before
    assert sorted(p.name for p in target.parent.iterdir()) == ["report.json"]


def test_no_components_stream_as_an_empty_list() -> None:
    from massmodel.core.model import Model
    from massmodel.report.summary import ComponentEntries, json_text

    empty = ComponentEntries(Model("empty", ()))
    assert len(empty) == 0 and list(empty) == [] and list(empty.brief()) == []
    assert json_text({"components": empty}) == json_text({"components": []}) == '{\n  "components": []\n}'


def test_report_command_streams_the_same_text_and_json(tmp_path: Path, car: Path) -> None:
    import os
    import subprocess
    import sys

    repo = Path(__file__).resolve().parents[1]
    out = tmp_path / "r.json"
    done = subprocess.run([sys.executable, "-m", "massmodel", "report", str(car), "--units", "mm", "--json", str(out)],
                          capture_output=True, text=True, env={**os.environ, "PYTHONPATH": str(repo)}, check=True)
    whole = build_report(load_model(car))
    assert done.stdout == format_report(whole, DisplayUnits.MM) + f"\n\nreport written to {out}\n"
    write_json_atomic(whole, tmp_path / "whole.json")
    assert out.read_bytes() == (tmp_path / "whole.json").read_bytes()
