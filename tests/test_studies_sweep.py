"""Parameter sweeps, the partial rebuild and one-at-a-time sensitivities (massmodel.studies.sweep / evaluate)."""

from __future__ import annotations

import ast
from pathlib import Path

import numpy as np
import pytest

from massmodel.modelfile.loader import build_model, read_source, source_from_text
from massmodel.studies.evaluate import Evaluator, affected_parameters
from massmodel.studies.outputs import OutputPlan, evaluate_outputs, select_outputs
from massmodel.studies.sweep import Study, grid_points, parse_range, parse_step, sensitivity, sweep
from massmodel.vehicle.balance import check_rules

ROOT = Path(__file__).resolve().parents[1]
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"

# A fixed body and a movable point ballast: x_cg(p) = (M x0 + m p) / (M + m) exactly (first moments; Goldstein,
# Poole & Safko 2002, §5.3, centre of mass of a system of particles). With the front axle at x = 0 and the rear at
# x = -L, the front axle carries m_tot (x_cg + L) / L (moments about the rear axle; Jazar 2008 ch. 2, from memory).
SIMPLE = """
[model]
name = "sweep test"
[units]
length = "mm"
mass = "kg"
[parameters]
ballast_x = "-500 mm"
ballast_mass = "10 kg"
body_mass = "300 kg"
[vehicle]
wheelbase = "2000 mm"
track_front = "1400 mm"
track_rear = "1400 mm"
front_axle_station = "0 mm"
ground_level = "-300 mm"
[[part]]
path = "body/tub"
shape = "point"
mass = "body_mass"
maturity = "calculated"
at = [-1200, 0, 0]
[[part]]
path = "body/other"
shape = "box"
size = [100, 100, 100]
mass = "20 kg"
maturity = "measured"
at = [-1200, 0, 0]
[[part]]
path = "ballast/block"
shape = "point"
mass = "ballast_mass"
maturity = "calculated"
at = ["ballast_x", 0, 0]
[[rule]]
name = "front share"
check = "front_fraction"
min = 0.38
max = 0.42
[[rule]]
name = "minimum mass"
check = "min_mass"
limit = "325 kg"
exclude = ["ballast"]
"""


def test_sweep_of_a_position_follows_the_closed_form_cg_shift() -> None:
    source = source_from_text(SIMPLE)
    base = build_model(source)
    r = parse_range("ballast_x=-200mm:-1800mm:9", base)
    result = sweep(Study(source, ("ballast_x",)), [r])
    p = np.linspace(-0.2, -1.8, 9)
    big, x0, m = 320.0, -1.2, 10.0
    expected_x = (big * x0 + m * p) / (big + m)
    np.testing.assert_allclose(result.column("cg_x"), expected_x, rtol=0, atol=1e-12)
    np.testing.assert_allclose(result.column("front_share"), (expected_x + 2.0) / 2.0, rtol=0, atol=1e-12)
    np.testing.assert_allclose(result.column("mass"), 330.0, rtol=0, atol=1e-12)
    np.testing.assert_allclose(result.points[:, 0], p, rtol=0, atol=1e-15)
    # the rule margin: min(value - 0.38, 0.42 - value); the mass rule leaves the ballast out: 320 - 325
    share = (expected_x + 2.0) / 2.0
    np.testing.assert_allclose(result.column("margin_front_share"), np.minimum(share - 0.38, 0.42 - share), atol=1e-12)
    np.testing.assert_allclose(result.column("margin_minimum_mass"), -5.0, atol=1e-12)
    worst = {result.outputs[i].key: k for i, k in result.worst()}
    assert worst["margin_front_share"] in (0, 8)  # the ends of the range are farthest from the band's middle
    assert result.rules[0].lower == 0.38 and result.rules[0].upper == 0.42
    assert "rebuilds the 1 of 3 parts" in result.method


def test_grid_of_two_parameters_varies_the_last_fastest() -> None:
    source = source_from_text(SIMPLE)
    base = build_model(source)
    ranges = [parse_range("ballast_x=-200mm,-400mm", base), parse_range("ballast_mass=5kg:15kg:3", base)]
    assert grid_points(ranges) == [
        {"ballast_x": ranges[0].texts[i], "ballast_mass": ranges[1].texts[j]} for i in range(2) for j in range(3)]
    result = sweep(Study(source, ("ballast_x", "ballast_mass")), ranges)
    for (x, m), cg in zip(result.points, result.column("cg_x"), strict=True):
        assert cg == pytest.approx((320.0 * -1.2 + m * x) / (320.0 + m), abs=1e-12)


