"""The core commands (report, check, materials) through massmodel.cli.main, in-process."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from test_report import CAR, expected_total, steiner

from conftest import assert_close
from massmodel.cli import EXIT_FAIL, EXIT_USAGE, main

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "parts_demo" / "brindlecombe_bl3.toml"


@pytest.fixture
def car(tmp_path: Path) -> Path:
    path = tmp_path / "car.toml"
    path.write_text(CAR, encoding="utf-8")
    return path


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_report_prints_tables_and_writes_json(capsys, car: Path, tmp_path: Path) -> None:
    out_json = tmp_path / "exports" / "report.json"
    code, out, err = run(capsys, "report", car, "--json", out_json)
    assert (code, err) == (0, f"massmodel report: created folder {out_json.parent}\n")
    for heading in ("COMPONENT BUDGET (3 parts)", "GROUPS", "TOTAL", "VEHICLE BALANCE (static)", "RULE CHECKS",
                    "CAUTIONS"):
        assert heading in out
    assert out.rstrip().endswith(f"report written to {out_json}")
    data = json.loads(out_json.read_text(encoding="utf-8"))
    assert data["mass_kg"] == pytest.approx(104.0)
    assert sorted(p.name for p in out_json.parent.iterdir()) == ["report.json"]


def test_report_strict_fails_on_a_failing_rule(capsys, car: Path) -> None:
    assert run(capsys, "report", car, "--strict")[0] == EXIT_FAIL
    assert run(capsys, "report", car, "--strict", "--brief")[0] == EXIT_FAIL
    passing = car.read_text(encoding="utf-8").replace('limit = "110 kg"', 'limit = "100 kg"')
    car.write_text(passing, encoding="utf-8")
    code, out, _ = run(capsys, "report", car, "--strict", "--brief")
    assert code == 0 and "all rules pass" in out and "COMPONENT BUDGET" not in out


def test_report_units_mm(capsys, car: Path) -> None:
    _, cg, _ = expected_total()
    code, out, _ = run(capsys, "report", car, "--units", "mm")
    assert code == 0
    assert f"({cg[0] * 1e3:.1f}, {cg[1] * 1e3:.1f}, {cg[2] * 1e3:.1f}) mm" in out
    assert "kg*mm^2" in out


def test_report_set_override(capsys, tmp_path: Path) -> None:
    path = tmp_path / "p.toml"
    path.write_text('[model]\nname = "p"\n[parameters]\nweight = "2 kg"\n[[part]]\npath = "a"\nshape = "point"\n'
                    'mass = "weight"\nmaturity = "measured"\n', encoding="utf-8")
    out_json = tmp_path / "r.json"
    assert run(capsys, "report", path, "--set", "weight=3.5 kg", "--json", out_json)[0] == 0
    assert json.loads(out_json.read_text(encoding="utf-8"))["mass_kg"] == 3.5


def test_report_inertia_about_points(capsys, car: Path, tmp_path: Path) -> None:
    mass, cg, tensor = expected_total()
    out_json = tmp_path / "r.json"
    code, out, err = run(capsys, "report", car, "--json", out_json, "--inertia-about", "0 mm, 0 mm, -300 mm",
                         "--inertia-about", "cg", "--inertia-axes", "extrinsic z: 90 deg")
    assert (code, err) == (0, "")
    ground, at_cg = json.loads(out_json.read_text(encoding="utf-8"))["inertia_about_points"]
    # rotating the model axes by +90 deg about z: the new x axis is model +y, the new y axis is model -x
    axes = np.array([[0.0, 1.0, 0.0], [-1.0, 0.0, 0.0], [0.0, 0.0, 1.0]])
    assert_close(ground["axes"], axes, 1e-15)
    assert_close(ground["point_m"], [0.0, 0.0, -0.3], 1e-15)
    assert_close(ground["inertia_kg_m2"], axes @ (tensor + steiner(mass, cg - [0, 0, -0.3])) @ axes.T, 1e-12)
    assert_close(at_cg["inertia_kg_m2"], axes @ tensor @ axes.T, 1e-12)
    assert "inertia about point (0.0000, 0.0000, -0.3000) m (model coordinates, given as '0 mm, 0 mm, -300 mm')" in out
    assert "inertia about the CG" in out


def test_report_inertia_in_vehicle_axes_uses_parameters(capsys, tmp_path: Path) -> None:
    # SAE J670e axes (x forward, y right, z down; docs/references.md §4): vehicle axes are (+x, -y, -z) in model axes
    text = """
