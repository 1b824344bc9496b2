"""Measurement sessions against the model: the Python API behind ``massmodel weigh``, ``tilt`` and ``swing``.

Each analysis returns plain data (JSON-ready, SI with the unit in every key or beside every value) built from the
pure reductions in :mod:`massmodel.measure.scales`, :mod:`massmodel.measure.reconcile`, :mod:`massmodel.measure.axlelift` and
:mod:`massmodel.measure.pendulum`; :mod:`massmodel.report.measure` turns it into terminal text.

Quick use::

    from massmodel.measure.analysis import analyse_weighing, lift_report, load_session_and_model, weighing_report
    session, model = load_session_and_model("parts_demo/bl3_measurements.toml")
    report = weighing_report(analyse_weighing(session, model))
    height = lift_report(session, model)["cg_height"]      # {value, standard_uncertainty, unit}
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from massmodel.core import cautions
from massmodel.core.errors import UsageError
from massmodel.core.model import Model
from massmodel.core.uncertainty import Estimate

from .axlelift import (
    SENSITIVITY_UNITS,
    CombinedHeight,
    LiftResult,
    combine_heights,
    lift_inputs,
    reduce_series,
)
from .pendulum import PendulumResult, compare_with_model, reduce_pendulum
from .reconcile import Reconciliation, reconcile, reconciled_model_text, write_reconciled_model
from .scales import (
    CornerWeights,
    Geometry,
    ScalesBalance,
    balance_from_corners,
    reduce_weighings,
    resolve_geometry,
)
from .session import CORNERS, MeasurementFileError, Session, load_session

__all__ = [
    "WEIGHING_FORMAT",
    "LIFT_FORMAT",
    "PENDULUM_FORMAT",
    "LIFT_ASSUMPTIONS",
    "WeighingAnalysis",
    "load_session_and_model",
    "analyse_weighing",
    "weighing_report",
    "write_updated_model",
    "analyse_lifts",
    "lift_report",
    "pendulum_report",
]

WEIGHING_FORMAT = "massmodel-weighing/1"
LIFT_FORMAT = "massmodel-axle-lift/1"
PENDULUM_FORMAT = "massmodel-pendulum/1"

CONVENTIONS = {
    "units": "SI: kg, m, s, rad, kg*m^2 (unit in every key or beside every value)",
    "loads": "mass-equivalent kg (load / 9.80665 m/s^2); corners front_left, front_right, rear_left, rear_right",
    "estimates": "{value, standard_uncertainty, unit}; standard_uncertainty null when it cannot be stated",
    "frame": "station = forward . p and lateral = left . p in the model frame (vehicle directions of the model's "
             "[vehicle]); heights above the ground plane",
}
LIFT_ASSUMPTIONS = (
    "suspension blocked (the body does not move on its springs while tilted)",
    "the same static loaded tyre radius front and rear, unchanged while lifting",
    "liquids (fuel, oil, coolant) move when the car tilts: the result is for the car as tested",
    "the car pivots about the wheel centres of the axle on the scales, which stay free to roll (brakes off, "
    "the car secured against rolling by wheel chocks that do not carry load)",
)


def load_session_and_model(
    session_path: str | Path, model_path: str | Path | None = None, overrides: Mapping[str, str] | None = None
) -> tuple[Session, Model | None]:
    """Read a session file and the model it names (or ``model_path``), with parameter overrides."""
    from massmodel.modelfile.loader import load_model

    session = load_session(session_path)
    path = Path(model_path) if model_path is not None else session.model_path
    if model_path is None and path is not None:  # a model the session names: blame its field if it cannot be read
        try:
            with open(path, "rb"):
                pass
        except OSError as exc:
            reason = "no such file" if isinstance(exc, FileNotFoundError) else (exc.strerror or str(exc))
            raise MeasurementFileError(session.source, "[session]", "model",
                                       f"cannot read '{path}' ({reason})") from None
    model = load_model(path, overrides=overrides) if path is not None else None
    return session, model


def _header(fmt: str, session: Session, model: Model | None) -> dict[str, Any]:
    """The keys every measurement report starts with."""
    return {
        "format": fmt,
        "session": session.name,
        "session_file": session.source,
        "date": session.date,
        "model": model.name if model is not None else None,
        "model_file": model.source if model is not None else None,
    }


def _est(e: Estimate | None, unit: str) -> dict[str, Any] | None:
    return None if e is None else e.to_dict(unit)


def _corners(values: Any) -> dict[str, float] | None:
    return None if values is None else {c: float(v) for c, v in zip(CORNERS, values, strict=True)}


# --- weighing ----------------------------------------------------------------------------------------------

@dataclass(frozen=True, slots=True)
class WeighingAnalysis:
    """Everything ``weigh`` computes: corner weights, CG, and (with a model) the reconciliation."""

    session: Session
    model: Model | None
    corners: CornerWeights
    geometry: Geometry
    balance: ScalesBalance
    lift: CombinedHeight | None
    reconciliation: Reconciliation | None


def analyse_weighing(session: Session, model: Model | None = None) -> WeighingAnalysis:
    """Reduce the session's weighings and, with a model, reconcile them (using the axle-lift height if present)."""
    if not session.weighings:
        raise UsageError(f"{session.source}: no [[weighing]] tables to reduce")
    vehicle = model.vehicle if model is not None else None
    geometry = resolve_geometry(session.car, vehicle, session.source)
    corners = reduce_weighings(session.weighings, session.scale_uncertainty)
    balance = balance_from_corners(corners, geometry)
    lift = None
    if session.lifts:
        lift = combine_heights(analyse_lifts(session, model))
    rec = None
    if model is not None:
        rec = reconcile(model, corners, geometry, lift.height if lift is not None else None)
    return WeighingAnalysis(session, model, corners, geometry, balance, lift, rec)


