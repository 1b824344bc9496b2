"""Physical dimensions: the exponents of length, mass, time and plane angle, and the named dimensions.

Angle is kept as its own base dimension (see :mod:`massmodel.core.units`, which builds quantities and the unit table on
these). Exponents are exact fractions.
"""

from __future__ import annotations

from fractions import Fraction

from massmodel.core.errors import UserError

__all__ = [
    "ACCELERATION",
    "ANGLE",
    "AREA",
    "DENSITY",
    "DIMENSIONLESS",
    "FORCE",
    "INERTIA",
    "LENGTH",
    "MASS",
    "TIME",
    "VOLUME",
    "Dimension",
    "UnitError",
]


class UnitError(UserError, ValueError):
    """A unit or dimension mistake.

    The message is plain text without file context; the caller adds the file,
    item and field it was reading.
    """


def _fraction(value: int | Fraction) -> Fraction:
    if isinstance(value, bool) or not isinstance(value, (int, Fraction)):
        raise TypeError(f"dimension exponents must be int or Fraction, got {type(value).__name__}")
    return Fraction(value)


class Dimension:
    """Exponents of the base dimensions length, mass, time and angle (immutable, hashable).

    Parameters
    ----------
    length, mass, time, angle : int or Fraction
        Exponent of m, kg, s and rad. Stored as :class:`fractions.Fraction`
        so that a square root halves them exactly.

    Examples
    --------
    >>> str(Dimension(length=2, mass=1))
    'kg·m^2'
    >>> str(Dimension(length=-3, mass=1))
    'kg/m^3'
    """

    __slots__ = ("_exp",)
    _exp: tuple[Fraction, Fraction, Fraction, Fraction]
    # One instance per dimension (they are immutable), so that comparisons are mostly identity checks: a model
    # file compares dimensions tens of thousands of times.
    _interned: dict[tuple[Fraction, ...], Dimension] = {}

    def __new__(
        cls,
        length: int | Fraction = 0,
        mass: int | Fraction = 0,
        time: int | Fraction = 0,
        angle: int | Fraction = 0,
    ) -> Dimension:
        exp = tuple(_fraction(e) for e in (length, mass, time, angle))
        found = Dimension._interned.get(exp)
        if found is None:
            found = object.__new__(cls)
            object.__setattr__(found, "_exp", exp)
            Dimension._interned[exp] = found
        return found

    def __setattr__(self, name: str, value: object) -> None:
        raise AttributeError("Dimension is immutable")

    def __delattr__(self, name: str) -> None:
        raise AttributeError("Dimension is immutable")

    @property
    def length(self) -> Fraction:
        """Exponent of length (m)."""
        return self._exp[0]

    @property
    def mass(self) -> Fraction:
        """Exponent of mass (kg)."""
        return self._exp[1]

    @property
    def time(self) -> Fraction:
        """Exponent of time (s)."""
        return self._exp[2]

    @property
    def angle(self) -> Fraction:
        """Exponent of plane angle (rad)."""
        return self._exp[3]

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Dimension):
            return NotImplemented
        return self is other  # instances are interned: one object per dimension

    def __hash__(self) -> int:
        return hash(("Dimension", self._exp))

    def __repr__(self) -> str:
        names = ("length", "mass", "time", "angle")
        inner = ", ".join(
            f"{n}={e!s}" if e.denominator == 1 else f"{n}=Fraction({e.numerator}, {e.denominator})"
            for n, e in zip(names, self._exp, strict=True)
            if e
        )
        return f"Dimension({inner})"

    def __reduce__(self) -> tuple[type[Dimension], tuple[Fraction, ...]]:
        return (Dimension, self._exp)

    def _exponents(self) -> tuple[Fraction, Fraction, Fraction, Fraction]:
        return self._exp

    @property
    def is_dimensionless(self) -> bool:
        """True when every exponent is zero."""
        return not any(self._exponents())

    def __mul__(self, other: Dimension) -> Dimension:
        if not isinstance(other, Dimension):
            return NotImplemented
        if not any(other._exp):  # fast paths: "250 mm" is 250 (no dimension) times mm
            return self
        if not any(self._exp):
            return other
        return Dimension(*(a + b for a, b in zip(self._exponents(), other._exponents(), strict=True)))

    def __truediv__(self, other: Dimension) -> Dimension:
        if not isinstance(other, Dimension):
            return NotImplemented
        return Dimension(*(a - b for a, b in zip(self._exponents(), other._exponents(), strict=True)))

    def __pow__(self, exponent: int | Fraction) -> Dimension:
        e = _fraction(exponent)
        return Dimension(*(a * e for a in self._exponents()))

    def __str__(self) -> str:
        # Order: kg, m, s, rad ("kg·m^2", "kg·m/s^2").
        pairs = (("kg", self.mass), ("m", self.length), ("s", self.time), ("rad", self.angle))
        num = [_symbol_power(sym, e) for sym, e in pairs if e > 0]
        den = [_symbol_power(sym, -e) for sym, e in pairs if e < 0]
        top = "·".join(num) if num else "1"
        if not den:
            return top
        return top + "/" + "/".join(den) if len(den) == 1 else top + "/(" + "·".join(den) + ")"

    def describe(self) -> str:
        """Human words for the dimension, e.g. ``"length (m)"`` or ``"inertia (kg·m^2)"``."""
        if self.is_dimensionless:
            return "a plain number (no unit)"
        name = _DIMENSION_WORDS.get(self)
        if name is None:
            return f"a quantity in {self}"
        return f"{name} ({self})"


def _symbol_power(symbol: str, exponent: Fraction) -> str:
    if exponent == 1:
        return symbol
    if exponent.denominator == 1:
        return f"{symbol}^{exponent.numerator}"
    return f"{symbol}^({exponent.numerator}/{exponent.denominator})"


DIMENSIONLESS = Dimension()
LENGTH = Dimension(length=1)
MASS = Dimension(mass=1)
TIME = Dimension(time=1)
ANGLE = Dimension(angle=1)
AREA = Dimension(length=2)
VOLUME = Dimension(length=3)
DENSITY = Dimension(mass=1, length=-3)
INERTIA = Dimension(mass=1, length=2)
FORCE = Dimension(mass=1, length=1, time=-2)
ACCELERATION = Dimension(length=1, time=-2)

_DIMENSION_WORDS: dict[Dimension, str] = {
    LENGTH: "length",
    MASS: "mass",
    TIME: "time",
    ANGLE: "angle",
    AREA: "area",
    VOLUME: "volume",
    DENSITY: "density",
    INERTIA: "inertia",
    FORCE: "force",
    ACCELERATION: "acceleration",
    Dimension(length=1, time=-1): "speed",
    Dimension(mass=1, length=-2): "areal density",
    Dimension(mass=1, length=-1): "linear density",
    Dimension(mass=1, length=1): "mass moment",
    Dimension(mass=1, length=2, time=-2): "torque or energy",
}

