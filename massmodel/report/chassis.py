"""Chassis report: sprung/unsprung mass, roll and lateral load transfer, aero, pitch, cross weight, single-track
model — as JSON-ready data (:func:`build_chassis_report`, format ``massmodel-chassis/1``) and readable text
(:func:`format_chassis_report`). Method and sources: docs/chassis.md and the vehicle modules it calls.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from massmodel.core import cautions
from massmodel.core.errors import UsageError
from massmodel.core.model import Model
from massmodel.vehicle.balance import static_balance
from massmodel.vehicle.chassis import CORNERS, ChassisError, ChassisSpec, split_mass
from massmodel.vehicle.roll import (
    G0,
    cross_weight_adjustment,
    lateral_transfer,
    longitudinal_transfer,
    roll_properties,
)
from massmodel.vehicle.single_track import SingleTrack, step_yaw_rate, yaw_response

__all__ = ["CHASSIS_FORMAT", "ASSUMPTIONS", "CrossRequest", "build_chassis_report", "format_chassis_report",
           "single_track_of"]

CHASSIS_FORMAT = "massmodel-chassis/1"
DEG = 180.0 / math.pi
SHORT = ("FL", "FR", "RL", "RR")

ASSUMPTIONS = (
    "steady state on level ground; rigid chassis and rigid tyres; linear springs, bars and tyres; small angles",
    "lateral load transfer per axle = unsprung + geometric (roll centre) + elastic (roll stiffness) parts, first "
    "order: the sideways shift of the sprung CG in roll is left out of the transfer (Milliken & Milliken, Race Car "
    "Vehicle Dynamics, SAE 1995, ch. 18; from memory); the roll gradient with that shift is shown beside it "
    "(Gillespie, Fundamentals of Vehicle Dynamics, SAE 1992, ch. 7; from memory)",
    "roll centres fixed (no jacking, no roll-centre migration); roll axis straight between the two roll centres",
    "longitudinal transfer m*a_x*h/L split equally between the wheels of an axle; anti-dive (front, braking) and "
    "anti-squat (rear, driving) only split it into link and spring paths; anti-lift taken as zero",
    "aero loads F = 1/2*rho*C*A*v^2 with a fixed centre of pressure and drag height (no ride-height or pitch "
    "sensitivity); drag reacted at the ground",
    "single-track model: constant speed, linear tyres, no roll or load-transfer effect on the tyres, no steering "
    "compliance; cornering stiffness from the static + aero axle loads",
    "loads shown as mass-equivalent kg (force / 9.80665 m/s^2); signs: a_y > 0 towards the left (load to the right "
    "wheels), a_x > 0 driving",
)


@dataclass(frozen=True, slots=True)
class CrossRequest:
    """Target diagonal share (FR + RL)/total, the corner to adjust ('FL'..'RR'), the thread pitch (m) or None, and
    the corner weights to start from (kg FL, FR, RL, RR, e.g. from the scales; None: the model's static loads,
    which have no diagonal preload)."""

    target: float
    corner: str
    thread_pitch: float | None = None
    corner_weights: tuple[float, float, float, float] | None = None


def _corners(values: Any) -> dict[str, float]:
    return {k: float(v) / G0 for k, v in zip(CORNERS, values, strict=True)}


def single_track_of(model: Model, spec: ChassisSpec, speed: float | None) -> SingleTrack:
    """The single-track model of the car: mass, yaw inertia about the CG (mass model), a, b, and the axle
    cornering stiffnesses at the static (+ aero at ``speed``) axle loads.

    Raises
    ------
    ChassisError
        No cornering stiffness in the ``[chassis]`` section.
    """
    assert model.vehicle is not None
    if not spec.front.has_cornering_stiffness:
        raise ChassisError(spec.source, "[chassis.front]", "cornering_stiffness",
                           "is missing: the understeer gradient and the yaw response need the cornering stiffness "
                           "of both axles (or tyre_cornering_stiffness with tyre_reference_load)")
    mp = model.mass_properties()
    bal = static_balance(mp, model.vehicle)
    up = model.vehicle.up
    iz = float(up @ mp.inertia @ up)
    axle_loads = np.array([bal.front, bal.rear]) * G0
    if spec.aero is not None and speed is not None:
        aero = spec.aero.corner_loads(speed, model.vehicle.wheelbase)
        axle_loads = axle_loads + np.array([aero[0] + aero[1], aero[2] + aero[3]])
    cf = spec.front.axle_cornering_stiffness(float(axle_loads[0]))
    cr = spec.rear.axle_cornering_stiffness(float(axle_loads[1]))
    return SingleTrack(bal.mass, iz, bal.cg_behind_front_axle, bal.cg_ahead_of_rear_axle, cf, cr)


def build_chassis_report(
    model: Model,
    lateral_g: Sequence[float] = (1.0, 1.5),
    longitudinal_g: Sequence[float] = (-1.2, 0.6),
    speed: float | None = None,
    cross: CrossRequest | None = None,
    need_yaw: bool = False,
) -> dict[str, Any]:
    """Every chassis result of a model with a ``[chassis]`` section, as plain data (kg, m, N, deg, s).

    Parameters
    ----------
    lateral_g, longitudinal_g : sequence of float
        Steady accelerations in g (left positive; forward positive).
    speed : float, optional
        m/s, for the aero loads and the yaw response; default the section's ``speed``.
    cross : CrossRequest, optional
        Compute the spring-platform change for a target diagonal share.
    need_yaw : bool
        The caller needs the yaw response: a missing cornering stiffness or speed is then an error.

    Raises
    ------
    ValueError
        No [vehicle] or [chassis] section, or inputs the method cannot use (naming file, item and field).
    """
    spec = model.chassis
    if model.vehicle is None or spec is None:
        raise UsageError(f"{model.source or model.name}: the chassis results need a [vehicle] and a [chassis] "
                         "section in the model (docs/chassis.md)")
    vehicle = model.vehicle
    v = speed if speed is not None else spec.speed
    mp = model.mass_properties()
    bal = static_balance(mp, vehicle)
    split = split_mass(model.components, vehicle, spec)
    roll = roll_properties(split, vehicle, spec)
    static = np.asarray(bal.corners) * G0
    aero = np.zeros(4)
    aero_data = None
    if spec.aero is not None and v is not None:
        aero = spec.aero.corner_loads(v, vehicle.wheelbase)
        down, drag = spec.aero.loads(v)
        aero_data = {"speed_m_per_s": v, "basis": spec.aero.basis, "downforce_N": down, "drag_N": drag,
                     "front_share": spec.aero.front_share, "drag_height_m": spec.aero.drag_height,
                     "corner_loads_kg": _corners(aero)}
    base = static + aero
    lateral = []
    for g in lateral_g:
        lt = lateral_transfer(split, vehicle, spec, g * G0, roll)
        loads = base + lt.corner_change
        lateral.append({
            "lateral_g": g,
            "transfer_kg": {axle: {"unsprung": lt.unsprung[i] / G0, "geometric": lt.geometric[i] / G0,
                                   "elastic": lt.elastic[i] / G0, "total": lt.total[i] / G0}
                            for i, axle in enumerate(("front", "rear"))},
            "front_share_of_transfer": lt.front_share if g != 0.0 else None,
            "roll_angle_deg": lt.roll_angle * DEG,
            "corner_loads_kg": _corners(loads),
            "wheels_lifted": [k for k, x in zip(CORNERS, loads, strict=True) if x < 0.0],
        })
    longitudinal = []
    for g in longitudinal_g:
        lo = longitudinal_transfer(bal.mass, bal.cg_height, vehicle, spec, g * G0)
        longitudinal.append({
            "longitudinal_g": g, "transfer_kg": lo.transfer / G0,
            "anti_axle": "front (anti-dive)" if g < 0 else "rear (anti-squat)", "anti_share": lo.anti_share,
            "through_links_kg": lo.geometric / G0, "through_springs_kg": lo.elastic / G0,
            "pitch_angle_deg": None if lo.pitch_angle is None else lo.pitch_angle * DEG,
            "corner_loads_kg": _corners(base + lo.corner_change),
        })
    lltd = lateral_transfer(split, vehicle, spec, G0, roll).front_share
    data: dict[str, Any] = {
        "format": CHASSIS_FORMAT, "model": model.name, "case": model.case, "source": model.source,
        "mass_kg": bal.mass, "cg_height_m": bal.cg_height, "cg_behind_front_axle_m": bal.cg_behind_front_axle,
        "wheelbase_m": vehicle.wheelbase, "track_m": {"front": vehicle.track_front, "rear": vehicle.track_rear},
        "mass_split": {
            "unsprung_kg": split.unsprung_mass,
            "corners": {k: {"unsprung_mass_kg": float(m), "unsprung_cg_height_m": None if math.isnan(h) else float(h)}
                        for k, m, h in zip(CORNERS, split.corner_mass, split.corner_cg_height, strict=True)},
            "sprung_mass_kg": split.sprung_mass,
            "sprung_cg_height_m": split.sprung_cg_height,
            "sprung_cg_behind_front_axle_m": split.sprung_cg_behind_front_axle,
            "sprung_cg_left_m": split.sprung_cg_left,
            "shared_unsprung_share": spec.shared_share, "shared_share_source": spec.shared_source,
            "parts_counted_unsprung": [{"path": p, "share": s, "unsprung_kg": m} for p, s, m in split.shares],
        },
        "roll": {
            "roll_centre_height_m": {"front": spec.front.roll_centre_height, "rear": spec.rear.roll_centre_height},
            "wheel_rate_N_per_m": {"front": spec.front.wheel_rate, "rear": spec.rear.wheel_rate},
            "bar_wheel_rate_N_per_m": {"front": spec.front.bar_wheel_rate, "rear": spec.rear.bar_wheel_rate},
            "roll_stiffness_N_m_per_deg": {"front": roll.roll_stiffness_front / DEG,
                                           "rear": roll.roll_stiffness_rear / DEG},
            "elastic_front_share": roll.elastic_front_share,
            "roll_axis_height_at_sprung_cg_m": roll.roll_axis_height,
            "sprung_cg_above_roll_axis_m": roll.roll_arm,
            "roll_gradient_deg_per_g": roll.roll_gradient * DEG * G0,
            "roll_gradient_with_cg_shift_deg_per_g": roll.roll_gradient_with_cg_shift * DEG * G0,
            "lateral_load_transfer_front_share": lltd,
        },
        "aero": aero_data,
        "static_corner_loads_kg": _corners(static),
        "lateral": lateral,
        "longitudinal": longitudinal,
        "cross_weight": None,
        "single_track": None,
        "series": {"lateral_sweep": _sweep(split, vehicle, spec, roll, base, lateral_g)},
        "assumptions": list(ASSUMPTIONS),
        "cautions": cautions.for_report("chassis"),
    }
    if cross is not None:
        start = static if cross.corner_weights is None else np.asarray(cross.corner_weights, dtype=float) * G0
        cw = cross_weight_adjustment(start, vehicle, spec, cross.corner, cross.target, cross.thread_pitch)
        data["cross_weight"] = {
            "start": "the model's static corner loads" if cross.corner_weights is None else "given corner weights",
            "corner_weights_before_kg": _corners(start),
            "corner": cw.corner, "current_share": cw.current_share, "target_share": cw.target_share,
            "platform_change_m": cw.platform_change, "wheel_equivalent_m": cw.wheel_equivalent,
            "thread_pitch_m": cross.thread_pitch, "turns": cw.turns,
            "corner_loads_after_kg": _corners(start + cw.corner_change),
        }
    if spec.front.has_cornering_stiffness or need_yaw:
        data["single_track"], data["series"]["step_steer"] = _single_track(model, spec, v, need_yaw)
    return data


def _sweep(split: Any, vehicle: Any, spec: ChassisSpec, roll: Any, base: Any, lateral_g: Sequence[float]
           ) -> dict[str, Any]:
    top = max([abs(g) for g in lateral_g] + [1.0]) * 1.2
    gs = np.linspace(0.0, top, 25)
    rows = [base + lateral_transfer(split, vehicle, spec, g * G0, roll).corner_change for g in gs]
    loads = np.array(rows) / G0
    return {"lateral_g": gs.tolist(), "corner_loads_kg": {k: loads[:, i].tolist() for i, k in enumerate(CORNERS)}}


def _single_track(model: Model, spec: ChassisSpec, speed: float | None, need_yaw: bool
                  ) -> tuple[dict[str, Any], dict[str, Any] | None]:
    st = single_track_of(model, spec, speed)
    K = st.understeer_gradient
    out: dict[str, Any] = {
        "yaw_inertia_kg_m2": st.yaw_inertia, "a_m": st.a, "b_m": st.b,
        "cornering_stiffness_N_per_deg": {"front": st.cornering_front / DEG, "rear": st.cornering_rear / DEG},
        "understeer_gradient_deg_per_g": K * G0 * DEG,
        "balance": "understeer" if K > 0 else "oversteer" if K < 0 else "neutral steer",
        "characteristic_speed_m_per_s": math.sqrt(st.wheelbase / K) if K > 0 else None,
        "critical_speed_m_per_s": math.sqrt(-st.wheelbase / K) if K < 0 else None,
        "speed_m_per_s": speed, "yaw_rate_gain_per_s": None, "natural_frequency_hz": None, "damping_ratio": None,
        "time_to_90_percent_s": None,
    }
    if speed is None:
        if need_yaw:
            raise ChassisError(spec.source, "[chassis]", "speed", "is missing: the yaw response needs a speed "
                                                                  "(or give --speed)")
        return out, None
    yr = yaw_response(st, speed)
    out.update({"yaw_rate_gain_per_s": yr.yaw_rate_gain,
                "natural_frequency_hz": None if yr.natural_frequency is None else yr.natural_frequency / (2 * math.pi),
                "damping_ratio": yr.damping_ratio, "time_to_90_percent_s": yr.time_to_90})
    series = None
    if yr.yaw_rate_gain is not None and yr.natural_frequency is not None:
        t = np.linspace(0.0, max(1.0, 4.0 * (yr.time_to_90 or 0.5)), 201)
        r = step_yaw_rate(st, speed, t) / yr.yaw_rate_gain
        series = {"time_s": t.tolist(), "yaw_rate_over_steady": r.tolist(), "speed_m_per_s": speed}
    return out, series


def _f(x: float | None, spec: str, none: str = "—") -> str:
    return none if x is None else format(x, spec)


def format_chassis_report(data: dict[str, Any]) -> str:
    """Readable text of :func:`build_chassis_report`."""
    from .summary import table

    ms = data["mass_split"]
    case = f" · load case {data['case']}" if data.get("case", "base") != "base" else ""
    out = [f"CHASSIS (linear, steady-state estimates) · {data['model']}{case}   ({data['source']})",
           f"mass {data['mass_kg']:.2f} kg · CG {data['cg_height_m'] * 1e3:.1f} mm above ground, "
           f"{data['cg_behind_front_axle_m'] * 1e3:.1f} mm behind the front axle · wheelbase "
           f"{data['wheelbase_m'] * 1e3:.0f} mm · tracks {data['track_m']['front'] * 1e3:.0f} / "
           f"{data['track_m']['rear'] * 1e3:.0f} mm", "", "SPRUNG AND UNSPRUNG MASS"]
    rows = [[k, f"{c['unsprung_mass_kg']:.2f}", _f(c["unsprung_cg_height_m"] and c["unsprung_cg_height_m"] * 1e3,
                                                    ".1f")] for k, c in zip(SHORT, ms["corners"].values(),
                                                                            strict=True)]
    out.append(table(["corner", "unsprung kg", "CG height mm"], rows))
    out += [f"unsprung {ms['unsprung_kg']:.2f} kg · sprung {ms['sprung_mass_kg']:.2f} kg, CG "
            f"{ms['sprung_cg_height_m'] * 1e3:.1f} mm above ground, {ms['sprung_cg_behind_front_axle_m'] * 1e3:.1f} mm "
            "behind the front axle",
            f"links between wheel and body counted {ms['shared_unsprung_share']:.0%} unsprung "
            f"({ms['shared_share_source']})", "", "ROLL"]
    ro = data["roll"]

    def fr(d: dict[str, Any], scale: float, spec: str) -> list[str]:
        return [_f(None if d["front"] is None else d["front"] * scale, spec),
                _f(None if d["rear"] is None else d["rear"] * scale, spec)]

    out.append(table(["", "front", "rear"], [
        ["roll-centre height mm", *fr(ro["roll_centre_height_m"], 1e3, ".1f")],
        ["wheel rate N/mm", *fr(ro["wheel_rate_N_per_m"], 1e-3, ".1f")],
        ["bar rate at the wheel N/mm", *fr(ro["bar_wheel_rate_N_per_m"], 1e-3, ".1f")],
        ["roll stiffness N*m/deg", *fr(ro["roll_stiffness_N_m_per_deg"], 1.0, ".0f")],
    ]))
    out += [f"elastic front share K_f/(K_f+K_r) {ro['elastic_front_share']:.4f} · roll axis "
            f"{ro['roll_axis_height_at_sprung_cg_m'] * 1e3:.1f} mm at the sprung CG, which is "
            f"{ro['sprung_cg_above_roll_axis_m'] * 1e3:.1f} mm above it",
            f"roll gradient {ro['roll_gradient_deg_per_g']:.3f} deg/g (first order; "
            f"{ro['roll_gradient_with_cg_shift_deg_per_g']:.3f} deg/g with the CG shift in roll)",
            f"LATERAL LOAD TRANSFER DISTRIBUTION: front {ro['lateral_load_transfer_front_share']:.4f} of the total", ""]
    if data["aero"]:
        a = data["aero"]
        out += [f"AERO at {a['speed_m_per_s']:.1f} m/s ({a['speed_m_per_s'] * 3.6:.0f} km/h; {a['basis']}): downforce "
                f"{a['downforce_N']:.0f} N, drag {a['drag_N']:.0f} N at {a['drag_height_m'] * 1e3:.0f} mm, centre of "
                f"pressure {a['front_share']:.0%} front", ""]
    cols = [("static", data["static_corner_loads_kg"], None)]
    if data["aero"]:
        cols.append(("+aero", {k: data["static_corner_loads_kg"][k] + data["aero"]["corner_loads_kg"][k]
                               for k in CORNERS}, None))
    for lat in data["lateral"]:
        cols.append((f"a_y {lat['lateral_g']:+.2f} g", lat["corner_loads_kg"], lat))
    rows = [[f"corner {s} kg", *(f"{c[1][k]:.2f}" for c in cols)] for s, k in zip(SHORT, CORNERS, strict=True)]
    for axle in ("front", "rear"):
        for part in ("unsprung", "geometric", "elastic", "total"):
            rows.append([f"{axle} {part} kg", *("" if c[2] is None else f"{c[2]['transfer_kg'][axle][part]:+.2f}"
                                                for c in cols)])
    rows.append(["front share", *("" if c[2] is None else _f(c[2]["front_share_of_transfer"], ".4f") for c in cols)])
    rows.append(["roll deg", *("" if c[2] is None else f"{c[2]['roll_angle_deg']:+.3f}" for c in cols)])
    out += ["CORNER LOADS AND LATERAL TRANSFER (left -> right)" + (" with aero" if data["aero"] else ""),
            table(["", *(c[0] for c in cols)], rows)]
    for lat in data["lateral"]:
        if lat["wheels_lifted"]:
            out.append(f"  WARNING a_y {lat['lateral_g']:+.2f} g: negative load at {', '.join(lat['wheels_lifted'])}: "
                       "that wheel would lift and the linear result no longer holds")
    out += ["", "LONGITUDINAL TRANSFER"]
    out.append(table(["a_x g", "front->rear kg", "anti at", "share", "links kg", "springs kg", "pitch deg"], [
        [f"{lo['longitudinal_g']:+.2f}", f"{lo['transfer_kg']:+.2f}", lo["anti_axle"], f"{lo['anti_share']:.2f}",
         f"{lo['through_links_kg']:+.2f}", f"{lo['through_springs_kg']:+.2f}", _f(lo["pitch_angle_deg"], "+.3f")]
        for lo in data["longitudinal"]]))
    cw = data["cross_weight"]
    if cw:
        turns = f" = {cw['turns']:+.2f} turns of a {cw['thread_pitch_m'] * 1e3:g} mm thread" if cw["turns"] else ""
        out += ["", f"CROSS WEIGHT (from {cw['start']}: "
                + ", ".join(f"{s} {v:.2f} kg" for s, v in zip(SHORT, cw["corner_weights_before_kg"].values(),
                                                               strict=True)) + ")",
                f"diagonal (FR + RL) share {cw['current_share']:.4f} -> target "
                f"{cw['target_share']:.4f}: move the {cw['corner']} spring platform by "
                f"{cw['platform_change_m'] * 1e3:+.2f} mm{turns} (+ raises it: more preload; "
                f"{cw['wheel_equivalent_m'] * 1e3:+.2f} mm at the wheel)",
                "after: " + ", ".join(f"{s} {v:.2f} kg" for s, v in zip(SHORT, cw["corner_loads_after_kg"].values(),
                                                                          strict=True))]
    st = data["single_track"]
    if st:
        out += ["", "SINGLE-TRACK MODEL (linear bicycle model)",
                f"yaw inertia {st['yaw_inertia_kg_m2']:.1f} kg*m^2 (mass model) · cornering stiffness front "
                f"{st['cornering_stiffness_N_per_deg']['front']:.0f} N/deg, rear "
                f"{st['cornering_stiffness_N_per_deg']['rear']:.0f} N/deg (axle)",
                f"understeer gradient {st['understeer_gradient_deg_per_g']:+.3f} deg/g ({st['balance']})"]
        if st["characteristic_speed_m_per_s"]:
            out.append(f"characteristic speed {st['characteristic_speed_m_per_s']:.1f} m/s "
                       f"({st['characteristic_speed_m_per_s'] * 3.6:.0f} km/h)")
        if st["critical_speed_m_per_s"]:
            out.append(f"critical speed {st['critical_speed_m_per_s']:.1f} m/s "
                       f"({st['critical_speed_m_per_s'] * 3.6:.0f} km/h): unstable above it")
        if st["speed_m_per_s"] is not None:
            out.append(f"at {st['speed_m_per_s']:.1f} m/s: yaw-rate gain {_f(st['yaw_rate_gain_per_s'], '.3f')} 1/s · "
                       f"yaw natural frequency {_f(st['natural_frequency_hz'], '.3f')} Hz · damping ratio "
                       f"{_f(st['damping_ratio'], '.3f')} · step steer: 90 % of the steady yaw rate after "
                       f"{_f(st['time_to_90_percent_s'], '.3f')} s")
    out += ["", "ASSUMPTIONS", *(f"  - {a}" for a in data["assumptions"])]
    out += ["", "CAUTIONS", *(f"  - {line}" for line in data["cautions"])]
    return "\n".join(out)
