"""The drawing sheet: rendered views composed with labels, legend, symbol key and title block (matplotlib, Agg).

Layout of the default sheet (four views): the side view top left, the top view under it (same stations, same
scale), the front view beside the side view (same heights, same scale), the isometric view bottom right (its own
scale); a column on the right holds the legend, the symbol key and the title block. Labels are placed in 2-D:
every anchor (CG, group CGs, ballast, axles, triad tips) is projected through the view's camera
(:meth:`massmodel.pictures.viewer.ViewCamera.project`) and its text box put where it overlaps nothing placed before.

The numbers of the title block come from :func:`massmodel.report.summary.build_report` (held by the scene).
"""

from __future__ import annotations

import textwrap
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.report.rules import dict_limit_text

from .paper import PANEL_BG, LabelPlacer, Rect, write_png_atomic
from .scene import BALLAST_COLOUR, CG_COLOUR, INK, SLOT_COLOUR, Scene
from .viewer import (
    TRIAD_COLOURS,
    VIEW_NAMES,
    VIEW_TITLES,
    RenderedView,
    ViewCamera,
    principal_axis_factor,
    render_views,
    triad_origin,
    view_camera,
)
from .viewer import view_span as _span

__all__ = [
    "SheetResult", "Panel", "render_sheet", "title_block_rows", "plan_panels", "write_png_atomic", "MIN_SIZE", "MAX_SIZE",
]

PAPER = "#efeadd"
MIN_SIZE = (640, 400)
MAX_SIZE = (8000, 8000)


@dataclass(frozen=True, slots=True)
class Panel:
    """One view on the sheet: frame rectangle, image rectangle (both x, y, w, h px, y down) and camera."""

    name: str
    frame: Rect
    image: Rect
    camera: ViewCamera


@dataclass
class SheetResult:
    """What :func:`render_sheet` drew, for callers and tests."""

    path: Path
    size: tuple[int, int]
    panels: list[Panel]
    views: list[RenderedView]
    legend: list[tuple[str, str]]
    legend_rects: list[tuple[str, str, Rect]]
    title_rows: list[tuple[str, str]]
    seconds: dict[str, float] = field(default_factory=dict)
    labels: list[tuple[str, Rect]] = field(default_factory=list)
    """Every placed label's text and its drawn box (x, y, width, height; sheet px, y down), measured by the
    renderer after drawing (text and its padding)."""


# --- numbers for the title block ------------------------------------------------------------------------------

def _m(v: float, digits: int = 4) -> str:
    return f"{v:.{digits}f}"


def model_uncertainty(model: Any) -> dict[str, float]:
    """Standard uncertainties (k = 1, RSS; SI) of the model's totals by quantity name, or {} when the model
    declares none (:mod:`massmodel.uncertainty`)."""
    from massmodel.uncertainty import rss_uncertainties
    from massmodel.uncertainty.inputs import declares_uncertainty

    if not declares_uncertainty(model):
        return {}
    return {name: est.u for name, est in rss_uncertainties(model).items()}


def title_block_rows(scene: Scene) -> list[tuple[str, str]]:
    """(label, text) rows of the title block, every number from the scene's report (SI, units written)."""
    rep = scene.report
    cg = rep["cg_m"]
    src = Path(rep["source"]).name if rep["source"] else "(built in Python)"
    u = model_uncertainty(scene.model)
    rows = [
        ("model", str(rep["model"])),
        ("file", src),
        ("total mass", f"{rep['mass_kg']:.2f} kg · {len(rep['components'])} parts"),
        ("CG x / y / z", f"{_m(cg[0])} / {_m(cg[1])} / {_m(cg[2])} m, model axes"),
    ]
    if "cg_height_m" in rep:
        rows.append(("CG height", f"{_m(rep['cg_height_m'])} m above ground"))
        rows.append(("CG to front axle", f"{_m(rep['cg_behind_front_axle_m'])} m behind"))
        ff = rep["front_fraction"]
        rows.append(("front mass fraction", f"{ff:.4f} ({100 * ff:.2f} %)"))
    if u:  # standard uncertainties (k = 1, RSS) of the totals above
        parts = [f"mass ± {u['mass']:.2f} kg"]
        if "cg_height" in u:
            parts += [f"CG height ± {1e3 * u['cg_height']:.1f} mm", f"front ± {u['front_fraction']:.4f}"]
        rows.append(("uncertainty, k = 1", " · ".join(parts)))
    else:
        rows.append(("vehicle", "none declared: no ground, axles or balance"))
    rules = rep["rules"]
    if rules:
        failed = sum(1 for r in rules if not r["passed"])
        status = "all pass" if failed == 0 else f"{failed} FAIL"
        rows.append(("rule checks", f"{len(rules) - failed} of {len(rules)} pass · {status}"))
    else:
        rows.append(("rule checks", "none in the model"))
    return rows


