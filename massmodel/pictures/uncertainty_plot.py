"""Histograms of a Monte Carlo run (matplotlib, Agg canvas, no pyplot state): the mass a minimum-mass rule counts
(or the total mass when the model has no such rule) and the front share, with the rule limits, the nominal value
and the RSS normal curve. Written atomically (temporary file, then rename).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core.model import Model, RuleCheck
from massmodel.uncertainty.montecarlo import MonteCarloResult
from massmodel.uncertainty.rss import rss_uncertainties

from .paper import write_png_atomic

__all__ = ["plot_how_sure"]

LIMIT = "#b5483a"
NOMINAL = "#1f4e79"
BARS = "#9db4cc"
FOOTER = ("Estimates of an engineering model: the series' technical regulations and the scrutineers decide; "
          "weigh the car before relying on a margin.")


def _normal_curve(ax: Any, mean: float, u: float, counts: np.ndarray, edges: np.ndarray) -> None:
    if u <= 0.0:
        return
    x = np.linspace(edges[0], edges[-1], 200)
    width = edges[1] - edges[0]
    y = counts.sum() * width * np.exp(-0.5 * ((x - mean) / u) ** 2) / (u * np.sqrt(2.0 * np.pi))
    ax.plot(x, y, color=NOMINAL, lw=1.0, ls="--", label=f"RSS normal, u = {u:.4g}")


def _panel(ax: Any, values: np.ndarray, nominal: float, u: float, limits: list[tuple[float, str]], title: str,
           xlabel: str) -> None:
    counts, edges, _ = ax.hist(values, bins=60, color=BARS, edgecolor="white", lw=0.3, label="Monte Carlo samples")
    _normal_curve(ax, nominal, u, counts, edges)
    ax.axvline(nominal, color=NOMINAL, lw=1.5, label=f"nominal {nominal:.4g}")
    for value, label in limits:
        ax.axvline(value, color=LIMIT, lw=1.5, label=label)
    ax.set_title(title, fontsize=9)
    ax.set_xlabel(xlabel, fontsize=8)
    ax.set_ylabel("samples", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.legend(fontsize=6.5, loc="best")


def plot_how_sure(model: Model, mc: MonteCarloResult, path: str | Path) -> Path:
    """Draw the two histograms of ``mc`` (a run of :func:`massmodel.uncertainty.rules.rules_monte_carlo` on
    ``model``) into a PNG.

    Returns
    -------
    Path
        The file written.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    est = rss_uncertainties(model)
    fig = Figure(figsize=(11.0, 4.4), dpi=110)
    FigureCanvasAgg(fig)
    axes = fig.subplots(1, 2)
    mass_rule = next((r for r in model.rules if r.check is RuleCheck.MIN_MASS and r.name in mc.subsets), None)
    if mass_rule is not None:
        values = np.asarray(mc.subsets[mass_rule.name])
        what = "whole car" + (f" without {', '.join(mass_rule.exclude)}" if mass_rule.exclude else "")
        from massmodel.uncertainty.rules import rule_confidence

        u = next(r.u for r in rule_confidence(model, 0.95) if r.name == mass_rule.name)
        nominal = float(sum(c.props.mass for c in model.select(exclude=mass_rule.exclude)))
        _panel(axes[0], values, nominal, u, [(float(mass_rule.limit or 0.0), f"limit {mass_rule.limit:g} kg")],
               f"mass counted by '{mass_rule.name}' ({what})", "mass, kg")
    else:
        _panel(axes[0], np.asarray(mc.values["mass"]), est["mass"].value, est["mass"].u, [], "total mass", "mass, kg")
    if "front_fraction" in mc.values:
        limits = []
        for r in model.rules:
            if r.check is RuleCheck.FRONT_FRACTION:
                limits += [(v, f"{r.name}: {side} {v:.3f}") for v, side in ((r.minimum, "min"), (r.maximum, "max"))
                           if v is not None]
        e = est["front_fraction"]
        _panel(axes[1], np.asarray(mc.values["front_fraction"]), e.value, e.u, limits, "front share of the mass",
               "front axle load / total (fraction)")
    else:
        axes[1].set_axis_off()
        axes[1].text(0.5, 0.5, "no [vehicle] section: no front share", ha="center", va="center")
    case = f", load case {model.case}" if model.case != "base" else ""
    fig.suptitle(f"{model.name}{case}: {mc.samples} Monte Carlo samples (seed {mc.seed})", fontsize=10)
    fig.text(0.5, 0.005, FOOTER, ha="center", va="bottom", fontsize=6.5, color="#7a2e22")
    fig.subplots_adjust(left=0.06, right=0.98, top=0.86, bottom=0.17, wspace=0.18)
    out = Path(path)
    write_png_atomic(fig, out, "massmodel how-sure")
    return out
