"""The file layer shared by every input file (massmodel.modelfile.reader) and the command-line option types
(massmodel.cli.args): one point syntax, one [units] reader, one error naming the file for unreadable, non-UTF-8 and
deeply nested files, in the model file, the ballast plan, the measurement session and the CAD estimate."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from massmodel.ballast.plan import PlanError, load_plan, loads_plan
from massmodel.cli import EXIT_USAGE, main
from massmodel.compare.estimate import EstimateError, load_estimate, loads_estimate
from massmodel.core.errors import InputError
from massmodel.measure.session import MeasurementFileError, load_session, loads_session
from massmodel.modelfile.loader import ModelFileError, load_model, loads_model
from massmodel.modelfile.reader import MAX_NESTING, split_vector

ROOT = Path(__file__).resolve().parents[1]
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"
PLAN = ROOT / "parts_demo" / "bl3_ballast_plan.toml"
SESSION = ROOT / "parts_demo" / "bl3_measurements.toml"
ESTIMATE = ROOT / "parts_demo" / "brindlecombe_bl3_cad_estimate.json"

MODEL = """
[model]
name = "t"
{units}
[[part]]
path = "a"
shape = "box"
size = {size}
density = "1000 kg/m^3"
maturity = "calculated"
at = {at}
"""


def model_text(at: str, size: str = '["100 mm", "50 mm", "20 mm"]', units: str = "") -> str:
    return MODEL.format(at=at, size=size, units=units)


# --- the syntax --------------------------------------------------------------------------------------------------

@pytest.mark.parametrize(
    ("written", "entries"),
    [
        ("10, 20, -265 mm", ["10 mm", "20 mm", "-265 mm"]),  # a unit after the last number applies to all
        ("10 mm, 20 mm, -0.265 m", ["10 mm", "20 mm", "-0.265 m"]),
        ("(1, 2, 3) in", ["1 in", "2 in", "3 in"]),
        ("[1, 2, 3] mm", ["1 mm", "2 mm", "3 mm"]),
        ("0 0 -265", ["0", "0", "-265"]),  # numbers separated by spaces (as some CAD reports write them)
        ("0, 0, max(1 mm, 2 mm)", ["0", "0", "max(1 mm, 2 mm)"]),  # a comma inside brackets does not split
        ("0, 0, wheelbase/2", ["0", "0", "wheelbase/2"]),  # not plain numbers: nothing is distributed
        (["10 mm", 20, "x"], ["10 mm", 20, "x"]),
    ],
)
def test_point_forms_split_into_three_entries(written, entries):
    assert split_vector(written) == entries


@pytest.mark.parametrize("written", ["0, 0", "1, 2, 3, 4 mm", "1,,2", "", 5, [1, 2], None])
def test_point_forms_that_are_not_three_entries_are_refused(written):
    with pytest.raises(ValueError, match="expected a point: a list of 3 values"):
        split_vector(written)


# --- one point, the same in every input kind -----------------------------------------------------------------------

@pytest.mark.parametrize(
    ("at", "units"),
    [('["10 mm", "20 mm", "-265 mm"]', ""), ('"10, 20, -265 mm"', ""), ('"10 mm, 2 cm, -0.265 m"', ""),
     ("[10, 20, -265]", '[units]\nlength = "mm"'), ('"10, 20, -265"', '[units]\nlength = "mm"')],
)
def test_model_file_points_in_every_form(at, units):
    part = loads_model(model_text(at, units=units)).components[0]
    # 1 mm = 0.001 m exactly (SI definition of the prefix)
    assert part.pose.translation.tolist() == pytest.approx([0.010, 0.020, -0.265], rel=1e-15, abs=0.0)


def test_model_file_sizes_take_the_same_syntax():
    part = loads_model(model_text('"0, 0, 0 mm"', size='"100, 50, 20 mm"')).components[0]
    assert part.props.mass == pytest.approx(1000.0 * 0.1 * 0.05 * 0.02, rel=1e-12)  # density × volume of the box


def test_model_file_point_errors_name_the_entry():
    with pytest.raises(ModelFileError) as info:
        loads_model(model_text('"10, 20, -265 kg"'), label="m.toml")
    e = info.value
    assert (e.file, e.item, e.field) == ("m.toml", "part 'a'", "at[0]") and "expected a length" in e.message
    with pytest.raises(ModelFileError) as info:
        loads_model(model_text('"10, 20 mm"'), label="m.toml")
    assert info.value.field == "at" and "list of 3 values" in info.value.message


@pytest.fixture(scope="module")
def car():
    return load_model(CAR)


@pytest.mark.parametrize(
    ("at", "units"),
    [('["375 mm", "0 mm", "-185 mm"]', ""), ('"375, 0, -185 mm"', ""), ('"(0.375, 0, -0.185) m"', ""),
     ("[375, 0, -185]", '[units]\nlength = "mm"\n')],
)
def test_plan_box_points_in_every_form(car, at, units):
    plan = loads_plan(f'[plan]\nname = "t"\n{units}[targets]\nmass_margin = "0.5 kg"\n[[candidate]]\nslot = "nose"\nfill = "+z"\nmaterial = "lead"\n'
                      f'increment = "1 mm"\nbox = {{ size = "100, 120, 40 mm", at = {at}, clearance = "1 mm" }}\n', car)
    env = plan.candidates[0].envelope
    assert env.pose.translation.tolist() == pytest.approx([0.375, 0.0, -0.185], rel=1e-15, abs=0.0)
    assert env.size == pytest.approx((0.1, 0.12, 0.04), rel=1e-15)


def test_plan_without_units_still_asks_for_the_unit(car):
    with pytest.raises(PlanError) as info:
        loads_plan('[plan]\nname = "t"\n[targets]\nmass_margin = "0.5 kg"\n[[candidate]]\nslot = "nose"\nfill = "+z"\nmaterial = "lead"\n'
                   'increment = "1 mm"\nbox = { size = [100, 120, 40], at = "0, 0, 0 mm", clearance = "1 mm" }\n',
                   car, label="p.toml")
    assert (info.value.field, "no default units" in info.value.message) == ("box.size[0]", True)


PEND = """
[[pendulum]]
name = "wheel"
kind = "bifilar"
body_mass = "10 kg"
wire_spacing = "500 mm"
wire_length = "2 m"
periods = ["2.01 s"]
compare = {{ axis = {axis}, through = {through} }}
"""


@pytest.mark.parametrize(
    ("through", "units"),
    [('["0 mm", "100 mm", "-265 mm"]', ""), ('"0, 100, -265 mm"', ""), ("[0, 100, -265]", '[units]\nlength = "mm"'),
     ('"0, 0.1, -0.265"', '[units]\nlength = "m"')],
)
def test_session_through_points_in_every_form(through, units):
    s = loads_session('[session]\nname = "t"\n' + units + PEND.format(axis='"up"', through=through))
    assert s.pendulums[0].compare.through.tolist() == pytest.approx([0.0, 0.1, -0.265], rel=1e-15, abs=0.0)


def test_session_axis_as_a_text_vector():
    s = loads_session('[session]\nname = "t"\n' + PEND.format(axis='"0, 0, 2"', through='"cg"'))
    assert s.pendulums[0].compare.axis.tolist() == [0.0, 0.0, 1.0]
    assert s.pendulums[0].compare.through is None


def estimate(**changes):
    base = {"format": "massmodel-estimate/1", "units": {"mass": "kg", "length": "m", "inertia": "kg*m^2"},
            "axes": {"x": "+x", "y": "+y", "z": "+z"}, "origin_in_model": [0, 0, 0], "inertia_about": "cg",
            "products": "negative",
            "items": [{"group": "*", "mass": 2.0, "cg": [1.0, 2.0, 3.0],
                       "inertia": {"xx": 3.0, "yy": 4.0, "zz": 5.0, "xy": 0.1, "xz": -0.2, "yz": 0.3}}]}
    base.update(changes)
    return json.dumps(base)


@pytest.mark.parametrize("origin", [[0, 0, -0.265], "0, 0, -265 mm", ["0 mm", "0 mm", "-26.5 cm"], "0 0 -0.265"])
def test_estimate_origin_in_every_form_is_kept_in_the_declared_unit(origin):
    conv = loads_estimate(estimate(origin_in_model=origin), "e.json").conventions
    assert conv.origin.tolist() == pytest.approx([0.0, 0.0, -0.265], rel=1e-15, abs=0.0)  # declared unit: m


def test_estimate_reference_point_with_units():
    # about the item's own CG (1, 2, 3) m, so that the tensor as written is the one about the CG
    conv = loads_estimate(estimate(inertia_about={"point": "1000, 2000, 3000 mm"}), "e.json").conventions
    assert conv.reference_point.tolist() == pytest.approx([1.0, 2.0, 3.0], rel=1e-15)
    conv = loads_estimate(estimate(inertia_about="point 1000, 2000, 3000 mm"), "e.json").conventions
    assert conv.reference_point.tolist() == pytest.approx([1.0, 2.0, 3.0], rel=1e-15)


def test_estimate_item_numbers_stay_plain_numbers():
    # the diagnosis re-reads every item's numbers in other units: a unit on them would be misread
    with pytest.raises(EstimateError, match=r"field 'cg\[1\]': expected a number, got '2 mm'"):
        loads_estimate(estimate(items=[{"group": "*", "mass": 2.0, "cg": [1.0, "2 mm", 3.0],
                                        "inertia": [[3, 0, 0], [0, 4, 0], [0, 0, 5]]}]), "e.json")


def test_one_units_reader():
    for load, error in ((lambda t: loads_model(model_text('"0, 0, 0 mm"', units=t), label="f.toml"), ModelFileError),
                        (lambda t: loads_session('[session]\nname = "t"\n' + t + PEND.format(axis='"up"',
                                                 through='"cg"'), label="f.toml"), MeasurementFileError)):
        with pytest.raises(error) as info:
            load('[units]\nlength = "kg"')
        assert (info.value.file, info.value.item, info.value.field) == ("f.toml", "[units]", "length")
        assert info.value.message == "'kg' is not a length unit"


# --- unreadable files: one line naming the file --------------------------------------------------------------------

def _write(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    return path


READERS = [
    ("model.toml", lambda p: load_model(p), ModelFileError),
    ("plan.toml", lambda p: load_plan(p, load_model(CAR)), PlanError),
    ("session.toml", lambda p: load_session(p), MeasurementFileError),
    ("estimate.json", lambda p: load_estimate(p), EstimateError),
    ("estimate.csv", lambda p: load_estimate(p), EstimateError),
]


@pytest.mark.parametrize(("name", "load", "error"), READERS)
def test_non_utf8_file_is_named_in_one_line(tmp_path, name, load, error):
    path = _write(tmp_path / name, b'# r\xe9glage\nname = "x"\n')  # Latin-1 "é": not UTF-8
    with pytest.raises(error) as info:
        load(path)
    e = info.value
    assert isinstance(e, InputError) and (e.file, e.item, e.field) == (str(path), None, None)
    assert str(e) == f"{path}: not UTF-8 text: byte 0xe9 at offset 3 (save the file as UTF-8)"


@pytest.mark.parametrize(("name", "load", "error"), READERS)
def test_missing_file_is_named_in_one_line(tmp_path, name, load, error):
    path = tmp_path / name
    with pytest.raises(error) as info:
        load(path)
    assert str(info.value) == f"{path}: cannot read the file (no such file)"


def _deep(name: str, depth: int) -> bytes:
    if name.endswith(".json"):
        return ("[" * depth + "]" * depth).encode()
    return ("a = " + "[" * depth + "]" * depth + "\n").encode()


@pytest.mark.parametrize(("name", "load", "error"), [r for r in READERS if not r[0].endswith(".csv")])
@pytest.mark.parametrize("depth", [MAX_NESTING + 1, 100_000])  # parses but too deep; beyond the parser's stack
def test_deeply_nested_file_is_named_in_one_line(tmp_path, name, load, error, depth):
    path = _write(tmp_path / name, _deep(name, depth))
    with pytest.raises(error) as info:
        load(path)
    assert str(info.value) == (f"{path}: tables and lists nest too deep (an input file nests at most {MAX_NESTING} "
                               "levels)")


def test_nesting_at_the_limit_is_read(tmp_path):
    # MAX_NESTING levels parse; the model then refuses the unknown key by name (not the nesting)
    path = _write(tmp_path / "m.toml", _deep("m.toml", MAX_NESTING - 1))
    with pytest.raises(ModelFileError, match=r"\[a\]: unknown section 'a'"):
        load_model(path)


# --- the command line ----------------------------------------------------------------------------------------------

def test_cli_inertia_about_takes_the_file_point_syntax(tmp_path, capsys):
    outs = []
    for k, text in enumerate(["0 mm, 0 mm, -265 mm", "0, 0, -265 mm", "(0, 0, -26.5) cm"]):
        out = tmp_path / f"r{k}.json"
        assert main(["report", str(CAR), "--brief", "--json", str(out), "--inertia-about", text]) == 0
        (entry,) = json.loads(out.read_text(encoding="utf-8"))["inertia_about_points"]
        outs.append(np.array(entry["inertia_kg_m2"]))
    capsys.readouterr()
    assert np.array_equal(outs[0], outs[1]) and np.allclose(outs[0], outs[2], rtol=1e-14, atol=0.0)


@pytest.mark.parametrize(
    ("argv", "line"),
    [
        (["report", str(CAR), "--inertia-about", "0, 0"],
         "massmodel report: error: --inertia-about: expected three coordinates with units"),
        (["report", str(CAR), "--set", "fuel_mass"], "massmodel report: error: --set: expected name=value"),
        (["seat-ballast", str(CAR), "--material", "lead", "--margin", "0.5"],
         "massmodel seat-ballast: error: --margin: expected a mass with its unit such as '1.5 kg', got '0.5'"),
        (["size-block", str(CAR), "--box", "1, 2 mm"], "massmodel size-block: error: --box: expected a list of"),
        (["crossweigh", str(CAR), str(ESTIMATE), "--step-origin", "0, 0, -265 kg"],
         "massmodel crossweigh: error: --step-origin: expected 'x, y, z unit'"),
        (["crossweigh", str(CAR), str(ESTIMATE), "--density", "7850 kg"],
         "massmodel crossweigh: error: --density: expected density (kg/m^3) such as '7850 kg/m^3'"),
        (["weigh", str(SESSION), "--item-height", "300"],
         "massmodel weigh: error: --item-height: expected auto, model-cg, lift or a length"),
    ],
)
def test_cli_bad_option_values_are_one_argparse_line_exit_2(capsys, argv, line):
    assert main(argv) == EXIT_USAGE
    out, err = capsys.readouterr()
    assert out == "" and err.startswith(line) and err.count("\n") == 1


@pytest.mark.parametrize(
    ("name", "argv"),
    [
        ("model.toml", lambda p: ["check", str(p)]),
        ("plan.toml", lambda p: ["place-ballast", str(CAR), str(p), "--no-fit"]),
        ("session.toml", lambda p: ["weigh", str(p)]),
        ("estimate.json", lambda p: ["crossweigh", str(CAR), str(p)]),
    ],
)
@pytest.mark.parametrize("content", ["non-utf8", "deep"])
def test_cli_unreadable_input_is_one_line_exit_2(tmp_path, capsys, name, argv, content):
    data = b'# r\xe9glage\n' if content == "non-utf8" else _deep(name, 100_000)
    path = _write(tmp_path / name, data)
    assert main(argv(path)) == EXIT_USAGE
    out, err = capsys.readouterr()
    command = argv(path)[0]
    assert err.startswith(f"massmodel {command}: error: {path}: ") and err.count("\n") == 1
    assert ("not UTF-8 text" if content == "non-utf8" else "nest too deep") in err
    assert "Traceback" not in err


def test_options_documented_in_mm_take_a_bare_number_or_any_length():
    from massmodel.cli.args import in_unit

    mm = in_unit("length", "mm")
    assert (mm("0.1"), mm("100 um"), mm("0.0001 m")) == pytest.approx((0.1, 0.1, 0.1), rel=1e-12)  # SI prefixes
    with pytest.raises(Exception, match="expected length"):
        mm("2 kg")


def test_accelerations_in_g_from_a_number_or_a_quantity():
    from massmodel.cli.args import acceleration_in_g

    # g_n = 9.80665 m/s² exactly (NIST SP 811): 9.80665 m/s^2 is 1 g
    assert [acceleration_in_g(t) for t in ("1.2", "1.2 g", "9.80665 m/s^2", "-0.5g")] == pytest.approx(
        [1.2, 1.2, 1.0, -0.5], rel=1e-15)
    assert main(["load-transfer", str(CAR), "--brake", "2 kg"]) == EXIT_USAGE


def test_modelfile_modules_import_in_one_direction():
    # reader <- extends <- fields <- parts, cases, driver <- loader: no module reaches back into the loader
    import ast

    order = ["reader", "uncertainty", "extends", "fields", "parts", "cases", "driver", "chassis", "loader"]
    folder = ROOT / "massmodel" / "modelfile"
    for k, name in enumerate(order):
        tree = ast.parse((folder / f"{name}.py").read_text(encoding="utf-8"))
        imported = set()
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and node.level == 1:
                imported |= {node.module} if node.module else {a.name for a in node.names}
            elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("massmodel.modelfile."):
                imported.add(node.module.rsplit(".", 1)[1])
        later = imported & set(order[k:])
        assert not later, f"modelfile.{name} imports {sorted(later)}"
