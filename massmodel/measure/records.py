"""What a measurement session file records, as immutable values (SI throughout): weighings, the car's geometry
on the day, axle-lift series and pendulum tests. Read from files by :mod:`massmodel.measure.session`."""

from __future__ import annotations

import enum
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

__all__ = ["Weighing", "CarGeometry", "LiftDirection", "LiftReading", "LiftSeries", "PendulumKind", "Fixture",
           "Comparison", "PendulumTest", "Session", "CORNERS", "DEFAULT_GEOMETRY_TOLERANCE_M"]

FloatArray = npt.NDArray[np.float64]

CORNERS = ("front_left", "front_right", "rear_left", "rear_right")
#: How far the session's wheelbase and tracks may differ from the model's [vehicle] unless [car] tolerance says.
DEFAULT_GEOMETRY_TOLERANCE_M = 0.010

@dataclass(frozen=True, slots=True)
class Weighing:
    """One weighing: the four corner loads with the car standing on the pads.

    Attributes
    ----------
    label : str
        Name of the weighing ("1", "2", ... by default).
    loads : (4,) float
        Mass-equivalent loads FL, FR, RL, RR, kg (each > 0).
    pads : tuple of 4 str or None
        Which pad stood under FL, FR, RL, RR (to see pad offsets when the pads were rotated between weighings).
    note : str
    origin : str
        "file: weighing 'label'", for messages.
    """

    label: str
    loads: FloatArray
    pads: tuple[str, str, str, str] | None
    note: str
    origin: str


@dataclass(frozen=True, slots=True)
class CarGeometry:
    """Geometry of the car measured on the day (each None when not given), m."""

    wheelbase: float | None = None
    track_front: float | None = None
    track_rear: float | None = None
    tyre_loaded_radius: float | None = None
    tolerance: float = DEFAULT_GEOMETRY_TOLERANCE_M


class LiftDirection(enum.Enum):
    """Whether a reading was taken while lifting or while lowering the axle."""

    LIFTING = "lifting"
    LOWERING = "lowering"


@dataclass(frozen=True, slots=True)
class LiftReading:
    """One reading of an axle-lift series.

    Exactly one of ``angle`` (rad, 0 < θ < 90°) and ``rise`` (m, rise of the lifted wheel centres above their level
    position, sin θ = rise / wheelbase) is given. ``load`` is the mass-equivalent load on the axle that stays on the
    scales, kg.
    """

    angle: float | None
    rise: float | None
    load: float
    direction: LiftDirection
    field: str  # "reading[3]", for messages


@dataclass(frozen=True, slots=True)
class LiftSeries:
    """One axle-lift series: one axle lifted in steps (and lowered again), the other on the scales.

    Attributes
    ----------
    name : str
    lifted : str
        "front" or "rear": the axle that is lifted.
    level_front, level_rear : float
        Axle loads with the car level (before lifting), kg.
    readings : tuple of LiftReading
    wheelbase, tyre_loaded_radius : float or None
        m; None → the session's [car] values (or the model's wheelbase).
    uncertainty : mapping
        Standard uncertainties of the inputs ('angle' rad, 'rise' m, 'wheelbase' m, 'tyre_loaded_radius' m,
        'mass' kg), for the uncertainty budget.
    origin : str
    """

    name: str
    lifted: str
    level_front: float
    level_rear: float
    readings: tuple[LiftReading, ...]
    wheelbase: float | None
    tyre_loaded_radius: float | None
    uncertainty: Mapping[str, float]
    note: str
    origin: str

    @property
    def staying(self) -> str:
        """The axle that stays on the scales."""
        return "rear" if self.lifted == "front" else "front"


class PendulumKind(enum.Enum):
    """Kinds of pendulum test (formulas in :mod:`massmodel.measure.pendulum`)."""

    BIFILAR = "bifilar"
    TRIFILAR = "trifilar"
    COMPOUND = "compound"


@dataclass(frozen=True, slots=True)
class Fixture:
    """What swings with the body: a platform, a cradle or a swing frame.

    Its inertia about the pendulum axis is given (``inertia``, kg·m²) or follows from its own periods swung empty
    (``periods``, s). ``pivot_to_cg`` (m) is needed for a compound pendulum.
    """

    mass: float
    periods: FloatArray | None
    inertia: float | None
    pivot_to_cg: float | None


@dataclass(frozen=True, slots=True)
class Comparison:
    """Which part of the model to compare with and about which axis.

    ``axis`` is a unit vector in model axes; ``axis_name`` what the user wrote ("up", "[0, 1, 0]").
    ``through`` is a point in the model frame (m), or None for the CG of the selected components.
    """

    axis: FloatArray | None
    axis_name: str
    through: FloatArray | None
    groups: tuple[str, ...]
    exclude: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class PendulumTest:
    """One pendulum test (fields in SI; geometry fields used by its kind only, else None)."""

    name: str
    kind: PendulumKind
    body_mass: float
    periods: FloatArray
    wire_length: float | None
    wire_spacing: float | None
    wire_radius: float | None
    pivot_to_cg: float | None
    fixture: Fixture | None
    gravity: float
    gravity_given: bool
    amplitude: float | None
    uncertainty: Mapping[str, float]
    compare: Comparison | None
    note: str
    origin: str


@dataclass(frozen=True, slots=True)
class Session:
    """A measurement session file, SI throughout."""

    name: str
    date: str
    model_path: Path | None
    car: CarGeometry
    scale_uncertainty: float | None
    weighings: tuple[Weighing, ...]
    lifts: tuple[LiftSeries, ...]
    pendulums: tuple[PendulumTest, ...]
    note: str
    source: str