def weighing_report(a: WeighingAnalysis) -> dict[str, Any]:
    """Plain data of a weighing analysis (format ``massmodel-weighing/1``)."""
    s, c, b, g = a.session, a.corners, a.balance, a.geometry
    f = c.loads
    out: dict[str, Any] = {
        **_header(WEIGHING_FORMAT, s, a.model),
        "conventions": CONVENTIONS,
        "weighings": [
            {"label": lab, "loads_kg": _corners(row), "total_kg": float(row.sum()),
             "cross_fraction": float((row[1] + row[2]) / row.sum()),
             "pads": None if w.pads is None else dict(zip(CORNERS, w.pads, strict=True)), "note": w.note}
            for lab, row, w in zip(c.labels, c.readings, s.weighings, strict=True)
        ],
        "weighing_count": c.count,
        "corner_loads_kg": _corners(f),
        "corner_std_kg": _corners(c.std),
        "corner_standard_uncertainty_kg": _corners(c.uncertainty),
        "pad_standard_uncertainty_kg": c.pad_uncertainty,
        "pad_offsets_kg": c.offsets,
        "total_mass": b.mass.to_dict("kg"),
        "axle_loads_kg": {"front": float(f[0] + f[1]), "rear": float(f[2] + f[3])},
        "side_loads_kg": {"left": float(f[0] + f[2]), "right": float(f[1] + f[3])},
        "front_fraction": b.front_fraction.to_dict("1"),
        "left_fraction": b.left_fraction.to_dict("1"),
        "cross_fraction": b.cross_fraction.to_dict("1"),
        "cross_weight_kg": {"front_right_plus_rear_left": float(f[1] + f[2]),
                            "front_left_plus_rear_right": float(f[0] + f[3])},
        "diagonal_preload_kg": b.wedge,
        "no_preload_corner_loads_kg": _corners(b.no_preload_corners),
        "cg": {
            "behind_front_axle": b.behind_front_axle.to_dict("m"),
            "left_of_centre": b.left_of_centre.to_dict("m"),
            "station": _est(b.station(a.model.vehicle), "m") if a.model is not None and a.model.vehicle else None,
            "height_above_ground": _est(a.lift.height, "m") if a.lift is not None else None,
            "height_source": "from the axle lift of this session" if a.lift is not None else
            "not measured: level weighing cannot give the CG height",
        },
        "geometry": {"wheelbase_m": g.wheelbase, "track_front_m": g.track_front, "track_rear_m": g.track_rear,
                     "source": g.source},
        "notes": _weighing_notes(a),
        "reconciliation": _reconciliation_dict(a.reconciliation) if a.reconciliation is not None else None,
        "updated_model": None,
        "cautions": cautions.for_report("lifting", "scales"),  # cars go onto the pads on jacks or ramps
    }
    return out


