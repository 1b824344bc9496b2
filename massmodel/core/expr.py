"""Safe, unit-aware arithmetic expressions for model parameters.

Values in a model file may be written as expressions such as ``"17.6 g/cm^3"``,
``"wheelbase / 2 - 40 mm"`` or ``"sqrt(inertia / mass)"``. The text is read by
a small tokenizer and a recursive-descent parser written here; nothing is ever
handed to Python's ``eval``, ``exec`` or ``ast``. Results are
:class:`massmodel.core.units.Quantity` values in SI units.

Grammar
-------
::

    expression := term (("+" | "-") term)*
    term       := unary (("*" | "·" | "/") unary)*
    unary      := ("+" | "-") unary | power
    power      := primary [("**" | "^") unary]          # right-associative
    primary    := NUMBER [unit_term]                     # quantity literal
                | NAME "(" expression ("," expression)* ")"   # function call
                | NAME                                   # parameter, unit or pi
                | "(" expression ")"
    unit_term  := unit_atom (("*" | "·" | "/") unit_atom)*
    unit_atom  := UNIT [("^" | "**") ["+" | "-"] DIGITS]
    NUMBER     := 12 | 12.5 | .5 | 1e-3 | 2.5E+4
    NAME       := [A-Za-z_][A-Za-z0-9_]*   (unit names may also be µm, μm)

- A number followed by a unit name is a quantity literal: ``"250 mm"``,
  ``"17.6 g/cm^3"``, ``"0.35 kg*m^2"``, ``"30 deg"``. The unit term binds
  tighter than any operator, so ``1 / 2 mm`` is 1/(2 mm). It only continues across
  ``*`` or ``/`` when the next name is a unit (``2 mm * width`` is 2 mm times the
  parameter ``width``) and not a function call (``2 mm * min(a, b)``). Its
  operators apply left to right (``kg/m/s`` is kg/(m·s)), as in
  :func:`massmodel.core.units.parse_unit`.
- A name is a unit if it is in :data:`massmodel.core.units.UNIT_NAMES` (``3 * mm``),
  the constant ``pi``, or else a parameter from the environment. Unit names,
  function names and ``pi`` are reserved and cannot be parameters.
- Power is right-associative and binds tighter than unary minus, as in Python:
  ``2**3**2`` is 512 and ``-2**2`` is -4. ``^`` is a synonym for ``**``.
  Exponents must be plain numbers with magnitude at most 64.
- Functions: ``min``, ``max`` (one or more arguments of one dimension), ``abs``,
  ``sqrt`` (halves the dimension), ``sin``, ``cos``, ``tan`` (argument must be an
  angle, e.g. ``30 deg``), ``radians(x)`` (plain number of degrees to an angle),
  ``degrees(x)`` (angle to a plain number of degrees). ``min`` written without
  parentheses is the unit minute.
- There is no implicit multiplication, no attribute access, no subscripts, no
  strings and no other names. Text is limited to 2000 characters and 64 levels
  of nesting. Division by zero and non-finite results are errors.
"""

from __future__ import annotations

import difflib
import math
import operator
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache

from massmodel.core.units import ANGLE, DIMENSIONLESS, UNIT_NAMES, UNITS, Quantity, UnitError, unit_product

__all__ = [
    "FUNCTION_NAMES",
    "MAX_DEPTH",
    "MAX_LENGTH",
    "RESERVED_NAMES",
    "ExpressionError",
    "ParameterError",
    "evaluate",
    "evaluate_parameters",
    "parse_override",
    "referenced_names",
]

#: Longest expression text accepted, in characters.
MAX_LENGTH = 2000
#: Deepest nesting of parentheses, unary signs and powers accepted.
MAX_DEPTH = 64

