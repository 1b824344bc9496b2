"""Tests for massmodel.core.units: dimensions, quantities, the unit table and unit parsing.

Reference values are derived in this file from the exact definitions in NIST SP 811
(2008), Appendix B, which rest on the 1959 international yard and pound agreement:
1 in = 0.0254 m, 1 ft = 0.3048 m, 1 lb = 0.45359237 kg, g_n = 9.80665 m/s².
Published conversion factors are from docs/references.md §9.
"""

from __future__ import annotations

import math
from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from massmodel.core.units import (
    ACCELERATION,
    ANGLE,
    AREA,
    DENSITY,
    DIMENSIONLESS,
    FOOT_M,
    FORCE,
    INCH_M,
    INERTIA,
    LENGTH,
    MASS,
    POUND_KG,
    STANDARD_GRAVITY_M_S2,
    TIME,
    UNIT_NAMES,
    UNITS,
    VOLUME,
    Dimension,
    Quantity,
    UnitError,
    format_quantity,
    parse_unit,
)

# Exact definitions (NIST SP 811 App. B; 1959 yard and pound agreement).
INCH = 0.0254  # m
FOOT = 0.3048  # m
POUND = 0.45359237  # kg
G0 = 9.80665  # m/s^2
REL = 1e-15  # a few ulp: factors are exact rationals rounded once to double


def test_exact_definition_constants() -> None:
    # NIST SP 811 App. B: these four are exact by definition.
    assert INCH_M == INCH
    assert FOOT_M == FOOT
    assert POUND_KG == POUND
    assert STANDARD_GRAVITY_M_S2 == G0


@pytest.mark.parametrize(
    ("name", "factor", "dim"),
    [
        ("m", 1.0, LENGTH),
        ("mm", 1e-3, LENGTH),
        ("cm", 1e-2, LENGTH),
        ("um", 1e-6, LENGTH),
        ("\u00b5m", 1e-6, LENGTH),
        ("\u03bcm", 1e-6, LENGTH),
        ("km", 1e3, LENGTH),
        ("in", INCH, LENGTH),
        ("ft", FOOT, LENGTH),
        ("kg", 1.0, MASS),
        ("g", 1e-3, MASS),
        ("t", 1e3, MASS),
        ("lb", POUND, MASS),
        ("slug", POUND * G0 / FOOT, MASS),  # 1 slug = 1 lbf·s²/ft
        ("s", 1.0, TIME),
        ("ms", 1e-3, TIME),
        ("min", 60.0, TIME),
        ("rad", 1.0, ANGLE),
        ("deg", math.pi / 180, ANGLE),
        ("N", 1.0, FORCE),
        ("kN", 1e3, FORCE),
        ("lbf", POUND * G0, FORCE),  # 1 lbf = 1 lb × g_n (NIST SP 811 App. B)
        ("gee", G0, ACCELERATION),
        ("L", 1e-3, VOLUME),
    ],
)
def test_unit_table_factor(name: str, factor: float, dim: Dimension) -> None:
    unit = UNITS[name]
    assert unit.value == pytest.approx(factor, rel=REL)
    assert unit.dim == dim
    assert parse_unit(name) == unit
    assert name in UNIT_NAMES


def test_unit_names_complete_and_read_only() -> None:
    expected = {"m", "mm", "cm", "um", "µm", "μm", "km", "in", "ft", "kg", "g", "t", "lb", "slug"}
    expected |= {"s", "ms", "min", "rad", "deg", "N", "kN", "lbf", "gee", "L"}
    assert expected == UNIT_NAMES
    assert isinstance(UNIT_NAMES, frozenset)
    with pytest.raises(TypeError):
        UNITS["furlong"] = Quantity(201.168, LENGTH)  # type: ignore[index]


@pytest.mark.parametrize(
    ("text", "derived", "published", "digits_rel"),
    [
        # docs/references.md §9: 1 lb·in² = 2.926397e-4 kg·m²
        ("lb*in^2", POUND * INCH**2, 2.926397e-4, 2e-7),
        # docs/references.md §9: 1 lb·in·s² = 0.1129848 kg·m² (lb is pound-force in this unit)
        ("lb*in*s^2", POUND * G0 * INCH, 0.1129848, 5e-7),
        ("lbf*in*s^2", POUND * G0 * INCH, 0.1129848, 5e-7),
        # docs/references.md §9: 1 slug·ft² = 1.355818 kg·m²
        ("slug*ft^2", POUND * G0 / FOOT * FOOT**2, 1.355818, 5e-7),
        # docs/references.md §9: 1 kg·mm² = 1e-6 kg·m²; 1 g·mm² = 1e-9 kg·m²
        ("kg*mm^2", 1e-6, 1e-6, 1e-15),
        ("g*mm^2", 1e-9, 1e-9, 1e-15),
        ("kg·m^2", 1.0, 1.0, 0.0),
    ],
)
def test_inertia_unit_factors(text: str, derived: float, published: float, digits_rel: float) -> None:
    unit = parse_unit(text)
    assert unit.dim == INERTIA
    assert unit.value == pytest.approx(derived, rel=REL)
    # the published value is rounded to 7 significant digits
    assert unit.value == pytest.approx(published, rel=digits_rel, abs=0)


