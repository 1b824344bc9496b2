"""Pictures of ballast results with matplotlib (off-screen, Agg canvas; no pyplot state).

* :func:`plot_placement`: side elevation and plan view of the car (parts as grey silhouettes), the candidate
  slots, the blocks taken out and the blocks put in, the CG before and after; the mass per slot over the density
  band against its capacity; and every rule and target margin.
* :func:`plot_seat_study`: the car's CG height against the height of the seat ballast.

Images are written atomically (temporary file, then rename).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.ballast.export import write_atomic
from massmodel.ballast.parts import BALLAST_COLOUR

__all__ = ["plot_placement", "plot_seat_study", "plot_rule_costs", "plot_tradeoff"]

PART_FILL = "#d5d8dc"
PART_EDGE = "#aab0b6"
SLOT_EDGE = "#3f6e8c"
REMOVED = "#b5483a"
CG_BEFORE = "#4d4d4d"
CG_AFTER = "#1f7a4d"
CASE_COLOURS = ("#1f7a4d", "#2f5fa8", "#b5483a", "#8a4fa0", "#c07a12", "#3d8c95")
CASE_MARKERS = ("o", "s", "D", "^", "v", "P")


CAUTION_FOOTER = (
    "Ballast must be fixed so that it cannot come loose (bolted through primary structure, sealed where the rules "
    "require it).\nTungsten alloy dust from machining or grinding is a respiratory hazard. Heavy blocks need safe "
    "handling.\nThe series' technical regulations and the scrutineers decide; massmodel results are engineering "
    "estimates."
)


def _figure(size: tuple[float, float]) -> Any:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, dpi=110)
    FigureCanvasAgg(fig)
    fig.text(0.5, 0.005, CAUTION_FOOTER, ha="center", va="bottom", fontsize=6.5, color="#7a2e22")
    return fig


def _hull(points: np.ndarray) -> np.ndarray:
    from scipy.spatial import ConvexHull, QhullError

    try:
        return points[ConvexHull(points).vertices]
    except (QhullError, ValueError):
        lo, hi = points.min(axis=0), points.max(axis=0)
        return np.array([[lo[0], lo[1]], [hi[0], lo[1]], [hi[0], hi[1]], [lo[0], hi[1]]])


def _silhouettes(model: Any, axes_idx: tuple[int, int]) -> list[np.ndarray]:
    out = []
    for c in model.components:
        if c.shape.volume() <= 0.0:
            continue
        pts = c.pose.apply(c.shape.surface_points(60))
        out.append(_hull(pts[:, list(axes_idx)]) * 1e3)
    return out


def _box_outline(env: Any, axes_idx: tuple[int, int], size: Sequence[float] | None = None,
                 pose: Any = None) -> np.ndarray:
    s = np.array(env.size if size is None else size) * 0.5
    corners = np.array([[x, y, z] for x in (-s[0], s[0]) for y in (-s[1], s[1]) for z in (-s[2], s[2])])
    pts = (env.pose if pose is None else pose).apply(corners)
    return _hull(pts[:, list(axes_idx)]) * 1e3


def _view(ax: Any, result: Any, axes_idx: tuple[int, int], title: str) -> None:
    from matplotlib.patches import Polygon

    model = result.model
    for poly in _silhouettes(model, axes_idx):
        ax.add_patch(Polygon(poly, closed=True, facecolor=PART_FILL, edgecolor=PART_EDGE, lw=0.4, zorder=1))
    for al in result.allocations:
        ax.add_patch(Polygon(_box_outline(al.candidate.envelope, axes_idx), closed=True, fill=False,
                             edgecolor=SLOT_EDGE, lw=1.0, ls="--", zorder=3))
    for path in (p for al in result.allocations for p in al.candidate.replace):
        c = model.component(path)
        pts = c.pose.apply(c.shape.surface_points(60))
        ax.add_patch(Polygon(_hull(pts[:, list(axes_idx)]) * 1e3, closed=True, fill=False, hatch="////",
                             edgecolor=REMOVED, lw=0.8, zorder=4))
    for n, al in enumerate(a for a in result.allocations if a.sizing is not None):
        for piece in al.sizing.pieces:
            outline = _box_outline(piece, axes_idx, piece.geometry.size, piece.pose)
            ax.add_patch(Polygon(outline, closed=True, facecolor=BALLAST_COLOUR, edgecolor="#4a3a0c", lw=0.6,
                                 zorder=5))
        centre = al.sizing.props().center * 1e3
        ax.annotate(f"{al.sizing.masses()[0]:.2f} kg", (centre[axes_idx[0]], centre[axes_idx[1]]),
                    xytext=(0, 12 + 10 * (n % 2)), textcoords="offset points", ha="center", fontsize=7,
                    color="#4a3a0c",
                    zorder=7)
    cases = result.cases or ()
    for k, case in enumerate(cases):  # every case's CG, before (open) and after (filled)
        colour = CASE_COLOURS[k % len(CASE_COLOURS)]
        marker = CASE_MARKERS[k % len(CASE_MARKERS)]
        for mp, face, label in ((case.props_before, "white", f"CG before, {case.name}"),
                                (case.props_after, colour, f"CG after, {case.name}")):
            if mp is None:
                continue
            c = mp.center * 1e3
            ax.plot([c[axes_idx[0]]], [c[axes_idx[1]]], marker=marker, ms=7, mec=colour, mfc=face, mew=1.4,
                    ls="none", zorder=8, label=label)
    v = model.vehicle
    if v is not None and axes_idx == (0, 2):
        ax.axhline(v.ground_level * 1e3, color="#6b5b45", lw=1.2, zorder=0)
        for station in (v.front_axle_station, v.rear_axle_station):
            ax.axvline(station * 1e3, color="#9a9a9a", lw=0.6, ls=":", zorder=0)
    ax.set_aspect("equal")
    ax.autoscale_view()
    ax.set_title(title, fontsize=9)
    ax.tick_params(labelsize=7)
    ax.grid(True, lw=0.3, color="#e6e6e6")


def _axis_name(result: Any, k: int) -> str:
    """'x forward' when model axis k is a vehicle direction ('x rearward' when opposite), else just 'x'."""
    v = result.model.vehicle
    name = "xyz"[k]
    if v is None:
        return name
    for ahead, back, d in (("forward", "rearward", v.forward), ("left", "right", v.left), ("up", "down", v.up)):
        if abs(abs(float(d[k])) - 1.0) < 1e-9:
            return f"{name} {ahead if d[k] > 0 else back}"
    return name


def plot_placement(result: Any, path: str | Path) -> Path:
    """The placement picture (PNG): views, mass per slot, margins. See the module notes."""
    n_cases = max(len(result.cases), 1)
    table_h = 0.2 * (len(result.assessments) + 1)  # inches: one row per requirement of every case
    head_h, foot_h = 0.5 + 0.17 * (n_cases + 1), 0.75
    height = head_h + 3.0 + 3.4 + table_h + foot_h + 1.2
    fig = _figure((13.0, height))
    grid = fig.add_gridspec(3, 3, height_ratios=[3.0, 3.4, max(table_h, 0.4)], width_ratios=[1.1, 1.3, 0.8],
                            hspace=0.35 * 3.0 / height * 3.5, wspace=0.22, top=1.0 - head_h / height,
                            bottom=foot_h / height)
    side = fig.add_subplot(grid[0, :])
    _view(side, result, (0, 2), f"side elevation: {_axis_name(result, 0)} vs {_axis_name(result, 2)} (mm, model frame)")
    side.legend(loc="upper left", fontsize=6, frameon=False, ncol=2)
    used = [p for al in result.allocations if al.sizing is not None for p in al.sizing.pieces]
    if used:  # the blocks are thin: a zoomed section of the side view around them
        pts = np.vstack([_box_outline(p, (0, 2), p.geometry.size, p.pose) for p in used])
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        # its own panel below the side view, so that it hides no part of the car
        enlarged = fig.add_subplot(grid[1, 1])
        _view(enlarged, result, (0, 2), "the blocks, side elevation enlarged (mm)")
        pad = np.array([60.0, 25.0])
        enlarged.set_xlim(lo[0] - pad[0], hi[0] + pad[0])
        enlarged.set_ylim(lo[1] - pad[1], hi[1] + pad[1])
        enlarged.set_aspect("auto")
        enlarged.tick_params(labelsize=6)
        side.indicate_inset_zoom(enlarged, edgecolor="#555555")
    plan = fig.add_subplot(grid[1, 0])
    _view(plan, result, (0, 1), f"plan view: {_axis_name(result, 0)} vs {_axis_name(result, 1)} (mm, model frame)")
    bars = fig.add_subplot(grid[1, 2] if used else grid[1, 1:])
    names = [al.candidate.name for al in result.allocations]
    x = np.arange(len(names))
    caps = [al.capacity for al in result.allocations]
    nominal = [al.sizing.masses()[0] if al.sizing else 0.0 for al in result.allocations]
    lows = [al.sizing.masses()[1] if al.sizing else 0.0 for al in result.allocations]
    highs = [al.sizing.masses()[2] if al.sizing else 0.0 for al in result.allocations]
    bars.bar(x, caps, color="none", edgecolor=SLOT_EDGE, ls="--", lw=1.0, label="slot capacity (nominal)")
    bars.bar(x, nominal, color=BALLAST_COLOUR, width=0.55, label="block, nominal density")
    bars.errorbar(x, nominal, yerr=[np.subtract(nominal, lows), np.subtract(highs, nominal)], fmt="none",
                  ecolor="#2b2b2b", capsize=4, lw=1.0, label="density band")
    bars.set_xticks(x, names, fontsize=8)
    bars.set_ylabel("ballast, kg", fontsize=8)
    bars.tick_params(labelsize=7)
    bars.legend(fontsize=7, frameon=False)
    bars.set_title("mass per slot", fontsize=9)
    table_ax = fig.add_subplot(grid[2, :])
    table_ax.axis("off")
    rows = []
    colours = []
    for a in result.assessments:
        r = a.requirement
        fmt = "{:.2f}" if r.unit == "kg" else "{:.4f}" if r.unit == "fraction" else "{:.1f}"
        scale = 1e3 if r.unit == "m" else 1.0
        unit = "mm" if r.unit == "m" else r.unit
        op = "<=" if r.is_max else ">="
        rows.append([r.case, r.label[:52], f"{fmt.format(a.nominal * scale)} {unit}",
                     f"{fmt.format(a.worst * scale)} {unit}", f"{op} {fmt.format(r.bound * scale)} {unit}",
                     f"{fmt.format(a.margin_worst * scale)} {unit}",
                     "binding" if a.binding else ("pass" if a.passed else "FAIL")])
        colours.append(["white"] * 6 + ["#dff0e3" if a.passed else "#f6d6d2"])
    if rows:
        tab = table_ax.table(cellText=rows, cellColours=colours, bbox=(0.0, 0.0, 1.0, 1.0), cellLoc="left",
                             colLabels=["case", "rule or target", "nominal", "worst of band", "bound (with margin)",
                                        "margin (worst)", ""], colWidths=[0.1, 0.34, 0.11, 0.11, 0.14, 0.11, 0.07])
        tab.auto_set_font_size(False)
        tab.set_fontsize(7)
    nom, lo, hi = result.ballast_mass
    title = (f"{result.model.name}: ballast {nom:.2f} kg nominal ({lo:.2f} .. {hi:.2f} kg over the density bands), "
             f"the same in every case")
    for case in result.cases:
        b0, b1 = case.balance_before, case.balance_after
        if b0 is None or b1 is None:
            continue
        title += (f"\n{case.name}: CG height {b0.cg_height * 1e3:.1f} -> {b1.cg_height * 1e3:.1f} mm · front "
                  f"fraction {b0.front_fraction:.4f} -> {b1.front_fraction:.4f} · {'pass' if case.passed else 'FAIL'}")
    fig.suptitle(title, fontsize=8.5 if len(result.cases) > 2 else 10, y=1.0 - 0.15 / height)
    return write_atomic(path, lambda p: fig.savefig(p, format="png"), suffix=".png")


def plot_seat_study(study: Any, path: str | Path) -> Path:
    """CG height of the car against the height of the seat ballast (PNG)."""
    fig = _figure((7.5, 5.4))
    fig.subplots_adjust(bottom=0.22)
    ax = fig.add_subplot(1, 1, 1)
    h = study.heights * 1e3
    z = study.cg_heights * 1e3
    lo, hi = (v * 1e3 for v in study.seat_range)
    ax.axvspan(lo, hi, color="#eef2f6", label=f"seat structure ({study.seat_group})")
    for name, a, b in study.height_rules:
        top = min(b * 1e3, max(hi, float(h.max())))
        ax.axvspan(a * 1e3, top, facecolor="none", edgecolor=CG_AFTER, hatch="//", lw=0.0, label=f"allowed by {name}")
    ax.plot(h, z, color=CG_AFTER, marker="o", ms=4, lw=1.5, label=f"with {study.ballast_mass:.2f} kg seat ballast")
    ax.axhline(study.base_cg_height * 1e3, color=CG_BEFORE, ls="--", lw=1.0, label="without seat ballast")
    if study.cg_limit is not None and study.cg_limit * 1e3 <= max(z.max(), study.base_cg_height * 1e3) + 20:
        ax.axhline(study.cg_limit * 1e3, color=REMOVED, lw=1.0, label="CG height limit")
    ax.axvline(study.base_cg_height * 1e3, color=CG_BEFORE, lw=0.6, ls=":")
    ax.annotate("ballast below the car's CG lowers it", (study.base_cg_height * 1e3, float(z.min())),
                xytext=(-6, 0), textcoords="offset points", ha="right", fontsize=7, color=CG_BEFORE)
    ax.set_xlabel("height of the ballast CG above the ground, mm")
    ax.set_ylabel("car CG height above the ground, mm")
    ax.set_title(f"{study.rule.name}: {study.need:.2f} kg needed at the low end of the density band\n"
                 f"car CG rises {study.slope * 10:.3f} mm per 10 mm of ballast height", fontsize=9)
    ax.grid(True, lw=0.3, color="#e0e0e0")
    ax.legend(fontsize=8, frameon=False)
    return write_atomic(path, lambda p: fig.savefig(p, format="png"), suffix=".png")


def plot_rule_costs(result: Any, path: str | Path) -> Path:
    """What each binding rule costs (PNG): the dual value (ballast per step of the limit) and the ballast saved
    without the rule, one bar each, labelled with the case."""
    costs = [c for c in result.costs if c.binding] or list(result.costs)
    fig = _figure((10.0, max(3.2, 2.2 + 0.42 * len(costs))))
    fig.subplots_adjust(left=0.36, right=0.97, bottom=0.2 if len(costs) > 3 else 0.3, top=0.85, wspace=0.35)
    labels = [f"{c.requirement.label[:40]} [{c.requirement.case}]" for c in costs]
    y = np.arange(len(costs))
    ax1 = fig.add_subplot(1, 2, 1)
    ax2 = fig.add_subplot(1, 2, 2, sharey=ax1)
    duals = [c.per_step[0] for c in costs]
    ax1.barh(y, duals, color=BALLAST_COLOUR)
    for k, c in enumerate(costs):
        ax1.annotate(f"{c.per_step[0]:.3f} kg {c.per_step[1]}", (duals[k], k), xytext=(3, 0),
                     textcoords="offset points", va="center", fontsize=7)
    ax1.set_yticks(y, labels, fontsize=7)
    ax1.invert_yaxis()
    ax1.set_xlabel("ballast per step of the limit, kg (per kg / per 0.001 / per mm)", fontsize=8)
    ax1.set_title("dual value", fontsize=9)
    ax2.barh(y, [c.saving for c in costs], color=SLOT_EDGE)
    ax2.set_xlabel("ballast saved without the rule, kg", fontsize=8)
    ax2.set_title("re-solved without it", fontsize=9)
    from matplotlib.ticker import MaxNLocator

    ax1.set_xlim(0.0, 1.45 * max(max(duals, default=0.0), 1e-3))
    ax2.set_xlim(0.0, 1.15 * max(max((c.saving for c in costs), default=0.0), 0.01))
    for ax in (ax1, ax2):
        ax.tick_params(labelsize=7)
        ax.grid(True, axis="x", lw=0.3, color="#e0e0e0")
        ax.xaxis.set_major_locator(MaxNLocator(4))
    ax2.tick_params(labelleft=False)
    fig.suptitle(f"{result.model.name}: what each rule costs (least ballast {result.least:.2f} kg, cases "
                 f"{', '.join(c.name for c in result.cases)})", fontsize=9)
    return write_atomic(path, lambda p: fig.savefig(p, format="png"), suffix=".png")


def plot_tradeoff(result: Any, path: str | Path) -> Path:
    """The CG height / yaw inertia trade-off at the least ballast (PNG), means over the cases."""
    fig = _figure((7.5, 5.6))
    fig.subplots_adjust(bottom=0.22)
    ax = fig.add_subplot(1, 1, 1)
    pts = result.tradeoff
    if pts:
        h = np.array([p.cg_height for p in pts]) * 1e3
        yaw = np.array([p.yaw for p in pts])
        ax.plot(h, yaw, color=CG_AFTER, marker="o", ms=4, lw=1.4, label="least ballast, weighted objectives")
        groups: dict[tuple[float, float], list[float]] = {}  # points that coincide share one label
        for p, hx, yx in zip(pts, h, yaw, strict=True):
            groups.setdefault((round(float(hx), 3), round(float(yx), 4)), []).append(p.weight_height)
        for k, ((hx, yx), ws) in enumerate(groups.items()):
            text = f"w={ws[0]:.2f}" if len(ws) == 1 else f"w={min(ws):.2f}..{max(ws):.2f}"
            ax.annotate(text, (hx, yx), xytext=(5, 5 - 11 * (k % 3)), textcoords="offset points", fontsize=6)
        # at least 1 mm and 1 kg*m^2 shown, so that a curve that is nearly a point looks like one
        for values, span, setter in ((h, 1.0, ax.set_xlim), (yaw, 1.0, ax.set_ylim)):
            mid, half = 0.5 * (values.min() + values.max()), 0.5 * max(values.max() - values.min(), span) * 1.15
            setter(mid - half, mid + half)
        ax.ticklabel_format(useOffset=False)
        spread = (h.max() - h.min(), yaw.max() - yaw.min())
        if spread[0] < 0.1 and spread[1] < 0.1:
            ax.text(0.02, 0.03, f"the two objectives nearly agree here: {spread[0]:.3f} mm and {spread[1]:.3f} "
                    "kg*m^2 apart", transform=ax.transAxes, fontsize=7, color=CG_BEFORE)
    else:
        ax.text(0.5, 0.5, "no trade-off computed", ha="center", va="center", transform=ax.transAxes)
    ax.set_xlabel("CG height above the ground, mm (mean over the cases)")
    ax.set_ylabel("yaw inertia about the CG, kg*m^2 (mean over the cases)")
    ax.set_title(f"{result.model.name}: CG height against yaw inertia with {result.least:.2f} kg of ballast\n"
                 "(w = weight on CG height; a linear mass-properties estimate)", fontsize=9)
    ax.grid(True, lw=0.3, color="#e0e0e0")
    ax.legend(fontsize=8, frameon=False)
    return write_atomic(path, lambda p: fig.savefig(p, format="png"), suffix=".png")
