"""The notebook facade (massmodel.notebook): open once, what-ifs as new objects, results, pictures.

Oracles: the same file loaded by ``load_model`` with the same overrides or load case (the facade must give the
same model), and closed forms written here — adding a point mass m at p to a body of mass M, CG c and tensor I_c
gives the CG (M c + m p)/(M + m) and the tensor I_c + μ(|r|² E − r rᵀ) about the new CG, with r = p − c and
μ = M m/(M + m) (parallel-axis theorem twice; Goldstein, Poole & Safko, Classical Mechanics, 3rd ed. §5.3). The
pound is 0.45359237 kg exactly (docs/references.md §9).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import massmodel as mm
from conftest import assert_close, assert_props_close
from massmodel.modelfile.reader import ModelFileError
from massmodel.notebook import OpenedModel, parse_mass, parse_point

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "parts_demo" / "brindlecombe_bl3.toml"

SMALL = """
[model]
name = "sled"
[units]
length = "mm"
[parameters]
plate_mass = "4 kg"
[[part]]
path = "body/plate"
shape = "box"
size = [400, 200, 10]
mass = "plate_mass"
maturity = "estimated"
at = [0, 0, 100]
[[part]]
path = "ballast/block"
shape = "point"
mass = "2 kg"
maturity = "measured"
at = [-300, 0, 50]
[[case]]
name = "heavy"
set = { plate_mass = "6 kg" }
"""


@pytest.fixture(scope="module")
def car() -> OpenedModel:
    return mm.open_model(DEMO)


def test_open_model_gives_the_loaded_model(car: OpenedModel) -> None:
    assert_props_close(car.mass_properties(), mm.load_model(DEMO).mass_properties(), rtol=1e-12)
    assert car.case == "base" and dict(car.overrides) == {} and car.edits == ()
    assert repr(car) == "<OpenedModel " + repr(car.model).removeprefix("<Model ")
    assert len(repr(car)) < 120


def test_with_parameters_and_with_case_match_load_model(car: OpenedModel) -> None:
    light = car.with_parameters(fuel_mass="10 kg")
    assert_props_close(light.mass_properties(),
                       mm.load_model(DEMO, overrides={"fuel_mass": "10 kg"}).mass_properties(), rtol=1e-12)
    quali = car.with_case("qualifying")
    assert quali.model.case == "qualifying"
    assert_props_close(quali.mass_properties(), mm.load_model(DEMO, case="qualifying").mass_properties(), rtol=1e-12)
    # the original is unchanged (immutable what-ifs)
    assert_props_close(car.mass_properties(), mm.load_model(DEMO).mass_properties(), rtol=1e-12)
    assert "fuel_mass = 10 kg" in repr(light) and "case 'qualifying'" in repr(quali)
    with pytest.raises(AttributeError):
        light.case = "base"  # type: ignore[misc]


def test_the_file_is_read_once(tmp_path: Path) -> None:
    path = tmp_path / "sled.toml"
    path.write_text(SMALL, encoding="utf-8")
    sled = mm.open_model(path)
    path.unlink()  # every what-if below re-evaluates the source read above
    heavy = sled.with_case("heavy")
    assert heavy.mass_properties().mass == pytest.approx(8.0, rel=1e-12)
    assert sled.with_parameters(plate_mass="1 kg").mass_properties().mass == pytest.approx(3.0, rel=1e-12)
    # parameters set after the case win over the case's own (as --set does)
    assert heavy.with_parameters(plate_mass="1 kg").mass_properties().mass == pytest.approx(3.0, rel=1e-12)
    # a what-if given before another is kept when the other is asked (edits replay on every rebuild)
    both = sled.without("ballast").with_parameters(plate_mass="5 kg")
    assert both.mass_properties().mass == pytest.approx(5.0, rel=1e-12)


def test_point_mass_and_with_part_follow_the_closed_form(car: OpenedModel) -> None:
    probe = mm.point_mass("probe", "5 kg", "-1500, 0, -200 mm", group="ballast")
    assert probe.path == "ballast/probe" and probe.props.mass == 5.0
    assert_close(probe.props.center, [-1.5, 0.0, -0.2], 1e-15)
    before = car.mass_properties()
    after = car.with_part(probe).mass_properties()
    big_m, m = before.mass, 5.0
    p = np.array([-1.5, 0.0, -0.2])
    r = p - before.center
    mu = big_m * m / (big_m + m)
    assert after.mass == pytest.approx(big_m + m, rel=1e-12)
    assert_close(after.center, (big_m * before.center + m * p) / (big_m + m), 1e-12, "CG")
    assert_close(after.inertia, before.inertia + mu * (r @ r * np.eye(3) - np.outer(r, r)), 1e-10, "inertia")
    # the part added to the built model directly equals the source re-evaluated with the edit replayed
    assert_props_close(car.with_part(probe).with_parameters().mass_properties(), after, rtol=1e-12)


def test_without_removes_parts_and_groups(car: OpenedModel) -> None:
    fuel = sum(c.props.mass for c in car.model.components if c.path.startswith("fuel/"))
    assert fuel > 0
    dry = car.without("fuel")
    assert dry.mass_properties().mass == pytest.approx(car.mass_properties().mass - fuel, rel=1e-12)
    assert all(not c.path.startswith("fuel/") for c in dry.model.components)
    one = car.without("ballast/seat_block")
    assert len(one.model.components) == len(car.model.components) - 1
    with pytest.raises(KeyError, match="did you mean fuel"):
        car.without("fule")
    with pytest.raises(ValueError, match="part or group paths"):
        car.without("")


def test_with_part_refuses_a_path_in_use(car: OpenedModel) -> None:
    twin = mm.point_mass("seat_block", 1.0, [0.0, 0.0, 0.0], group="ballast")
    with pytest.raises(ValueError, match="already has a part 'ballast/seat_block'"):
        car.with_part(twin)
    assert car.without("ballast/seat_block").with_part(twin).model.component("ballast/seat_block").props.mass == 1.0


def test_results_of_the_facade(car: OpenedModel, tmp_path: Path) -> None:
    model = car.model
    rules = car.check_rules()
    assert isinstance(rules, mm.RuleResults) and list(rules) == mm.check_rules(model)
    assert list(car.check_rules(case="qualifying")) == mm.check_rules(mm.load_model(DEMO, case="qualifying"))
    bal = car.balance()
    expected = mm.static_balance(model.mass_properties(), model.vehicle)
    assert bal.front == pytest.approx(expected.front, rel=1e-12) and bal.cg_height == pytest.approx(expected.cg_height)
    report = car.report()
    assert report.data["mass_kg"] == pytest.approx(model.mass_properties().mass, rel=1e-12)
    assert report.rules == rules
    out = report.write_json(tmp_path / "report.json")
    assert json.loads(out.read_text())["mass_kg"] == report.data["mass_kg"]


def test_parse_point_and_mass() -> None:
    assert_close(parse_point("-1500, 0, -200 mm"), [-1.5, 0.0, -0.2], 1e-15)
    assert_close(parse_point("-1.5 m, 0, 20 cm"), [-1.5, 0.0, 0.2], 1e-15)
    assert_close(parse_point(["1 in", "0", "-2 in"]), [0.0254, 0.0, -0.0508], 1e-15)  # 1 in = 0.0254 m exactly
    assert_close(parse_point([1.0, 2.0, 3.0]), [1.0, 2.0, 3.0], 0.0)
    assert parse_mass("11 lb") == pytest.approx(11 * 0.45359237, rel=1e-15)
    assert parse_mass(5) == 5.0
    for bad, message in [("1, 2", "three values"), ("1, 2, 3", "has no unit"), ("1, 2, 3 kg", "not a length"),
                         ("1 kg, 2 m, 3 m", "expected a length")]:
        with pytest.raises(ValueError, match=message):
            parse_point(bad)
    for bad_mass, message in [("5 m", "expected a mass"), (-1.0, "positive"), ("0 kg", "positive"), (True, "number")]:
        with pytest.raises(ValueError, match=message):
            parse_mass(bad_mass)


def test_user_mistakes_name_the_item(car: OpenedModel) -> None:
    with pytest.raises(ModelFileError, match="unknown parameter"):
        car.with_parameters(fule_mass="10 kg")
    with pytest.raises(ModelFileError, match="no such load case"):
        car.with_case("quali")
    with pytest.raises(ValueError, match="unknown view"):
        car.picture(view="rear")
    with pytest.raises(TypeError, match="takes a Component"):
        car.with_part("probe")  # type: ignore[arg-type]


def test_html_views_escape_and_list_the_what_ifs(car: OpenedModel) -> None:
    probe = mm.point_mass("<probe>", "5 kg", "-1500, 0, -200 mm")
    html_text = car.with_part(probe).without("fuel")._repr_html_()
    assert "<probe>" not in html_text and "add &lt;probe&gt; (5 kg)" in html_text and "without fuel" in html_text
    assert "Brindlecombe BL-3" in car.report()._repr_html_()


def test_picture_is_an_image(car: OpenedModel) -> None:
    from massmodel.pictures.viewer import renderer_problem

    problem = renderer_problem()
    if problem:
        pytest.skip(problem)
    img = car.picture(view="side", size=(800, 500))
    assert img.size == (800, 500) and img.mode == "RGB"
    pixels = np.asarray(img)
    assert len(np.unique(pixels.reshape(-1, 3), axis=0)) > 50  # a drawing, not a blank page


def test_facade_is_loaded_on_first_use_and_import_stays_light() -> None:
    script = (
        "import json, sys, massmodel as mm\n"
        "before = 'massmodel.notebook' in sys.modules\n"
        "car = mm.open_model(sys.argv[1]); car.report(); car.check_rules()\n"
        "heavy = sorted({n.split('.')[0] for n in sys.modules} & {'vtk', 'pyvista', 'matplotlib', 'PIL', 'cadquery'})\n"
        "print(json.dumps({'before': before, 'after': 'massmodel.notebook' in sys.modules, 'heavy': heavy,\n"
        "                  'listed': all(n in dir(mm) for n in ('open_model', 'point_mass', 'OpenedModel'))}))\n"
    )
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    result = subprocess.run([sys.executable, "-c", script, str(DEMO)], cwd=REPO, env=env, capture_output=True,
                            text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    assert json.loads(result.stdout) == {"before": False, "after": True, "heavy": [], "listed": True}
