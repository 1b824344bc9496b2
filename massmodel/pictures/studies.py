"""Charts of studies with matplotlib (Agg canvas, no pyplot state; PNG written atomically): each output of a
sweep against the parameter with the rule limits drawn, the fuel-burn track with the worst point of each rule, a
sensitivity ranking (tornado) and a waterfall of the mass changes between two versions of a model.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core.atomic import write_atomic
from massmodel.core.errors import UsageError
from massmodel.report.studies import display
from massmodel.studies.diff import ModelDiff
from massmodel.studies.fuel import FuelTrack
from massmodel.studies.outputs import Output, RuleLimits
from massmodel.studies.sweep import Sensitivity, SweepResult

__all__ = ["plot_sweep", "plot_track", "plot_sensitivity", "plot_waterfall"]

INK = "#2b2b2b"
LINE = "#3d6b9a"
LIMIT = "#b5483b"
BAND = "#f2d4cf"
MAX_LINES = 8


def _png(path: str | Path) -> Path:
    out = Path(path)
    if out.suffix.lower() != ".png":
        raise UsageError(f"output '{out}': charts are written as PNG, so the file name must end in .png")
    return out


def _figure(panels: int, title: str, subtitle: str) -> tuple[Any, list[Any]]:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    cols = 1 if panels == 1 else 2 if panels <= 6 else 3
    rows = int(np.ceil(panels / cols))
    height = 3.1 * rows + 1.1
    fig = Figure(figsize=(6.2 * cols, height), dpi=100, facecolor="white")
    FigureCanvasAgg(fig)
    fig.suptitle(title, x=0.01, y=1 - 0.12 / height, ha="left", va="top", fontsize=13, weight="bold", color=INK)
    fig.text(0.01, 1 - 0.45 / height, subtitle, fontsize=9, color=INK, va="top")
    axes = fig.subplots(rows, cols, squeeze=False).ravel().tolist()
    for ax in axes[panels:]:
        ax.set_visible(False)
    fig.subplots_adjust(left=0.08, right=0.98, bottom=0.09 / rows + 0.03, top=1 - 1.05 / height,
                        hspace=0.55, wspace=0.25)
    return fig, axes[:panels]


def _scale(unit: str) -> tuple[float, str]:
    if unit == "m":
        return 1e3, "mm"
    if unit == "rad":
        return float(np.degrees(1.0)), "deg"
    return 1.0, "" if unit in ("", "1", "fraction") else unit


def _limits(ax: Any, rule: RuleLimits, x: np.ndarray) -> None:
    s, _ = _scale(rule.unit)
    lo, hi = ax.get_ylim()
    for bound, side in ((rule.lower, "min"), (rule.upper, "max")):
        if bound is None:
            continue
        ax.axhline(bound * s, color=LIMIT, lw=1.3, ls="--")
        ax.text(0.01, bound * s, f"{side} {bound * s:.4g}", color=LIMIT, fontsize=8, va="bottom",
                transform=ax.get_yaxis_transform())
        lo, hi = min(lo, bound * s), max(hi, bound * s)
    pad = 0.08 * (hi - lo or 1.0)
    ax.set_ylim(lo - pad, hi + pad)
    if rule.lower is not None:
        ax.axhspan(lo - pad, rule.lower * s, color=BAND, zorder=0)
    if rule.upper is not None:
        ax.axhspan(rule.upper * s, hi + pad, color=BAND, zorder=0)


def _save(fig: Any, path: Path) -> Path:
    return write_atomic(path, lambda p: fig.savefig(p, format="png"), suffix=".png")


def _series(result: SweepResult) -> list[tuple[str, np.ndarray]]:
    """Row indices of each line: one line per combination of the second and later parameters."""
    if len(result.parameters) == 1:
        return [("", np.arange(len(result.points)))]
    others = result.points[:, 1:]
    keys, inverse = np.unique(others, axis=0, return_inverse=True)
    inverse = np.asarray(inverse).reshape(-1)
    chosen = np.linspace(0, len(keys) - 1, min(MAX_LINES, len(keys))).round().astype(int)
    out = []
    for k in sorted(set(chosen.tolist())):
        label = ", ".join(f"{r.name} {' '.join(display(float(v), r.unit))}".strip()
                          for r, v in zip(result.parameters[1:], keys[k], strict=True))
        out.append((label, np.flatnonzero(inverse == k)))
    return out


def plot_sweep(result: SweepResult, path: str | Path) -> Path:
    """Each output and each rule's checked value against the first swept parameter (one line per value of the
    others, at most eight), rule limits dashed and the failing side shaded."""
    out = _png(path)
    basic = [(i, o) for i, o in enumerate(result.outputs) if o.rule is None]
    panels = len(basic) + len(result.rules)
    if panels == 0:
        raise UsageError("nothing to plot: the sweep has no outputs")
    p0 = result.parameters[0]
    xs, xu = _scale(p0.unit)
    fig, axes = _figure(panels, f"Sweep · {result.model} · case {result.case}",
                        f"{len(result.points)} points; {result.method}; rule limits dashed, failing side shaded")
    lines = _series(result)
    x_all = result.points[:, 0] * xs

    def draw(ax: Any, y: np.ndarray, unit: str, title: str) -> None:
        s, u = _scale(unit)
        for k, (label, rows) in enumerate(lines):
            order = rows[np.argsort(result.points[rows, 0])]
            ax.plot(result.points[order, 0] * xs, y[order] * s, marker="o", ms=2.5, lw=1.4,
                    color=LINE if len(lines) == 1 else None, label=label or None, zorder=3 + k)
        ax.set_title(title + (f" ({u})" if u else ""), fontsize=9.5, color=INK, loc="left")
        ax.set_xlabel(f"{p0.name}" + (f" ({xu})" if xu else ""), fontsize=8.5)
        ax.tick_params(labelsize=8)
        ax.grid(alpha=0.3)

    for ax, (i, o) in zip(axes, basic, strict=False):
        draw(ax, result.values[:, i], o.unit, o.label)
    for ax, (j, rule) in zip(axes[len(basic):], enumerate(result.rules), strict=True):
        draw(ax, result.rule_values[:, j], rule.unit, f"rule: {rule.name}")
        _limits(ax, rule, x_all)
    if len(lines) > 1:
        axes[0].legend(fontsize=7, loc="best")
    return _save(fig, out)


def plot_track(track: FuelTrack, path: str | Path) -> Path:
    """The fuel-burn track: CG, axle loads, front share and each rule's value from full (left) to empty, with the
    rule limits and the worst point of each rule marked."""
    out = _png(path)
    keys = [k for k in ("cg_x", "cg_z", "cg_height", "front_axle", "rear_axle", "front_share", "mass")
            if k in {o.key for o in track.outputs}]
    panels = len(keys) + len(track.rules)
    xs, xu = _scale(track.unit)
    fig, axes = _figure(panels, f"Fuel burn · {track.model} · case {track.case}",
                        f"{track.parameter} from full (left) to empty (right); rule limits dashed, failing side shaded, "
                        "worst point of each rule ringed")
    x = track.fuel * xs
    by_key = {o.key: i for i, o in enumerate(track.outputs)}

    def setup(ax: Any, title: str, unit: str) -> float:
        s, u = _scale(unit)
        ax.set_title(title + (f" ({u})" if u else ""), fontsize=9.5, color=INK, loc="left")
        ax.set_xlabel(f"{track.parameter}" + (f" ({xu})" if xu else ""), fontsize=8.5)
        ax.set_xlim(x.max(), x.min()) if x.max() > x.min() else None
        ax.tick_params(labelsize=8)
        ax.grid(alpha=0.3)
        return s

    for ax, key in zip(axes, keys, strict=False):
        o = track.outputs[by_key[key]]
        s = setup(ax, o.label, o.unit)
        ax.plot(x, track.values[:, by_key[key]] * s, color=LINE, marker="o", ms=2.5, lw=1.4)
    margins = {o.rule: i for i, o in enumerate(track.outputs) if o.rule is not None}
    for ax, (j, rule) in zip(axes[len(keys):], enumerate(track.rules), strict=True):
        s = setup(ax, f"rule: {rule.name}", rule.unit)
        y = track.rule_values[:, j] * s
        ax.plot(x, y, color=LINE, marker="o", ms=2.5, lw=1.4, zorder=3)
        _limits(ax, rule, x)
        if j in margins:
            k = int(np.argmin(track.values[:, margins[j]]))
            ax.plot([x[k]], [y[k]], "o", ms=11, mfc="none", mec=LIMIT, mew=2, zorder=4)
            right = k > (len(x) - 1) / 2  # full is drawn on the left
            ax.annotate(f"worst: margin {' '.join(display(float(track.values[k, margins[j]]), rule.unit)).strip()}",
                        (x[k], y[k]), textcoords="offset points", xytext=(-8 if right else 8, 8), fontsize=7.5,
                        color=LIMIT, ha="right" if right else "left")
    return _save(fig, out)


def plot_sensitivity(s: Sensitivity, rank_by: Sequence[str], path: str | Path) -> Path:
    """Tornado charts: for each output in ``rank_by``, the change from the file's value at −step and +step of each
    parameter, parameters ranked by the larger of the two."""
    out = _png(path)
    keys = list(rank_by)
    fig, axes = _figure(len(keys), f"Sensitivity · {s.model} · case {s.case}",
                        "one parameter at a time, moved by -step (light) and +step (dark) from the file's value")
    fig.subplots_adjust(left=0.16, wspace=0.6)
    for ax, key in zip(axes, keys, strict=True):
        k = next(i for i, o in enumerate(s.outputs) if o.key == key)
        o: Output = s.outputs[k]
        sc, u = _scale(o.unit)
        order = s.ranking(key)[::-1]
        labels = [f"{s.names[i]} ±{' '.join(display(float(s.steps[i]), s.units[i])).strip()}" for i in order]
        lo = (s.minus[order, k] - s.base[k]) * sc
        hi = (s.plus[order, k] - s.base[k]) * sc
        ypos = np.arange(len(order))
        ax.barh(ypos, lo, color="#9bb7d4", label="-step")
        ax.barh(ypos, hi, color=LINE, label="+step")
        ax.axvline(0.0, color=INK, lw=0.8)
        ax.set_yticks(ypos, labels, fontsize=8)
        ax.set_title(f"change of {o.label}" + (f" ({u})" if u else ""), fontsize=9.5, color=INK, loc="left")
        ax.tick_params(labelsize=8)
        ax.grid(axis="x", alpha=0.3)
    axes[0].legend(fontsize=7, loc="lower right")
    return _save(fig, out)


def plot_waterfall(d: ModelDiff, path: str | Path, top: int = 15) -> Path:
    """Waterfall of the total mass from the old to the new version: the ``top`` largest part changes, the rest
    lumped, then the new total."""
    out = _png(path)
    steps = [(c.path, c.delta_mass, c.status) for c in d.changes[:top]]
    rest = d.changes[top:]
    if rest:
        steps.append((f"{len(rest)} other parts", float(sum(c.delta_mass for c in rest)), "changed"))
    fig, (ax,) = _figure(1, f"Mass changes · {d.old_name} → {d.new_name}",
                         f"total {d.old.mass:.3f} kg → {d.new.mass:.3f} kg ({d.delta_mass:+.3f} kg); "
                         "green: lighter, red: heavier")
    fig.set_size_inches(max(8.0, 1.0 + 0.75 * (len(steps) + 2)), 5.5)
    labels = ["old total"] + [p for p, _, _ in steps] + ["new total"]
    level = d.old.mass
    ax.bar(0, level, color="#8d8d8d")
    for k, (_, dm, status) in enumerate(steps, start=1):
        colour = "#b5483b" if dm > 0 else "#4a7a3d"
        ax.bar(k, dm, bottom=level, color=colour, hatch="//" if status != "changed" else None, edgecolor=INK, lw=0.4)
        ax.text(k, level + max(dm, 0.0), f"{dm:+.2f}", ha="center", va="bottom", fontsize=7.5)
        level += dm
    ax.bar(len(steps) + 1, d.new.mass, color="#5b7fa6")
    span = [d.old.mass, d.new.mass]
    running = d.old.mass
    for _, dm, _ in steps:
        running += dm
        span.append(running)
    lo, hi = min(span), max(span)
    pad = max(0.5, 0.15 * (hi - lo))
    ax.set_ylim(lo - pad, hi + pad)
    ax.set_xticks(range(len(labels)), labels, rotation=35, ha="right", fontsize=7.5)
    ax.set_ylabel("mass (kg)", fontsize=9)
    ax.grid(axis="y", alpha=0.3)
    fig.subplots_adjust(bottom=0.33, top=0.85)
    return _save(fig, out)
