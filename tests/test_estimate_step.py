"""Estimates computed from a STEP file and densities with OpenCascade.

Oracles: OpenCascade on the original cadquery solids before export (tests/cad_bodies.py), and the model's closed
forms of the same bodies (Machinery's Handbook 31st ed. pp. 253-254); a box's mass ρ·w·h·d written here.
"""

from __future__ import annotations

import cadquery as cq
import numpy as np
import pytest
from cad_bodies import BODIES, cad_solid, load_bodies_model, occ_props

from conftest import assert_close
from massmodel.compare.crosscheck import check_estimate
from massmodel.compare.estimate import WHOLE, AxisMap, EstimateError, normalise
from massmodel.compare.estimate_step import estimate_from_step, read_step_solids

DENSITY = {b["path"]: b["density"] for b in BODIES}
CAD_AXES = np.array([[-1.0, 0.0, 0.0], [0.0, -1.0, 0.0], [0.0, 0.0, 1.0]])  # CAD x rearward, y right, z up
CAD_ORIGIN_MM = np.array([250.0, 0.0, -300.0])  # the CAD origin in model coordinates


def _in_cad_frame(shape: cq.Shape) -> cq.Shape:
    """Model coordinates → CAD coordinates: p_cad = A (p − o), a half turn about z after a shift."""
    moved = shape.moved(cq.Location(tuple(-CAD_ORIGIN_MM)))
    return moved.moved(cq.Location((0, 0, 0), (0, 0, 180)))


@pytest.fixture(scope="module")
def step_file(tmp_path_factory):
    """An assembly: 'block' at the top, and 'puck' and 'tab' in a sub-assembly 'b' placed 10 mm along x."""
    path = tmp_path_factory.mktemp("step") / "bodies.step"
    top = cq.Assembly(name="bodies")
    top.add(cad_solid(BODIES[0]), name="block")
    sub = cq.Assembly(name="b")
    for b, name in ((BODIES[1], "puck"), (BODIES[2], "tab")):
        sub.add(cad_solid(b).moved(cq.Location((-10.0, 0.0, 0.0))), name=name)
    top.add(sub, name="b", loc=cq.Location((10.0, 0.0, 0.0)))
    top.export(str(path))
    return path


@pytest.fixture(scope="module")
def cad_step_file(tmp_path_factory):
    """The same bodies written in a CAD frame (x rearward, y right, z up, origin elsewhere)."""
    path = tmp_path_factory.mktemp("step") / "bodies_cad.step"
    top = cq.Assembly(name="bodies")
    for b in BODIES:
        top.add(_in_cad_frame(cad_solid(b)), name=b["path"].split("/")[1])
    top.export(str(path))
    return path


def test_solids_are_read_with_names_paths_and_placements(step_file):
    solids = read_step_solids(step_file)
    assert [(s.index, s.name, s.path) for s in solids] == [
        (1, "block", "bodies/block"), (2, "puck", "bodies/b/puck"), (3, "tab", "bodies/b/tab")]


def test_step_estimate_matches_opencascade_and_the_model(step_file):
    est = estimate_from_step(step_file, densities={"block": DENSITY["a/block"], "#2": DENSITY["b/puck"],
                                                   "bodies/b/tab": DENSITY["b/tab"]},
                             groups={"block": "a", "puck": "b", "tab": "b"})
    assert est.groups == [WHOLE, "a", "b"] and est.doubtful == frozenset({"axes"})
    oracle = occ_props()
    for item, mp in zip(est.items, normalise(est), strict=True):
        m, c, t = oracle[item.group]
        assert mp.mass == pytest.approx(m, rel=1e-12)
        assert_close(mp.center, c, 1e-11, f"{item.group} cg")
        assert_close(mp.inertia, t, 1e-11, f"{item.group} inertia")
    result = check_estimate(load_bodies_model(), est)
    assert result.passed and result.as_declared.score < 1e-8
    # the block's mass, closed form: ρ w h d
    assert est.notes[0].endswith(f"= {7850.0 * 0.12 * 0.09 * 0.07:.6g} kg -> a")


def test_one_density_for_all_and_a_plain_step_file(tmp_path):
    path = tmp_path / "block.step"
    cq.exporters.export(cq.Workplane().box(100.0, 50.0, 20.0), str(path))
    est = estimate_from_step(path, default_density=17750.0)
    (mp,) = normalise(est)
    m = 17750.0 * 0.1 * 0.05 * 0.02
    assert mp.mass == pytest.approx(m, rel=1e-12)
    # Machinery's Handbook p. 253: I_x = m(h² + d²)/12 for a box about its centre.
    assert mp.inertia[0, 0] == pytest.approx(m * (0.05**2 + 0.02**2) / 12, rel=1e-11)


def test_a_step_file_in_cad_axes_is_placed_by_the_given_axes_and_origin(cad_step_file):
    model = load_bodies_model()
    args = dict(densities={"block": DENSITY["a/block"], "puck": DENSITY["b/puck"], "tab": DENSITY["b/tab"]})
    placed = estimate_from_step(cad_step_file, axes=AxisMap(CAD_AXES), origin=CAD_ORIGIN_MM * 1e-3, **args)
    assert check_estimate(model, placed).as_declared.score < 1e-8
    # Placed with the model's axes by mistake: the diagnosis questions the placement only, and finds it.
    wrong = estimate_from_step(cad_step_file, origin=CAD_ORIGIN_MM * 1e-3, **args)
    result = check_estimate(model, wrong)
    diag = result.diagnosis
    # only the placement is open to doubt: the 24 signed permutations of det +1 and the 24 of det -1, less the
    # declared one (identity)
    assert not result.passed and diag.tested["single"] == 24 + 24 - 1
    assert diag.explanation.conventions.axes.text == "x=-x, y=-y, z=+z" and diag.explanation.roundoff


@pytest.mark.parametrize(
    "kwargs, message",
    [
        (dict(densities={"block": 7850.0}), r"solid #2 'bodies/b/puck', field 'density': no density"),
        (dict(default_density=1000.0, densities={"blok": 7850.0}),
         r"solid 'blok', field 'density': no such solid; did you mean 'block'\?"),
        (dict(default_density=1000.0, densities={"#9": 7850.0}), r"no solid number '9': the file has solids #1 .. #3"),
        (dict(densities={"#1": 7850.0, "block": 7850.0}, default_density=1.0),
         r"solid #1 'bodies/block', field 'density': given twice"),
        (dict(default_density=-5.0), r"field 'density': must be a positive density"),
        (dict(default_density=1000.0, groups={"tab": "*"}), r"solid 'tab', field 'group': expected a model group"),
    ],
)
def test_bad_step_options_name_the_solid_and_field(step_file, kwargs, message):
    with pytest.raises(EstimateError, match=message):
        estimate_from_step(step_file, **kwargs)


def test_missing_or_unreadable_step_file(tmp_path):
    with pytest.raises(EstimateError, match="nothere.step: no such file"):
        estimate_from_step(tmp_path / "nothere.step", default_density=1.0)
    bad = tmp_path / "bad.step"
    bad.write_text("this is not a STEP file\n")
    with pytest.raises(EstimateError, match="bad.step: not a readable STEP file"):
        estimate_from_step(bad, default_density=1.0)