# name -> (fewest arguments, most arguments or None for no limit)
_ARITY: dict[str, tuple[int, int | None]] = {"min": (1, None), "max": (1, None)}
_ARITY.update(dict.fromkeys(("abs", "sqrt", "sin", "cos", "tan", "radians", "degrees"), (1, 1)))
#: Names of the functions an expression may call.
FUNCTION_NAMES: frozenset[str] = frozenset(_ARITY)
#: Names that cannot be used as parameters: units, functions and ``pi``.
RESERVED_NAMES: frozenset[str] = UNIT_NAMES | FUNCTION_NAMES | {"pi"}

_DIGITS = "0123456789"
_NUMBER_RE = re.compile(r"(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_NAME_RE = re.compile(r"[A-Za-z_\u00b5\u03bc][A-Za-z0-9_]*")
_PARAMETER_RE = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
_OPERATORS = dict(
    zip("+-\u2212*\u00b7/^(),", ("+", "-", "-", "*", "*", "/", "**", "(", ")", ","), strict=True)
)


class ExpressionError(ValueError):
    """An expression that cannot be read or evaluated.

    Parameters
    ----------
    message : str
        What is wrong, without file context.
    text : str
        The expression text.
    position : int or None
        0-based index of the offending character in ``text``, if known.

    Notes
    -----
    ``str(error)`` shows the message, then the text with a caret under
    ``position`` when a position is known.
    """

    def __init__(self, message: str, text: str, position: int | None = None) -> None:
        self.message = message
        self.text = text
        self.position = position
        super().__init__(self._render())

    def _render(self) -> str:
        if self.position is None or not self.text:
            return self.message
        shown = self.text.replace("\t", " ").replace("\n", " ").replace("\r", " ")
        start = max(0, self.position - 60)
        end = min(len(shown), start + 100)
        prefix = "..." if start > 0 else ""
        suffix = "..." if end < len(shown) else ""
        caret = " " * (len(prefix) + self.position - start) + "^"
        return f"{self.message}\n    {prefix}{shown[start:end]}{suffix}\n    {caret}"


class ParameterError(ValueError):
    """A parameter definition or override that cannot be resolved.

    Attributes
    ----------
    name : str or None
        The parameter at fault (None when the name itself could not be read).
    message : str
        What is wrong, without the parameter name.
    """

    def __init__(self, name: str | None, message: str) -> None:
        self.name = name
        self.message = message
        super().__init__(f"parameter '{name}': {message}" if name is not None else message)


# -- tokens and syntax tree -----------------------------------------------------------------
@dataclass(frozen=True)
class _Token:
    kind: str  # "num", "name", "op", "end" or "bad"
    text: str  # source text ("op": normalised operator; "bad": the error message)
    pos: int


@dataclass(frozen=True)
class _Const:
    value: Quantity
    pos: int


@dataclass(frozen=True)
class _Name:
    name: str
    pos: int


@dataclass(frozen=True)
class _Chain:
    """Left-associative run ``first op1 rest1 op2 rest2 ...`` (kept flat so evaluation never recurses deeply)."""

    first: _Node
    rest: tuple[tuple[str, int, _Node], ...]  # (operator, position, operand)


@dataclass(frozen=True)
class _Apply:
    """Unary sign ("neg", "pos"), power ("**") or function call (its name) applied to ``args``."""

    op: str
    args: tuple[_Node, ...]
    pos: int


_Node = _Const | _Name | _Chain | _Apply


def _bad_character(text: str, i: int, previous: _Token | None) -> str:
    ch = text[i]
    if ch == ".":
        if previous is not None and (previous.kind in ("name", "num") or previous.text == ")"):
            return "attribute access with '.' is not allowed"
        return "unexpected '.'"
    if ch in "'\"`":
        return "text in quotes is not allowed; write a number with a unit, e.g. 250 mm"
    if ch in "[]":
        return "subscripts with [ ] are not allowed"
    if ch in "\u00b2\u00b3":
        return f"unexpected {ch!r}; write powers as m^2 or m^3"
    if ch == "=":
        return "'=' is not allowed in an expression"
    return f"unexpected character {ch!r}"


def _tokenize(text: str) -> list[_Token]:
    """Split ``text`` into tokens; the first bad character ends the list with a "bad" token."""
    tokens: list[_Token] = []
    i, n = 0, len(text)
    while True:
        while i < n and text[i].isspace():
            i += 1
        if i >= n:
            tokens.append(_Token("end", "", n))
            return tokens
        ch = text[i]
        if ch in _DIGITS or (ch == "." and i + 1 < n and text[i + 1] in _DIGITS):
            m = _NUMBER_RE.match(text, i)
            assert m is not None  # a digit or ".digit" always matches
            tokens.append(_Token("num", m.group(), i))
            i = m.end()
        elif (m := _NAME_RE.match(text, i)) is not None:
            tokens.append(_Token("name", m.group(), i))
            i = m.end()
        elif text.startswith("**", i):
            tokens.append(_Token("op", "**", i))
            i += 2
        elif ch in _OPERATORS:
            tokens.append(_Token("op", _OPERATORS[ch], i))
            i += 1
        else:
            tokens.append(_Token("bad", _bad_character(text, i, tokens[-1] if tokens else None), i))
            return tokens


def _suggest(name: str, candidates: Iterable[str]) -> str:
    close = difflib.get_close_matches(name, sorted(set(candidates)), n=3, cutoff=0.6)
    return f"; did you mean {' or '.join(repr(c) for c in close)}?" if close else ""


class _Parser:
    def __init__(self, text: str) -> None:
        self.text = text
        self.tokens = _tokenize(text)
        self.i = 0
        self.depth = 0

    def error(self, message: str, pos: int | None) -> ExpressionError:
        return ExpressionError(message, self.text, pos)

    def peek(self, ahead: int = 0) -> _Token:
        return self.tokens[min(self.i + ahead, len(self.tokens) - 1)]

    def is_op(self, token: _Token, *ops: str) -> bool:
        return token.kind == "op" and token.text in ops

    def advance(self) -> _Token:
        token = self.tokens[self.i]
        if token.kind == "bad":
            raise self.error(token.text, token.pos)
        if token.kind != "end":
            self.i += 1
        return token

    def parse(self) -> _Node:
        if not self.text.strip():
            raise self.error("empty expression", None)
        node = self.expression()
        token = self.peek()
        if token.kind == "end":
            return node
        if token.kind == "bad":
            raise self.error(token.text, token.pos)
        if self.is_op(token, ")"):
            raise self.error("unmatched ')'", token.pos)
        shown = self.text[token.pos : token.pos + 20]
        raise self.error(f"expected an operator (+ - * / **) before '{shown}'", token.pos)

    def expression(self) -> _Node:
        return self.chain(self.term, ("+", "-"))

    def term(self) -> _Node:
        return self.chain(self.unary, ("*", "/"))

    def chain(self, operand: Callable[[], _Node], ops: tuple[str, ...]) -> _Node:
        first = operand()
        rest: list[tuple[str, int, _Node]] = []
        while self.is_op(self.peek(), *ops):
            token = self.advance()
            rest.append((token.text, token.pos, operand()))
        return _Chain(first, tuple(rest)) if rest else first

    def enter(self, pos: int) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise self.error(f"expression is nested too deeply (more than {MAX_DEPTH} levels)", pos)

    def unary(self) -> _Node:
        token = self.peek()
        self.enter(token.pos)
        if self.is_op(token, "+", "-"):
            self.advance()
            node: _Node = _Apply("neg" if token.text == "-" else "pos", (self.unary(),), token.pos)
        else:
            node = self.power()
        self.depth -= 1
        return node

    def power(self) -> _Node:
        base = self.primary()
        token = self.peek()
        if self.is_op(token, "**"):
            self.advance()
            return _Apply("**", (base, self.unary()), token.pos)
        return base

    def primary(self) -> _Node:
        token = self.advance()
        if token.kind == "num":
            return self.number(token)
        if token.kind == "name":
            if self.is_op(self.peek(), "("):
                return self.call(token)
            if token.text in FUNCTION_NAMES and token.text not in UNIT_NAMES:
                raise self.error(
                    f"function '{token.text}' needs parentheses, e.g. {token.text}(x)", token.pos
                )
            return _Name(token.text, token.pos)
        if self.is_op(token, "("):
            node = self.expression()
            if not self.is_op(self.peek(), ")"):
                if self.peek().kind == "bad":
                    self.advance()
                raise self.error(f"missing ')' to close the '(' at position {token.pos}", self.peek().pos)
            self.advance()
            return node
        if token.kind == "end":
            raise self.error("the expression ends too early; expected a number, a name or '('", token.pos)
        raise self.error(
            f"unexpected '{self.text[token.pos : token.pos + len(token.text)]}'; "
            "expected a number, a name or '('",
            token.pos,
        )

    def number(self, token: _Token) -> _Node:
        value = float(token.text)
        if not math.isfinite(value):
            raise self.error(f"the number {token.text} is too large", token.pos)
        nxt = self.peek()
        if nxt.kind != "name" or self.is_op(self.peek(1), "("):
            return _Const(Quantity(value, DIMENSIONLESS), token.pos)
        if nxt.text not in UNIT_NAMES:
            raise self.error(
                f"'{nxt.text}' is not a unit{_suggest(nxt.text, (u for u in UNIT_NAMES if u.isascii()))}"
                f" (to multiply, write {token.text} * {nxt.text})",
                nxt.pos,
            )
        parts: list[tuple[str, int, bool]] = []
        divide = False
        while True:
            name = self.advance().text
            exponent = 1
            if self.is_op(self.peek(), "**"):
                exponent = self.unit_exponent()
            parts.append((name, exponent, divide))
            op, after, call = self.peek(), self.peek(1), self.peek(2)
            if (
                self.is_op(op, "*", "/")
                and after.kind == "name"
                and after.text in UNIT_NAMES
                and not self.is_op(call, "(")
            ):
                self.advance()
                divide = op.text == "/"
                continue
            break
        try:
            return _Const(Quantity(value, DIMENSIONLESS) * _unit_size(tuple(parts)), token.pos)
        except UnitError as exc:
            raise self.error(str(exc), token.pos) from None

    def unit_exponent(self) -> int:
        caret = self.advance()
        sign = 1
        if self.is_op(self.peek(), "+", "-"):
            sign = -1 if self.advance().text == "-" else 1
        token = self.peek()
        if token.kind != "num" or not token.text.isdigit():
            raise self.error(
                "a unit exponent must be a whole number such as m^2 or m^-3; to raise a quantity "
                "to another power put it in parentheses, e.g. (2 m)^x",
                caret.pos,
            )
        self.advance()
        return sign * int(token.text)

    def call(self, token: _Token) -> _Node:
        name = token.text
        if name not in FUNCTION_NAMES:
            if name in UNIT_NAMES:
                raise self.error(f"'{name}' is a unit, not a function", token.pos)
            if name == "pi":
                raise self.error("'pi' is a constant, not a function", token.pos)
            raise self.error(
                f"unknown function '{name}'{_suggest(name, FUNCTION_NAMES)} "
                f"(functions: {', '.join(sorted(FUNCTION_NAMES))})",
                token.pos,
            )
        self.advance()  # "("
        self.enter(token.pos)
        args: list[_Node] = []
        if not self.is_op(self.peek(), ")"):
            args.append(self.expression())
            while self.is_op(self.peek(), ","):
                self.advance()
                args.append(self.expression())
        if not self.is_op(self.peek(), ")"):
            if self.peek().kind == "bad":
                self.advance()
            raise self.error(f"missing ')' to close the call of {name}()", self.peek().pos)
        self.advance()
        self.depth -= 1
        low, high = _ARITY[name]
        if len(args) < low or (high is not None and len(args) > high):
            wanted = f"exactly {low}" if low == high else f"at least {low}"
            plural = "" if low == 1 else "s"
            raise self.error(f"{name}() takes {wanted} argument{plural}, got {len(args)}", token.pos)
        return _Apply(name, tuple(args), token.pos)


@lru_cache(maxsize=256)
def _unit_size(parts: tuple[tuple[str, int, bool], ...]) -> Quantity:
    """:func:`massmodel.core.units.unit_product`, remembered: a model file names the same few units thousands of times."""
    return unit_product(parts)


@lru_cache(maxsize=8192)
def _parse(text: str) -> _Node:
    """Syntax tree of an expression text (trees are immutable, so the same text is parsed once)."""
    if len(text) > MAX_LENGTH:
        raise ExpressionError(
            f"expression is too long ({len(text)} characters; the limit is {MAX_LENGTH})", text
        )
    return _Parser(text).parse()


# -- evaluation -----------------------------------------------------------------------------
_BINARY: dict[str, Callable[[Quantity, Quantity], Quantity]] = {
    "+": operator.add,
    "-": operator.sub,
    "*": operator.mul,
    "/": operator.truediv,
    "**": operator.pow,
}


def _apply(name: str, args: Sequence[Quantity]) -> Quantity:
    if name in _BINARY:
        return _BINARY[name](args[0], args[1])
    if name in ("min", "max"):
        for other in args[1:]:
            if other.dim != args[0].dim:
                a, b = args[0].dim.describe(), other.dim.describe()
                raise UnitError(f"{name}() arguments must have one dimension, got {a} and {b}")
        return min(args, key=lambda q: q.value) if name == "min" else max(args, key=lambda q: q.value)
    (x,) = args
    if name == "neg":
        return -x
    if name == "pos":
        return x
    if name == "abs":
        return abs(x)
    if name == "sqrt":
        return x.sqrt()
    if name in ("sin", "cos", "tan"):
        if x.is_dimensionless:
            raise UnitError(f"{name}() needs an angle: give the angle a unit, e.g. 30 deg")
        if x.dim != ANGLE:
            raise UnitError(f"{name}() needs an angle, got {x.dim.describe()}")
        return Quantity({"sin": math.sin, "cos": math.cos, "tan": math.tan}[name](x.value), DIMENSIONLESS)
    if name == "radians":
        if not x.is_dimensionless:
            raise UnitError(f"radians() takes a plain number of degrees, got {x.dim.describe()}")
        return Quantity(math.radians(x.value), ANGLE)
    if name == "degrees":
        if x.dim != ANGLE:
            raise UnitError(f"degrees() takes an angle such as 0.5 rad, got {x.dim.describe()}")
        return Quantity(math.degrees(x.value), DIMENSIONLESS)
    raise AssertionError(f"function table and _apply disagree about {name!r}")  # pragma: no cover


class _Evaluator:
    def __init__(self, text: str, env: Mapping[str, Quantity]) -> None:
        self.text = text
        self.env = env

    def fail(self, exc: UnitError, pos: int) -> ExpressionError:
        return ExpressionError(str(exc), self.text, pos)

    def value_of(self, node: _Node) -> Quantity:
        if isinstance(node, _Const):
            return node.value
        if isinstance(node, _Name):
            return self.name(node)
        if isinstance(node, _Apply):
            args = [self.value_of(a) for a in node.args]
            try:
                return _apply(node.op, args)
            except UnitError as exc:
                raise self.fail(exc, node.pos) from None
        result = self.value_of(node.first)
        for op, pos, right_node in node.rest:
            right = self.value_of(right_node)
            try:
                result = _BINARY[op](result, right)
            except UnitError as exc:
                raise self.fail(exc, pos) from None
        return result

    def name(self, node: _Name) -> Quantity:
        if node.name in UNITS:
            return UNITS[node.name]
        if node.name == "pi":
            return Quantity(math.pi, DIMENSIONLESS)
        if node.name in self.env:
            value = self.env[node.name]
            if not isinstance(value, Quantity):
                raise TypeError(
                    f"environment value for {node.name!r} must be a Quantity, got {type(value).__name__}"
                )
            return value
        raise _unknown_name(node, self.text, self.env)


def _unknown_name(node: _Name, text: str, candidates: Iterable[str]) -> ExpressionError:
    pool = [*candidates, "pi", *(u for u in UNIT_NAMES if u.isascii())]
    return ExpressionError(f"unknown name '{node.name}'{_suggest(node.name, pool)}", text, node.pos)


def _node_of(value: object) -> tuple[_Node, str]:
    """Syntax tree and display text for a parameter value (number or expression text)."""
    if isinstance(value, bool):
        raise ExpressionError(
            "true/false is not a number; write a number or an expression", str(value).lower()
        )
    if isinstance(value, (int, float)):
        text = str(value)
        try:
            return _Const(Quantity(float(value), DIMENSIONLESS), 0), text
        except (UnitError, OverflowError):
            raise ExpressionError("the number must be finite and not too large", text) from None
    if isinstance(value, str):
        return _parse(value), value
    raise ExpressionError(f"expected a number or expression text, got {type(value).__name__}", repr(value))


def evaluate(value: str | int | float, env: Mapping[str, Quantity] | None = None) -> Quantity:
    """Evaluate a number or an expression text to an SI quantity.

    Parameters
    ----------
    value : str, int or float
        Expression text (grammar in the module docstring) or a plain number.
        A bool (TOML ``true``/``false``) is rejected.
    env : mapping of str to Quantity, optional
        Parameter values by name. Reserved names (units, functions, ``pi``)
        always mean the unit, function or constant.

    Returns
    -------
    Quantity
        The value in SI units; an int or float gives a dimensionless quantity.

    Raises
    ------
    ExpressionError
        Syntax errors, unknown names, dimension mistakes, division by zero,
        non-finite results and exceeded limits.

    Examples
    --------
    >>> evaluate("17.6 g/cm^3").value
    17600.0
    >>> evaluate("wheelbase / 2", {"wheelbase": evaluate("2.6 m")}).to("mm")
    1300.0
    """
    node, text = _node_of(value)
    return _Evaluator(text, env if env is not None else {}).value_of(node)


def _names_in(node: _Node) -> list[_Name]:
    found: list[_Name] = []
    stack: list[_Node] = [node]
    while stack:
        n = stack.pop()
        if isinstance(n, _Name):
            if n.name not in UNIT_NAMES and n.name != "pi":
                found.append(n)
        elif isinstance(n, _Apply):
            stack.extend(n.args)
        elif isinstance(n, _Chain):
            stack.append(n.first)
            stack.extend(operand for _, _, operand in n.rest)
    return sorted(found, key=lambda x: x.pos)


def referenced_names(text: str) -> set[str]:
    """Parameter names used in an expression (units, functions and ``pi`` excluded).

    Raises
    ------
    ExpressionError
        If the text cannot be parsed.

    Examples
    --------
    >>> sorted(referenced_names("max(a, 2 mm) * b + 3 kg"))
    ['a', 'b']
    """
    node, _ = _node_of(text)
    return {n.name for n in _names_in(node)}


def _check_parameter_name(name: object) -> str:
    if not isinstance(name, str):
        raise ParameterError(str(name), "a parameter name must be text")
    if not _PARAMETER_RE.match(name):
        raise ParameterError(
            name, "a parameter name must be letters, digits and _ and not start with a digit"
        )
    if name in RESERVED_NAMES:
        kind = "unit" if name in UNIT_NAMES else "function" if name in FUNCTION_NAMES else "constant"
        raise ParameterError(name, f"'{name}' is the name of a {kind}; choose another parameter name")
    return name


def evaluate_parameters(
    definitions: Mapping[str, str | int | float],
    overrides: Mapping[str, str | int | float] | None = None,
) -> dict[str, Quantity]:
    """Resolve parameters that may refer to each other.

    Parameters
    ----------
    definitions : mapping of str to (str, int or float)
        Parameter name to number or expression text, e.g.
        ``{"wheelbase": "2.6 m", "front": "wheelbase * 0.45"}``.
    overrides : mapping of str to (str, int or float), optional
        Replacement definitions for existing parameters (e.g. from the command line).

    Returns
    -------
    dict of str to Quantity
        Every parameter in SI units, in the order of ``definitions``.

    Raises
    ------
    ParameterError
        A bad or reserved name, an override of an unknown parameter, a cycle
        (``"a -> b -> a"``) or an error in one parameter's expression (``name``
        is that parameter; the message includes the expression error).
    """
    overrides = {} if overrides is None else overrides
    for name in definitions:
        _check_parameter_name(name)
    for name in overrides:
        if name not in definitions:
            known = ", ".join(definitions) if definitions else "none are defined"
            raise ParameterError(
                name if isinstance(name, str) else str(name),
                f"cannot override an unknown parameter{_suggest(str(name), definitions)} (known parameters: {known})",
            )
    merged: dict[str, str | int | float] = {**definitions, **overrides}
    trees: dict[str, tuple[_Node, str]] = {}
    deps: dict[str, list[str]] = {}
    for name, value in merged.items():
        try:
            node, text = _node_of(value)
            refs = _names_in(node)
            for ref in refs:
                if ref.name not in merged:
                    raise _unknown_name(ref, text, merged)
        except ExpressionError as exc:
            raise ParameterError(name, str(exc)) from exc
        trees[name] = (node, text)
        deps[name] = list(dict.fromkeys(r.name for r in refs))

    results: dict[str, Quantity] = {}
    for name in _dependency_order(deps):
        node, text = trees[name]
        try:
            results[name] = _Evaluator(text, results).value_of(node)
        except ExpressionError as exc:
            raise ParameterError(name, str(exc)) from exc
    return {name: results[name] for name in merged}


def _dependency_order(deps: Mapping[str, Sequence[str]]) -> list[str]:
    """Names ordered so that each comes after everything it uses (iterative depth-first search)."""
    done: set[str] = set()
    order: list[str] = []
    for root in deps:
        if root in done:
            continue
        path = [root]
        on_path = {root}
        stack = [iter(deps[root])]
        while stack:
            for dep in stack[-1]:
                if dep in on_path:
                    cycle = [*path[path.index(dep) :], dep]
                    raise ParameterError(
                        dep, f"parameters refer to each other in a cycle: {' -> '.join(cycle)}"
                    )
                if dep not in done:
                    path.append(dep)
                    on_path.add(dep)
                    stack.append(iter(deps[dep]))
                    break
            else:
                stack.pop()
                finished = path.pop()
                on_path.discard(finished)
                done.add(finished)
                order.append(finished)
    return order


def parse_override(text: str) -> tuple[str, str]:
    """Split a command-line override ``"name=value"`` into its two parts.

    Parameters
    ----------
    text : str
        E.g. ``"wheelbase=2.6 m"``; spaces around the name and value are ignored.

    Returns
    -------
    tuple of (str, str)
        The parameter name and the value text (not evaluated).

    Raises
    ------
    ParameterError
        No ``=``, an invalid name or an empty value.

    Examples
    --------
    >>> parse_override("wheelbase = 2.6 m")
    ('wheelbase', '2.6 m')
    """
    if not isinstance(text, str) or "=" not in text:
        raise ParameterError(None, f"expected name=value, e.g. wheelbase=2.6 m; got {text!r}")
    name, value = (part.strip() for part in text.split("=", 1))
    if not _PARAMETER_RE.match(name):
        raise ParameterError(
            None, f"'{name}' is not a valid parameter name in {text!r} (expected name=value)"
        )
    if not value:
        raise ParameterError(name, f"no value after '=' in {text!r}")
    return name, value