# --- layout ------------------------------------------------------------------------------------------------------

def _units(size: tuple[int, int]) -> float:
    return max(0.45, min(size[0] / 2000.0, size[1] / 1400.0))


def _frame(size: tuple[int, int]) -> tuple[float, float, float, float, float]:
    """(x0, y0, width, height, strip height) of the drawing area above the information strip, px."""
    w, h = size
    u = _units(size)
    x0 = y0 = 24 * u
    strip = min(max(0.26 * h, 250 * u), 0.4 * h)
    return x0, y0, w - 2 * x0, h - 2 * y0 - strip - 14 * u, strip


def plan_panels(scene: Scene, size: tuple[int, int], views: tuple[str, ...]) -> list[Panel]:
    """Panel rectangles and cameras; with all four views the side, top and front views share one scale.

    Four views: side (top left) and top (bottom left) share the stations, side and front (top right) share the
    heights, the isometric view takes the bottom right; the information strip runs under them.
    """
    u = _units(size)
    gap, header, pad = 14 * u, 28 * u, 44 * u
    x0, y0, pw, ph, _ = _frame(size)
    if len(views) == 1:
        frame = (x0, y0, pw, ph)
        image = (x0, y0 + header, pw, ph - header)
        cam = view_camera(scene, views[0], int(image[2]), int(image[3]), margin_px=pad)
        return [Panel(views[0], frame, image, cam)]
    ls, hs = _span(scene, "side")
    wt = _span(scene, "top")[1]
    wf = _span(scene, "front")[0]
    s = min((pw - gap - 4 * pad) / (ls + wf), (ph - gap - 4 * pad - 2 * header) / (hs + wt))
    wl = s * ls + 2 * pad
    ht = s * hs + 2 * pad + header
    # leftover width goes to the right column, leftover height to the bottom row (the isometric view grows)
    wr = pw - gap - wl
    hb = ph - gap - ht
    frames = {
        "side": (x0, y0, wl, ht),
        "front": (x0 + wl + gap, y0, wr, ht),
        "top": (x0, y0 + ht + gap, wl, hb),
        "iso": (x0 + wl + gap, y0 + ht + gap, wr, hb),
    }
    panels = []
    for name in views:
        fx, fy, fw, fh = frames[name]
        image = (fx, fy + header, fw, fh - header)
        if name == "iso":
            cam = view_camera(scene, name, int(fw), int(fh - header), margin_px=pad)
        else:
            cam = view_camera(scene, name, int(fw), int(fh - header), scale=s)
        panels.append(Panel(name, (fx, fy, fw, fh), image, cam))
    return panels


# --- the sheet -----------------------------------------------------------------------------------------------------

def _pt(px: float) -> float:
    """Font size in points for a height in pixels at 100 dpi."""
    return px * 0.72


