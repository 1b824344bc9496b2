"""The expression language's syntax: its error type, tokenizer, syntax tree and recursive-descent parser.

The grammar and the rules of the language are written once, in :mod:`massmodel.core.expr`, which evaluates the trees
built here. Nothing is handed to Python's ``eval``, ``exec`` or ``ast``.
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from functools import lru_cache

from massmodel.core.errors import UserError
from massmodel.core.units import DIMENSIONLESS, UNIT_NAMES, Quantity, UnitError, unit_product

__all__ = ["FUNCTION_NAMES", "MAX_DEPTH", "MAX_LENGTH", "RESERVED_NAMES", "ExpressionError"]

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


class ExpressionError(UserError, ValueError):
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


#: Expression texts whose trees are remembered: more than the parameters and fields of the largest model file in
#: sight (tens of thousands), so that evaluating every load case of a file parses each text once (a tree of a short
#: text is a few hundred bytes).
PARSE_CACHE_SIZE = 1 << 17


@lru_cache(maxsize=PARSE_CACHE_SIZE)
def _parse(text: str) -> _Node:
    """Syntax tree of an expression text (trees are immutable, so the same text is parsed once)."""
    if len(text) > MAX_LENGTH:
        raise ExpressionError(
            f"expression is too long ({len(text)} characters; the limit is {MAX_LENGTH})", text
        )
    return _Parser(text).parse()
