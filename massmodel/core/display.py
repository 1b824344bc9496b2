"""Short text and small HTML tables for showing values in a notebook (``__repr__`` and ``_repr_html_``).

Standard library only, so the core types can use it. Every text goes through :func:`esc`: names read from model
files cannot inject markup. Numbers are formatted here for display only, always with their unit; the values
themselves stay SI (kg, m, kg·m²).
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Sequence

__all__ = ["esc", "number", "vector", "html_table"]


def esc(text: object) -> str:
    """HTML-escaped text (quotes too)."""
    return html.escape(str(text), quote=True)


def number(value: float, digits: int = 1, scale: float = 1.0) -> str:
    """``value × scale`` with ``digits`` decimals; a value that rounds to zero shows no minus sign; 'nan' kept."""
    x = float(value) * scale
    if not math.isfinite(x):
        return str(x)
    text = f"{x:.{digits}f}"
    if text.startswith("-") and float(text) == 0.0:
        text = text[1:]
    return text


def vector(values: Iterable[float], digits: int = 0, scale: float = 1.0) -> str:
    """A vector as ``(x, y, z)`` with :func:`number` entries (e.g. metres shown in mm with ``scale=1e3``)."""
    return "(" + ", ".join(number(v, digits, scale) for v in values) + ")"


def html_table(
    rows: Sequence[Sequence[object]], headers: Sequence[object] = (), caption: str = "", numeric: Sequence[int] = ()
) -> str:
    """A small HTML table of text cells (every cell and header escaped here).

    Parameters
    ----------
    rows : sequence of sequence
        Cell values, shown with ``str``.
    headers : sequence, optional
        Column headers; none for a two-column key/value table.
    caption : str
        Table caption.
    numeric : sequence of int
        Indices of right-aligned columns.
    """
    right = set(numeric)

    def cell(tag: str, i: int, value: object) -> str:
        style = ' style="text-align:right"' if i in right else ' style="text-align:left"'
        return f"<{tag}{style}>{esc(value)}</{tag}>"

    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    head = "<thead><tr>" + "".join(cell("th", i, h) for i, h in enumerate(headers)) + "</tr></thead>" if headers else ""
    body = "".join("<tr>" + "".join(cell("td", i, v) for i, v in enumerate(r)) + "</tr>" for r in rows)
    return f"<table>{cap}{head}<tbody>{body}</tbody></table>"
