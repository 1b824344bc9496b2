"""The CG chart: a flat side view (station forward, height above ground) with the limits the rules imply.

Where a flat drawing reads better than a 3-D picture: the total CG and the group CGs against the axles and the
ground, and the CG positions the rules allow for the model's current mass:

- ``min_axle_load`` rules bound the CG station: with wheelbase L, total mass m, front load F = m·a2/L and rear
  load R = m·a1/L (a1, a2 the CG's distances behind the front and ahead of the rear axle), F ≥ F_min and
  R ≥ R_min give  rear + L·F_min/m  ≤  station  ≤  front − L·R_min/m;
- a ``front_fraction`` rule [lo, hi] gives  rear + lo·L  ≤  station  ≤  rear + hi·L  (F/m = a2/L);
- a ``max_cg_height`` rule is a line at that height above the ground.

Mass rules (``min_mass``, ``min_group_mass``) bound no position; their status is written in the chart's notes.
Drawn with matplotlib's Agg canvas (no display needed).

References
----------
.. [1] Jazar, *Vehicle Dynamics: Theory and Application*, Springer (2008), ch. 2, eqs. 2.1–2.2 from memory (axle loads of a
   parked car on level ground: F_front = m g a2 / l, F_rear = m g a1 / l).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.model import Model, RuleCheck
from massmodel.core.shapes import PointMass

from .paper import write_png_atomic
from .scene import CG_COLOUR, INK, PALETTE, group_key

__all__ = ["StationBand", "CgChart", "station_bands", "height_limit", "render_cg_chart"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class StationBand:
    """A range of CG stations (``forward · p``, m) that a rule allows; None for an open end."""

    name: str
    low: float | None
    high: float | None

    def contains(self, station: float) -> bool:
        return (self.low is None or station >= self.low) and (self.high is None or station <= self.high)

    def shift_needed(self, station: float) -> float:
        """Signed move of the CG along ``forward`` (m) to reach the band (0 inside)."""
        if self.low is not None and station < self.low:
            return self.low - station
        if self.high is not None and station > self.high:
            return self.high - station
        return 0.0


def station_bands(model: Model) -> list[StationBand]:
    """Station ranges implied by the model's axle-load and front-share rules for its current mass (see module)."""
    v = model.vehicle
    if v is None:
        return []
    m = model.mass_properties().mass
    if m <= 0:
        return []
    lw, front, rear = v.wheelbase, v.front_axle_station, v.rear_axle_station
    bands: list[StationBand] = []
    f_min = [r.limit for r in model.rules if r.check is RuleCheck.MIN_AXLE_LOAD and r.axle == "front" and r.limit]
    r_min = [r.limit for r in model.rules if r.check is RuleCheck.MIN_AXLE_LOAD and r.axle == "rear" and r.limit]
    if f_min or r_min:
        low = rear + lw * max(f_min) / m if f_min else None
        high = front - lw * max(r_min) / m if r_min else None
        bands.append(StationBand("axle-load minimums", low, high))
    for r in model.rules:
        if r.check is RuleCheck.FRONT_FRACTION:
            low = rear + r.minimum * lw if r.minimum is not None else None
            high = rear + r.maximum * lw if r.maximum is not None else None
            bands.append(StationBand(f"front share {r.minimum or 0:.3f}..{r.maximum or 1:.3f}", low, high))
    return bands


def height_limit(model: Model) -> float | None:
    """The lowest ``max_cg_height`` limit of the rules, m above the ground (None when there is none)."""
    limits = [r.limit for r in model.rules if r.check is RuleCheck.MAX_CG_HEIGHT and r.limit is not None]
    return min(limits) if limits else None


@dataclass
class CgChart:
    """What :func:`render_cg_chart` drew: CG station and height (m), the bands, the height limit and notes."""

    path: Path
    size: tuple[int, int]
    station: float
    height: float
    bands: list[StationBand]
    height_limit: float | None
    notes: list[str] = field(default_factory=list)
    labels: list[tuple[str, tuple[float, float, float, float]]] = field(default_factory=list)
    """Every label's text and drawn box (x0, y0, x1, y1; figure px, y up), measured after drawing."""


