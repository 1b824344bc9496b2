"""Model versus scales: the mass the model lacks, where its CG must be, and an updated model file that adds it.

If the scales show a total ``W`` with CG ``x_s`` and the model ``m`` with CG ``x_m``, the model and the car agree
when one more item of mass ``Δm = W − m`` is added at ``x_u = (W x_s − m x_m) / Δm`` (the same for the lateral
coordinate). Level weighing gives no height: the item's height follows only from a measured CG height of the car
(the axle-lift result), ``z_u = (W h_s − m h_m) / Δm``. Because ``Δm`` is small against ``W``, the item's position
is much less certain than the car's CG; the standard uncertainties say how much. The model itself is taken as exact.

References
----------
.. [1] Goldstein, Poole & Safko, *Classical Mechanics*, 3rd ed. (2002), §5.3: the CG of a combined body is the
   mass-weighted mean, ``W x_s = m x_m + Δm x_u``.
.. [2] JCGM 100:2008 (GUM), §5.1.2 (propagation of uncertainty): with ``N = c · F − m x_m`` and ``D = 1 · F − m``
   linear in the corner loads F, ``∂(N/D)/∂F_i = (c_i − N/D) / D``.
"""

from __future__ import annotations

import json
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

from massmodel.core.atomic import write_text_atomic
from massmodel.core.errors import UsageError, UserError
from massmodel.core.model import Model, Vehicle
from massmodel.core.uncertainty import Estimate
from massmodel.vehicle.balance import Balance, static_balance

from .scales import CornerWeights, Geometry, ScalesBalance, balance_from_corners, lateral_coefficients

__all__ = [
    "Unaccounted",
    "Reconciliation",
    "reconcile",
    "reconciled_model_text",
    "write_reconciled_model",
    "ReconcileError",
    "UNACCOUNTED_GROUP",
    "UNACCOUNTED_COLOUR",
]

FloatArray = npt.NDArray[np.float64]

#: The group of the item written by :func:`write_reconciled_model`.
UNACCOUNTED_GROUP = "unaccounted"
#: Its colour: a loud magenta no demo part uses, so it stands out in pictures.
UNACCOUNTED_COLOUR = "#d81b8c"


class ReconcileError(UserError, ValueError):
    """The updated model cannot be written (e.g. the model is heavier than the car, or it would overwrite input)."""


@dataclass(frozen=True, slots=True)
class Unaccounted:
    """The item that makes model and scales agree.

    Attributes
    ----------
    mass : Estimate
        ``W − m``, kg (negative when the model is heavier than the car).
    station, lateral : Estimate or None
        Its CG's forward coordinate (forward · p, model frame) and lateral offset (left · p), m; None when the mass
        difference is exactly zero.
    height : Estimate or None
        Its CG height above the ground, m, from the measured CG height of the car; None without one.
    determined : bool
        Whether the mass difference exceeds twice its standard uncertainty (with no uncertainty known: whether it
        is non-zero). When False the position is not meaningful.
    """

    mass: Estimate
    station: Estimate | None
    lateral: Estimate | None
    height: Estimate | None
    determined: bool


@dataclass(frozen=True, slots=True)
class Reconciliation:
    """Model and scales side by side, and the unaccounted item.

    Attributes
    ----------
    model_balance : Balance
        The model's static balance (lever-rule corners, no diagonal preload).
    model_station : float
        Model CG forward coordinate, m.
    scales_corners : (4,) float
        Mean corner loads on the scales, kg.
    scales : ScalesBalance
        What the scales show.
    scales_station : Estimate
        Scales CG forward coordinate in the model frame, m.
    car_height : Estimate or None
        Measured CG height of the car above the ground (axle lift), m.
    unaccounted : Unaccounted
    vehicle : Vehicle
    """

    model_balance: Balance
    model_station: float
    scales_corners: FloatArray
    scales: ScalesBalance
    scales_station: Estimate
    car_height: Estimate | None
    unaccounted: Unaccounted
    vehicle: Vehicle

    def item_point(self, height_above_ground: float) -> FloatArray:
        """(3,) model coordinates of the unaccounted item's CG at the given height above the ground, m."""
        u = self.unaccounted
        if u.station is None or u.lateral is None:
            raise ReconcileError("the model and the scales agree in mass: there is no item to place")
        v = self.vehicle
        coords = np.array([u.station.value, u.lateral.value, v.ground_level + height_above_ground])
        return v.basis.T @ coords


