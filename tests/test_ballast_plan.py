"""Ballast plan files: defaults, plan slots, the model's parameters, and errors naming file, item and field."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from massmodel.ballast.plan import Objective, PlanError, load_plan, loads_plan, material_override
from massmodel.modelfile.loader import load_model

CAR = "parts_demo/brindlecombe_bl3.toml"
PLAN = "parts_demo/bl3_ballast_plan.toml"
HEAD = '[plan]\nname = "t"\n[targets]\nmass_margin = "0.5 kg"\n'


@pytest.fixture(scope="module")
def model():
    return load_model(CAR)


def test_demo_plan(model):
    plan = load_plan(PLAN, model)
    assert [c.name for c in plan.candidates] == ["floor_front", "under_seat", "gearbox_left", "nose_box"]
    t = plan.targets
    assert (t.mass_margin, t.fraction_target, t.fraction_tolerance, t.fraction_margin) == (0.5, 0.436, 0.003, 0.002)
    assert t.cg_height_margin == pytest.approx(0.005) and t.lateral_offset_max == pytest.approx(0.003)
    assert t.objective is Objective.CG_HEIGHT
    ff = plan.candidate("floor_front")
    assert ff.spec.material.key == "tungsten_b777_class3"  # from [defaults]
    assert ff.spec.chamfer.size == pytest.approx(0.001) and ff.spec.chamfer.edges == "xyz"
    h = ff.spec.holes
    assert (h.kind, h.count, h.columns, h.axis, h.counterbore_end) == ("grid", 4, 2, "z", 1)
    assert (h.pitch, h.pitch2, h.diameter) == pytest.approx((0.15, 0.18, 0.0085))
    assert h.counterbore.diameter == pytest.approx(0.014) and h.counterbore.depth == pytest.approx(0.005)
    us = plan.candidate("under_seat")
    assert us.replace == ("ballast/seat_block",)
    assert us.spec.fixed == pytest.approx({"x": 0.22, "y": 0.26})
    assert us.spec.max_segment_mass == pytest.approx(6.0)
    assert (us.spec.holes.pitch, us.spec.holes.pitch2) == pytest.approx((0.17, 0.21))  # its own holes
    gb = plan.candidate("gearbox_left")
    assert gb.spec.material.key == "tungsten_b777_class1" and gb.spec.holes.counterbore is None
    nose = plan.candidate("nose_box")
    assert nose.from_plan and nose.path == "ballast/nose_box"
    assert nose.envelope.size == pytest.approx((0.1, 0.12, 0.04))
    assert nose.envelope.pose.translation == pytest.approx([0.375, 0.0, -0.185])
    assert nose.spec.min_thickness == pytest.approx(0.003)


def test_plan_values_may_use_the_model_parameters(model):
    plan = loads_plan(HEAD + '[[candidate]]\nslot = "deck"\nfill = "+z"\nmaterial = "lead"\nincrement = "1 mm"\n'
                      'box = { size = ["200 mm", "100 mm", "30 mm"], at = ["-wheelbase / 2", "0 mm", '
                      '"floor_top + 15 mm"], rotate = { extrinsic = "z", angles = ["90 deg"] }, clearance = "1 mm" }\n',
                      model)
    env = plan.candidates[0].envelope
    assert env.pose.translation == pytest.approx([-1.31, 0.0, -0.265 + 0.040 + 0.003 + 0.015])
    assert env.pose.linear @ np.array([1.0, 0, 0]) == pytest.approx([0.0, 1.0, 0.0])


def test_overrides(model):
    plan = load_plan(PLAN, model)
    smaller = plan.without(["nose_box"]).with_targets(objective=Objective.YAW_INERTIA)
    assert [c.name for c in smaller.candidates] == ["floor_front", "under_seat", "gearbox_left"]
    assert smaller.targets.objective is Objective.YAW_INERTIA
    one = material_override(plan, model, ["gearbox_left=tungsten_b777_class4"])
    assert one.candidate("gearbox_left").spec.material.key == "tungsten_b777_class4"
    assert one.candidate("floor_front").spec.material.key == "tungsten_b777_class3"
    every = material_override(plan, model, ["tungsten_b777_class2"])
    assert {c.spec.material.key for c in every.candidates} == {"tungsten_b777_class2"}
    with pytest.raises(KeyError, match="no candidate slot 'boot'"):
        plan.without(["boot"])


CAND = '[[candidate]]\nslot = "floor_front"\nfill = "+z"\nmaterial = "tungsten_b777_class1"\nincrement = "0.5 mm"\n'


@pytest.mark.parametrize(
    ("text", "item", "field", "words"),
    [
        ('[plan]\nname = "t"\n' + CAND, "[targets]", None, "is missing"),
        (HEAD + "[extras]\n" + CAND, None, None, "unknown section 'extras'"),
        (HEAD + CAND + "colour = \"#ffffff\"\n", "candidate 'floor_front'", "colour", "unknown field"),
        (HEAD + CAND.replace('"+z"', '"up"'), "candidate 'floor_front'", "fill", "fill must be one of"),
        # with holes (whose axis defaults to the fill's), a bad fill is still reported as the fill
        (HEAD + CAND.replace('"+z"', '"up"') + "[candidate.holes]\npattern = \"line\"\ncount = 1\ndiameter = \"8 mm\"\n",
         "candidate 'floor_front'", "fill", "fill must be one of"),
        (HEAD + CAND.replace("tungsten_b777_class1", "tungsten_b777_klass1"), "candidate 'floor_front'", "material",
         "did you mean tungsten_b777_class1"),
        (HEAD + CAND.replace('"0.5 mm"', "0.5"), "candidate 'floor_front'", "increment", "no default units"),
        (HEAD + CAND.replace('slot = "floor_front"', 'slot = "boot"'), "candidate 'boot'", "slot",
         "the model has no slot 'boot'"),
        (HEAD + CAND + 'path = "ballast/seat_block/extra"\n', "candidate 'floor_front'", "path", "collides"),
        (HEAD + CAND + 'box = { size = ["1 mm", "1 mm", "1 mm"], clearance = "0 mm" }\n', "candidate 'floor_front'",
         "box", "already has a slot 'floor_front'"),
        (HEAD + CAND + "[candidate.holes]\npattern = \"spiral\"\ndiameter = \"8 mm\"\n", "candidate 'floor_front'",
         "holes.pattern", "expected line, grid, circle or points"),
        (HEAD + CAND + "[candidate.holes]\npattern = \"line\"\ncount = 2\ndiameter = \"8 mm\"\n",
         "candidate 'floor_front'", "holes.pitch", "needs 'pitch'"),
        (HEAD.replace('"0.5 kg"', '"-1 kg"') + CAND, "[targets]", "mass_margin", "non-negative mass"),
        (HEAD + CAND + CAND, "candidate 'floor_front'", "slot", "more than once"),
    ],
)
def test_plan_errors(model, text, item, field, words):
    with pytest.raises(PlanError) as err:
        loads_plan(text, model, label="p.toml")
    e = err.value
    assert (e.file, e.item, e.field) == ("p.toml", item, field)
    assert words in str(e)


def test_core_ballast_modules_import_without_cad_or_plotting():
    # the sizing and placement maths need numpy (and scipy when solving), not cadquery or matplotlib
    code = ("import sys; import massmodel.ballast.block, massmodel.ballast.sizing, massmodel.ballast.plan, massmodel.ballast.placement, "
            "massmodel.ballast.seat, massmodel.report.ballast, massmodel.ballast.parts, massmodel.ballast.export, "
            "massmodel.ballast.targets, massmodel.ballast.costs, massmodel.ballast.problem, massmodel.ballast.requirements; "
            "bad = [m for m in ('cadquery', 'OCP', 'matplotlib', 'pyvista') if m in sys.modules]; "
            "print(bad); raise SystemExit(1 if bad else 0)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    assert done.returncode == 0, done.stdout + done.stderr
