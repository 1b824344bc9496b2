"""The self-contained HTML page of a model: every load case, the 3-D view, pictures and tables in one file.

Nothing is fetched when the page opens: the style sheet, the scripts (the 3-D viewer is bundled at build time from
the pinned npm packages in ``massmodel/page/js/``), the pictures (PNG) and the model geometry are all inlined.
"""

from __future__ import annotations

import json
import tempfile
import time
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from massmodel.core.atomic import write_text_atomic
from massmodel.core.errors import UsageError
from massmodel.page.html import esc
from massmodel.page.sections import SECTION_BUILDERS, PageInputs, Section, summary_line

__all__ = ["PageOptions", "PageResult", "build_page", "check_output", "write_page", "viewer_script", "VIEWER_BUNDLE"]

HERE = Path(__file__).parent
VIEWER_BUNDLE = HERE / "static" / "viewer.js"


@dataclass(frozen=True)
class PageOptions:
    """What goes into the page.

    Attributes
    ----------
    pictures : bool
        Render the picture sheet (VTK, off-screen) and the CG chart (matplotlib) into the page.
    view3d : bool
        Include the rotatable 3-D view.
    chord_tolerance : float
        Mesh tolerance of the 3-D view, m.
    extras : dict
        Results of other commands with a section of their own (see :mod:`massmodel.page.sections`).
    """

    pictures: bool = True
    view3d: bool = True
    chord_tolerance: float = 0.002
    extras: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class PageResult:
    """The page's HTML and what it holds."""

    html: str
    sections: tuple[str, ...]
    summary: str
    view3d: bool
    notes: tuple[str, ...]
    seconds: float


def viewer_script() -> str | None:
    """The bundled 3-D viewer script, or None when it has not been built (``make viewer``)."""
    try:
        return VIEWER_BUNDLE.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None


def _png_b64(render: Any) -> str:
    import base64

    with tempfile.TemporaryDirectory(prefix="massmodel-page-") as tmp:
        path = Path(tmp) / "picture.png"
        render(path)
        return base64.b64encode(path.read_bytes()).decode("ascii")


def _pictures(model: Any) -> list[tuple[str, str, str]]:
    from massmodel.pictures.scene import build_scene
    from massmodel.pictures.sheet import render_sheet

    out = [(_png_b64(lambda p: render_sheet(build_scene(model), p, size=(2000, 1400))),
            "side, top, front and iso views of the model with the CG",
            "The drawing sheet: parts coloured by group, the total CG with its principal axes, group CGs, ballast and "
            "slots; lengths in mm, model axes.")]
    if model.vehicle is not None:
        from massmodel.pictures.cgchart import render_cg_chart

        out.append((_png_b64(lambda p: render_cg_chart(model, p, size=(1800, 1200))),
                    "side-view CG chart with the ranges the rules allow",
                    "The CG chart: the CG in side view between the axles, with the ranges the rules allow."))
    return out


def build_page(models: dict[str, Any], source: str, options: PageOptions | None = None) -> PageResult:
    """Build the page of the models of one file (base first, then the load cases).

    Parameters
    ----------
    models : dict of str to Model
        Case name → model (:func:`massmodel.modelfile.loader.load_case_models`).
    source : str
        The model file, for the header.
    options : PageOptions, optional

    Returns
    -------
    PageResult
    """
    from massmodel.report.summary import build_report

    t0 = time.perf_counter()
    opts = options or PageOptions()
    reports = {name: build_report(m) for name, m in models.items()}
    base = next(iter(models.values()))
    notes: list[str] = []
    payload: dict[str, Any] | None = None
    groups: list[Any] = []
    script = viewer_script() if opts.view3d else None
    if opts.view3d:
        from massmodel.page.scene3d import scene_payload

        made = scene_payload(base, opts.chord_tolerance)
        if made is None:
            notes.append("no 3-D view: the model has no part with a shape")
        elif script is None:
            notes.append("no 3-D view: the viewer script was not built (run `make viewer`)")
        else:
            payload, groups = made
    pictures = _pictures(base) if opts.pictures else []
    inputs = PageInputs(
        reports=reports,
        source=source,
        pictures=pictures,
        view3d=payload is not None,
        view_groups=[(g.name, g.colour, g.mass, g.parts) for g in groups],
        extras=opts.extras,
        notes=notes,
    )
    sections = [s for s in (b(inputs) for b in SECTION_BUILDERS) if s is not None]
    html = _assemble(inputs, sections, payload, script if payload is not None else None)
    return PageResult(html, tuple(s.key for s in sections), summary_line(inputs), payload is not None, tuple(notes),
                      time.perf_counter() - t0)