@pytest.mark.parametrize(("spec", "message"), [
    ("nosuch=1kg:2kg:3", "unknown parameter 'nosuch'"),
    ("ballast_x=0mm:1mm:0", "STEPS must be at least 1"),
    ("ballast_x=0mm:1mm:-2", "STEPS must be at least 1"),
    ("ballast_x=0mm:1mm:two", "STEPS must be a whole number"),
    ("ballast_x=1kg:2kg:3", "is in kg, the parameter is in m"),
    ("ballast_x", "expected name=FROM:TO:STEPS"),
])
def test_bad_ranges_are_one_line_errors(spec: str, message: str) -> None:
    base = build_model(source_from_text(SIMPLE))
    with pytest.raises(ValueError, match=message) as info:
        parse_range(spec, base)
    assert "\n" not in str(info.value)


def test_partial_rebuild_equals_full_builds_on_the_demo_car() -> None:
    """The partial rebuild must give the model a full build gives: compared bit for bit on the demo car."""
    source = read_source(CAR)
    for varied, values, case in ((("fuel_mass",), ["5 kg", "27.5 kg"], None),
                                 (("ride_height",), ["31 mm"], "race_start"),
                                 (("driver_mass",), ["81 kg"], None),
                                 (("wheelbase",), ["2590 mm"], "qualifying")):
        fast = Evaluator(source, varied, case=case)
        slow = Evaluator(source, varied, case=case, partial=False)
        assert fast.partial and not slow.partial
        outs = select_outputs(fast.base, ())
        plan = OutputPlan(fast.base, outs)
        for v in values:
            model, total = fast.evaluate({varied[0]: v})
            reference = slow.model({varied[0]: v})
            assert [c.path for c in model.components] == [c.path for c in reference.components]
            a, b = total, reference.mass_properties()
            assert a.mass == b.mass and np.array_equal(a.center, b.center) and np.array_equal(a.inertia, b.inertia)
            assert plan.evaluate(model, total) == evaluate_outputs(reference, outs)
            assert [r.margin for r in check_rules(model)] == [r.margin for r in check_rules(reference)]
            assert {k: q.value for k, q in model.parameters.items()} == {
                k: q.value for k, q in reference.parameters.items()}


def test_partial_rebuild_falls_back_where_it_cannot_be_sure() -> None:
    text = SIMPLE.replace('limit = "325 kg"', 'limit = "body_mass + 5 kg"')
    ev = Evaluator(source_from_text(text), ("body_mass",))
    assert not ev.partial and "rule" in ev.reason
    text = SIMPLE + '[materials.ballast_alloy]\ndensity = "ballast_mass / (1 kg) * 1000 kg/m^3"\n'
    ev = Evaluator(source_from_text(text), ("ballast_mass",))
    assert not ev.partial and "material" in ev.reason
    ev = Evaluator(source_from_text(SIMPLE.replace('wheelbase = "2000 mm"', 'wheelbase = "body_mass / (150 kg) * 1 m"')),
                   ("body_mass",))
    assert ev.partial  # reaches a part and the vehicle: the reduced source keeps the vehicle
    assert affected_parameters({"a": "1 m", "b": "a * 2", "c": "b + 1 m", "d": "2 m"}, ["a"]) == {"a", "b", "c"}


def test_sensitivity_of_a_linear_model_is_its_slope() -> None:
    source = source_from_text(SIMPLE)
    base = build_model(source)
    steps = [parse_step("ballast_x=10mm", base)[:2], parse_step("body_mass=2kg", base)[:2]]
    s = sensitivity(source, steps)
    k = [o.key for o in s.outputs].index("cg_x")
    # d x_cg / d p = m / (M + m) per metre: 10 / 330 * 0.01 m per step (exact for a linear map)
    assert s.effect[0, k] == pytest.approx(10.0 / 330.0 * 0.01, abs=1e-14)
    assert s.ranking("mass") == [1, 0]
    with pytest.raises(ValueError, match="step must be above zero"):
        parse_step("ballast_x=0mm", base)


def test_studies_import_only_lower_layers() -> None:
    """massmodel.studies is layer 4: core, vehicle, uncertainty and modelfile only (and its own modules)."""
    allowed = ("massmodel.core", "massmodel.vehicle", "massmodel.uncertainty", "massmodel.modelfile",
               "massmodel.studies")
    for path in (ROOT / "massmodel" / "studies").glob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.ImportFrom) and node.level == 0 and (node.module or "").startswith("massmodel"):
                assert node.module.startswith(allowed), f"{path.name} imports {node.module}"
