"""Tests for massmodel.core.expr: the safe unit-aware expression language and parameter resolution.

Unit factors are derived from the exact definitions in NIST SP 811 (2008) App. B
(1 in = 0.0254 m, 1 lb = 0.45359237 kg, g_n = 9.80665 m/s²); operator precedence and
associativity follow the Python language reference, §6.5 "The power operator"
(-2**2 == -4, right-associative **) and §6.17 "Operator precedence".
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

import massmodel.core.expr as expr_module
from massmodel.core.expr import (
    MAX_DEPTH,
    MAX_LENGTH,
    RESERVED_NAMES,
    ExpressionError,
    ParameterError,
    evaluate,
    evaluate_parameters,
    parse_override,
    referenced_names,
)
from massmodel.core.units import (
    ANGLE,
    AREA,
    DENSITY,
    DIMENSIONLESS,
    INERTIA,
    LENGTH,
    MASS,
    TIME,
    UNIT_NAMES,
    Dimension,
    Quantity,
)

INCH = 0.0254  # m, exact (NIST SP 811 App. B)
POUND = 0.45359237  # kg, exact
G0 = 9.80665  # m/s^2, exact
REL = 1e-15


def q(text: str, **env: Quantity) -> Quantity:
    return evaluate(text, env)


# -- literals ----------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "value", "dim"),
    [
        ("17.6 g/cm^3", 17600.0, DENSITY),
        ("2.1 kg", 2.1, MASS),
        ("250 mm", 0.25, LENGTH),
        ("250mm", 0.25, LENGTH),
        ("0.35 kg*m^2", 0.35, INERTIA),
        ("0.35 kg·m^2", 0.35, INERTIA),
        ("30 deg", math.pi / 6, ANGLE),
        ("5 min", 300.0, TIME),
        ("10 µm", 1e-5, LENGTH),
        ("1e3m", 1000.0, LENGTH),
        ("2 lb*in^2", 2 * POUND * INCH**2, INERTIA),
        ("1 lb*in*s^2", POUND * G0 * INCH, INERTIA),  # lb is pound-force in lb·in·s²
        ("3 * mm", 3e-3, LENGTH),
        ("kg*m^2", 1.0, INERTIA),
        ("2 mm * mm", 2e-6, AREA),  # the unit term continues across * when a unit follows
        ("1 / 2 mm", 500.0, Dimension(length=-1)),  # the unit term binds tighter than /
        ("2 mm^2", 2e-6, AREA),
        ("4 m^-1", 4.0, Dimension(length=-1)),
        ("9.81 m/s^2", 9.81, Dimension(length=1, time=-2)),
        ("1 kg/m/s", 1.0, Dimension(mass=1, length=-1, time=-1)),
    ],
)
def test_quantity_literals(text: str, value: float, dim: Dimension) -> None:
    result = evaluate(text, {})
    assert result.value == pytest.approx(value, rel=REL)
    assert result.dim == dim


def test_density_literal_is_exact() -> None:
    # 17.6 × (exactly 1000 kg/m³ per g/cm³) rounds to 17600.0
    assert evaluate("17.6 g/cm^3") == Quantity(17600.0, DENSITY)
    assert evaluate("2.1 kg") == Quantity(2.1, MASS)


@pytest.mark.parametrize(
    ("text", "value"),
    [("12", 12.0), ("12.5", 12.5), (".5", 0.5), ("1e-3", 1e-3), ("2.5E+4", 25000.0), ("3.", 3.0), ("0", 0.0)],
)
def test_number_forms(text: str, value: float) -> None:
    assert evaluate(text) == Quantity(value, DIMENSIONLESS)


def test_plain_numbers_are_dimensionless() -> None:
    assert evaluate(3) == Quantity(3.0)
    assert evaluate(2.5) == Quantity(2.5)
    assert evaluate(-0.25) == Quantity(-0.25)


def test_unit_term_stops_before_parameter_and_call() -> None:
    width = Quantity(3.0, DIMENSIONLESS)
    result = q("2 mm * width", width=width)
    assert result == Quantity(0.006, LENGTH)
    a, b = Quantity(0.004, LENGTH), Quantity(0.005, LENGTH)
    result = q("2 mm * min(a, b)", a=a, b=b)
    assert result.dim == AREA and result.value == pytest.approx(8e-6, rel=REL)
    assert q("2 kg · 3") == Quantity(6.0, MASS)


# -- precedence and associativity (Python language reference §6.5, §6.17) -------------------------
@pytest.mark.parametrize(
    ("text", "value"),
    [
        ("2 + 3 * 4", 14.0),
        ("(2 + 3) * 4", 20.0),
        ("10 - 4 - 3", 3.0),
        ("100 / 10 / 5", 2.0),
        ("2 ** 3 ** 2", 512.0),
        ("2 ^ 3 ^ 2", 512.0),
        ("(2 ** 3) ** 2", 64.0),
        ("-2**2", -4.0),
        ("-2^2", -4.0),
        ("(-2)**2", 4.0),
        ("2**-1", 0.5),
        ("2 ** -1 ** 2", 0.5),
        ("-3 - -3", 0.0),
        ("+4", 4.0),
        ("2 * -3", -6.0),
        ("- - 5", 5.0),
        ("5 \u2212 2", 3.0),
        ("2 * 3 ** 2", 18.0),
        ("1 + 2 * 3 - 4 / 2", 5.0),
    ],
)
def test_precedence_and_associativity(text: str, value: float) -> None:
    assert evaluate(text) == Quantity(value)


# -- functions and constants ---------------------------------------------------------------------
def test_functions_with_dimensions() -> None:
    assert evaluate("sqrt(4 m^2)") == Quantity(2.0, LENGTH)
    radius = evaluate("sqrt(2 kg*m^2 / 0.5 kg)")  # radius of gyration, sqrt(I/m)
    assert radius == Quantity(2.0, LENGTH)
    assert evaluate("abs(-3 mm)").value == pytest.approx(3e-3, rel=REL)
    assert evaluate("min(1 in, 30 mm, 2 cm)").value == pytest.approx(0.02, rel=REL)
    assert evaluate("max(1 in, 30 mm, 2 cm)").value == pytest.approx(0.03, rel=REL)
    assert evaluate("max(2 kg)") == Quantity(2.0, MASS)
    assert evaluate("min(5 min, 2 s)") == Quantity(2.0, TIME)


def test_trigonometry_needs_angles() -> None:
    assert evaluate("sin(30 deg)").value == pytest.approx(0.5, abs=1e-15)
    assert evaluate("cos(60 deg)").value == pytest.approx(0.5, abs=1e-15)
    assert evaluate("tan(45 deg)").value == pytest.approx(1.0, abs=1e-15)
    assert evaluate("sin(pi / 2 * rad)") == Quantity(1.0)
    assert evaluate("cos(0 rad)") == Quantity(1.0)
    assert evaluate("sin(radians(90))") == Quantity(1.0)
    assert evaluate("radians(180)") == Quantity(math.pi, ANGLE)
    assert evaluate("degrees(pi * rad)") == Quantity(180.0)
    assert evaluate("degrees(90 deg)").value == pytest.approx(90.0, rel=REL)


def test_pi() -> None:
    assert evaluate("pi") == Quantity(math.pi)
    assert evaluate("2 * pi * 100 mm").value == pytest.approx(2 * math.pi * 0.1, rel=REL)


def test_parameters_and_reserved_names() -> None:
    env = {"wheelbase": Quantity(2.6, LENGTH), "share": Quantity(0.45)}
    assert evaluate("wheelbase * share", env).value == pytest.approx(1.17, rel=REL)
    assert evaluate("wheelbase / 2 - 40 mm", env).value == pytest.approx(1.26, rel=REL)
    # reserved names always mean the unit, whatever the environment holds
    assert evaluate("mm", {"mm": Quantity(5.0)}) == Quantity(0.001, LENGTH)


# -- rejections ----------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "fragment", "position"),
    [
        ("250 mm + 2 kg", "cannot add length (m) and mass (kg)", 7),
        ("__import__('os')", "unknown function '__import__'", 0),
        ("a.b", "attribute access with '.' is not allowed", 1),
        ("x.__class__", "attribute access", 1),
        ("9**9**9", "powers are limited to |exponent| <= 64", 1),
        ("2**1000", "powers are limited", 1),
        ("'x'", "text in quotes is not allowed", 0),
        ('"x"', "text in quotes is not allowed", 0),
        ("x[0]", "subscripts with [ ] are not allowed", 1),
        ("1/0", "division by zero", 1),
        ("1 mm / (2 mm - 2 mm)", "division by zero", 5),
        ("0**-1", "zero cannot be raised to a negative power", 1),
        ("1e999", "the number 1e999 is too large", 0),
        ("1e308 * 10", "too large to represent", 6),
        ("(10**60)**60", "too large", 8),
        ("1 2", "expected an operator", 2),
        ("1 mm 2", "expected an operator", 5),
        ("2(3)", "expected an operator", 1),
        ("2 width", "'width' is not a unit (to multiply, write 2 * width)", 2),
        ("10 kgs", "did you mean 'kg'", 3),
        ("sin(30)", "give the angle a unit, e.g. 30 deg", 0),
        ("tan(2 mm)", "needs an angle, got length (m)", 0),
        ("degrees(3)", "degrees() takes an angle", 0),
        ("radians(3 deg)", "radians() takes a plain number of degrees, got angle (rad)", 0),
        ("max(1 mm, 2 kg)", "one dimension, got length (m) and mass (kg)", 0),
        ("sqrt(-1)", "square root of a negative", 0),
        ("(-8)**(1/3)", "fractional power", 4),
        ("(2 kg) ** (2 m)", "exponent must be a plain number", 7),
        ("sqrt", "function 'sqrt' needs parentheses", 0),
        ("pi(2)", "'pi' is a constant, not a function", 0),
        ("mm(2)", "'mm' is a unit, not a function", 0),
        ("foo(1)", "unknown function 'foo'", 0),
        ("sqr(4)", "did you mean 'sqrt'", 0),
        ("min()", "min() takes at least 1 argument, got 0", 0),
        ("abs(1, 2)", "abs() takes exactly 1 argument, got 2", 0),
        ("((1)", "missing ')'", 4),
        ("sqrt(1, 2", "missing ')' to close the call of sqrt()", 9),
        ("1)", "unmatched ')'", 1),
        ("1 +", "ends too early", 3),
        ("1 +* 2", "unexpected '*'", 3),
        ("m²", "write powers as m^2", 1),
        ("1 = 2", "'=' is not allowed", 2),
        ("$x", "unexpected character '$'", 0),
        ("2 m^x", "unit exponent must be a whole number", 3),
        ("2 mm^2.5", "unit exponent must be a whole number", 4),
        ("..5", "unexpected '.'", 0),
        ("lambda: 1", "unexpected character ':'", 6),
    ],
)
def test_rejections(text: str, fragment: str, position: int) -> None:
    with pytest.raises(ExpressionError) as info:
        evaluate(text, {"x": Quantity(2.0), "a": Quantity(1.0), "width": Quantity(1.0)})
    err = info.value
    assert fragment in err.message
    assert err.position == position
    assert err.text == text
    assert isinstance(err, ValueError)


def test_error_message_shows_text_and_caret() -> None:
    with pytest.raises(ExpressionError) as info:
        evaluate("250 mm + 2 kg")
    assert str(info.value).splitlines() == [
        "cannot add length (m) and mass (kg)",
        "    250 mm + 2 kg",
        "           ^",
    ]


def test_unknown_name_suggests_close_match() -> None:
    with pytest.raises(ExpressionError) as info:
        evaluate("whelbase / 2", {"wheelbase": Quantity(2.6, LENGTH)})
    assert info.value.message == "unknown name 'whelbase'; did you mean 'wheelbase'?"
    assert info.value.position == 0


@pytest.mark.parametrize("text", ["", "   ", "\t\n"])
def test_empty_text(text: str) -> None:
    with pytest.raises(ExpressionError) as info:
        evaluate(text)
    assert info.value.message == "empty expression"
    assert info.value.position is None


@pytest.mark.parametrize(
    ("value", "fragment"),
    [
        (True, "true/false is not a number"),
        (False, "true/false is not a number"),
        (None, "expected a number or expression text, got NoneType"),
        ([1], "got list"),
        (float("nan"), "finite"),
        (float("inf"), "finite"),
        (10**400, "too large"),
    ],
)
def test_rejects_non_numbers(value: object, fragment: str) -> None:
    with pytest.raises(ExpressionError, match=re.escape(fragment)):
        evaluate(value)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("9**9**9", "exponent 3.8742e+08 is too large"),  # 9**9 = 387,420,489 refused as an exponent
        ("9^9^9^9^9", "exponent 3.8742e+08 is too large"),  # right-associative: the innermost 9^9 is refused
        ("(2**64)**64", "the result of the power 1.84467e+19^64 is too large"),  # 2**64 = 1.8447e19, a float
        ("10**64**64", "exponent 3.9402e+115 is too large"),  # 64**64 = 3.9402e115
    ],
)
def test_limits_fail_fast(text: str, fragment: str) -> None:
    # a power tower is refused at the first exponent beyond the limit (or the first float overflow), before any
    # big-integer arithmetic could run for minutes: the message names that exponent (values by hand, Python floats)
    with pytest.raises(ExpressionError, match=re.escape(fragment)):
        evaluate(text)


def test_numbers_are_floats_not_big_integers() -> None:
    # the evaluator computes with floats, so no power can grow into an unbounded Python integer
    q = evaluate("2**64")
    assert type(q.value) is float
    assert q.value == 2.0**64


def test_length_cap() -> None:
    ok = "1+" * ((MAX_LENGTH - 1) // 2) + "1"
    assert len(ok) <= MAX_LENGTH
    assert evaluate(ok) == Quantity(float(ok.count("1")))
    too_long = "1+" * (MAX_LENGTH // 2) + "1"
    with pytest.raises(ExpressionError, match=r"too long \(2001 characters; the limit is 2000\)"):
        evaluate(too_long)


def test_nesting_cap() -> None:
    inner = MAX_DEPTH - 1  # the whole expression counts as one level
    assert evaluate("(" * inner + "1" + ")" * inner) == Quantity(1.0)
    assert evaluate("-" * inner + "1") == Quantity(-1.0)
    for text in ("(" * MAX_DEPTH + "1" + ")" * MAX_DEPTH, "-" * 500 + "1", "sqrt(" * 80 + "1" + ")" * 80):
        with pytest.raises(ExpressionError, match="nested too deeply"):
            evaluate(text)


def test_no_dynamic_evaluation_in_source() -> None:
    source = Path(expr_module.__file__).read_text(encoding="utf-8")
    code = re.sub(r'"""[\s\S]*?"""', "", source)  # drop docstrings, which mention eval by name
    # builtins that run or look up code by name; "re.compile(" (regular expressions) is fine
    assert re.search(r"(?<!\bre\.)\b(eval|exec|compile|__import__|getattr)\s*\(", code) is None
    assert "builtins" not in code
    assert re.search(r"^\s*(import|from)\s+ast\b", code, re.MULTILINE) is None


# -- referenced_names ----------------------------------------------------------------------------
def test_referenced_names() -> None:
    assert referenced_names("max(a, 2 mm) * b + 3 kg + pi * c_1") == {"a", "b", "c_1"}
    assert referenced_names("5 min + min(t0, 3 s) * sqrt(x)") == {"t0", "x"}
    assert referenced_names("17.6 g/cm^3") == set()
    assert referenced_names("undefined_thing") == {"undefined_thing"}
    with pytest.raises(ExpressionError):
        referenced_names("a +")


# -- evaluate_parameters -------------------------------------------------------------------------
def test_parameter_chain_in_dependency_order() -> None:
    definitions: dict[str, str | int | float] = {
        "rear": "wheelbase - front",  # refers forward to later definitions
        "front": "wheelbase * front_share",
        "wheelbase": "2.6 m",
        "front_share": 0.45,
        "ballast_density": "17.6 g/cm^3",
    }
    result = evaluate_parameters(definitions)
    assert list(result) == list(definitions)
    assert result["front"].value == pytest.approx(1.17, rel=REL)
    assert result["rear"].value == pytest.approx(1.43, rel=REL)
    assert result["front_share"] == Quantity(0.45)
    assert result["ballast_density"] == Quantity(17600.0, DENSITY)


def test_long_chain_does_not_recurse() -> None:
    n = 2000
    definitions: dict[str, str | int | float] = {f"p{i}": f"p{i - 1} + 1" for i in range(n - 1, 0, -1)}
    definitions["p0"] = 1
    result = evaluate_parameters(definitions)
    assert result[f"p{n - 1}"] == Quantity(float(n))


def test_overrides_replace_definitions() -> None:
    definitions = {"wheelbase": "2.6 m", "front": "wheelbase * 0.45"}
    result = evaluate_parameters(definitions, {"wheelbase": "2.8 m"})
    assert result["wheelbase"] == Quantity(2.8, LENGTH)
    assert result["front"].value == pytest.approx(1.26, rel=REL)
    result = evaluate_parameters({"n": 3, "double": "2 * n"}, {"n": 5})
    assert result["double"] == Quantity(10.0)


def test_override_of_unknown_parameter() -> None:
    with pytest.raises(ParameterError) as info:
        evaluate_parameters({"wheelbase": "2.6 m", "track": "1.5 m"}, {"wheelbse": "2.8 m"})
    assert info.value.name == "wheelbse"
    assert str(info.value) == (
        "parameter 'wheelbse': cannot override an unknown parameter; did you mean 'wheelbase'? "
        "(known parameters: wheelbase, track)"
    )


@pytest.mark.parametrize(
    ("definitions", "cycle", "name"),
    [
        ({"a": "b + 1", "b": "a + 1"}, "a -> b -> a", "a"),
        ({"x": "x * 2"}, "x -> x", "x"),
        ({"p": "q", "q": "r * 2", "r": "q + 1"}, "q -> r -> q", "q"),
        ({"ok": 1, "u": "ok + w", "v": "u", "w": "v"}, "u -> w -> v -> u", "u"),
    ],
)
def test_cycles_are_named(definitions: dict[str, str], cycle: str, name: str) -> None:
    with pytest.raises(ParameterError) as info:
        evaluate_parameters(definitions)
    assert str(info.value) == f"parameter '{name}': parameters refer to each other in a cycle: {cycle}"
    assert info.value.name == name


@pytest.mark.parametrize("name", ["mm", "g", "min", "sqrt", "sin", "pi", "L", "gee"])
def test_reserved_parameter_names(name: str) -> None:
    assert name in RESERVED_NAMES
    with pytest.raises(ParameterError, match="choose another parameter name") as info:
        evaluate_parameters({name: 1})
    assert info.value.name == name


@pytest.mark.parametrize("name", ["2x", "a-b", "a b", "", "é"])
def test_invalid_parameter_names(name: str) -> None:
    with pytest.raises(ParameterError, match="letters, digits and _") as info:
        evaluate_parameters({name: 1})
    assert info.value.name == name


def test_error_inside_a_parameter() -> None:
    with pytest.raises(ParameterError) as info:
        evaluate_parameters({"ok": "1 m", "mixed": "ok + 3 kg"})
    err = info.value
    assert err.name == "mixed"
    assert isinstance(err.__cause__, ExpressionError)
    assert str(err) == "parameter 'mixed': " + str(err.__cause__)
    assert "cannot add length (m) and mass (kg)" in str(err)
    assert "\n    ok + 3 kg\n       ^" in str(err)


def test_unknown_reference_in_a_parameter() -> None:
    with pytest.raises(ParameterError) as info:
        evaluate_parameters({"wheelbase": "2.6 m", "half": "whelbase / 2"})
    assert info.value.name == "half"
    assert "unknown name 'whelbase'; did you mean 'wheelbase'?" in str(info.value)


def test_bool_parameter_rejected() -> None:
    with pytest.raises(ParameterError, match="true/false is not a number") as info:
        evaluate_parameters({"flag": True})
    assert info.value.name == "flag"


# -- parse_override ------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "pair"),
    [
        ("wheelbase=2.6 m", ("wheelbase", "2.6 m")),
        ("  wheelbase = 2.6 m  ", ("wheelbase", "2.6 m")),
        ("n=3", ("n", "3")),
        ("expr=a = b", ("expr", "a = b")),
    ],
)
def test_parse_override(text: str, pair: tuple[str, str]) -> None:
    assert parse_override(text) == pair


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("wheelbase", "expected name=value, e.g. wheelbase=2.6 m"),
        ("=2", "is not a valid parameter name"),
        ("2x=1", "'2x' is not a valid parameter name"),
        ("wheelbase=", "no value after '='"),
        ("wheelbase =   ", "no value after '='"),
    ],
)
def test_parse_override_errors(text: str, fragment: str) -> None:
    with pytest.raises(ParameterError, match=re.escape(fragment)):
        parse_override(text)


def test_parse_override_feeds_evaluate_parameters() -> None:
    name, value = parse_override("wheelbase=2.8 m")
    result = evaluate_parameters({"wheelbase": "2.6 m"}, {name: value})
    assert result["wheelbase"] == Quantity(2.8, LENGTH)


# -- properties ----------------------------------------------------------------------------------
_leaf = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
_tree = st.recursive(
    _leaf,
    lambda children: st.tuples(st.sampled_from("+-*/"), children, children),
    max_leaves=12,
)


def _render(node: object) -> str:
    if isinstance(node, float):
        return repr(node)
    assert isinstance(node, tuple)
    op, left, right = node
    return f"({_render(left)} {op} {_render(right)})"


def _python_value(node: object) -> float:
    """Oracle: the same tree computed with Python's own float operators, in the same order.

    Raises ZeroDivisionError (Python's own) or OverflowError at the first non-finite
    intermediate result, which is where the expression evaluator must stop too.
    """
    if isinstance(node, float):
        return node
    assert isinstance(node, tuple)
    op, left, right = node
    a, b = _python_value(left), _python_value(right)
    if op == "+":
        value = a + b
    elif op == "-":
        value = a - b
    elif op == "*":
        value = a * b
    else:
        value = a / b
    if not math.isfinite(value):
        raise OverflowError(value)
    return value


@given(_tree)
def test_arithmetic_agrees_with_python_floats(tree: object) -> None:
    text = _render(tree)
    try:
        expected = _python_value(tree)
    except ZeroDivisionError:
        with pytest.raises(ExpressionError, match="division by zero"):
            evaluate(text)
        return
    except OverflowError:
        with pytest.raises(ExpressionError, match="too large"):
            evaluate(text)
        return
    result = evaluate(text)
    assert result.is_dimensionless
    assert math.isclose(result.value, expected, rel_tol=1e-12, abs_tol=0.0)


_small = st.integers(min_value=1, max_value=50).map(float)


@given(a=_small, b=_small, c=_small, op1=st.sampled_from("+-*/"), op2=st.sampled_from("+-*/"))
def test_unparenthesised_precedence_matches_python(a: float, b: float, c: float, op1: str, op2: str) -> None:
    # Python reference §6.17: * and / bind tighter than + and -; equal levels group left to right.
    ops = {"+": float.__add__, "-": float.__sub__, "*": float.__mul__, "/": float.__truediv__}
    if op2 in "*/" and op1 in "+-":
        expected = ops[op1](a, ops[op2](b, c))
    else:
        expected = ops[op2](ops[op1](a, b), c)
    assert evaluate(f"{a!r} {op1} {b!r} {op2} {c!r}") == Quantity(expected)


@given(
    x=st.floats(min_value=-1e9, max_value=1e9, allow_nan=False).filter(lambda v: v == 0 or abs(v) > 1e-200),
    unit=st.sampled_from(sorted(u for u in UNIT_NAMES if u.isascii())),
)
def test_quantity_literal_round_trip(x: float, unit: str) -> None:
    result = evaluate(f"{x!r} {unit}")
    assert result.to(unit) == pytest.approx(x, rel=4e-16, abs=0)