def _hull(points: FloatArray) -> FloatArray:
    """Convex hull (K, 2) of 2-D points, counter-clockwise (Andrew's monotone chain)."""
    pts = np.unique(np.round(points, 6), axis=0)
    if len(pts) < 3:
        return pts

    def half(seq: list[tuple[float, float]]) -> list[tuple[float, float]]:
        out: list[tuple[float, float]] = []
        for p in seq:
            while len(out) >= 2 and (
                (out[-1][0] - out[-2][0]) * (p[1] - out[-2][1]) - (out[-1][1] - out[-2][1]) * (p[0] - out[-2][0]) <= 0
            ):
                out.pop()
            out.append(p)
        return out

    seq = [(float(x), float(y)) for x, y in pts]
    lower = half(seq)
    upper = half(seq[::-1])
    return np.array(lower[:-1] + upper[:-1])


def _side_outlines(model: Model, chord: float = 0.01) -> list[tuple[str, FloatArray]]:
    """(top-level group, hull (K, 2) in (station, height above ground)) of every part with a volume."""
    v = model.vehicle
    assert v is not None
    out = []
    cache: dict[Any, FloatArray] = {}
    for c in model.components:
        if isinstance(c.shape, PointMass):
            continue
        if c.shape not in cache:
            cache[c.shape] = np.asarray(c.shape.mesh_arrays(chord)[0], float)
        pts = c.pose.apply(cache[c.shape])
        xy = np.stack([pts @ v.forward, pts @ v.up - v.ground_level], axis=1)
        out.append((group_key(c.path, 1), _hull(xy)))
    return out