def render_sheet(scene: Scene, path: str | Path, size: tuple[int, int] = (2000, 1400), view: str = "sheet") -> SheetResult:
    """Render the views off-screen and compose the sheet into a PNG (written atomically).

    Parameters
    ----------
    scene : Scene
    path : str or Path
        Output ``.png``.
    size : (int, int)
        Sheet width and height, px.
    view : str
        'sheet' (four views) or one of :data:`~massmodel.pictures.viewer.VIEW_NAMES`.
    """
    out = Path(path)
    if out.suffix.lower() != ".png":
        raise UsageError(f"output '{out}': the picture is written as PNG, so the file name must end in .png")
    w, h = (int(v) for v in size)
    if not (MIN_SIZE[0] <= w <= MAX_SIZE[0] and MIN_SIZE[1] <= h <= MAX_SIZE[1]):
        raise UsageError(f"size {w}x{h} px: width must lie in {MIN_SIZE[0]}..{MAX_SIZE[0]} and height in "
                         f"{MIN_SIZE[1]}..{MAX_SIZE[1]}")
    views = VIEW_NAMES if view == "sheet" else (view,)
    if view != "sheet" and view not in VIEW_NAMES:
        raise UsageError(f"unknown view {view!r}; choose sheet, {', '.join(VIEW_NAMES)}")
    t0 = time.perf_counter()
    panels = plan_panels(scene, (w, h), views)
    rendered = render_views(scene, [p.camera for p in panels])
    t1 = time.perf_counter()
    result = _compose(scene, panels, rendered, (w, h), out)
    result.seconds.update(
        {"mesh": scene.mesh_seconds, "render": t1 - t0, "compose": time.perf_counter() - t1,
         "rays": sum(r.ray_seconds for r in rendered),
         **{f"view_{r.camera.name}": r.seconds for r in rendered}}
    )
    return result


def _compose(scene: Scene, panels: list[Panel], rendered: list[RenderedView], size: tuple[int, int], out: Path) -> SheetResult:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from matplotlib.patches import Rectangle

    w, h = size
    u = _units(size)
    fig = Figure(figsize=(w / 100.0, h / 100.0), dpi=100, facecolor=PAPER)
    canvas = FigureCanvasAgg(fig)
    ax = fig.add_axes((0, 0, 1, 1))
    ax.set_xlim(0, w)
    ax.set_ylim(h, 0)
    ax.axis("off")
    ax.patch.set_visible(False)
    renderer = canvas.get_renderer()
    placer = LabelPlacer(fig, ax, renderer)
    font: dict[str, Any] = {"family": "DejaVu Sans", "color": INK}
    mono: dict[str, Any] = {"family": "DejaVu Sans Mono", "color": INK}

    # sheet border: a heavy outer line and a thin inner one
    m = 14 * u
    ax.add_artist(Rectangle((m - 6 * u, m - 6 * u), w - 2 * m + 12 * u, h - 2 * m + 12 * u, fill=False, ec=INK,
                           lw=2.2 * u + 0.6))
    ax.add_artist(Rectangle((m, m), w - 2 * m, h - 2 * m, fill=False, ec=INK, lw=0.7))

    under: list[tuple[npt.NDArray[np.uint8], int, int]] = []
    for panel, rv in zip(panels, rendered, strict=True):
        fx, fy, fw, fh = panel.frame
        ix, iy, iw, ih = panel.image
        under.append((rv.image, int(round(ix)), int(round(iy))))
        ax.add_artist(Rectangle((fx, fy), fw, fh, fill=False, ec=INK, lw=1.1, zorder=3))
        ax.add_artist(Rectangle((fx, fy), fw, iy - fy, fc="#e3dccb", ec=INK, lw=1.1, zorder=3))
        ax.text(fx + 10 * u, fy + (iy - fy) / 2, VIEW_TITLES[panel.name], va="center", ha="left",
                fontsize=_pt(15 * u), weight="bold", zorder=4, **font)
        placer.reserve((fx, fy, fw, iy - fy))
        _annotate_panel(scene, panel, placer, ax, u, font, single=len(panels) == 1)

    legend_rects = _info_strip(scene, ax, size, u, font, mono)
    rows = title_block_rows(scene)
    write_png_atomic(fig, out, under=under)
    return SheetResult(
        path=out, size=size, panels=panels, views=rendered,
        legend=[(e.label, e.colour) for e in scene.legend], legend_rects=legend_rects, title_rows=rows,
        labels=[(text, _drawn_box(artist, renderer, h)) for text, artist in placer.placed],
    )


def _drawn_box(artist: Any, renderer: Any, height: float) -> Rect:
    """The drawn extent of a text artist (after the figure was drawn), sheet px with y down."""
    bb = artist.get_window_extent(renderer)
    return (float(bb.x0), float(height - bb.y1), float(bb.width), float(bb.height))


def _to_sheet(panel: Panel, pts: npt.ArrayLike) -> npt.NDArray[np.float64]:
    xy = panel.camera.project(pts)
    return xy + np.array([panel.image[0], panel.image[1]])


