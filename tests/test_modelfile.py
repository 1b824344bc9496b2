"""The model-file loader end to end: what a file means, and a clear error for every mistake.

Expected values are closed forms written here (cuboid I_xx = m(b² + c²)/12, Machinery's Handbook 31st ed.
pp.253-254; parallel-axis theorem, Goldstein et al. §5.3) or relations that must hold exactly (a mirror across
the centre plane negates the y coordinate and the products I_xy, I_yz).
"""

from __future__ import annotations

import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from conftest import assert_close
from massmodel.core.model import MassSource, Maturity
from massmodel.modelfile.loader import ModelFileError, load_model
from massmodel.vehicle.balance import check_rules, static_balance

REPO = Path(__file__).resolve().parents[1]

HEAD = """
[model]
name = "test"
[units]
length = "mm"
angle = "deg"
"""

PLATE = """
[[part]]
path = "body/plate"
shape = "box"
size = [100, 50, 20]
material = "structural_steel"
maturity = "estimated"
"""

VEHICLE = """
[vehicle]
wheelbase = 2500
track_front = 1500
track_rear = 1400
ground_level = -300
"""


def write(tmp_path: Path, text: str, name: str = "m.toml") -> Path:
    path = tmp_path / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def error_of(path: Path, overrides: dict[str, str] | None = None) -> ModelFileError:
    with pytest.raises(ModelFileError) as info:
        load_model(path, overrides=overrides)
    return info.value


# --------------------------------------------------------------------------------------------------------------
# Bad input: each mistake gives a ModelFileError naming the file, the item and the field
# --------------------------------------------------------------------------------------------------------------

PLATE_WITH = PLATE.replace  # shorthand: PLATE_WITH(old, new)

