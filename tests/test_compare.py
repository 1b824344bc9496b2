"""The comparison of one item: mass, CG offset, tensor terms, principal moments and axes, against tolerances.

Closed forms written here: the box tensor m(b² + c²)/12 and cyclic (Machinery's Handbook 31st ed. p. 253); a
tensor turned by θ about z, I' = R I Rᵀ, has I'_xy = sinθ cosθ (I_xx − I_yy) (Goldstein et al., Classical Mechanics,
3rd ed., §5.4); the principal axes of a turned body turn with it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from cad_bodies import BASE_SPEC, load_bodies_model, occ_props, write_estimate

from conftest import assert_close
from massmodel.compare.check import Tolerances, compare, compare_item, model_side
from massmodel.compare.crosscheck import check_estimate
from massmodel.compare.estimate import EstimateError, loads_estimate
from massmodel.core.massprops import MassProperties


def box(m, a, b, c, center=(0.1, -0.2, 0.3)):
    # Machinery's Handbook 31st ed. p. 253: I_a = m(b² + c²)/12 and cyclic.
    return MassProperties(m, center, np.diag([m * (b * b + c * c) / 12, m * (a * a + c * c) / 12,
                                              m * (a * a + b * b) / 12]))


def rz(theta):
    c, s = math.cos(theta), math.sin(theta)
    return np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])


TOL = Tolerances()


def test_identical_items_agree_exactly():
    mp = box(5.0, 0.12, 0.09, 0.07)
    it = compare_item("*", mp, mp, TOL)
    assert it.passed and all(v == 0.0 for v in it.ratios.values())
    assert it.axis_angle.tolist() == [0.0, 0.0, 0.0] and it.axis_note == ""


def test_mass_difference_scales_every_moment_alike():
    m, est = box(5.0, 0.12, 0.09, 0.07), box(5.075, 0.12, 0.09, 0.07)  # 1.5 % heavier, same shape
    it = compare_item("*", m, est, TOL)
    assert it.mass_diff == pytest.approx(0.075, rel=1e-12) and it.mass_rel == pytest.approx(0.015, rel=1e-12)
    assert_close(it.moment_rel, [0.015] * 3, 1e-12, "moments")
    izz = 5.0 * (0.12**2 + 0.09**2) / 12  # the largest moment of the model
    assert it.largest_moment == pytest.approx(izz, rel=1e-14)
    assert it.term_rel[0, 0] == pytest.approx(0.015 * 5.0 * (0.09**2 + 0.07**2) / 12 / izz, rel=1e-12)
    assert it.ratios["mass"] == pytest.approx(1.5, rel=1e-12) and not it.passed
    assert it.worst == ("mass", pytest.approx(1.5, rel=1e-12))
    assert it.describe_worst() == "mass +1.5 %"


def test_cg_offset_per_axis_and_total():
    m = box(5.0, 0.12, 0.09, 0.07)
    est = MassProperties(m.mass, m.center + np.array([0.001, -0.002, 0.003]), m.inertia)
    it = compare_item("*", m, est, TOL)
    assert_close(it.cg_diff, [0.001, -0.002, 0.003], 1e-12, "per axis")
    assert it.cg_offset == pytest.approx(math.sqrt(14.0) * 1e-3, rel=1e-12)
    assert it.ratios["cg"] == pytest.approx(math.sqrt(14.0) / 5.0, rel=1e-12)


def test_a_turned_estimate_gives_the_turn_angle_between_principal_axes_and_the_product_difference():
    m = box(5.0, 0.12, 0.09, 0.07)  # I_xx < I_yy < I_zz: principal axes x, y, z in that order
    theta = math.radians(1.5)
    r = rz(theta)
    est = MassProperties(m.mass, m.center, r @ m.inertia @ r.T)
    it = compare_item("*", m, est, TOL)
    assert_close(np.degrees(it.axis_angle), [1.5, 1.5, 0.0], 1e-9, "axis angles")
    expected_xy = math.sin(theta) * math.cos(theta) * (m.inertia[0, 0] - m.inertia[1, 1])
    assert it.term_diff[0, 1] == pytest.approx(expected_xy, rel=1e-9)
    assert it.worst_term == "xy"
    assert it.ratios["axis"] == pytest.approx(0.5, rel=1e-9) and it.passed
    assert np.max(np.abs(it.moment_rel)) < 1e-12  # moments do not change under a turn


def test_near_degenerate_moments_compare_the_pair_as_a_plane():
    # Cylinder r = 40 mm, L = 200 mm along z: I_axis = m r²/2 < I_transverse = m(3r² + L²)/12 (twice).
    mass, r, length = 2.0, 0.04, 0.2
    it_axis, it_trans = mass * r * r / 2, mass * (3 * r * r + length**2) / 12
    m = MassProperties(mass, (0, 0, 0), np.diag([it_trans, it_trans, it_axis]))
    tilt = math.radians(1.0)
    rx = np.array([[1, 0, 0], [0, math.cos(tilt), -math.sin(tilt)], [0, math.sin(tilt), math.cos(tilt)]])
    est = MassProperties(mass, (0, 0, 0), rx @ m.inertia @ rx.T)
    it = compare_item("*", m, est, TOL)
    assert math.degrees(it.axis_angle[0]) == pytest.approx(1.0, rel=1e-9)  # the cylinder axis, lowest moment
    assert np.isnan(it.axis_angle[1]) and np.isnan(it.axis_angle[2])
    assert it.axis_note.startswith("axes 2 and 3: moments within 5 % of the largest")
    # A sphere-like body: no axis can be compared.
    ball = MassProperties(1.0, (0, 0, 0), np.diag([1.0, 1.01, 1.02]))
    it = compare_item("*", ball, ball, TOL)
    assert np.all(np.isnan(it.axis_angle)) and it.axis_note.startswith("all principal moments within 5 %")
    assert it.ratios["axis"] == 0.0


def test_point_mass_items_compare_without_dividing_by_zero():
    m = MassProperties.point(1.0, (0, 0, 0))
    it = compare_item("p", m, m, TOL)
    assert it.passed and it.axis_note == "no inertia: principal axes not compared"
    est = box(1.0, 0.1, 0.1, 0.1, center=(0, 0, 0))
    it = compare_item("p", m, est, TOL)
    assert it.largest_moment == pytest.approx(1.0 * 0.02 / 12, rel=1e-14)  # the estimate's, as the model has none
    assert it.ratios["term"] == pytest.approx(1.0 / 0.02, rel=1e-12)


def test_whole_first_then_worst_first():
    m = box(5.0, 0.12, 0.09, 0.07)
    cmp = compare(["g1", "*", "g2"], [m, m, m], [box(5.01, 0.12, 0.09, 0.07), m, box(5.04, 0.12, 0.09, 0.07)], TOL)
    assert [it.group for it in cmp.items] == ["*", "g2", "g1"]
    assert cmp.worst_item.group == "g2" and cmp.score == pytest.approx(0.8, rel=1e-9) and cmp.passed


def test_tolerances_must_be_positive():
    with pytest.raises(ValueError, match="tolerance 'cg' must be a positive number"):
        Tolerances(cg=0.0)
    assert Tolerances().to_dict()["principal_axis_angle_deg"] == pytest.approx(3.0)


def test_groups_are_matched_to_the_model_and_errors_name_the_item(tmp_path):
    model = load_bodies_model()
    props = occ_props()
    path = write_estimate(tmp_path / "e.json", {"*": props["b"], "b": props["b"]}, BASE_SPEC)
    from massmodel.compare.estimate import load_estimate

    est = load_estimate(path)
    result = check_estimate(model, est, selection="b")
    assert result.passed and result.as_declared.score < 1e-9
    sides = model_side(model, est, "b")
    assert sides[0].mass == pytest.approx(model.mass_properties(["b"]).mass, rel=1e-15)
    with pytest.raises(ValueError, match=r"--group: no group or part 'bb' in model 'test bodies'; did you mean 'b'"):
        model_side(model, est, "bb")
    with pytest.raises(EstimateError, match=r"items\[1\] \(group 'b'\), field 'group': 'b' lies outside the compared "
                                            r"group 'a'"):
        model_side(model, est, "a")
    text = path.read_text().replace('"group": "b"', '"group": "b/pukc"')
    with pytest.raises(EstimateError, match=r"field 'group': no group or part 'b/pukc' in model 'test bodies'; "
                                            r"did you mean 'b/puck'"):
        model_side(model, loads_estimate(text, "e.json"))


def test_json_of_a_check_carries_units_and_the_declaration(tmp_path):
    model = load_bodies_model()
    props = occ_props()
    path = write_estimate(tmp_path / "e.json", props, BASE_SPEC.with_(products="positive"), BASE_SPEC)
    from massmodel.compare.estimate import load_estimate

    d = check_estimate(model, load_estimate(path)).to_dict()
    assert d["format"] == "massmodel-crossweigh/1" and d["passed"] is False
    assert d["estimate"]["declared"]["products"] == "negative"
    item = d["as_declared"]["items"][0]
    assert item["group"] == "*" and set(item["ratio_to_tolerance"]) == {"mass", "cg", "term", "moment", "axis"}
    assert item["cg_offset_total_m"] == pytest.approx(0.0, abs=1e-15)
    assert d["diagnosis"]["explanation"]["reinterpretations"][0] == {
        "kind": "products", "reading": {"products": "positive"}, "cost": 1,
        "says": "the products of inertia are in the positive convention (P_xy = +∫xy dm), not the declared negative "
                "one (I_xy = -∫xy dm)"}
    assert d["diagnosis"]["explanation"]["passed"] is True


def test_comparison_and_diagnosis_import_without_the_cad_kernel():
    import subprocess
    import sys

    code = ("import sys, massmodel.compare.estimate, massmodel.compare.check, massmodel.compare.diagnose, massmodel.cli.compare; "
            "print(sorted({m.split('.')[0] for m in sys.modules} & {'cadquery', 'OCP', 'trimesh', 'pyvista'}))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
