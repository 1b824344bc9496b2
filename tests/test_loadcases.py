"""Load cases: parameter overrides and part switches against models built by hand; rules tied to cases; errors."""

from __future__ import annotations

import json

import pytest

from conftest import assert_props_close
from massmodel.cli import main
from massmodel.core.loadcases import BASE_CASE
from massmodel.core.massprops import combine
from massmodel.modelfile.loader import ModelFileError, load_case_models, load_model, loads_model
from massmodel.vehicle.balance import check_rules_in_cases, static_balance

HEAD = """
[model]
name = "case test"
[units]
length = "mm"
mass = "kg"
[parameters]
fuel_mass = "20 kg"
fuel_x = "-1500 mm"
[vehicle]
wheelbase = "2000 mm"
track_front = "1500 mm"
track_rear = "1400 mm"
ground_level = "-300 mm"
"""
PARTS = """
[[part]]
path = "body/tub"
shape = "box"
size = [1800, 600, 400]
mass = "250 kg"
maturity = "calculated"
at = [-1000, 0, 0]
[[part]]
path = "body/left/pod"
shape = "cylinder"
radius = 100
length = 600
mass = "12 kg"
maturity = "estimated"
at = [-1100, 400, -100]
mirror = true
[[part]]
path = "fuel/petrol"
shape = "box"
size = [300, 400, 200]
mass = "fuel_mass"
maturity = "calculated"
at = ["fuel_x", 0, -150]
[[part]]
path = "driver/body"
shape = "sphere"
radius = 250
mass = "75 kg"
maturity = "measured"
at = [-900, 0, 150]
"""
EXTRAS = """
[[group]]
path = "extras"
optional = true
maturity = "estimated"
[[part]]
path = "extras/logger"
shape = "box"
size = [200, 100, 50]
mass = "4 kg"
at = [-1900, 100, 50]
[[part]]
path = "extras/left/camera"
shape = "point"
mass = "0.5 kg"
at = [-500, 300, 400]
mirror = true
"""
CASES = """
[[case]]
name = "qualifying"
description = "little fuel"
set = { fuel_mass = "5 kg" }
[[case]]
name = "full"
set = { fuel_mass = "45 kg", fuel_x = "-1550 mm" }
[[case]]
name = "driver_out"
switch_off = ["driver", "body/right/pod"]
general_rules = false
[[case]]
name = "test_day"
switch_on = ["extras"]
switch_off = ["extras/right/camera"]
"""
RULES = """
[[rule]]
name = "minimum mass"
check = "min_mass"
limit = "350 kg"
exclude = ["fuel"]
[[rule]]
name = "rear load with little fuel"
check = "min_axle_load"
axle = "rear"
limit = "185 kg"
case = "qualifying"
[[rule]]
name = "empty car"
check = "min_mass"
limit = "280 kg"
case = ["driver_out"]
[[rule]]
name = "base only"
check = "max_cg_height"
limit = "400 mm"
case = "base"
"""
TEXT = HEAD + PARTS + EXTRAS + CASES + RULES


@pytest.fixture
def car(tmp_path):
    path = tmp_path / "car.toml"
    path.write_text(TEXT)
    return path


def by_hand(text: str):
    """A model built from a hand-edited file without cases (the oracle for each case)."""
    return loads_model(HEAD + text, label="hand.toml")


def test_base_leaves_optional_parts_out(car):
    base = load_model(car)
    assert base.case == BASE_CASE
    assert [c.path for c in base.components] == ["body/tub", "body/left/pod", "body/right/pod", "fuel/petrol",
                                                 "driver/body"]
    assert_props_close(base.mass_properties(), by_hand(PARTS).mass_properties(), rtol=1e-13)
    assert [c.name for c in base.load_cases] == ["qualifying", "full", "driver_out", "test_day"]