def test_lb_in_s2_is_386_lb_in2() -> None:
    # docs/references.md §9: 1 lb·in·s² = 386.0886 lb·in²; exactly g_n/(1 in) = 9.80665/0.0254
    ratio = parse_unit("lb*in*s^2").value / parse_unit("lb*in^2").value
    assert ratio == pytest.approx(G0 / INCH, rel=REL)
    assert ratio == pytest.approx(386.0886, rel=1.5e-7)  # printed to 7 significant digits


def test_lb_stays_mass_without_positive_time() -> None:
    assert parse_unit("lb").dim == MASS
    assert parse_unit("lb/in^3").dim == DENSITY
    assert parse_unit("lb/in^3").value == pytest.approx(POUND / INCH**3, rel=REL)
    # lb·s²/in: mass unit (lbf·s²/in) -- lb read as pound-force
    assert parse_unit("lb*s^2/in").dim == MASS
    assert parse_unit("lb*s^2/in").value == pytest.approx(POUND * G0 / INCH, rel=REL)


def test_density_units() -> None:
    # combined as exact rationals: g/cm^3 is exactly 1000 kg/m^3
    assert parse_unit("g/cm^3") == Quantity(1000.0, DENSITY)
    assert parse_unit("kg/m^3") == Quantity(1.0, DENSITY)
    assert parse_unit("kg/L").value == 1000.0
    assert parse_unit("t/m^3").value == 1000.0


@pytest.mark.parametrize(
    ("text", "value", "dim"),
    [
        ("m/s^2", 1.0, ACCELERATION),
        ("m / s ^ 2", 1.0, ACCELERATION),
        ("m**2", 1.0, AREA),
        ("m^+2", 1.0, AREA),
        ("mm ** 3", 1e-9, VOLUME),
        ("mm^-3", 1e9, Dimension(length=-3)),
        ("1/s", 1.0, Dimension(time=-1)),
        ("kg/m/s", 1.0, Dimension(mass=1, length=-1, time=-1)),  # left to right: kg/(m·s)
        ("kg/m*s", 1.0, Dimension(mass=1, length=-1, time=1)),  # (kg/m)·s
        ("kN*m", 1e3, Dimension(mass=1, length=2, time=-2)),
        ("lbf", POUND * G0, FORCE),
        ("g*mm^2", 1e-9, INERTIA),
    ],
)
def test_parse_unit_forms(text: str, value: float, dim: Dimension) -> None:
    unit = parse_unit(text)
    assert unit.value == pytest.approx(value, rel=REL)
    assert unit.dim == dim


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("kgs", "unknown unit 'kgs'; did you mean 'kg'"),
        ("KG", "did you mean 'kg'"),
        ("lbs", "did you mean 'lb'"),
        ("furlong", "unknown unit 'furlong'"),
        ("", "empty unit"),
        ("   ", "empty unit"),
        ("kg m", "join units with * or /"),
        ("m²", "write m^2"),
        ("m^", "whole-number exponent"),
        ("m^2.5", "join units with * or /"),
        ("m^x", "whole-number exponent"),
        ("m^99", "too large"),
        ("kg/", "expected a unit name"),
        ("*kg", "expected a unit name"),
    ],
)
def test_parse_unit_errors(text: str, fragment: str) -> None:
    with pytest.raises(UnitError) as info:
        parse_unit(text)
    assert fragment in str(info.value)


def test_unknown_unit_lists_known_units() -> None:
    with pytest.raises(UnitError, match=r"known units: .*\bkg\b.*\bslug\b"):
        parse_unit("kilo")


def test_parse_unit_rejects_non_text() -> None:
    with pytest.raises(UnitError, match="must be text"):
        parse_unit(3)  # type: ignore[arg-type]


# -- Dimension ---------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("dim", "text"),
    [
        (DIMENSIONLESS, "1"),
        (LENGTH, "m"),
        (INERTIA, "kg·m^2"),
        (DENSITY, "kg/m^3"),
        (FORCE, "kg·m/s^2"),
        (ACCELERATION, "m/s^2"),
        (Dimension(time=-1), "1/s"),
        (Dimension(mass=1, length=-1, time=-1), "kg/(m·s)"),
        (Dimension(length=Fraction(1, 2)), "m^(1/2)"),
        (ANGLE, "rad"),
    ],
)
def test_dimension_str(dim: Dimension, text: str) -> None:
    assert str(dim) == text


