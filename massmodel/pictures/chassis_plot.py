"""Chassis pictures with matplotlib (off-screen, Agg canvas; no pyplot state), drawn from the data of
:func:`massmodel.report.chassis.build_chassis_report`:

* :func:`plot_corner_loads`: the four corner loads against lateral acceleration (linear, steady state);
* :func:`plot_step_steer`: the yaw rate after a step steer, as a fraction of its steady value, with the 90 % time.

Images are written atomically (temporary file, then rename).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from massmodel.core.atomic import write_atomic
from massmodel.core.errors import UsageError

__all__ = ["plot_corner_loads", "plot_step_steer"]

CAUTION_FOOTER = ("Linear, steady-state estimates: track testing and the team's own vehicle simulation decide "
                  "set-up and handling.")
COLOURS = {"front_left": "#2d6fa3", "front_right": "#7fb2d9", "rear_left": "#b0704f", "rear_right": "#e0a98a"}
LABELS = {"front_left": "FL", "front_right": "FR", "rear_left": "RL", "rear_right": "RR"}


def _figure() -> Any:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(7.5, 4.8), dpi=110)
    FigureCanvasAgg(fig)
    fig.text(0.5, 0.01, CAUTION_FOOTER, ha="center", va="bottom", fontsize=7, color="#7a2e22")
    return fig


def _title(data: dict[str, Any], what: str) -> str:
    case = f" · case {data['case']}" if data.get("case", "base") != "base" else ""
    return f"{data['model']}{case}: {what}"


def plot_corner_loads(data: dict[str, Any], path: str | Path) -> Path:
    """Corner loads (kg, mass-equivalent) against lateral acceleration (g, left turn positive)."""
    sweep = data["series"]["lateral_sweep"]
    fig = _figure()
    ax = fig.add_axes((0.1, 0.14, 0.86, 0.76))
    for key, values in sweep["corner_loads_kg"].items():
        ax.plot(sweep["lateral_g"], values, color=COLOURS[key], lw=2, label=LABELS[key])
    ax.axhline(0.0, color="#555555", lw=0.8)
    aero = data.get("aero")
    note = f" (with aero at {aero['speed_m_per_s'] * 3.6:.0f} km/h)" if aero else ""
    ax.set_xlabel("lateral acceleration a_y, g (left-hand turn)")
    ax.set_ylabel("corner load, kg (force / g0)")
    ltd = data["roll"]["lateral_load_transfer_front_share"]
    ax.set_title(_title(data, f"corner loads{note}; front share of lateral transfer {ltd:.3f}"), fontsize=9)
    ax.legend(fontsize=8)
    ax.grid(True, lw=0.3, color="#e6e6e6")
    return write_atomic(path, lambda p: fig.savefig(p, format="png"), suffix=".png")


def plot_step_steer(data: dict[str, Any], path: str | Path) -> Path:
    """Yaw rate / steady yaw rate after a step steer (linear single-track model).

    Raises
    ------
    ValueError
        The data holds no step response (no cornering stiffness or speed, or unstable at that speed).
    """
    series = data["series"].get("step_steer")
    st = data.get("single_track")
    if not series or not st:
        raise UsageError("no step-steer response to draw: the single-track model needs cornering stiffness, a speed, "
                         "and a stable car at that speed")
    fig = _figure()
    ax = fig.add_axes((0.1, 0.14, 0.86, 0.76))
    ax.plot(series["time_s"], series["yaw_rate_over_steady"], color="#2d6fa3", lw=2, label="yaw rate / steady")
    ax.axhline(1.0, color="#555555", lw=0.8, ls="--")
    ax.axhline(0.9, color="#999999", lw=0.6, ls=":")
    t90 = st["time_to_90_percent_s"]
    if t90 is not None:
        ax.axvline(t90, color="#b0704f", lw=1, ls=":", label=f"90 % at {t90:.3f} s")
    ax.set_xlabel("time after the step steer, s")
    ax.set_ylabel("yaw rate / steady-state yaw rate")
    ax.set_title(_title(data, f"step steer at {series['speed_m_per_s'] * 3.6:.0f} km/h; f_n "
                              f"{st['natural_frequency_hz']:.2f} Hz, damping {st['damping_ratio']:.2f}"), fontsize=9)
    ax.legend(fontsize=8)
    ax.grid(True, lw=0.3, color="#e6e6e6")
    return write_atomic(path, lambda p: fig.savefig(p, format="png"), suffix=".png")