[model]
name = "sae"
[units]
length = "mm"
[parameters]
ground = "300 mm"
[vehicle]
axes = { forward = "+x", left = "-y", up = "-z" }
wheelbase = 2000
track_front = 1500
track_rear = 1400
ground_level = "-ground"
[[part]]
path = "a"
shape = "box"
size = [1000, 400, 200]
density = "1000 kg/m^3"
maturity = "calculated"
at = [-800, 0, 0]
rotate = { extrinsic = "x", angles = ["30 deg"] }
"""
    path = tmp_path / "sae.toml"
    path.write_text(text, encoding="utf-8")
    out_json = tmp_path / "r.json"
    code, _, err = run(capsys, "report", path, "--json", out_json, "--inertia-about", "0, 0, ground",
                       "--inertia-axes", "vehicle")
    assert (code, err) == (0, "")
    (entry,) = json.loads(out_json.read_text(encoding="utf-8"))["inertia_about_points"]
    m = 80.0
    c, s = math.cos(math.radians(30.0)), math.sin(math.radians(30.0))
    r = np.array([[1, 0, 0], [0, c, -s], [0, s, c]])
    tensor = r @ (m / 12 * np.diag([0.2, 1.04, 1.16])) @ r.T + steiner(m, np.array([-0.8, 0.0, -0.3]))
    basis = np.diag([1.0, -1.0, -1.0])
    assert_close(entry["inertia_kg_m2"], basis @ tensor @ basis.T, 1e-12)
    assert entry["axes_label"] == "vehicle"


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--inertia-about", "0, 0"], "expected three coordinates"),
        (["--inertia-about", "0, 0, 5 kg"], "z: expected a length"),
        (["--inertia-about", "0, 0, 5"], "z: expected a length"),
        (["--inertia-about", "0, 0, __import__('os')"], "unknown function '__import__'"),
        (["--inertia-about", "1e300 mm, 0, 0"], "x: 1e+297 m is farther than 1e+06 m"),
        (["--inertia-about", "cg", "--inertia-axes", "sideways"], "expected 'model', 'vehicle' or a rotation"),
        (["--inertia-about", "cg", "--inertia-axes", "extrinsic xy: 5 deg"], "expected 2 angles"),
        (["--inertia-about", "cg", "--inertia-axes", "extrinsic x: 5"], "angles need a unit"),
    ],
)
def test_report_bad_inertia_options(capsys, car: Path, args: list[str], fragment: str) -> None:
    code, out, err = run(capsys, "report", car, *args)
    assert code == EXIT_USAGE and out == ""
    assert err.startswith("massmodel report: error: --inertia-") and fragment in err
    assert len(err.splitlines()) == 1


def test_check_validates_and_lists_failing_rules(capsys, car: Path) -> None:
    code, out, err = run(capsys, "check", car)
    assert (code, err) == (0, "")
    lines = out.splitlines()
    assert lines[0] == f"{car}: valid · 3 parts · 2 groups · 0 slots · 2 rule checks (1 failing)"
    assert lines[1] == "  FAIL minimum mass without fuel: 100 kg, limit >= 110.00 kg, margin -10 kg"
    assert len(lines) == 2


def test_check_on_a_broken_file(capsys, car: Path) -> None:
    car.write_text(CAR.replace('density = "1000 kg/m^3"', 'density = "1000 kg/m^3 + 2 mm"'), encoding="utf-8")
    code, out, err = run(capsys, "check", car)
    assert code == EXIT_USAGE and out == ""
    assert err == (f"massmodel check: error: {car}: part 'body/block', field 'density': cannot add "
                   "density (kg/m^3) and length (m) (in '1000 kg/m^3 + 2 mm', at character 13)\n")


def test_materials_lists_the_library(capsys) -> None:
    code, out, err = run(capsys, "materials")
    assert (code, err) == (0, "")
    lines = out.splitlines()
    assert lines[0].split() == ["material", "kg/m^3", "band", "kg/m^3", "flag", "source"]
    rows = {line.split()[0]: line for line in lines[2:]}
    # ASTM B777-15 Table 1, Class 1: 16.85-17.30 g/cm^3 (nominal = mid-band, massmodel's choice)
    assert rows["tungsten_b777_class1"].split()[1:5] == ["17075", "16850", "..", "17300"]
    assert rows["structural_steel"].split()[1:4] == ["7850", "-", "R2"]  # EN 1993-1-1 §3.2.6
    assert "ASTM B777-15" in rows["tungsten_b777_class4"]


def test_demo_car_reports(capsys, tmp_path: Path) -> None:
    out_json = tmp_path / "demo.json"
    code, out, err = run(capsys, "report", DEMO, "--json", out_json, "--brief")
    assert (code, err) == (0, "")
    data = json.loads(out_json.read_text(encoding="utf-8"))
    assert len(data["components"]) >= 60
    assert {"material", "mass", "measured"} <= {c["mass_source"] for c in data["components"]}
    assert {c["maturity"] for c in data["components"]} == {"estimated", "calculated", "measured"}
    assert data["mass_kg"] == pytest.approx(sum(c["mass_kg"] for c in data["components"]), rel=1e-12)
