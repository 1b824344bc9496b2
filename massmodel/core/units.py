"""SI quantities and the table of accepted units (dimensions in :mod:`massmodel.core.dimensions`).

Everything inside massmodel is SI: kg, m, s, rad (and their products such as
kg·m² for inertia or kg/m³ for density). Text typed by a user ("17.6 g/cm^3",
"lb*in^2") is converted once, at the edge, with :func:`parse_unit` or through
the expression language in :mod:`massmodel.core.expr`.

Base dimensions are length (m), mass (kg), time (s) and plane angle (rad).
Angle is kept as its own base dimension, although SI treats the radian as a
derived unit of dimension one, so that ``10 deg`` and a bare number ``10``
can be told apart and trigonometric functions can insist on an angle.

Unit expressions
----------------
A unit expression is one or more unit atoms joined by ``*``, ``·`` or ``/``::

    unit_expr := atom (("*" | "·" | "/") atom)*
    atom      := NAME [("^" | "**") ["+" | "-"] DIGITS]  |  "1"

Operators apply from left to right, so ``kg/m/s`` is kg/(m·s) and ``kg/m*s``
is (kg/m)·s. Spaces around operators are allowed. Unit factors are combined as
exact rational numbers and rounded to a float only once, so ``g/cm^3`` is
exactly 1000 kg/m³. ``lb`` is the pound (mass), except in compounds such as
``lb*in*s^2`` whose literal reading would carry a positive power of time; there it
is the pound-force, as customary for that inertia unit (see :func:`unit_product`).
Standard gravity is spelled ``gee`` so that it never collides with the gram ``g``.

References
----------
.. [1] A. Thompson and B. N. Taylor, "Guide for the Use of the International
   System of Units (SI)", NIST Special Publication 811, 2008 ed., Appendix B
   (exact factors: 1 in = 0.0254 m, 1 ft = 0.3048 m, 1 lb = 0.45359237 kg,
   standard acceleration of gravity g_n = 9.80665 m/s², 1 lbf = 1 lb × g_n).
.. [2] "Refinement of values for the yard and the pound", U.S. Federal Register,
   1 July 1959 (the international yard and pound agreement that fixes the inch
   and the avoirdupois pound exactly).
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from types import MappingProxyType

from massmodel.core.dimensions import (
    ACCELERATION,
    ANGLE,
    AREA,
    DENSITY,
    DIMENSIONLESS,
    FORCE,
    INERTIA,
    LENGTH,
    MASS,
    TIME,
    VOLUME,
    Dimension,
    UnitError,
)

__all__ = [
    "ACCELERATION",
    "ANGLE",
    "AREA",
    "DENSITY",
    "DIMENSIONLESS",
    "FOOT_M",
    "FORCE",
    "INCH_M",
    "INERTIA",
    "LENGTH",
    "MASS",
    "MAX_EXPONENT",
    "POUND_KG",
    "STANDARD_GRAVITY_M_S2",
    "TIME",
    "UNITS",
    "UNIT_NAMES",
    "VOLUME",
    "Dimension",
    "Quantity",
    "UnitError",
    "format_quantity",
    "parse_unit",
    "unit_product",
    "unknown_unit_message",
]

#: Largest magnitude of an exponent accepted by :meth:`Quantity.__pow__` and in unit atoms.
MAX_EXPONENT = 64

# Exact definitions, see module References [1], [2]. Kept as decimal strings so the
# rational factors below are exact.
_INCH = Fraction("0.0254")  # m
_FOOT = Fraction("0.3048")  # m
_POUND = Fraction("0.45359237")  # kg
_GRAVITY = Fraction("9.80665")  # m/s^2

#: 1 in in metres (exact, NIST SP 811 App. B).
INCH_M: float = float(_INCH)
#: 1 ft in metres (exact, NIST SP 811 App. B).
FOOT_M: float = float(_FOOT)
#: 1 lb (avoirdupois) in kilograms (exact, NIST SP 811 App. B).
POUND_KG: float = float(_POUND)
#: Standard acceleration of gravity g_n in m/s² (exact by definition, NIST SP 811 App. B).
STANDARD_GRAVITY_M_S2: float = float(_GRAVITY)


def _check_number(value: object, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise UnitError(f"{what} must be a number, got {type(value).__name__}")
    try:
        number = float(value)
    except OverflowError:
        raise UnitError(f"{what} {value} is too large") from None
    if not math.isfinite(number):
        raise UnitError(f"{what} must be finite, got {number}")
    return number


@dataclass(frozen=True)
class Quantity:
    """A value in SI base units with its dimension.

    Parameters
    ----------
    value : float
        Magnitude in SI units (m, kg, s, rad and their products); must be finite.
    dim : Dimension
        Physical dimension of the value.

    Notes
    -----
    ``+`` and ``-`` need equal dimensions; ``*`` and ``/`` combine them; ``**``
    takes a plain-number exponent with ``|exponent| <= 64``. Plain ``int`` and
    ``float`` operands count as dimensionless quantities. Every result is checked
    to be finite; an overflow raises :class:`UnitError` instead of giving ``inf``.

    Examples
    --------
    >>> (Quantity(2.0, LENGTH) * Quantity(3.0, LENGTH)).dim == AREA
    True
    >>> Quantity(0.25, LENGTH).to("mm")
    250.0
    """

    value: float
    dim: Dimension = DIMENSIONLESS

    def __post_init__(self) -> None:
        object.__setattr__(self, "value", _check_number(self.value, "a quantity's value"))
        if not isinstance(self.dim, Dimension):
            raise TypeError(f"dim must be a Dimension, got {type(self.dim).__name__}")

    @property
    def is_dimensionless(self) -> bool:
        """True for a plain number (all dimension exponents zero)."""
        return self.dim.is_dimensionless

    def to(self, unit_text: str) -> float:
        """Value expressed in ``unit_text`` (e.g. ``"g/cm^3"``).

        Raises
        ------
        UnitError
            If the unit is unknown or has another dimension.
        """
        unit = parse_unit(unit_text)
        if unit.dim != self.dim:
            raise UnitError(
                f"cannot express {self.dim.describe()} in '{unit_text}', which is {unit.dim.describe()}"
            )
        return _finite(self.value / unit.value, self.dim, f"conversion to '{unit_text}'").value

    def sqrt(self) -> Quantity:
        """Square root; dimension exponents are halved. Negative values raise :class:`UnitError`."""
        if self.value < 0:
            raise UnitError(f"cannot take the square root of a negative value ({self})")
        return Quantity(math.sqrt(self.value), self.dim ** Fraction(1, 2))

    # -- arithmetic -------------------------------------------------------------------
    def _same_dim(self, other: Quantity, verb: str) -> None:
        if self.dim != other.dim:
            raise UnitError(f"cannot {verb} {self.dim.describe()} and {other.dim.describe()}")

    def __add__(self, other: Quantity | float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        self._same_dim(o, "add")
        return _finite(self.value + o.value, self.dim, "the addition")

    def __radd__(self, other: float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        return o.__add__(self)

    def __sub__(self, other: Quantity | float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        self._same_dim(o, "subtract")
        return _finite(self.value - o.value, self.dim, "the subtraction")

    def __rsub__(self, other: float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        return o.__sub__(self)

    def __mul__(self, other: Quantity | float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        return _finite(self.value * o.value, self.dim * o.dim, "the multiplication")

    def __rmul__(self, other: float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        return o.__mul__(self)

    def __truediv__(self, other: Quantity | float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        if o.value == 0.0:
            raise UnitError("division by zero")
        return _finite(self.value / o.value, self.dim / o.dim, "the division")

    def __rtruediv__(self, other: float) -> Quantity:
        o = _as_quantity(other)
        if o is None:
            return NotImplemented
        return o.__truediv__(self)

    def __pow__(self, exponent: Quantity | float) -> Quantity:
        o = _as_quantity(exponent)
        if o is None:
            return NotImplemented
        if not o.is_dimensionless:
            raise UnitError(f"an exponent must be a plain number, got {o.dim.describe()}")
        e = o.value
        if abs(e) > MAX_EXPONENT:
            raise UnitError(
                f"exponent {e:g} is too large; powers are limited to |exponent| <= {MAX_EXPONENT}"
            )
        dim = self.dim
        if not dim.is_dimensionless:
            frac = Fraction(e).limit_denominator(12)
            if abs(float(frac) - e) > 1e-9:
                raise UnitError(
                    f"{dim.describe()} can only be raised to a whole or simple fractional power, not {e:g}"
                )
            dim = dim**frac
        base = self.value
        if base < 0 and not e.is_integer():
            raise UnitError(f"a negative value ({base:g}) cannot be raised to the fractional power {e:g}")
        if base == 0 and e < 0:
            raise UnitError("zero cannot be raised to a negative power (division by zero)")
        try:
            result = math.pow(base, e)
        except OverflowError:
            raise UnitError(f"the result of the power {base:g}^{e:g} is too large") from None
        return _finite(result, dim, "the power")

    def __neg__(self) -> Quantity:
        return Quantity(-self.value, self.dim)

    def __pos__(self) -> Quantity:
        return self

    def __abs__(self) -> Quantity:
        return Quantity(abs(self.value), self.dim)

    # -- comparisons (same dimension only) ---------------------------------------------
    def _compare(self, other: Quantity | float) -> tuple[float, float] | None:
        o = _as_quantity(other)
        if o is None:
            return None
        self._same_dim(o, "compare")
        return self.value, o.value

    def __lt__(self, other: Quantity | float) -> bool:
        pair = self._compare(other)
        return NotImplemented if pair is None else pair[0] < pair[1]

    def __le__(self, other: Quantity | float) -> bool:
        pair = self._compare(other)
        return NotImplemented if pair is None else pair[0] <= pair[1]

    def __gt__(self, other: Quantity | float) -> bool:
        pair = self._compare(other)
        return NotImplemented if pair is None else pair[0] > pair[1]

    def __ge__(self, other: Quantity | float) -> bool:
        pair = self._compare(other)
        return NotImplemented if pair is None else pair[0] >= pair[1]

    def __str__(self) -> str:
        if self.is_dimensionless:
            return f"{self.value:.6g}"
        return f"{self.value:.6g} {self.dim}"


def _as_quantity(other: object) -> Quantity | None:
    if isinstance(other, Quantity):
        return other
    if isinstance(other, (int, float)) and not isinstance(other, bool):
        return Quantity(float(other), DIMENSIONLESS)
    return None


def _finite(value: float, dim: Dimension, what: str) -> Quantity:
    if not math.isfinite(value):
        raise UnitError(f"the result of {what} is too large to represent (overflow)")
    return Quantity(value, dim)


# -- unit table ------------------------------------------------------------------------
# name -> (exact SI factor, dimension). Sources: NIST SP 811 App. B (module References).
_LBF = _POUND * _GRAVITY  # N; 1 lbf = 1 lb x g_n exactly
_PI = Fraction(math.pi)  # rational value of the double nearest pi

_TABLE: dict[str, tuple[Fraction, Dimension]] = {
    # length
    "m": (Fraction(1), LENGTH),
    "mm": (Fraction(1, 1000), LENGTH),
    "cm": (Fraction(1, 100), LENGTH),
    "um": (Fraction(1, 10**6), LENGTH),
    "\u00b5m": (Fraction(1, 10**6), LENGTH),  # MICRO SIGN
    "\u03bcm": (Fraction(1, 10**6), LENGTH),  # GREEK SMALL LETTER MU
    "km": (Fraction(1000), LENGTH),
    "in": (_INCH, LENGTH),
    "ft": (_FOOT, LENGTH),
    # mass
    "kg": (Fraction(1), MASS),
    "g": (Fraction(1, 1000), MASS),
    "t": (Fraction(1000), MASS),  # tonne
    "lb": (_POUND, MASS),
    "slug": (_LBF / _FOOT, MASS),  # 1 slug = 1 lbf·s²/ft
    # time
    "s": (Fraction(1), TIME),
    "ms": (Fraction(1, 1000), TIME),
    "min": (Fraction(60), TIME),
    # angle
    "rad": (Fraction(1), ANGLE),
    "deg": (_PI / 180, ANGLE),
    # force
    "N": (Fraction(1), FORCE),
    "kN": (Fraction(1000), FORCE),
    "lbf": (_LBF, FORCE),
    # acceleration: standard gravity, spelled "gee" so it never collides with gram "g"
    "gee": (_GRAVITY, ACCELERATION),
    # volume
    "L": (Fraction(1, 1000), VOLUME),  # litre
}

#: Every accepted unit name mapped to its size as an SI :class:`Quantity` (read-only).
UNITS: Mapping[str, Quantity] = MappingProxyType(
    {name: Quantity(float(factor), dim) for name, (factor, dim) in _TABLE.items()}
)

#: All unit names; parameter names may not collide with them.
UNIT_NAMES: frozenset[str] = frozenset(_TABLE)


def unknown_unit_message(name: str) -> str:
    """Message for an unknown unit name, with close matches from the unit table."""
    ascii_names = sorted(n for n in UNIT_NAMES if n.isascii())
    folded = [n for n in ascii_names if n.lower() == name.lower() and n != name]
    close = folded + [
        m for m in difflib.get_close_matches(name, ascii_names, n=3, cutoff=0.5) if m not in folded
    ]
    hint = f"; did you mean {' or '.join(repr(c) for c in close[:3])}?" if close else ""
    return f"unknown unit '{name}'{hint} (known units: {', '.join(ascii_names)})"


def unit_product(parts: Sequence[tuple[str, int, bool]]) -> Quantity:
    """Size of a compound unit, combined exactly.

    Parameters
    ----------
    parts : sequence of (str, int, bool)
        ``(unit_name, exponent, divide)`` for each atom, in written order;
        ``divide`` is True when the atom follows a ``/``.

    Returns
    -------
    Quantity
        The SI size of the compound unit (e.g. ``g/cm^3`` -> 1000 kg/m³).

    Notes
    -----
    In a compound whose literal reading has a positive power of time, such as
    ``lb*in*s^2`` or ``lb*s^2/in``, ``lb`` is read as pound-force, the customary
    meaning in these US inertia and mass units (kg·m·s² is no physical quantity).
    Write ``lbf`` to be explicit.
    """
    factor, dim = _combine(parts)
    if dim.time > 0 and any(name == "lb" for name, _, _ in parts):
        # "lb·in·s²" is the customary US inertia unit, where lb is pound-force
        # (docs/references.md §9: 1 lb·in·s² = 386.0886 lb·in²). Read literally it would be
        # kg·m·s², which is no physical quantity; read lb as lbf when that gives a
        # dimension free of time (inertia for lb·in·s², mass for lb·s²/in).
        as_force = [("lbf" if name == "lb" else name, e, d) for name, e, d in parts]
        factor_f, dim_f = _combine(as_force)
        if dim_f.time == 0:
            factor, dim = factor_f, dim_f
    return _finite(float(factor), dim, "the unit conversion")


def _combine(parts: Sequence[tuple[str, int, bool]]) -> tuple[Fraction, Dimension]:
    factor = Fraction(1)
    dim = DIMENSIONLESS
    for name, exponent, divide in parts:
        if name not in _TABLE:
            raise UnitError(unknown_unit_message(name))
        if abs(exponent) > MAX_EXPONENT:
            raise UnitError(f"unit exponent {exponent} is too large (limit {MAX_EXPONENT})")
        f, d = _TABLE[name]
        signed = -exponent if divide else exponent
        factor *= f**signed
        dim = dim * d**signed
    return factor, dim


def parse_unit(text: str) -> Quantity:
    """Parse a unit expression such as ``"g/cm^3"`` or ``"lb*in^2"``.

    Parameters
    ----------
    text : str
        Unit expression; grammar in the module docstring.

    Returns
    -------
    Quantity
        SI size of one of that unit, e.g. ``parse_unit("mm")`` is 0.001 m.

    Raises
    ------
    UnitError
        Empty or malformed text, or an unknown unit (with close matches).

    Examples
    --------
    >>> parse_unit("g/cm^3").value
    1000.0
    >>> str(parse_unit("kg*mm^2").dim)
    'kg·m^2'
    """
    if not isinstance(text, str):
        raise UnitError(f"a unit must be text, got {type(text).__name__}")
    return unit_product(_parse_unit_parts(text))


_DIGITS = "0123456789"


def _parse_unit_parts(text: str) -> list[tuple[str, int, bool]]:
    s = text.strip()
    if not s:
        raise UnitError("empty unit text")
    parts: list[tuple[str, int, bool]] = []
    i = 0
    n = len(s)
    divide = False

    def skip(j: int) -> int:
        while j < n and s[j].isspace():
            j += 1
        return j

    while True:
        i = skip(i)
        start = i
        while i < n and (s[i].isalpha() or s[i] == "_" or (i > start and s[i] in _DIGITS)):
            i += 1
        name = s[start:i]
        if not name:
            if s.startswith("1", i) and not parts:
                i += 1  # "1/s": leading dimensionless one
                name = "1"
            else:
                found = repr(s[i]) if i < n else "end of text"
                raise UnitError(f"expected a unit name at position {i} in '{text}', found {found}")
        exponent = 1
        j = skip(i)
        if s.startswith("**", j) or s.startswith("^", j):
            j = skip(j + (2 if s.startswith("**", j) else 1))
            k = j + 1 if j < n and s[j] in "+-" else j
            m = k
            while m < n and s[m] in _DIGITS:
                m += 1
            if m == k:
                raise UnitError(f"expected a whole-number exponent after '{name}' in '{text}'")
            exponent = int(s[j:m])
            i = m
        if name != "1":
            parts.append((name, exponent, divide))
        i = skip(i)
        if i >= n:
            return parts
        if s[i] in "*·" and not s.startswith("**", i):
            divide = False
        elif s[i] == "/":
            divide = True
        else:
            hint = " (write m^2, not m²)" if s[i] in "²³" else ""
            raise UnitError(
                f"unexpected {s[i]!r} at position {i} in unit '{text}'; join units with * or /{hint}"
            )
        i += 1


def format_quantity(q: Quantity, unit_text: str, digits: int = 6) -> str:
    """Text for a report: the value in ``unit_text`` followed by that unit.

    Parameters
    ----------
    q : Quantity
        Value to format.
    unit_text : str
        Unit to show it in (``""`` or ``"1"`` for a plain number).
    digits : int
        Significant digits, 1 to 17.

    Examples
    --------
    >>> format_quantity(Quantity(0.0025, LENGTH), "mm")
    '2.5 mm'
    """
    if isinstance(digits, bool) or not isinstance(digits, int) or not 1 <= digits <= 17:
        raise UnitError(f"digits must be a whole number from 1 to 17, got {digits!r}")
    if unit_text.strip() in ("", "1"):
        if not q.is_dimensionless:
            raise UnitError(f"{q.dim.describe()} needs a unit to be shown")
        value, suffix = q.value, ""
    else:
        value, suffix = q.to(unit_text), " " + unit_text.strip()
    number = f"{value:.{digits}g}"
    if number in ("-0", "-0.0"):
        number = number[1:]
    return number + suffix
