"""Steady-state load transfer with roll stiffness and roll-centre heights; pitch with anti-features; cross weight.

Lateral (Milliken & Milliken, *Race Car Vehicle Dynamics*, SAE 1995, ch. 18; equations from memory): the load moved
from the inner to the outer wheel of each axle is the sum of three parts,

- unsprung: ΔW_uf = m_uf·a_y·z_uf / t_f (the front unsprung mass's own inertia force at its CG height);
- geometric (through the links, at the roll centre): ΔW_gf = m_s·a_y·(b_s/L)·z_rf / t_f, the sprung mass's lateral
  force carried by the front axle (by statics, b_s/L of it) acting at the roll-centre height;
- elastic (through springs and bars): ΔW_ef = m_s·a_y·h_s·K_φf/(K_φf + K_φr) / t_f, the roll moment about the roll
  axis shared by the roll stiffnesses,

and the same for the rear with a_s/L, z_rr, K_φr. Here h_s is the sprung CG's height above the roll axis at the
sprung CG's station (the roll axis joins the two roll centres). The roll angle is φ = m_s·a_y·h_s/(K_φf + K_φr)
(Milliken's first-order roll gradient). This first-order method leaves out the sideways shift of the sprung CG as
the body rolls, which adds m_s·g·h_s·φ to the roll moment; Gillespie (*Fundamentals of Vehicle Dynamics*, SAE 1992,
ch. 7; from memory) keeps it: φ/a_y = m_s·h_s/(K_φf + K_φr − m_s·g·h_s). Both gradients are reported; the load
transfer uses the first-order one, so that with zero roll-centre heights and no unsprung mass the result is exactly
the rigid-body one of :mod:`massmodel.vehicle.transfer` with the front share K_φf/(K_φf + K_φr).

Longitudinal: the transfer m·a_x·h/L (Gillespie 1992, ch. 2; from memory) does not depend on the suspension; the
anti-features only decide how much of it goes through the links (no pitch) and how much through the springs
(Milliken & Milliken 1995, ch. 17, "percent anti-dive/anti-squat"; from memory).

Cross weight: see :func:`cross_weight_adjustment` and docs/chassis.md for the derivation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError
from massmodel.core.model import Vehicle

from .chassis import ChassisError, ChassisSpec, MassSplit

__all__ = ["G0", "RollProperties", "LateralTransfer", "LongitudinalTransfer", "CrossWeightAdjustment",
           "roll_properties", "lateral_transfer", "longitudinal_transfer", "cross_weight_adjustment",
           "warp_pattern"]

G0 = 9.80665  # m/s², standard gravity
FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class RollProperties:
    """Roll geometry and stiffness of the car (SI).

    Attributes
    ----------
    roll_stiffness_front, roll_stiffness_rear : float
        N·m/rad.
    roll_axis_height : float
        Height of the roll axis above the ground at the sprung CG's station, m.
    roll_arm : float
        h_s, the sprung CG's height above the roll axis, m.
    roll_gradient : float
        Milliken's first-order roll gradient m_s·h_s/(K_φf + K_φr), rad per m/s².
    roll_gradient_with_cg_shift : float
        Gillespie's m_s·h_s/(K_φf + K_φr − m_s·g·h_s), rad per m/s².
    elastic_front_share : float
        K_φf/(K_φf + K_φr) (0.5 when the sprung CG sits on the roll axis and both stiffnesses are zero).
    """

    roll_stiffness_front: float
    roll_stiffness_rear: float
    roll_axis_height: float
    roll_arm: float
    roll_gradient: float
    roll_gradient_with_cg_shift: float
    elastic_front_share: float


def roll_properties(split: MassSplit, vehicle: Vehicle, spec: ChassisSpec) -> RollProperties:
    """Roll stiffnesses, roll axis and roll gradients.

    Raises
    ------
    ChassisError
        The roll axis lies above the sprung CG (the method, which rolls the body about an axis below its CG, does
        not apply), or the roll stiffness cannot hold the sprung mass up (K_φf + K_φr ≤ m_s·g·h_s).
    """
    L = vehicle.wheelbase
    k_f = spec.front.roll_stiffness_on(vehicle.track_front)
    k_r = spec.rear.roll_stiffness_on(vehicle.track_rear)
    z_f, z_r = spec.front.roll_centre_height, spec.rear.roll_centre_height
    a_s = split.sprung_cg_behind_front_axle
    axis = z_f + (z_r - z_f) * a_s / L
    h_s = split.sprung_cg_height - axis
    if h_s < 0.0:
        which = "front" if z_f >= z_r else "rear"
        raise ChassisError(
            spec.source, f"[chassis.{which}]", "roll_centre_height",
            f"the roll axis lies {-h_s * 1e3:.1f} mm above the sprung CG ({split.sprung_cg_height * 1e3:.1f} mm above "
            "the ground): the roll-centre method does not apply there; check the heights (above the ground)")
    m_s = split.sprung_mass
    total = k_f + k_r
    if h_s > 0.0 and total <= m_s * G0 * h_s:
        raise ChassisError(
            spec.source, "[chassis]", "roll_stiffness",
            f"front + rear roll stiffness {total * math.pi / 180:.1f} N*m/deg does not exceed m_s*g*h_s = "
            f"{m_s * G0 * h_s * math.pi / 180:.1f} N*m/deg: the body would not hold itself up in roll")
    share = k_f / total if total > 0.0 else 0.5
    grad = m_s * h_s / total if total > 0.0 else 0.0
    grad_shift = m_s * h_s / (total - m_s * G0 * h_s) if total > 0.0 else 0.0
    return RollProperties(k_f, k_r, axis, h_s, grad, grad_shift, share)


@dataclass(frozen=True, slots=True)
class LateralTransfer:
    """Lateral load transfer at one lateral acceleration (positive a_y: a left-hand turn, load to the right).

    Forces in N, per axle (front, rear): the load moved from the left wheel to the right wheel.

    Attributes
    ----------
    lateral_acceleration : float
        a_y, m/s², left positive.
    unsprung, geometric, elastic : (2,) float
        The three parts, N, front and rear.
    roll_angle : float
        Body roll, rad (positive: the body leans to the right, i.e. a left-hand turn; first order).
    """

    lateral_acceleration: float
    unsprung: FloatArray
    geometric: FloatArray
    elastic: FloatArray
    roll_angle: float

    @property
    def total(self) -> FloatArray:
        """Per-axle transfer, N (front, rear)."""
        return self.unsprung + self.geometric + self.elastic

    @property
    def front_share(self) -> float:
        """Lateral load transfer distribution: front transfer / (front + rear) (nan at a_y = 0)."""
        t = self.total
        s = float(t[0] + t[1])
        return float(t[0]) / s if s != 0.0 else float("nan")

    @property
    def corner_change(self) -> FloatArray:
        """Change of the four corner loads FL, FR, RL, RR, N."""
        f, r = self.total
        return np.array([-f, f, -r, r])


def lateral_transfer(split: MassSplit, vehicle: Vehicle, spec: ChassisSpec, lateral_acceleration: float,
                     roll: RollProperties | None = None) -> LateralTransfer:
    """Unsprung, geometric and elastic lateral load transfer per axle (module notes; Milliken & Milliken 1995,
    ch. 18, from memory).

    Parameters
    ----------
    split : MassSplit
        From :func:`massmodel.vehicle.chassis.split_mass`.
    vehicle : Vehicle
        Wheelbase and tracks.
    spec : ChassisSpec
        Roll-centre heights and roll stiffnesses.
    lateral_acceleration : float
        a_y, m/s², left positive.
    roll : RollProperties, optional
        Precomputed :func:`roll_properties`.
    """
    rp = roll if roll is not None else roll_properties(split, vehicle, spec)
    L = vehicle.wheelbase
    tracks = np.array([vehicle.track_front, vehicle.track_rear])
    ay = float(lateral_acceleration)
    m_s = split.sprung_mass
    a_s = split.sprung_cg_behind_front_axle
    unsprung = np.array([split.axle_unsprung(ax)[0] * split.axle_unsprung(ax)[1] for ax in ("front", "rear")])
    unsprung = unsprung * ay / tracks
    geometric = m_s * ay * np.array([(L - a_s) / L * spec.front.roll_centre_height,
                                     a_s / L * spec.rear.roll_centre_height]) / tracks
    share = rp.elastic_front_share
    elastic = m_s * ay * rp.roll_arm * np.array([share, 1.0 - share]) / tracks
    return LateralTransfer(ay, unsprung, geometric, elastic, rp.roll_gradient * ay)


@dataclass(frozen=True, slots=True)
class LongitudinalTransfer:
    """Longitudinal load transfer at one acceleration (a_x > 0 driving, < 0 braking).

    Attributes
    ----------
    transfer : float
        Load moved from the front axle to the rear, N: m·a_x·h/L.
    anti_share : float
        Share taken by the links at the axle whose anti-feature acts (front anti-dive under braking, rear
        anti-squat when driving).
    geometric, elastic : float
        The parts of the transfer through the links and through the springs at that axle, N.
    pitch_angle : float or None
        Body pitch, rad, nose down positive, from the spring deflections at both axles (None without wheel rates).
    """

    longitudinal_acceleration: float
    transfer: float
    anti_share: float
    geometric: float
    elastic: float
    pitch_angle: float | None

    @property
    def corner_change(self) -> FloatArray:
        """Change of the four corner loads FL, FR, RL, RR, N (equal split between the wheels of an axle)."""
        d = 0.5 * self.transfer
        return np.array([-d, -d, d, d])


def longitudinal_transfer(mass: float, cg_height: float, vehicle: Vehicle, spec: ChassisSpec,
                          longitudinal_acceleration: float) -> LongitudinalTransfer:
    """m·a_x·h/L between the axles and its split by the anti-features (module notes).

    The anti share acts at one axle: the front's ``anti`` (anti-dive) under braking, the rear's (anti-squat) when
    driving; the other axle's springs take all of its change (anti-lift taken as zero). The pitch angle follows
    from the elastic parts and the wheel rates (springs only; the anti-roll bars do not act in pitch):
    θ = (ΔF_f,el/(2 k_wf) − ΔF_r,el/(2 k_wr))/L, nose down positive, with ΔF the axle's load change through its
    springs.
    """
    ax = float(longitudinal_acceleration)
    dx = mass * ax * cg_height / vehicle.wheelbase
    braking = ax < 0.0
    anti = spec.front.anti if braking else spec.rear.anti
    geometric = anti * dx
    elastic = dx - geometric
    k_f, k_r = spec.front.wheel_rate, spec.rear.wheel_rate
    pitch = None
    if k_f and k_r:
        # elastic (through the springs) load changes of the front and rear axles, N
        front_el = -elastic if braking else -dx
        rear_el = dx if braking else elastic
        # nose-down pitch: front spring compression minus rear spring compression, over the wheelbase
        pitch = (front_el / (2.0 * k_f) - rear_el / (2.0 * k_r)) / vehicle.wheelbase
    return LongitudinalTransfer(ax, dx, anti, geometric, elastic, pitch)


def warp_pattern(track_front: float, track_rear: float) -> FloatArray:
    """The one self-equilibrated set of corner-load changes of a body on four wheels, FL, FR, RL, RR.

    (1, −1, −r, r) with r = t_f/t_r: it sums to zero and has no roll or pitch moment (rigid-body statics).
    """
    r = track_front / track_rear
    return np.array([1.0, -1.0, -r, r])


@dataclass(frozen=True, slots=True)
class CrossWeightAdjustment:
    """The spring-platform change at one corner that brings the diagonal share (FR + RL)/total to a target.

    Attributes
    ----------
    corner : str
        FL, FR, RL or RR.
    platform_change : float
        m; positive raises the spring platform (more preload at that corner).
    wheel_equivalent : float
        The same change seen at the wheel (platform change / spring motion ratio), m.
    turns : float or None
        platform_change / thread pitch (None without a pitch).
    corner_change : (4,) float
        Resulting change of the corner loads, N.
    """

    corner: str
    current_share: float
    target_share: float
    platform_change: float
    wheel_equivalent: float
    turns: float | None
    corner_change: FloatArray


def cross_weight_adjustment(corner_loads: FloatArray, vehicle: Vehicle, spec: ChassisSpec, corner: str,
                            target_share: float, thread_pitch: float | None = None) -> CrossWeightAdjustment:
    """Spring-platform change at one corner for a target diagonal share (rigid chassis, rigid tyres).

    Closed form (derived in docs/chassis.md): with w = (1, −1, −r, r), r = t_f/t_r, per-axle wheel rates k_w and
    bar wheel rates k_b, the "roll rates" k_φ = k_w + 2k_b, a wheel-equivalent preload e at corner j changes the
    corner loads by c·w with

        c = e · w_j · (k_wj / k_φj) / (2/k_φf + 2 r²/k_φr),

    and the diagonal FR + RL changes by −c·(1 + r). Solving for e gives the change at the wheel; the platform moves
    by e times the spring's motion ratio.

    Parameters
    ----------
    corner_loads : (4,) float
        Current corner loads FL, FR, RL, RR, N.
    corner : str
        'FL', 'FR', 'RL' or 'RR'.
    target_share : float
        Target (FR + RL)/total, 0..1.
    thread_pitch : float, optional
        m per turn of the platform nut.
    """
    names = ("FL", "FR", "RL", "RR")
    if corner not in names:
        raise UsageError(f"corner {corner!r}: expected one of {', '.join(names)}")
    if not 0.0 < target_share < 1.0:
        raise UsageError(f"target diagonal share {target_share!r}: expected a fraction between 0 and 1")
    loads = np.asarray(corner_loads, dtype=float)
    total = float(loads.sum())
    current = float(loads[1] + loads[2]) / total
    j = names.index(corner)
    axle = spec.front if j < 2 else spec.rear
    k_wf, k_wr = spec.front.wheel_rate, spec.rear.wheel_rate
    if k_wf is None or k_wr is None:
        missing = "front" if k_wf is None else "rear"
        raise ChassisError(spec.source, f"[chassis.{missing}]", "spring_rate",
                           "setting the cross weight needs the spring rates (and motion ratios) of both axles")
    k_phi_f = k_wf + 2.0 * spec.front.bar_wheel_rate
    k_phi_r = k_wr + 2.0 * spec.rear.bar_wheel_rate
    w = warp_pattern(vehicle.track_front, vehicle.track_rear)
    r = w[3]
    k_wj = k_wf if j < 2 else k_wr
    k_phi_j = k_phi_f if j < 2 else k_phi_r
    per_e = w[j] * (k_wj / k_phi_j) / (2.0 / k_phi_f + 2.0 * r**2 / k_phi_r)  # c per unit e
    c = -(target_share - current) * total / (1.0 + r)
    e = c / per_e
    platform = e * axle.spring_motion_ratio
    turns = platform / thread_pitch if thread_pitch else None
    change = c * w
    change.setflags(write=False)
    return CrossWeightAdjustment(corner, current, float(target_share), float(platform), float(e), turns, change)