def check_output(path: str | Path, inputs: tuple[str | Path, ...] = ()) -> Path:
    """The page's output path, refused (ValueError naming it) when it is one of ``inputs`` or not ``.html``."""
    target = Path(path)
    for p in inputs:
        if target.resolve() == Path(p).resolve():
            raise UsageError(f"output '{target}' is the input file '{p}': choose another output name")
    if target.suffix.lower() not in (".html", ".htm"):
        raise UsageError(f"output '{target}': the page is written as HTML, so the file name must end in .html")
    return target


def write_page(result: PageResult, path: str | Path, inputs: tuple[str | Path, ...] = ()) -> Path:
    """Write the page atomically (temporary file, then rename); the output is checked by :func:`check_output`."""
    return write_text_atomic(check_output(path, inputs), result.html)


def _assemble(inputs: PageInputs, sections: list[Section], payload: dict[str, Any] | None, script: str | None) -> str:
    b = inputs.base
    stamp = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    nav = "".join(f'<a href="#{s.key}">{esc(s.title)}</a>' for s in sections)
    body = "".join(
        f'<section id="{s.key}"><h2><span class="num">{i + 1:02d}</span>{esc(s.title)}</h2>{s.body}</section>'
        for i, s in enumerate(sections))
    notes = "".join(f'<p class="page-note">{esc(n)}</p>' for n in inputs.notes)
    cases = ", ".join(inputs.reports)
    data = ""
    if payload is not None and script is not None:
        blob = json.dumps(payload, separators=(",", ":")).replace("</", "<\\/")
        data = f'<script type="application/json" id="mm-scene">{blob}</script><script>{script}</script>'
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="massmodel">
<title>{esc(b['model'])} — mass properties</title>
<style>{_STYLE}</style></head>
<body>
<header class="masthead"><div class="brand">massmodel · mass-properties page</div>
<h1>{esc(b['model'])}</h1>
<p class="meta">model file <code>{esc(inputs.source)}</code> · load cases: {esc(cases)} · written {esc(stamp)} ·
SI inside; lengths shown in mm, masses in kg, inertia in kg·m²</p>{notes}
<nav>{nav}</nav></header>
<main>{body}</main>
<footer><p>massmodel computes; it does not approve. The series' technical regulations, the scrutineers and licensed
engineering practice decide.</p></footer>
<script>{_SORT_SCRIPT}</script>
{data}
</body></html>
"""


_SORT_SCRIPT = """
(function () {
  function key(cell, numeric) {
    var t = cell.textContent.replace(/\\u2212/g, "-").trim();
    if (!numeric) return t.toLowerCase();
    var v = parseFloat(t);
    return isNaN(v) ? -Infinity : v;
  }
  document.querySelectorAll("table.sortable").forEach(function (table) {
    table.querySelectorAll("th").forEach(function (th, col) {
      th.tabIndex = 0;
      th.addEventListener("click", function () {
        var numeric = th.classList.contains("num");
        var up = th.dataset.dir !== "up";
        table.querySelectorAll("th").forEach(function (o) { delete o.dataset.dir; });
        th.dataset.dir = up ? "up" : "down";
        var body = table.tBodies[0];
        var rows = Array.prototype.slice.call(body.rows);
        rows.sort(function (a, b) {
          var x = key(a.cells[col], numeric), y = key(b.cells[col], numeric);
          return (x < y ? -1 : x > y ? 1 : 0) * (up ? 1 : -1);
        });
        rows.forEach(function (r) { body.appendChild(r); });
      });
    });
  });
})();
"""

_STYLE = """
:root { --ink:#1f2a33; --paper:#f4f1ea; --card:#fffdf8; --rule:#d8d2c4; --accent:#00838f; --cg:#e8240f;
        --pass:#2e7d4f; --fail:#b3261e; --muted:#6b6f76; }
* { box-sizing: border-box; }
html { background: var(--paper); color: var(--ink); }
body { margin: 0; font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; }
.masthead { padding: 18px 28px 10px; border-bottom: 3px double var(--ink); background: var(--card); }
.brand { font-size: 12px; letter-spacing: .12em; text-transform: uppercase; color: var(--accent); }
h1 { margin: 2px 0 4px; font-size: 26px; }
.meta { margin: 0; color: var(--muted); font-size: 13px; }
.page-note { margin: 6px 0 0; color: var(--fail); font-size: 13px; }
nav { margin-top: 10px; display: flex; flex-wrap: wrap; gap: 4px 14px; font-size: 13px; }
nav a { color: var(--ink); text-decoration: none; border-bottom: 1px dotted var(--accent); }
main { padding: 8px 28px 24px; max-width: 1280px; }
section { margin: 22px 0; padding: 14px 18px; background: var(--card); border: 1px solid var(--rule);
          border-left: 5px solid var(--ink); }
h2 { margin: 0 0 10px; font-size: 19px; display: flex; align-items: baseline; gap: 10px; }
h2 .num { font: 600 13px ui-monospace, Menlo, Consolas, monospace; color: var(--card); background: var(--ink);
          padding: 1px 6px; }
h3 { font-size: 15px; margin: 16px 0 6px; }
.lede { font-size: 16px; margin: 0 0 12px; }
.tiles { display: flex; flex-wrap: wrap; gap: 10px; }
.tile { border: 1px solid var(--rule); padding: 8px 12px; min-width: 150px; background: var(--paper); }
.tile-label { display: block; font-size: 12px; color: var(--muted); text-transform: uppercase; letter-spacing: .06em; }
.tile-value { display: block; font: 600 22px ui-monospace, Menlo, Consolas, monospace; }
.tile-note { display: block; font-size: 12px; color: var(--muted); }
.scroll { overflow-x: auto; }
table.grid { border-collapse: collapse; font-size: 13px; margin: 4px 0 8px; }
table.grid th, table.grid td { border-bottom: 1px solid var(--rule); padding: 3px 10px 3px 0; text-align: left;
                               vertical-align: top; }
table.grid th { font-weight: 600; border-bottom: 2px solid var(--ink); white-space: nowrap; }
table.grid .num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.sortable th { cursor: pointer; }
table.sortable th[data-dir="up"]::after { content: " ▲"; font-size: 10px; }
table.sortable th[data-dir="down"]::after { content: " ▼"; font-size: 10px; }
table.parts td:first-child { font-family: ui-monospace, Menlo, Consolas, monospace; font-size: 12px; }
.chip { font: 600 11px ui-monospace, Menlo, Consolas, monospace; padding: 1px 6px; border-radius: 2px;
        color: #fff; }
.chip-pass { background: var(--pass); } .chip-fail { background: var(--fail); } .chip-none { background: var(--muted); }
.chip-unsure { background: #b36b00; }
.note { color: var(--muted); font-size: 13px; }
dl.conventions { display: grid; grid-template-columns: max-content 1fr; gap: 2px 14px; font-size: 13px; }
dl.conventions dt { font-weight: 600; }
dl.conventions dd { margin: 0; }
figure { margin: 10px 0 18px; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); background: #fff; }
figcaption { font-size: 13px; color: var(--muted); }
.view-wrap { display: flex; gap: 14px; flex-wrap: wrap; }
#mm-view { flex: 1 1 640px; height: 520px; min-width: 300px; border: 1px solid var(--rule); }
.view-side { flex: 0 1 240px; font-size: 13px; }
.view-side button { font: inherit; margin: 0 0 8px; padding: 3px 10px; border: 1px solid var(--ink);
                    background: var(--paper); cursor: pointer; }
label.swatch { display: block; margin: 3px 0; cursor: pointer; }
label.swatch span { display: inline-block; width: 12px; height: 12px; margin: 0 6px -1px 4px; border: 1px solid var(--ink); }
.key { display: inline-block; width: 10px; height: 10px; border-radius: 50%; }
.key.cg { background: var(--cg); } .key.slot { background: var(--accent); border-radius: 0; }
footer { padding: 10px 28px 30px; color: var(--muted); font-size: 13px; }
@media print {
  @page { size: A4; margin: 14mm 12mm; }
  html, .masthead, section { background: #fff; }
  body { font-size: 10.5pt; }
  nav, .view-side button, label.swatch input { display: none; }
  main { padding: 0; max-width: none; }
  section { border: none; border-top: 2px solid var(--ink); padding: 6px 0; margin: 10px 0; break-inside: auto; }
  .scroll { overflow: visible; }
  table.grid { font-size: 8.5pt; width: 100%; table-layout: auto; word-break: break-word; }
  table.grid .num { white-space: normal; }
  #mm-view { height: 90mm; flex-basis: 100%; }
  #mm-view canvas { max-width: 100%; height: auto !important; }
  figure { break-inside: avoid; }
}
"""