def test_named_dimensions() -> None:
    assert AREA == LENGTH * LENGTH
    assert VOLUME == LENGTH**3
    assert DENSITY == MASS / VOLUME
    assert INERTIA == MASS * AREA
    assert FORCE == MASS * ACCELERATION
    assert ACCELERATION == LENGTH / TIME**2
    assert (AREA ** Fraction(1, 2)) == LENGTH
    assert DIMENSIONLESS.is_dimensionless and not ANGLE.is_dimensionless
    assert INERTIA.mass == 1 and INERTIA.length == 2 and INERTIA.time == 0 and INERTIA.angle == 0
    assert isinstance(INERTIA.length, Fraction)


def test_dimension_is_immutable_and_hashable() -> None:
    with pytest.raises(AttributeError):
        LENGTH.length = Fraction(2)  # type: ignore[misc]
    assert hash(Dimension(length=1)) == hash(LENGTH)
    assert {LENGTH: "x"}[Dimension(length=1)] == "x"
    assert repr(Dimension(mass=1, length=Fraction(-3, 2))) == "Dimension(length=Fraction(-3, 2), mass=1)"
    with pytest.raises(TypeError):
        Dimension(length=0.5)  # type: ignore[arg-type]


def test_dimension_describe() -> None:
    assert LENGTH.describe() == "length (m)"
    assert INERTIA.describe() == "inertia (kg·m^2)"
    assert DIMENSIONLESS.describe() == "a plain number (no unit)"
    assert Dimension(time=3).describe() == "a quantity in s^3"


# -- Quantity ----------------------------------------------------------------------------------
def test_quantity_add_subtract() -> None:
    a = Quantity(0.25, LENGTH)
    b = Quantity(0.05, LENGTH)
    assert a + b == Quantity(0.3, LENGTH)
    assert a - b == Quantity(0.2, LENGTH)
    assert -a == Quantity(-0.25, LENGTH)
    assert +a is a
    assert abs(Quantity(-2.0, MASS)) == Quantity(2.0, MASS)
    assert Quantity(2.0) + 1 == Quantity(3.0)
    assert 1 - Quantity(2.0) == Quantity(-1.0)


def test_quantity_add_mismatch_names_both_dimensions() -> None:
    with pytest.raises(UnitError) as info:
        Quantity(0.25, LENGTH) + Quantity(2.0, MASS)
    assert str(info.value) == "cannot add length (m) and mass (kg)"
    with pytest.raises(UnitError, match=r"cannot subtract inertia \(kg·m\^2\) and a plain number"):
        Quantity(1.0, INERTIA) - 1.0


def test_quantity_multiply_divide() -> None:
    m = Quantity(2.0, MASS)
    r = Quantity(0.5, LENGTH)
    assert m * r * r == Quantity(0.5, INERTIA)
    assert m / (r * r * r) == Quantity(16.0, DENSITY)
    assert 3 * m == Quantity(6.0, MASS)
    assert m / 4 == Quantity(0.5, MASS)
    assert 1 / r == Quantity(2.0, Dimension(length=-1))
    with pytest.raises(UnitError, match="division by zero"):
        m / Quantity(0.0, LENGTH)
    with pytest.raises(UnitError, match="too large"):
        Quantity(1e300, MASS) * Quantity(1e300, LENGTH)


def test_quantity_power() -> None:
    side = Quantity(3.0, LENGTH)
    assert side**2 == Quantity(9.0, AREA)
    assert side ** Quantity(3.0) == Quantity(27.0, VOLUME)
    assert Quantity(8.0, VOLUME) ** (1 / 3) == Quantity(2.0, LENGTH)
    assert Quantity(2.0) ** -1 == Quantity(0.5)
    assert Quantity(2.0) ** 64 == Quantity(2.0**64)
    assert Quantity(2.0) ** 0.5 == Quantity(math.sqrt(2.0))
    assert Quantity(9.0, AREA).sqrt() == Quantity(3.0, LENGTH)


@pytest.mark.parametrize(
    ("base", "exponent", "fragment"),
    [
        (Quantity(2.0), 65, "limited to |exponent| <= 64"),
        (Quantity(9.0), 387420489.0, "too large"),
        (Quantity(2.0), Quantity(2.0, LENGTH), "exponent must be a plain number"),
        (Quantity(1e200), 2, "too large"),
        (Quantity(-8.0), 1 / 3, "cannot be raised to the fractional power"),
        (Quantity(0.0), -1, "zero cannot be raised to a negative power"),
        (Quantity(2.0, LENGTH), 0.123456, "simple fractional power"),
    ],
)
def test_quantity_power_errors(base: Quantity, exponent: Quantity | float, fragment: str) -> None:
    with pytest.raises(UnitError) as info:
        base**exponent
    assert fragment in str(info.value)


