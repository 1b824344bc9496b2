"""The ballast commands end to end on the demo car: files written, the ballasted model passes every rule, the
unreachable target explained, user mistakes as one-line errors (exit 2)."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import EXIT_FAIL, EXIT_USAGE, main
from massmodel.modelfile.loader import load_model
from massmodel.vehicle.balance import check_rules

ROOT = Path(__file__).resolve().parent.parent
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"
PLAN = ROOT / "parts_demo" / "bl3_ballast_plan.toml"


@pytest.fixture(scope="module")
def placed(tmp_path_factory):
    out = tmp_path_factory.mktemp("placed")
    argv = ["place-ballast", str(CAR), str(PLAN), "--out-model", str(out / "bl3_ballasted.toml"),
            "--step", str(out / "blocks.step"), "--stl", str(out / "blocks.stl"), "--json", str(out / "placed.json"),
            "--picture", str(out / "placed.png")]
    code = main(argv)
    return out, code


def test_place_ballast_writes_a_model_that_passes_every_rule(placed):
    out, code = placed
    assert code == 0
    ballasted = load_model(out / "bl3_ballasted.toml")
    results = check_rules(ballasted)
    assert len(results) == 6 and all(r.passed for r in results)
    data = json.loads((out / "placed.json").read_text())
    # the JSON's "after" state of the base case is the reloaded model's
    mp = ballasted.mass_properties()
    base = data["case_results"][0]
    assert base["case"] == "base"
    assert base["after"]["mass_kg"] == pytest.approx(mp.mass, rel=1e-12)
    assert np.allclose(base["after"]["cg_m"], mp.center, atol=1e-12)
    # minimum mass at the LOW end of every density band: baseline + low-end block masses >= 425 + 0.5 kg
    removed = sum(load_model(CAR).component(p).props.mass for p in data["removed"])
    fuel = sum(c.props.mass for c in ballasted.components if c.path.startswith("fuel"))
    low = mp.mass - data["ballast_kg"]["nominal"] + data["ballast_kg"]["min"] - fuel
    assert low >= 425.6  # 0.5 kg mass margin + 0.1 kg scale resolution
    assert removed == pytest.approx(8.294, abs=1e-3)
    # the input was not touched and the new file extends it
    assert 'extends = "' in (out / "bl3_ballasted.toml").read_text()
    assert main(["report", str(out / "bl3_ballasted.toml"), "--strict", "--brief"]) == 0


def test_step_and_stl_of_the_blocks_round_trip(placed):
    cq = pytest.importorskip("cadquery")
    trimesh = pytest.importorskip("trimesh")
    out, _ = placed
    data = json.loads((out / "placed.json").read_text())
    parts = [p for s in data["slots"] for p in s["parts"]]
    materials = load_model(CAR).materials
    volume = sum(piece["mass_max_density_kg"] / materials[s["material"]].band[1] for s in data["slots"]
                 if "pieces" in s for piece in s["pieces"])  # mass at the high end of the band / that density
    assy = cq.Assembly.importStep(str(out / "blocks.step"))
    assert sorted(c.name for c in assy.children) == sorted(p.replace("/", ".") for p in parts)
    assert len(assy.toCompound().Solids()) == len(parts)
    step_volume = sum(s.Volume() for s in assy.toCompound().Solids()) * 1e-9
    assert step_volume == pytest.approx(volume, rel=1e-9)
    mesh = trimesh.load(out / "blocks.stl")
    assert mesh.volume * 1e-9 == pytest.approx(volume, rel=2e-3)  # STL in mm; holes tessellated
    from PIL import Image

    img = np.asarray(Image.open(out / "placed.png").convert("L"))
    assert img.shape[0] > 800 and img.std() > 10  # a picture, not a blank page


def test_the_blocks_step_header_names_the_file_and_massmodel(placed):
    # ISO 10303-21 §8.2 (docs/references.md §13): FILE_NAME carries the file's name and the originating system; the
    # bytes were written to a temporary file first, whose name must not be what the header records (nor OpenCascade's
    # default header)
    out, _ = placed
    header = (out / "blocks.step").read_text(encoding="ascii").split("ENDSEC;")[0]
    assert "FILE_NAME('blocks.step'" in header
    assert "'massmodel'" in header and "massmodel ballast blocks" in header
    assert "Open CASCADE Shape Model" not in header and ".tmp" not in header


def test_size_block_explains_an_unreachable_target(tmp_path, capsys):
    code = main(["size-block", str(CAR), "--plan", str(PLAN), "--slot", "nose_box", "--target", "rules",
                 "--json", str(tmp_path / "nose.json"), "--step", str(tmp_path / "nose.step")])
    text = capsys.readouterr().out
    assert code == EXIT_FAIL
    assert "TARGET NOT REACHED" in text and "a second slot" in text and "more length" in text
    data = json.loads((tmp_path / "nose.json").read_text())
    assert not data["reached"]
    cap = data["heaviest_block_kg"]["min"]
    assert cap == pytest.approx(18250 * data["volume_m3"], rel=1e-12)
    assert data["shortfall_kg"] == pytest.approx(data["target_at_low_density_kg"] - cap, rel=1e-12)
    # what the rulebook's minimum mass (425 kg without fuel) needs plus the default 0.5 kg margin
    without_fuel = load_model(CAR).mass_properties(exclude=["fuel"]).mass
    assert data["target_at_low_density_kg"] == pytest.approx(425.0 + 0.5 - without_fuel, rel=1e-9)
    assert (tmp_path / "nose.step").stat().st_size > 1000


def test_size_block_in_a_model_slot(tmp_path, capsys):
    code = main(["size-block", str(CAR), "--slot", "floor_front", "--material", "tungsten_b777_class1", "--fill", "+z",
                 "--increment", "0.5mm", "--target", "10kg", "--holes", "2", "--hole-diameter", "8.5mm",
                 "--hole-pitch", "120mm", "--chamfer", "0.5mm", "--json", str(tmp_path / "b.json")])
    assert code == 0
    data = json.loads((tmp_path / "b.json").read_text())
    assert data["mass_kg"]["min"] >= 10.0
    assert data["fit"][0]["fits"]
    assert data["pieces"][0]["size_m"][:2] == pytest.approx([0.198, 0.238], abs=1e-12)


def test_size_block_json_says_how_the_fit_was_checked(tmp_path, capsys):
    # a drilled, chamfered block square to its box slot is checked in closed form (massmodel.cad.boxfit); the JSON
    # names the method as the text does
    code = main(["size-block", str(CAR), "--slot", "floor_front", "--material", "tungsten_b777_class1", "--fill", "+z",
                 "--increment", "0.5mm", "--target", "10kg", "--holes", "2", "--hole-diameter", "8.5mm",
                 "--hole-pitch", "120mm", "--chamfer", "0.5mm", "--json", str(tmp_path / "b.json")])
    assert code == 0
    text = capsys.readouterr().out
    fits = json.loads((tmp_path / "b.json").read_text())["fit"]
    assert [f["method"] for f in fits] == ["closed form"] * len(fits) and fits
    assert "fit (closed form) piece 1: fits" in text


@pytest.mark.parametrize(
    ("extra", "words"),
    [
        (["--box", "1.5mm,50mm,50mm", "--at", "0mm,0mm,0mm", "--clearance", "1mm", "--material",
          "tungsten_b777_class1", "--fill", "+z", "--increment", "0.5mm"], "no room for a block"),
        (["--slot", "floor_front", "--material", "tungsten_b777_class1", "--fill", "+z", "--increment", "0.5mm",
          "--target=-2kg"], "target mass must be a positive mass"),
        (["--slot", "floor_front", "--material", "tungsten_b777_class1", "--fill", "+z", "--increment", "0.5mm",
          "--holes", "1", "--hole-diameter", "300mm"], "larger than the block"),
        (["--slot", "floor_front", "--material", "unobtainium", "--fill", "+z", "--increment", "0.5mm"],
         "unknown material"),
        (["--slot", "floor_front", "--material", "tungsten_b777_class1", "--fill", "+z", "--increment", "0.5"],
         "expected a length with its unit"),
        # hole options without --holes were silently ignored before
        (["--plan", str(PLAN), "--slot", "floor_front", "--counterbore", "14mm,5mm"],
         "--counterbore describe holes given here and need --holes N"),
        (["--slot", "floor_front", "--material", "tungsten_b777_class1", "--fill", "+z", "--increment", "0.5mm",
          "--hole-diameter", "8.5mm", "--hole-pitch", "100mm"], "--hole-diameter, --hole-pitch describe holes"),
        # stacks are summed in whole micrometres: a thinner stock plate used to divide by zero
        (["--plan", str(PLAN), "--slot", "floor_front", "--stock", "0.0001mm"],
         "stock plate thicknesses must be at least 0.001 mm"),
        # the slot (28 mm of room along z) is shorter than one increment
        (["--plan", str(PLAN), "--slot", "floor_front", "--increment", "100mm"],
         "28.00 mm available along the fill axis z is less than one increment 100.00 mm"),
    ],
)
def test_size_block_bad_input(extra, words, capsys):
    code = main(["size-block", str(CAR), *extra])
    err = capsys.readouterr().err
    assert code == EXIT_USAGE
    assert words in err and err.count("\n") == 1 and "Traceback" not in err


def test_material_without_density_is_a_clear_error(tmp_path, capsys):
    car = tmp_path / "car.toml"
    shutil.copy(CAR, car)
    shutil.copy(ROOT / "parts_demo" / "marrowfield_rules.toml", tmp_path)
    with car.open("a", encoding="utf-8") as fh:
        fh.write('\n[materials.mystery_alloy]\nname = "a bar with no data sheet"\n')
    code = main(["size-block", str(car), "--slot", "floor_front", "--material", "mystery_alloy", "--fill", "+z",
                 "--increment", "0.5mm"])
    err = capsys.readouterr().err
    assert code == EXIT_USAGE
    assert "material 'mystery_alloy'" in err and "'density' is missing" in err


def test_plan_slot_smaller_than_its_clearance(tmp_path, capsys):
    plan = tmp_path / "plan.toml"
    plan.write_text(
        '[plan]\nname = "tight"\n[targets]\nmass_margin = "0.5 kg"\n'
        '[[candidate]]\nslot = "tiny"\nbox = { size = ["1.5 mm", "100 mm", "30 mm"], at = ["0 mm", "0 mm", "0 mm"], '
        'clearance = "1 mm" }\nmaterial = "tungsten_b777_class1"\nfill = "+z"\nincrement = "0.5 mm"\n',
        encoding="utf-8")
    code = main(["place-ballast", str(CAR), str(plan)])
    err = capsys.readouterr().err
    assert code == EXIT_USAGE
    assert f"{plan}: candidate 'tiny', field 'slot'" in err and "no room for a block" in err


def test_plan_errors_name_file_item_and_field(tmp_path, capsys):
    plan = tmp_path / "plan.toml"
    plan.write_text('[plan]\nname = "p"\n[targets]\nmass_margin = "0.5"\n[[candidate]]\nslot = "floor_front"\n',
                    encoding="utf-8")
    assert main(["place-ballast", str(CAR), str(plan)]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert f"{plan}: [targets], field 'mass_margin'" in err and "no default units" in err
    plan.write_text('[plan]\nname = "p"\n[targets]\nmass_margin = "0.5 kg"\n[[candidate]]\nslot = "under_seat"\n'
                    'material = "tungsten_b777_class1"\nfill = "+z"\nincrement = "0.5 mm"\n', encoding="utf-8")
    assert main(["place-ballast", str(CAR), str(plan)]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert "field 'replace_existing'" in err and "already holds ballast/seat_block" in err
    # a block setting that only fails when sized in its slot still names the plan file and the field
    plan.write_text(PLAN.read_text(encoding="utf-8").replace('chamfer = { size = "1 mm"', 'chamfer = { size = "20 mm"'),
                    encoding="utf-8")
    assert main(["place-ballast", str(CAR), str(plan), "--no-fit"]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert f"{plan}: slot 'floor_front': chamfer 20.000 mm is too big" in err and "(plan field 'chamfer.size')" in err
    assert err.count("\n") == 1 and "Traceback" not in err


def test_place_ballast_never_overwrites_the_input(tmp_path, capsys):
    car = tmp_path / "car.toml"
    shutil.copy(CAR, car)
    shutil.copy(ROOT / "parts_demo" / "marrowfield_rules.toml", tmp_path)
    before = car.read_bytes()
    assert main(["place-ballast", str(car), str(PLAN), "--out-model", str(car), "--no-fit"]) == EXIT_USAGE
    assert "that is the input model" in capsys.readouterr().err
    assert car.read_bytes() == before


def test_infeasible_placement_names_the_binding_rule(capsys, tmp_path):
    code = main(["place-ballast", str(CAR), str(PLAN), "--case", "base", "--without", "floor_front", "--without",
                 "under_seat", "--without", "gearbox_left", "--json", str(tmp_path / "x.json")])
    text = capsys.readouterr().out
    assert code == EXIT_FAIL
    assert "NO PLACEMENT MEETS EVERY RULE AND TARGET" in text
    data = json.loads((tmp_path / "x.json").read_text())
    first = data["shortfalls"][0]
    assert first["requirement"] == "minimum mass, car with driver, without fuel"
    # the nose box alone (Class 4, low end of the band) against 425.5 kg without the two blocks it would replace
    model = load_model(CAR)
    base = sum(c.props.mass for c in model.components if not c.path.startswith(("fuel", "ballast/seat_block",
                                                                                 "ballast/gearbox_block")))
    assert base == pytest.approx(model.mass_properties().mass - 20.0 - 8.294, abs=2e-3)


def test_seat_ballast_study(tmp_path, capsys):
    code = main(["seat-ballast", str(CAR), "--set", "driver_mass=70 kg", "--material", "tungsten_b777_class3",
                 "--margin", "0.5kg", "--plot", str(tmp_path / "seat.png"), "--json", str(tmp_path / "seat.json")])
    assert code == 0
    assert "SEAT BALLAST" in capsys.readouterr().out
    data = json.loads((tmp_path / "seat.json").read_text())
    model = load_model(CAR, overrides={"driver_mass": "70 kg"})
    group = sum(c.props.mass for c in model.select(["driver", "chassis/seat"]))
    assert data["need_at_low_density_kg"] == pytest.approx(77.5 - group, rel=1e-12)
    assert data["plate"]["mass_kg"]["min"] >= data["need_at_low_density_kg"]
    # first moment of mass: the car's CG height with a mass m at height h is (M z + m h) / (M + m)
    mp = model.mass_properties()
    m = data["ballast_mass_kg"]
    z0 = mp.center[2] - (-0.265)  # ground plane at z = -265 mm (parts_demo/README.md)
    for row in data["rows"]:
        assert row["cg_height_m"] == pytest.approx((mp.mass * z0 + m * row["ballast_height_m"]) / (mp.mass + m),
                                                   rel=1e-12)
    assert data["cg_rise_per_ballast_height"] == pytest.approx(m / (mp.mass + m), rel=1e-9)
    assert (tmp_path / "seat.png").stat().st_size > 10_000


def test_atomic_writes_leave_nothing_behind(tmp_path):
    from massmodel.ballast.export import write_atomic

    def broken(path):
        path.write_text("half")
        raise RuntimeError("disk full")

    with pytest.raises(RuntimeError):
        write_atomic(tmp_path / "out.toml", broken)
    assert list(tmp_path.iterdir()) == []


def test_seat_group_ballast_placed_in_a_lowered_car(tmp_path, capsys):
    # A lighter driver makes driver + seat short; the under-seat block is made part of the seat group, so it
    # counts for that rule. The car is also lowered by 10 mm, which moves the chassis group frame: the written
    # part must be placed in that frame (the file is reloaded and compared by the command itself).
    plan = tmp_path / "plan.toml"
    plan.write_text(
        '[plan]\nname = "seat"\n[targets]\nmass_margin = "0.5 kg"\n'
        '[defaults]\nmaterial = "tungsten_b777_class3"\nincrement = "0.5 mm"\nmin_thickness = "2 mm"\n'
        '[[candidate]]\nslot = "floor_front"\nfill = "+z"\n'
        '[[candidate]]\nslot = "under_seat"\nfill = "+z"\nreplace_existing = true\npath = "chassis/seat/ballast"\n'
        'chamfer = { size = "1 mm", edges = "z" }\n',
        encoding="utf-8")
    out = tmp_path / "seat_ballasted.toml"
    code = main(["place-ballast", str(CAR), str(plan), "--set", "driver_mass=70 kg", "--set", "ride_height=30 mm",
                 "--out-model", str(out), "--no-fit"])
    text = capsys.readouterr().out
    assert code == 0, text
    written = out.read_text()
    assert 'driver_mass = "70 kg"' in written and 'ride_height = "30 mm"' in written
    assert 'material = "tungsten_b777_class3"' in written  # chamfers along one axis: exact primitives, wedge cut-outs
    assert 'shape = "wedge"' in written
    model = load_model(out)
    assert all(r.passed for r in check_rules(model))
    seat = [c for c in model.components if c.path.startswith("chassis/seat/ballast")]
    assert seat and all(c.slot == "under_seat" for c in seat)
    group = sum(c.props.mass for c in model.select(["driver", "chassis/seat"]))
    assert group >= 77.5  # limit + margin, met at nominal density and (checked by the command) at the low end
    # the block sits on the lowered slot floor: slot centre z = floor_top + ride_offset + 15 mm = -232 mm
    slot_floor = -0.265 + 0.040 + 0.003 - 0.010
    lowest = min(c.pose.translation[2] - c.shape.size_z / 2 for c in seat)
    assert lowest == pytest.approx(slot_floor + 0.001, abs=1e-12)  # on the floor, at the 1 mm clearance


def test_ballasted_model_text_survives_names_with_newlines_and_quotes(tmp_path):
    # A plan or model name spanning lines (a TOML multi-line string) once broke the written file: the header comment
    # ran onto an uncommented line and the name was not escaped. TOML v1.0.0 (toml.io): basic strings escape
    # newlines, quotes and backslashes; a comment runs to the end of its line.
    import tomllib

    from massmodel.ballast.export import ballasted_model_text
    from massmodel.ballast.parts import toml_value
    from massmodel.modelfile.loader import loads_model

    for text in ['a "quoted" name', "back\\slash", "two\nlines", "tab\there", "ümlaut"]:
        assert tomllib.loads("k = " + toml_value(text))["k"] == text
    model = load_model(CAR)
    out = tmp_path / "ballasted.toml"
    text = ballasted_model_text(model=model, model_path=CAR, out_path=out, name='BL-3\n"ballasted"', remove=[],
                                blocks=[], header=["plan 'first line\nsecond line'", "", "last"])
    assert text.splitlines()[:4] == ["# plan 'first line", "# second line'", "#", "# last"]
    reloaded = loads_model(text, label=str(out), base_dir=tmp_path)
    assert reloaded.name == 'BL-3\n"ballasted"'
    assert reloaded.mass_properties().mass == pytest.approx(model.mass_properties().mass, rel=1e-15)


def test_seat_ballast_heights_below_the_ground_or_outside_the_seat(capsys):
    argv = ["seat-ballast", str(CAR), "--set", "driver_mass=70 kg", "--material", "tungsten_b777_class3",
            "--margin", "0.5kg"]
    assert main([*argv, "--heights=-100mm,50mm"]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert "ballast heights must be heights above the ground (> 0 mm), got -100.0, 50.0 mm" in err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert main([*argv, "--heights", "100mm,5000mm"]) == 0
    out = capsys.readouterr().out
    # the demo seat structure spans 75.0 .. 358.7 mm above the ground (the study's own first line says so)
    assert "NOTE: 5000.0 mm lie outside the seat structure (75.0 .. 358.7 mm above the ground)" in out
    assert "NOTE: 100.0" not in out


def test_placement_picture_names_axes_by_the_models_vehicle_directions():
    # The view titles once said "x forward" for every model; a car whose forward is -x must read "x rearward".
    from types import SimpleNamespace

    from massmodel.pictures.ballast_plot import _axis_name

    def names(forward, left, up):
        vehicle = None if forward is None else SimpleNamespace(forward=np.array(forward, dtype=float),
                                                               left=np.array(left, dtype=float),
                                                               up=np.array(up, dtype=float))
        result = SimpleNamespace(model=SimpleNamespace(vehicle=vehicle))
        return [_axis_name(result, k) for k in range(3)]

    assert names([1, 0, 0], [0, 1, 0], [0, 0, 1]) == ["x forward", "y left", "z up"]
    assert names([-1, 0, 0], [0, -1, 0], [0, 0, 1]) == ["x rearward", "y right", "z up"]
    assert names([0.6, 0.8, 0], [-0.8, 0.6, 0], [0, 0, 1]) == ["x", "y", "z up"]  # yawed: no vehicle name
    assert names(None, None, None) == ["x", "y", "z"]


def test_ballasted_demo_passes_its_rules_in_every_load_case(placed):
    # The placement works on the model as loaded; the rules also apply in the demo's load cases (e.g. qualifying
    # with 10 kg of fuel, where the rear axle minimum is tightest). Checked independently of the command here.
    from massmodel.modelfile.loader import load_case_models
    from massmodel.vehicle.balance import check_rules_in_cases

    out, code = placed
    models = load_case_models(out / "bl3_ballasted.toml")
    assert {"base", "qualifying", "race_start"} <= set(models)
    assert all(r.passed for _, r in check_rules_in_cases(models))
    assert code == 0


def test_a_rule_failing_in_another_load_case_is_named(tmp_path, capsys):
    from massmodel.cli.ballast import _check_load_cases

    car = tmp_path / "car.toml"
    car.write_text('''
[model]
name = "two cases"
[parameters]
body_mass = "100 kg"
[[part]]
path = "body"
shape = "point"
mass = "body_mass"
maturity = "measured"
[[case]]
name = "light"
set = { body_mass = "80 kg" }
[[rule]]
name = "minimum mass"
check = "min_mass"
limit = "90 kg"
''')
    assert _check_load_cases(car) is False
    text = capsys.readouterr().out
    assert "FAIL in 'light': minimum mass: 80 kg" in text


def test_place_ballast_for_one_case_writes_a_model_that_reloads_in_that_case(tmp_path, capsys):
    # Regression: `place-ballast --case race_start --out-model FILE` compared the written model, loaded WITHOUT the
    # case, with the race-trim ballasted model, and ended in a traceback with nothing written.
    from massmodel.modelfile.loader import load_case_models

    out = tmp_path / "race.toml"
    code = main(["place-ballast", str(CAR), str(PLAN), "--case", "race_start", "--no-fit", "--out-model", str(out),
                 "--json", str(tmp_path / "race.json")])
    captured = capsys.readouterr()
    assert "Traceback" not in captured.err and out.exists()
    data = json.loads((tmp_path / "race.json").read_text())
    assert data["cases"] == ["race_start"]
    race = load_model(out, case="race_start").mass_properties()
    assert data["case_results"][0]["after"]["mass_kg"] == pytest.approx(race.mass, rel=1e-12)
    models = load_case_models(out)
    every = [r.passed for m in models.values() for r in check_rules(m)]
    assert code == (0 if all(every) else EXIT_FAIL)
    assert "loaded back in every case (race_start)" in captured.out


def test_place_ballast_shows_every_case_and_what_each_rule_costs(placed):
    out, code = placed
    data = json.loads((out / "placed.json").read_text())
    assert data["cases"] == ["base", "qualifying", "race_start", "driver_out", "test_day"]
    assert [c["case"] for c in data["case_results"]] == data["cases"] and data["passed"]
    # the front share is met in every case with the plan's 0.001 per-rule margin on top of the 0.002 general one
    for c in data["case_results"]:
        for r in c["requirements"]:
            if r["key"].endswith("rule:front share of the total mass:min"):
                assert r["bound"] == pytest.approx(0.428 + 0.003, abs=1e-12) and r["passed"]
    costs = data["rule_costs"]
    assert {c["case"] for c in costs} == {"base", "qualifying", "race_start", "test_day"}
    binding = [c for c in costs if c["binding"]]
    assert binding and all(c["least_ballast_without_kg"] <= c["least_ballast_kg"] + 1e-9 for c in costs)
    assert {c["dual"]["unit"] for c in costs} == {"kg_per_kg", "kg_per_unit_fraction", "kg_per_m"}
    assert len(data["sensitivities"]) == 5 * 4  # every case, every slot


@pytest.mark.parametrize(
    ("extra", "plan_text", "words"),
    [
        (["--case", "monsoon"], None, "--case 'monsoon': no such load case; the file defines: base, qualifying"),
        ([], '[margins]\n"driver and seat" = 0.2\n', "field 'driver and seat': a min_group_mass rule needs a margin "
                                                      "that is a mass"),
        ([], '[margins]\n"front share of the total mass" = "2 mm"\n', "field 'front share of the total mass': a "
                                                                       "front_fraction rule needs a margin that is a "
                                                                       "number"),
        ([], '[margins]\n"no such rule" = "1 kg"\n', "[margins], field 'no such rule': no rule of that name applies"),
    ],
)
def test_place_ballast_bad_cases_and_margins(tmp_path, capsys, extra, plan_text, words):
    plan = PLAN
    if plan_text is not None:
        text = PLAN.read_text()
        text = text[:text.index("[margins]")] + text[text.index("[defaults]"):] + plan_text
        plan = tmp_path / "plan.toml"
        plan.write_text(text)
    assert main(["place-ballast", str(CAR), str(plan), "--no-fit", *extra]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert words in err and err.count("\n") == 1 and "Traceback" not in err
    if plan_text is not None:
        assert str(plan) in err


def test_seat_ballast_honours_a_ballast_height_rule_at_the_drivers_height(tmp_path, capsys):
    seat_rule = ROOT / "parts_demo" / "bl3_seat_rule.toml"
    code = main(["seat-ballast", str(seat_rule), "--set", "driver_mass=70 kg", "--material", "tungsten_b777_class3",
                 "--margin", "0.5kg", "--json", str(tmp_path / "seat.json")])
    assert code == 0
    data = json.loads((tmp_path / "seat.json").read_text())
    model = load_model(seat_rule, overrides={"driver_mass": "70 kg"})
    # the driver's CG height above the ground plane (z = -265 mm, parts_demo/README.md), from the model's parts
    driver = model.mass_properties(["driver"]).center[2] + 0.265
    (rule,) = data["height_rules"]
    assert rule["lowest_m"] == pytest.approx(driver - 0.060, abs=1e-12)
    assert rule["highest_m"] == pytest.approx(driver + 0.060, abs=1e-12)
    heights = [r["ballast_height_m"] for r in data["rows"]]
    assert all(r["allowed_by_height_rules"] for r in data["rows"])
    assert min(heights) == pytest.approx(driver - 0.060, abs=1e-12)  # the lowest the rule allows
    assert data["lowest_allowed_height_m"] == pytest.approx(driver - 0.060, abs=1e-12)
    capsys.readouterr()
    assert main(["seat-ballast", str(seat_rule), "--set", "driver_mass=70 kg", "--material", "tungsten_b777_class3",
                 "--margin", "0.5kg", "--heights", "100mm,300mm"]) == 0
    text = capsys.readouterr().out
    assert text.count("NOT ALLOWED by the ballast-height rule") == 1  # 100 mm is under the band, 300 mm within


@pytest.mark.parametrize(
    ("fields", "field", "words"),
    [
        ('groups = ["chassis/seat/ballast"]\n', "limit", "give either limit"),
        ('groups = ["chassis/seat/ballast"]\nlimit = "100 mm"\nreference = "driver"\n', "limit", "give either limit"),
        ('groups = ["chassis/seat/ballast"]\nreference = "driver"\n', "band", "is missing"),
        ('groups = ["chassis/seat/ballast"]\nlimit = "100 kg"\n', "limit", "length"),
        ('limit = "100 mm"\n', "groups", "name the group"),
    ],
)
def test_ballast_height_rule_fields(tmp_path, capsys, fields, field, words):
    car = tmp_path / "car.toml"
    car.write_text(f'[model]\nname = "x"\nextends = "{CAR.as_posix()}"\n[[rule]]\nname = "seat height"\n'
                   f'check = "ballast_height"\n{fields}')
    assert main(["check", str(car)]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert f"rule 'seat height', field '{field}'" in err and words in err and err.count("\n") == 1


def test_place_ballast_rule_tied_to_no_case(tmp_path, capsys):
    car = tmp_path / "car.toml"
    car.write_text(f'[model]\nname = "x"\nextends = "{CAR.as_posix()}"\n[[rule]]\nname = "ghost"\ncheck = "min_mass"\n'
                   'limit = "400 kg"\ncase = "monsoon"\n')
    assert main(["place-ballast", str(car), str(PLAN), "--no-fit"]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert "rule 'ghost', field 'case': the model defines no load case 'monsoon'" in err and err.count("\n") == 1
