"""Sizing one ballast block: density bands, rounding at the low end of the band, plates, stock, bad input.

Reference values: ASTM B777-15 Table 1 density bands and the worked check of docs/references.md §2 (a 100 × 50 × 20 mm
block of Class 1 weighs 1.685–1.730 kg, of Class 4 1.825–1.885 kg). Exact block volumes come from
massmodel.ballast.block (checked against OpenCascade in tests/test_block.py).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import assert_close
from massmodel.ballast.sizing import (
    BlockSpec,
    Envelope,
    Fill,
    SizingError,
    heaviest_block,
    size_block,
    spec_from_parts,
)
from massmodel.ballast.targets import check_fit, denser_materials, rules_target
from massmodel.core.frames import Pose, RotationKind, rotation_from_sequence
from massmodel.core.materials import Material, builtin_materials
from massmodel.modelfile.loader import load_model

LIB = builtin_materials()
CLASS = {k: LIB[f"tungsten_b777_class{k}"] for k in (1, 2, 3, 4)}
DEMO = "parts_demo/brindlecombe_bl3.toml"


def box_env(size, clearance=0.001, at=(0.0, 0.0, 0.0), linear=None, name="s"):
    return Envelope(name, size, Pose(np.eye(3) if linear is None else linear, np.array(at, dtype=float)), clearance)


@pytest.mark.parametrize(("cls", "lo", "hi"), [(1, 1.685, 1.730), (4, 1.825, 1.885)])
def test_astm_b777_worked_check(cls, lo, hi):
    # docs/references.md §2 worked check: a 100 x 50 x 20 mm block (100 cm^3), ASTM B777-15 Table 1 bands.
    sizing = heaviest_block(box_env((0.102, 0.052, 0.022)), spec_from_parts(CLASS[cls], "+z", increment=0.5e-3))
    assert [p.geometry.size for p in sizing.pieces] == [(0.1, 0.05, 0.02)]
    nominal, low, high = sizing.masses()
    assert low == pytest.approx(lo, rel=1e-12)
    assert high == pytest.approx(hi, rel=1e-12)
    assert nominal == pytest.approx(0.5 * (lo + hi), rel=1e-12)  # the library's nominal is mid-band


def test_all_four_classes_bands():
    # ASTM B777-15 Table 1 (g/cm^3): 16.85-17.30, 17.15-17.85, 17.75-18.35, 18.25-18.85
    bands = {1: (16850, 17300), 2: (17150, 17850), 3: (17750, 18350), 4: (18250, 18850)}
    for k, (lo, hi) in bands.items():
        assert CLASS[k].band == pytest.approx((lo, hi), rel=1e-12)
    assert [m.key for m in denser_materials(CLASS[2], LIB)] == ["tungsten_b777_class3", "tungsten_b777_class4",
                                                                "tungsten"]


def test_block_sits_on_its_wall_with_the_clearance():
    env = box_env((0.2, 0.1, 0.05), clearance=0.0015, at=(1.0, 2.0, 3.0))
    sizing = size_block(env, spec_from_parts(CLASS[3], "+z", increment=0.5e-3), 2.0)
    g = sizing.pieces[0].geometry
    assert g.size[:2] == pytest.approx((0.197, 0.097), abs=1e-15)
    t = sizing.fill_length
    # plain box: its CG is half its thickness above the floor, which is the clearance above the slot's -z wall
    assert_close(sizing.props().center, [1.0, 2.0, 3.0 - 0.025 + 0.0015 + t / 2], 1e-14)
    # smallest multiple of 0.5 mm whose low-density mass reaches 2 kg
    n = math.ceil(2.0 / (17750 * 0.197 * 0.097) / 0.5e-3)
    assert t == pytest.approx(n * 0.5e-3, abs=1e-15)
    down = size_block(env, spec_from_parts(CLASS[3], "-z", increment=0.5e-3), 2.0)
    assert down.props().center[2] == pytest.approx(3.0 + 0.025 - 0.0015 - t / 2, abs=1e-14)
    centred = size_block(env, spec_from_parts(CLASS[3], "z", increment=0.5e-3), 2.0)
    assert_close(centred.props().center, [1.0, 2.0, 3.0], 1e-15)


def test_rotated_slot_and_fill_along_x():
    r = rotation_from_sequence(RotationKind.EXTRINSIC, "xyz", (0.0, 0.0, math.radians(90.0)))  # slot x -> model y
    env = box_env((0.3, 0.05, 0.04), clearance=0.001, at=(0.5, 0.0, 0.2), linear=r)
    sizing = size_block(env, spec_from_parts(CLASS[4], "+x", increment=1e-3), 3.0)
    t = sizing.fill_length
    # grows from the slot's -x wall, which is the model's -y side
    assert_close(sizing.props().center, [0.5, -0.15 + 0.001 + t / 2, 0.2], 1e-13)
    assert check_fit(sizing)[0].fits


@settings(max_examples=60, deadline=None)
@given(
    target=st.floats(0.05, 6.0),
    cls=st.sampled_from([1, 2, 3, 4]),
    inc=st.sampled_from([0.1e-3, 0.25e-3, 0.5e-3, 1e-3]),
    holes=st.booleans(),
    chamfer=st.sampled_from([None, "xyz", "z"]),
    segment=st.sampled_from([None, 1.5, 4.0]),
)
def test_rounding_never_breaks_the_minimum_at_the_low_end_of_the_band(target, cls, inc, holes, chamfer, segment):
    env = box_env((0.16, 0.12, 0.06))
    spec = spec_from_parts(
        CLASS[cls], "+z", increment=inc, chamfer=(0.5e-3, chamfer) if chamfer else None, max_segment_mass=segment,
        holes={"kind": "grid", "count": 4, "diameter": 6.5e-3, "pitch": 0.1, "pitch2": 0.07, "columns": 2,
               "counterbore_diameter": 11e-3, "counterbore_depth": 2e-3} if holes else None,
    )
    sizing = size_block(env, spec, target)
    lo = CLASS[cls].band[0]
    assert sizing.reached
    assert sizing.masses()[1] >= target  # at the LOW end of the band the block still reaches the target
    n = round(sizing.fill_length / inc)
    assert sizing.fill_length == pytest.approx(n * inc, abs=1e-12)  # a multiple of the increment
    if segment is not None:  # every plate within the segment limit at the HIGH end of the band
        assert max(sizing.segment_masses()) <= segment * (1 + 1e-12)
    if n > 1:  # one increment less would miss (the rounding is the least that works)
        from massmodel.ballast.sizing import cross_sizes, stack_for_units

        try:
            shorter = stack_for_units(env, spec, cross_sizes(env, spec), n - 1)
        except SizingError:
            return  # too thin for its counterbore: the block cannot be shorter anyway
        assert lo * sum(p.geometry.volume() for p in shorter) < target


def test_plates_within_segment_limit_and_stack_geometry():
    env = box_env((0.2, 0.24, 0.03))
    spec = spec_from_parts(CLASS[3], "+z", increment=0.5e-3, max_segment_mass=3.0, chamfer=(0.5e-3, "xyz"))
    sizing = size_block(env, spec, 10.0)
    # the fewest near-equal plates within 3 kg at the HIGH end of the band: ceil(high-end mass / 3 kg)
    assert len(sizing.pieces) == math.ceil(sizing.masses()[2] / 3.0) == 4
    assert max(sizing.segment_masses()) <= 3.0
    zs = [p.pose.translation[2] for p in sizing.pieces]
    ts = [p.geometry.size[2] for p in sizing.pieces]
    # stacked from the floor, touching
    assert zs[0] - ts[0] / 2 == pytest.approx(-0.015 + 0.001, abs=1e-15)
    for a in range(len(ts) - 1):
        assert zs[a] + ts[a] / 2 == pytest.approx(zs[a + 1] - ts[a + 1] / 2, abs=1e-15)
    assert sum(ts) == pytest.approx(sizing.fill_length, abs=1e-15)


def test_stock_plates():
    env = box_env((0.2, 0.24, 0.03))
    spec = spec_from_parts(CLASS[1], "+z", increment=0.5e-3, stock=(5e-3, 10e-3), max_segment_mass=6.0)
    sizing = size_block(env, spec, 12.0)
    ts = sorted(p.geometry.size[2] for p in sizing.pieces)
    # 0.198 x 0.238 m plates of Class 1: 5 mm weighs 4.08 kg at the high end, 10 mm 8.15 kg (over 6 kg);
    # 15 mm gives 11.9 kg at the low end (< 12 kg), so four 5 mm plates
    assert ts == pytest.approx([5e-3] * 4, abs=1e-15)
    assert sizing.masses()[1] == pytest.approx(16850 * 0.198 * 0.238 * 0.02, rel=1e-12)


def test_target_out_of_reach_says_by_how_much_and_what_length_would_do():
    env = box_env((0.1, 0.12, 0.04))
    spec = spec_from_parts(CLASS[4], "+z", increment=0.5e-3)
    sizing = size_block(env, spec, 10.0)
    assert not sizing.reached
    cap_lo = 18250 * 0.098 * 0.118 * 0.038
    assert sizing.capacity_masses()[1] == pytest.approx(cap_lo, rel=1e-12)
    assert sizing.shortfall == pytest.approx(10.0 - cap_lo, rel=1e-12)
    need = math.ceil(10.0 / (18250 * 0.098 * 0.118) / 0.5e-3) * 0.5e-3
    assert sizing.needed_fill_length == pytest.approx(need, abs=1e-12)
    longer = size_block(box_env((0.1, 0.12, need + 0.002)), spec, 10.0)
    assert longer.reached and longer.fill_length == pytest.approx(need, abs=1e-12)


def test_rules_target_on_the_demo():
    model = load_model(DEMO)
    total = sum(c.props.mass for c in model.components if not c.path.startswith("fuel"))
    target, needs = rules_target(model, 0.5, "ballast/floor_front")
    assert target == pytest.approx(425.0 + 0.5 - total, rel=1e-12)
    assert 9.0 < target < 12.0  # the demo scenario (parts_demo/README.md): some 10 kg short before ballast
    seat = next(n for n in needs if n.check == "min_group_mass")
    assert not seat.counts  # a floor block is not part of driver + seat
    replaced, _ = rules_target(model, 0.5, "ballast/under_seat", remove=("ballast/seat_block",))
    assert replaced == pytest.approx(target + model.component("ballast/seat_block").props.mass, rel=1e-12)


def test_fit_check_finds_a_block_out_of_its_slot():
    env = box_env((0.1, 0.1, 0.03), clearance=0.001)
    sizing = size_block(env, spec_from_parts(CLASS[2], "+z", increment=0.5e-3), 1.0)
    assert [f.fits for f in check_fit(sizing)] == [True]
    moved = [type(p)(p.geometry, Pose.from_translation([0.0015, 0.0, 0.0]) * p.pose) for p in sizing.pieces]
    f = check_fit(sizing, moved)[0]
    # 1.5 mm to +x with 1 mm clearance: a 0.5 mm slice of the block's +x face lies outside the slot
    g = sizing.pieces[0].geometry
    assert not f.fits
    assert f.outside_volume == pytest.approx(0.0005 * g.size[1] * g.size[2], rel=1e-6)
    assert "outside the slot" in f.reason


@pytest.mark.parametrize(
    ("make", "field", "words"),
    [
        (lambda: size_block(box_env((0.1, 0.002, 0.03), clearance=0.001), spec_from_parts(CLASS[1], "+z"), 1.0),
         "clearance", "no room for a block"),
        (lambda: size_block(box_env((0.1, 0.1, 0.03)), spec_from_parts(CLASS[1], "+z"), -2.0), "target",
         "positive mass"),
        (lambda: size_block(box_env((0.05, 0.05, 0.03)), spec_from_parts(
            CLASS[1], "+z", holes={"kind": "line", "count": 1, "diameter": 0.06}), 0.1), "holes.diameter",
         "larger than the block"),
        (lambda: BlockSpec(None, Fill.parse("+z")), "material", "has no density"),  # type: ignore[arg-type]
        (lambda: size_block(box_env((0.1, 0.1, 0.03)), spec_from_parts(CLASS[1], "+z", fixed={"x": 0.2}), 1.0),
         "fixed.x", "exceeds"),
        (lambda: spec_from_parts(CLASS[1], "up"), "fill", "fill must be"),
    ],
)
def test_bad_input_is_a_clear_error(make, field, words):
    with pytest.raises(SizingError) as err:
        make()
    assert err.value.field == field
    assert words in str(err.value)


def test_material_without_density_in_a_model_file(tmp_path):
    f = tmp_path / "car.toml"
    f.write_text('[model]\nname = "x"\n[materials.dense]\nname = "no density given"\n', encoding="utf-8")
    from massmodel.modelfile.loader import ModelFileError

    with pytest.raises(ModelFileError, match="material 'dense'.*'density' is missing"):
        load_model(f)


def test_material_band_is_required_to_be_consistent():
    with pytest.raises(ValueError, match="outside its band"):
        Material("x", "x", 19000.0, 17000.0, 18000.0)
