"""Corner-weight reduction: from four scale readings to total mass, CG position, fractions and cross weight.

Loads are mass-equivalent kg (load / g_n), corner order FL, FR, RL, RR (:data:`massmodel.measure.session.CORNERS`).
Several weighings are averaged corner by corner, as the trade does: the actual weight is the mean of independent
weighings with the scales unloaded between them (MIL-W-3947B takes three). When the pads are moved between
weighings (pads rotated, or the car turned on them), each pad's zero offset can be told apart from the corner loads
(:func:`pad_offsets`).

Conventions: ``behind_front_axle`` is the distance from the front axle line back to the CG along the vehicle's
forward direction (Jazar's a1); ``left_of_centre`` is the lateral CG offset, positive to the left. Both are in the
vehicle directions of the model's :class:`massmodel.core.model.Vehicle`; ``station = front_axle_station - a1`` is the
CG's forward coordinate (forward · p) in the model frame.

References
----------
.. [1] Jazar, *Vehicle Dynamics: Theory and Application*, Springer (2008), ch. 2, eqs. 2.1–2.2 (from memory) and Example 40
   (a1 = l F_rear / (F_front + F_rear) for a parked car on level ground).
.. [2] MIL-W-3947B, weight and balance: actual weight = mean of three independent weighings, scales unloaded
   between them.
.. [3] JCGM 100:2008 (GUM), §5.1: law of propagation of uncertainty, ``u_y² = Σ (∂f/∂x_i)² u_i²`` for
   independent inputs.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.model import Vehicle
from massmodel.core.uncertainty import Estimate

from .session import CarGeometry, MeasurementFileError, Weighing

__all__ = [
    "CornerWeights",
    "ScalesBalance",
    "Geometry",
    "reduce_weighings",
    "pad_offsets",
    "balance_from_corners",
    "resolve_geometry",
    "ratio_with_uncertainty",
    "lateral_coefficients",
    "MIL_W_3947B_WEIGHINGS",
]

FloatArray = npt.NDArray[np.float64]

#: Number of independent weighings whose mean is the actual weight (MIL-W-3947B).
MIL_W_3947B_WEIGHINGS = 3

_FRONT = np.array([1.0, 1.0, 0.0, 0.0])
_REAR = np.array([0.0, 0.0, 1.0, 1.0])
_LEFT = np.array([1.0, 0.0, 1.0, 0.0])
_CROSS = np.array([0.0, 1.0, 1.0, 0.0])  # FR + RL


@dataclass(frozen=True, slots=True)
class CornerWeights:
    """Corner loads averaged over one or more weighings.

    Attributes
    ----------
    loads : (4,) float
        Mean load at FL, FR, RL, RR, kg.
    readings : (n, 4) float
        Every weighing's loads, kg.
    labels : tuple of str
        The weighings' labels.
    std : (4,) float or None
        Sample standard deviation of each corner over the weighings (n ≥ 2), kg.
    uncertainty : (4,) float or None
        Standard uncertainty of each mean corner load, kg: ``sqrt(std²/n + u_pad²)`` with ``u_pad`` the stated
        uncertainty of one pad reading, which averaging does not reduce (treated as systematic); None when neither
        repeats nor a pad uncertainty are given.
    pad_uncertainty : float or None
        The stated standard uncertainty of one pad reading, kg.
    offsets : dict or None
        Estimated zero offset of each pad relative to the pads' mean, kg (see :func:`pad_offsets`).
    """

    loads: FloatArray
    readings: FloatArray
    labels: tuple[str, ...]
    std: FloatArray | None
    uncertainty: FloatArray | None
    pad_uncertainty: float | None
    offsets: dict[str, float] | None

    @property
    def count(self) -> int:
        """Number of weighings."""
        return int(self.readings.shape[0])

    @property
    def total(self) -> float:
        """Total mass, kg (the sum of the mean corner loads = the mean of the weighings' totals)."""
        return float(self.loads.sum())

    @property
    def totals(self) -> FloatArray:
        """(n,) each weighing's total, kg."""
        return self.readings.sum(axis=1)

    @property
    def total_uncertainty(self) -> float | None:
        """Standard uncertainty of the total, kg (corners independent)."""
        return None if self.uncertainty is None else float(np.sqrt(np.sum(self.uncertainty**2)))

    def fraction(self, which: str) -> Estimate:
        """('front' | 'left' | 'cross') share of the total with its standard uncertainty."""
        c = {"front": _FRONT, "left": _LEFT, "cross": _CROSS}[which]
        return ratio_with_uncertainty(c, self.loads, self.uncertainty)


def ratio_with_uncertainty(
    coefficients: npt.ArrayLike, loads: npt.ArrayLike, uncertainty: npt.ArrayLike | None
) -> Estimate:
    """``q = (c · F) / (1 · F)`` and its standard uncertainty for independent corner loads.

    Every CG coordinate and share from corner weights has this form; ``∂q/∂F_i = (c_i − q) / ΣF`` (GUM §5.1).

    Parameters
    ----------
    coefficients : (4,) float
        ``c``.
    loads : (4,) float
        Corner loads F, kg.
    uncertainty : (4,) float or None
        Standard uncertainties of F, kg.

    Returns
    -------
    Estimate
        ``q`` in the unit of ``c`` (m for CG coordinates, 1 for shares).
    """
    c = np.asarray(coefficients, dtype=float)
    f = np.asarray(loads, dtype=float)
    w = float(f.sum())
    q = float(c @ f) / w
    if uncertainty is None:
        return Estimate(q, None)
    grad = (c - q) / w
    return Estimate(q, float(np.sqrt(np.sum((grad * np.asarray(uncertainty, dtype=float)) ** 2))))


def pad_offsets(readings: npt.ArrayLike, pads: Sequence[Sequence[str]]) -> dict[str, float] | None:
    """Zero offsets of the scale pads, estimated from weighings with the pads moved between them.

    The additive model ``reading[k, c] = F[c] + b[pad(k, c)] + e`` is fitted by least squares with ``Σ b = 0``
    (a common offset of all pads cannot be told apart from the loads). With the pads never moved the offsets are not
    identifiable and None is returned.

    Parameters
    ----------
    readings : (n, 4) float
        Loads FL, FR, RL, RR of each weighing, kg.
    pads : n sequences of 4 str
        The pad under FL, FR, RL, RR in each weighing.

    Returns
    -------
    dict or None
        Pad name → offset, kg, in order of first appearance.

    References
    ----------
    Two-way additive model without interaction, least squares (common practice, no source).
    """
    r = np.asarray(readings, dtype=float)
    names: list[str] = []
    for row in pads:
        for p in row:
            if p not in names:
                names.append(p)
    n, npads = r.shape[0], len(names)
    rows = []
    for k in range(n):
        for c in range(4):
            x = np.zeros(4 + npads)
            x[c] = 1.0
            x[4 + names.index(pads[k][c])] = 1.0
            rows.append(x)
    a = np.array(rows)
    constraint = np.concatenate([np.zeros(4), np.ones(npads)])
    a_full = np.vstack([a, constraint])
    if np.linalg.matrix_rank(a_full) < 4 + npads:
        return None
    b = np.concatenate([r.reshape(-1), [0.0]])
    sol = np.linalg.lstsq(a_full, b, rcond=None)[0]
    return {name: float(sol[4 + i]) for i, name in enumerate(names)}


def reduce_weighings(weighings: Sequence[Weighing], pad_uncertainty: float | None = None) -> CornerWeights:
    """Average one or more weighings corner by corner.

    Parameters
    ----------
    weighings : sequence of Weighing
        At least one; loads in kg.
    pad_uncertainty : float, optional
        Standard uncertainty of one pad reading, kg (e.g. from the calibration certificate).

    Returns
    -------
    CornerWeights

    References
    ----------
    MIL-W-3947B (mean of independent weighings); GUM §4.2 (type A: standard uncertainty of a mean = s/√n).
    """
    if not weighings:
        raise UsageError("no weighings to reduce: a session needs at least one [[weighing]]")
    readings = np.array([w.loads for w in weighings], dtype=float)
    n = readings.shape[0]
    loads = readings.mean(axis=0)
    std = readings.std(axis=0, ddof=1) if n >= 2 else None
    var = np.zeros(4)
    known = False
    if std is not None:
        var = var + std**2 / n
        known = True
    if pad_uncertainty is not None:
        var = var + pad_uncertainty**2
        known = True
    offsets = None
    if n >= 2 and all(w.pads is not None for w in weighings):
        offsets = pad_offsets(readings, [w.pads for w in weighings if w.pads is not None])
    return CornerWeights(
        loads=loads, readings=readings, labels=tuple(w.label for w in weighings), std=std,
        uncertainty=np.sqrt(var) if known else None, pad_uncertainty=pad_uncertainty, offsets=offsets,
    )


@dataclass(frozen=True, slots=True)
class Geometry:
    """Wheelbase and tracks used for a reduction, m, and where each came from ('session [car]' or 'model')."""

    wheelbase: float
    track_front: float
    track_rear: float
    source: dict[str, str]


def resolve_geometry(car: CarGeometry, vehicle: Vehicle | None, session_file: str) -> Geometry:
    """The wheelbase and tracks to use: the session's [car] values (measured on the day) or the model's.

    Where both are given they must agree within ``car.tolerance``.

    Raises
    ------
    MeasurementFileError
        Naming the session file, [car] and the field, when a value is missing or the two disagree.
    """
    out: dict[str, float] = {}
    source: dict[str, str] = {}
    for key in ("wheelbase", "track_front", "track_rear"):
        mine = getattr(car, key)
        theirs = getattr(vehicle, key) if vehicle is not None else None
        if mine is not None and theirs is not None and abs(mine - theirs) > car.tolerance:
            raise MeasurementFileError(
                session_file, "[car]", key,
                f"{mine * 1e3:.1f} mm differs from the model's [vehicle] {key} {theirs * 1e3:.1f} mm by "
                f"{abs(mine - theirs) * 1e3:.1f} mm, more than the tolerance {car.tolerance * 1e3:.1f} mm: measure "
                "again, correct the model, or widen [car] tolerance",
            )
        if mine is not None:
            out[key], source[key] = mine, "session [car]"
        elif theirs is not None:
            out[key], source[key] = theirs, "model [vehicle]"
        else:
            raise MeasurementFileError(session_file, "[car]", key,
                                       "is missing (give it here, or name a model with a [vehicle] section)")
    return Geometry(out["wheelbase"], out["track_front"], out["track_rear"], source)


@dataclass(frozen=True, slots=True)
class ScalesBalance:
    """CG position and shares found from corner loads (values with standard uncertainties, None when unknown).

    Attributes
    ----------
    mass : Estimate
        kg.
    behind_front_axle : Estimate
        a1, m.
    left_of_centre : Estimate
        Lateral CG offset, positive left, m.
    front_fraction, left_fraction, cross_fraction : Estimate
        Shares of the total; cross = (FR + RL) / total.
    wedge : float
        Diagonal preload: FL minus the FL load of a car with the same CG and no diagonal preload, kg. Positive means
        the FL–RR diagonal carries more (RR carries ``wedge · t_f / t_r`` more, FR and RL less).
    no_preload_corners : (4,) float
        The corner loads of that preload-free car, kg.
    geometry : Geometry
    """

    mass: Estimate
    behind_front_axle: Estimate
    left_of_centre: Estimate
    front_fraction: Estimate
    left_fraction: Estimate
    cross_fraction: Estimate
    wedge: float
    no_preload_corners: FloatArray
    geometry: Geometry

    def station(self, vehicle: Vehicle) -> Estimate:
        """CG forward coordinate (forward · p) in the model frame, m."""
        return Estimate(vehicle.front_axle_station - self.behind_front_axle.value, self.behind_front_axle.u)


def lateral_coefficients(geometry: Geometry) -> FloatArray:
    """(4,) lateral positions of the contact centres FL, FR, RL, RR, positive left, m."""
    tf, tr = geometry.track_front, geometry.track_rear
    return np.array([0.5 * tf, -0.5 * tf, 0.5 * tr, -0.5 * tr])


def balance_from_corners(corners: CornerWeights, geometry: Geometry) -> ScalesBalance:
    """CG position, shares, cross weight and diagonal preload from the mean corner loads.

    Notes
    -----
    Moments about the front axle line and about the centre plane (Jazar 2008, ch. 2, applied per side; equation numbers from memory):
    ``a1 = L (F_RL + F_RR) / W`` and ``y = [t_f (F_FL − F_FR) + t_r (F_RL − F_RR)] / (2 W)``. The preload-free loads
    split each axle by the lever rule on y (as :func:`massmodel.vehicle.balance.static_balance`); the difference is the
    statically indeterminate diagonal share ("wedge"), which has the pattern (w, −w, −w t_f/t_r, +w t_f/t_r).
    """
    f = corners.loads
    u = corners.uncertainty
    a1 = ratio_with_uncertainty(geometry.wheelbase * _REAR, f, u)
    y_est = ratio_with_uncertainty(lateral_coefficients(geometry), f, u)
    y = y_est.value
    front = f[0] + f[1]
    rear = f[2] + f[3]
    tf, tr = geometry.track_front, geometry.track_rear
    fl0 = front * (0.5 * tf + y) / tf
    rl0 = rear * (0.5 * tr + y) / tr
    no_preload = np.array([fl0, front - fl0, rl0, rear - rl0])
    return ScalesBalance(
        mass=Estimate(corners.total, corners.total_uncertainty), behind_front_axle=a1, left_of_centre=y_est,
        front_fraction=corners.fraction("front"), left_fraction=corners.fraction("left"),
        cross_fraction=corners.fraction("cross"), wedge=float(f[0] - fl0), no_preload_corners=no_preload,
        geometry=geometry,
    )

