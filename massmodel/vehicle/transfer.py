"""Steady-state load transfer of a rigid vehicle under longitudinal and lateral acceleration.

Given the static balance (mass, CG position, CG height) and steady accelerations a_x (forward positive: driving;
negative: braking) and a_y (to the left positive, i.e. a left-hand turn; ISO 8855 axes), the axle and corner loads
follow from the moments of the inertia force −m·a acting at the CG, reacted at the tyre contact patches.

Assumptions (stated in every output, :data:`ASSUMPTIONS`):

- rigid body on level ground, steady state: no pitch or roll of the body, the CG height does not change, no
  aerodynamic loads, no grade or banking, no tyre deflection;
- longitudinal transfer: the pitch couple m·a_x·h moves load between the axles and splits equally between the two
  wheels of each axle (it has no roll moment);
- lateral transfer: the overturning moment m·a_y·h is shared between the axles by the front share s of the total
  lateral load transfer, ΔF_front = s·m·a_y·h / t_f and ΔF_rear = (1 − s)·m·a_y·h / t_r. The split of a rigid body on
  four supports is statically indeterminate: in a real car it follows the front and rear roll stiffnesses
  (Milliken & Milliken). When no share is given, s is taken as the static front weight fraction b/L, i.e. each
  axle carries the overturning moment of its own share of the lateral force, m·a_y·(b/L)·h (an assumption, no
  source);
- the static corner loads are those of :func:`massmodel.vehicle.balance.static_balance` (lever rule, no diagonal preload).

Loads are mass-equivalent kg (load / g0), like the static corner weights. A corner whose load comes out negative
means that wheel would lift: beyond that point this linear result no longer holds (the flag ``lifted``).

References
----------
.. [1] Gillespie, *Fundamentals of Vehicle Dynamics*, SAE (1992), ch. 2: W_f = W·b/L − m·a_x·h/L (from memory).
.. [2] Milliken & Milliken, *Race Car Vehicle Dynamics*, SAE (1995): total lateral load transfer m·a_y·h/t, its split
   between the axles by the roll stiffnesses (read in a secondary source).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core import cautions
from massmodel.core.errors import UsageError
from massmodel.core.model import Model, Vehicle

from .balance import Balance, static_balance

__all__ = ["ASSUMPTIONS", "CORNERS", "MAX_ACCELERATION_G", "TRANSFER_FORMAT", "Condition", "TransferredLoads",
           "load_transfer", "build_transfer_report"]

TRANSFER_FORMAT = "massmodel-load-transfer/1"

FloatArray = npt.NDArray[np.float64]
CORNERS = ("front_left", "front_right", "rear_left", "rear_right")
MAX_ACCELERATION_G = 6.0  # beyond any steady-state tyre grip; larger inputs are taken as a typing mistake

ASSUMPTIONS = (
    "rigid body on level ground in steady state: no body pitch or roll, CG height unchanged, no aerodynamic loads",
    "longitudinal transfer m*a_x*h/L between the axles, split equally between the two wheels of each axle",
    "lateral transfer m*a_y*h shared between the axles by the front share s: front s*m*a_y*h/t_f, rear "
    "(1-s)*m*a_y*h/t_r; s really follows the roll stiffnesses (Milliken & Milliken)",
    "static corner loads by the lever rule (no diagonal preload); loads as mass-equivalent kg (load / 9.80665 m/s^2)",
    "signs: a_x > 0 driving, a_x < 0 braking; a_y > 0 towards the left (left-hand turn: load moves to the right "
    "wheels)",
)


@dataclass(frozen=True, slots=True)
class TransferredLoads:
    """Axle and corner loads under steady acceleration.

    Attributes
    ----------
    longitudinal_g, lateral_g : float
        The accelerations, in units of g0 = 9.80665 m/s² (forward and left positive).
    front_roll_share : float
        Front share s of the total lateral load transfer, 0..1.
    share_given : bool
        True when ``front_roll_share`` was given; False when it is the static front fraction (assumed).
    front, rear : float
        Axle loads, kg (mass-equivalent).
    corners : (4,) float
        FL, FR, RL, RR, kg.
    longitudinal_transfer : float
        Load moved from the front axle to the rear, kg (negative under braking).
    lateral_transfer_front, lateral_transfer_rear : float
        Load moved from the left wheel to the right wheel of each axle, kg (negative in a right-hand turn).
    """

    longitudinal_g: float
    lateral_g: float
    front_roll_share: float
    share_given: bool
    front: float
    rear: float
    corners: FloatArray
    longitudinal_transfer: float
    lateral_transfer_front: float
    lateral_transfer_rear: float

    @property
    def lifted(self) -> tuple[str, ...]:
        """Corners whose load is negative: that wheel would lift and the linear result no longer holds there."""
        return tuple(name for name, load in zip(CORNERS, self.corners, strict=True) if load < 0.0)

    @property
    def front_fraction(self) -> float:
        """Front axle load / total."""
        return self.front / (self.front + self.rear)


def load_transfer(
    balance: Balance,
    vehicle: Vehicle,
    longitudinal_g: float,
    lateral_g: float,
    front_roll_share: float | None = None,
) -> TransferredLoads:
    """Axle and corner loads of a rigid vehicle under steady longitudinal and lateral acceleration.

    Parameters
    ----------
    balance : Balance
        The static balance (:func:`massmodel.vehicle.balance.static_balance`): mass kg, CG distances m, static corners kg.
    vehicle : Vehicle
        Wheelbase and tracks, m.
    longitudinal_g : float
        a_x / g0; positive driving, negative braking.
    lateral_g : float
        a_y / g0; positive towards the left (a left-hand turn).
    front_roll_share : float, optional
        Front share of the total lateral load transfer, 0..1 (K_front / (K_front + K_rear) for roll stiffnesses K
        with the roll axis on the ground). Default: the static front fraction b/L (assumed; see the module notes).

    Returns
    -------
    TransferredLoads

    Raises
    ------
    ValueError
        A non-finite or implausibly large acceleration (beyond ±6 g), a share outside 0..1, or a massless body.

    Notes
    -----
    With m the mass, h the CG height, L the wheelbase, a and b the CG's distances behind the front axle and ahead
    of the rear axle, t_f and t_r the tracks, loads in kg (force / g0) and accelerations in g:

    - front axle: m·b/L − m·a_x·h/L, rear axle: m·a/L + m·a_x·h/L (Gillespie 1992, ch. 2);
    - lateral: ΔF_f = s·m·a_y·h/t_f, ΔF_r = (1 − s)·m·a_y·h/t_r, the total overturning moment m·a_y·h
      (Milliken & Milliken 1995).

    The result satisfies the vertical force balance and the roll and pitch moment balances about the ground of the
    weight, the inertia force and the four vertical tyre loads exactly.
    """
    for name, value in (("longitudinal acceleration", longitudinal_g), ("lateral acceleration", lateral_g)):
        if not math.isfinite(value) or abs(value) > MAX_ACCELERATION_G:
            raise UsageError(f"{name} {value!r} g: expected a finite value within ±{MAX_ACCELERATION_G:g} g")
    if not balance.mass > 0.0:
        raise UsageError("load transfer needs a body with mass (the selection has none)")
    if front_roll_share is None:
        share, given = balance.front_fraction, False
    else:
        if not math.isfinite(front_roll_share) or not 0.0 <= front_roll_share <= 1.0:
            raise UsageError(f"front roll share {front_roll_share!r}: expected a fraction from 0 to 1")
        share, given = float(front_roll_share), True
    m, h, wb = balance.mass, balance.cg_height, vehicle.wheelbase
    dx = m * longitudinal_g * h / wb
    moment = m * lateral_g * h
    dyf = share * moment / vehicle.track_front
    dyr = (1.0 - share) * moment / vehicle.track_rear
    change = np.array([-0.5 * dx - dyf, -0.5 * dx + dyf, 0.5 * dx - dyr, 0.5 * dx + dyr])
    corners = np.asarray(balance.corners, dtype=float) + change
    corners.setflags(write=False)
    return TransferredLoads(
        longitudinal_g=float(longitudinal_g),
        lateral_g=float(lateral_g),
        front_roll_share=share,
        share_given=given,
        front=float(corners[0] + corners[1]),
        rear=float(corners[2] + corners[3]),
        corners=corners,
        longitudinal_transfer=dx,
        lateral_transfer_front=dyf,
        lateral_transfer_rear=dyr,
    )


@dataclass(frozen=True, slots=True)
class Condition:
    """A named steady acceleration: ``longitudinal_g`` forward positive, ``lateral_g`` left positive (in g)."""

    label: str
    longitudinal_g: float
    lateral_g: float


def build_transfer_report(
    model: Model, conditions: Sequence[Condition], front_roll_share: float | None = None
) -> dict[str, Any]:
    """Static loads and the loads under each condition, as plain JSON-ready data (kg, m, g).

    Raises
    ------
    ValueError
        The model has no [vehicle] section, or a condition is out of range (see :func:`load_transfer`).
    """
    if model.vehicle is None:
        raise UsageError(f"{model.source or model.name}: load transfer needs a [vehicle] section in the model")
    if not conditions:
        raise UsageError("give at least one acceleration (braking, driving, cornering or combined)")
    balance = static_balance(model.mass_properties(), model.vehicle)
    results = [load_transfer(balance, model.vehicle, c.longitudinal_g, c.lateral_g, front_roll_share)
               for c in conditions]
    first = results[0]
    rows = [_loads_dict("static", 0.0, 0.0, balance.front, balance.rear, balance.corners)]
    for c, r in zip(conditions, results, strict=True):
        rows.append({
            **_loads_dict(c.label, r.longitudinal_g, r.lateral_g, r.front, r.rear, r.corners),
            "longitudinal_transfer_kg": r.longitudinal_transfer,
            "lateral_transfer_kg": {"front": r.lateral_transfer_front, "rear": r.lateral_transfer_rear},
            "wheels_lifted": list(r.lifted),
        })
    return {
        "format": TRANSFER_FORMAT,
        "model": model.name,
        "case": model.case,
        "source": model.source,
        "mass_kg": balance.mass,
        "cg_height_m": balance.cg_height,
        "cg_behind_front_axle_m": balance.cg_behind_front_axle,
        "wheelbase_m": model.vehicle.wheelbase,
        "track_m": {"front": model.vehicle.track_front, "rear": model.vehicle.track_rear},
        "front_roll_share": {
            "value": first.front_roll_share,
            "source": "given" if first.share_given else "assumed: the static front weight fraction b/L",
        },
        "conditions": rows,
        "assumptions": list(ASSUMPTIONS),
        "cautions": cautions.for_report(),
    }


def _loads_dict(label: str, ax: float, ay: float, front: float, rear: float, corners: FloatArray) -> dict[str, Any]:
    return {
        "label": label,
        "longitudinal_g": ax,
        "lateral_g": ay,
        "axle_loads_kg": {"front": front, "rear": rear},
        "corner_loads_kg": {k: float(v) for k, v in zip(CORNERS, corners, strict=True)},
        "front_fraction": front / (front + rear),
    }
