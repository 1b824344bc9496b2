"""Short reprs and HTML views of the core and vehicle types, the rule results and the report.

The numbers shown are checked against closed forms written here: the CG of point masses is the mass-weighted mean
of their positions, a homogeneous box's CG is its centre, and a box's tensor is m(b² + c²)/12 and cyclic
(Machinery's Handbook 31st ed. pp.253-254; docs/references.md §1).
"""

from __future__ import annotations

import html
import re
from pathlib import Path

import numpy as np
import pytest

from massmodel.core import display
from massmodel.core.frames import Pose
from massmodel.core.model import Component, MassSource, Maturity, Model
from massmodel.core.shapes import Box, PointMass
from massmodel.modelfile.loader import load_model
from massmodel.report.summary import build_report
from massmodel.report.views import Report, RuleResults
from massmodel.vehicle.balance import Bound, RuleResult, check_rules, static_balance

DEMO = Path(__file__).resolve().parents[1] / "parts_demo" / "brindlecombe_bl3.toml"


def _point(path: str, mass: float, at: list[float]) -> Component:
    return Component(path, PointMass(), Pose.from_translation(at), MassSource.MASS, Maturity.MEASURED, "#000000",
                     mass=mass)


def test_number_and_vector_drop_the_sign_of_zero() -> None:
    assert display.number(-0.00004, 4) == "0.0000"
    assert display.number(-0.00006, 4) == "-0.0001"
    assert display.vector([-1.5086, -0.0004, 0.0169], 0, 1e3) == "(-1509, 0, 17)"


def test_html_table_escapes_every_cell() -> None:
    out = display.html_table([["<script>", "a & b"]], ["x\"", "y"], caption="<i>")
    assert "<script>" not in out and "&lt;script&gt;" in out and "a &amp; b" in out
    assert "&lt;i&gt;" in out and "x&quot;" in out


def test_model_repr_numbers_from_the_closed_form() -> None:
    # two point masses: CG = (1 kg * 0 + 3 kg * 1 m) / 4 kg = 0.75 m along x (mass-weighted mean)
    model = Model("probe <two>", (_point("a", 1.0, [0.0, 0.2, 0.0]), _point("g/b", 3.0, [1.0, 0.2, -0.04])))
    assert repr(model) == "<Model 'probe <two>': 2 parts, 4.0 kg, CG (750, 200, -30) mm>"
    html_text = model._repr_html_()
    assert "probe <two>" not in html_text and html.escape("probe <two>", quote=True) in html_text
    assert "(750, 200, -30) mm" in html_text and "4.0 kg" in html_text


def test_model_repr_of_an_empty_model_and_of_a_case() -> None:
    assert repr(Model("empty", ())) == "<Model 'empty': 0 parts, 0.0 kg>"
    model = Model("m", (_point("a", 2.0, [0.0, 0.0, 0.0]),), case="wet")
    assert repr(model) == "<Model 'm' case 'wet': 1 parts, 2.0 kg, CG (0, 0, 0) mm>"


def test_demo_model_repr_is_short_and_matches_its_totals() -> None:
    model = load_model(DEMO)
    text = repr(model)
    assert len(text) < 120
    total = model.mass_properties()
    m = re.fullmatch(r"<Model '(.+)': (\d+) parts, ([\d.]+) kg, CG \((-?\d+), (-?\d+), (-?\d+)\) mm>", text)
    assert m is not None, text
    assert m[1] == model.name and int(m[2]) == len(model.components)
    assert float(m[3]) == pytest.approx(total.mass, abs=0.05)
    assert np.allclose([float(m[i]) for i in (4, 5, 6)], total.center * 1e3, atol=0.5)


def test_mass_properties_repr_and_html_of_a_box() -> None:
    # box 0.3 x 0.2 x 0.1 m of 6 kg: I_xx = 6 (0.2² + 0.1²)/12 = 0.025, I_yy = 6 (0.3² + 0.1²)/12 = 0.05,
    # I_zz = 6 (0.3² + 0.2²)/12 = 0.065 kg·m² (Machinery's Handbook pp.253-254)
    box = Component("b", Box(0.3, 0.2, 0.1), Pose.from_translation([0.5, 0.0, -0.25]), MassSource.MASS,
                    Maturity.MEASURED, "#000000", mass=6.0)
    text = repr(box.props)
    assert text == ("<MassProperties 6 kg, CG (0.5000, 0.0000, -0.2500) m, inertia about CG Ixx 0.025 Iyy 0.05 "
                    "Izz 0.065 Ixy 0 Ixz 0 Iyz 0 kg*m^2 (tensor convention); reference frame>")
    html_text = box.props._repr_html_()
    assert "0.065 kg·m²" in html_text and "(0.5000, 0.0000, -0.2500) m" in html_text
    assert repr(box) == "<Component 'b': 6 kg (mass, measured), box, CG (500, 0, -250) mm model frame>"


def test_rule_result_cells_keep_the_sign_of_a_failing_margin() -> None:
    ok = RuleResult("min mass", "min_mass", True, 430.0, Bound.AT_LEAST, 430.0, None, -1e-12, "kg", "whole model")
    bad = RuleResult("front share", "front_fraction", False, 0.42799, Bound.BETWEEN, 0.428, 0.46, -0.00001,
                     "fraction", "")
    assert ok.cells() == ["pass", "min mass", "430.00 kg", ">= 430.00 kg", "+0.00 kg"]
    assert bad.cells() == ["FAIL", "front share", "0.4280 fraction", "0.4280 .. 0.4600 fraction", "-0.0000 fraction"]
    assert repr(bad) == ("<RuleResult FAIL 'front share': 0.4280 fraction, limit 0.4280 .. 0.4600 fraction, "
                         "margin -0.0000 fraction>")
    assert "<td" in ok._repr_html_() and "min mass" in ok._repr_html_()


def test_rule_results_and_report_of_the_demo() -> None:
    model = load_model(DEMO)
    results = RuleResults(check_rules(model))
    assert isinstance(results, tuple) and list(results) == check_rules(model)
    assert results.failed == tuple(r for r in results if not r.passed)
    assert results.all_passed is (not results.failed)
    html_text = results._repr_html_()
    assert all(html.escape(r.name, quote=True) in html_text for r in results)
    assert html_text.count("<tr>") == len(results) + 1  # header + one row a rule
    text = repr(results)
    assert len(text.splitlines()) == len(results) + 1
    report = Report(build_report(model))
    assert report.rules == results  # the report's data gives back the same results
    total = model.mass_properties()
    assert repr(report).startswith(f"<Report {model.name!r} case 'base': {total.mass:.1f} kg, CG ")
    assert "CAUTIONS" in str(report) and "Cautions" in report._repr_html_()


def test_rule_results_of_no_rules() -> None:
    assert repr(RuleResults()) == "<RuleResults: no rules>" and RuleResults().all_passed


def test_balance_repr_from_the_lever_rule() -> None:
    model = load_model(DEMO)
    bal = static_balance(model.mass_properties(), model.vehicle)
    # F_front = m a2 / L (Jazar 2008, ch. 2; equation numbers from memory)
    a2 = bal.cg_ahead_of_rear_axle
    front = bal.mass * a2 / model.vehicle.wheelbase
    assert f"front {front:.1f} kg" in repr(bal)
    assert f"{bal.cg_height * 1e3:.1f} mm above ground" in repr(bal)
    assert bal._repr_html_().count("<table>") == 2