def _weighing_notes(a: WeighingAnalysis) -> list[str]:
    notes = []
    n = a.corners.count
    if n < 3:
        notes.append(f"{n} weighing{'s' if n != 1 else ''}: MIL-W-3947B takes the actual weight as the mean of three "
                     "independent weighings with the scales unloaded between them")
    if a.corners.uncertainty is None:
        notes.append("no repeat weighings and no [scales] uncertainty: the results carry no uncertainty")
    if n >= 2 and a.corners.offsets is None and all(w.pads is not None for w in a.session.weighings):
        notes.append("the pads never moved between weighings: pad offsets cannot be told apart from the loads")
    return notes


def _reconciliation_dict(r: Reconciliation) -> dict[str, Any]:
    mb = r.model_balance
    f = r.scales.mass
    u = r.unaccounted
    return {
        "model_mass_kg": mb.mass,
        "scales_mass": f.to_dict("kg"),
        "model_cg": {"station_m": r.model_station, "lateral_m": mb.cg_left_of_centre,
                     "height_above_ground_m": mb.cg_height},
        "scales_cg": {"station": r.scales_station.to_dict("m"), "lateral": r.scales.left_of_centre.to_dict("m"),
                      "height_above_ground": _est(r.car_height, "m")},
        "difference_scales_minus_model": {
            "mass_kg": f.value - mb.mass,
            "station_m": r.scales_station.value - r.model_station,
            "lateral_m": r.scales.left_of_centre.value - mb.cg_left_of_centre,
            "height_m": None if r.car_height is None else r.car_height.value - mb.cg_height,
        },
        "model_corner_loads_kg": _corners(mb.corners),
        "scales_corner_loads_kg": _corners(r.scales_corners),
        "model_front_fraction": mb.front_fraction,
        "model_cross_fraction": mb.cross_fraction,
        "unaccounted": {
            "mass": u.mass.to_dict("kg"),
            "station": _est(u.station, "m"),
            "lateral": _est(u.lateral, "m"),
            "height_above_ground": _est(u.height, "m"),
            "height_source": "from the axle-lift CG height of this session" if u.height is not None else
            "unknown: level weighing cannot give it (add an axle-lift series)",
            "determined": u.determined,
            "height_poorly_determined": u.height is not None and u.height.u is not None
            and u.height.u > mb.cg_height,
            "assumption": "the model is taken as exact; uncertainties come from the scale readings and the "
                          "axle-lift height only",
        },
    }


def write_updated_model(
    a: WeighingAnalysis,
    output: str | Path,
    height: str | float = "auto",
    overrides: Mapping[str, str] | None = None,
) -> dict[str, Any]:
    """Write a model file that extends the analysed model with the unaccounted item; return what was written.

    Parameters
    ----------
    a : WeighingAnalysis
        With a model.
    output : str or Path
        The new model file (never the model file or the session file).
    height : "auto", "model-cg", "lift" or float
        The item's CG height above the ground: from the axle lift ("lift"; "auto" when the session has one), at the
        model's CG height ("model-cg"; "auto" without an axle lift: the model's CG height is then unchanged), or a
        height in m.
    overrides : mapping, optional
        The ``--set`` overrides the model was loaded with.

    Returns
    -------
    dict
        ``{"file", "extends", "part", "height_above_ground_m", "height_source", "check"}``; ``check`` compares the
        new model's mass and CG with the scales.
    """
    if a.model is None or a.reconciliation is None:
        raise UsageError("an updated model needs a model to extend (name it in [session] model or with --model)")
    rec = a.reconciliation
    u = rec.unaccounted
    if isinstance(height, str) and height not in ("auto", "model-cg", "lift"):
        raise UsageError(f"item height: expected auto, model-cg, lift or a length, got {height!r}")
    if height == "lift" and u.height is None:
        raise UsageError(f"{a.session.source}: item height 'lift' needs an [[axle_lift]] series in the session")
    if height == "lift" or (height == "auto" and u.height is not None):
        assert u.height is not None
        z = u.height.value
        note = (f"{u.height.text(1e3, 0, 'mm')} above the ground, from the axle-lift CG height "
                f"{rec.car_height.text(1e3, 1, 'mm') if rec.car_height else ''}")
        source = "axle lift"
    elif height in ("auto", "model-cg"):
        z = rec.model_balance.cg_height
        note = (f"not known from level weighing; placed at the model's CG height {z * 1e3:.1f} mm above the ground "
                "so that the model's CG height is unchanged")
        source = "model CG height"
    else:
        z = float(height)
        note = f"{z * 1e3:.1f} mm above the ground, as given by the user"
        source = "given"
    label = f"session '{a.session.name}', {a.session.source}"
    text = reconciled_model_text(rec, a.model, a.model.source, output, z, note, label, overrides)
    new = write_reconciled_model(text, output, protected=(a.model.source, a.session.source))
    total = new.mass_properties()
    v = a.model.vehicle
    assert v is not None
    part = next(c for c in new.components if c.path.startswith("unaccounted/") and
                c.path not in {x.path for x in a.model.components})
    return {
        "file": str(output),
        "extends": a.model.source,
        "part": part.path,
        "part_cg_model_frame_m": part.props.center.tolist(),
        "height_above_ground_m": z,
        "height_source": source,
        "check": {
            "mass_kg": total.mass,
            "station_m": float(v.forward @ total.center),
            "lateral_m": float(v.left @ total.center),
            "height_above_ground_m": float(v.up @ total.center) - v.ground_level,
        },
    }


