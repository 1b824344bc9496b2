"""The file layer of every input file: reading the text, parsing TOML, the ``[units]`` table and the syntax of
points and vectors, shared by the model files and rulebooks, ballast plans, measurement sessions and CAD estimates.

Every mistake becomes one :class:`massmodel.core.errors.InputError` (or the subclass of the file's kind) naming the
file, the item and the field: a missing or unreadable file, bytes that are not UTF-8, TOML (or JSON) that does not
parse, nesting too deep to be a real input file, a ``[units]`` entry that is not a unit of its kind, and a point
written in none of the accepted forms.

Points and vectors (docs/input_files.md)
----------------------------------------
A point (or any vector of ``n`` quantities) may be written as

* a list of quantities, ``["10 mm", "20 mm", "-265 mm"]`` (each an expression of the model-file language);
* a list of plain numbers, ``[10, 20, -265]``, in the file's default unit of the kind (``[units]``);
* one text with commas, ``"10 mm, 20 mm, -265 mm"``, where a unit written once after the last of plain numbers
  applies to all of them: ``"10, 20, -265 mm"`` (brackets around the numbers are allowed: ``"(10, 20, -265) mm"``).

:func:`split_vector` turns each form into the ``n`` entries; the reader of the file converts each entry as it
converts any scalar of the kind (default units, parameters, limits), so the same text means the same everywhere.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from tomli import TOMLDecodeError
from tomli import loads as toml_loads

from massmodel.core import expr, units
from massmodel.core.atomic import note_input
from massmodel.core.errors import InputError
from massmodel.core.shapes import MAX_LENGTH_M

__all__ = [
    "InputError",
    "ModelFileError",
    "MAX_NESTING",
    "MAGNITUDE_LIMITS",
    "expression_message",
    "magnitude_problem",
    "SourcedTable",
    "table_source",
    "TableReader",
    "parse_json",
    "parse_toml",
    "read_text",
    "read_toml",
    "read_units",
    "split_vector",
    "unit_size",
]

# One TOML parser for every input file: tomli (a dependency). Measured on a 10,000-part model file here: 0.12 s
# against 0.97 s for the standard library's tomllib (the same parser, not compiled); both give the same tables.

#: Largest magnitude accepted per kind of quantity in every input file (SI value, unit): far beyond any car, and small
#: enough that squares and products of them (parallel-axis terms, inertia sums, variances of readings) stay finite
#: instead of overflowing without a field's name. Model files, rulebooks, sessions and estimates share them.
MAGNITUDE_LIMITS: dict[str, tuple[float, str]] = {
    "length": (MAX_LENGTH_M, "m"), "mass": (1.0e9, "kg"), "density": (1.0e6, "kg/m^3"), "inertia": (1.0e12, "kg*m^2"),
    "time": (1.0e6, "s"), "angle": (1.0e4, "rad"), "number": (1.0e9, ""),
}


def magnitude_problem(value_si: float, kind: str, written: Any) -> str | None:
    """Why ``value_si`` (a ``kind`` in SI, as ``written`` in the file) cannot be a quantity of a car, or None.

    Not finite, or beyond :data:`MAGNITUDE_LIMITS`; the text is the message of the field's error.
    """
    if not math.isfinite(value_si):
        return f"{written!r} is not a finite number"
    limit = MAGNITUDE_LIMITS.get(kind)
    if limit is not None and abs(value_si) > limit[0]:
        size, top = (f"{abs(value_si):g} {limit[1]}".strip(), f"{limit[0]:g} {limit[1]}".strip())
        return f"{written!r} is {size}; no part of a car comes near that (the limit is {top})"
    return None


#: Deepest nesting of tables and lists accepted in an input file (the deepest real one, a polygon of vertices in a
#: part, nests 4 deep). Deeper files are refused by name before anything walks them recursively.
MAX_NESTING = 32



class SourcedTable(dict):  # type: ignore[type-arg]
    """A table merged from a base file; ``source`` names that file (an attribute, not a key of the table, so that
    no key a user writes can be taken for it)."""

    def __init__(self, table: dict[str, Any], source: str) -> None:
        super().__init__(table)
        self.source = source


def table_source(table: dict[str, Any]) -> str | None:
    """The base file a merged table came from, or None for a table of the file itself."""
    return table.source if isinstance(table, SourcedTable) else None


class ModelFileError(InputError):
    """A problem in a model file or rulebook, naming the file, the item and the field (one line of text)."""


def read_text(path: Path, label: str, error: type[InputError] = InputError,
              referrer: tuple[str, str | None, str | None] | None = None) -> str:
    """The text of an input file (UTF-8).

    Parameters
    ----------
    path : Path
        The file.
    label : str
        The file's name in messages.
    error : type
        The :class:`InputError` subclass of the file's kind.
    referrer : (file, item, field), optional
        Blame a file that cannot be read on the reference to it (e.g. ``rulebook = "..."`` of a model file).

    Raises
    ------
    InputError
        Missing or unreadable file, or bytes that are not UTF-8 (naming the byte offset).
    """
    try:
        text = path.read_text(encoding="utf-8")
        note_input(path)  # never to be written over by the same command (massmodel.core.atomic)
        return text
    except UnicodeDecodeError as exc:
        where = (label, None, None)
        raise error(*where, f"not UTF-8 text: byte 0x{exc.object[exc.start]:02x} at offset {exc.start} "
                            "(save the file as UTF-8)") from None
    except OSError as exc:
        reason = "no such file" if isinstance(exc, FileNotFoundError) else (exc.strerror or str(exc))
        if referrer is not None:
            raise error(*referrer, f"cannot read '{path}' ({reason})") from None
        raise error(label, None, None, f"cannot read the file ({reason})") from None


def _nesting(data: Any) -> int:
    """How deep tables and lists nest in ``data``, counted up to ``MAX_NESTING + 1`` (level by level, without
    recursion: a deep file must not exhaust the stack here; only the containers of each level are kept)."""
    level = [data] if isinstance(data, (dict, list)) else []
    depth = 0
    while level and depth <= MAX_NESTING:
        depth += 1
        level = [c for node in level for c in (node.values() if isinstance(node, dict) else node)
                 if isinstance(c, (dict, list))]
    return depth


def _too_deep(label: str, error: type[InputError]) -> InputError:
    return error(label, None, None, f"tables and lists nest too deep (an input file nests at most {MAX_NESTING} "
                                    "levels)")


def _checked(data: Any, label: str, error: type[InputError]) -> Any:
    if _nesting(data) > MAX_NESTING:
        raise _too_deep(label, error)
    return data


def parse_toml(text: str, label: str, error: type[InputError] = ModelFileError) -> dict[str, Any]:
    """Parse TOML text; a syntax error (or nesting beyond :data:`MAX_NESTING`) becomes one error naming ``label``."""
    try:
        data = toml_loads(text)
    except TOMLDecodeError as exc:
        raise error(label, None, None, f"not valid TOML: {exc}") from None
    except RecursionError:
        raise _too_deep(label, error) from None
    return _checked(data, label, error)


def parse_json(text: str, label: str, error: type[InputError] = InputError) -> Any:
    """Parse JSON text; the same errors as :func:`parse_toml`."""
    import json

    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise error(label, None, None, f"not valid JSON: {exc.msg} at line {exc.lineno}, column {exc.colno}") from None
    except RecursionError:
        raise _too_deep(label, error) from None
    return _checked(data, label, error)


def read_toml(path: Path, label: str, referrer: tuple[str, str | None, str | None] | None = None,
              error: type[InputError] = ModelFileError) -> dict[str, Any]:
    """Read and parse a TOML file (:func:`read_text`, then :func:`parse_toml`)."""
    return parse_toml(read_text(path, label, error, referrer), label, error)


def expression_message(exc: Exception) -> str:
    """An expression error as one line: the message, then where in the text it is (not the text and a caret line
    under it); any other error as its text."""
    if isinstance(exc, expr.ExpressionError):
        where = f" (in '{exc.text}'" if exc.text else ""
        if where and exc.position is not None:
            where += f", at character {exc.position + 1}"
        return exc.message + (where + ")" if where else "")
    return str(exc)


def unit_size(text: Any, kind: str, dim: units.Dimension) -> float:
    """The SI size of a unit written for a quantity ``kind`` (e.g. ``"mm"`` for a length → 0.001).

    Raises
    ------
    ValueError
        The text is not a unit, or a unit of another dimension (the message names it).
    """
    if not isinstance(text, str):
        raise ValueError(f"expected a unit text such as 'mm' or 'kg', got {text!r}")
    q = units.parse_unit(text)
    if q.dim != dim:
        raise ValueError(f"'{text}' is not a {kind} unit")
    if not q.value > 0.0:
        raise ValueError(f"{kind} unit '{text}' has no size")
    return q.value


def read_units(table: Any, kinds: Mapping[str, units.Dimension], label: str,
               error: type[InputError] = ModelFileError) -> dict[str, float]:
    """The ``[units]`` table of an input file: kind → SI size of the default unit of that kind.

    A bare number of a kind (``mass = 92.4``) is then read in that unit. ``kinds`` are the kinds the file may
    declare (e.g. ``{"length": units.LENGTH, "mass": units.MASS}``).
    """
    if not isinstance(table, dict):
        raise error(label, "[units]", None, "must be a table like { length = \"mm\", mass = \"kg\" }")
    defaults: dict[str, float] = {}
    for kind, text in table.items():
        if kind not in kinds:
            raise error(label, "[units]", kind, f"unknown quantity kind; known: {', '.join(kinds)}")
        try:
            defaults[kind] = unit_size(text, kind, kinds[kind])
        except ValueError as exc:
            raise error(label, "[units]", kind, str(exc)) from None
    return defaults


_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_PLAIN = re.compile(_NUMBER)
_NUMBER_UNIT = re.compile(rf"({_NUMBER})\s*([A-Za-z°µμ%][^,]*)")


def _split_top(text: str, sep: str = ",") -> list[str]:
    """``text`` split at ``sep`` outside brackets (``max(a, b)`` stays one entry)."""
    out, depth, start = [], 0, 0
    for i, ch in enumerate(text):
        if ch in "([":
            depth += 1
        elif ch in ")]":
            depth -= 1
        elif ch == sep and depth == 0:
            out.append(text[start:i])
            start = i + 1
    out.append(text[start:])
    return [p.strip() for p in out]


def _unbracket(text: str) -> str:
    """``"(1, 2, 3) mm"`` → ``"1, 2, 3 mm"``: brackets around the whole list (an optional unit after them)."""
    if not text or text[0] not in "([":
        return text
    depth = 0
    for i, ch in enumerate(text):
        depth += ch in "(["
        depth -= ch in ")]"
        if depth == 0:
            inner, rest = text[1:i], text[i + 1:].strip()
            if "," in inner and (not rest or re.fullmatch(r"[A-Za-z°µμ%][^,()\[\]]*", rest)):
                return f"{inner} {rest}".strip()
            return text
    return text


def split_vector(value: Any, n: int | None = 3, what: str = "point") -> list[Any]:
    """The ``n`` entries of a vector written in one of the accepted forms (see the module docstring).

    Parameters
    ----------
    value : list or str
        ``["10 mm", "20 mm", "-265 mm"]``, ``[10, 20, -265]``, ``"10 mm, 20 mm, -265 mm"`` or ``"10, 20, -265 mm"``.
    n : int or None
        How many entries (None: any number, at least one).
    what : str
        What the vector is, for the message (``"point"``, ``"size"``).

    Returns
    -------
    list
        The entries as written (numbers, or texts each holding its unit), for the reader to convert.

    Raises
    ------
    ValueError
        Not a list of ``n`` entries nor a text of ``n`` comma-separated entries.

    Examples
    --------
    >>> split_vector("10, 20, -265 mm")
    ['10 mm', '20 mm', '-265 mm']
    >>> split_vector(["1 m", 0, "x"])
    ['1 m', 0, 'x']
    """
    if isinstance(value, (list, tuple)):
        if (n is not None and len(value) != n) or not value:
            raise ValueError(_vector_usage(value, n, what))
        return list(value)
    if not isinstance(value, str):
        raise ValueError(_vector_usage(value, n, what))
    parts = _split_top(_unbracket(value.strip()))
    if len(parts) == 1 and n is not None and n > 1:  # "10 20 -265" (numbers separated by spaces, as some CAD tools write them)
        words = value.split()
        if len(words) in (n, n + 1) and all(_PLAIN.fullmatch(w) for w in words[:n]):
            parts = words[:n]
            if len(words) == n + 1:
                parts[-1] += " " + words[n]
    if (n is not None and len(parts) != n) or not all(parts):
        raise ValueError(_vector_usage(value, n, what))
    last = _NUMBER_UNIT.fullmatch(parts[-1])
    if last and all(_PLAIN.fullmatch(p) for p in parts[:-1]):
        unit = last.group(2).strip()
        parts = [f"{p} {unit}" for p in parts[:-1]] + [parts[-1]]
    return parts


def _vector_usage(value: Any, n: int | None, what: str) -> str:
    """The message of :func:`split_vector` for a value in none of the accepted forms (made only then)."""
    example = ", ".join(f"{10 * (k + 1)}" for k in range(n or 2)) + " mm"
    count = "values" if n is None else f"{n} values"
    return f"expected a {what}: a list of {count} or a text such as '{example}', got {value!r}"


class TableReader:
    """What every reader of an input file shares: the file's name, its error type and the checks of tables.

    Subclasses convert scalars of their kinds (``scalar(value, item, field)`` callables passed to :meth:`vector`).
    """

    error_type: type[InputError] = InputError

    def __init__(self, file: str) -> None:
        self.file = file

    def error(self, item: str | None, field: str | None, message: str) -> InputError:
        """The error of this file naming ``item`` and ``field``."""
        return self.error_type(self.file, item, field, message)

    def check_fields(self, table: Any, allowed: set[str], item: str, prefix: str = "") -> None:
        """``table`` is a table whose keys are all in ``allowed`` (field names in errors start with ``prefix``)."""
        if not isinstance(table, dict):
            raise self.error(item, prefix.rstrip(".") or None, "expected a table")
        unknown = sorted(set(table) - allowed)
        if unknown:
            raise self.error(item, prefix + unknown[0], f"unknown field; allowed: {', '.join(sorted(allowed))}")

    def table_list(self, data: Mapping[str, Any], key: str, item: str | None = None) -> list[dict[str, Any]]:
        """The ``[[key]]`` tables of ``data`` (none when absent)."""
        value = data.get(key, [])
        if not isinstance(value, list) or not all(isinstance(t, dict) for t in value):
            raise self.error(item or f"[[{key}]]", None, f"write each entry as a [[{key}]] table")
        return value

    def entries(self, value: Any, n: int, item: str, field: str, what: str = "point") -> list[Any]:
        """:func:`split_vector`, naming the field in the error."""
        try:
            return split_vector(value, n, what)
        except ValueError as exc:
            raise self.error(item, field, str(exc)) from None