BAD_INPUT = {
    # id: (file text, item, field, fragment of the message)
    "missing size": (HEAD + PLATE_WITH("size = [100, 50, 20]\n", ""), "part 'body/plate'", "size", "is missing"),
    "missing path": (HEAD + PLATE_WITH('path = "body/plate"\n', ""), "part #1", "path", "expected a path"),
    "missing model name": (HEAD.replace('name = "test"\n', "") + PLATE, "[model]", "name", "is missing"),
    "missing maturity": (HEAD + PLATE_WITH('maturity = "estimated"\n', ""), "part 'body/plate'", "maturity",
                         "is missing"),
    "zero size": (HEAD + PLATE_WITH("[100, 50, 20]", "[100, 0, 20]"), "part 'body/plate'", "size[1]",
                  "size[1] (0 m) must be greater than zero"),
    "negative size": (HEAD + PLATE_WITH("[100, 50, 20]", "[100, 50, -20]"), "part 'body/plate'", "size[2]",
                      "must be greater than zero"),
    "negative radius": (HEAD + PLATE_WITH('shape = "box"\nsize = [100, 50, 20]', 'shape = "cylinder"\n'
                                          'radius = "-4 mm"\nlength = 10'),
                        "part 'body/plate'", "radius", "must be greater than zero"),
    "unknown unit": (HEAD + PLATE_WITH("[100, 50, 20]", '[100, "50 furlong", 20]'), "part 'body/plate'",
                     "size[1]", "'furlong' is not a unit"),
    "unknown default unit": (HEAD.replace('length = "mm"', 'length = "cubit"') + PLATE, "[units]", "length",
                             "unknown unit 'cubit'"),
    "unknown material": (HEAD + PLATE_WITH("structural_steel", "unobtainium"), "part 'body/plate'", "material",
                         "unknown material 'unobtainium'"),
    "material suggestion": (HEAD + PLATE_WITH("structural_steel", "structural_stel"), "part 'body/plate'",
                            "material", "did you mean structural_steel"),
    "duplicate path": (HEAD + PLATE + PLATE, "part 'body/plate'", "path", "duplicate path 'body/plate'"),
    "absurd size (its cube would overflow)": (HEAD + PLATE_WITH("[100, 50, 20]", '[100, "1e308 * 10 mm", 20]'),
                                              "part 'body/plate'", "size[1]", "is 1e+306 m; no part of a car"),
    "absurd position": (HEAD + PLATE + 'at = [0, "1e300 mm", 0]\n', "part 'body/plate'", "at[1]",
                        "(the limit is 1e+06 m)"),
    "absurd pattern step": (HEAD + PLATE + 'pattern = { count = 2, step = [0, 0, "1e300 mm"] }\n',
                            "part 'body/plate'", "pattern.step[2]", "(the limit is 1e+06 m)"),
    "absurd mass": (HEAD + PLATE_WITH('material = "structural_steel"', 'mass = "1e300 kg"'), "part 'body/plate'",
                    "mass", "(the limit is 1e+09 kg)"),
    "cut-out rotate not a table": (HEAD + PLATE + 'cut = [{ shape = "sphere", radius = 5, rotate = [0, 0, 90] }]\n',
                                   "part 'body/plate'", "cut[0].rotate", "expected a table"),
    "cut-out position": (HEAD + PLATE + 'cut = [{ shape = "sphere", radius = 5, at = [0, "1 kg", 0] }]\n',
                         "part 'body/plate'", "cut[0].at[1]", "expected a length"),
    "driver segment data not text": (HEAD + VEHICLE + PLATE + '[[driver]]\npath = "driver"\nsegment_data = [1]\n'
                                     'mass = "70 kg"\nstature = 1700\nseat_back_angle = 30\nhip_point = [0, 0, 0]\n'
                                     'ankle_point = [800, 0, 0]\nwrist_point = [300, 0, 300]\n', "driver 'driver'",
                                     "segment_data", "expected one of"),
    "no parts": (HEAD + VEHICLE, "[[part]]", None, "the model has no parts"),
    "only optional parts": (HEAD + PLATE + "optional = true\n", "[[part]]", None, "the model has no parts"),
    "nan number": (HEAD + PLATE_WITH("[100, 50, 20]", "[100, nan, 20]"), "part 'body/plate'", "size[1]",
                   "must be finite"),
    "infinite number": (HEAD + PLATE_WITH("[100, 50, 20]", "[100, 50, -inf]"), "part 'body/plate'", "size[2]",
                        "must be finite"),
    "nan density": (HEAD + PLATE_WITH('material = "structural_steel"', "density = nan"), "part 'body/plate'",
                    "density", "must be finite"),
    "two mass sources": (HEAD + PLATE_WITH('maturity', 'mass = "2 kg"\nmaturity'), "part 'body/plate'", "mass",
                         "exactly one mass source"),
    "no mass source": (HEAD + PLATE_WITH('material = "structural_steel"\n', ""), "part 'body/plate'", "material",
                       "(none found)"),
    "point with a material": (HEAD + PLATE_WITH('shape = "box"\nsize = [100, 50, 20]', 'shape = "point"'),
                              "part 'body/plate'", "material", "a point has no volume"),
    "cut-out outside its parent": (HEAD + PLATE + 'cut = [{ shape = "cylinder", radius = 5, length = 20, '
                                   'at = [48, 0, 0] }]\n', "part 'body/plate'", "cut[0]", "leaves its parent box"),
    "cut-out through the face": (HEAD + PLATE + 'cut = [{ shape = "cylinder", radius = 5, length = 21 }]\n',
                                 "part 'body/plate'", "cut[0]", "leaves its parent"),
    "overlapping cut-outs": (HEAD + PLATE + 'cut = [{ shape = "cylinder", radius = 5, length = 20 }, '
                             '{ shape = "cylinder", radius = 5, length = 20, at = [9, 0, 0] }]\n',
                             "part 'body/plate'", "cut[1]", "overlaps cut[0]"),
    "cut-out with an unknown field": (HEAD + PLATE + 'cut = [{ shape = "sphere", radius = 5, depth = 3 }]\n',
                                      "part 'body/plate'", "cut[0].depth", "unknown field"),
    "python import": (HEAD + PLATE_WITH("[100, 50, 20]", "[100, \"__import__('os')\", 20]"),
                      "part 'body/plate'", "size[1]", "unknown function '__import__'"),
    "attribute access": (HEAD + PLATE_WITH("[100, 50, 20]", '[100, "(50 mm).real", 20]'), "part 'body/plate'",
                         "size[1]", "attribute access"),
    "attribute access on a parameter": (HEAD + '[parameters]\nw = "50 mm"\n' + PLATE_WITH(
        "[100, 50, 20]", '[100, "w.__class__", 20]'), "part 'body/plate'", "size[1]", "attribute access"),
    "huge power": (HEAD + PLATE_WITH("[100, 50, 20]", '[100, "9**9**9", 20]'), "part 'body/plate'", "size[1]",
                   "powers are limited"),
    "undefined name in a field": (HEAD + PLATE_WITH("[100, 50, 20]", '[100, "width", 20]'),
                                  "part 'body/plate'", "size[1]", "unknown name 'width'"),
    "undefined parameter": (HEAD + '[parameters]\nwidth = "depth * 2"\n' + PLATE, "parameter 'width'", "value",
                            "unknown name 'depth'"),
    "parameter cycle": (HEAD + '[parameters]\na = "b + 1 mm"\nb = "c"\nc = "a"\n' + PLATE, "parameter 'a'",
                        "value", "cycle: a -> b -> c -> a"),
    "unit mismatch mm + kg": (HEAD + PLATE_WITH("[100, 50, 20]", '[100, "50 mm + 2 kg", 20]'),
                              "part 'body/plate'", "size[1]", "cannot add length (m) and mass (kg)"),
    "unit mismatch in a parameter": (HEAD + '[parameters]\nw = "50 mm + 2 kg"\n' + PLATE, "parameter 'w'",
                                     "value", "cannot add length (m) and mass (kg)"),
    "wrong dimension": (HEAD + PLATE_WITH("[100, 50, 20]", '[100, "2 kg", 20]'), "part 'body/plate'", "size[1]",
                        "expected a length"),
    "bare number without a default": (HEAD + PLATE_WITH('material = "structural_steel"', "mass = 2"),
                                      "part 'body/plate'", "mass", "no default mass unit"),
    "unknown section": (HEAD + "[colours]\nbody = 3\n" + PLATE, "[colours]", None, "unknown section 'colours'"),
    "unknown field": (HEAD + PLATE + "weight = 3\n", "part 'body/plate'", "weight", "unknown field"),
    "unknown model field": (HEAD.replace('name = "test"', 'name = "test"\nauthor = "x"') + PLATE, "[model]",
                            "author", "unknown field"),
    "unknown shape": (HEAD + PLATE_WITH('"box"', '"blob"'), "part 'body/plate'", "shape", "got 'blob'"),
    "rotate not a table": (HEAD + PLATE + "rotate = [0, 90, 0]\n", "part 'body/plate'", "rotate",
                           "expected a table"),
    "rotate both kinds": (HEAD + PLATE + 'rotate = { extrinsic = "xyz", intrinsic = "zyx", angles = [0, 0, 0] }\n',
                          "part 'body/plate'", "rotate", "exactly one of 'extrinsic' or 'intrinsic'"),
    "rotate bad axes": (HEAD + PLATE + 'rotate = { extrinsic = "xyw", angles = [0, 0, 0] }\n',
                        "part 'body/plate'", "rotate.extrinsic", "1-3 letters"),
    "rotate angle count": (HEAD + PLATE + 'rotate = { intrinsic = "zyx", angles = [0, 90] }\n',
                           "part 'body/plate'", "rotate.angles", "expected 3 angles"),
    "rotate angle unit": (HEAD + PLATE + 'rotate = { extrinsic = "z", angles = ["90 mm"] }\n',
                          "part 'body/plate'", "rotate.angles[0]", "expected an angle"),
    "mirror without left/right": (HEAD + PLATE + "mirror = true\n", "part 'body/plate'", "mirror",
                                  "'left' or 'right'"),
    "mirrored group without left/right": (HEAD + '[[group]]\npath = "body"\nmirror = true\n' + PLATE,
                                          "part 'body/plate'", "mirror", "'left' or 'right'"),
    "mirror copy clashes": (HEAD + PLATE_WITH("body/plate", "body/left/plate") + "mirror = true\n"
                            + PLATE_WITH("body/plate", "body/right/plate"), "part 'body/right/plate'", "path",
                            "duplicate path 'body/right/plate'"),
    "pattern count": (HEAD + PLATE + "pattern = { count = 0, step = [0, 0, 20] }\n", "part 'body/plate'",
                      "pattern.count", "whole number"),
    "rule names a missing group": (HEAD + PLATE + '[[rule]]\nname = "driver"\ncheck = "min_group_mass"\n'
                                   'groups = ["driver"]\nlimit = "80 kg"\n', "rule 'driver'", "groups",
                                   "no part lies in group 'driver'"),
    "rule excludes a missing group": (HEAD + PLATE + '[[rule]]\nname = "dry"\ncheck = "min_mass"\n'
                                      'exclude = ["fuel"]\nlimit = "80 kg"\n', "rule 'dry'", "exclude",
                                      "no part lies in group 'fuel'"),
    "front fraction band upside down": (HEAD + VEHICLE + PLATE + '[[rule]]\nname = "balance"\ncheck = "front_fraction"\n'
                                        'min = 0.6\nmax = 0.4\n', "rule 'balance'", "max", "is below min (0.6)"),
    "rule needs a vehicle": (HEAD + PLATE + '[[rule]]\nname = "front"\ncheck = "min_axle_load"\naxle = "front"\n'
                             'limit = "80 kg"\n', "rule 'front'", "check", "needs a [vehicle] section"),
    "rule limit unit": (HEAD + PLATE + '[[rule]]\nname = "dry"\ncheck = "min_mass"\nlimit = "80 mm"\n',
                        "rule 'dry'", "limit", "expected a mass"),
    "vehicle axes not right-handed": (HEAD + VEHICLE + 'axes = { forward = "+x", left = "+y", up = "-z" }\n'
                                      + PLATE, "[vehicle]", "axes", "right-handed"),
    "vehicle missing track": (HEAD + VEHICLE.replace("track_rear = 1400\n", "") + PLATE, "[vehicle]",
                              "track_rear", "is missing"),
    "measured inertia not physical": (HEAD + PLATE_WITH(
        'material = "structural_steel"',
        'measured = { mass = "2 kg", cg = [0, 0, 0], inertia = [["1 kg*m^2", 0, 0], [0, "1 kg*m^2", 0], '
        '[0, 0, "3 kg*m^2"]] }'), "part 'body/plate'", "measured.inertia", "triangle inequality"),
    "measured without cg": (HEAD + PLATE_WITH('material = "structural_steel"', 'measured = { mass = "2 kg" }'),
                            "part 'body/plate'", "measured.cg", "is missing"),
    "material without density": (HEAD + '[materials.foam]\nname = "foam"\n' + PLATE, "material 'foam'", "density",
                                 "is missing"),
    "material replaces the library": (HEAD + '[materials.lead]\ndensity = "11 g/cm^3"\n' + PLATE, "material 'lead'",
                                      None, "already defined in the built-in library"),
    "slot missing": (HEAD + PLATE + 'slot = "floor"\n', "part 'body/plate'", "slot", "no slot named 'floor'"),
    "remove without extends": (HEAD.replace('name = "test"', 'name = "test"\nremove = ["body"]') + PLATE, "[model]",
                               "remove", "only a model that 'extends'"),
}