def test_parameter_case_equals_the_file_with_the_parameter_edited(car):
    quali = load_model(car, case="qualifying")
    hand = by_hand(PARTS.replace('mass = "fuel_mass"', 'mass = "5 kg"'))
    assert_props_close(quali.mass_properties(), hand.mass_properties(), rtol=1e-13)
    assert quali.component("fuel/petrol").props.mass == 5.0
    full = load_model(car, case="full")
    hand = by_hand(PARTS.replace('mass = "fuel_mass"', 'mass = "45 kg"').replace('"fuel_x"', '"-1550 mm"'))
    assert_props_close(full.mass_properties(), hand.mass_properties(), rtol=1e-13)
    # closed form: moving the fuel point changes the total first moment by m * dx (the fuel box is a MASS source)
    base = load_model(car)
    m0, m1 = base.mass_properties().mass, full.mass_properties().mass
    assert m1 - m0 == pytest.approx(25.0, abs=1e-12)
    first_moment = full.mass_properties().center[0] * m1 - base.mass_properties().center[0] * m0
    assert first_moment == pytest.approx(45.0 * -1.550 - 20.0 * -1.500, abs=1e-12)


def test_switch_off_equals_the_file_without_those_parts(car):
    out = load_model(car, case="driver_out")
    assert sorted(c.path for c in out.components) == ["body/left/pod", "body/tub", "fuel/petrol"]
    tub, left = (by_hand(PARTS).component(p).props for p in ("body/tub", "body/left/pod"))
    fuel = by_hand(PARTS).component("fuel/petrol").props
    assert_props_close(out.mass_properties(), combine([tub, left, fuel]), rtol=1e-13)


def test_switch_on_brings_optional_parts_and_switch_off_wins(car):
    day = load_model(car, case="test_day")
    paths = [c.path for c in day.components]
    assert "extras/logger" in paths and "extras/left/camera" in paths and "extras/right/camera" not in paths
    hand = by_hand(PARTS + EXTRAS.replace("optional = true", ""))
    want = hand.mass_properties(exclude=["extras/right/camera"])
    assert_props_close(day.mass_properties(), want, rtol=1e-13)
    assert day.mass_properties().mass == pytest.approx(250 + 24 + 20 + 75 + 4 + 0.5, abs=1e-12)


def test_command_line_overrides_apply_after_the_case(car):
    m = load_model(car, overrides={"fuel_mass": "7 kg"}, case="full")
    assert m.component("fuel/petrol").props.mass == pytest.approx(7.0)
    assert m.component("fuel/petrol").props.center[0] == pytest.approx(-1.550)


def test_load_case_models_match_single_loads(car):
    models = load_case_models(car)
    assert list(models) == ["base", "qualifying", "full", "driver_out", "test_day"]
    for name, model in models.items():
        assert model.case == name
        assert_props_close(model.mass_properties(), load_model(car, case=name).mass_properties(), rtol=0)


def test_rules_are_checked_in_their_cases(car):
    models = load_case_models(car)
    got = [(case, r.name, r.passed) for case, r in check_rules_in_cases(models)]
    base_mp = models["base"].mass_properties()
    quali_rear = static_balance(models["qualifying"].mass_properties(), models["qualifying"].vehicle).rear
    # hand: rear axle load = m * a1 / L with a1 the CG's distance behind the front axle (Jazar 2008, eq. 2.2)
    m_q = 250 + 24 + 5 + 75
    a1 = -(250 * -1.0 + 24 * -1.1 + 5 * -1.5 + 75 * -0.9) / m_q
    assert quali_rear == pytest.approx(m_q * a1 / 2.0, rel=1e-12)
    assert quali_rear < 185.0
    assert base_mp.center[2] + 0.3 < 0.4
    # minimum mass without fuel: 250 + 2 * 12 + 75 = 349 kg < 350 kg; the test day adds 4 + 0.5 kg of extras
    # (one camera switched off); driver_out checks only its own rule, fuel included: 250 + 12 + 20 = 282 kg
    assert got == [
        ("base", "minimum mass", False),
        ("base", "base only", True),
        ("qualifying", "minimum mass", False),
        ("qualifying", "rear load with little fuel", False),
        ("full", "minimum mass", False),
        ("driver_out", "empty car", True),
        ("test_day", "minimum mass", True),
    ]
    values = {(case, r.name): r.value for case, r in check_rules_in_cases(models)}
    assert values[("driver_out", "empty car")] == pytest.approx(250 + 12 + 20, abs=1e-12)  # tub, one pod, fuel
    assert values[("test_day", "minimum mass")] == pytest.approx(250 + 2 * 12 + 75 + 4 + 0.5, abs=1e-12)  # no fuel


# --- bad input: one clear error naming the file, the item and the field ------------------------------------------

def error_of(text: str, case: str | None = None) -> ModelFileError:
    with pytest.raises(ModelFileError) as info:
        loads_model(text, label="bad.toml", case=case)
    return info.value