def _scale_bar(panel: Panel, ax: Any, placer: LabelPlacer, u: float, font: dict[str, Any]) -> None:
    from matplotlib.patches import Rectangle

    ix, iy, iw, ih = panel.image
    s = panel.camera.scale
    iso = panel.name == "iso"
    eff = s * (np.sqrt(2.0 / 3.0) if iso else 1.0)  # an isometric view shortens every axis by sqrt(2/3)
    want = 0.22 * iw / eff
    length = min((v for v in (0.05, 0.1, 0.2, 0.25, 0.5, 1.0, 2.0, 5.0, 10.0) if v >= want * 0.6), default=10.0)
    bar = length * eff
    x1 = ix + iw - 16 * u
    x0 = x1 - bar
    y = iy + ih - 22 * u
    n = 5 if length in (0.5, 1.0, 0.05, 5.0, 10.0) else 4
    for k in range(n):
        ax.add_artist(Rectangle((x0 + k * bar / n, y), bar / n, 6 * u, fc=INK if k % 2 == 0 else PANEL_BG, ec=INK,
                               lw=0.8, zorder=5))
    label = f"{length:g} m" + (" along an axis" if iso else "")
    ax.text(x1, y - 3 * u, label, ha="right", va="bottom", fontsize=_pt(12 * u), zorder=6, **font)
    tw, th = placer.measure(label, fontsize=_pt(12 * u), **font)
    if tw < bar - 14 * u:
        ax.text(x0, y - 3 * u, "0", ha="left", va="bottom", fontsize=_pt(12 * u), zorder=6, **font)
    placer.reserve((min(x0, x1 - tw) - 4, y - 3 * u - th - 4, max(bar, tw) + 8, th + 6 * u + 10))