@pytest.mark.parametrize("case", sorted(BAD_INPUT), ids=str)
def test_bad_input_names_file_item_and_field(tmp_path: Path, case: str) -> None:
    text, item, field, fragment = BAD_INPUT[case]
    path = write(tmp_path, text)
    err = error_of(path)
    assert (err.file, err.item, err.field) == (str(path), item, field), err
    assert fragment in err.message, err.message
    assert "\n" not in str(err)  # one line
    where = f"{path}: {item}" + (f", field '{field}'" if field else "")
    assert str(err).startswith(where + ": ")


def test_expression_errors_say_where_in_the_text(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + PLATE_WITH("[100, 50, 20]", '[100, "50 mm + 2 kg", 20]'))
    assert error_of(path).message == "cannot add length (m) and mass (kg) (in '50 mm + 2 kg', at character 7)"


def test_not_toml_and_missing_file(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + "[[part]\n")
    err = error_of(path)
    assert (err.file, err.item, err.field) == (str(path), None, None)
    assert err.message.startswith("not valid TOML") and "(at line 7, column 7)" in err.message
    missing = tmp_path / "nothing.toml"
    err = error_of(missing)
    assert err.file == str(missing) and "cannot read the file" in err.message


@pytest.mark.parametrize(
    ("section", "item"),
    [("units = 3", "[units]"), ("materials = 3", "[materials]"), ("parameters = 3", "[parameters]"),
     ("vehicle = 3", "[vehicle]"), ("part = 3", "[[part]]"), ("group = 3", "[[group]]"), ("rule = [3]", "[[rule]]")],
)
def test_sections_of_the_wrong_type(tmp_path: Path, section: str, item: str) -> None:
    path = write(tmp_path, section + '\n[model]\nname = "t"\n')
    err = error_of(path)
    assert (err.file, err.item, err.field) == (str(path), item, None)