def test_unknown_case_names_the_known_ones(car):
    with pytest.raises(ModelFileError) as info:
        load_model(car, case="qualifyng")
    e = info.value
    assert (e.file, e.item, e.field) == (str(car), "case 'qualifyng'", None)
    assert "base, qualifying, full, driver_out, test_day" in e.message


@pytest.mark.parametrize(
    ("case_text", "item", "field", "words"),
    [
        ('name = "x"\nswitch_off = ["drivers"]', "case 'x'", "switch_off", "no part or group 'drivers'"),
        ('name = "x"\nswitch_on = ["driver"]', "case 'x'", "switch_on", "optional = true"),
        ('name = "x"\nset = { fuel_mas = "1 kg" }', "case 'x'", "set.fuel_mas", "did you mean fuel_mass"),
        ('name = "x"\nset = { fuel_mass = "1 kg +" }', "case 'x'", "set.fuel_mass",
         "parameter 'fuel_mass': the expression ends too early; expected a number, a name or '(' (in '1 kg +', at "
         "character 7)"),
        ('name = "x"\nset = { fuel_mass = true }', "case 'x'", "set.fuel_mass", "expected a number"),
        ('name = "x"\nset = "fuel_mass = 1 kg"', "case 'x'", "set", "table of parameter = value"),
        ('name = "x"\nswitch_off = "driver"', "case 'x'", "switch_off", "list of part or group paths"),
        ('name = "x"\ngeneral_rules = "no"', "case 'x'", "general_rules", "true or false"),
        ('name = "x"\nswitch_of = ["driver"]', "case 'x'", "switch_of", "unknown field"),
        ('name = "base"\nswitch_off = ["driver"]', "case 'base'", "name", "without any case"),
        ('name = "two words"', "case #1", "name", "letters, digits"),
    ],
)
def test_bad_case_tables(case_text, item, field, words):
    e = error_of(HEAD + PARTS + "[[case]]\n" + case_text + "\n")
    assert (e.file, e.item, e.field) == ("bad.toml", item, field)
    assert words in e.message


def test_a_bad_case_is_reported_when_loading_the_base():
    # a case's parameter error (here an unknown name) is found whichever case, or none, is loaded
    e = error_of(HEAD + PARTS + '[[case]]\nname = "x"\nset = { fuel_mass = "2 kg" }\n[[case]]\nname = "y"\n'
                 'set = { fuel_x = "fuel_mass * nope" }\n')
    assert (e.file, e.item, e.field) == ("bad.toml", "case 'y'", "set.fuel_x")
    assert "unknown name 'nope'" in e.message and "^" not in e.message


def test_a_case_whose_parameters_break_a_part_names_the_part_and_the_case():
    e = error_of(HEAD + PARTS + '[[case]]\nname = "x"\nset = { fuel_mass = "2 m" }\n', case="x")
    assert (e.file, e.item, e.field) == ("bad.toml", "part 'fuel/petrol'", "mass")
    assert e.message.endswith("(in load case 'x')")


def test_duplicate_case_and_rule_tied_to_an_unknown_case():
    e = error_of(HEAD + PARTS + '[[case]]\nname = "x"\n[[case]]\nname = "x"\n')
    assert (e.item, e.field) == ("case 'x'", "name") and "twice" in e.message
    e = error_of(HEAD + PARTS + '[[rule]]\nname = "r"\ncheck = "min_mass"\nlimit = "1 kg"\ncase = "quali"\n')
    assert (e.file, e.item, e.field) == ("bad.toml", "rule 'r'", "case")
    assert "no load case 'quali'" in e.message
    e = error_of(HEAD + PARTS + '[[rule]]\nname = "r"\ncheck = "min_mass"\nlimit = "1 kg"\ncase = []\n')
    assert (e.item, e.field) == ("rule 'r'", "case")


def test_a_variant_inherits_the_cases_and_errors_name_the_base_file(car, tmp_path):
    variant = tmp_path / "variant.toml"
    variant.write_text('[model]\nname = "variant"\nextends = "car.toml"\n[[case]]\nname = "heavy"\n'
                       'set = { fuel_mass = "60 kg" }\n')
    models = load_case_models(variant)
    assert list(models) == ["base", "qualifying", "full", "driver_out", "test_day", "heavy"]
    assert models["heavy"].component("fuel/petrol").props.mass == pytest.approx(60.0)
    variant.write_text('[model]\nname = "variant"\nextends = "car.toml"\nremove = ["driver"]\n')
    with pytest.raises(ModelFileError) as info:
        load_model(variant)
    assert (info.value.file, info.value.item, info.value.field) == (str(car), "case 'driver_out'", "switch_off")


