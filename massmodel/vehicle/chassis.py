"""Chassis inputs (the ``[chassis]`` section) and the split of the mass model into sprung and unsprung mass.

The unsprung mass is what moves with the wheels: wheels, tyres, hubs, uprights, brakes. A link between wheel and
body (wishbone, pushrod, driveshaft, damper and spring) moves partly with each: it is counted unsprung by a stated
share. massmodel's default share is one half (common practice, no source: the link's wheel end moves with the wheel,
its body end with the body, and a uniform link's mass is counted half at each end); the model file says where its
own share comes from.

Every part is classified by the most specific entry that covers it (a part path or a group path): ``unsprung``
(share 1), ``shared`` (the stated share) or ``sprung`` (share 0); parts no entry covers are sprung. Each unsprung
contribution goes to the corner nearest to the part: front or rear by the station relative to mid-wheelbase, left
or right by the side of the centre plane (a part on the centre plane is split half and half). The unsprung part of
a shared link is taken to act at the link's own CG (an assumption).

References
----------
.. [1] Milliken & Milliken, *Race Car Vehicle Dynamics*, SAE (1995), ch. 18 (sprung and unsprung weights and
   their CG heights as inputs of the lateral load transfer; from memory).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import InputError, UsageError
from massmodel.core.model import Component, Vehicle, in_group

__all__ = ["CORNERS", "DEFAULT_SHARED_SHARE", "DEFAULT_SHARED_SOURCE", "AxleSuspension", "AeroSpec", "ChassisSpec",
           "MassSplit", "ChassisError", "split_mass", "unsprung_share_of"]

FloatArray = npt.NDArray[np.float64]
CORNERS = ("front_left", "front_right", "rear_left", "rear_right")
DEFAULT_SHARED_SHARE = 0.5
DEFAULT_SHARED_SOURCE = "common practice, no source: half of a link between wheel and body moves with the wheel"


class ChassisError(InputError):
    """Chassis inputs that the method cannot use; ``item`` and ``field`` name where in the ``[chassis]`` section
    (the one error type of user input, :class:`massmodel.core.errors.InputError`; ``source`` is its file)."""

    def __init__(self, source: str, item: str, field_name: str | None, message: str) -> None:
        super().__init__(source, item, field_name, message)
        self.source = source


@dataclass(frozen=True, slots=True)
class AxleSuspension:
    """Suspension and tyre inputs of one axle (SI; heights above the ground plane).

    Attributes
    ----------
    roll_centre_height : float
        Height of the axle's roll centre above the ground, m (may be negative: below the ground).
    roll_stiffness : float or None
        Roll stiffness of the axle given directly, N·m/rad. When None it follows from the springs and the bar.
    spring_rate, spring_motion_ratio : float or None, float
        Spring rate at the spring, N/m, and its motion ratio (spring travel / wheel travel); wheel rate
        k_w = k_s · MR² (Milliken & Milliken 1995, ch. 17; from memory).
    bar_rate, bar_motion_ratio : float, float
        Anti-roll bar rate at the bar's arm end (force per unit of the difference of the two arm ends'
        travels), N/m, and its motion ratio (arm-end travel / wheel travel); 0 for no bar.
    anti : float
        Share of the longitudinal load transfer taken by the links: anti-dive at the front (braking), anti-squat at
        the rear (driving), 0..1.
    cornering_stiffness : float or None
        Axle cornering stiffness (both tyres), N/rad, given directly.
    tyre_cornering_stiffness, tyre_reference_load, tyre_load_sensitivity : float or None, float or None, float
        Per-tyre cornering stiffness C_ref (N/rad) at the vertical load F_ref (N), and the load sensitivity ε:
        C(F) = C_ref·[1 + ε·(F/F_ref − 1)] (ε = 1: proportional to load; ε = 0: independent of load).
    """

    roll_centre_height: float
    roll_stiffness: float | None = None
    spring_rate: float | None = None
    spring_motion_ratio: float = 1.0
    bar_rate: float = 0.0
    bar_motion_ratio: float = 1.0
    anti: float = 0.0
    cornering_stiffness: float | None = None
    tyre_cornering_stiffness: float | None = None
    tyre_reference_load: float | None = None
    tyre_load_sensitivity: float = 1.0

    @property
    def wheel_rate(self) -> float | None:
        """Spring rate at the wheel, k_s·MR², N/m (None when the springs are not given)."""
        return None if self.spring_rate is None else self.spring_rate * self.spring_motion_ratio**2

    @property
    def bar_wheel_rate(self) -> float:
        """Anti-roll bar rate at the wheel, k_b·MR_b², N/m (force at one wheel per unit of the two wheels'
        travel difference)."""
        return self.bar_rate * self.bar_motion_ratio**2

    def roll_stiffness_on(self, track: float) -> float:
        """Roll stiffness of the axle, N·m/rad: given, or K_φ = (k_w + 2·k_bw)·t²/2.

        Derivation: in roll by φ each wheel moves ±z = ±φ·t/2; each spring pushes k_w·z and the bar, twisted by
        the travel difference 2z, pushes 2·k_bw·z, so the couple is (k_w + 2 k_bw)·z·t (Milliken & Milliken 1995,
        ch. 16–17, the same result in lb·ft/deg; from memory).
        """
        if self.roll_stiffness is not None:
            return self.roll_stiffness
        k_w = self.wheel_rate
        if k_w is None:
            raise UsageError("the axle needs a roll stiffness or a spring rate")
        return (k_w + 2.0 * self.bar_wheel_rate) * track**2 / 2.0

    @property
    def has_cornering_stiffness(self) -> bool:
        return self.cornering_stiffness is not None or self.tyre_cornering_stiffness is not None

    def axle_cornering_stiffness(self, axle_load: float) -> float:
        """Axle cornering stiffness, N/rad, at a vertical axle load (N; used only with per-tyre data)."""
        if self.cornering_stiffness is not None:
            return self.cornering_stiffness
        if self.tyre_cornering_stiffness is None or self.tyre_reference_load is None:
            raise UsageError("no cornering stiffness given")
        ratio = 0.5 * axle_load / self.tyre_reference_load
        return 2.0 * self.tyre_cornering_stiffness * (1.0 + self.tyre_load_sensitivity * (ratio - 1.0))


@dataclass(frozen=True, slots=True)
class AeroSpec:
    """Aerodynamic loads, F = f·v² (from coefficients: f = ½·ρ·C·A; from loads at a reference speed: f = F_ref/v_ref²).

    Attributes
    ----------
    downforce_factor, drag_factor : float
        ½·ρ·C_z·A and ½·ρ·C_x·A, N per (m/s)² (downforce positive).
    front_share : float
        Centre of pressure as the front axle's share of the downforce, 0..1.
    drag_height : float
        Height of the drag force's line of action above the ground, m.
    basis : str
        How the loads were given (for reports).
    """

    downforce_factor: float
    drag_factor: float
    front_share: float
    drag_height: float
    basis: str = ""

    def loads(self, speed: float) -> tuple[float, float]:
        """(downforce, drag), N, at a speed in m/s: F = ½·ρ·C·A·v² (the dynamic pressure times C·A)."""
        v2 = speed**2
        return self.downforce_factor * v2, self.drag_factor * v2

    def corner_loads(self, speed: float, wheelbase: float) -> FloatArray:
        """Aero load at each corner FL, FR, RL, RR, N, at a speed in m/s.

        The downforce splits s : 1 − s between the axles (centre of pressure); the drag D at the height h_d,
        reacted at the ground, moves D·h_d/L from the front axle to the rear (moments about the rear contact
        line; common practice, no source). Each axle's share splits equally between its wheels.
        """
        down, drag = self.loads(speed)
        shift = drag * self.drag_height / wheelbase
        front = self.front_share * down - shift
        rear = (1.0 - self.front_share) * down + shift
        return np.array([0.5 * front, 0.5 * front, 0.5 * rear, 0.5 * rear])


@dataclass(frozen=True, slots=True)
class ChassisSpec:
    """The ``[chassis]`` inputs of a model (SI).

    ``unsprung``, ``shared`` and ``sprung`` are part or group paths; ``shared_share`` is the unsprung share of the
    parts under ``shared`` and ``shared_source`` says where it comes from. ``speed`` is the speed for the aero
    loads and the single-track results, m/s (None: not given). ``source`` is the file, for messages.
    """

    front: AxleSuspension
    rear: AxleSuspension
    unsprung: tuple[str, ...] = ()
    shared: tuple[str, ...] = ()
    sprung: tuple[str, ...] = ()
    shared_share: float = DEFAULT_SHARED_SHARE
    shared_source: str = DEFAULT_SHARED_SOURCE
    aero: AeroSpec | None = None
    speed: float | None = None
    source: str = ""

    def axle(self, name: str) -> AxleSuspension:
        return self.front if name == "front" else self.rear


def unsprung_share_of(path: str, spec: ChassisSpec) -> float:
    """The unsprung share of one part: from the most specific entry covering it (0 when none does)."""
    best, share = -1, 0.0
    for entries, value in ((spec.unsprung, 1.0), (spec.shared, spec.shared_share), (spec.sprung, 0.0)):
        for entry in entries:
            if in_group(path, entry) and len(entry) > best:
                best, share = len(entry), value
    return share


@dataclass(frozen=True, slots=True)
class MassSplit:
    """Sprung and unsprung mass of a model, in vehicle terms (heights above the ground, stations behind the front
    axle).

    Attributes
    ----------
    corner_mass : (4,) float
        Unsprung mass per corner FL, FR, RL, RR, kg.
    corner_cg_height : (4,) float
        Height of each corner's unsprung CG above the ground, m (nan for a corner with none).
    sprung_mass : float
        kg.
    sprung_cg_height : float
        m above the ground.
    sprung_cg_behind_front_axle : float
        m (the sprung CG's a_s; b_s = L − a_s).
    sprung_cg_left : float
        Lateral offset, m, left positive.
    shares : tuple of (str, float, float)
        (path, unsprung share, unsprung mass kg) of every part with a share above zero.
    """

    corner_mass: FloatArray
    corner_cg_height: FloatArray
    sprung_mass: float
    sprung_cg_height: float
    sprung_cg_behind_front_axle: float
    sprung_cg_left: float
    shares: tuple[tuple[str, float, float], ...] = field(default=())

    def axle_unsprung(self, axle: str) -> tuple[float, float]:
        """(mass kg, CG height m) of one axle's unsprung mass (both corners); height 0 when the mass is 0."""
        i = 0 if axle == "front" else 2
        m = float(self.corner_mass[i] + self.corner_mass[i + 1])
        if m <= 0.0:
            return 0.0, 0.0
        h = float(np.nansum(self.corner_mass[i:i + 2] * np.nan_to_num(self.corner_cg_height[i:i + 2])) / m)
        return m, h

    @property
    def unsprung_mass(self) -> float:
        return float(self.corner_mass.sum())


def split_mass(components: Sequence[Component], vehicle: Vehicle, spec: ChassisSpec) -> MassSplit:
    """Split the parts into sprung and unsprung mass (see the module notes for the rules).

    Raises
    ------
    ChassisError
        No sprung mass is left.
    """
    corner_m = np.zeros(4)
    corner_mz = np.zeros(4)
    total_m = 0.0
    total_moment = np.zeros(3)  # mass-weighted (station behind front axle, left, height)
    un_moment = np.zeros(3)
    shares = []
    mid = vehicle.front_axle_station - 0.5 * vehicle.wheelbase
    for c in components:
        m = c.props.mass
        p = c.props.center
        station = float(vehicle.forward @ p)
        local = np.array([vehicle.front_axle_station - station, float(vehicle.left @ p),
                          float(vehicle.up @ p) - vehicle.ground_level])
        total_m += m
        total_moment += m * local
        share = unsprung_share_of(c.path, spec)
        if share <= 0.0 or m <= 0.0:
            continue
        mu = share * m
        shares.append((c.path, share, mu))
        un_moment += mu * local
        axle = 0 if station >= mid else 2
        y = local[1]
        sides = (1.0, 0.0) if y > 1e-3 else (0.0, 1.0) if y < -1e-3 else (0.5, 0.5)
        for k, w in enumerate(sides):
            corner_m[axle + k] += w * mu
            corner_mz[axle + k] += w * mu * local[2]
    sprung = total_m - corner_m.sum()
    if not sprung > 1e-9 * max(total_m, 1.0):
        raise ChassisError(spec.source, "[chassis]", "unsprung", "every part is counted unsprung: no sprung mass left")
    s_local = (total_moment - un_moment) / sprung
    with np.errstate(invalid="ignore", divide="ignore"):
        heights = np.where(corner_m > 0.0, corner_mz / np.where(corner_m > 0.0, corner_m, 1.0), np.nan)
    corner_m.setflags(write=False)
    heights.setflags(write=False)
    return MassSplit(corner_m, heights, float(sprung), float(s_local[2]), float(s_local[0]), float(s_local[1]),
                     tuple(shares))
