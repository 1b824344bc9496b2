"""The [uncertainty] section of a model file, and the how-sure / report --uncertainty commands.

Exact expected values are written beside each check (unit conversions, percentages of the part's mass).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import main
from massmodel.modelfile.loader import ModelFileError, loads_model

BASE = """
[model]
name = "unc"
[units]
length = "mm"
mass = "kg"
[vehicle]
wheelbase = 2000
track_front = 1400
track_rear = 1300
ground_level = -300
[[group]]
path = "body"
maturity = "estimated"
[[part]]
path = "body/panel"
shape = "box"
size = [500, 400, 10]
mass = 4
at = [-500, 0, 100]
[[part]]
path = "body/nose"
shape = "point"
mass = 2
at = [300, 0, 0]
[[part]]
path = "frame"
shape = "point"
mass = 100
maturity = "calculated"
at = [-1000, 0, 0]
[[part]]
path = "engine"
shape = "point"
mass = 60
maturity = "measured"
at = [-1500, 0, 0]
[[rule]]
name = "front share"
check = "front_fraction"
min = 0.30
max = 0.60
[[rule]]
name = "min mass"
check = "min_mass"
limit = "100 kg"
"""


def _load(extra: str):
    return loads_model(BASE + extra, label="car.toml")


def test_items_groups_and_maturity_tables_resolve_field_by_field() -> None:
    model = _load("""