def _annotate_panel(
    scene: Scene, panel: Panel, placer: LabelPlacer, ax: Any, u: float, font: dict[str, Any], single: bool
) -> None:
    from matplotlib.patches import Circle, Polygon

    ix, iy, iw, ih = panel.image
    bounds = (ix + 2, iy + 2, iw - 4, ih - 4)
    labels = scene.options.labels
    _scale_bar(panel, ax, placer, u, font)
    # ground hatch under the ground line where the ground is seen edge-on
    rect = scene.ground_rectangle()
    if rect is not None and panel.name in ("side", "front"):
        gp = _to_sheet(panel, rect)
        gy = float(gp[:, 1].mean())
        gx0, gx1 = float(gp[:, 0].min()), float(gp[:, 0].max())
        band = 10 * u
        ax.add_artist(Polygon([(gx0, gy), (gx1, gy), (gx1, gy + band), (gx0, gy + band)], closed=True,
                             fc="none", ec="#8c826c", hatch="////", lw=0, zorder=2))
        ax.plot([gx0, gx1], [gy, gy], color=INK, lw=1.6 * u + 0.4, zorder=3)
        placer.reserve((gx0, gy - 2, gx1 - gx0, band + 2))
        if labels:
            g = scene.ground if scene.ground is not None else 0.0
            up_name = scene.axis_labels[2].split(" ")[0]
            where = f"{up_name[1:]} = {g:.3f} m" if len(up_name) == 2 else f"{g:.3f} m along up"
            placer.place((gx1, gy + band), f"ground, {where}", bounds, distances=(4.0, 20.0),
                         prefer="sw", fontsize=_pt(11 * u), **font)
    # CG: a ring around the rendered marker and the coordinates
    cg_px = _to_sheet(panel, scene.cg)[0]
    r = 9.0 + 4.0
    ax.add_artist(Circle(tuple(cg_px), r, fill=False, ec=INK, lw=1.6, zorder=4))
    ax.plot([cg_px[0] - r - 6, cg_px[0] - r + 2], [cg_px[1]] * 2, color=INK, lw=1.4, zorder=4)
    ax.plot([cg_px[0] + r - 2, cg_px[0] + r + 6], [cg_px[1]] * 2, color=INK, lw=1.4, zorder=4)
    ax.plot([cg_px[0]] * 2, [cg_px[1] - r - 6, cg_px[1] - r + 2], color=INK, lw=1.4, zorder=4)
    ax.plot([cg_px[0]] * 2, [cg_px[1] + r - 2, cg_px[1] + r + 6], color=INK, lw=1.4, zorder=4)
    placer.reserve((cg_px[0] - r - 7, cg_px[1] - r - 7, 2 * r + 14, 2 * r + 14))
    cg = scene.report["cg_m"]
    text = f"CG  ({cg[0]:.3f}, {cg[1]:.3f}, {cg[2]:.3f}) m"
    if "cg_height_m" in scene.report:
        text += f"\n{scene.report['cg_height_m'] * 1e3:.1f} mm above ground"
    placer.place(cg_px, text, bounds, distances=(34.0, 60.0, 95.0, 140.0), leader=CG_COLOUR, prefer="ne",
                 box={"fc": "#fffdf8", "ec": CG_COLOUR, "lw": 1.4, "alpha": 0.95},
                 fontsize=_pt(14 * u), weight="bold", **font)
    # axis triad labels
    origin, length = triad_origin(scene)
    o_px = _to_sheet(panel, origin)[0]
    for vec, name, colour in zip(scene.basis, scene.axis_labels, TRIAD_COLOURS, strict=True):
        tip = _to_sheet(panel, origin + length * vec)[0]
        if np.linalg.norm(tip - o_px) < 12:
            facing = float(vec @ panel.camera.toward)
            name = f"{name} ({'out of' if facing > 0 else 'into'} sheet)"
            tip = o_px
        placer.place(tip, name, bounds, distances=(6.0, 18.0, 34.0), prefer="ne" if name.endswith("up") else "se",
                     fontsize=_pt(11.5 * u), **{**font, "color": colour})
    if not labels:
        return
    # ballast: one label a slot (slot, part or number of pieces, total mass), so stacked plates read once
    by_slot: dict[str, list[int]] = {}
    for i in scene.ballast:
        by_slot.setdefault(scene.model.components[i].slot or "", []).append(i)
    for slot, members in by_slot.items():
        v = scene.vertices[np.unique(scene.faces[np.isin(scene.owner, members)])]
        c = _to_sheet(panel, 0.5 * (v.min(axis=0) + v.max(axis=0)))[0]
        placer.place(c, ballast_label(scene.model, slot, members), bounds, leader=BALLAST_COLOUR,
                     prefer="se", distances=(22.0, 44.0, 80.0, 130.0), fontsize=_pt(11.5 * u),
                     **{**font, "color": BALLAST_COLOUR})
    # axles
    if scene.contact_points is not None and panel.name in ("side", "top"):
        cp = scene.contact_points
        st = scene.axle_stations or (0.0, 0.0)
        for name, a, b, station in (("front axle", cp[0], cp[1], st[0]), ("rear axle", cp[2], cp[3], st[1])):
            p = _to_sheet(panel, a if panel.name == "top" else 0.5 * (a + b))[0]
            placer.place(p, f"{name} {station:+.3f} m", bounds, prefer="s", distances=(16.0, 30.0, 50.0),
                         fontsize=_pt(11 * u), **font)
    # group CG and slot names where the view is not crowded (side and top views, or a single view)
    if panel.name not in ("side", "top") and not single:
        return
    for marker in (m for m in scene.group_markers if m.in_material):
        p = _to_sheet(panel, marker.center)[0]
        placer.place(p, marker.name, bounds, leader="#6d7378", prefer="nw", distances=(10.0, 24.0, 42.0, 64.0),
                     fontsize=_pt(11 * u), **{**font, "color": INK})
    # slots
    for name, edges in scene.slot_edges:
        if name in by_slot:  # the ballast label names its slot
            continue
        pts = edges.reshape(-1, 3)
        p = _to_sheet(panel, pts)
        corner = (p[:, 0].max(), p[:, 1].min())
        placer.place(corner, f"slot {name}", bounds, leader=SLOT_COLOUR, prefer="ne", distances=(8.0, 26.0, 48.0),
                     fontsize=_pt(10.5 * u), **{**font, "color": SLOT_COLOUR})
    # principal axes
    if scene.options.principal_axes and scene.mass > 0:
        half = principal_axis_factor(scene)
        for k, (a, rad) in enumerate(zip(scene.axes, scene.radii, strict=True), start=1):
            p = _to_sheet(panel, scene.cg + half * rad * a)[0]
            if np.linalg.norm(p - cg_px) > 24:
                placer.place(p, f"{k}", bounds, distances=(6.0, 14.0), prefer="ne", fontsize=_pt(11 * u),
                             weight="bold", **font)