def render_cg_chart(model: Model, path: str | Path, size: tuple[int, int] = (1800, 1200)) -> CgChart:
    """Draw the CG chart of a model with a ``[vehicle]`` into a PNG (written atomically).

    Parameters
    ----------
    model : Model
    path : str or Path
        Output ``.png``.
    size : (int, int)
        Width and height, px.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from matplotlib.patches import Ellipse, Polygon, Rectangle

    out = Path(path)
    if out.suffix.lower() != ".png":
        raise UsageError(f"output '{out}': the chart is written as PNG, so the file name must end in .png")
    v = model.vehicle
    if v is None:
        raise UsageError(f"model '{model.name}' ({model.source or 'in memory'}) has no [vehicle] section: "
                         "a CG chart needs axles and a ground")
    w, h = (int(x) for x in size)
    if not (600 <= w <= 8000 and 400 <= h <= 8000):
        raise UsageError(f"size {w}x{h} px: width must lie in 600..8000 and height in 400..8000")
    total = model.mass_properties()
    station = float(v.forward @ total.center)
    height = float(v.up @ total.center) - v.ground_level
    bands = station_bands(model)
    hmax = height_limit(model)
    cg_u = _cg_uncertainty(model)
    front, rear = v.front_axle_station, v.rear_axle_station
    u = min(w / 1800.0, h / 1200.0)

    fig = Figure(figsize=(w / 100.0, h / 100.0), dpi=100, facecolor="#efeadd")
    canvas = FigureCanvasAgg(fig)
    fig.text(0.015, 0.975, f"CG chart · {model.name}", fontsize=20 * u, weight="bold", color=INK, va="top")
    fig.text(0.015, 0.94, "side view: station along forward (front to the right) and height above the ground, m; "
             f"limits from the rules for the current mass {total.mass:.2f} kg", fontsize=11.5 * u, color=INK, va="top")
    ax = fig.add_axes((0.055, 0.44, 0.92, 0.47))
    zoom = fig.add_axes((0.055, 0.07, 0.56, 0.3))
    notes_ax = fig.add_axes((0.64, 0.07, 0.345, 0.3))
    notes_ax.axis("off")

    groups = sorted({group_key(c.path, 1) for c in model.components})
    colour = {g: PALETTE[k % len(PALETTE)] for k, g in enumerate(groups)}
    outlines = _side_outlines(model)
    all_xy = np.vstack([o for _, o in outlines]) if outlines else np.array([[station, height]])
    x_lo = min(all_xy[:, 0].min(), rear) - 0.25
    x_hi = max(all_xy[:, 0].max(), front) + 0.25
    y_hi = max(all_xy[:, 1].max(), hmax or 0.0, height) + 0.2

    band_colours = ("#4f8a5b", "#4d648d", "#8c5e8f")
    group_cgs = []
    for g in groups:
        members = [c for c in model.components if group_key(c.path, 1) == g]
        gm = float(sum(c.props.mass for c in members))
        gc = sum(c.props.mass * c.props.center for c in members) / gm
        group_cgs.append((g, gm, float(v.forward @ gc), float(v.up @ gc) - v.ground_level))
    in_material = _groups_in_material(outlines, group_cgs)
    for target, is_zoom in ((ax, False), (zoom, True)):
        target.set_facecolor("#fbf9f4")
        if not is_zoom:
            for g, hull in outlines:
                target.add_patch(Polygon(hull, closed=True, fc=colour[g], ec=colour[g], alpha=0.16, lw=0.6))
        target.axhline(0.0, color=INK, lw=1.6)
        target.add_patch(Rectangle((x_lo - 10, -0.05), x_hi - x_lo + 20, 0.05, fc="none", ec="#8c826c", hatch="///",
                                   lw=0))
        for st, name in ((front, "front axle"), (rear, "rear axle")):
            target.axvline(st, color=INK, lw=1.0, ls=(0, (8, 3, 2, 3)))
            target.plot([st], [0.0], marker="^", ms=12 * u, color=INK, clip_on=False)
            if not is_zoom:  # kept inside the axes' width so that it is never cut at the figure's edge
                frac = (st - x_lo) / (x_hi - x_lo)
                ha = "left" if frac < 0.08 else ("right" if frac > 0.92 else "center")
                target.text(st, 1.01, f"{name} {st:+.3f} m", ha=ha, va="bottom", fontsize=10.5 * u, color=INK,
                            transform=target.get_xaxis_transform())
        for k, b in enumerate(bands):
            lo = b.low if b.low is not None else x_lo - 10
            hi = b.high if b.high is not None else x_hi + 10
            col = band_colours[k % len(band_colours)]
            if is_zoom:
                target.axvspan(lo, hi, color=col, alpha=0.13, lw=0)
                for edge in (b.low, b.high):
                    if edge is not None:
                        target.axvline(edge, color=col, lw=1.8)
                target.text(0.5 * (max(lo, x_lo) + min(hi, x_hi)), 0.98 - 0.07 * k, b.name, ha="center", va="top",
                            fontsize=10 * u, color=col, weight="bold", transform=target.get_xaxis_transform(),
                            clip_on=True)
            else:
                yb = -0.085 - 0.042 * k
                target.add_patch(Rectangle((lo, yb - 0.013), hi - lo, 0.026, fc=col, ec=col, alpha=0.8))
                target.text(min(hi, x_hi) + 0.03, yb, b.name + " (allowed CG stations)", ha="left", va="center",
                            fontsize=9.5 * u, color=col, weight="bold")
        if hmax is not None:
            target.axhline(hmax, color="#b3261e", lw=1.5, ls="--")
            target.text(0.995, hmax, f"max CG height {hmax:.3f} m ", ha="right", va="bottom", fontsize=10 * u,
                        color="#b3261e", transform=target.get_yaxis_transform())
        for g, gm, gx, gy in group_cgs:
            size_pt = (6 + 14 * np.sqrt(gm / total.mass)) * u * (1.0 if g in in_material else 0.5)
            target.plot([gx], [gy], marker="D", ms=size_pt, mfc=colour[g], mec=INK, mew=0.8, zorder=4)
        if cg_u is not None:  # ± 2 standard uncertainties of station and height (k = 2), correlation not drawn
            target.add_patch(Ellipse((station, height), 4 * cg_u[0], 4 * cg_u[1], fc=CG_COLOUR, ec=CG_COLOUR,
                                     alpha=0.18, lw=1.2, zorder=5))
        target.plot([station], [height], marker="o", ms=16 * u, mfc=CG_COLOUR, mec=INK, mew=1.6, zorder=6)
        target.plot([station], [height], marker="+", ms=30 * u, color=INK, mew=1.4, zorder=6)
        target.grid(True, color="#d8d0bd", lw=0.6)
        target.tick_params(labelsize=10 * u, colors=INK)
    ax.set_xlim(x_lo, x_hi)
    ax.set_ylim(-0.1 - 0.042 * max(len(bands), 1), y_hi)
    ax.set_aspect("equal", adjustable="box")
    ax.apply_aspect()  # the axes' final place, so that labels can be measured where they will be drawn
    renderer = canvas.get_renderer()
    placer = _LabelPlacer(ax, renderer)
    placer.reserve_point(station, height, 14 * u)
    for _, _, gx, gy in group_cgs:
        placer.reserve_point(gx, gy, 6 * u)
    placer.place(f"CG  station {station:+.4f} m, {height:.4f} m above ground", (station, height),
                 [(18, 40), (18, -50), (-18, 40), (-18, -50), (40, 70)], fontsize=12 * u, weight="bold", zorder=7,
                 bbox={"fc": "#fffdf8", "ec": CG_COLOUR, "lw": 1.3}, leader=CG_COLOUR)
    for g, gm, gx, gy in sorted(group_cgs, key=lambda t: -t[1]):
        if g in in_material:
            placer.place(f"{g or '(top level)'} {gm:.1f} kg", (gx, gy), _NEAR, fontsize=9.5 * u, zorder=5,
                         bbox={"fc": "#fbf9f4", "ec": "none", "alpha": 0.8, "pad": 1}, leader="#6d7378")
    ax.set_xlabel("station along forward, m (model frame)", fontsize=10.5 * u, color=INK)
    ax.set_ylabel("height above ground, m", fontsize=10.5 * u, color=INK)
    for b in bands:
        move = b.shift_needed(station)
        if move != 0.0:
            zoom.annotate("", (station + move, height), (station, height),
                          arrowprops={"arrowstyle": "->", "color": INK, "lw": 1.4})
            zoom.text(station + 0.5 * move, height - 0.012, f"{abs(move) * 1e3:.1f} mm", ha="center", va="top",
                      fontsize=10 * u, color=INK)

    edges = [station] + [e for b in bands for e in (b.low, b.high) if e is not None]
    span = max(max(edges) - min(edges), 0.05)
    zoom.set_xlim(min(edges) - 0.35 * span, max(edges) + 0.35 * span)
    zoom.set_ylim(max(-0.01, height - 0.12), max(height + 0.12, (hmax or 0) + 0.03))
    zoom.set_title("near the CG: rule bands (shaded = allowed station range)", fontsize=11 * u, color=INK, loc="left")
    zoom.set_xlabel("station along forward, m", fontsize=10 * u, color=INK)

    notes = _notes(model, station, height, bands, hmax)
    notes_ax.text(0.0, 1.0, "\n".join(notes), va="top", ha="left", fontsize=10.5 * u, color=INK, wrap=True,
                  family="DejaVu Sans", linespacing=1.45, transform=notes_ax.transAxes)
    write_png_atomic(fig, out, "massmodel cg-chart")
    drawn = [(text, tuple(float(x) for x in _text_box(a, renderer).extents)) for text, a in placer.placed]
    return CgChart(out, (w, h), station, height, bands, hmax, notes, drawn)  # type: ignore[arg-type]


# Label offsets (points) around a marker, nearest first.
_NEAR: list[tuple[float, float]] = [(7, 7), (7, -16), (-7, 7), (-7, -16), (12, 22), (12, -30), (-12, 22), (-12, -30), (24, 0), (-24, 0),
         (20, 40), (20, -48), (-20, 40), (-20, -48), (40, 60), (40, -70), (-40, 60), (-40, -70)]


def _groups_in_material(outlines: list[tuple[str, FloatArray]], group_cgs: list[tuple[str, float, float, float]],
                        grow: float = 0.1) -> set[str]:
    """Groups whose side-view CG lies on one of their parts' side outlines' boxes (grown by ``grow`` times the
    group's side-view size): a group spread around the car (wheels, suspension) has its CG in empty space."""
    out = set()
    for g, _, gx, gy in group_cgs:
        hulls = [h for name, h in outlines if name == g and len(h)]
        if not hulls:
            continue
        lows = np.array([h.min(axis=0) for h in hulls])
        highs = np.array([h.max(axis=0) for h in hulls])
        pad = grow * float(np.linalg.norm(highs.max(axis=0) - lows.min(axis=0)))
        p = np.array([gx, gy])
        if np.any(np.all((lows - pad <= p) & (p <= highs + pad), axis=1)):
            out.add(g)
    return out


def _text_box(annotation: Any, renderer: Any, pad_px: float = 3.0) -> Any:
    """The box of an annotation's text alone (its leader line left out), grown by ``pad_px`` for its backing."""
    from matplotlib.text import Text

    annotation.update_positions(renderer)  # place the text at its offset from the annotated point
    return Text.get_window_extent(annotation, renderer).expanded(1.0, 1.0).padded(pad_px)


class _LabelPlacer:
    """Put each label at the first offset where its drawn box overlaps no label or reserved marker and stays in
    the axes; a label with no free place is left out (its marker stays)."""

    def __init__(self, ax: Any, renderer: Any) -> None:
        self.ax, self.renderer = ax, renderer
        self.taken: list[Any] = []
        self.placed: list[tuple[str, Any]] = []

    def reserve_point(self, x: float, y: float, radius_px: float) -> None:
        from matplotlib.transforms import Bbox

        cx, cy = self.ax.transData.transform((x, y))
        self.taken.append(Bbox.from_extents(cx - radius_px, cy - radius_px, cx + radius_px, cy + radius_px))

    def place(self, text: str, xy: tuple[float, float], offsets: list[tuple[float, float]], leader: str,
              **kw: Any) -> bool:
        frame = self.ax.get_window_extent(self.renderer)
        for dx, dy in offsets:
            a = self.ax.annotate(text, xy, xytext=(dx, dy), textcoords="offset points", color=INK,
                                 ha="left" if dx >= 0 else "right", va="bottom" if dy >= 0 else "top",
                                 arrowprops={"arrowstyle": "-", "color": leader, "lw": 0.9,
                                             "shrinkA": 0, "shrinkB": 3}, **kw)
            box = _text_box(a, self.renderer)
            inside = (frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1)
            if inside and not any(box.overlaps(t) for t in self.taken):
                self.taken.append(box)
                self.placed.append((text, a))
                return True
            a.remove()
        return False


def _cg_uncertainty(model: Model) -> tuple[float, float] | None:
    """Standard uncertainties (m, k = 1, RSS) of the CG's station along forward and of its height, or None when
    the model declares no uncertainties (:mod:`massmodel.uncertainty`); the model-axis terms are combined as
    independent."""
    from massmodel.uncertainty import rss_uncertainties
    from massmodel.uncertainty.inputs import declares_uncertainty

    if not declares_uncertainty(model):
        return None
    assert model.vehicle is not None
    est = rss_uncertainties(model)
    axes = np.array([est[k].u for k in ("cg_x", "cg_y", "cg_z")])
    along = float(np.sqrt(np.sum((model.vehicle.forward * axes) ** 2)))
    return along, float(est["cg_height"].u)


def _notes(model: Model, station: float, height: float, bands: list[StationBand], hmax: float | None) -> list[str]:
    import textwrap

    from massmodel.report.rules import rule_limit_text
    from massmodel.vehicle.balance import check_rules

    lines = ["RULE LIMITS AT THE CURRENT MASS"]
    for b in bands:
        if b.low is not None and b.high is not None:
            where = f"station {b.low:+.4f} .. {b.high:+.4f} m"
        elif b.low is not None:
            where = f"station at least {b.low:+.4f} m"
        elif b.high is not None:
            where = f"station at most {b.high:+.4f} m"
        else:
            where = "any station"
        move = b.shift_needed(station)
        state = "CG inside" if move == 0.0 else f"move CG {abs(move) * 1e3:.1f} mm {'forward' if move > 0 else 'rearward'}"
        lines.append(f"• {b.name}: {where} · {state}")
    if hmax is not None:
        lines.append(f"• max CG height {hmax:.4f} m · margin {(hmax - height) * 1e3:+.1f} mm")
    for r in check_rules(model):
        if r.check in ("min_mass", "min_group_mass"):
            lines.append(f"• {r.name}: {r.value:.2f} {r.unit} ({'pass' if r.passed else 'FAIL'}, limit {rule_limit_text(r)})")
    cg_u = _cg_uncertainty(model)
    if cg_u is not None:
        lines.append(f"• CG ellipse: ± 2 standard uncertainties (RSS) of station ({2e3 * cg_u[0]:.1f} mm) and "
                     f"height ({2e3 * cg_u[1]:.1f} mm)")
    lines.append("")
    wrapped: list[str] = []
    for line in lines:
        wrapped.extend(textwrap.wrap(line, 64, subsequent_indent="   ") or [""])
    wrapped.extend(textwrap.wrap(
        "Bands move with the mass: ballast changes both the mass and the CG. The series' technical regulations "
        "and the scrutineers decide compliance.", 64))
    return wrapped