# --- axle lift ---------------------------------------------------------------------------------------------

def analyse_lifts(session: Session, model: Model | None = None) -> list[LiftResult]:
    """Reduce every axle-lift series of the session."""
    if not session.lifts:
        raise UsageError(f"{session.source}: no [[axle_lift]] tables to reduce")
    vehicle = model.vehicle if model is not None else None
    out = []
    for series in session.lifts:
        wheelbase, radius = lift_inputs(series, session.car, vehicle, session.source)
        out.append(reduce_series(series, wheelbase, radius))
    return out


def _lift_dict(r: LiftResult) -> dict[str, Any]:
    dh = r.point_heights
    return {
        "name": r.name,
        "lifted": r.lifted,
        "axle_on_scales": r.staying,
        "wheelbase_m": r.wheelbase,
        "tyre_loaded_radius_m": r.tyre_radius,
        "total_mass_kg": r.total_mass,
        "level_load_kg": r.level_load,
        "readings": [
            {"direction": d.value, "angle_rad": float(th), "angle_deg": float(np.degrees(th)),
             "tan_angle": float(np.tan(th)), "load_kg": float(ld), "load_change_kg": float(ld - r.level_load),
             "cg_height_m": float(h), "fit_residual_kg": float(res)}
            for d, th, ld, h, res in zip(r.directions, r.angles, r.loads, dh, r.fit.residuals[1:], strict=True)
        ],
        "fit": {
            "model": "load_kg = intercept + slope * tan(angle), level reading included, ordinary least squares",
            "slope_kg": r.fit.slope, "slope_standard_error_kg": r.fit.slope_se,
            "intercept_kg": r.fit.intercept, "intercept_standard_error_kg": r.fit.intercept_se,
            "residual_std_kg": r.fit.residual_std, "degrees_of_freedom": r.fit.dof,
            "level_residual_kg": float(r.fit.residuals[0]),
        },
        "cg_height_fit": r.height.to_dict("m"),
        "cg_height_interval95_m": list(r.interval95) if r.interval95 is not None else None,
        "cg_height": r.height_total.to_dict("m"),
        "point_values": {"mean_m": float(dh.mean()), "std_m": r.point_scatter},
        "by_direction": {k: v.to_dict("m") for k, v in r.by_direction.items()},
        "sensitivities": {
            k: {"si": v, "si_unit": f"m per {'rad' if k == 'angle' else 'kg' if k == 'mass' else 'm'}",
                "display": v * 1e3 * SENSITIVITY_UNITS[k][1], "display_unit": f"mm per {SENSITIVITY_UNITS[k][0]}"}
            for k, v in r.sensitivities.items()
        },
        "uncertainty_budget_m": {"fit": r.height.u, **r.budget},
    }