def ballast_label(model: Any, slot: str, members: list[int]) -> str:
    """The label of the ballast in one slot: ``"slot: part 7.66 kg"`` or ``"slot: 3 pieces 7.66 kg"``."""
    mass = sum(model.components[i].props.mass for i in members)
    what = model.components[members[0]].path.split("/")[-1] if len(members) == 1 else f"{len(members)} pieces"
    return f"{slot or 'no slot'}: {what} {mass:.2f} kg"


def _header(ax: Any, x: float, y: float, width: float, text: str, u: float, font: dict[str, Any]) -> float:
    from matplotlib.patches import Rectangle

    ax.add_artist(Rectangle((x, y), width, 28 * u, fc="#e3dccb", ec=INK, lw=1.1))
    ax.text(x + 10 * u, y + 14 * u, text, va="center", fontsize=_pt(15 * u), weight="bold", **font)
    return y + 36 * u


def _info_strip(scene: Scene, ax: Any, size: tuple[int, int], u: float, font: dict[str, Any],
                mono: dict[str, Any]) -> list[tuple[str, str, Rect]]:
    """Legend, symbol key and title block side by side under the views; returns the legend swatch rectangles."""
    from matplotlib.patches import Circle, Rectangle, RegularPolygon

    w, h = size
    x0, y0, pw, ph, strip = _frame(size)
    top = y0 + ph + 14 * u
    bottom = top + strip
    gap = 14 * u
    w_legend, w_key = 0.29 * pw, 0.27 * pw
    w_title = pw - w_legend - w_key - 2 * gap
    line = 21 * u
    fs = _pt(13 * u)
    # legend (two columns when the entries do not fit in one)
    y = _header(ax, x0, top, w_legend, f"LEGEND · {scene.legend_title}", u, font)
    rows_fit = max(1, int((bottom - y) // line))
    cols = 1 if len(scene.legend) <= rows_fit else 2
    col_w = w_legend / cols
    rects: list[tuple[str, str, Rect]] = []
    for k, e in enumerate(scene.legend[: rows_fit * cols]):
        cx = x0 + (k // rows_fit) * col_w
        cy = y + (k % rows_fit) * line
        sw = (cx + 8 * u, cy + 4 * u, 24 * u, line - 8 * u)
        ax.add_artist(Rectangle(sw[:2], sw[2], sw[3], fc=e.colour, ec=INK, lw=0.7))
        rects.append((e.label, e.colour, sw))
        ax.text(cx + 40 * u, cy + line / 2, e.label, va="center", fontsize=fs if cols == 1 else fs * 0.85, **font)
        if e.mass is not None and cols == 1:
            share = f"{100 * e.share:5.1f} %" if e.share is not None else ""
            ax.text(cx + col_w - 8 * u, cy + line / 2, f"{e.mass:8.2f} kg  {share}", va="center", ha="right",
                    fontsize=fs, **mono)
    # symbol key
    kx = x0 + w_legend + gap
    y = _header(ax, kx, top, w_key, "SYMBOLS", u, font)
    half = principal_axis_factor(scene)
    radii = scene.radii
    keys: list[tuple[str, str]] = [
        ("total CG, drawn over the parts", "cg"),
        ("group CG (small, unlabelled: between its parts)", "group"),
        ("ballast: a part placed in a slot", "ballast"),
        ("slot envelope (wire)", "slot"),
        (f"principal axes 1-2-3 at the CG, half-length {half:g} k;\n"
         f"radii of gyration k = {radii[0]:.3f} / {radii[1]:.3f} / {radii[2]:.3f} m", "axes"),
        ("wheel contact point on the ground, axle line", "contact"),
        ("see-through: a part hiding the CG or ballast", "clear"),
    ]
    for text, kind in keys:
        cx, cy = kx + 22 * u, y + line / 2
        if kind == "cg":
            ax.add_artist(Circle((cx, cy), 6 * u, fc=CG_COLOUR, ec="none"))
            ax.add_artist(Circle((cx, cy), 9 * u, fill=False, ec=INK, lw=1.3))
        elif kind == "group":
            ax.add_artist(RegularPolygon((cx, cy), 4, radius=7 * u, fc="#8e9499", ec=INK, lw=0.9))
        elif kind == "ballast":
            ax.add_artist(Rectangle((cx - 11 * u, cy - 6 * u), 22 * u, 12 * u, fill=False, ec=BALLAST_COLOUR, lw=2.4))
        elif kind == "slot":
            ax.add_artist(Rectangle((cx - 12 * u, cy - 7 * u), 24 * u, 14 * u, fill=False, ec=SLOT_COLOUR, lw=1.6))
        elif kind == "axes":
            ax.plot([cx - 13 * u, cx + 13 * u], [cy, cy], color=INK, lw=2)
            ax.plot([cx - 13 * u, cx + 13 * u], [cy, cy], "o", color=INK, ms=3)
        elif kind == "contact":
            ax.add_artist(RegularPolygon((cx, cy - 2 * u), 3, radius=7 * u, orientation=np.pi, fc=INK, ec=INK))
            ax.plot([cx - 14 * u, cx + 14 * u], [cy + 5 * u, cy + 5 * u], color=INK, lw=1.2)
        else:
            ax.add_artist(Rectangle((cx - 11 * u, cy - 7 * u), 22 * u, 14 * u, fc="#9b6a4f", alpha=0.3, ec="#9aa1a6"))
        ax.text(kx + 44 * u, cy, text, va="center", fontsize=_pt(12 * u), linespacing=1.3, **font)
        y += line * (1.0 + 0.9 * text.count("\n"))
    # title block
    tx = kx + w_key + gap
    rows = title_block_rows(scene)
    ax.add_artist(Rectangle((tx, top), w_title, strip, fc="#fbf9f4", ec=INK, lw=2.0))
    ax.add_artist(Rectangle((tx, top), w_title, 28 * u, fc=INK, ec=INK, lw=1.0))
    ax.text(tx + 10 * u, top + 14 * u, "massmodel · mass-properties sheet", va="center", fontsize=_pt(14 * u),
            weight="bold", **{**font, "color": "#fbf9f4"})
    row_h = min(24 * u, (strip - 28 * u) * 0.62 / max(len(rows), 1))
    yy = top + 28 * u
    split = tx + 0.3 * w_title
    for label, value in rows:
        ax.plot([tx, tx + w_title], [yy + row_h, yy + row_h], color=INK, lw=0.6)
        fail = label == "rule checks" and "FAIL" in value
        ax.text(tx + 8 * u, yy + row_h / 2, label.upper(), va="center", fontsize=_pt(10.5 * u), **font)
        ax.text(split + 8 * u, yy + row_h / 2, value, va="center", fontsize=_pt(13 * u),
                weight="bold" if label in ("model", "total mass", "rule checks") else "normal",
                **{**mono, "color": "#b3261e" if fail else INK})
        yy += row_h
    ax.plot([split, split], [top + 28 * u, yy], color=INK, lw=0.6)
    notes = _caution_lines(scene, w_title, u)
    note_h = min(15 * u, (top + strip - yy - 6 * u) / max(len(notes), 1))
    yy += 4 * u
    for text in notes:
        fail = text.startswith("FAIL")
        ax.text(tx + 8 * u, yy + note_h / 2, text, va="center", fontsize=_pt(min(11 * u, note_h * 0.8)),
                style="normal" if fail else "italic", **{**font, "color": "#b3261e" if fail else INK})
        yy += note_h
    return rects


def _caution_lines(scene: Scene, cw: float, u: float) -> list[str]:
    width = max(30, int(cw / (6.4 * u)))
    lines: list[str] = []
    for failed in (r for r in scene.report["rules"] if not r["passed"]):
        lines.extend(textwrap.wrap(f"FAIL {failed['name']}: {failed['value']['value']:.4g} "
                                   f"{failed['value']['unit']} (limit {dict_limit_text(failed)})", width))
    for c in scene.report["cautions"]:
        lines.extend(textwrap.wrap(c, width))
    return lines
