"""Regressions from fuzzing the input readers: each smallest reproducer gives one line naming the file, the item and
the field (a project error type), never a traceback, a hang or a lost file."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import EXIT_USAGE, main
from massmodel.compare.estimate import EstimateError, loads_estimate
from massmodel.core import expr
from massmodel.core.errors import InputError
from massmodel.core.polygons import MAX_POLYGON_CORNERS, polygon_problem
from massmodel.core.shapes import MIN_LENGTH_M, Extrusion, ShapeError
from massmodel.measure.session import MeasurementFileError, loads_session
from massmodel.modelfile.loader import load_model, loads_model
from massmodel.modelfile.reader import ModelFileError

UNITS = '[model]\nname = "m"\n[units]\nlength = "mm"\nmass = "kg"\n'
UNITS_ONLY = UNITS.split("\n", 2)[2]
PART = '[[part]]\npath = "a/b"\nshape = "box"\nsize = [10, 10, 10]\nmaturity = "calculated"\n'


def write(path: Path, text: str | bytes) -> Path:
    path.write_bytes(text.encode() if isinstance(text, str) else text)
    return path


# --- 1. nesting too deep -------------------------------------------------------------------------------------------


@pytest.mark.parametrize("text", ["x = " + "[" * 3000 + "1" + "]" * 3000 + "\n", "x = " + "{a=" * 3000 + "1" + "}" * 3000])
def test_deep_toml_is_refused_by_name(tmp_path, text) -> None:
    with pytest.raises(ModelFileError, match=r"m.toml: tables and lists nest too deep"):
        load_model(write(tmp_path / "m.toml", text))


def test_deep_json_estimate_is_refused_by_name() -> None:
    with pytest.raises(EstimateError, match=r"^e.json: tables and lists nest too deep"):
        loads_estimate("[" * 100_000 + "]" * 100_000, "e.json", "json")


# --- 2. not UTF-8 --------------------------------------------------------------------------------------------------


def test_non_utf8_names_the_file_and_offset(tmp_path) -> None:
    path = write(tmp_path / "m.toml", b'[model]\nname = "caf\xe9"\n')
    with pytest.raises(ModelFileError, match=r"m.toml: not UTF-8 text: byte 0xe9 at offset 19"):
        load_model(path)


# --- 3. values of the wrong TOML type ------------------------------------------------------------------------------


@pytest.mark.parametrize("value", ['{ x = "steel" }', '["steel"]', "[]"])
def test_material_of_the_wrong_type(value) -> None:
    with pytest.raises(ModelFileError, match=r"part 'a/b', field 'material': expected a material name"):
        loads_model(UNITS + PART + f"material = {value}\n", label="m.toml")


def test_group_entry_that_is_not_a_table() -> None:
    with pytest.raises(ModelFileError, match=r"^m.toml: group #1: expected a table"):
        loads_model('group = [1]\n' + UNITS + PART + 'mass = "1 kg"\n', label="m.toml")


def test_base_model_head_that_is_not_a_table(tmp_path) -> None:
    write(tmp_path / "base.toml", 'model = 3\n' + UNITS_ONLY)
    child = write(tmp_path / "car.toml", '[model]\nname = "c"\nextends = "base.toml"\n' + UNITS_ONLY + PART
                  + 'mass = "1 kg"\n')
    with pytest.raises(ModelFileError, match=r"base.toml: \[model\]: must be a table"):
        load_model(child)


CSV_HEAD = ("#: format = massmodel-estimate/1\n#: units.mass = kg\n#: units.length = mm\n#: units.inertia = kg*mm^2\n"
            "#: axes = x=+x, y=+y, z=+z\n#: origin_in_model = 0 0 0\n#: inertia_about = cg\n#: products = negative\n"
            "group,mass,cg_x,cg_y,cg_z,i_xx,i_yy,i_zz,i_xy,i_xz,i_yz,note\n")


def test_csv_field_over_the_csv_limit() -> None:
    # the csv module refuses fields over 128 KiB (csv.field_size_limit(): 131072 characters)
    row = '*,1,0,0,0,1,1,1,0,0,0,"' + "x" * 200_000 + '"\n'
    with pytest.raises(EstimateError, match=r"^e.csv: line 10: not a CSV line: field larger than field limit"):
        loads_estimate(CSV_HEAD + row, "e.csv", "csv")


def test_estimate_axis_that_is_empty() -> None:
    text = CSV_HEAD.replace("x=+x, y=+y, z=+z", "x=, y=+y, z=+z") + "*,1,0,0,0,1,1,1,0,0,0,n\n"
    with pytest.raises(EstimateError, match=r"^e.csv, field 'axes': axis 'x' = '': expected a signed model axis"):
        loads_estimate(text, "e.csv", "csv")


# --- 4. the merge marker is not a user key -------------------------------------------------------------------------


def test_a_user_key_named_like_an_internal_marker_is_an_unknown_field(tmp_path) -> None:
    write(tmp_path / "base.toml", '[model]\nname = "b"\n' + UNITS_ONLY + PART + 'mass = "1 kg"\n')
    child = write(tmp_path / "car.toml", '[model]\nname = "c"\nextends = "base.toml"\n' + UNITS_ONLY
                  + PART.replace("a/b", "a/c") + 'mass = "1 kg"\n__file__ = "base.toml"\n')
    with pytest.raises(ModelFileError, match=r"car.toml: part 'a/c', field '__file__': unknown field"):
        load_model(child)


def test_errors_in_base_tables_still_name_the_base_file(tmp_path) -> None:
    write(tmp_path / "base.toml", '[model]\nname = "b"\n' + UNITS_ONLY + PART + 'mass = "-1 kg"\n')
    child = write(tmp_path / "car.toml", '[model]\nname = "c"\nextends = "base.toml"\n' + UNITS_ONLY)
    with pytest.raises(ModelFileError, match=r"base.toml: part 'a/b', field 'mass': must be positive"):
        load_model(child)
    model = load_model(write(tmp_path / "base.toml", '[model]\nname = "b"\n' + UNITS_ONLY + PART + 'mass = "1 kg"\n')
                       .with_name("car.toml"))
    assert [c.path for c in model.components] == ["a/b"]


# --- 5. resource bombs ---------------------------------------------------------------------------------------------


def test_polygon_check_agrees_with_the_pairwise_definition() -> None:
    # closed form of simplicity: a star polygon {5/2} crosses itself, the convex pentagon does not
    t = 2 * np.pi * np.arange(5) / 5
    pentagon = np.column_stack([np.cos(t), np.sin(t)])
    assert polygon_problem(pentagon) is None
    assert polygon_problem(pentagon[[0, 2, 4, 1, 3]]) == "edge 0-1 meets edge 2-3 (the outline must not cross itself)"
    assert polygon_problem(np.array([[0, 0], [1, 0], [1, 1], [1, 0]], float)).startswith("corners 1 and 3 coincide")


def test_polygon_with_many_corners_is_checked_and_too_many_refused() -> None:
    n = MAX_POLYGON_CORNERS
    t = 2 * np.pi * np.arange(n) / n
    ring = np.column_stack([np.cos(t), np.sin(t)])
    assert polygon_problem(ring) is None  # quadratic memory made this a bomb; the sweep is linear
    with pytest.raises(ShapeError, match=rf"{n + 1} corners: an outline has at most {n}"):
        Extrusion(tuple(map(tuple, np.vstack([ring, [[0.5, 0.0]]]))), 0.01)


def test_a_shape_below_a_nanometre_is_refused() -> None:
    text = UNITS + PART.replace('shape = "box"\nsize = [10, 10, 10]', 'shape = "cylinder"\nradius = "1e-9 mm"\n'
                                'length = "10 mm"') + 'mass = "1 kg"\n'
    with pytest.raises(ModelFileError, match=r"part 'a/b', field 'radius': radius \(1e-09 mm\) is below the smallest "
                                             r"size of a shape, 1e-06 mm"):
        loads_model(text, label="m.toml")
    assert MIN_LENGTH_M == 1e-9


def test_a_sliver_cutout_has_a_bounded_number_of_samples() -> None:
    from massmodel.core.shapes import Cylinder

    # a 1 nm hole 10 mm deep: the samples along its side were sqrt(L n / r) = 2e5 per row; bounded to 64 n
    needle = Cylinder(radius=1e-9, length=0.01)
    pts = needle.surface_points(400)
    assert len(pts) <= 3 * (64 * 400 + 8)
    assert np.all(np.abs(pts[:, 2]) <= 0.005 + 1e-12)


# --- 6. magnitude limits of sessions and estimates -----------------------------------------------------------------

SESSION = ('[session]\nname = "s"\n[units]\nmass = "kg"\nlength = "mm"\n[[weighing]]\nlabel = "1"\n'
           'readings = [READ, 30, 50, 50]\n')


@pytest.mark.parametrize("reading, shown", [("1e308", "1e+308 kg"), ('"2e12 N"', "2.03943e+11 kg")])
def test_session_readings_beyond_the_model_limits(reading, shown) -> None:
    with pytest.raises(MeasurementFileError, match=rf"s.toml: weighing '1', field 'readings\[0\]': .* is "
                                                   rf"{re.escape(shown)}; no "
                                                   r"part of a car comes near that \(the limit is 1e\+09 kg\)"):
        loads_session(SESSION.replace("READ", reading), label="s.toml")


def test_estimate_numbers_beyond_the_model_limits() -> None:
    with pytest.raises(EstimateError, match=r"e.csv: line 10 \(group '\*'\), field 'cg\[0\]': '1e\+300 mm' is "
                                            r"1e\+297 m; no part of a car comes near that"):
        loads_estimate(CSV_HEAD + "*,1,1e300,0,0,1,1,1,0,0,0,n\n", "e.csv", "csv")
    data = {"format": "massmodel-estimate/1", "units": {"mass": "t", "length": "mm", "inertia": "kg*mm^2"},
            "axes": {"x": "+x", "y": "+y", "z": "+z"}, "origin_in_model": [0, 0, 0], "inertia_about": "cg",
            "products": "negative", "items": [{"group": "*", "mass": 2e6, "cg": [0, 0, 0],
                                               "inertia": [[1, 0, 0], [0, 1, 0], [0, 0, 1]]}]}
    with pytest.raises(EstimateError, match=r"field 'mass': '2e\+06 t' is 2e\+09 kg"):
        loads_estimate(json.dumps(data), "e.json", "json")


# --- 10. messages --------------------------------------------------------------------------------------------------


def test_set_of_another_dimension_names_the_option(tmp_path, capsys) -> None:
    model = write(tmp_path / "car.toml", UNITS + '[parameters]\nfuel_mass = "3 kg"\n' + PART + 'mass = "fuel_mass"\n')
    assert main(["report", str(model), "--set", "fuel_mass=3 m"]) == EXIT_USAGE
    assert capsys.readouterr().err == (f"massmodel report: error: {model}: --set fuel_mass: '3 m' is in m, but the "
                                       "file gives fuel_mass in kg (fuel_mass = '3 kg')\n")


def test_plan_expression_error_is_one_line_without_a_caret() -> None:
    from massmodel.ballast.plan import PlanError, loads_plan

    model = loads_model(UNITS + PART + 'mass = "1 kg"\n[vehicle]\nwheelbase = 2000\ntrack_front = 1500\n'
                        'track_rear = 1400\nground_level = -300\n[[slot]]\nname = "s"\nshape = "box"\n'
                        'size = [100, 100, 30]\nat = [0, 0, -200]\nclearance = "1 mm"\n', label="m.toml")
    plan = ('[plan]\nname = "p"\n[targets]\nmass_margin = "0.5 kg"\n[defaults]\nmaterial = "tungsten_b777_class3"\nincrement = "0.5 mm +"\n'
            '[[candidate]]\nslot = "s"\nfill = "+z"\n')
    with pytest.raises(PlanError) as info:
        loads_plan(plan, model, label="p.toml")
    text = str(info.value)
    assert "\n" not in text and "^" not in text
    assert "field 'increment': the expression ends too early" in text and "(in '0.5 mm +', at character" in text


def test_session_naming_a_missing_model_blames_its_field(tmp_path, capsys) -> None:
    session = write(tmp_path / "s.toml", SESSION.replace("READ", "30").replace('name = "s"\n',
                                                                                 'name = "s"\nmodel = "nothere.toml"\n'))
    assert main(["weigh", str(session)]) == EXIT_USAGE
    assert capsys.readouterr().err == (f"massmodel weigh: error: {session}: [session], field 'model': cannot read "
                                       f"'{tmp_path / 'nothere.toml'}' (no such file)\n")


def test_every_reader_error_is_an_input_error() -> None:
    for kind in (ModelFileError, MeasurementFileError, EstimateError):
        assert issubclass(kind, InputError)
    with pytest.raises(expr.ParameterError):  # the evaluation cache keeps raising for a bad definition
        for _ in range(2):
            expr.evaluate_parameters({"a": "b + 1"})
