"""What a model file declares besides its parts: ballast slots, allowed contacts, rules and the vehicle's geometry.

Plain immutable values (SI, model frame); :mod:`massmodel.core.model` assembles them with the components into a
:class:`~massmodel.core.model.Model`, and :mod:`massmodel.vehicle` evaluates the rules.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from .errors import UsageError
from .frames import Pose
from .groups import in_group

__all__ = ["Slot", "AllowedContact", "RuleCheck", "Rule", "Vehicle"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True, eq=False)
class Slot:
    """A space reserved for a part (typically ballast): an envelope solid placed in the model frame.

    Parameters
    ----------
    name : str
        Unique slot name.
    shape : primitive
        Envelope in the slot frame.
    pose : Pose
        Slot frame in the model frame.
    clearance : float
        Required gap between a part and the envelope walls, m.
    origin : str
        Where it was defined.
    """

    name: str
    shape: Any
    pose: Pose
    clearance: float
    origin: str = ""


@dataclass(frozen=True, slots=True)
class AllowedContact:
    """Parts meant to touch or overlap, which packaging checks do not report (e.g. a lumped display shape inside
    another part, plates stacked on each other).

    Parameters
    ----------
    first, second : str
        Part or group paths; a pair of parts is covered when one lies in ``first`` and the other in ``second``
        (both in the same group when ``first == second``).
    note : str
        Why the contact is intended.
    origin : str
        Where it was defined.
    """

    first: str
    second: str
    note: str = ""
    origin: str = ""

    def covers(self, a: str, b: str) -> bool:
        """Whether the pair of part paths ``a``, ``b`` is covered (in either order)."""
        return (in_group(a, self.first) and in_group(b, self.second)) or (
            in_group(a, self.second) and in_group(b, self.first)
        )


class RuleCheck(enum.Enum):
    """Kinds of rule check."""

    MIN_MASS = "min_mass"
    MIN_GROUP_MASS = "min_group_mass"
    MIN_AXLE_LOAD = "min_axle_load"
    FRONT_FRACTION = "front_fraction"
    MAX_CG_HEIGHT = "max_cg_height"
    BALLAST_HEIGHT = "ballast_height"  # ballast in a named place sits high enough (or at the driver's CG height)


@dataclass(frozen=True, slots=True)
class Rule:
    """One rule of the series' regulations as a check.

    ``limit`` is in SI (kg for masses and loads, m for heights); ``minimum``/``maximum`` are fractions for
    FRONT_FRACTION. ``groups`` lists the groups summed by MIN_GROUP_MASS; ``exclude`` the groups left out of
    MIN_MASS; ``axle`` is "front" or "rear" for MIN_AXLE_LOAD. ``cases`` names the load cases the rule applies in
    (empty: every case whose ``general_rules`` is true, and the base; see :mod:`massmodel.core.loadcases`).
    BALLAST_HEIGHT: the parts in ``groups`` (the ballast's place) have their CG at least ``limit`` above the ground,
    or within ``band`` of the CG height of the group ``reference`` (the seated driver).
    """

    name: str
    check: RuleCheck
    limit: float | None = None
    minimum: float | None = None
    maximum: float | None = None
    groups: tuple[str, ...] = ()
    exclude: tuple[str, ...] = ()
    axle: str | None = None
    origin: str = ""
    cases: tuple[str, ...] = ()
    reference: str | None = None
    band: float | None = None


@dataclass(frozen=True, slots=True, eq=False)
class Vehicle:
    """The vehicle context of a model.

    Parameters
    ----------
    forward, left, up : (3,) float
        Unit vectors of the vehicle directions in model axes (ISO 8855 by default: +x, +y, +z). Right-handed.
    wheelbase : float
        m.
    track_front, track_rear : float
        Lateral distance between the tyre contact centres, m.
    front_axle_station : float
        ``forward · p`` of the front axle line, m.
    ground_level : float
        ``up · p`` of the ground plane, m.
    """

    forward: FloatArray
    left: FloatArray
    up: FloatArray
    wheelbase: float
    track_front: float
    track_rear: float
    front_axle_station: float
    ground_level: float

    def __post_init__(self) -> None:
        for name in ("forward", "left", "up"):
            v = np.array(getattr(self, name), dtype=float).reshape(3)
            v.setflags(write=False)
            object.__setattr__(self, name, v)
        basis = np.array([self.forward, self.left, self.up])
        if not np.allclose(basis @ basis.T, np.eye(3), atol=1e-12) or np.linalg.det(basis) < 0.0:
            raise UsageError("vehicle axes forward, left, up must be orthonormal and right-handed")
        for name in ("wheelbase", "track_front", "track_rear"):
            if not getattr(self, name) > 0.0:
                raise UsageError(f"vehicle field '{name}' must be a positive length")

    @property
    def basis(self) -> FloatArray:
        """(3, 3): rows forward, left, up in model axes (model → vehicle-direction components)."""
        return np.array([self.forward, self.left, self.up])

    @property
    def rear_axle_station(self) -> float:
        """``forward · p`` of the rear axle line, m."""
        return self.front_axle_station - self.wheelbase

    def contact_points(self) -> FloatArray:
        """(4, 3) tyre contact centres FL, FR, RL, RR in model coordinates, m."""
        rows = []
        for station, track in ((self.front_axle_station, self.track_front), (self.rear_axle_station, self.track_rear)):
            for side in (+1.0, -1.0):
                rows.append(station * self.forward + side * 0.5 * track * self.left + self.ground_level * self.up)
        return np.array(rows)
