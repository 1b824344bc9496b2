"""The study commands end to end: vary, nudge, fuel-burn (files written, charts drawn, bad input exit 2)."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest

from massmodel.cli import main

ROOT = Path(__file__).resolve().parents[1]
CAR = ROOT / "parts_demo" / "brindlecombe_bl3.toml"
STUDY = ROOT / "parts_demo" / "bl3_ballast_study.toml"
PREVIOUS = ROOT / "parts_demo" / "brindlecombe_bl3_previous.toml"


def _image(path: Path) -> np.ndarray:
    from matplotlib.image import imread

    img = imread(path)
    assert img.ndim == 3 and img.shape[0] > 300 and img.shape[1] > 500
    assert float(img[..., :3].std()) > 0.05  # not blank
    return img


def _has_colour(img: np.ndarray, hex_colour: str) -> bool:
    rgb = np.array([int(hex_colour[i:i + 2], 16) for i in (1, 3, 5)]) / 255.0
    return bool(np.any(np.all(np.abs(img[..., :3] - rgb) < 0.02, axis=-1)))


def test_vary_writes_csv_json_and_chart(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    args = ["vary", str(STUDY), "--param", "trim_block_x=-600mm:-2400mm:4", "--param", "trim_block_mass=8kg,12kg",
            "--csv", str(tmp_path / "s.csv"), "--json", str(tmp_path / "s.json"), "--plot", str(tmp_path / "s.png")]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "8 points over trim_block_x (4) x trim_block_mass (2)" in text and "worst margin" in text
    rows = list(csv.DictReader((tmp_path / "s.csv").open()))
    assert len(rows) == 8 and float(rows[0]["trim_block_x_m"]) == -0.6 and float(rows[1]["trim_block_mass_kg"]) == 12.0
    data = json.loads((tmp_path / "s.json").read_text())
    assert data["format"] == "massmodel-sweep/1" and len(data["points"]) == 8
    assert data["points"][0]["mass_kg"] == pytest.approx(float(rows[0]["mass_kg"]), abs=0)
    img = _image(tmp_path / "s.png")
    assert _has_colour(img, "#b5483b")  # the rule limits are drawn


def test_vary_partial_rebuild_writes_the_same_csv_as_full_builds(tmp_path: Path) -> None:
    args = ["vary", str(STUDY), "--param", "trim_block_x=-700mm:-2300mm:3", "--param", "trim_block_height=15mm,25mm",
            "--case", "qualifying"]
    assert main([*args, "--csv", str(tmp_path / "fast.csv")]) == 0
    assert main([*args, "--csv", str(tmp_path / "full.csv"), "--full-builds"]) == 0
    assert (tmp_path / "fast.csv").read_text() == (tmp_path / "full.csv").read_text()


@pytest.mark.parametrize(("args", "message"), [
    (["--param", "nosuch=1kg:2kg:3"], "unknown parameter 'nosuch'"),
    (["--param", "fuel_mass=1kg:2kg:0"], "STEPS must be at least 1"),
    (["--param", "fuel_mass=0kg:2kg:3"], "at fuel_mass = 0.0 kg"),
    (["--param", "fuel_mass=1kg:2kg:2", "--outputs", "speed"], "unknown output 'speed'"),
])
def test_vary_bad_input_is_one_line_and_exit_2(args: list[str], message: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["vary", str(CAR), *args]) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1


def test_fuel_burn_and_nudge(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["fuel-burn", str(CAR), "--case", "race_start", "--steps", "4", "--plot", str(tmp_path / "f.png"),
                 "--json", str(tmp_path / "f.json"), "--csv", str(tmp_path / "f.csv")]) == 0
    out = capsys.readouterr().out
    assert "fuel_mass from 30.000 kg to 0.000 kg" in out and "left out" in out
    data = json.loads((tmp_path / "f.json").read_text())
    assert [p["fuel_mass_kg"] for p in data["points"]] == [30.0, 20.0, 10.0, 0.0]
    assert {w["column"] for w in data["worst"]} >= {"margin_minimum_front_axle_load_kg"}
    _image(tmp_path / "f.png")
    assert main(["fuel-burn", str(CAR), "--full", "40 mm"]) == 2
    assert main(["fuel-burn", str(CAR), "--fuel", "nosuch"]) == 2
    capsys.readouterr()
    assert main(["nudge", str(STUDY), "--step", "trim_block_x=50mm", "--step", "trim_block_mass=1kg", "--step",
                 "wheelbase=10mm", "--rank-by", "front_share,cg_height", "--plot", str(tmp_path / "n.png")]) == 0
    out = capsys.readouterr().out
    ranking = [line.split()[1] for line in out.splitlines() if line[:2] in ("1 ", "2 ", "3 ")]
    assert len(ranking) == 3 and set(ranking) == {"trim_block_x", "trim_block_mass", "wheelbase"}
    _image(tmp_path / "n.png")
    assert main(["nudge", str(CAR), "--step", "wheelbase=0mm"]) == 2


def test_changes_between_the_demo_versions(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["changes", str(PREVIOUS), str(CAR), "--waterfall", str(tmp_path / "w.png")]) == 0
    out = capsys.readouterr().out
    assert "2 added, 1 removed" in out and "electrics/battery_lead_acid" in out
    _image(tmp_path / "w.png")


def test_progress_line_on_stderr(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["vary", str(CAR), "--param", "fuel_mass=5kg:25kg:3", "--chunk", "1", "--progress",
                 "--outputs", "mass"]) == 0
    err = capsys.readouterr().err
    assert err.endswith("3/3 (100%)\n") and "vary [" in err and "1/3 (33%)" in err
    assert main(["vary", str(CAR), "--param", "fuel_mass=5kg:25kg:3", "--outputs", "mass"]) == 0
    assert capsys.readouterr().err == ""  # not a terminal and not forced: no progress
