"""Plain-text building blocks of every terminal report: the display units and the fixed-width table."""

from __future__ import annotations

import enum
from collections.abc import Iterator, Sequence

__all__ = ["DisplayUnits", "table", "table_lines"]


class DisplayUnits(enum.Enum):
    """Units of the terminal tables (the JSON is always SI)."""

    SI = "si"  # m, kg*m^2
    MM = "mm"  # mm, kg*mm^2

    @property
    def length(self) -> tuple[str, float]:
        return ("m", 1.0) if self is DisplayUnits.SI else ("mm", 1e3)

    @property
    def inertia(self) -> tuple[str, float]:
        return ("kg*m^2", 1.0) if self is DisplayUnits.SI else ("kg*mm^2", 1e6)


def table(headers: Sequence[str], rows: Sequence[Sequence[str]], align: str | None = None) -> str:
    """A plain fixed-width table: header, a rule of '─', rows. ``align`` has one 'l' or 'r' per column."""
    return "\n".join(table_lines(headers, rows, align))


def table_lines(headers: Sequence[str], rows: Sequence[Sequence[str]], align: str | None = None) -> Iterator[str]:
    """The lines of :func:`table`, one at a time (a table of 10⁵ rows is not held as one text)."""
    align = align or "l" + "r" * (len(headers) - 1)
    widths = [max(len(str(h)), *(len(str(r[i])) for r in rows)) if rows else len(str(h)) for i, h in enumerate(headers)]

    def line(cells: Sequence[str]) -> str:
        return "  ".join(str(c).ljust(w) if a == "l" else str(c).rjust(w) for c, w, a in zip(cells, widths, align, strict=True)).rstrip()

    yield line(headers)
    yield "  ".join("─" * w for w in widths)
    for r in rows:
        yield line(r)