def lift_report(session: Session, model: Model | None = None) -> dict[str, Any]:
    """Plain data of the session's axle-lift series (format ``massmodel-axle-lift/1``)."""
    results = analyse_lifts(session, model)
    combined = combine_heights(results)
    out: dict[str, Any] = {
        **_header(LIFT_FORMAT, session, model),
        "conventions": CONVENTIONS,
        "method": "ISO 10392:2011 axle lift: h = r_s + L (F' - F) / (W tan(theta)), sin(theta) = rise / L",
        "assumptions": list(LIFT_ASSUMPTIONS),
        "series": [_lift_dict(r) for r in results],
        "cg_height": combined.height.to_dict("m"),
        "shared_inputs_m": combined.common,
        "series_chi2": combined.chi2,
        "series_consistent": combined.consistent,
        "model_cg_height_above_ground_m": None,
        "cautions": cautions.for_report("lifting", "scales"),
    }
    if model is not None and model.vehicle is not None:
        from massmodel.vehicle.balance import static_balance

        h = static_balance(model.mass_properties(), model.vehicle).cg_height
        out["model_cg_height_above_ground_m"] = h
        out["difference_measured_minus_model_m"] = combined.height.value - h
    return out


# --- pendulum ----------------------------------------------------------------------------------------------

def _pendulum_dict(r: PendulumResult, test: Any, model: Model | None) -> dict[str, Any]:
    units_of = {"period": "s", "fixture_period": "s", "body_mass": "kg", "fixture_mass": "kg"}
    out: dict[str, Any] = {
        "name": r.name,
        "kind": r.kind.value,
        "periods_s": test.periods.tolist(),
        "period": r.period.to_dict("s"),
        "period_count": r.count,
        "amplitude_factor": r.amplitude_factor,
        "fixture_period": _est(r.fixture_period, "s"),
        "gravity_m_s2": r.gravity,
        "gravity_source": "local gravity given in the session" if r.gravity_given else
        "standard gravity: the session gives no local_gravity",
        "inputs": {k: getattr(test, k) for k in ("body_mass", "wire_length", "wire_spacing", "wire_radius",
                                                   "pivot_to_cg") if getattr(test, k) is not None},
        "inertia_system_kg_m2": r.inertia_system,
        "inertia_fixture_kg_m2": r.inertia_fixture,
        "inertia_about_pendulum_axis": r.inertia_axis.to_dict("kg*m^2"),
        "inertia_about_cg": _est(r.inertia_cg, "kg*m^2"),
        "sensitivities": {k: {"value": v, "unit": f"kg*m^2 per {units_of.get(k, 'm')}"}
                          for k, v in r.sensitivities.items()},
        "uncertainty_budget_kg_m2": r.budget,
        "comparison": None,
    }
    if model is not None and test.compare is not None:
        c = compare_with_model(r, test, model)
        out["comparison"] = {
            "axis_model_axes": c.axis.tolist(), "axis": c.axis_name, "about_cg": c.about_cg,
            "axis_point_m": c.point.tolist(), "groups": list(c.groups), "exclude": list(c.exclude),
            "model_mass_kg": c.model_mass, "model_inertia_kg_m2": c.model_inertia,
            "measured": c.measured.to_dict("kg*m^2"), "difference_kg_m2": c.difference,
            "relative_difference": c.relative if c.model_inertia else None, "model_pivot_to_cg_m": c.model_pivot_to_cg, "notes": list(c.notes),
        }
    return out


def pendulum_report(session: Session, model: Model | None = None) -> dict[str, Any]:
    """Plain data of the session's pendulum tests (format ``massmodel-pendulum/1``)."""
    if not session.pendulums:
        raise UsageError(f"{session.source}: no [[pendulum]] tables to reduce")
    tests = []
    for t in session.pendulums:
        tests.append(_pendulum_dict(reduce_pendulum(t), t, model))
    return {
        **_header(PENDULUM_FORMAT, session, model),
        "conventions": {**CONVENTIONS, "inertia": "moment of inertia about the stated axis, kg*m^2; the model's "
                        "value is n . I_P . n with I_P its tensor about a point of the axis (tensor convention)"},
        "formulas": {
            "bifilar": "I = m g T^2 D^2 / (16 pi^2 L)",
            "trifilar": "I = m g R^2 T^2 / (4 pi^2 L), fixture (platform) subtracted",
            "compound": "I_pivot = (m d) g T^2 / (4 pi^2), fixture subtracted; I_cg = I_pivot - m d^2",
        },
        "tests": tests,
        "cautions": cautions.for_report("lifting"),
    }