[uncertainty]
scale_resolution = "0.2 kg"
[uncertainty.maturity.calculated]
mass = "4 %"
cg = "3 mm"
[[uncertainty.item]]
path = "body"
mass = "10 %"
cg = ["10 mm", "5 mm", "2 mm"]
inertia = "40 %"
[[uncertainty.item]]
path = "body/nose"
mass = "0.05 kg"
growth = "15 %"
""")
    u = {c.path: c.uncertainty for c in model.components}
    assert u["body/panel"].mass == pytest.approx(0.4)  # 10 % of 4 kg (group item)
    assert u["body/panel"].cg == pytest.approx((0.010, 0.005, 0.002))
    assert u["body/panel"].inertia == pytest.approx(0.40)
    assert u["body/panel"].growth == 0.20  # massmodel's default for estimated
    assert u["body/nose"].mass == pytest.approx(0.05)  # the part's own item wins the mass ...
    assert u["body/nose"].cg == pytest.approx((0.010, 0.005, 0.002))  # ... the group's cg stays
    assert u["body/nose"].growth == pytest.approx(0.15)
    assert u["frame"].mass == pytest.approx(4.0)  # file default for calculated: 4 % of 100 kg
    assert u["frame"].cg == pytest.approx((0.003,) * 3)
    assert u["frame"].inertia == 0.10  # massmodel's default (the file's table leaves it open)
    assert u["engine"].mass == pytest.approx(0.2 / (2 * np.sqrt(3)))  # scale resolution, rectangular
    assert "scale resolution" in u["engine"].origin


@pytest.mark.parametrize(
    ("extra", "item", "field", "fragment"),
    [
        ('[[uncertainty.item]]\npath = "frame"\nmass = "-1 kg"\n', "uncertainty item 'frame'", "mass", "negative"),
        ('[[uncertainty.item]]\npath = "frame"\ncg = "3 kg"\n', "uncertainty item 'frame'", "cg", "length"),
        ('[[uncertainty.item]]\npath = "frame"\ncg = ["3 mm", "-1 mm", 0]\n', "uncertainty item 'frame'", "cg",
         "negative"),
        ('[[uncertainty.item]]\npath = "frame"\ninertia = "0.3 kg*m^2"\n', "uncertainty item 'frame'", "inertia",
         "percentage"),
        ('[[uncertainty.item]]\npath = "body"\nmass = "0.3 kg"\n', "uncertainty item 'body'", "mass", "percentage"),
        ('[[uncertainty.item]]\npath = "nowhere"\nmass = "1 %"\n', "uncertainty item 'nowhere'", "path", "no part"),
        ('[[uncertainty.item]]\npath = "frame"\nspread = "1 %"\n', "uncertainty item 'frame'", "spread", "unknown"),
        ('[uncertainty.maturity.guessed]\nmass = "1 %"\n', "[uncertainty.maturity]", "guessed", "unknown maturity"),
        ('builtin_defaults = false\n[uncertainty.maturity.calculated]\nmass = "1 %"\ncg = "1 mm"\ninertia = "1 %"\n'
         'growth = "1 %"\n', "part 'body/panel'", "maturity", "no uncertainty default for maturity 'estimated'"),
    ],
)
def test_bad_input_names_file_item_and_field(extra: str, item: str, field: str, fragment: str) -> None:
    with pytest.raises(ModelFileError) as err:
        _load("[uncertainty]\n" + extra)
    assert (err.value.file, err.value.item, err.value.field) == ("car.toml", item, field)
    assert fragment in err.value.message


def test_no_section_leaves_parts_without_records() -> None:
    assert all(c.uncertainty is None for c in _load("").components)


def _run(capsys, *argv: str) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def car(tmp_path: Path) -> Path:
    p = tmp_path / "car.toml"
    p.write_text(BASE + '[uncertainty]\n[[uncertainty.item]]\npath = "frame"\nmass = "2 kg"\n', encoding="utf-8")
    return p


def test_how_sure_prints_writes_json_and_plot(capsys, car: Path, tmp_path: Path) -> None:
    js, png = tmp_path / "h.json", tmp_path / "h.png"
    code, out, _ = _run(capsys, "how-sure", car, "--samples", "4000", "--seed", "0", "--json", js, "--plot", png)
    assert code == 0
    assert "RULES AT 95 % ONE-SIDED CONFIDENCE" in out and "front share" in out
    data = json.loads(js.read_text())
    q = data["cases"]["base"]["quantities"]["mass"]
    assert q["unit"] == "kg" and q["value"] == pytest.approx(166.0)
    # the frame's 2 kg plus the defaults of the others in quadrature: above 2 kg
    assert q["rss_standard_uncertainty"] >= 2.0
    assert abs(q["mc_mean"] - q["value"]) < 3 * q["mc_standard_error_of_mean"]
    assert {r["name"] for r in data["rules"]} == {"front share", "min mass"}
    from PIL import Image

    with Image.open(png) as im:
        arr = np.asarray(im.convert("L"))
    assert im.size[0] > 800 and arr.std() > 5  # an image, not a blank page


def test_how_sure_records_the_sampler_so_a_seed_reproduces_its_numbers(capsys, car: Path, tmp_path: Path) -> None:
    # The same seed gives other samples from the other sampler ("auto" picks one by size and by what the process has
    # loaded): the JSON and the text name the sampler of each case, and that sampler with that seed gives the
    # reported Monte Carlo mean again, exactly (the samples depend on the seed, the sampler and the sample index only).
    from massmodel.modelfile.loader import load_model
    from massmodel.uncertainty import monte_carlo

    js = tmp_path / "h.json"
    code, out, _ = _run(capsys, "how-sure", car, "--samples", "3000", "--seed", "7", "--json", js)
    assert code == 0
    case = json.loads(js.read_text())["cases"]["base"]
    assert case["mc_sampler"] in ("numpy", "numba")
    assert f"Monte Carlo sampler {case['mc_sampler']}" in out
    again = monte_carlo(load_model(car), 3000, seed=7, kernel=case["mc_sampler"])
    assert again.mean("mass") == case["quantities"]["mass"]["mc_mean"]


def test_how_sure_strict_fails_when_a_rule_is_not_sure(capsys, tmp_path: Path) -> None:
    p = tmp_path / "tight.toml"
    # min mass at 165.5 kg: the nominal 166 kg passes, but u ≈ 2 kg leaves it far from 95 % sure
    p.write_text(BASE.replace('limit = "100 kg"', 'limit = "165.5 kg"')
                 + '[uncertainty]\n[[uncertainty.item]]\npath = "frame"\nmass = "2 kg"\n', encoding="utf-8")
    code, out, _ = _run(capsys, "how-sure", p, "--samples", "2000", "--strict")
    assert code == 1
    assert "not sure" in out
    code, _, _ = _run(capsys, "report", p, "--brief", "--strict")
    assert code == 0  # passes nominally ...
    code, out, _ = _run(capsys, "report", p, "--brief", "--strict", "--confidence", "95%")
    assert code == 1  # ... but not at 95 %


def test_report_shows_plus_minus_when_declared_and_on_request(capsys, car: Path, tmp_path: Path) -> None:
    js = tmp_path / "r.json"
    code, out, _ = _run(capsys, "report", car, "--brief", "--json", js)
    assert code == 0
    assert "mass            166.000 ± " in out and "UNCERTAINTY" in out
    unc = json.loads(js.read_text())["uncertainty"]
    assert unc["quantities"]["mass"]["unit"] == "kg"
    assert "k = 1" in unc["coverage"]
    plain = tmp_path / "plain.toml"
    plain.write_text(BASE, encoding="utf-8")
    _, out, _ = _run(capsys, "report", plain, "--brief")
    assert "±" not in out
    _, out, _ = _run(capsys, "report", plain, "--brief", "--uncertainty")
    assert "defaults by maturity" in out


def test_cli_bad_input_is_one_line_and_exit_2(capsys, tmp_path: Path) -> None:
    p = tmp_path / "bad.toml"
    p.write_text(BASE + '[uncertainty]\n[[uncertainty.item]]\npath = "frame"\ncg = "-2 mm"\n', encoding="utf-8")
    code, _, err = _run(capsys, "how-sure", p)
    assert code == 2
    assert err.count("\n") == 1 and "uncertainty item 'frame', field 'cg'" in err and str(p) in err
    # a confidence outside [0.5, 1) is refused by the option's argparse type: one line, exit 2
    code, _, err = _run(capsys, "how-sure", p, "--confidence", "1.2")
    assert code == 2
    assert "confidence" in err and err.count("\n") == 1


def test_extends_merges_the_section(tmp_path: Path) -> None:
    base = tmp_path / "base.toml"
    base.write_text(BASE + '[uncertainty]\nscale_resolution = "0.2 kg"\n[uncertainty.maturity.calculated]\n'
                    'mass = "4 %"\n[[uncertainty.item]]\npath = "body"\nmass = "10 %"\n'
                    '[[uncertainty.item]]\npath = "frame"\nmass = "1 kg"\n', encoding="utf-8")
    child = tmp_path / "child.toml"
    child.write_text('[model]\nname = "child"\nextends = "base.toml"\nremove = ["body"]\n[units]\nlength = "mm"\n'
                     'mass = "kg"\n[uncertainty]\n[[uncertainty.item]]\npath = "frame"\ncg = "7 mm"\n',
                     encoding="utf-8")
    from massmodel.modelfile.loader import load_model

    u = {c.path: c.uncertainty for c in load_model(child).components}
    assert "body/panel" not in u  # removed, and its base item with it (no "no part lies at" error)
    assert u["frame"].mass == pytest.approx(4.0)  # the child's item replaced the base's 1 kg; base maturity table
    assert u["frame"].cg == pytest.approx((0.007,) * 3)
    assert u["engine"].mass == pytest.approx(0.2 / (2 * np.sqrt(3)))  # base scale resolution kept
    # a base item naming a missing path is reported against the base file
    base.write_text(BASE + '[uncertainty]\n[[uncertainty.item]]\npath = "nothing"\nmass = "1 %"\n', encoding="utf-8")
    child.write_text('[model]\nname = "child"\nextends = "base.toml"\n[units]\nlength = "mm"\nmass = "kg"\n',
                     encoding="utf-8")
    with pytest.raises(ModelFileError) as err:
        load_model(child)
    assert err.value.file == str(base) and err.value.field == "path"