def _quotient(c: FloatArray, f: FloatArray, u: FloatArray | None, n_const: float, d: float) -> Estimate:
    """``(c · F − n_const) / d`` with ``d = 1 · F − m``, and its uncertainty from the corner loads."""
    q = (float(c @ f) - n_const) / d
    if u is None:
        return Estimate(q, None)
    return Estimate(q, float(np.sqrt(np.sum(((c - q) / d * u) ** 2))))


def reconcile(
    model: Model, corners: CornerWeights, geometry: Geometry, car_height: Estimate | None = None
) -> Reconciliation:
    """Compare the model with the scales and find the unaccounted item.

    Parameters
    ----------
    model : Model
        With a [vehicle] (its axes, front axle station and ground level place the scale CG in the model frame).
    corners : CornerWeights
        Mean corner loads, kg.
    geometry : Geometry
        Wheelbase and tracks used for the reduction, m.
    car_height : Estimate, optional
        Measured CG height of the car above the ground (e.g. from the axle lift), m.

    Returns
    -------
    Reconciliation

    References
    ----------
    Module docstring (combined CG, propagation of uncertainty).
    """
    if model.vehicle is None:
        raise UsageError(f"{model.source or model.name}: the model has no [vehicle] section, so the scale readings "
                         "cannot be placed in its frame")
    v = model.vehicle
    total = model.mass_properties()
    mb = static_balance(total, v)
    m = total.mass
    x_m = float(v.forward @ total.center)
    y_m = float(v.left @ total.center)
    scales = balance_from_corners(corners, geometry)
    f = corners.loads
    u = corners.uncertainty
    d = float(f.sum()) - m
    du = corners.total_uncertainty
    dm = Estimate(d, du)
    determined = abs(d) > 2.0 * du if du is not None else d != 0.0
    station = lateral = height = None
    if d != 0.0:
        cx = v.front_axle_station - geometry.wheelbase * np.array([0.0, 0.0, 1.0, 1.0])
        station = _quotient(cx, f, u, m * x_m, d)
        lateral = _quotient(lateral_coefficients(geometry), f, u, m * y_m, d)
        if car_height is not None:
            w = float(f.sum())
            z = (w * car_height.value - m * mb.cg_height) / d
            z_u = None
            if u is not None and car_height.u is not None:
                z_u = float(np.sqrt(np.sum(((car_height.value - z) / d * u) ** 2) + (w / d * car_height.u) ** 2))
            height = Estimate(z, z_u)
    return Reconciliation(
        model_balance=mb, model_station=x_m, scales_corners=f.copy(), scales=scales,
        scales_station=scales.station(v), car_height=car_height,
        unaccounted=Unaccounted(dm, station, lateral, height, determined), vehicle=v,
    )


def _toml_string(text: str) -> str:
    return json.dumps(text, ensure_ascii=False)  # a JSON string is a valid TOML basic string


