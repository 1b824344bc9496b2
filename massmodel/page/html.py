"""Small HTML building blocks of the page: escaped text, number cells with units, tables, verdict chips.

Everything the page shows goes through :func:`esc`, so names from model files cannot inject markup.
"""

from __future__ import annotations

import html
import math
from collections.abc import Sequence

__all__ = ["esc", "num", "table", "chip", "confidence_chip", "figure_png", "tile"]


def esc(text: object) -> str:
    """HTML-escaped text (quotes too)."""
    return html.escape(str(text), quote=True)


def num(value: float | None, digits: int = 1, unit: str = "", scale: float = 1.0) -> str:
    """A number (times ``scale``) with ``digits`` decimals and its unit, or an en dash when absent or not finite."""
    if value is None or not math.isfinite(float(value)):
        return "–"
    x = float(value) * scale
    text = f"{x:.{digits}f}"
    if text.lstrip("-").strip("0.") == "":  # rounds to zero: no minus sign
        text = text.lstrip("-")
    text = text.replace("-", "−")
    return f"{text}\u2009{esc(unit)}" if unit else text


def chip(passed: bool | None) -> str:
    """A verdict chip: pass, fail, or not checked."""
    if passed is None:
        return '<span class="chip chip-none">not checked</span>'
    return '<span class="chip chip-pass">pass</span>' if passed else '<span class="chip chip-fail">FAIL</span>'


def confidence_chip(passes_at_confidence: bool, margin: float) -> str:
    """The verdict with uncertainty: pass at the confidence, "not sure" (inside the limit, but by less than the
    margin the confidence needs), or FAIL (outside the limit)."""
    if passes_at_confidence:
        return chip(True)
    return '<span class="chip chip-unsure">not sure</span>' if margin >= 0.0 else chip(False)


def table(
    headers: Sequence[str],
    rows: Sequence[Sequence[str]],
    *,
    numeric: Sequence[int] = (),
    sortable: bool = False,
    caption: str = "",
    css: str = "",
) -> str:
    """An HTML table; cells are given as HTML (escape text with :func:`esc`), numeric columns are right-aligned.

    Parameters
    ----------
    headers : sequence of str
        Header texts (escaped here).
    rows : sequence of sequence of str
        Cell HTML.
    numeric : sequence of int
        Indices of right-aligned, numerically sorted columns.
    sortable : bool
        Whether clicking a header sorts the rows (the page's own small script).
    """
    num_cols = set(numeric)
    classes = " ".join(c for c in ("grid", "sortable" if sortable else "", css) if c)
    head = "".join(
        f'<th{" class=num" if i in num_cols else ""} scope="col">{esc(h)}</th>' for i, h in enumerate(headers)
    )
    body = "".join(
        "<tr>" + "".join(f'<td{" class=num" if i in num_cols else ""}>{c}</td>' for i, c in enumerate(r)) + "</tr>"
        for r in rows
    )
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    return f'<div class="scroll"><table class="{classes}">{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table></div>'


def figure_png(data_b64: str, alt: str, caption: str) -> str:
    """An inlined PNG picture with a caption."""
    return (
        f'<figure><img src="data:image/png;base64,{data_b64}" alt="{esc(alt)}">'
        f"<figcaption>{esc(caption)}</figcaption></figure>"
    )


def tile(label: str, value_html: str, note: str = "") -> str:
    """A key-figure tile of the summary band."""
    extra = f'<span class="tile-note">{esc(note)}</span>' if note else ""
    return f'<div class="tile"><span class="tile-label">{esc(label)}</span><span class="tile-value">{value_html}</span>{extra}</div>'