def test_case_table_shows_no_negative_zero(car):
    # a coordinate that is zero up to round-off prints as 0.0000, as in the single-case report
    from massmodel.report.cases import build_case_table, format_case_table

    data = build_case_table(load_case_models(car))
    data["cases"][0]["cg_m"][1] = -1e-12
    row = next(line for line in format_case_table(data).splitlines() if line.startswith("CG y m"))
    assert row.split()[5] == "0.0000" and "-0.0000" not in row  # after the label "CG y m (model axes)"


# --- command line -------------------------------------------------------------------------------------------------

def test_report_all_cases_writes_the_side_by_side_json(car, tmp_path, capsys):
    out = tmp_path / "cases.json"
    assert main(["report", str(car), "--all-cases", "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "LOAD CASES" in text and "driver_out" in text and "RULE CHECKS BY CASE" in text
    data = json.loads(out.read_text())
    assert data["format"] == "massmodel-cases/1"
    assert [c["name"] for c in data["cases"]] == ["base", "qualifying", "full", "driver_out", "test_day"]
    models = load_case_models(car)
    for row in data["cases"]:
        model = models[row["name"]]
        mp = model.mass_properties()
        bal = static_balance(mp, model.vehicle)
        assert row["mass_kg"] == pytest.approx(mp.mass, rel=1e-15)
        assert row["cg_m"] == pytest.approx(mp.center.tolist(), rel=1e-15)
        assert row["front_fraction"] == pytest.approx(bal.front_fraction, rel=1e-15)
        assert row["corner_loads_kg"]["rear_right"] == pytest.approx(bal.corners[3], rel=1e-15)
        assert row["inertia_vehicle_axes_kg_m2"]["yaw"] == pytest.approx(mp.inertia[2, 2], rel=1e-15)
    assert data["cases"][1]["overrides"] == {"fuel_mass": "5 kg"}
    assert data["cases"][3]["switched_off"] == ["driver", "body/right/pod"]
    assert data["rules_passed"] is False
    assert main(["report", str(car), "--all-cases", "--strict"]) == 1


def test_report_one_case_and_bad_case_on_the_command_line(car, tmp_path, capsys):
    out = tmp_path / "r.json"
    assert main(["report", str(car), "--case", "qualifying", "--brief", "--json", str(out)]) == 0
    assert "load case qualifying" in capsys.readouterr().out
    data = json.loads(out.read_text())
    assert data["case"] == "qualifying"
    assert data["mass_kg"] == pytest.approx(250 + 24 + 5 + 75, abs=1e-12)
    assert [r["name"] for r in data["rules"]] == ["minimum mass", "rear load with little fuel"]
    bad = tmp_path / "never.json"
    assert main(["report", str(car), "--case", "nope", "--json", str(bad)]) == 2
    err = capsys.readouterr().err
    assert f"{car}: case 'nope': no such load case" in err and "Traceback" not in err
    assert not bad.exists()
    assert main(["report", str(car), "--case", "full", "--all-cases"]) == 2
    assert "either --case NAME or --all-cases" in capsys.readouterr().err


def test_check_lists_failures_by_case(car, capsys):
    assert main(["check", str(car)]) == 0
    text = capsys.readouterr().out
    assert "5 load cases · 7 rule checks (4 failing)" in text
    assert "FAIL [qualifying] rear load with little fuel" in text
    assert main(["check", str(car), "--case", "test_day"]) == 0
    assert "1 rule checks (0 failing)" in capsys.readouterr().out


def test_a_file_without_cases_reports_as_before(tmp_path):
    path = tmp_path / "plain.toml"
    path.write_text(HEAD + PARTS)
    models = load_case_models(path)
    assert list(models) == ["base"]
    assert models["base"].load_cases == ()
    assert models["base"].case == "base"
    assert_props_close(models["base"].mass_properties(), load_model(path).mass_properties(), rtol=0)
    assert models["base"].mass_properties().mass == pytest.approx(250 + 24 + 20 + 75, abs=1e-12)