def test_override_errors_name_the_option(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + '[parameters]\nthick = "20 mm"\n' + PLATE_WITH("[100, 50, 20]", '[100, 50, "thick"]'))
    err = error_of(path, {"thik": "10 mm"})
    assert (err.item, err.field) == ("--set thik", None)
    assert "cannot override an unknown parameter; did you mean 'thick'?" in err.message
    err = error_of(path, {"thick": "10 kg"})  # the option is blamed, not the part that uses the parameter
    assert (err.item, err.field) == ("--set thick", None)
    assert err.message == "'10 kg' is in kg, but the file gives thick in m (thick = '20 mm')"
    err = error_of(path, {"thick": "10 mm +"})  # the expression error as one line with its position, no caret
    assert (err.item, err.field) == ("--set thick", None)
    assert err.message.endswith("(in '10 mm +', at character 8)") and "^" not in err.message


# --------------------------------------------------------------------------------------------------------------
# Through the command line: exit 2, one line on stderr, no traceback
# --------------------------------------------------------------------------------------------------------------

CLI_CASES = ["nan number", "python import", "parameter cycle", "cut-out outside its parent", "unknown section",
             "rule names a missing group"]


def run_cli(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    env.pop("MASSMODEL_DEBUG", None)
    return subprocess.run([sys.executable, "-m", "massmodel", *args], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=60)


@pytest.mark.parametrize("case", CLI_CASES)
def test_cli_check_on_a_broken_file(tmp_path: Path, case: str) -> None:
    text, item, field, fragment = BAD_INPUT[case]
    write(tmp_path, text, "broken.toml")
    result = run_cli("check", "broken.toml", cwd=tmp_path)
    assert result.returncode == 2
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    where = f"broken.toml: {item}" + (f", field '{field}'" if field else "")
    assert lines[0].startswith(f"massmodel check: error: {where}: ")
    assert fragment in lines[0]
    assert "Traceback" not in result.stderr


def test_cli_bad_override_and_missing_file(tmp_path: Path) -> None:
    write(tmp_path, HEAD + '[parameters]\nthick = "20 mm"\n' + PLATE, "car.toml")
    result = run_cli("report", "car.toml", "--set", "thick", cwd=tmp_path)
    assert result.returncode == 2 and "Traceback" not in result.stderr
    assert result.stderr.strip() == ("massmodel report: error: --set: expected name=value, e.g. wheelbase=2.6 m; "
                                     "got 'thick'")
    result = run_cli("check", "absent.toml", cwd=tmp_path)
    assert result.returncode == 2 and "Traceback" not in result.stderr
    assert result.stderr.startswith("massmodel check: error: absent.toml: cannot read the file")


# --------------------------------------------------------------------------------------------------------------
# What a correct file means
# --------------------------------------------------------------------------------------------------------------


def box_tensor(mass: float, a: float, b: float, c: float) -> np.ndarray:
    """Cuboid about its centre, edges a, b, c along x, y, z (Machinery's Handbook 31st ed. pp.253-254)."""
    return mass / 12.0 * np.diag([b * b + c * c, a * a + c * c, a * a + b * b])


def test_nested_group_poses_compose(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + """
[[group]]
path = "arm"
at = [1000, 0, 0]
rotate = { extrinsic = "z", angles = [90] }
[[group]]
path = "arm/hand"
at = [0, 1000, 0]                 # in the arm's frame
rotate = { extrinsic = "x", angles = [90] }
[[part]]
path = "arm/hand/block"
shape = "box"
size = [400, 200, 100]
density = "1000 kg/m^3"
maturity = "estimated"
at = [100, 0, 50]                 # in the hand's frame
""")
    block = load_model(path).component("arm/hand/block")
    # By hand: Rx(90) (0.1, 0, 0.05) + (0, 1, 0) = (0.1, 0.95, 0); Rz(90) of that + (1, 0, 0) = (0.05, 0.1, 0).
    assert_close(block.props.center, [0.05, 0.1, 0.0], 1e-12)
    # The block's x edge (0.4 m) ends up along model y, its y edge along z, its z edge along x.
    assert_close(block.pose.linear, [[0, 0, 1], [1, 0, 0], [0, 1, 0]], 1e-12)
    mass = 1000.0 * 0.4 * 0.2 * 0.1
    assert block.props.mass == pytest.approx(mass, rel=1e-12)
    assert_close(block.props.inertia, box_tensor(mass, 0.1, 0.4, 0.2), 1e-12)
    assert block.source is MassSource.DENSITY and block.maturity is Maturity.ESTIMATED


MIRROR_FILE = HEAD + VEHICLE + """
[[group]]
path = "corner/left"
at = [0, 700, 0]
rotate = { extrinsic = "xyz", angles = [5, 10, 20] }
mirror = true
maturity = "calculated"
[[part]]
path = "corner/left/arm"
shape = "wedge"
leg_x = 120
leg_y = 60
length = 30
material = "aluminium_7075_t6"
at = [40, 30, 20]
rotate = { extrinsic = "z", angles = [15] }
[[part]]
path = "mirror_housing/left"
shape = "ellipsoid"
semi_x = 60
semi_y = 30
semi_z = 20
mass = "0.3 kg"
maturity = "measured"
at = [-500, 350, 270]
rotate = { intrinsic = "zy", angles = [30, 10] }
mirror = true
"""


def test_mirror_reflects_group_and_part_across_the_centre_plane(tmp_path: Path) -> None:
    model = load_model(write(tmp_path, MIRROR_FILE))
    assert [c.path for c in model.components] == [
        "corner/left/arm", "corner/right/arm", "mirror_housing/left", "mirror_housing/right"]
    flip = np.diag([1.0, -1.0, 1.0])  # reflection across the plane y = 0 (the vehicle's left is +y)
    for left, right in (("corner/left/arm", "corner/right/arm"), ("mirror_housing/left", "mirror_housing/right")):
        a, b = model.component(left), model.component(right)
        assert not a.pose.is_mirrored and b.pose.is_mirrored
        assert b.props.mass == pytest.approx(a.props.mass, rel=1e-15)
        assert_close(b.props.center, flip @ a.props.center, 1e-14)
        assert_close(b.props.inertia, flip @ a.props.inertia @ flip, 1e-14)
        # the products that involve y change sign, the others do not, and they are not trivially zero
        assert abs(a.props.inertia[0, 1]) > 1e-6 * a.props.inertia[0, 0]
        assert b.props.inertia[0, 1] == pytest.approx(-a.props.inertia[0, 1], rel=1e-12)
        assert b.props.inertia[1, 2] == pytest.approx(-a.props.inertia[1, 2], rel=1e-12)
        assert b.props.inertia[0, 2] == pytest.approx(a.props.inertia[0, 2], rel=1e-12)
        assert (a.maturity, a.colour, a.source) == (b.maturity, b.colour, b.source)
    # a mirrored pair has no lateral offset: corner loads split evenly left/right
    bal = static_balance(model.mass_properties(), model.vehicle)
    assert bal.corners[0] == pytest.approx(bal.corners[1], rel=1e-12)
    assert bal.cg_left_of_centre == pytest.approx(0.0, abs=1e-15)


def test_mirror_plane_follows_the_vehicle_left_axis(tmp_path: Path) -> None:
    # Model axes with the vehicle's left along +z (forward +x, left +z, up -y: right-handed): the centre plane
    # is z = 0, so a mirrored copy negates z, not y.
    text = HEAD + VEHICLE.replace("[vehicle]", '[vehicle]\naxes = { forward = "+x", left = "+z", up = "-y" }') + """
[[part]]
path = "pod/left"
shape = "sphere"
radius = 50
mass = "2 kg"
maturity = "measured"
at = [100, 200, 300]
mirror = true
"""
    model = load_model(write(tmp_path, text))
    assert_close(model.component("pod/right").props.center, [0.1, 0.2, -0.3], 1e-15)


def test_linear_pattern(tmp_path: Path) -> None:
    text = HEAD + """
[[part]]
path = "stack/plate"
shape = "box"
size = [100, 100, 10]
material = "lead"
maturity = "measured"
at = [0, 0, 6]
pattern = { count = 5, step = [0, 0, "12 mm"] }
[[group]]
path = "turned"
at = [0, 0, 1000]
rotate = { extrinsic = "z", angles = [90] }
[[part]]
path = "turned/bolt"
shape = "point"
mass = "0.1 kg"
maturity = "measured"
pattern = { count = 3, step = [10, 0, 0] }     # in the group's frame: along model +y
"""
    model = load_model(write(tmp_path, text))
    plates = model.select(["stack"])
    assert [c.path for c in plates] == [f"stack/plate-{k}" for k in range(1, 6)]
    assert [c.props.center[2] for c in plates] == pytest.approx([0.006, 0.018, 0.030, 0.042, 0.054], rel=1e-12)
    m = 11340.0 * 0.1 * 0.1 * 0.01  # lead 11.34 g/cm^3 (docs/references.md §2)
    total = model.mass_properties(["stack"])
    assert total.mass == pytest.approx(5 * m, rel=1e-12)
    assert_close(total.center, [0.0, 0.0, 0.030], 1e-12)
    spread = m * 2 * (0.024**2 + 0.012**2)  # parallel-axis terms of the four outer plates about the middle one
    assert_close(total.inertia, 5 * box_tensor(m, 0.1, 0.1, 0.01) + np.diag([spread, spread, 0.0]), 1e-12)
    bolts = model.select(["turned"])
    assert_close(np.array([c.props.center for c in bolts]), [[0, 0, 1], [0, 0.01, 1], [0, 0.02, 1]], 1e-12)


def test_set_overrides_a_parameter(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + '[parameters]\nthick = "20 mm"\nhalf = "thick / 2"\n'
                 + PLATE_WITH("[100, 50, 20]", '[100, 50, "thick"]') + 'at = [0, 0, "half"]\n')
    base = load_model(path).component("body/plate")
    thick = load_model(path, overrides={"thick": "30 mm"}).component("body/plate")
    assert base.props.mass == pytest.approx(7850.0 * 0.1 * 0.05 * 0.02, rel=1e-12)  # EN 1993-1-1 steel 7850 kg/m^3
    assert thick.props.mass == pytest.approx(1.5 * base.props.mass, rel=1e-12)
    assert thick.props.center[2] == pytest.approx(0.015, rel=1e-12)  # the dependent parameter follows


def test_units_defaults_and_explicit_units(tmp_path: Path) -> None:
    text = """
[model]
name = "imperial"
[units]
length = "in"
mass = "lb"
[[part]]
path = "cube"
shape = "box"
size = [1, "25.4 mm", "2.54 cm"]
mass = 2
maturity = "measured"
at = [0, 0, "1 ft"]
"""
    cube = load_model(write(tmp_path, text)).component("cube")
    assert cube.props.mass == pytest.approx(2 * 0.45359237, rel=1e-15)  # 1 lb = 0.45359237 kg exactly
    assert cube.volume == pytest.approx(0.0254**3, rel=1e-12)  # 1 in = 0.0254 m exactly
    assert cube.props.center[2] == pytest.approx(0.3048, rel=1e-15)
    assert cube.implied_density == pytest.approx(2 * 0.45359237 / 0.0254**3, rel=1e-12)
    assert_close(cube.props.inertia, box_tensor(2 * 0.45359237, 0.0254, 0.0254, 0.0254), 1e-12)


def test_measured_properties_are_in_the_part_frame(tmp_path: Path) -> None:
    text = HEAD + """
[[part]]
path = "engine"
shape = "box"
size = [500, 400, 300]
measured = { mass = "90 kg", cg = [10, 0, 5], inertia = [["1 kg*m^2", 0, 0], [0, "2 kg*m^2", 0], [0, 0, "2.5 kg*m^2"]] }
maturity = "measured"
at = [0, 0, 100]
rotate = { extrinsic = "z", angles = [90] }
"""
    engine = load_model(write(tmp_path, text)).component("engine")
    assert engine.source is MassSource.MEASURED and engine.inertia_source == "measured"
    assert engine.props.mass == 90.0
    assert_close(engine.props.center, [0.0, 0.010, 0.105], 1e-12)
    assert_close(engine.props.inertia, np.diag([2.0, 1.0, 2.5]), 1e-12)
    assert engine.implied_density == pytest.approx(90.0 / (0.5 * 0.4 * 0.3), rel=1e-12)


def test_cut_outs_subtract_exactly(tmp_path: Path) -> None:
    # a 100 x 50 x 20 mm plate with a through hole of radius 5 mm at x = 20 mm (superposition of signed solids)
    path = write(tmp_path, HEAD + PLATE + 'cut = [{ shape = "cylinder", radius = 5, length = 20, at = [20, 0, 0] }]\n')
    plate = load_model(path).component("body/plate")
    rho = 7850.0
    v_box, v_hole = 0.1 * 0.05 * 0.02, math.pi * 0.005**2 * 0.02
    assert plate.volume == pytest.approx(v_box - v_hole, rel=1e-12)
    m_box, m_hole = rho * v_box, rho * v_hole
    m = m_box - m_hole
    x = -m_hole * 0.02 / m
    assert_close(plate.props.center, [x, 0.0, 0.0], 1e-12)
    hole = m_hole * np.diag([(3 * 0.005**2 + 0.02**2) / 12] * 2 + [0.005**2 / 2])  # solid cylinder
    about_origin = box_tensor(m_box, 0.1, 0.05, 0.02) - (hole + m_hole * np.diag([0, 0.02**2, 0.02**2]))
    expected = about_origin - m * np.diag([0, x * x, x * x])
    assert_close(plate.props.inertia, expected, 1e-12)


# --------------------------------------------------------------------------------------------------------------
# Files that extend other files, rulebooks
# --------------------------------------------------------------------------------------------------------------

BASE = """
[model]
name = "base car"
rulebook = "rules.toml"
[units]
length = "mm"
[parameters]
block = "20 mm"
[materials.foam]
density = "50 kg/m^3"
""" + VEHICLE + """
[[group]]
path = "ballast"
maturity = "calculated"
[[part]]
path = "body/tub"
shape = "box"
size = [2000, 600, 300]
material = "foam"
maturity = "estimated"
[[part]]
path = "ballast/old"
shape = "box"
size = [100, 100, 10]
material = "lead"
[[part]]
path = "ballast/kept"
shape = "box"
size = [100, 100, "block"]
material = "lead"
"""

RULES = """
[[rule]]
name = "mass without ballast"
check = "min_mass"
exclude = ["ballast"]
limit = "1 kg"
[[rule]]
name = "front"
check = "min_axle_load"
axle = "front"
limit = "1000 kg"
"""


def write_base(tmp_path: Path) -> None:
    write(tmp_path, BASE, "base/base.toml")
    write(tmp_path, RULES, "base/rules.toml")


def test_extends_removes_overrides_and_adds(tmp_path: Path) -> None:
    write_base(tmp_path)
    child = write(tmp_path, """
[model]
name = "ballasted car"
extends = "base/base.toml"
remove = ["ballast/old"]
[parameters]
block = "40 mm"
[[part]]
path = "ballast/new"
shape = "box"
size = [100, 100, 10]
material = "foam"
""")
    model = load_model(child)
    assert model.name == "ballasted car"
    assert [c.path for c in model.components] == ["body/tub", "ballast/kept", "ballast/new"]
    assert model.component("ballast/kept").props.mass == pytest.approx(11340.0 * 0.1 * 0.1 * 0.04, rel=1e-12)
    assert model.component("ballast/new").maturity is Maturity.CALCULATED  # the base's group default
    assert model.vehicle is not None and model.vehicle.wheelbase == pytest.approx(2.5)
    assert [r.name for r in model.rules] == ["mass without ballast", "front"]  # the base's rulebook, found
    results = check_rules(model)
    assert results[0].value == pytest.approx(50.0 * 2.0 * 0.6 * 0.3, rel=1e-12)
    assert not results[1].passed


@pytest.mark.parametrize(
    ("child", "file", "item", "field", "fragment"),
    [
        ('remove = ["ballast/nothing"]', "m.toml", "[model]", "remove", "has no part or group 'ballast/nothing'"),
        ("remove = \"ballast\"", "m.toml", "[model]", "remove", "expected a list"),
        ('[units]\nlength = "in"', "m.toml", "[units]", None, "must be the same as in the base file"),
        ('[materials.foam]\ndensity = "60 kg/m^3"', "m.toml", "material 'foam'", None, "already defined in the base"),
        ('[[part]]\npath = "body/tub"\nshape = "point"\nmass = "1 kg"\nmaturity = "measured"', "m.toml",
         "part 'body/tub'", "path", "duplicate path 'body/tub'"),
    ],
)
def test_extends_errors(tmp_path: Path, child: str, file: str, item: str, field: str | None, fragment: str) -> None:
    write_base(tmp_path)
    lines = ['[model]\nname = "variant"\nextends = "base/base.toml"']
    if child.startswith("remove"):
        lines[0] += "\n" + child
    else:
        lines.append(child)
    path = write(tmp_path, "\n".join(lines) + "\n")
    err = error_of(path)
    assert (err.file, err.item, err.field) == (str(tmp_path / file), item, field), err
    assert fragment in err.message


@pytest.mark.parametrize(
    ("top", "item", "fragment"),
    [
        ("parameters = 3", "[parameters]", "must be a table of name = value"),
        ("materials = [1]", "[materials]", "must be a table"),
        ("part = 3", "[[part]]", "write each entry as a [[part]] table"),
        ("case = 3", "[[case]]", "write each entry as a [[case]] table"),
    ],
)
def test_extends_with_a_section_of_the_wrong_type(tmp_path: Path, top: str, item: str, fragment: str) -> None:
    # the merge of a variant with its base reads these sections: a wrong TOML type is an error, not a traceback
    write_base(tmp_path)
    path = write(tmp_path, top + '\n[model]\nname = "variant"\nextends = "base/base.toml"\n')
    err = error_of(path)
    assert (err.file, err.item, err.field) == (str(path), item, None), err
    assert fragment in err.message


def test_a_case_that_switches_every_part_off(tmp_path: Path) -> None:
    path = write(tmp_path, HEAD + PLATE + '[[case]]\nname = "bare"\nswitch_off = ["body"]\n')
    with pytest.raises(ModelFileError) as info:
        load_model(path, case="bare")
    assert (info.value.item, info.value.field) == ("case 'bare'", None)
    assert "the model has no parts" in info.value.message


def test_model_name_not_text(tmp_path: Path) -> None:
    err = error_of(write(tmp_path, "[model]\nname = 3\n" + PLATE))
    assert (err.item, err.field) == ("[model]", "name") and "expected non-empty text, got 3" in err.message


def test_extends_itself_and_a_missing_base(tmp_path: Path) -> None:
    a = write(tmp_path, '[model]\nname = "a"\nextends = "b.toml"\n', "a.toml")
    write(tmp_path, '[model]\nname = "b"\nextends = "a.toml"\n', "b.toml")
    err = error_of(a)
    assert (err.item, err.field) == ("[model]", "extends") and "extends itself" in err.message
    lone = write(tmp_path, '[model]\nname = "c"\nextends = "gone.toml"\n', "c.toml")
    err = error_of(lone)
    assert (err.file, err.item, err.field) == (str(lone), "[model]", "extends")
    assert "cannot read" in err.message and "gone.toml" in err.message


def test_a_mistake_in_the_base_names_the_base_file(tmp_path: Path) -> None:
    write(tmp_path, BASE.replace('material = "foam"\nmaturity', 'material = "fome"\nmaturity'), "base/base.toml")
    write(tmp_path, RULES, "base/rules.toml")
    path = write(tmp_path, '[model]\nname = "v"\nextends = "base/base.toml"\n')
    err = error_of(path)
    assert (err.file, err.item, err.field) == (str(tmp_path / "base" / "base.toml"), "part 'body/tub'", "material")
    assert "did you mean foam" in err.message


def test_rulebook_errors_name_the_rulebook(tmp_path: Path) -> None:
    write_base(tmp_path)
    book = tmp_path / "base" / "rules.toml"
    book.write_text(RULES.replace('exclude = ["ballast"]', 'exclude = ["fuel"]'), encoding="utf-8")
    err = error_of(tmp_path / "base" / "base.toml")
    assert (err.file, err.item, err.field) == (str(book), "rule 'mass without ballast'", "exclude")
    book.write_text("[vehicle]\nwheelbase = 3\n", encoding="utf-8")
    err = error_of(tmp_path / "base" / "base.toml")
    assert (err.file, err.item) == (str(book), "[vehicle]") and "a rulebook holds [[rule]] tables" in err.message
    book.unlink()
    err = error_of(tmp_path / "base" / "base.toml")
    assert (err.file, err.item, err.field) == (str(tmp_path / "base" / "base.toml"), "[model]", "rulebook")


# --------------------------------------------------------------------------------------------------------------
# SAE z-down vehicle axes (docs/references.md §4: SAE J670e x forward, y right, z down)
# --------------------------------------------------------------------------------------------------------------

CAR_PARTS = """
[[part]]
path = "chassis"
shape = "box"
size = [3000, 800, 300]
mass = "300 kg"
maturity = "measured"
at = [-1200, 0, "z * 50"]
[[part]]
path = "engine"
shape = "point"
mass = "150 kg"
maturity = "measured"
at = [-1900, "y * 40", "z * 100"]
[[part]]
path = "wheels/front/left"
shape = "cylinder"
radius = 280
length = 250
mass = "20 kg"
maturity = "measured"
at = [0, "y * 750", 0]
rotate = { extrinsic = "x", angles = [90] }
mirror = true
"""


def test_sae_z_down_axes_give_the_same_balance(tmp_path: Path) -> None:
    iso = write(tmp_path, HEAD + '[parameters]\ny = 1\nz = 1\n' + VEHICLE.replace("2500", "2600")
                + CAR_PARTS, "iso.toml")
    sae = write(tmp_path, HEAD + '[parameters]\ny = -1\nz = -1\n'
                + VEHICLE.replace("2500", "2600").replace("[vehicle]", '[vehicle]\naxes = { forward = "+x", '
                                                          'left = "-y", up = "-z" }') + CAR_PARTS, "sae.toml")
    a, b = load_model(iso), load_model(sae)
    assert a.vehicle is not None and b.vehicle is not None
    assert b.vehicle.left.tolist() == [0.0, -1.0, 0.0] and b.vehicle.up.tolist() == [0.0, 0.0, -1.0]
    assert b.component("wheels/front/right").props.center.tolist() == pytest.approx([0.0, 0.75, 0.0])
    ba, bb = static_balance(a.mass_properties(), a.vehicle), static_balance(b.mass_properties(), b.vehicle)
    assert bb.corners.tolist() == pytest.approx(ba.corners.tolist(), rel=1e-12)
    assert bb.cg_height == pytest.approx(ba.cg_height, rel=1e-12)
    assert bb.cg_left_of_centre == pytest.approx(ba.cg_left_of_centre, rel=1e-12)
    # By hand (lever rule about the axle lines): CG x = (300(-1.2) + 150(-1.9)) / 490, left offset 150(0.04)/490,
    # height 0.3 + (300(0.05) + 150(0.1)) / 490 above the ground plane at -300 mm.
    m = 490.0
    a1 = -(300 * -1.2 + 150 * -1.9) / m
    assert ba.front == pytest.approx(m * (2.6 - a1) / 2.6, rel=1e-12)
    assert ba.cg_left_of_centre == pytest.approx(150 * 0.04 / m, rel=1e-12)
    assert ba.cg_height == pytest.approx(0.3 + (300 * 0.05 + 150 * 0.1) / m, rel=1e-12)
    assert ba.corners[0] > ba.corners[1]  # the engine sits left of centre


def test_a_source_read_once_builds_the_same_model_as_loading_the_file_again() -> None:
    # Re-evaluating a parsed source must equal reading the file afresh, for the base model, an override and a
    # case, and building must not change the source (a second build from it gives the same numbers).
    import copy

    from massmodel.modelfile.loader import build_model, read_source

    demo = Path(__file__).resolve().parents[1] / "parts_demo" / "brindlecombe_bl3.toml"
    source = read_source(demo)
    before = copy.deepcopy(source.data)
    for overrides, case in ((None, None), ({"fuel_mass": "10 kg"}, None), (None, "qualifying")):
        fresh = load_model(demo, overrides=overrides, case=case).mass_properties()
        again = build_model(source, overrides, case).mass_properties()
        assert again.mass == fresh.mass
        assert np.array_equal(again.center, fresh.center) and np.array_equal(again.inertia, fresh.inertia)
    assert source.data == before
    with_fuel = build_model(source, {"fuel_mass": "10 kg"}).mass_properties().mass
    assert with_fuel != build_model(source).mass_properties().mass


def test_plain_numbers_read_as_the_expression_evaluator_reads_them():
    # FieldReader.quantity converts a TOML number in the file's unit without the evaluator; the result (bit for bit)
    # and every refusal must be what the evaluator path (FieldReader._evaluated, then the magnitude check) gives
    from massmodel.modelfile.fields import FieldReader
    from massmodel.modelfile.reader import magnitude_problem

    defaults = {"length": 1e-3, "mass": 1.0, "angle": math.pi / 180.0, "density": 1.0}
    values = [0, -0.0, 0.0, 1, -7, 12.5, 1e-9, 123456.789, 2**53 + 1, 10**40, 10**400, 1e300, -1e300]
    for kind in ("length", "mass", "angle", "density", "inertia", "number"):
        for value in values:
            fast, slow = FieldReader("f.toml", defaults, {}), FieldReader("f.toml", defaults, {})
            try:
                want: float | str = slow._evaluated(value, kind, "part 'p'", "x")
                problem = magnitude_problem(want, kind, value)
                if problem:
                    want = str(slow.error("part 'p'", "x", problem))
            except ModelFileError as exc:
                want = str(exc)
            try:
                got: float | str = fast.quantity(value, kind, "part 'p'", "x")
            except ModelFileError as exc:
                got = str(exc)
            assert type(got) is type(want) and (got == want if isinstance(want, str)
                                                 else np.float64(got).tobytes() == np.float64(want).tobytes()), \
                (kind, value, got, want)
