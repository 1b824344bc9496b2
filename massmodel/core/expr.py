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

import math
import operator
from collections.abc import Callable, Iterable, Mapping, Sequence
from functools import lru_cache

from massmodel.core.errors import UserError
from massmodel.core.expr_syntax import (
    _PARAMETER_RE,
    FUNCTION_NAMES,
    MAX_DEPTH,
    MAX_LENGTH,
    PARSE_CACHE_SIZE,
    RESERVED_NAMES,
    ExpressionError,
    _Apply,
    _Chain,
    _Const,
    _Name,
    _Node,
    _parse,
    _suggest,
)
from massmodel.core.units import ANGLE, DIMENSIONLESS, UNIT_NAMES, UNITS, Quantity, UnitError

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


class ParameterError(UserError, ValueError):
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


@lru_cache(maxsize=PARSE_CACHE_SIZE)
def _parsed_text(value: str) -> tuple[_Node, str, tuple[_Name, ...]]:
    """Tree, text and the parameter names used, of an expression text (remembered like the tree itself: every load
    case of a file evaluates the same parameter texts)."""
    node, text = _node_of(value)
    return node, text, tuple(_names_in(node))


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
    try:
        key = (tuple(definitions.items()), tuple(overrides.items()))
        hash(key)
    except TypeError:  # a value that is not a number or text: evaluated (and refused) below
        return _evaluate_parameters(definitions, overrides)
    return dict(_evaluate_parameters_cached(key))


@lru_cache(maxsize=32)
def _evaluate_parameters_cached(key: tuple[tuple[tuple[str, str | int | float], ...], ...]) -> dict[str, Quantity]:
    """:func:`evaluate_parameters` remembered per definitions and overrides: loading every load case of a file, and
    checking each case's values when one is loaded, asks for the same few sets again and again."""
    return _evaluate_parameters(dict(key[0]), dict(key[1]))


def _evaluate_parameters(
    definitions: Mapping[str, str | int | float], overrides: Mapping[str, str | int | float]
) -> dict[str, Quantity]:
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
            node, text, refs = _parsed_text(value) if isinstance(value, str) else (*_node_of(value), ())
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
