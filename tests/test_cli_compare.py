"""The ``crossweigh`` command: exit codes (0 agrees, 1 fails as declared, 2 bad input), terminal text, JSON, STEP,
and the demo's invented CAD estimate with its deliberate mix-up."""

from __future__ import annotations

import json
from pathlib import Path

import cadquery as cq
import pytest
from cad_bodies import BASE_SPEC, BODIES, cad_solid, model_text, occ_props, write_estimate

from massmodel.cli import main

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture
def files(tmp_path):
    model = tmp_path / "bodies.toml"
    model.write_text(model_text())
    return tmp_path, model, occ_props()


def test_agreeing_estimate_exits_0(files, capsys):
    tmp, model, props = files
    est = write_estimate(tmp / "e.csv", props, BASE_SPEC, fmt="csv")
    assert main(["crossweigh", str(model), str(est)]) == 0
    out = capsys.readouterr().out
    assert "RESULT: pass" in out and "DIAGNOSIS" not in out
    assert "declared: mass kg · lengths mm · inertia kg*mm^2 · axes x=-x, y=-y, z=+z" in out


def test_mixup_exits_1_with_the_diagnosis_in_text_and_json(files, capsys):
    tmp, model, props = files
    est = write_estimate(tmp / "e.json", props, BASE_SPEC.with_(inertia_unit="lb*in^2"), BASE_SPEC)
    out_json = tmp / "out" / "check.json"
    assert main(["crossweigh", str(model), str(est), "--json", str(out_json), "--units", "mm"]) == 1
    out = capsys.readouterr().out
    assert "the inertia numbers are in lb*in^2, not the declared kg*mm^2 (factor 292.6397)" in out
    assert "agreement to round-off" in out and "RESULT: FAIL" in out
    d = json.loads(out_json.read_text())
    assert d["passed"] is False and d["diagnosis"]["explained"] is True
    assert d["diagnosis"]["explanation"]["conventions"]["units"]["inertia"] == "lb*in^2"
    assert d["diagnosis"]["explanation"]["comparison"]["passed"] is True
    assert [p.name for p in out_json.parent.iterdir()] == ["check.json"]  # no temporary file left


@pytest.mark.parametrize(
    "extra, message",
    [
        (["--mass-tol", "one"], "--mass-tol: expected a share such as '1 %' or 0.01, got 'one'"),
        (["--cg-tol", "5 kg"], "--cg-tol: expected length (m) such as '5 mm', got '5 kg'"),
        (["--axis-tol", "-2 deg"], "tolerance 'axis' must be a positive number"),
        (["--density", "7850 kg/m^3"], "--density applies to STEP estimates only"),
        (["--step-axes", "x=-x, y=-y, z=+z"], "--step-axes applies to STEP estimates only"),
        (["--step-origin", "0, 0, -265 mm"], "--step-origin applies to STEP estimates only"),
        (["--group", "c"], "--group: no group or part 'c' in model 'test bodies'"),
    ],
)
def test_bad_options_exit_2_with_one_line(files, capsys, extra, message):
    tmp, model, props = files
    est = write_estimate(tmp / "e.json", props, BASE_SPEC)
    assert main(["crossweigh", str(model), str(est), *extra]) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1 and "Traceback" not in err


def test_bad_estimate_exits_2_naming_file_item_and_field_and_writes_nothing(files, capsys):
    tmp, model, props = files
    est = write_estimate(tmp / "e.json", props, BASE_SPEC)
    est.write_text(est.read_text().replace('"kg*mm^2"', '"kg*mm^2^"'))
    out_json = tmp / "check.json"
    assert main(["crossweigh", str(model), str(est), "--json", str(out_json)]) == 2
    err = capsys.readouterr().err
    assert f"massmodel crossweigh: error: {est}: units, field 'inertia':" in err
    assert not out_json.exists()


def test_step_with_densities_per_solid_by_material_key_quantity_and_index(files, capsys):
    tmp, model, _ = files
    step = tmp / "bodies.step"
    assy = cq.Assembly(name="bodies")
    for b in BODIES:
        assy.add(cad_solid(b), name=b["path"].split("/")[1])
    assy.export(str(step))
    argv = ["crossweigh", str(model), str(step), "--solid-density", "block=structural_steel",
            "--solid-density", "#2=2.7 g/cm^3", "--solid-density", "tab=ti_6al_4v",
            "--solid-group", "puck=b", "--solid-group", "tab=b", "--json", str(tmp / "s.json")]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert "solid #1 bodies/block: 756 cm^3 x 7850 kg/m^3 = 5.9346 kg" in out  # 120 x 90 x 70 mm of steel
    assert "STEP placement given: axes x=+x, y=+y, z=+z · origin (0, 0, 0) mm" in out
    d = json.loads((tmp / "s.json").read_text())
    assert [it["group"] for it in d["as_declared"]["items"]] == ["*", "b"]
    assert main(argv[:3] + ["--solid-density", "block=unobtainium"]) == 2
    assert "or a material key" in capsys.readouterr().err


def test_demo_estimate_fails_as_declared_and_the_diagnosis_names_the_deliberate_mixup(tmp_path, capsys):
    car = ROOT / "parts_demo" / "brindlecombe_bl3.toml"
    est = ROOT / "parts_demo" / "brindlecombe_bl3_cad_estimate.json"
    assert main(["crossweigh", str(car), str(est), "--json", str(tmp_path / "c.json")]) == 1
    out = capsys.readouterr().out
    assert ("the products of inertia are in the positive convention (P_xy = +∫xy dm), not the declared negative "
            "one (I_xy = -∫xy dm)") in out
    d = json.loads((tmp_path / "c.json").read_text())["diagnosis"]
    exp = d["explanation"]
    assert [r["kind"] for r in exp["reinterpretations"]] == ["products"] and not d["ambiguous"]
    # The invented CAD-vs-model differences stay within tolerance once the mix-up is undone (not round-off).
    assert exp["passed"] is True and exp["roundoff"] is False and exp["score"] < 1.0


@pytest.mark.parametrize(
    "text, expected",
    [("0, 0, -265 mm", [0.0, 0.0, -0.265]), ("0 mm, 10 mm, -0.265 m", [0.0, 0.01, -0.265]),
     ("(1, 2, 3) in", [0.0254, 0.0508, 0.0762])],  # 1 in = 0.0254 m exactly
)
def test_step_origin_option(text, expected):
    from massmodel.cli.compare import _point

    assert _point("--step-origin", text).tolist() == pytest.approx(expected, rel=1e-15, abs=0.0)


@pytest.mark.parametrize("text", ["0, 0, -265", "0, 0", "0, 0, -265 kg"])
def test_step_origin_needs_three_lengths(text):
    from massmodel.cli.compare import _point

    with pytest.raises(ValueError, match="--step-origin: expected 'x, y, z unit'"):
        _point("--step-origin", text)


def test_details_show_every_item_and_cautions_follow(files, capsys):
    tmp, model, props = files
    est = write_estimate(tmp / "e.json", props, BASE_SPEC)
    assert main(["crossweigh", str(model), str(est), "--details"]) == 0
    out = capsys.readouterr().out
    for group in ("*", "a", "b"):
        assert f"item '{group}' in detail: tensor about its CG (kg*m^2, model axes, tensor convention)" in out
    assert out.rstrip().splitlines()[-2] == "CAUTIONS" and "licensed engineering practice" in out