def reconciled_model_text(
    rec: Reconciliation,
    model: Model,
    model_file: str | Path,
    output: str | Path,
    height_above_ground: float,
    height_note: str,
    session_label: str,
    overrides: Mapping[str, str] | None = None,
) -> str:
    """Text of a model file that ``extends`` the model and adds the unaccounted item.

    The item is a point mass in the group ``unaccounted`` with ``measured`` properties (maturity "measured"), placed
    at the station and lateral offset found by :func:`reconcile` and at ``height_above_ground``.

    Parameters
    ----------
    rec : Reconciliation
    model : Model
        The model as reconciled (its component paths keep the new path unique).
    model_file : str or Path
        The model file to extend.
    output : str or Path
        Where the text will be written (the ``extends`` path is relative to its folder).
    height_above_ground : float
        m.
    height_note : str
        Where the height came from, for the part's note.
    session_label : str
        Session name and file, for the comments and the note.
    overrides : mapping, optional
        Parameter overrides the model was loaded with (``--set``); written to [parameters] so the new file
        reproduces the reconciled state.
    """
    u = rec.unaccounted
    if u.mass.value <= 0.0:
        raise ReconcileError(
            f"the model is heavier than the car by {-u.mass.value:.3f} kg: there is nothing to add; look for the "
            "over-estimate in the model instead (its CG is given as the unaccounted item's position)"
        )
    point = rec.item_point(height_above_ground)
    out_dir = Path(output).resolve().parent
    rel = os.path.relpath(Path(model_file).resolve(), out_dir).replace(os.sep, "/")
    paths = {c.path for c in model.components}
    path, k = f"{UNACCOUNTED_GROUP}/from_scales", 1
    while path in paths or any(p.startswith(path + "/") for p in paths):
        k += 1
        path = f"{UNACCOUNTED_GROUP}/from_scales_{k}"
    note = (
        f"UNACCOUNTED: the mass the scales show beyond the model ({session_label}); not a real part. Mass "
        f"{u.mass.text(1.0, 3, 'kg')}, station {u.station.text(1e3, 1, 'mm') if u.station else '-'}, lateral "
        f"{u.lateral.text(1e3, 1, 'mm') if u.lateral else '-'}; height {height_note}. Find it and model it."
    )
    cg = ", ".join(f"\"{x:.6f} m\"" for x in point)
    lines = [
        "# Written by massmodel: the model it extends plus one UNACCOUNTED item, the mass and CG that the scales show",
        "# beyond the model. Replace the item by real parts as they are found. Edit freely; massmodel never writes",
        "# over the model it extends.",
        f"# Session: {' '.join(session_label.splitlines())}",  # a comment ends at the line end
        "",
        "[model]",
        f"name = {_toml_string(model.name + ' + unaccounted (scales)')}",
        f"description = {_toml_string('Reconciled with the scales: ' + session_label)}",
        f"extends = {_toml_string(rel)}",
    ]
    if overrides:
        lines += ["", "[parameters]  # as the model was loaded for the reconciliation (--set)"]
        lines += [f"{name} = {_toml_string(text)}" for name, text in overrides.items()]
    lines += [
        "",
        "[[part]]",
        f"path = {_toml_string(path)}",
        "shape = \"point\"",
        f"measured = {{ mass = \"{u.mass.value:.6f} kg\", cg = [{cg}] }}  # model frame",
        "maturity = \"measured\"",
        f"colour = \"{UNACCOUNTED_COLOUR}\"",
        f"note = {_toml_string(note)}",
        "",
    ]
    return "\n".join(lines)


def write_reconciled_model(
    text: str, output: str | Path, protected: tuple[str | Path, ...] = ()
) -> Model:
    """Check the text as a model file, then write it atomically; never over a file in ``protected``.

    Parameters
    ----------
    text : str
        From :func:`reconciled_model_text`.
    output : str or Path
        The new model file.
    protected : tuple of paths
        Input files that must not be overwritten (the model file, the session file).

    Returns
    -------
    Model
        The new model as loaded from the text (so the caller can show that it agrees with the scales).

    Raises
    ------
    ReconcileError
        When ``output`` is one of the protected files.
    """
    from massmodel.modelfile.loader import loads_model

    target = Path(output)
    for p in protected:
        if target.resolve() == Path(p).resolve():
            raise ReconcileError(f"{output}: refusing to write over the input file {p}; choose another name")
    target.parent.mkdir(parents=True, exist_ok=True)
    new_model = loads_model(text, label=str(output), base_dir=target.resolve().parent)
    write_text_atomic(target, text)
    return new_model