def test_quantity_sqrt_negative() -> None:
    with pytest.raises(UnitError, match="square root of a negative"):
        Quantity(-1.0, AREA).sqrt()


def test_quantity_comparisons() -> None:
    assert Quantity(1e-3, LENGTH) < parse_unit("in")
    assert parse_unit("ft") > parse_unit("in")
    assert parse_unit("kg") >= Quantity(1.0, MASS)
    assert parse_unit("g") <= parse_unit("lb")
    assert Quantity(1.0, MASS) != Quantity(1.0, LENGTH)
    with pytest.raises(UnitError, match=r"cannot compare length \(m\) and mass \(kg\)"):
        _ = Quantity(1.0, LENGTH) < Quantity(1.0, MASS)


def test_quantity_validation() -> None:
    with pytest.raises(UnitError, match="finite"):
        Quantity(float("inf"), LENGTH)
    with pytest.raises(UnitError, match="finite"):
        Quantity(float("nan"))
    with pytest.raises(UnitError, match="must be a number"):
        Quantity(True)
    with pytest.raises(TypeError):
        Quantity(1.0, "m")  # type: ignore[arg-type]
    q = Quantity(2, MASS)
    assert isinstance(q.value, float) and q.value == 2.0
    assert q.is_dimensionless is False and Quantity(2.0).is_dimensionless is True


def test_quantity_to() -> None:
    assert Quantity(0.25, LENGTH).to("mm") == pytest.approx(250.0, rel=REL)
    assert Quantity(17600.0, DENSITY).to("g/cm^3") == 17.6
    assert Quantity(1.0, INERTIA).to("kg*mm^2") == pytest.approx(1e6, rel=REL)
    assert Quantity(math.pi, ANGLE).to("deg") == pytest.approx(180.0, rel=REL)
    assert Quantity(POUND * G0, FORCE).to("lbf") == pytest.approx(1.0, rel=REL)
    with pytest.raises(UnitError) as info:
        Quantity(1.0, LENGTH).to("kg")
    assert str(info.value) == "cannot express length (m) in 'kg', which is mass (kg)"


def test_quantity_str() -> None:
    assert str(Quantity(0.35, INERTIA)) == "0.35 kg·m^2"
    assert str(Quantity(2.5)) == "2.5"


def test_format_quantity() -> None:
    assert format_quantity(Quantity(0.0025, LENGTH), "mm") == "2.5 mm"
    assert format_quantity(Quantity(1 / 3, LENGTH), "mm", 3) == "333 mm"
    assert format_quantity(Quantity(17600.0, DENSITY), "g/cm^3", 4) == "17.6 g/cm^3"
    assert format_quantity(Quantity(0.5), "") == "0.5"
    assert format_quantity(Quantity(-1e-20, LENGTH), "m", 2) == "-1e-20 m"
    assert format_quantity(Quantity(-0.0001, LENGTH), "m", 1) == "-0.0001 m"
    with pytest.raises(UnitError, match="digits"):
        format_quantity(Quantity(1.0), "", 0)
    with pytest.raises(UnitError, match="needs a unit"):
        format_quantity(Quantity(1.0, MASS), "")
    with pytest.raises(UnitError, match="cannot express"):
        format_quantity(Quantity(1.0, MASS), "mm")


# -- properties --------------------------------------------------------------------------------
_ascii_units = sorted(name for name in UNIT_NAMES if name.isascii())
# magnitudes far from the subnormal range, where a product loses relative precision
_finite = st.floats(min_value=-1e12, max_value=1e12, allow_nan=False, allow_infinity=False).filter(
    lambda v: v == 0.0 or abs(v) > 1e-200
)
_exponent = st.fractions(min_value=-4, max_value=4, max_denominator=6)
_dims = st.builds(Dimension, _exponent, _exponent, _exponent, _exponent)


@given(x=_finite, unit=st.sampled_from(_ascii_units))
def test_round_trip_through_unit(x: float, unit: str) -> None:
    q = x * parse_unit(unit)
    assert q.to(unit) == pytest.approx(x, rel=4e-16, abs=0)


@given(a=_dims, b=_dims)
def test_dimension_algebra(a: Dimension, b: Dimension) -> None:
    assert (a * b) / b == a
    assert a * b == b * a
    assert a**2 == a * a
    assert (a ** Fraction(1, 2)) ** 2 == a
    assert (a / a).is_dimensionless
