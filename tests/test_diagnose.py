"""Diagnosis of convention mix-ups in CAD estimates.

Estimates are built independently: cadquery solids measured by OpenCascade (tests/cad_bodies.py, the oracle),
written in a convention, unit and reference point and then *declared* with one or two of those wrong. The
diagnosis must name the mix-up that was introduced and, read that way, agree with the model to round-off
(the model's closed forms agree with OpenCascade to ~1e-14, Machinery's Handbook 31st ed. pp. 253-254).
A real disagreement (one part 10 % heavier) must not be explained by any convention.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from cad_bodies import BASE_SPEC, BODIES, Spec, load_bodies_model, occ_props, write_estimate

from massmodel.compare.check import Tolerances
from massmodel.compare.crosscheck import check_estimate
from massmodel.compare.estimate import EstimateError, Products, ReferenceKind, load_estimate

BASE = BASE_SPEC  # a CAD frame: x rearward, y right, z up, origin away from the model's
Z_DOWN = ((1, 0, 0), (0, -1, 0), (0, 0, -1))


@pytest.fixture(scope="module")
def model():
    return load_bodies_model()


@pytest.fixture(scope="module")
def props():
    return occ_props()


def run(tmp_path, model, props, written, declared=None, fmt="json", tol=None, name="e"):
    path = write_estimate(tmp_path / f"{name}.{fmt}", props, written, declared, fmt)
    return check_estimate(model, load_estimate(path, model.vehicle), tol=tol)


def test_declared_correctly_agrees_to_roundoff_and_needs_no_diagnosis(tmp_path, model, props):
    result = run(tmp_path, model, props, BASE)
    assert result.passed and result.diagnosis is None
    # OpenCascade oracle vs closed forms: every check at round-off.
    assert result.as_declared.score < 1e-9


CASES = [
    # (written, declared, kinds, what the reading must say)
    (BASE.with_(products="positive"), BASE, ["products"], {"products": Products.POSITIVE}),
    (BASE, BASE.with_(products="positive"), ["products"], {"products": Products.NEGATIVE}),
    (BASE.with_(inertia_unit="lb*in^2"), BASE, ["inertia_unit"], {"inertia_unit": "lb*in^2"}),  # x 292.6397
    (BASE.with_(inertia_unit="g*mm^2"), BASE, ["inertia_unit"], {"inertia_unit": "g*mm^2"}),  # 10^3
    (BASE.with_(inertia_unit="kg*m^2"), BASE, ["inertia_unit"], {"inertia_unit": "kg*m^2"}),  # 10^6
    (BASE.with_(inertia_unit="g*mm^2"), BASE.with_(inertia_unit="kg*m^2"), ["inertia_unit"],
     {"inertia_unit": "g*mm^2"}),  # 10^9
    (BASE.with_(inertia_unit="lb*in*s^2"), BASE.with_(inertia_unit="lb*in^2"), ["inertia_unit"],
     {"inertia_unit": "lb*in*s^2"}),  # x 386.0886
    (BASE.with_(inertia_unit="lb*in^2"), BASE.with_(inertia_unit="lb*in*s^2"), ["inertia_unit"],
     {"inertia_unit": "lb*in^2"}),
    (BASE.with_(inertia_unit="slug*ft^2"), BASE.with_(inertia_unit="kg*m^2"), ["inertia_unit"],
     {"inertia_unit": "slug*ft^2"}),
    (BASE.with_(mass_unit="lb"), BASE, ["mass_unit"], {"mass_unit": "lb"}),
    (BASE.with_(length_unit="in"), BASE, ["length_unit"], {"length_unit": "in"}),
    (BASE.with_(mass_unit="lb", length_unit="in", inertia_unit="lb*in^2"), BASE, ["unit_system"],
     {"mass_unit": "lb", "length_unit": "in", "inertia_unit": "lb*in^2"}),
    (BASE.with_(about="origin"), BASE, ["reference"], {"reference": ReferenceKind.ORIGIN}),
    (BASE.with_(axes=Z_DOWN), BASE, ["axes"], {"axes": "x=+x, y=-y, z=-z"}),
    # pairs
    (BASE.with_(products="positive", inertia_unit="lb*in^2"), BASE, ["products", "inertia_unit"],
     {"products": Products.POSITIVE, "inertia_unit": "lb*in^2"}),
    (BASE.with_(about="origin", axes=Z_DOWN), BASE, ["reference", "axes"],
     {"reference": ReferenceKind.ORIGIN, "axes": "x=+x, y=-y, z=-z"}),
]


@pytest.mark.parametrize("fmt", ["json", "csv"])
@pytest.mark.parametrize("written, declared, kinds, reading", CASES)
def test_mixup_is_named_and_its_correction_agrees_to_roundoff(tmp_path, model, props, written, declared, kinds,
                                                              reading, fmt):
    result = run(tmp_path, model, props, written, declared, fmt)
    assert not result.passed, "the mix-up must make the comparison as declared fail"
    diag = result.diagnosis
    exp = diag.explanation
    assert exp is not None, f"nothing explained it; closest: {diag.closest and diag.closest.label}"
    assert sorted(s.kind for s in exp.steps) == sorted(kinds), exp.label
    for name, value in reading.items():
        got = getattr(exp.conventions, name)
        assert (got.text if name == "axes" else got) == value
    assert exp.roundoff and exp.relative_residual < 1e-9
    assert exp.comparison.passed and exp.comparison.score < 1e-6
    assert not diag.ambiguous
    # Never a silent fix: the declared reading is what the check reports, and it fails.
    assert result.as_declared.score > 1.0 and result.estimate.conventions.products.value == declared.products


def _signed_permutations():
    # Independent enumeration of the 48 signed permutation matrices (24 rotations, 24 mirror images).
    for perm in itertools.permutations(range(3)):
        for signs in itertools.product((1, -1), repeat=3):
            m = np.zeros((3, 3))
            for i, (j, s) in enumerate(zip(perm, signs, strict=True)):
                m[i, j] = s
            yield m


@pytest.mark.parametrize("true_axes", list(_signed_permutations()), ids=lambda m: str(m.astype(int).tolist()))
def test_every_axis_permutation_and_flip_is_found(tmp_path, model, props, true_axes):
    declared = Spec(origin=(0.0, 0.0, -0.3))
    written = declared.with_(axes=tuple(map(tuple, true_axes)))
    result = run(tmp_path, model, props, written, declared)
    if np.array_equal(true_axes, np.eye(3)):
        assert result.passed
        return
    exp = result.diagnosis.explanation
    assert exp is not None and [s.kind for s in exp.steps] == ["axes"]
    assert np.array_equal(exp.conventions.axes.matrix, true_axes)
    assert exp.steps[0].cost == (1 if np.linalg.det(true_axes) > 0 else 2)  # a mirror image is less simple
    assert exp.roundoff and not result.diagnosis.ambiguous


def test_reverse_reference_is_diagnosed_when_the_other_reading_is_possible(tmp_path, model, props):
    # Numbers about the CG declared as about a point 12 mm from the CG of the whole: read as declared the
    # parallel-axis term is subtracted wrongly, which still gives a possible tensor here.
    whole = {"*": props["*"]}
    c_e = np.array(BASE.axes) @ (props["*"][1] - np.array(BASE.origin))
    point = c_e + np.array([0.012, -0.004, 0.003])
    result = run(tmp_path, model, whole, BASE, BASE.with_(about=tuple(point)))
    exp = result.diagnosis.explanation
    assert [s.kind for s in exp.steps] == ["reference"] and exp.conventions.reference is ReferenceKind.CG
    assert exp.roundoff


def test_reverse_reference_that_gives_an_impossible_tensor_is_refused_with_the_likely_cause(tmp_path, model,
                                                                                           props):
    path = write_estimate(tmp_path / "e.json", props, BASE, BASE.with_(about="origin"))
    with pytest.raises(EstimateError, match=r"e.json: items\[0\] \(group '\*'\), field 'inertia'.*not positive semi-definite"
                       r".*read with inertia_about 'cg' it would be a possible tensor"):
        load_estimate(path)


def test_a_part_ten_percent_heavier_is_not_explained_away(tmp_path, model):
    heavy = occ_props(BODIES, scale={"b/puck": 1.10})  # the puck really is 10 % heavier in "CAD"
    result = run(tmp_path, model, heavy, BASE)
    assert not result.passed
    diag = result.diagnosis
    assert diag.explanation is None and diag.alternatives == ()
    assert diag.tested["single"] > 60 and diag.tested["pair"] > 1000
    b = result.as_declared.item("b")
    puck = 2700.0 * np.pi * 0.040**2 * 0.090  # kg, closed form
    assert b.mass_diff == pytest.approx(0.10 * puck, rel=1e-9)


@pytest.mark.parametrize("mixup", [dict(products="positive"), dict(inertia_unit="lb*in^2"), dict(about="origin")])
def test_a_real_difference_hidden_behind_a_mixup_is_not_explained_away(tmp_path, model, mixup):
    heavy = occ_props(BODIES, scale={"b/puck": 1.10})
    result = run(tmp_path, model, heavy, BASE.with_(**mixup), BASE)
    diag = result.diagnosis
    assert diag.explanation is None
    # The closest reading undoes the mix-up but still fails on the heavier part (information only).
    assert diag.closest is not None and not diag.closest.comparison.passed
    assert diag.closest.comparison.item("b").ratios["mass"] > 1.0


def test_small_real_differences_behind_a_mixup_are_explained_within_tolerance(tmp_path, model):
    near = occ_props(BODIES, scale={"a/block": 1.003, "b/puck": 0.996})  # the estimate's own small differences
    result = run(tmp_path, model, near, BASE.with_(products="positive"), BASE)
    exp = result.diagnosis.explanation
    assert [s.kind for s in exp.steps] == ["products"]
    assert exp.comparison.passed and not exp.roundoff
    assert exp.comparison.item("a").mass_rel == pytest.approx(0.003, rel=1e-9)


def test_indistinguishable_readings_are_reported_as_ambiguous(tmp_path):
    # An unturned box centred on the origin: swapping x and y is the same whichever signs are chosen.
    box = ({"path": "a/block", "shape": "box", "size": (120.0, 90.0, 70.0), "density": 7850.0,
            "at": (0.0, 0.0, 0.0), "angles": (0.0, 0.0, 0.0)},)
    model = load_bodies_model(box)
    props = {"*": occ_props(box)["*"]}
    swapped = Spec(axes=((0, 1, 0), (1, 0, 0), (0, 0, -1)))
    result = run(tmp_path, model, props, swapped, Spec())
    diag = result.diagnosis
    assert diag.explanation is not None and diag.ambiguous
    readings = {e.conventions.axes.text for e in (diag.explanation, *diag.alternatives) if e.cost == 1}
    assert {"x=+y, y=+x, z=-z", "x=-y, y=-x, z=-z", "x=+y, y=-x, z=+z", "x=-y, y=+x, z=+z"} <= readings


def test_wide_tolerances_let_a_mixup_through_and_then_nothing_is_diagnosed(tmp_path, model, props):
    tol = Tolerances(mass=0.5, cg=1.0, term=10.0, moment=10.0, axis=np.pi, degenerate=0.05)
    result = run(tmp_path, model, props, BASE.with_(products="positive"), BASE, tol=tol)
    assert result.passed and result.diagnosis is None
