"""place-ballast --confidence: ballast that meets every rule of every load case with the chosen one-sided confidence
given the model's declared uncertainties (the margins of massmodel.uncertainty.rule_margins: z_P times the RSS
standard uncertainty, Zimmerman & Nakai, SAWE Paper 3360, docs/references.md §5), checked by loading the written
model back and asking how sure each rule is."""

from __future__ import annotations

from pathlib import Path

import pytest

from massmodel.cli import main
from massmodel.modelfile.loader import load_case_models
from massmodel.uncertainty import rule_confidence

REPO = Path(__file__).resolve().parents[1]
CAR = REPO / "parts_demo" / "brindlecombe_bl3.toml"
PLAN = REPO / "parts_demo" / "bl3_ballast_plan.toml"


def test_ballast_placed_at_95_percent_passes_every_rule_at_95_percent(tmp_path: Path, capsys) -> None:
    nominal = tmp_path / "nominal.toml"
    sure = tmp_path / "sure.toml"
    assert main(["place-ballast", str(CAR), str(PLAN), "--no-fit", "--out-model", str(nominal)]) == 0
    assert main(["place-ballast", str(CAR), str(PLAN), "--no-fit", "--confidence", "95%",
                 "--out-model", str(sure)]) == 0
    out = capsys.readouterr().out
    assert "margins for 95 % confidence" in out
    plain, confident = load_case_models(nominal), load_case_models(sure)
    # the nominal placement leaves some rule short of 95 % (the demo's minimum mass), the confident one none
    assert any(not r.passes_at_confidence for m in plain.values() for r in rule_confidence(m, 0.95))
    for case, model in confident.items():
        for r in rule_confidence(model, 0.95):
            assert r.passes_at_confidence, (case, r.name, r.margin, r.required_margin_rss)
    assert confident["base"].mass_properties().mass > plain["base"].mass_properties().mass


def test_confidence_outside_its_range_is_one_line_and_exit_2(capsys) -> None:
    assert main(["place-ballast", str(CAR), str(PLAN), "--confidence", "1.5"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "--confidence" in err


@pytest.mark.parametrize("text", ["0.4", "abc"])
def test_confidence_must_be_a_probability_above_one_half(text: str, capsys) -> None:
    assert main(["place-ballast", str(CAR), str(PLAN), "--confidence", text]) == 2
    assert "confidence" in capsys.readouterr().err
