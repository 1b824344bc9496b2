"""The ``[[part]]`` tables of a model file parsed a batch at a time, while the model is built.

A file of 10⁵ parts parses into about 130 MiB of TOML tables; parsed whole, they are all alive while the parts are
made, and the memory they leave behind is mostly not reusable for the model's objects. Here the text is cut at its
table headers: the ``[[part]]`` tables (with their ``[part.x]`` and ``[[part.x]]`` sub-tables) are parsed
:data:`BATCH` at a time when the loader reaches them, everything else is parsed at once as the rest of the file.

The cut is only trusted when it cannot change the meaning of the file, and the whole text decides otherwise:

* a text with a multi-line string (``\"\"\"`` or ``'''``) is parsed whole (a header-like line may be inside one);
* the rest of the file must hold no ``part`` key (a ``[part]`` table, a quoted ``[["part"]]`` header, or a
  ``[part.x]`` sub-table after another table), each batch must parse to exactly its ``[[part]]`` tables, and
  nothing may nest deeper than the reader allows; otherwise the whole text is parsed, which gives the file's own
  syntax error (line and column in the file) or, for a valid file, the tables to build from
  (:class:`WholeText`);
* a cut inside a multi-line array leaves an unclosed bracket in a piece, which does not parse: the same fallback.

TOML semantics used: an ``[[part]]`` header appends a new table to the array ``part``, and ``[part.x]`` and
``[[part.x]]`` headers after it (before the next ``[[part]]``) belong to that last table, so each part table parses
alone to what the whole file gives it. The rest keeps the order of its tables; the key ``part`` then comes last
among the top-level keys (their order carries no meaning in a model file).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from tomli import TOMLDecodeError
from tomli import loads as toml_loads

from .reader import MAX_NESTING, _nesting, parse_toml

__all__ = ["BATCH", "PartText", "WholeText", "split_part_tables"]

#: ``[[part]]`` tables parsed together (a few hundred: the per-call cost of the parser is paid rarely, and a batch's
#: tables take well under a mebibyte).
BATCH = 256

# A table header on a line of its own: "[" or "[[", the key, "]" or "]]", an optional comment. Keys with brackets
# or "#" inside quotes are not matched; they stay inside the piece before them, which the checks then catch.
_HEADER = re.compile(r"^[ \t]*(\[\[?)[ \t]*([^\[\]\n#]*?)[ \t]*(\]\]?)[ \t]*(?:#[^\n]*)?\r?$", re.M)


class WholeText(Exception):  # noqa: N818 (a signal to the loader, not an error)
    """The cut was not trusted after all: build from ``data``, the whole text's tables (parsed without error)."""

    def __init__(self, data: dict[str, Any]) -> None:
        super().__init__("the model file is read whole")
        self.data = data


@dataclass(frozen=True)
class PartText:
    """A model file's text cut into the rest (parsed) and its ``[[part]]`` tables (parsed when iterated).

    Attributes
    ----------
    rest : dict
        The tables of every other section, parsed and checked for nesting.
    text : str
        The whole text (for the batches and the fallback).
    label : str
        The file's name in messages.
    batches : list of (int, int, int)
        Start and end of each batch of part tables in ``text``, and how many ``[[part]]`` headers it holds.
    """

    rest: dict[str, Any]
    text: str
    label: str
    batches: list[tuple[int, int, int]]

    def tables(self) -> Iterator[dict[str, Any]]:
        """The ``[[part]]`` tables in file order, each batch parsed when reached.

        Raises
        ------
        ModelFileError
            The file's syntax error (from parsing the whole text) when a batch does not parse.
        WholeText
            A batch parsed to something other than its part tables (the whole text is valid: build from it).
        """
        for start, end, count in self.batches:
            try:
                parsed = toml_loads(self.text[start:end])
            except (TOMLDecodeError, RecursionError):
                parsed = None
            tables = parsed.get("part") if parsed is not None and len(parsed) == 1 else None
            if not isinstance(tables, list) or len(tables) != count or _nesting(tables) > MAX_NESTING - 1:
                raise WholeText(parse_toml(self.text, self.label))
            del parsed
            tables.reverse()
            while tables:  # handed over and dropped one by one (the loader keeps none of them)
                yield tables.pop()

    def assembled(self) -> dict[str, Any]:
        """The rest with every part table under ``part`` (what a parse of the whole text gives)."""
        try:
            tables = list(self.tables())
        except WholeText as whole:
            return whole.data
        data = dict(self.rest)
        if tables:
            data["part"] = tables
        return data

    def whole(self) -> dict[str, Any]:
        """The whole text parsed at once (the file's first syntax error, as a parse of the whole file gives it)."""
        return parse_toml(self.text, self.label)


def split_part_tables(text: str, label: str) -> PartText | dict[str, Any]:
    """Cut a model file's text into the rest and its ``[[part]]`` tables (see the module docstring).

    Returns
    -------
    PartText or dict
        The cut, or the whole text's tables when it cannot be trusted.

    Raises
    ------
    ModelFileError
        The file is not valid TOML (or nests too deep), as :func:`massmodel.modelfile.reader.parse_toml` says.
    """
    if '"""' in text or "'''" in text:
        return parse_toml(text, label)
    rest: list[str] = []
    batches: list[tuple[int, int, int]] = []
    start = 0  # where the current piece began
    in_part = False  # the current piece is a run of part tables
    count = 0  # [[part]] headers in that run
    for m in _HEADER.finditer(text):
        opening, key, closing = m.groups()
        first = key.split(".", 1)[0].strip()
        new_part = opening == "[[" and closing == "]]" and first == key == "part"
        sub_table = first == "part" and not new_part and in_part and len(opening) == len(closing)
        if sub_table or (new_part and in_part and count < BATCH):
            count += new_part
            continue
        at = m.start()
        if in_part:
            batches.append((start, at, count))
        else:
            rest.append(text[start:at])
        start, in_part, count = at, new_part, int(new_part)
    if in_part:
        batches.append((start, len(text), count))
    else:
        rest.append(text[start:])
    data = _parse_rest("".join(rest))
    if data is None or "part" in data:
        return parse_toml(text, label)
    return PartText(data, text, label, batches)


def _parse_rest(text: str) -> dict[str, Any] | None:
    """The rest of the file parsed, or None when it does not parse or nests too deep (the whole text decides)."""
    try:
        data = toml_loads(text)
    except (TOMLDecodeError, RecursionError):
        return None
    return data if _nesting(data) <= MAX_NESTING else None

